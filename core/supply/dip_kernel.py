"""Compiled kernel of :mod:`core.supply.dip_cases`: Runge-Kutta integration of the packed cases.

The physics, its simplifications and references are in the docstrings of :mod:`core.supply.dip` and
:mod:`core.supply.sources`; :func:`core.supply.dip_cases.build_case` packs a case into the arrays
laid out here (the column indices below) and :func:`core.supply.dip_cases.run` plans the steps and
calls
:func:`integrate`. Per case and per loop (a wye phase, or a delta winding and a bus-load phase)
the states are the loop fluxes

    psi = lambda + L_s*(i_T + i_L),   d(psi)/dt = e - R_s*(i_T + i_L) - R_w*i_T
    phi = L_L*i_L + L_s*(i_T + i_L),  d(phi)/dt = e - R_s*(i_T + i_L) - R_L*i_L

(Kirchhoff's voltage law around the source-winding and source-load loops) and, per case, the
machine states E''_q, E'_q, E_fd and the sensed voltage V_s. The currents follow from the states
by lambda + L_p*f(lambda) = psi - phi*L_s/(L_L + L_s), L_p = L_s*L_L/(L_s + L_L), and
i_L = (phi - L_s*i_T)/(L_L + L_s): for a piecewise-linear curve this is the same curve with its
breakpoints moved by L_p*i (exact); for the smooth knee a Newton iteration. The right-hand side
is then a continuous function of the state even at a sharp knee, so the classical fixed-step
Runge-Kutta method (Kutta 1901) keeps its order there (the device of
:mod:`core.energization.energize`). The terminal voltage v_k = e_k - R_ph*i_k - L_ph*di_k/dt is
evaluated from the same equations (di/dt solved from the two loop equations), so it is exact at
every step, not differenced.

A pre-insertion resistor R in the energising breaker sits in each line between the terminals
and the transformer: while it is in, the transformer branch resistance R_w of each loop becomes
R_w + R (wye) or R_w + 2R (a delta winding loop closes through two lines, as it closes through
two phases of the source: the same "one winding carries the current" reduction as its 2 x Z_s);
the bus-load loop and the source impedance through which v_k is computed are unchanged. The
bypass is put on a step boundary, so no Runge-Kutta step straddles the jump in resistance, and
the steps while it is in are split into equal sub-steps short enough for the inserted loop's
time constant; the samples stay on the outer step. The energy it absorbs,
R * sum over lines of the integral of i^2, is integrated with the same Runge-Kutta weights
(the quadrature of an added state).

A transformer branch whose breaker poles close after t = 0 is open until the step its closing
was rounded to: it carries no current and its psi is not integrated, while a bus load sharing
the loop runs on phi alone (i_L = phi/(L_L + L_s)). At that step, before its first stage, psi
and phi are set from the winding's residual flux and its current on the curve with i_L
continuous, exactly as the states of a branch closed at t = 0 are built; no step straddles a
closing.

Compiled with numba (``cache=True``, cached beside this module) and looped over cases; the
integration releases the GIL.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numba
import numpy as np
from numpy.typing import NDArray

from core.errors import ParameterError
from core.transformer.circuit_model import EquivalentCircuit
from core.transformer.magnetizing import PiecewiseLinearCurve, SmoothKneeCurve

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]

__all__ = ["Case", "integrate", "pack_curve"]

# Column indices of the packed arrays, filled by core.supply.dip_cases.build_case.
# per-case parameters (cp, shape (n_cases, NCP))
BETA, EB, DYN, AVR, IB, RPH, LPH = range(7)
X2, X1, XD, T2O, T1O, RA, KA, TA, EMAX, EMIN, TR, VREF = range(7, 19)
NCP = 19
# per-loop parameters (lpar, shape (n_cases, n_loops, NLP)); LAM0 and C0 are the winding's
# flux linkage [Wb-turn] and current [A] when its branch closes
AMP, PHS, RS, LS, HTR, RW, HLD, RL, LL, LAM0, C0 = range(11)
NLP = 11


@numba.njit(cache=True)
def _invert(
    cv: FloatArray, tx: FloatArray, ti: FloatArray, lp: float, chi: float, guess: float
) -> tuple[float, float, float]:  # pragma: no cover - compiled
    """Current i, slope di/d(lambda) and lambda for lambda + lp*f(lambda) = chi.

    cv = (kind, n_points, p0..p4): kind 0 a piecewise-linear table already in chi (p0 the final
    slope di/d(chi)); kind 1 the smooth knee (p0..p4 = 1/L_m, 1/L_air - 1/L_m, lambda_S,
    width, g0).
    """
    x = abs(chi)
    sg = 1.0 if chi >= 0.0 else -1.0
    if cv[0] == 0.0:
        top = int(cv[1]) - 1
        if x >= tx[top]:
            sl = cv[2]
            cur = ti[top] + (x - tx[top]) * sl
        else:
            lo = 0
            hi = top
            while hi - lo > 1:
                mid = (lo + hi) // 2
                if tx[mid] < x:
                    lo = mid
                else:
                    hi = mid
            sl = (ti[hi] - ti[lo]) / (tx[hi] - tx[lo])
            cur = ti[lo] + (x - tx[lo]) * sl
        return sg * cur, sl / (1.0 - lp * sl), guess
    a, b, ks, e, g0 = cv[2], cv[3], cv[4], cv[5], cv[6]
    lam = min(abs(guess), x)
    for _ in range(60):
        s = lam - ks
        r = math.sqrt(s * s + e * e)
        step = (lam + lp * (a * lam + b * (0.5 * (s + r) - g0)) - x) / (
            1.0 + lp * (a + b * 0.5 * (1.0 + s / r))
        )
        lam = max(lam - step, 0.0)
        if abs(step) <= 1e-14 * (x + 1e-300):
            break
    s = lam - ks
    r = math.sqrt(s * s + e * e)
    return sg * (a * lam + b * (0.5 * (s + r) - g0)), a + b * 0.5 * (1.0 + s / r), sg * lam


# fmt: off
@numba.njit(cache=True)
def _eval(
    t: float, y: FloatArray, omega: float, cp: FloatArray, lpar: FloatArray, cv: FloatArray,
    tx: FloatArray, ti: FloatArray, inc: FloatArray, guess: FloatArray, dy: FloatArray,
    i_line: FloatArray, i_tr: FloatArray, v: FloatArray, di: FloatArray, work: FloatArray,
) -> None:  # pragma: no cover - compiled
    """Derivatives of one case's states at t; fills line and transformer currents, voltages."""
    nl = lpar.shape[0]
    e2 = y[2 * nl]
    e1 = y[2 * nl + 1]
    efd = y[2 * nl + 2]
    vs = y[2 * nl + 3]
    th = omega * t + cp[BETA]
    for k in range(3):
        di[k] = 0.0
        i_line[k] = 0.0
        i_tr[k] = 0.0
    # currents from the loop fluxes (they do not depend on the EMF)
    for j in range(nl):
        p = lpar[j]
        ls = p[LS]
        den = p[LL] + ls
        cur = 0.0
        il = 0.0
        fp = 0.0
        if p[HTR] > 0.0:
            if p[HLD] > 0.0:
                chi = y[j] - y[nl + j] * ls / den
                cur, fp, g = _invert(cv[j], tx[j], ti[j], ls * p[LL] / den, chi, guess[j])
                il = (y[nl + j] - ls * cur) / den
            else:
                cur, fp, g = _invert(cv[j], tx[j], ti[j], ls, y[j], guess[j])
            guess[j] = g
        elif p[HLD] > 0.0:
            il = y[nl + j] / den
        work[0, j] = cur
        work[1, j] = il
        work[2, j] = fp
        for k in range(3):
            i_line[k] += inc[0, k, j] * cur + inc[1, k, j] * il
            i_tr[k] += inc[0, k, j] * cur
    # machine: Park d component of the current in the EMF's frame [pu of rated rms current],
    # positive lagging; the d-axis flux-decay equations
    sd = 0.0
    for k in range(3):
        sd -= i_line[k] * math.cos(th - 2.0 * math.pi * k / 3.0)
    i_d = sd / (1.5 * math.sqrt(2.0) * cp[IB])
    for q in range(4):
        dy[2 * nl + q] = 0.0
    if cp[DYN] > 0.0:
        dy[2 * nl] = (e1 - e2 - (cp[X1] - cp[X2]) * i_d) / cp[T2O]
        dy[2 * nl + 1] = (efd - e1 - (cp[XD] - cp[X1]) * i_d) / cp[T1O]
    # EMF = d/dt of the rotating rotor flux: E''_q*sin(theta_k) - (dE''_q/dt/omega)*cos(theta_k)
    rate = dy[2 * nl] / omega
    for j in range(nl):
        p = lpar[j]
        ls = p[LS]
        ll = p[LL]
        den = ll + ls
        cur = work[0, j]
        il = work[1, j]
        fp = work[2, j]
        ang = th + p[PHS]
        e = cp[EB] * p[AMP] * (e2 * math.sin(ang) - rate * math.cos(ang))
        itot = cur + il
        dpsi = e - p[RS] * itot - p[RW] * cur
        dphi = e - p[RS] * itot - p[RL] * il
        htr = p[HTR] > 0.0
        hld = p[HLD] > 0.0
        dy[j] = dpsi if htr else 0.0
        dy[nl + j] = dphi if hld else 0.0
        dc = 0.0
        dl = 0.0
        if htr and hld:
            dd = den + ls * ll * fp
            dc = fp * (den * dpsi - ls * dphi) / dd
            dl = ((1.0 + ls * fp) * dphi - ls * fp * dpsi) / dd
        elif htr:
            dc = fp * dpsi / (1.0 + ls * fp)
        elif hld:
            dl = dphi / den
        for k in range(3):
            di[k] += inc[0, k, j] * dc + inc[1, k, j] * dl
    vd = 0.0
    vq = 0.0
    for k in range(3):
        a = th - 2.0 * math.pi * k / 3.0
        e = cp[EB] * (e2 * math.sin(a) - rate * math.cos(a))
        v[k] = e - cp[RPH] * i_line[k] - cp[LPH] * di[k]
        vd += v[k] * math.cos(a)
        vq += v[k] * math.sin(a)
    if cp[DYN] > 0.0 and cp[AVR] > 0.0:
        # magnitude of the terminal-voltage space vector (positive and negative sequence, no
        # zero sequence) [pu of rated phase voltage]
        valg = math.sqrt(vd * vd + vq * vq) / (1.5 * cp[EB])
        if cp[TR] > 0.0:
            dy[2 * nl + 3] = (valg - vs) / cp[TR]
        else:
            vs = valg
        de = (cp[KA] * (cp[VREF] - vs) - efd) / cp[TA]
        if (efd >= cp[EMAX] and de > 0.0) or (efd <= cp[EMIN] and de < 0.0):
            de = 0.0
        dy[2 * nl + 2] = de


