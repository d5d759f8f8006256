"""Per-cycle and first peaks (core.energization.peaks) against a piecewise-exact reference with
scipy.

Reference, written here from the circuit laws and independent of core: on a two-slope curve
each winding is linear between knee crossings, so the circuit is integrated by
scipy.integrate.solve_ivp (DOP853, rtol 1e-12) one piece at a time, each piece ending at an
event where some winding's |lambda| reaches lambda_S (event location by solve_ivp's root finder),
its right-hand side fixed to the segments the windings are on. The line current of each piece is
smooth, so its largest |i| in each cycle is at a piece's end (a corner) or where d|i|/dt = 0,
found by bounded scalar minimisation (scipy.optimize.minimize_scalar, xatol 1e-14 s) from the
largest of 256 points per piece. Kirchhoff's laws, per connection (winding currents c = f(lambda)):

* grounded wye: e_k = (R_w + R_s)*c_k + L_s*c_k' + lambda_k';
* floating neutral: e_k - v_n = (R_w + R_s)*c_k + L_s*c_k' + lambda_k', sum(c_k) constant
  (KCL at the neutral), which fixes v_n;
* delta: line currents i = N c (i_a = c_ab - c_ca, KCL at each terminal), winding voltages
  K (e - R_s*i - L_s*i') = R_w*c + lambda' (KVL around each winding and its two lines).

Measured (worst of the first ten per-cycle peaks, relative to the first peak): before, with
the parabola through 128 samples per cycle (core.waveform.cycle_peaks), grounded wye
3.7e-6, floating neutral 2.2e-3 (ideal source) and 1.6e-3 (20 MVA), delta 2.4e-4 (20 MVA); read
exactly (core.energization.peaks) 3.7e-6, 6.3e-6, 4.3e-6, 4.2e-6 and 4.6e-6 (delta, 250 MVA, 40
degrees), the solver's own error at 128 steps per cycle; of a small late peak the parabola erred by
up to 3.2e-3 of that peak. Tolerance 5e-4 of the first peak (the target of the issue "Verdicts a
reviewer can sign"); the parabola fails it on the floating neutral.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
import pytest
from numpy.typing import NDArray
from scipy.integrate import solve_ivp
from scipy.optimize import minimize_scalar

from core import waveform
from core.energization import closed_form, energize, peaks
from core.transformer import circuit_model, magnetizing

Array = NDArray[np.float64]
F_HZ = 60.0
OMEGA = 2.0 * math.pi * F_HZ
PERIOD_S = 1.0 / F_HZ
N_CYCLES = 10
TOL = 5e-4  # of the first peak
_N = np.array([[1.0, 0.0, -1.0], [-1.0, 1.0, 0.0], [0.0, -1.0, 1.0]])  # line = N winding
_K = np.array([[1.0, -1.0, 0.0], [0.0, 1.0, -1.0], [-1.0, 0.0, 1.0]])  # winding = K terminal


class _Circuit:
    """The circuit's inputs (shared with the code under test) and its laws (written here)."""

    def __init__(self, c: circuit_model.EquivalentCircuit, alpha_deg: float) -> None:
        cv = c.curve
        self.lam_s = float(cv.flux_wb[1])  # type: ignore[union-attr]
        self.i_s = float(cv.current_a[1])  # type: ignore[union-attr]
        self.l_m = self.lam_s / self.i_s
        self.l_air = float(cv.final_inductance_h)  # type: ignore[union-attr]
        self.rw, self.rs, self.ls = (
            c.winding_resistance_ohm,
            c.source_resistance_ohm,
            c.source_inductance_h,
        )
        self.alpha = math.radians(alpha_deg)
        self.kind = c.connection
        if c.phases == 1:
            self.vpk = math.sqrt(2.0) * c.winding_voltage_v
            self.shift = np.zeros(1)
            self.kind = "wye_grounded"  # one winding on its own loop
        else:
            self.vpk = math.sqrt(2.0) * c.line_voltage_v / math.sqrt(3.0)
            self.shift = np.array([0.0, -2.0 * math.pi / 3.0, 2.0 * math.pi / 3.0])

    def emf(self, t: float) -> Array:
        out: Array = self.vpk * np.sin(OMEGA * t + self.alpha + self.shift)
        return out

    def current(self, lam: Array, mode: Array) -> tuple[Array, Array]:
        """Winding currents on the fixed segments ``mode`` (-1, 0, +1) and their slopes."""
        sat = mode != 0
        c = np.where(
            sat, mode * (self.i_s + (mode * lam - self.lam_s) / self.l_air), lam / self.l_m
        )
        d = np.where(sat, 1.0 / self.l_air, 1.0 / self.l_m)
        return c, d

    def rhs(self, mode: Array) -> Callable[[float, Array], Array]:
        def grounded(t: float, lam: Array) -> Array:
            c, d = self.current(lam, mode)
            out: Array = (self.emf(t) - (self.rw + self.rs) * c) / (1.0 + self.ls * d)
            return out

        def floating(t: float, lam: Array) -> Array:
            c, d = self.current(lam, mode)
            x = self.emf(t) - (self.rw + self.rs) * c
            w = d / (1.0 + self.ls * d)
            out: Array = (x - np.sum(w * x) / np.sum(w)) / (1.0 + self.ls * d)
            return out

        def delta(t: float, lam: Array) -> Array:
            # K(e - R_s N c - L_s N D lambda') = R_w c + lambda'
            c, d = self.current(lam, mode)
            a = np.eye(3) + self.ls * (_K @ _N) * d[None, :]
            b = _K @ self.emf(t) - self.rs * (_K @ _N @ c) - self.rw * c
            out: Array = np.linalg.solve(a, b)
            return out

        return {"wye_grounded": grounded, "wye": floating, "delta": delta}[self.kind]

    def line(self, winding: Array) -> Array:
        out: Array = _N @ winding if self.kind == "delta" else winding
        return out


