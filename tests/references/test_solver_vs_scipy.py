"""The time-domain solver (core.energize.simulate) against scipy's general-purpose integrators.

Every reference here is an independent computation: the right-hand sides are written in this file
from the circuit equations (not imported from core), the magnetising curves are re-implemented
from their defining formulas, and scipy.integrate.solve_ivp integrates them at rtol 1e-9 with
dense output. Only the circuit *inputs* (voltages, resistances, inductances, curve parameters)
are shared with the code under test.

Single phase (Wang, Abdulsalam & Xu, IEEE Trans. Power Delivery 23(2), 2008 — circuit equation,
from memory; it is also plain Kirchhoff's voltage law around the loop):

    v = R*i + L_s*di/dt + d(lambda)/dt,  i = f(lambda)
    =>  d(lambda)/dt = (v - R*f(lambda)) / (1 + L_s*f'(lambda))

Comparison: the first ten per-cycle peaks of |i|. On the scipy side the dense solution is
evaluated on 4096 points per cycle and the largest |i| of each half-open cycle [nT, (n+1)T) is
taken (the grid underestimates a peak by at most ~(2*pi/4096)^2/2 ~ 1e-6 of it, negligible); on
the core side core.waveform.cycle_peaks of the simulated line current.

Tolerance: 0.5 % of the *first* peak for every one of the ten peaks. Late peaks of a strongly
damped case are small, so for them this is a looser relative bound; that is deliberate — the
quantity of engineering interest is the envelope in amperes, and 0.5 % of the first peak is far
below any protection margin. The measured worst error is reported in every assertion message.
Measured when written: at most 3.3e-5 for single-phase and grounded-wye windings (which the core
integrates in the loop flux lambda + L_s*i), 9.6e-4 for the delta winding on the utility source.

Known limitation, kept visible as a strict xfail at the end: the coupled connections (delta
through a weak source, floating-neutral wye) integrate lambda, whose derivative jumps at a sharp
knee, and miss 0.5 % (about 1-1.6 % measured).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import pytest
from numpy.typing import NDArray
from scipy.integrate import solve_ivp

from core import energize, magnetizing, transformer, waveform

Array = NDArray[np.float64]

F_HZ = 60.0
OMEGA = 2.0 * math.pi * F_HZ
PERIOD_S = 1.0 / F_HZ
N_CYCLES = 10
FINE = 4096  # reference grid points per cycle
SPC = 128  # core output samples per cycle
REL_TOL = 5e-3  # 0.5 % of the first peak (see module docstring)
RTOL = 1e-9


# ----------------------------------------------------------------- independent curves


@dataclass(frozen=True)
class _TwoSlope:
    """i = lambda/L_m below the knee, knee current + (|lambda| - lambda_S)/L_air above (odd)."""

    lm: float
    lam_s: float
    l_air: float

    def __call__(self, lam: Array) -> tuple[Array, Array]:
        x = np.abs(lam)
        sat = x > self.lam_s
        i = np.where(sat, self.lam_s / self.lm + (x - self.lam_s) / self.l_air, x / self.lm)
        d = np.where(sat, 1.0 / self.l_air, 1.0 / self.lm)
        return np.sign(lam) * i, d


@dataclass(frozen=True)
class _Smooth:
    """The hyperbola-rounded knee, from its defining formula (core.magnetizing docstring)."""

    lm: float
    lam_s: float
    l_air: float
    width: float

    def __call__(self, lam: Array) -> tuple[Array, Array]:
        x = np.abs(lam)
        s = x - self.lam_s
        root = np.sqrt(s * s + self.width**2)
        g0 = 0.5 * (-self.lam_s + math.sqrt(self.lam_s**2 + self.width**2))
        g = 0.5 * (s + root) - g0
        dg = 0.5 * (1.0 + s / root)
        a = 1.0 / self.lm
        b = 1.0 / self.l_air - a
        return np.sign(lam) * (a * x + b * g), a + b * dg


@dataclass(frozen=True)
class _Table:
    """Piecewise-linear through the origin and the given points, final slope beyond."""

    flux: tuple[float, ...]
    current: tuple[float, ...]
    l_final: float

    def __call__(self, lam: Array) -> tuple[Array, Array]:
        x = np.abs(np.atleast_1d(lam))
        fl = np.concatenate(([0.0], self.flux))
        cu = np.concatenate(([0.0], self.current))
        slopes = np.append(np.diff(cu) / np.diff(fl), 1.0 / self.l_final)
        seg = np.clip(np.searchsorted(fl, x, side="right") - 1, 0, slopes.size - 1)
        i = cu[seg] + (x - fl[seg]) * slopes[seg]
        return np.sign(lam) * i.reshape(np.shape(lam)), slopes[seg].reshape(np.shape(lam))


Curve = Callable[[Array], tuple[Array, Array]]


# ----------------------------------------------------------------- reference integration helpers


def _solve(rhs: Callable[[float, Array], Array], y0: Array, t0: float, atol: float, method: str):
    # Radau's step-size controller divides by the error norm, which can be exactly 0 on the
    # linear stretches of a piecewise-linear curve; numpy's scalar division then warns (harmless:
    # the controller takes its largest step increase). Only that warning is silenced here.
    with np.errstate(divide="ignore"):
        sol = _solve_ivp_quiet(rhs, t0, y0, method, atol)
    assert sol.status == 0, sol.message
    return sol


def _solve_ivp_quiet(
    rhs: Callable[[float, Array], Array], t0: float, y0: Array, method: str, atol: float
):
    return solve_ivp(
        rhs,
        (t0, N_CYCLES * PERIOD_S),
        y0,
        method=method,
        rtol=RTOL,
        atol=atol,
        dense_output=True,
        max_step=PERIOD_S / 200.0,  # resolves the knee crossings
    )


def _fine_grid() -> Array:
    return np.arange(N_CYCLES * FINE + 1) * (PERIOD_S / FINE)


def _cycle_max(abs_current: Array) -> Array:
    return (
        abs_current[..., : N_CYCLES * FINE].reshape(*abs_current.shape[:-1], N_CYCLES, FINE).max(-1)
    )


def _worst(core_peaks: Array, ref_peaks: Array) -> float:
    return float(np.max(np.abs(core_peaks - ref_peaks)) / np.max(ref_peaks[..., :1]))


# ----------------------------------------------------------------- single phase

V_RMS = 7967.4  # 13.8 kV / sqrt(3), a wye-connected 13.8 kV winding [V]
LAMBDA_N = math.sqrt(2.0) * V_RMS / OMEGA
X_AIR = 20.0  # saturated (air-core) reactance of the winding [ohm]
L_AIR = X_AIR / OMEGA
L_M = 600.0 * L_AIR  # unsaturated/air-core inductance ratio typical of 1 % no-load current
B_S = 2.03 / 1.7  # knee in pu of nominal flux (grain-oriented defaults, from memory)


@dataclass(frozen=True)
class _Case:
    name: str
    r_over_x: float  # resistance over the saturated-loop reactance (L_air + L_s)
    residual_pu: float
    angle_deg: float
    ls_over_lair: float
    curve: str
    method: str


SINGLE_PHASE_CASES = [
    # LSODA only where L_s = 0: with L_s > 0 the right-hand side jumps at the knee and scipy's
    # LSODA dense output was observed to raise MemoryError on this machine; Radau copes.
    _Case("low-loss, aligned residual", 0.02, 0.8, 0.0, 0.0, "two_slope", "LSODA"),
    _Case("negative residual, 200 deg", 0.10, -0.8, 200.0, 0.1, "two_slope", "Radau"),
    _Case("heavily damped, 30 deg", 0.30, 0.5, 30.0, 0.3, "two_slope", "Radau"),
    _Case("closing at the voltage peak", 0.05, 0.6, 90.0, 0.0, "two_slope", "LSODA"),
    # a generator-fed winding: source (subtransient) inductance 3.5 x the air-core inductance,
    # the ratio of the demo scenario's 1250 kVA standby set to the 2500 kVA unit's LV winding
    _Case("weak source, L_s = 3.5 L_air", 0.15, 0.7, 0.0, 3.5, "two_slope", "Radau"),
    _Case("smooth knee", 0.05, 0.6, 0.0, 0.2, "smooth", "Radau"),
    _Case("4-point table", 0.08, -0.5, 180.0, 0.5, "table", "Radau"),
]


def _single_phase_setup(case: _Case) -> tuple[transformer.EquivalentCircuit, Curve]:
    ls = case.ls_over_lair * L_AIR
    r = case.r_over_x * OMEGA * (L_AIR + ls)
    lam_s = B_S * LAMBDA_N
    if case.curve == "two_slope":
        core_curve: magnetizing.MagnetizingCurve = magnetizing.two_slope(L_M, lam_s, L_AIR)
        ref: Curve = _TwoSlope(L_M, lam_s, L_AIR)
    elif case.curve == "smooth":
        width = 0.05 * LAMBDA_N
        core_curve = magnetizing.smooth_knee(L_M, lam_s, L_AIR, width)
        ref = _Smooth(L_M, lam_s, L_AIR, width)
    else:
        # an invented four-point table with a gradual knee (segment inductances 600, 120, 20,
        # 4 x L_air, then L_air)
        flux = (0.9 * LAMBDA_N, 1.05 * LAMBDA_N, 1.15 * LAMBDA_N, 1.25 * LAMBDA_N)
        cur = [0.0]
        for (a, b), k in zip(
            zip((0.0, *flux[:-1]), flux, strict=True), (600.0, 120.0, 20.0, 4.0), strict=True
        ):
            cur.append(cur[-1] + (b - a) / (k * L_AIR))
        core_curve = magnetizing.from_table(flux, cur[1:], L_AIR)
        ref = _Table(flux, tuple(cur[1:]), L_AIR)
    return transformer.circuit_from_si(V_RMS, F_HZ, r, ls, core_curve), ref


@pytest.mark.parametrize("case", SINGLE_PHASE_CASES, ids=lambda c: c.name)
def test_single_phase_peaks_match_solve_ivp(case: _Case) -> None:
    circuit, f = _single_phase_setup(case)
    r, ls = circuit.winding_resistance_ohm, circuit.source_inductance_h
    vpk = math.sqrt(2.0) * V_RMS
    alpha = math.radians(case.angle_deg)

    def rhs(t: float, y: Array) -> Array:
        i, d = f(y)
        return (vpk * math.sin(OMEGA * t + alpha) - r * i) / (1.0 + ls * d)

    sol = _solve(rhs, np.array([case.residual_pu * LAMBDA_N]), 0.0, 1e-9 * LAMBDA_N, case.method)
    tt = _fine_grid()
    ref = _cycle_max(np.abs(f(sol.sol(tt)[0])[0]))

    sim = energize.simulate(
        circuit, case.angle_deg, case.residual_pu, duration_s=N_CYCLES * PERIOD_S
    )
    got = waveform.cycle_peaks(sim.line_current_a, SPC)[0, 0]
    assert got.shape == (N_CYCLES,)
    # the case must actually exercise saturation (except the magnetising-only controls)
    assert ref[0] > 20.0 * LAMBDA_N / L_M, "case does not saturate"
    err = _worst(got, ref)
    assert err < REL_TOL, f"{case.name}: worst peak error {err:.3e} of the first peak"


# ----------------------------------------------------------------- three phase

_PHASE_SHIFT = np.radians([0.0, -120.0, 120.0])  # ABC sequence: B lags A, C leads A


def _three_phase_emf(circuit: transformer.EquivalentCircuit, alpha_deg: float, t: float) -> Array:
    vpk = math.sqrt(2.0) * circuit.line_voltage_v / math.sqrt(3.0)
    return vpk * np.sin(OMEGA * t + math.radians(alpha_deg) + _PHASE_SHIFT)


def _curve_of(circuit: transformer.EquivalentCircuit) -> _TwoSlope:
    return _TwoSlope(
        circuit.magnetizing_inductance_h, circuit.knee_flux_wb, circuit.air_core_inductance_h
    )


def test_grounded_wye_backfed_from_generator_matches_solve_ivp() -> None:
    # The demo scenario's "backwards" case: the 2500 kVA unit energised from its 480 V
    # (inner, grounded-wye) winding by the 1250 kVA standby generator, X''d = 0.15 pu on the
    # machine base (X/R 20 assumed for the machine), with pole scatter.
    z_gen = 480.0**2 / 1.25e6
    xr_gen = 20.0
    source = transformer.Source(
        "impedance", resistance_ohm=0.15 * z_gen / xr_gen, reactance_ohm=0.15 * z_gen
    )
    npl = transformer.Nameplate(
        2500e3,
        3,
        F_HZ,
        480.0,
        connection="wye_grounded",
        position="inner",
        no_load_current_percent=0.8,
    )
    circuit = transformer.equivalent_circuit(npl, source)
    residual = np.array([0.7, -0.2, -0.5])
    alpha = 15.0
    sim = energize.simulate(
        circuit, alpha, residual, (0.0, 1.3e-3, 2.9e-3), duration_s=N_CYCLES * PERIOD_S
    )
    closes = sim.pole_delay_s[0]  # the instants actually used (rounded to the internal step)
    got = waveform.cycle_peaks(sim.line_current_a, SPC)[0]

    # grounded wye on a source of equal sequence impedances: three independent scalar ODEs
    f = _curve_of(circuit)
    r = circuit.winding_resistance_ohm + circuit.source_resistance_ohm
    ls = circuit.source_inductance_h
    lam_n = circuit.nominal_flux_wb
    tt = _fine_grid()
    ref = np.zeros((3, N_CYCLES))
    for k in range(3):

        def rhs(t: float, y: Array, k: int = k) -> Array:
            i, d = f(y)
            return (_three_phase_emf(circuit, alpha, t)[k] - r * i) / (1.0 + ls * d)

        sol = _solve(rhs, np.array([residual[k] * lam_n]), closes[k], 1e-9 * lam_n, "Radau")
        i_abs = np.zeros_like(tt)
        on = tt >= closes[k]
        i_abs[on] = np.abs(f(sol.sol(tt[on])[0])[0])
        ref[k] = _cycle_max(i_abs)
    assert ls > 2.0 * circuit.air_core_inductance_h  # a genuinely weak source
    err = _worst(got, ref)
    assert err < REL_TOL, f"grounded wye: worst peak error {err:.3e} of the largest first peak"


def test_delta_with_source_impedance_matches_solve_ivp() -> None:
    # The demo unit energised normally: 13.8 kV delta winding (outer) from the 250 MVA, X/R 12
    # utility feeder.
    npl = transformer.Nameplate(
        2500e3, 3, F_HZ, 13.8e3, connection="delta", position="outer", no_load_current_percent=0.8
    )
    circuit = transformer.equivalent_circuit(
        npl, transformer.Source("fault_level", fault_va=250e6, x_over_r=12.0)
    )
    residual = np.array([0.8, -0.4, -0.4])  # windings ab, bc, ca
    alpha = 0.0
    sim = energize.simulate(circuit, alpha, residual, duration_s=N_CYCLES * PERIOD_S)
    got = waveform.cycle_peaks(sim.line_current_a, SPC)[0]

    # Coupled equations from the physics, written independently of core.energize:
    #   line currents         i = N c,  i_a = c_ab - c_ca, i_b = c_bc - c_ab, i_c = c_ca - c_bc
    #   terminal voltages     u_x = e_x - R_s i_x - L_s di_x/dt
    #   winding voltages      u_a - u_b = R_w c_ab + d(lambda_ab)/dt  (K u, K the incidence)
    #   with dc/dt = D d(lambda)/dt, D = diag(f'(lambda)):
    #   (I + L_s K N D) lambda' = K e - R_s K N c - R_w c
    n_mat = np.array([[1.0, 0.0, -1.0], [-1.0, 1.0, 0.0], [0.0, -1.0, 1.0]])
    k_mat = np.array([[1.0, -1.0, 0.0], [0.0, 1.0, -1.0], [-1.0, 0.0, 1.0]])
    f = _curve_of(circuit)
    rs, ls, rw = (
        circuit.source_resistance_ohm,
        circuit.source_inductance_h,
        circuit.winding_resistance_ohm,
    )

    def rhs(t: float, lam: Array) -> Array:
        c, d = f(lam)
        e = _three_phase_emf(circuit, alpha, t)
        a = np.eye(3) + ls * (k_mat @ n_mat) * d[None, :]
        b = k_mat @ e - rs * (k_mat @ n_mat @ c) - rw * c
        return np.linalg.solve(a, b)

    lam_n = circuit.nominal_flux_wb
    sol = _solve(rhs, residual * lam_n, 0.0, 1e-9 * lam_n, "Radau")
    c_ref, _ = f(sol.sol(_fine_grid()))
    ref = _cycle_max(np.abs(n_mat @ c_ref))
    assert ls > 0.0
    assert rs > 0.0
    err = _worst(got, ref)
    assert err < REL_TOL, f"delta: worst line-peak error {err:.3e} of the largest first peak"


# ----------------------------------------------------------------- known limitation, coupled


def _coupled_reference(
    circuit: transformer.EquivalentCircuit, residual: Array, alpha: float
) -> Array:
    """Per-cycle line-current peaks of a delta or floating-neutral wye, by Radau."""
    f = _curve_of(circuit)
    rs, ls = circuit.source_resistance_ohm, circuit.source_inductance_h
    rw = circuit.winding_resistance_ohm
    n_mat = np.array([[1.0, 0.0, -1.0], [-1.0, 1.0, 0.0], [0.0, -1.0, 1.0]])
    k_mat = np.array([[1.0, -1.0, 0.0], [0.0, 1.0, -1.0], [-1.0, 0.0, 1.0]])

    def rhs_delta(t: float, lam: Array) -> Array:
        c, d = f(lam)  # as in test_delta_with_source_impedance_matches_solve_ivp
        a = np.eye(3) + ls * (k_mat @ n_mat) * d[None, :]
        b = k_mat @ _three_phase_emf(circuit, alpha, t) - rs * (k_mat @ n_mat @ c) - rw * c
        return np.linalg.solve(a, b)

    def rhs_wye(t: float, lam: Array) -> Array:
        # e_k - v_n = R i_k + L_s di_k/dt + d(lambda_k)/dt with sum(i_k) = 0, so
        # sum(f'_k lambda_k') = 0, which fixes the neutral voltage v_n:
        #   lambda_k' = (x_k - v_n)/(1 + L_s f'_k), x_k = e_k - R i_k,
        #   v_n = sum(w_k x_k)/sum(w_k), w_k = f'_k/(1 + L_s f'_k)
        i, d = f(lam)
        x = _three_phase_emf(circuit, alpha, t) - (rs + rw) * i
        w = d / (1.0 + ls * d)
        return (x - np.sum(w * x) / np.sum(w)) / (1.0 + ls * d)

    delta = circuit.connection == "delta"
    lam_n = circuit.nominal_flux_wb
    sol = _solve(rhs_delta if delta else rhs_wye, residual * lam_n, 0.0, 1e-9 * lam_n, "Radau")
    c, _ = f(sol.sol(_fine_grid()))
    return _cycle_max(np.abs(n_mat @ c if delta else c))


@pytest.mark.xfail(
    strict=True,
    raises=AssertionError,
    reason="known limitation: the coupled kernel integrates lambda, whose derivative jumps at "
    "a sharp knee, so its fixed RK4 step is first-order accurate there; measured 1.1e-2 "
    "(delta, 20 MVA source) and 1.6e-2 (floating neutral, ideal source) of the first peak at "
    "128 steps per cycle",
)
@pytest.mark.parametrize(
    ("connection", "voltage", "fault_va"),
    [("delta", 13.8e3, 20e6), ("wye", 13.8e3, None)],
    ids=["delta-weak-source", "ungrounded-wye"],
)
def test_coupled_connections_on_a_sharp_knee(
    connection: str, voltage: float, fault_va: float | None
) -> None:
    npl = transformer.Nameplate(
        2500e3, 3, F_HZ, voltage, connection=connection, no_load_current_percent=0.8
    )
    source = None
    if fault_va is not None:
        source = transformer.Source("fault_level", fault_va=fault_va, x_over_r=12.0)
    circuit = transformer.equivalent_circuit(npl, source)
    residual = np.array([0.8, -0.4, -0.4])
    sim = energize.simulate(circuit, 0.0, residual, duration_s=N_CYCLES * PERIOD_S)
    got = waveform.cycle_peaks(sim.line_current_a, SPC)[0]
    err = _worst(got, _coupled_reference(circuit, residual, 0.0))
    assert err < REL_TOL, f"{connection}: worst line-peak error {err:.3e} of the first peak"