# fmt: on


@numba.njit(cache=True)
def _close_branch(y: FloatArray, p: FloatArray, q: int, nl: int) -> None:  # pragma: no cover
    """Re-initialise loop q's states as its transformer branch closes (see :func:`integrate`)."""
    ls = p[LS]
    i_l = y[nl + q] / (p[LL] + ls) if p[HLD] > 0.0 else 0.0
    y[q] = p[LAM0] + ls * (p[C0] + i_l)
    if p[HLD] > 0.0:
        y[nl + q] += ls * p[C0]


# fmt: off
@numba.njit(cache=True, nogil=True)
def integrate(
    n_steps: int, spc: int, h: float, omega: float, cp: FloatArray, lpar: FloatArray,
    cv: FloatArray, tx: FloatArray, ti: FloatArray, inc: FloatArray, y0: FloatArray, stride: int,
    out: FloatArray, means: FloatArray, wave: FloatArray, n_in: int, sub: IntArray,
    lpar_in: FloatArray, energy: FloatArray, close: IntArray,
) -> None:  # pragma: no cover - compiled
    """Classical Runge-Kutta over every case, accumulating per-cycle results in place.

    Parameters
    ----------
    n_steps, spc : int
        Steps in all and per cycle [-].
    h, omega : float
        Step [s] and angular frequency [rad/s].
    cp : ndarray, shape (n_cases, NCP)
        Per-case parameters (columns BETA ... VREF).
    lpar : ndarray, shape (n_cases, n_loops, NLP)
        Per-loop parameters (columns AMP ... LL).
    cv, tx, ti : ndarray
        Per-loop magnetising curves in the loop variable, as :func:`pack_curve` packs them.
    inc : ndarray, shape (2, 3, n_loops)
        Line-current incidence of the transformer and bus-load loop currents [-].
    y0 : ndarray, shape (n_cases, 2*n_loops + 4)
        Initial states: loop fluxes [Wb-turn], then E''_q, E'_q, E_fd, V_s [pu].
    stride : int
        Keep every stride-th step in ``wave``; 0 keeps none [-].
    out : ndarray, shape (n_cases, 4, 3, n_cycles)
        Filled with per-cycle sums of v^2 (phase) [V^2], v^2 (line) [V^2], i^2 (transformer
        line) [A^2] and the per-cycle peak abs(i) [A], refined by a parabola through a local
        maximum and its neighbours.
    means : ndarray, shape (n_cases, 2, n_cycles)
        Filled with per-cycle sums of E''_q and E_fd [pu].
    wave : ndarray, shape (n_cases, 2, 3, n_wave)
        Filled with the decimated terminal phase voltages [V] and transformer line currents [A].
    n_in : int
        Steps j < n_in have the pre-insertion resistor in: they use ``lpar_in`` and sub[c]
        equal sub-steps [-].
    sub : ndarray of int, shape (n_cases,)
        Sub-steps per step while the resistor is in [-].
    lpar_in : ndarray, shape (n_cases, n_loops, NLP)
        Per-loop parameters with the resistor in.
    energy : ndarray, shape (n_cases,)
        Increased by the integral of the summed squared transformer line currents while the
        resistor is in [A^2*s].
    close : ndarray of int, shape (n_cases, n_loops)
        Step at which each loop's transformer branch closes; 0 for closed from the start [-].

    Notes
    -----
    A branch that closes at step s > 0 carries no current and its winding keeps its flux
    before s: its HTR column is cleared, so the branch neither conducts nor integrates, and its
    y0 entries must hold the open state (a bus load sharing the loop: phi = (L_L + L_s)*i_L).
    At the start of step s, before the step's first stage, the states are re-initialised from
    the winding's flux LAM0 and current C0 with the bus-load current i_L = phi/(L_L + L_s)
    continuous: psi = LAM0 + L_s*(C0 + i_L), phi = phi + L_s*C0, as the initial state of a
    branch closed at t = 0 is built. A step never straddles a closing.
    """
    n, ns = y0.shape
    nl = lpar.shape[1]
    ncyc = out.shape[3]
    k1 = np.empty(ns)
    k2 = np.empty(ns)
    k3 = np.empty(ns)
    k4 = np.empty(ns)
    tmp = np.empty(ns)
    il = np.empty(3)
    it = np.empty(3)
    v = np.empty(3)
    di = np.empty(3)
    work = np.empty((3, nl))
    for c in range(n):
        hs = h / sub[c]
        guess = np.zeros(nl)
        y = y0[c].copy()
        prev2 = np.zeros(3)
        prev1 = np.zeros(3)
        lp = lpar[c].copy()
        lpi = lpar_in[c].copy()
        pending = 0
        for q in range(nl):
            if close[c, q] > 0:
                lp[q, HTR] = 0.0
                lpi[q, HTR] = 0.0
                pending += 1
        args = (omega, cp[c], lp, cv[c], tx[c], ti[c], inc, guess)
        args_in = (omega, cp[c], lpi, cv[c], tx[c], ti[c], inc, guess)
        for j in range(n_steps + 1):
            t = j * h
            if pending > 0 and j > 0:
                for q in range(nl):
                    if close[c, q] == j:
                        _close_branch(y, lpar[c, q], q, nl)
                        guess[q] = lpar[c, q, LAM0]
                        lp[q, HTR] = lpar[c, q, HTR]
                        lpi[q, HTR] = lpar_in[c, q, HTR]
                        pending -= 1
            inserted = j < n_in
            if inserted:
                _eval(t, y, *args_in, k1, il, it, v, di, work)
            else:
                _eval(t, y, *args, k1, il, it, v, di, work)
            cyc = j // spc
            for k in range(3):
                a = abs(it[k])
                if cyc < ncyc:
                    vll = v[k] - v[(k + 1) % 3]
                    out[c, 0, k, cyc] += v[k] * v[k]
                    out[c, 1, k, cyc] += vll * vll
                    out[c, 2, k, cyc] += a * a
                    out[c, 3, k, cyc] = max(out[c, 3, k, cyc], a)
                if j >= 2 and prev1[k] >= prev2[k] and prev1[k] >= a:
                    den = 2.0 * prev1[k] - prev2[k] - a
                    pc = (j - 1) // spc
                    if den > 0.0 and pc < ncyc:
                        vert = prev1[k] + (prev2[k] - a) ** 2 / (8.0 * den)
                        out[c, 3, k, pc] = max(out[c, 3, k, pc], vert)
                prev2[k] = prev1[k]
                prev1[k] = a
                if stride > 0 and j % stride == 0 and j // stride < wave.shape[3]:
                    wave[c, 0, k, j // stride] = v[k]
                    wave[c, 1, k, j // stride] = it[k]
            if cyc < ncyc:
                means[c, 0, cyc] += y[2 * nl]
                means[c, 1, cyc] += y[2 * nl + 2]
            if j == n_steps:
                break
            if inserted:
                p1 = it[0] * it[0] + it[1] * it[1] + it[2] * it[2]
                for s in range(sub[c]):
                    ts = t + s * hs
                    if s > 0:
                        _eval(ts, y, *args_in, k1, il, it, v, di, work)
                        p1 = it[0] * it[0] + it[1] * it[1] + it[2] * it[2]
                    for q in range(ns):
                        tmp[q] = y[q] + 0.5 * hs * k1[q]
                    _eval(ts + 0.5 * hs, tmp, *args_in, k2, il, it, v, di, work)
                    p2 = it[0] * it[0] + it[1] * it[1] + it[2] * it[2]
                    for q in range(ns):
                        tmp[q] = y[q] + 0.5 * hs * k2[q]
                    _eval(ts + 0.5 * hs, tmp, *args_in, k3, il, it, v, di, work)
                    p3 = it[0] * it[0] + it[1] * it[1] + it[2] * it[2]
                    for q in range(ns):
                        tmp[q] = y[q] + hs * k3[q]
                    _eval(ts + hs, tmp, *args_in, k4, il, it, v, di, work)
                    p4 = it[0] * it[0] + it[1] * it[1] + it[2] * it[2]
                    for q in range(ns):
                        y[q] += hs / 6.0 * (k1[q] + 2.0 * k2[q] + 2.0 * k3[q] + k4[q])
                    energy[c] += hs / 6.0 * (p1 + 2.0 * p2 + 2.0 * p3 + p4)
                    if cp[c, AVR] > 0.0:
                        y[2 * nl + 2] = min(max(y[2 * nl + 2], cp[c, EMIN]), cp[c, EMAX])
                continue
            for q in range(ns):
                tmp[q] = y[q] + 0.5 * h * k1[q]
            _eval(t + 0.5 * h, tmp, *args, k2, il, it, v, di, work)
            for q in range(ns):
                tmp[q] = y[q] + 0.5 * h * k2[q]
            _eval(t + 0.5 * h, tmp, *args, k3, il, it, v, di, work)
            for q in range(ns):
                tmp[q] = y[q] + h * k3[q]
            _eval(t + h, tmp, *args, k4, il, it, v, di, work)
            for q in range(ns):
                y[q] += h / 6.0 * (k1[q] + 2.0 * k2[q] + 2.0 * k3[q] + k4[q])
            if cp[c, AVR] > 0.0:
                y[2 * nl + 2] = min(max(y[2 * nl + 2], cp[c, EMIN]), cp[c, EMAX])


# fmt: on


@dataclass(frozen=True)
class Case:
    """One case packed for :func:`integrate` by :func:`core.supply.dip_cases.build_case`.

    ``tau_min_s`` is its shortest time constant [s]; ``lpar_inserted`` the loop parameters with
    the pre-insertion resistor in, ``tau_inserted_s`` the shortest time constant then [s],
    ``insertion_resistance_ohm`` the resistor [ohm] and ``insertion_limit_ohm`` the largest
    resistor the step limit allows for this circuit [ohm]. ``y0_open`` is the initial state
    with every transformer branch open (each winding keeps its residual flux, a bus load
    sharing the loop carries its own current) and ``loop_poles`` (n_loops, 2) the two poles
    whose later closing closes each loop's branch (the same pole twice for wye, -1 for a
    bus-load loop).
    """

    cp: FloatArray
    lpar: FloatArray
    cv: FloatArray
    tx: FloatArray
    ti: FloatArray
    inc: FloatArray
    y0: FloatArray
    tau_min_s: float
    field_voltage_pu: float
    lpar_inserted: FloatArray | None = None
    tau_inserted_s: float = math.inf
    insertion_resistance_ohm: float = 0.0
    insertion_limit_ohm: float = math.inf
    y0_open: FloatArray = field(default_factory=lambda: np.zeros(0))
    loop_poles: IntArray = field(default_factory=lambda: np.zeros((0, 2), dtype=np.int64))

    def closing(self, pole_step: IntArray) -> tuple[IntArray, FloatArray]:
        """Step at which each loop's branch closes, and the initial state that goes with it.

        ``pole_step`` (3,) is the closing step of poles a, b, c [-]. A loop closes with the
        later of its two poles; a loop closing after step 0 starts from ``y0_open``.
        """
        nl = self.lpar.shape[0]
        close = np.zeros(nl, dtype=np.int64)
        live = self.loop_poles[:, 0] >= 0
        ends = pole_step[self.loop_poles[live]]
        close[live] = np.maximum(ends[:, 0], ends[:, 1])
        late = np.nonzero(close > 0)[0]
        y0 = self.y0.copy()
        y0[late] = self.y0_open[late]
        y0[nl + late] = self.y0_open[nl + late]
        return close, y0


def pack_curve(circuit: EquivalentCircuit, lp: float) -> tuple[FloatArray, FloatArray, FloatArray]:
    """Curve of one winding in the loop variable chi = lambda + lp*i, packed for the kernel.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The transformer circuit whose curve is packed [-].
    lp : float
        Inductance in series with the winding in its loop, L_p [H].

    Returns
    -------
    cv : ndarray, shape (7,)
        (kind, n_points, p0..p4) as :func:`_invert` reads them.
    tx, ti : ndarray
        Breakpoints of a piecewise-linear curve in chi [Wb-turn] and current [A] (zeros for the
        smooth knee).

    Raises
    ------
    ParameterError
        When the curve is of neither kind, naming ``circuit.curve``.

    Notes
    -----
    A piecewise-linear curve lambda(i) becomes chi(i) = lambda(i) + lp*i: the same currents,
    the breakpoints moved by lp*i, the final slope di/d(chi) = 1/(L_final + lp); exact.
    """
    cv = circuit.curve
    out = np.zeros(7)
    if isinstance(cv, PiecewiseLinearCurve):
        out[:3] = (0.0, cv.flux_wb.size, 1.0 / (cv.final_inductance_h + lp))
        return out, cv.flux_wb + lp * cv.current_a, cv.current_a.copy()
    if isinstance(cv, SmoothKneeCurve):
        a = 1.0 / cv.unsaturated_inductance_h
        e = cv.knee_width_wb
        g0 = 0.5 * (-cv.knee_flux_wb + math.hypot(cv.knee_flux_wb, e))
        out[:] = (1.0, 2.0, a, 1.0 / cv.saturated_inductance_h - a, cv.knee_flux_wb, e, g0)
        return out, np.zeros(2), np.zeros(2)
    raise ParameterError("circuit.curve", type(cv).__name__, "a magnetising curve")