def _reference(circ: _Circuit, lam0: Array) -> Array:
    """Per-cycle peaks of |line current| (n_lines, N_CYCLES), piecewise exact."""
    lam = lam0.astype(float).copy()
    m = lam.size
    mode = np.where(lam > circ.lam_s, 1, np.where(lam < -circ.lam_s, -1, 0))
    cut = [k * PERIOD_S for k in range(N_CYCLES + 1)]
    best = np.zeros((m, N_CYCLES))
    t = 0.0
    for n in range(N_CYCLES):
        while t < cut[n + 1] - 1e-15:
            # leaving the current segment: mode 0 through +/-lambda_S outwards, a saturated
            # segment back through its knee; each event knows the segment it leads to
            events, leads_to = [], []
            for k in range(m):
                exits = (
                    [(circ.lam_s, 1.0, 1), (-circ.lam_s, -1.0, -1)]
                    if mode[k] == 0
                    else [(mode[k] * circ.lam_s, -float(mode[k]), 0)]
                )
                for level, direction, new in exits:
                    ev = lambda tt, y, k=k, level=level: y[k] - level  # noqa: E731
                    ev.terminal = True  # type: ignore[attr-defined]
                    ev.direction = direction  # type: ignore[attr-defined]
                    events.append(ev)
                    leads_to.append((k, new))
            sol = solve_ivp(circ.rhs(mode), (t, cut[n + 1]), lam, method="DOP853", rtol=1e-12,
                            atol=1e-12 * circ.lam_s, dense_output=True, events=events)  # fmt: skip
            assert sol.status >= 0, sol.message
            t_end = float(sol.t[-1])
            ref_mode = mode.copy()

            def line_abs(tt: float, ref_mode: Array = ref_mode, sol: object = sol) -> Array:
                return np.abs(circ.line(circ.current(sol.sol(tt), ref_mode)[0]))  # type: ignore[attr-defined]

            grid = np.linspace(t, t_end, 257)
            vals = np.abs(circ.line(circ.current(sol.sol(grid), ref_mode[:, None])[0]))
            for j in range(m):
                k = int(np.argmax(vals[j]))
                top = float(vals[j, k])
                if 0 < k < grid.size - 1:
                    r = minimize_scalar(lambda x, j=j: -line_abs(x)[j],
                                        bounds=(grid[k - 1], grid[k + 1]), method="bounded",
                                        options={"xatol": 1e-14})  # fmt: skip
                    top = max(top, float(-r.fun))
                best[j, n] = max(best[j, n], top)
            lam = sol.y[:, -1].copy()
            if sol.status == 1:  # a knee: the winding that reached it changes segment
                hit = next(e for e, te in enumerate(sol.t_events) if te.size)
                k, new = leads_to[hit]
                mode[k] = new
            t = t_end
    return best


def _case(connection: str, fault_va: float | None) -> circuit_model.EquivalentCircuit:
    # the demo unit's 13.8 kV winding on a two-slope curve, behind a utility feeder (X/R 12)
    npl = circuit_model.Nameplate(2500e3, 3, F_HZ, 13.8e3, connection=connection,
                                no_load_current_percent=0.8)  # fmt: skip
    src = (
        None
        if fault_va is None
        else circuit_model.Source("fault_level", fault_va=fault_va, x_over_r=12.0)
    )
    return circuit_model.equivalent_circuit(npl, src)


CASES = [
    ("wye_grounded", 250e6, 0.0),
    ("wye", None, 0.0),
    ("wye", 20e6, 0.0),
    ("delta", 20e6, 0.0),
    ("delta", 250e6, 40.0),
]


@pytest.mark.parametrize(("connection", "fault_va", "alpha"), CASES,
                         ids=["grounded-250MVA", "floating-ideal", "floating-20MVA", "delta-20MVA",
                              "delta-250MVA-40deg"])  # fmt: skip
def test_peaks_read_exactly_against_piecewise_reference(
    connection: str, fault_va: float | None, alpha: float
) -> None:
    c = _case(connection, fault_va)
    res = np.array([[0.8, -0.4, -0.4]])
    sim = energize.simulate(c, alpha, res, duration_s=N_CYCLES * PERIOD_S)
    ref = _reference(_Circuit(c, alpha), res[0] * c.nominal_flux_wb)  # piecewise-exact, scipy
    exact = peaks.cycle_peaks([c], np.array([alpha]), res, sim)[0]
    err = float(np.max(np.abs(exact - ref)) / ref.max())
    assert err < TOL, f"{connection}: peaks read exactly off by {err:.2e} of the first peak"
    first = peaks.first_peaks([c], np.array([alpha]), res, sim).peak_a[0]
    err_first = float(np.max(np.abs(first - ref.max(axis=1))) / ref.max())
    assert err_first < TOL, f"{connection}: first peaks off by {err_first:.2e}"
    # the reference resolves what the parabola through 128 samples misses (floating neutral)
    parabola = waveform.cycle_peaks(sim.line_current_a, 128)[0]
    before = float(np.max(np.abs(parabola - ref)) / ref.max())
    if connection == "wye":
        assert before > 1e-3 > err, (before, err)


# ----------------------------------------------------------------- closed-form envelope validity

# (R/X of the saturated loop, measured worst deviation of the closed-form peaks of cycles 1-5
# from the reference, of each cycle's own reference peak; first peak: closed form / reference)
ENVELOPE_DEVIATION = [
    (0.02, 0.023, 1.026),
    (0.05, 0.044, 1.065),
    (0.10, -0.069, 1.127),
    (0.15, -0.153, 1.185),
    (0.20, -0.243, 1.240),
    (0.27, -0.398, 1.311),
    (0.35, -0.822, 1.381),
    (0.53, -1.0, 1.505),
]


@pytest.mark.parametrize(("r_over_x", "deviation", "first_ratio"), ENVELOPE_DEVIATION)
def test_closed_form_envelope_against_piecewise_reference(
    r_over_x: float, deviation: float, first_ratio: float
) -> None:
    # One winding on a two-slope curve (L_m = 5000 L_air, knee 1.2 pu), residual 0.8 pu,
    # closing at the voltage zero that drives the flux towards it: the closed form
    # (core.energization.closed_form.peak_envelope_holcomb) against the piecewise-exact scipy
    # reference above. The closed form neglects the decay before the first peak (it over-estimates
    # that peak) and then decays too fast: within 7 % over cycles 1-5 up to R/X 0.1 (10 % at 0.12),
    # beyond which core.energization.inrush_study warns
    # (core.energization.closed_form.ENVELOPE_VALIDITY_R_OVER_X), collapsing to no saturation after
    # the first cycle at R/X 0.53.
    v, l_air, b_s, b_r = 7967.0, 0.05, 1.2, 0.8
    lam_n = math.sqrt(2.0) * v / OMEGA
    x = OMEGA * l_air
    curve = magnetizing.two_slope(5000.0 * l_air, b_s * lam_n, l_air)
    c = circuit_model.circuit_from_si(v, F_HZ, r_over_x * x, 0.0, curve)
    ref = _reference(_Circuit(c, 0.0), np.array([b_r * lam_n]))[0]
    closed = closed_form.peak_envelope_holcomb(
        v, F_HZ, l_air, r_over_x * x, b_r + 1.0, b_s, N_CYCLES
    )
    dev = closed[1:6] / ref[1:6] - 1.0
    worst = float(dev[np.argmax(np.abs(dev))])
    assert worst == pytest.approx(deviation, abs=0.01), worst
    assert closed[0] / ref[0] == pytest.approx(first_ratio, abs=0.002)
    material = abs(worst) > 0.10
    assert material == (r_over_x > closed_form.ENVELOPE_VALIDITY_R_OVER_X)
