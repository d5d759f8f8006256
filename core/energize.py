"""Time-domain energisation of a transformer: the saturating circuit solved over many cases.

Each energised winding obeys

    e(t) = R*i + L_s*di/dt + d(lambda)/dt,    i = f(lambda),

i.e. d(lambda)/dt = (e - R*f(lambda)) / (1 + L_s*f'(lambda)), with e the source voltage, R the
series resistance (winding plus source), L_s the source inductance and f the magnetising curve
(:mod:`core.magnetizing`). The state is the flux linkage, so a residual flux is an initial
condition.

Connections (``topology``):

* single phase and grounded wye -- each winding is an independent circuit (a grounded-wye
  source of equal zero- and positive-sequence impedance is assumed);
* ungrounded wye -- the neutral voltage is whatever keeps the sum of the currents constant:
  v_n = sum(w_k*(e_k - R*i_k))/sum(w_k) with w_k = f'_k/(1 + L_s*f'_k); a phase with its pole
  still open carries no current and keeps its flux;
* delta -- winding currents c_ab, c_bc, c_ca; line currents are their differences
  (i_a = c_ab - c_ca, ...). Through the source impedance the three windings are coupled:
  (I + L_s*M*D) lambda' = e_LL - R_s*M*c - R_w*c with M = [[2,-1,-1],[-1,2,-1],[-1,-1,2]] and
  D = diag(f'), solved as a 3x3 system at every stage.

Mitigation, per case (:func:`simulate`):

* pre-insertion resistor -- R_ins in series with each line (breaker pole), between the source and
  the terminals, from t = 0 until all poles short it together at t_ins: it adds to the source
  resistance of every line, i.e. to each winding's R for single phase and wye and to R_s (which
  couples the windings through M) for a delta; a delta on an ideal source with the resistor in
  is therefore solved by the coupled kernel;
* reduced-voltage source -- the EMF amplitude times g(t): g = g_0 until t_hold, a linear rise to
  1 over t_rise, then 1 (e_a = g*sqrt(2)*V*sin(omega*t + alpha), phases unchanged).

Approximations, reported with every result: phases are magnetically independent (a bank of
single-phase cores; the coupling of a three-limb or five-limb core is not modelled, which is
usually conservative for the peak phase); no hysteresis or core loss; while only one of a delta
winding's two poles is closed, that winding is taken as unenergised (the series path through the
other two windings is neglected); pole closing instants are rounded to the internal step. A
pre-insertion resistor is an ideal linear resistance, shorted by all poles at once (no bypass
scatter, arc or contact resistance); the reduced-voltage source scales only the EMF, behind an
unchanged source impedance and at a fixed phase; the bypass, the end of the hold and the end of
the rise are rounded to the internal step, so that no step straddles a jump of R or a corner of
g, and g is evaluated at every Runge-Kutta stage on the piece its step lies on.

Numerics: classical fourth-order Runge-Kutta at a fixed step of at least 128 steps per cycle,
compiled with numba and looped over cases; the equation is not stiff (its fastest time
constant, (L_air + L_s)/R, is many steps long; with a pre-insertion resistor in, R + k*R_ins,
k = 3 for a delta, whose windings see the line resistance through M, 1 otherwise). Without the
mitigation the resistance added is exactly 0.0 and the EMF is multiplied by exactly 1.0, so
the results are bit for bit those of the solver before it had the features. With L_s > 0 and
a sharp (two-slope or table) knee d(lambda)/dt jumps at the knee, where a fixed step loses its
order (when the coupled connections integrated lambda, their peaks were off by 0.1 % of the
first peak for a delta on a 250 MVA source up to 13 % for a floating neutral on 20 MVA). Each
connection therefore integrates a state whose derivative is continuous there and recovers
lambda from it:

* independent windings: the loop flux psi = lambda + L_s*i, psi' = e - R*i, through the curve
  re-expressed against psi (no solve needed);
* delta: the loop-flux vector psi = lambda + L_s*M*c, psi' = e_LL - R_s*M*c - R_w*c; at every
  stage lambda solves lambda + L_s*M*f(lambda) = psi by Newton's method (Jacobian
  I + L_s*M*D, 3x3 by Cramer's rule) from the previous stage's lambda, halving any step that
  does not reduce the residual;
* ungrounded wye: loop fluxes per phase, psi_k = lambda_k + L_s*i_k, are not enough, since
  psi_k' = e_k - v_n - R*i_k and the neutral voltage v_n itself jumps when a phase crosses the
  knee (the constraint on the currents holds that phase near the knee and shifts the voltage
  onto the neutral); the per-phase state was measured as inaccurate as lambda. The jump is
  common to all phases, so the state is y with y_k' = x_k - mean(x), x_k = e_k - R*i_k, which
  is continuous; psi_k = y_k + s, and the common shift s is fixed by sum(i_k) = const, an
  increasing scalar equation solved by Newton's method with bisection whenever a step leaves
  the bracket, each phase's lambda coming from its psi_k by a bracketed scalar Newton.

An unenergised winding keeps its lambda and carries no current; when a pole closes the state
is re-initialised from lambda, which is continuous. The solves stop at 1e-12 pu of lambda_N; one
that does not converge raises :class:`core.errors.ParameterError` rather than return a wrong
current.

Accuracy (tests/references/test_solver_vs_scipy.py), as the worst of the first ten per-cycle
peaks relative to the first peak, read from the default 128 samples per cycle, against scipy's
Radau at rtol 1e-9 (for the floating neutral DOP853 at rtol 1e-10 on a system that holds the
current sum exactly, Radau's own error being larger there): single phase and grounded wye at
most 3.2e-5; delta 2.3e-6 on a 250 MVA source, 2.6e-4 on 50 MVA and 2.6e-4 on 20 MVA; ungrounded
wye 2.3e-3 on an ideal source, 1.7e-3 on 250 MVA and 1.6e-3 on 20 MVA. Against the same
references sampled at the output instants the coupled kernel is within 4.2e-5 (delta, most of it
Radau's own error: against DOP853 at rtol 1e-12 the samples agree to 6e-6) and 8e-6 (wye). The
rest is the reading of a peak from 128 samples per cycle (a parabola through the three around the
largest), which the floating-neutral current, with a corner wherever a phase crosses the knee,
defeats most; more samples per cycle reduce it (2.3e-3 becomes 1.2e-4 at 2048). With the
mitigation, against the same references integrated interval by interval between the bypass and
the ramp's corners (a resistor of 0.3 of the saturated loop reactance, a third of that for a
delta, bypassed at 4.3 cycles; a ramp from 0.3 pu held one cycle, then rising over three), as
the worst of the ten peaks relative to the largest, and in brackets against the reference sampled
at the output instants: resistor, single phase 2.0e-5, grounded wye 4.9e-5, delta on 50 MVA
9.4e-6 (9.9e-6), delta on an ideal source 1.8e-5 (1.8e-5), ungrounded wye on 250 MVA 2.8e-3
(1.6e-5); ramp, single phase 3.6e-5, delta on 50 MVA 5.7e-4 (5.3e-6), delta on an ideal source
3.6e-6 (3.6e-6).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numba
import numpy as np
from numpy.typing import ArrayLike, NDArray

from core.errors import LimitError, ParameterError
from core.magnetizing import PiecewiseLinearCurve
from core.transformer import EquivalentCircuit

FloatArray = NDArray[np.float64]

__all__ = [
    "APPROXIMATIONS",
    "MIN_STEPS_PER_CYCLE",
    "Simulation",
    "WorstCase",
    "refined_abs_peak",
    "simulate",
    "step_plan",
    "worst_closing_angle",
]

MIN_STEPS_PER_CYCLE = 128
MAX_STEPS_PER_CYCLE = 16384
# Newton's method recovering lambda from the coupled kernel's state: iteration cap and tolerance
# on the flux residual and step [pu of lambda_N]. Warm-started from the previous stage it needs
# few curve evaluations (measured per winding and RK4 step, 4 being the floor: delta 4.05 with a
# two-slope curve, 4.2 with a table, 7.7 with the smooth knee; wye 12.5, 13.5 and 27, its
# solves being nested). 1e-12 pu is far below the integrator's error and some 1e3 times above
# double rounding. The cap is generous, bisection halving the wye's brackets and step halving
# the delta's steps when a full step fails; it is a guard, not a budget.
NEWTON_MAX_ITERATIONS = 60
NEWTON_TOLERANCE_PU = 1e-12
TOPOLOGY = {"single_phase": 0, "wye_grounded": 0, "wye": 1, "delta": 2}
APPROXIMATIONS = {
    "single_phase": (
        "no hysteresis or core loss: residual flux is an initial condition on a single-valued "
        "curve",
    ),
    "wye_grounded": (
        "phases magnetically independent (bank of single-phase cores); three-limb core "
        "coupling not modelled (usually conservative for the peak phase)",
        "source zero-sequence impedance taken equal to its positive-sequence impedance",
        "no hysteresis or core loss: residual flux is an initial condition on a single-valued "
        "curve",
    ),
    "wye": (
        "phases magnetically independent (bank of single-phase cores); three-limb core "
        "coupling not modelled (usually conservative for the peak phase)",
        "floating neutral: currents flow only once two poles are closed",
        "no hysteresis or core loss: residual flux is an initial condition on a single-valued "
        "curve",
    ),
    "delta": (
        "phases magnetically independent (bank of single-phase cores); three-limb core "
        "coupling not modelled (usually conservative for the peak phase)",
        "a delta winding is energised when the later of its two poles closes; the series path "
        "through the other two windings before that is neglected",
        "no hysteresis or core loss: residual flux is an initial condition on a single-valued "
        "curve",
    ),
}
_PHASE_SHIFT = np.array([0.0, -2.0 * math.pi / 3.0, 2.0 * math.pi / 3.0])
# simulate's per-case mitigation parameters, their defaults (no resistor, full voltage) and
# ranges, one row each
_MITIGATION_PARAMETERS = (
    "insertion_resistance_ohm",
    "insertion_time_s",
    "voltage_start_pu",
    "voltage_hold_s",
    "voltage_rise_s",
)
_MITIGATION_DEFAULT = np.array([[0.0], [0.0], [1.0], [0.0], [0.0]])
_MITIGATION_LOW = np.zeros((5, 1))
_MITIGATION_HIGH = np.array([[math.inf], [math.inf], [1.0], [math.inf], [math.inf]])


@numba.njit(cache=True, inline="always")
def _winding_curve(
    lam: float,
    on: bool,
    kd: int,
    p0: float,
    p1: float,
    p2: float,
    p3: float,
    p4: float,
    c: int,
    flux: FloatArray,
    cur: FloatArray,
    top: int,
) -> tuple[float, float]:  # pragma: no cover - compiled
    # Current f(lambda) and di/d(lambda) of one winding, (0, 0) while it is unenergised. Curve
    # parameters as in _element_curves without the source shift: kind 0 two-slope (p = 1/L_m,
    # lambda_S, 1/L_air, i_S), 1 smooth knee (1/L_m, 1/L_air - 1/L_m, lambda_S, width, g0),
    # 2 table (flux[c], cur[c] up to index top, p0 = final 1/L). Scalars in and out: helpers
    # that take arrays cost numba an atomic reference-count update per call here.
    if not on:
        return 0.0, 0.0
    x = abs(lam)
    if kd == 0:
        if x > p1:
            i = p3 + (x - p1) * p2
            d = p2
        else:
            i = x * p0
            d = p0
    elif kd == 1:
        s = x - p2
        q = math.sqrt(s * s + p3 * p3)
        i = p0 * x + p1 * (0.5 * (s + q) - p4)
        d = p0 + p1 * 0.5 * (1.0 + s / q)
    elif x >= flux[c, top]:
        d = p0
        i = cur[c, top] + (x - flux[c, top]) * d
    else:
        lo = 0
        hi = top
        while hi - lo > 1:
            mid = (lo + hi) // 2
            if flux[c, mid] < x:
                lo = mid
            else:
                hi = mid
        d = (cur[c, hi] - cur[c, lo]) / (flux[c, hi] - flux[c, lo])
        i = cur[c, lo] + (x - flux[c, lo]) * d
    return (i if lam >= 0.0 else -i), d


@numba.njit(cache=True, inline="always")
def _solve_coupled(
    d0: float,
    d1: float,
    d2: float,
    on0: bool,
    on1: bool,
    on2: bool,
    b0: float,
    b1: float,
    b2: float,
) -> tuple[float, float, float]:  # pragma: no cover - compiled
    # x with (I + M*diag(d)) x = b, M = [[2,-1,-1],[-1,2,-1],[-1,-1,2]], by Cramer's rule; the
    # rows of unenergised windings are the identity (their d is 0, so are their columns).
    a00 = 1.0 + 2.0 * d0
    a01 = -d1
    a02 = -d2
    a10 = -d0
    a11 = 1.0 + 2.0 * d1
    a12 = -d2
    a20 = -d0
    a21 = -d1
    a22 = 1.0 + 2.0 * d2
    if not on0:
        a00, a01, a02 = 1.0, 0.0, 0.0
    if not on1:
        a10, a11, a12 = 0.0, 1.0, 0.0
    if not on2:
        a20, a21, a22 = 0.0, 0.0, 1.0
    det = (
        a00 * (a11 * a22 - a12 * a21)
        - a01 * (a10 * a22 - a12 * a20)
        + a02 * (a10 * a21 - a11 * a20)
    )
    x0 = (
        b0 * (a11 * a22 - a12 * a21) - a01 * (b1 * a22 - a12 * b2) + a02 * (b1 * a21 - a11 * b2)
    ) / det
    x1 = (
        a00 * (b1 * a22 - a12 * b2) - b0 * (a10 * a22 - a12 * a20) + a02 * (a10 * b2 - b1 * a20)
    ) / det
    x2 = (
        a00 * (a11 * b2 - b1 * a21) - a01 * (a10 * b2 - b1 * a20) + b0 * (a10 * a21 - a11 * a20)
    ) / det
    return x0, x1, x2


@numba.njit(cache=True, inline="always")
def _delta_newton_step(
    l0: float,
    l1: float,
    l2: float,
    i0: float,
    i1: float,
    i2: float,
    d0: float,
    d1: float,
    d2: float,
    y0: float,
    y1: float,
    y2: float,
    on0: bool,
    on1: bool,
    on2: bool,
    ls: float,
    tol: float,
) -> tuple[float, float, float, float]:  # pragma: no cover - compiled
    # Largest residual [Wb-turn] of lambda + L_s*M*f(lambda) = psi at lambda (currents i and
    # slopes d there) and the Newton step, Jacobian I + L_s*M*D (no step once the residual is
    # within tol). Unenergised windings have a zero residual and an identity row, so their
    # lambda stays.
    r0 = l0 + ls * (2.0 * i0 - i1 - i2) - y0 if on0 else 0.0
    r1 = l1 + ls * (2.0 * i1 - i2 - i0) - y1 if on1 else 0.0
    r2 = l2 + ls * (2.0 * i2 - i0 - i1) - y2 if on2 else 0.0
    res = max(abs(r0), abs(r1), abs(r2))
    if res <= tol:
        return res, 0.0, 0.0, 0.0
    s0, s1, s2 = _solve_coupled(ls * d0, ls * d1, ls * d2, on0, on1, on2, r0, r1, r2)
    return res, -s0, -s1, -s2


@numba.njit(cache=True, inline="always")
def _phase_flux(
    psi: float,
    lam: float,
    on: bool,
    ls: float,
    tol: float,
    kd: int,
    p0: float,
    p1: float,
    p2: float,
    p3: float,
    p4: float,
    c: int,
    flux: FloatArray,
    cur: FloatArray,
    top: int,
) -> tuple[float, float, float, bool]:  # pragma: no cover - compiled
    # lambda with g(lambda) = lambda + L_s*f(lambda) - psi = 0 from the guess given, and the
    # current and slope there: (lambda, i, f', converged). Newton's method safeguarded by a
    # bracket: g' >= 1, so the root lies within |g| of any point, and a step leaving the
    # bracket is replaced by bisection. An unenergised phase keeps its lambda and no current.
    if not on:
        return lam, 0.0, 0.0, True
    lo = -math.inf
    hi = math.inf
    for _ in range(NEWTON_MAX_ITERATIONS):
        i, d = _winding_curve(lam, on, kd, p0, p1, p2, p3, p4, c, flux, cur, top)
        g = lam + ls * i - psi
        if abs(g) <= tol:
            return lam, i, d, True
        if g > 0.0:
            hi = min(hi, lam)
            lo = max(lo, lam - g)
        else:
            lo = max(lo, lam)
            hi = min(hi, lam - g)
        new = lam - g / (1.0 + ls * d)
        if not lo < new < hi:
            new = 0.5 * (lo + hi)
        if abs(new - lam) <= tol:
            i, d = _winding_curve(new, on, kd, p0, p1, p2, p3, p4, c, flux, cur, top)
            return new, i, d, True
        lam = new
    i, d = _winding_curve(lam, on, kd, p0, p1, p2, p3, p4, c, flux, cur, top)
    return lam, i, d, False


@numba.njit(cache=True, inline="always")
def _emf(
    topo: int,
    t: float,
    omega: float,
    v0: float,
    v1: float,
    v2: float,
    a0: float,
    a1: float,
    a2: float,
) -> tuple[float, float, float]:  # pragma: no cover - compiled
    # Source voltage driving each winding: phase voltage (wye), line-to-line voltage (delta).
    ea = v0 * math.sin(omega * t + a0)
    eb = v1 * math.sin(omega * t + a1)
    ec = v2 * math.sin(omega * t + a2)
    if topo == 1:
        return ea, eb, ec
    return ea - eb, eb - ec, ec - ea


@numba.njit(cache=True, inline="always")
def _source_scale(
    j: int, start: float, slope: float, hold_step: int, rise_end_step: int
) -> tuple[float, float, float]:  # pragma: no cover - compiled
    # Source amplitude factor g at the three stage times of step j (t_j, t_j + h/2, t_j + h):
    # ``start`` before the hold ends, rising by ``slope`` per step to 1 at the end of the rise,
    # 1 afterwards. The piece is chosen by the step, not the stage time, so a step ending at the
    # instant of a jump (a rise of zero steps) sees the value it started with up to its end.
    # Exactly 1.0 once the rise is over, which is every step when the feature is off
    # (rise_end_step = 0), so multiplying by it changes nothing there.
    if j >= rise_end_step:
        return 1.0, 1.0, 1.0
    if j < hold_step:
        return start, start, start
    x = float(j - hold_step)
    return start + slope * x, start + slope * (x + 0.5), start + slope * (x + 1.0)


@numba.njit(cache=True, inline="always")
def _rate(
    topo: int,
    e0: float,
    e1: float,
    e2: float,
    i0: float,
    i1: float,
    i2: float,
    on0: bool,
    on1: bool,
    on2: bool,
    count: int,
    r_w: float,
    r_s: float,
) -> tuple[float, float, float]:  # pragma: no cover - compiled
    # Time derivative of the integrated state, continuous at a knee for both connections:
    #   wye (two or more phases energised):  y_k' = x_k - mean(x),  x_k = e_k - R*i_k;
    #   delta:  psi' = e_LL - R_s*M*c - R_w*c.
    # r_w is the series resistance of a winding's own path (wye: winding plus source).
    if topo == 1:
        if count < 2:
            return 0.0, 0.0, 0.0
        x0 = e0 - r_w * i0 if on0 else 0.0
        x1 = e1 - r_w * i1 if on1 else 0.0
        x2 = e2 - r_w * i2 if on2 else 0.0
        mean = (x0 + x1 + x2) / count
        return (
            x0 - mean if on0 else 0.0,
            x1 - mean if on1 else 0.0,
            x2 - mean if on2 else 0.0,
        )
    return (
        e0 - r_s * (2.0 * i0 - i1 - i2) - r_w * i0 if on0 else 0.0,
        e1 - r_s * (2.0 * i1 - i2 - i0) - r_w * i1 if on1 else 0.0,
        e2 - r_s * (2.0 * i2 - i0 - i1) - r_w * i2 if on2 else 0.0,
    )


@numba.njit(cache=True, nogil=True)
def _kernel(
    topo: int,
    n_steps: int,
    decimate: int,
    h: float,
    omega: float,
    vpk: FloatArray,
    phase: FloatArray,
    r_el: FloatArray,
    r_src: FloatArray,
    l_src: FloatArray,
    close_step: NDArray[np.int64],
    lam0: FloatArray,
    tol: FloatArray,
    kind: NDArray[np.int64],
    par: FloatArray,
    flux: FloatArray,
    cur: FloatArray,
    npts: NDArray[np.int64],
    mit_f: FloatArray,
    mit_i: NDArray[np.int64],
    out: FloatArray,
) -> int:  # pragma: no cover - compiled
    """RK4 for the three coupled windings (topo 1 wye, 2 delta) in a state continuous at a knee.

    The state is psi (delta) or y (wye), see the module docstring; at each stage lambda is
    recovered from it by Newton's method warm-started from the previous stage, which also
    leaves the winding currents the rate needs. One curve per case (kind, par, flux, cur, npts
    as :func:`_element_curves` without the source shift). Mitigation per case: mit_f = (R_ins,
    g_0, slope of g per step), mit_i = (bypass step, end of hold, end of rise); R_ins adds to
    every line's resistance for the steps before the bypass (wye: r_w, each phase being a line;
    delta: r_s), and the source EMF is scaled by :func:`_source_scale` at each stage.
    Returns how many flux solves missed the tolerance within NEWTON_MAX_ITERATIONS (0
    normally).
    """
    n_cases = vpk.shape[0]
    failed = 0
    for c in range(n_cases):
        v0, v1, v2 = vpk[c, 0], vpk[c, 1], vpk[c, 2]
        a0, a1, a2 = phase[c, 0], phase[c, 1], phase[c, 2]
        r_w = r_el[c, 0]
        r_s = r_src[c]
        r_w_ins = r_w + mit_f[c, 0] if topo == 1 else r_w  # resistances while the resistor is in
        r_s_ins = r_s + mit_f[c, 0] if topo == 2 else r_s
        gs, gk = mit_f[c, 1], mit_f[c, 2]
        k_ins, kh, ke = mit_i[c, 0], mit_i[c, 1], mit_i[c, 2]
        ls = l_src[c]
        ftol = tol[c]
        kd = kind[c]
        p0, p1, p2, p3, p4 = par[c, 0], par[c, 1], par[c, 2], par[c, 3], par[c, 4]
        top = npts[c] - 1
        l0, l1, l2 = lam0[c, 0], lam0[c, 1], lam0[c, 2]
        on0 = on1 = on2 = False
        i0 = i1 = i2 = d0 = d1 = d2 = 0.0
        x0 = x1 = x2 = 0.0  # integrated state at the step boundary
        k0 = k1 = k2 = 0.0  # rate at the latest stage
        shift = 0.0  # wye: s in psi_k = y_k + s
        i_sum = 0.0  # wye: sum of the energised phases' currents, constant between pole closings
        count = 0
        e_end = (0.0, 0.0, 0.0)
        for j in range(n_steps + 1):
            n0 = j >= close_step[c, 0]
            n1 = j >= close_step[c, 1]
            n2 = j >= close_step[c, 2]
            if j == 0 or n0 != on0 or n1 != on1 or n2 != on2:
                # a pole closed: lambda is continuous; re-initialise the state from it
                on0, on1, on2 = n0, n1, n2
                i0, d0 = _winding_curve(l0, on0, kd, p0, p1, p2, p3, p4, c, flux, cur, top)
                i1, d1 = _winding_curve(l1, on1, kd, p0, p1, p2, p3, p4, c, flux, cur, top)
                i2, d2 = _winding_curve(l2, on2, kd, p0, p1, p2, p3, p4, c, flux, cur, top)
                count = int(on0) + int(on1) + int(on2)
                shift = 0.0
                i_sum = i0 + i1 + i2
                if topo == 2:
                    x0 = l0 + ls * (2.0 * i0 - i1 - i2)
                    x1 = l1 + ls * (2.0 * i1 - i2 - i0)
                    x2 = l2 + ls * (2.0 * i2 - i0 - i1)
                else:
                    x0 = l0 + ls * i0
                    x1 = l1 + ls * i1
                    x2 = l2 + ls * i2
            if j % decimate == 0:
                col = j // decimate
                out[c, 0, col] = i0
                out[c, 1, col] = i1
                out[c, 2, col] = i2
            if j == n_steps:
                break
            t = j * h
            e_start = _emf(topo, t, omega, v0, v1, v2, a0, a1, a2) if j == 0 else e_end
            e_mid = _emf(topo, t + 0.5 * h, omega, v0, v1, v2, a0, a1, a2)
            e_end = _emf(topo, t + h, omega, v0, v1, v2, a0, a1, a2)
            q0, q1, q2 = _source_scale(j, gs, gk, kh, ke)
            rw_j, rs_j = (r_w_ins, r_s_ins) if j < k_ins else (r_w, r_s)
            s0 = s1 = s2 = 0.0  # weighted sum of the rates
            # stages 0-3 at t, t + h/2, t + h/2, t + h (weights 1, 2, 2, 1); "stage" 4 recovers
            # lambda at the step's end from the updated state
            for st in range(5):
                if st > 0:
                    if st < 4:
                        a = h if st == 3 else 0.5 * h
                        y0, y1, y2 = x0 + a * k0, x1 + a * k1, x2 + a * k2
                    else:
                        x0 += h / 6.0 * s0
                        x1 += h / 6.0 * s1
                        x2 += h / 6.0 * s2
                        y0, y1, y2 = x0, x1, x2
                    if topo == 2:
                        # Newton's method from the previous stage's lambda; a step that does
                        # not reduce the residual is halved (descent: the Newton direction
                        # shrinks every linearised residual alike)
                        b0, b1, b2 = l0, l1, l2  # last accepted point
                        dl0 = dl1 = dl2 = 0.0  # Newton step from it
                        base = math.inf  # its residual
                        alpha = 1.0
                        for it in range(NEWTON_MAX_ITERATIONS + 1):
                            res, u0, u1, u2 = _delta_newton_step(
                                l0, l1, l2, i0, i1, i2, d0, d1, d2, y0, y1, y2,
                                on0, on1, on2, ls, ftol,
                            )  # fmt: skip
                            if res <= ftol:
                                break
                            if it == NEWTON_MAX_ITERATIONS:
                                failed += 1
                                break
                            if res < base:
                                b0, b1, b2 = l0, l1, l2
                                dl0, dl1, dl2 = u0, u1, u2
                                base = res
                                alpha = 1.0
                            else:
                                alpha *= 0.5
                            l0 = b0 + alpha * dl0
                            l1 = b1 + alpha * dl1
                            l2 = b2 + alpha * dl2
                            i0, d0 = _winding_curve(
                                l0, on0, kd, p0, p1, p2, p3, p4, c, flux, cur, top
                            )
                            i1, d1 = _winding_curve(
                                l1, on1, kd, p0, p1, p2, p3, p4, c, flux, cur, top
                            )
                            i2, d2 = _winding_curve(
                                l2, on2, kd, p0, p1, p2, p3, p4, c, flux, cur, top
                            )
                            if alpha == 1.0 and max(abs(dl0), abs(dl1), abs(dl2)) <= ftol:
                                break  # a full step below the tolerance: converged
                    elif count >= 2:
                        # the shift s: sum_k I_k(y_k + s) = i_sum, I_k the current against the
                        # loop flux, increasing in s; Newton's method with its slope
                        # sum(w_k), w_k = f'_k/(1 + L_s*f'_k), and bisection whenever a step
                        # leaves the bracket found so far
                        lo = -math.inf
                        hi = math.inf
                        small = False
                        for it in range(NEWTON_MAX_ITERATIONS + 1):
                            l0, i0, d0, ok0 = _phase_flux(
                                y0 + shift, l0, on0, ls, ftol,
                                kd, p0, p1, p2, p3, p4, c, flux, cur, top,
                            )  # fmt: skip
                            l1, i1, d1, ok1 = _phase_flux(
                                y1 + shift, l1, on1, ls, ftol,
                                kd, p0, p1, p2, p3, p4, c, flux, cur, top,
                            )  # fmt: skip
                            l2, i2, d2, ok2 = _phase_flux(
                                y2 + shift, l2, on2, ls, ftol,
                                kd, p0, p1, p2, p3, p4, c, flux, cur, top,
                            )  # fmt: skip
                            g = i0 + i1 + i2 - i_sum
                            gp = d0 / (1.0 + ls * d0) + d1 / (1.0 + ls * d1) + d2 / (1.0 + ls * d2)
                            if not (ok0 and ok1 and ok2):
                                failed += 1
                                break
                            if small or abs(g) <= ftol * gp:
                                break
                            if it == NEWTON_MAX_ITERATIONS:
                                failed += 1
                                break
                            if g > 0.0:
                                hi = shift
                            else:
                                lo = shift
                            new = shift - g / gp
                            if not lo < new < hi:
                                new = 0.5 * (lo + hi)
                            small = abs(new - shift) <= ftol
                            shift = new
                if st == 4:
                    break
                e = e_start if st == 0 else (e_end if st == 3 else e_mid)
                q = q0 if st == 0 else (q2 if st == 3 else q1)
                k0, k1, k2 = _rate(
                    topo, q * e[0], q * e[1], q * e[2], i0, i1, i2, on0, on1, on2, count,
                    rw_j, rs_j,
                )  # fmt: skip
                wgt = 1.0 if st == 0 or st == 3 else 2.0
                s0 += wgt * k0
                s1 += wgt * k1
                s2 += wgt * k2
    return failed


def _independent(
    n_steps: int,
    decimate: int,
    h: float,
    omega: float,
    vpk: FloatArray,
    phase: FloatArray,
    r_el: FloatArray,
    l_src: FloatArray,
    close_step: NDArray[np.int64],
    lam0: FloatArray,
    kind: NDArray[np.int64],
    par: FloatArray,
    flux: FloatArray,
    cur: FloatArray,
    npts: NDArray[np.int64],
    mit_f: FloatArray,
    mit_i: NDArray[np.int64],
    out: FloatArray,
) -> None:  # pragma: no cover - compiled
    """RK4 for windings that are independent circuits; one element = one winding of one case.

    kind 0: two-slope (par = 1/L_m, lambda_S, 1/L_air, i_S); kind 1: smooth knee
    (par = 1/L_m, 1/L_air - 1/L_m, lambda_S, width, g0); kind 2: table (flux, cur, npts; par[0]
    = final 1/L). Mitigation as in :func:`_kernel`: the pre-insertion resistor mit_f[e, 0] adds
    to r_el[e] before the bypass step; the source EMF is scaled by :func:`_source_scale`, folded
    into the three per-step source values (v*g)*sin so that the stages cost what they did
    without it. Scalar locals keep the hot loop in registers.
    """
    n_el = vpk.shape[0]
    for e in numba.prange(n_el):
        lam = lam0[e]
        v = vpk[e]
        p = phase[e]
        r0 = r_el[e]
        r_in = r0 + mit_f[e, 0]  # while the pre-insertion resistor is in
        gs, gk = mit_f[e, 1], mit_f[e, 2]
        k_ins, kh, ke = mit_i[e, 0], mit_i[e, 1], mit_i[e, 2]
        ls = l_src[e]
        kd = kind[e]
        p0 = par[e, 0]
        p1 = par[e, 1]
        p2 = par[e, 2]
        p3 = par[e, 3]
        p4 = par[e, 4]
        top = npts[e] - 1
        seg = 1
        start = close_step[e]
        ch = math.cos(0.5 * omega * h)
        sh = math.sin(0.5 * omega * h)
        s0 = c0 = s1 = c1 = s2 = c2 = 0.0
        u0 = u1 = u2 = 0.0  # source voltage at the stage times
        r = r0
        for j in range(n_steps + 1):
            energised = j >= start
            if energised:
                # source phase at t_j, t_j + h/2, t_j + h by rotation; exact every 64 steps
                if j == start or (j - start) % 64 == 0:
                    s0 = math.sin(omega * j * h + p)
                    c0 = math.cos(omega * j * h + p)
                else:
                    s0 = s2
                    c0 = c2
                s1 = s0 * ch + c0 * sh
                c1 = c0 * ch - s0 * sh
                s2 = s1 * ch + c1 * sh
                c2 = c1 * ch - s1 * sh
                q0, q1, q2 = _source_scale(j, gs, gk, kh, ke)
                u0 = v * q0 * s0
                u1 = v * q1 * s1
                u2 = v * q2 * s2
                r = r_in if j < k_ins else r0
            acc = 0.0
            lx = lam
            for st in range(4):
                x = abs(lx)
                if kd == 0:
                    if x > p1:
                        i = p3 + (x - p1) * p2
                        d = p2
                    else:
                        i = x * p0
                        d = p0
                elif kd == 1:
                    sq = x - p2
                    q = math.sqrt(sq * sq + p3 * p3)
                    i = p0 * x + p1 * (0.5 * (sq + q) - p4)
                    d = p0 + p1 * 0.5 * (1.0 + sq / q)
                else:
                    if x >= flux[e, top]:
                        i = cur[e, top] + (x - flux[e, top]) * p0
                        d = p0
                    else:
                        while seg > 1 and flux[e, seg - 1] > x:
                            seg -= 1
                        while flux[e, seg] < x:
                            seg += 1
                        d = (cur[e, seg] - cur[e, seg - 1]) / (flux[e, seg] - flux[e, seg - 1])
                        i = cur[e, seg - 1] + (x - flux[e, seg - 1]) * d
                if lx < 0.0:
                    i = -i
                if st == 0:
                    if j % decimate == 0:
                        out[e, j // decimate] = i if energised else 0.0
                    if j == n_steps or not energised:
                        break
                    sv = u0
                elif st == 3:
                    sv = u2
                else:
                    sv = u1
                kk = (sv - r * i) / (1.0 + ls * d)
                if st == 0 or st == 3:
                    acc += kk
                else:
                    acc += 2.0 * kk
                lx = lam + (h if st == 2 else 0.5 * h) * kk
                if st == 3:
                    lam += h / 6.0 * acc


# The same kernel compiled twice: serially for small batches, and with its element loop spread
# over the available cores (numba's prange) for large ones. Elements are independent, so both
# give identical results.
_kernel_independent = numba.njit(cache=True, nogil=True)(_independent)
_kernel_independent_parallel = numba.njit(cache=True, nogil=True, parallel=True)(_independent)
PARALLEL_MIN_ELEMENTS = 64


@dataclass(frozen=True)
class Simulation:
    """Result of :func:`simulate`.

    Attributes
    ----------
    time_s : ndarray, shape (n_samples,)
        Sample instants from the closing command, t = 0 [s].
    winding_current_a : ndarray, shape (n_cases, n_windings, n_samples)
        Current in each energised winding [A].
    line_current_a : ndarray, shape (n_cases, n_phases, n_samples)
        Line currents [A]: the winding currents for wye and single-phase, their differences for
        delta.
    samples_per_cycle : int
        Output samples per cycle.
    steps_per_cycle : int
        Internal integration steps per cycle.
    pole_delay_s : ndarray, shape (n_cases, n_phases)
        Pole closing instants actually used, after rounding to the internal step [s].
    insertion_time_s : ndarray, shape (n_cases,)
        Bypass instants of the pre-insertion resistor actually used, after rounding to the
        internal step [s].
    voltage_ramp_s : ndarray, shape (n_cases, 2)
        End of the reduced-voltage hold and end of the rise actually used, after rounding to
        the internal step [s].
    approximations : tuple of str
        What the model approximates for this connection.
    """

    time_s: FloatArray
    winding_current_a: FloatArray
    line_current_a: FloatArray
    samples_per_cycle: int
    steps_per_cycle: int
    pole_delay_s: FloatArray
    insertion_time_s: FloatArray
    voltage_ramp_s: FloatArray
    approximations: tuple[str, ...]


def step_plan(
    frequency_hz: float,
    duration_s: float,
    samples_per_cycle: int,
    min_time_constant_s: float = math.inf,
) -> tuple[int, int, int]:
    """Internal steps per cycle, decimation and total step count for a simulation.

    Parameters
    ----------
    frequency_hz : float
        Source frequency [Hz].
    duration_s : float
        Simulated time [s].
    samples_per_cycle : int
        Output samples per cycle [-].
    min_time_constant_s : float
        Shortest time constant of the circuit, (L_air + L_s)/R [s]; the step is kept at or below
        a quarter of it (accuracy and stability of the explicit integrator).

    Returns
    -------
    tuple of int
        (steps per cycle, decimation, number of steps).

    Raises
    ------
    ParameterError
        When the time constant is so short that more than MAX_STEPS_PER_CYCLE steps per cycle
        would be needed.
    """
    if not (isinstance(samples_per_cycle, int) and 4 <= samples_per_cycle <= 100_000):
        raise ParameterError("samples_per_cycle", samples_per_cycle, "an integer in [4, 100000]")
    if not (math.isfinite(duration_s) and duration_s > 0.0):
        raise ParameterError("duration_s", duration_s, "a finite number > 0")
    need = float(MIN_STEPS_PER_CYCLE)
    if min_time_constant_s < math.inf:
        need = max(need, 4.0 / (frequency_hz * min_time_constant_s))
    if need > MAX_STEPS_PER_CYCLE:
        raise ParameterError(
            "resistance_ohm",
            min_time_constant_s,
            "a saturated-loop time constant (L_air + L_s)/R of at least "
            f"{4.0 / (frequency_hz * MAX_STEPS_PER_CYCLE):.3g} s; this circuit is almost purely "
            "resistive when saturated",
        )
    decimate = max(1, math.ceil(need / samples_per_cycle))
    spc = samples_per_cycle * decimate
    n_steps = max(decimate, round(duration_s * frequency_hz * samples_per_cycle) * decimate)
    return spc, decimate, n_steps


def _element_curves(
    circuits: Sequence[EquivalentCircuit], *, loop_flux: bool = True
) -> tuple[NDArray[np.int64], FloatArray, FloatArray, FloatArray, NDArray[np.int64]]:
    """Curve parameters for the kernels, one row per circuit.

    With ``loop_flux`` (for :func:`_kernel_independent`) a piecewise-linear curve is returned as
    current against the loop flux psi = lambda + L_s*i (breakpoints shifted by L_s*i_k, final
    inductance L_final + L_s), the state that :func:`simulate` integrates for it: d(psi)/dt =
    e - R*i(psi) is continuous at the knee, whereas d(lambda)/dt = (e - R*i)/(1 + L_s*f') jumps
    there when L_s > 0 and a fixed-step Runge-Kutta step across the jump loses its order
    (errors of several per cent in the decay for a weak source). Without it (for
    :func:`_kernel`, which does its own loop-flux solve) the curve is against lambda itself.
    """
    n = len(circuits)
    width = max(
        (c.curve.flux_wb.size if isinstance(c.curve, PiecewiseLinearCurve) else 2) for c in circuits
    )
    kind = np.zeros(n, dtype=np.int64)
    par = np.zeros((n, 5))
    flux = np.zeros((n, width))
    cur = np.zeros((n, width))
    npts = np.full(n, 2, dtype=np.int64)
    for idx, circ in enumerate(circuits):
        cv = circ.curve
        if isinstance(cv, PiecewiseLinearCurve):
            p = cv.flux_wb.size
            ls = circ.source_inductance_h if loop_flux else 0.0
            psi = cv.flux_wb + ls * cv.current_a
            flux[idx, :p] = psi
            cur[idx, :p] = cv.current_a
            flux[idx, p:] = psi[-1]
            cur[idx, p:] = cv.current_a[-1]
            npts[idx] = p
            final = 1.0 / (cv.final_inductance_h + ls)
            if p == 2:
                a = cv.current_a[1] / psi[1]
                par[idx] = (a, psi[1], final, cv.current_a[1], 0.0)
            else:
                kind[idx] = 2
                par[idx, 0] = final
        else:
            kind[idx] = 1
            a = 1.0 / cv.unsaturated_inductance_h
            e = cv.knee_width_wb
            g0 = 0.5 * (-cv.knee_flux_wb + math.hypot(cv.knee_flux_wb, e))
            par[idx] = (a, 1.0 / cv.saturated_inductance_h - a, cv.knee_flux_wb, e, g0)
    return kind, par, flux, cur, npts


def simulate(
    circuits: EquivalentCircuit | Sequence[EquivalentCircuit],
    closing_angle_deg: ArrayLike,
    residual_flux_pu: ArrayLike,
    pole_delay_s: ArrayLike = 0.0,
    *,
    duration_s: float,
    samples_per_cycle: int = 128,
    extra_resistance_ohm: ArrayLike = 0.0,
    insertion_resistance_ohm: ArrayLike = 0.0,
    insertion_time_s: ArrayLike = 0.0,
    voltage_start_pu: ArrayLike = 1.0,
    voltage_hold_s: ArrayLike = 0.0,
    voltage_rise_s: ArrayLike = 0.0,
    max_steps: int | None = None,
) -> Simulation:
    """Simulate the energisation of many cases at once.

    Parameters
    ----------
    circuits : EquivalentCircuit or sequence of them
        One circuit shared by every case, or one per case (all with the same number of phases,
        connection and frequency).
    closing_angle_deg : array_like, shape (n_cases,) or scalar
        Angle of the phase-A source voltage e_a = sqrt(2)*V*sin(omega*t + alpha) at t = 0, the
        closing command [deg].
    residual_flux_pu : array_like, shape (n_cases, n_windings), (n_windings,) or scalar
        Flux linkage of each winding at t = 0 [pu of lambda_N].
    pole_delay_s : array_like, shape (n_cases, n_phases), (n_phases,) or scalar
        Closing instant of each pole after t = 0, >= 0 [s].
    duration_s : float
        Simulated time [s].
    samples_per_cycle : int
        Output samples per cycle [-].
    extra_resistance_ohm : array_like, shape (n_cases,) or scalar
        Resistance added in series with every winding for the whole record, >= 0 [ohm].
    insertion_resistance_ohm : array_like, shape (n_cases,) or scalar
        Pre-insertion resistor in series with each line (each breaker pole), between the source
        and the transformer terminals, from t = 0 until ``insertion_time_s``, >= 0 [ohm].
    insertion_time_s : array_like, shape (n_cases,) or scalar
        Instant, from the closing command t = 0, at which all poles short the pre-insertion
        resistor together, >= 0; beyond ``duration_s`` it stays in for the whole record [s].
    voltage_start_pu : array_like, shape (n_cases,) or scalar
        Source EMF amplitude while the reduced voltage is held, in [0, 1] [pu of the rated
        source EMF].
    voltage_hold_s : array_like, shape (n_cases,) or scalar
        How long the EMF stays at ``voltage_start_pu`` from t = 0, >= 0 [s].
    voltage_rise_s : array_like, shape (n_cases,) or scalar
        Duration of the linear rise from ``voltage_start_pu`` to 1 after the hold, >= 0; 0 gives
        a step at the end of the hold [s].
    max_steps : int or None
        Compute limit: most integration steps (cases x windings x steps) allowed [-].

    Returns
    -------
    Simulation

    Raises
    ------
    ParameterError
        On inconsistent shapes or values out of range, naming the parameter; also when the
        circuit's saturated loop, with the pre-insertion resistor in, is too fast for
        MAX_STEPS_PER_CYCLE steps per cycle (``insertion_resistance_ohm``, with the largest
        resistor the circuit allows).
    LimitError
        When the work exceeds ``max_steps``.

    Notes
    -----
    See the module docstring for the equations. Phase B and C source voltages lag and lead
    phase A by 120 degrees (ABC sequence).

    Pre-insertion resistor: while it is in, R_ins adds to the source resistance of every line.
    For single-phase and wye windings each line is a winding's loop, so it adds to that loop's
    R; for a delta it adds to R_s, the resistance that couples the windings through
    M = [[2,-1,-1],[-1,2,-1],[-1,-1,2]], and a delta on an ideal source is then solved by the
    coupled kernel (a batch takes one kernel; any case with a resistor in sends a delta batch
    there). The bypass instant is rounded to the internal step, so that no step straddles it,
    and the step plan takes the shortest time constant with the resistor in,
    (L_air + L_s)/(R + k*R_ins), k = 3 for a delta (M's non-zero eigenvalue) and 1 otherwise.
    An ideal resistor shorted by ideal contacts: the flux and the current are continuous at
    the bypass, only their rates change.

    Reduced-voltage source: e_a = g(t)*sqrt(2)*V*sin(omega*t + alpha), phases B and C alike,
    with g = start for t < t_hold, start + (1 - start)*(t - t_hold)/t_rise for
    t_hold <= t < t_hold + t_rise, and 1 afterwards. The end of the hold and of the rise are
    rounded to the internal step (a rise shorter than half a step becomes a step) and g is
    evaluated at every Runge-Kutta stage on the piece its step lies on. Only the EMF is scaled:
    the source impedance is unchanged and the phase of the EMF fixed, an idealisation of a
    soft-starting source or a ramped generator excitation.

    With all these at their defaults (no resistor, g = 1) every case is computed exactly as
    without them: the resistance added is 0.0 and the EMF multiplied by 1.0.

    References
    ----------
    Circuit equation: e.g. Y. Wang, S. G. Abdulsalam, W. Xu, IEEE Trans. Power Delivery 23(2),
    2008 (from memory); integrator: classical Runge-Kutta (Kutta 1901). Pre-insertion resistors
    and reduced-voltage (soft) energisation as inrush mitigation: common practice.
    """
    circ_list = [circuits] if isinstance(circuits, EquivalentCircuit) else list(circuits)
    if not circ_list:
        raise ParameterError("circuits", 0, "at least one circuit")
    first = circ_list[0]
    for c in circ_list[1:]:
        if (c.phases, c.connection, c.frequency_hz) != (
            first.phases,
            first.connection,
            first.frequency_hz,
        ):
            raise ParameterError("circuits", c.connection, "the same phases, connection, frequency")
    m = first.phases
    alpha = np.atleast_1d(np.asarray(closing_angle_deg, dtype=float))
    res = np.asarray(residual_flux_pu, dtype=float)
    delay = np.asarray(pole_delay_s, dtype=float)
    extra = np.atleast_1d(np.asarray(extra_resistance_ohm, dtype=float))
    mit_values = (
        insertion_resistance_ohm,
        insertion_time_s,
        voltage_start_pu,
        voltage_hold_s,
        voltage_rise_s,
    )
    # all at their defaults (no resistor, g = 1), the usual call, told from plain numbers
    # without building arrays; the kernels then get the arrays the general path would compute
    mit_off = all(
        isinstance(v, int | float) and v == d
        for v, d in zip(mit_values, _MITIGATION_DEFAULT[:, 0], strict=True)
    )
    mit_in = [] if mit_off else [np.asarray(v, dtype=float) for v in mit_values]
    # mit_in is empty when all are off
    for name, arr in zip(_MITIGATION_PARAMETERS, mit_in, strict=False):
        if arr.ndim > 1:
            raise ParameterError(name, f"shape {arr.shape}", "a scalar or one value per case")
    n = max(
        alpha.shape[0],
        len(circ_list),
        extra.shape[0],
        res.shape[0] if res.ndim == 2 else 1,
        delay.shape[0] if delay.ndim == 2 else 1,
        *(arr.size for arr in mit_in),
    )
    # one row per mitigation parameter, one column per case
    mit = _MITIGATION_DEFAULT if mit_off else np.empty((len(mit_in), n))
    for k, (name, arr) in enumerate(zip(_MITIGATION_PARAMETERS, mit_in, strict=False)):
        try:
            mit[k] = arr
        except ValueError as exc:
            raise ParameterError(name, f"{arr.size} values", f"a scalar or {n} values") from exc
    try:
        alpha = np.broadcast_to(alpha, (n,))
        res = np.broadcast_to(res if res.ndim == 2 else np.broadcast_to(res, (m,)), (n, m))
        delay = np.broadcast_to(delay if delay.ndim == 2 else np.broadcast_to(delay, (m,)), (n, m))
        extra = np.broadcast_to(extra, (n,))
    except ValueError as exc:
        raise ParameterError("cases", n, f"arrays broadcastable to {n} cases x {m} phases") from exc
    if len(circ_list) == 1:
        circ_list = circ_list * n
    elif len(circ_list) != n:
        raise ParameterError("circuits", len(circ_list), f"1 or {n} circuits")
    for name, arr in (
        ("closing_angle_deg", alpha),
        ("residual_flux_pu", res),
        ("pole_delay_s", delay),
        ("extra_resistance_ohm", extra),
    ):
        if not np.all(np.isfinite(arr)):
            raise ParameterError(name, "non-finite", "finite numbers")
    if np.any(np.abs(res) > 5.0):
        raise ParameterError("residual_flux_pu", float(np.abs(res).max()), "in [-5, 5]")
    if np.any(delay < 0.0) or np.any(delay > duration_s):
        raise ParameterError("pole_delay_s", float(delay.max()), f"in [0, {duration_s:g}] s")
    if np.any(extra < 0.0):
        raise ParameterError("extra_resistance_ohm", float(extra.min()), ">= 0")
    if not mit_off:
        finite = np.isfinite(mit)
        if not finite.all():
            k = int(np.flatnonzero(~finite.all(axis=1))[0])
            raise ParameterError(_MITIGATION_PARAMETERS[k], "non-finite", "finite numbers")
        bad = (mit < _MITIGATION_LOW) | (mit > _MITIGATION_HIGH)
        if bad.any():
            k = int(np.flatnonzero(bad.any(axis=1))[0])
            allowed = "in [0, 1] pu of the rated EMF" if _MITIGATION_HIGH[k, 0] == 1.0 else ">= 0"
            raise ParameterError(_MITIGATION_PARAMETERS[k], float(mit[k][bad[k]][0]), allowed)
        mit_off = bool((mit == _MITIGATION_DEFAULT).all())  # defaults given as arrays
    r_ins, t_ins, g_start, t_hold, t_rise = mit

    f = first.frequency_hz
    omega = 2.0 * math.pi * f
    topo = TOPOLOGY[first.connection]
    tau = min(
        (c.air_core_inductance_h + c.source_inductance_h)
        / max(c.winding_resistance_ohm + 2.0 * c.source_resistance_ohm + float(ex), 1e-300)
        for c, ex in zip(circ_list, extra, strict=True)
    )
    spc, decimate, n_steps = step_plan(f, duration_s, samples_per_cycle, tau)
    # with a pre-insertion resistor in, the saturated loop is faster: (L_air + L_s)/(R + k*R_ins),
    # k = 3 for a delta (the line resistance enters its windings' loops through M, whose
    # non-zero eigenvalue is 3), 1 for a winding in its own line
    k_line = 3.0 if topo == 2 else 1.0
    with_resistor = [] if mit_off else np.flatnonzero((r_ins > 0.0) & (t_ins > 0.0)).tolist()
    loop = [  # (L_air + L_s, R, R_ins) of each case with a resistor
        (
            circ_list[i].air_core_inductance_h + circ_list[i].source_inductance_h,
            circ_list[i].winding_resistance_ohm
            + 2.0 * circ_list[i].source_resistance_ohm
            + float(extra[i]),
            float(r_ins[i]),
        )
        for i in with_resistor
    ]
    tau_ins = min((ll / max(rr + k_line * ri, 1e-300) for ll, rr, ri in loop), default=math.inf)
    if tau_ins < tau:
        try:
            spc, decimate, n_steps = step_plan(
                f, duration_s, samples_per_cycle, max(tau_ins, 1e-300)
            )
        except ParameterError as exc:
            r_max = min((ll * f * MAX_STEPS_PER_CYCLE / 4.0 - rr) / k_line for ll, rr, _ in loop)
            raise ParameterError(
                "insertion_resistance_ohm",
                max(ri for _, _, ri in loop),
                f"at most {max(r_max, 0.0):.4g} ohm for this circuit: with more, its saturated "
                f"loop while the resistor is in needs over {MAX_STEPS_PER_CYCLE} steps per cycle",
            ) from exc
    if max_steps is not None and n * m * n_steps > max_steps:
        raise LimitError("integration steps (cases x windings x steps)", n * m * n_steps, max_steps)
    h = 1.0 / (f * spc)

    pole_step = np.rint(delay / h).astype(np.int64)
    if topo == 2:
        # winding ab energised by poles a and b, bc by b and c, ca by c and a
        close_step = np.maximum(pole_step, np.roll(pole_step, -1, axis=1))
    else:
        close_step = pole_step.copy()
    # the resistor's bypass and the ramp's corners on the step grid; an instant after the
    # record (or too large to count in steps) is clipped to just after it, while the slope of
    # the rise keeps its unclipped length. Per case, for the kernels: mit_f = (R_ins, g_0,
    # slope of g per step), mit_i = (bypass step, end of hold, end of rise).
    mit_f = np.zeros((n, 3))
    mit_f[:, 1] = 1.0
    mit_i = np.zeros((n, 3), dtype=np.int64)
    ins_used: FloatArray = np.zeros(n)
    ramp_used: FloatArray = np.zeros((n, 2))
    any_inserted = any_ramp = False
    if not mit_off:
        with np.errstate(over="ignore", invalid="ignore"):
            ins_f = np.rint(t_ins / h)
            hold_f = np.rint(t_hold / h)
            end_f = np.rint((t_hold + t_rise) / h)
            span = end_f - hold_f
            last = float(n_steps + 1)
            mit_i[:, 0] = np.minimum(ins_f, last)
            mit_i[:, 1] = np.minimum(hold_f, last)
            mit_i[:, 2] = np.minimum(end_f, last)
            mit_f[:, 0] = r_ins
            mit_f[:, 1] = g_start
            mit_f[:, 2] = np.where(
                mit_i[:, 2] > mit_i[:, 1], (1.0 - g_start) / np.where(span > 0.0, span, 1.0), 0.0
            )
            ins_used = np.where(np.isfinite(ins_f), ins_f * h, t_ins)
            ramp_used[:, 0] = np.where(np.isfinite(hold_f), hold_f * h, t_hold)
            ramp_used[:, 1] = np.where(np.isfinite(end_f), end_f * h, t_hold + t_rise)
        any_inserted = bool(np.any((r_ins > 0.0) & (mit_i[:, 0] > 0)))
        any_ramp = bool(np.any((g_start < 1.0) & (mit_i[:, 2] > 0)))

    alpha_rad = np.deg2rad(alpha)
    if m == 1:
        vpk = np.array([math.sqrt(2.0) * c.winding_voltage_v for c in circ_list])[:, None]
        phase = alpha_rad[:, None]
    else:
        vpk = np.repeat(
            np.array([math.sqrt(2.0) * c.line_voltage_v / math.sqrt(3.0) for c in circ_list])[
                :, None
            ],
            3,
            axis=1,
        )
        phase = alpha_rad[:, None] + _PHASE_SHIFT[None, :]
    r_w = np.array([c.winding_resistance_ohm for c in circ_list]) + extra
    r_s = np.array([c.source_resistance_ohm for c in circ_list])
    l_s = np.array([c.source_inductance_h for c in circ_list])
    r_el = np.repeat((r_w if topo == 2 else r_w + r_s)[:, None], m, axis=1)
    lam0 = res * np.array([c.nominal_flux_wb for c in circ_list])[:, None]
    n_samples = n_steps // decimate + 1
    out = np.zeros((n, m, n_samples))
    independent = topo == 0 or (
        topo == 2 and not np.any(l_s) and not np.any(r_s) and not any_inserted
    )
    if independent:
        if topo == 2:  # delta on an ideal source: each winding sees a line-to-line voltage
            vpk = vpk * math.sqrt(3.0)
            phase = phase + math.pi / 6.0
        kind_e, par_e, flux_e, cur_e, npts_e = _element_curves(circ_list)
        # piecewise-linear curves: integrate the loop flux psi = lambda + L_s*i (see
        # _element_curves), so the kernel sees no source inductance and starts from psi_0
        pwl = np.array([isinstance(c.curve, PiecewiseLinearCurve) for c in circ_list])
        l_el = np.where(pwl, 0.0, l_s)
        state0 = lam0.copy()
        for idx, c in enumerate(circ_list):
            if pwl[idx] and l_s[idx] > 0.0:
                state0[idx] = lam0[idx] + l_s[idx] * c.curve.current(lam0[idx])
        rep = lambda a: np.ascontiguousarray(np.repeat(a, m, axis=0))  # noqa: E731
        kernel = (
            _kernel_independent_parallel if n * m >= PARALLEL_MIN_ELEMENTS else _kernel_independent
        )
        kernel(
            n_steps, decimate, h, omega,
            np.ascontiguousarray(vpk, dtype=float).ravel(),
            np.ascontiguousarray(phase, dtype=float).ravel(),
            np.ascontiguousarray(r_el).ravel(), np.repeat(l_el, m),
            np.ascontiguousarray(close_step).ravel(), np.ascontiguousarray(state0).ravel(),
            rep(kind_e), rep(par_e), rep(flux_e), rep(cur_e), rep(npts_e),
            rep(mit_f), rep(mit_i),
            out.reshape(n * m, n_samples),
        )  # fmt: skip
    else:
        kind_c, par_c, flux_c, cur_c, npts_c = _element_curves(circ_list, loop_flux=False)
        tol = NEWTON_TOLERANCE_PU * np.array([c.nominal_flux_wb for c in circ_list])
        failed = _kernel(
            topo, n_steps, decimate, h, omega,
            np.ascontiguousarray(vpk, dtype=float), np.ascontiguousarray(phase, dtype=float),
            np.ascontiguousarray(r_el), r_s, l_s, np.ascontiguousarray(close_step),
            np.ascontiguousarray(lam0), tol, kind_c, par_c, flux_c, cur_c, npts_c,
            mit_f, mit_i, out,
        )  # fmt: skip
        if failed:
            raise ParameterError(
                "circuit",
                f"{failed} flux solves without convergence",
                f"a circuit on which Newton's method converges in {NEWTON_MAX_ITERATIONS} "
                "iterations",
            )
    if not np.all(np.isfinite(out)):
        raise ParameterError(
            "circuit", "non-finite current", "a circuit whose simulated current stays finite"
        )
    # delta: i_a = c_ab - c_ca, i_b = c_bc - c_ab, i_c = c_ca - c_bc
    line = out - np.roll(out, 1, axis=1) if topo == 2 else out
    time: FloatArray = np.arange(n_samples, dtype=float) * (h * decimate)
    delays_used: FloatArray = pole_step.astype(float) * h
    step_ms = f"{h * 1e3:.4g} ms"
    return Simulation(
        time_s=time,
        winding_current_a=out,
        line_current_a=line,
        samples_per_cycle=samples_per_cycle,
        steps_per_cycle=spc,
        pole_delay_s=delays_used,
        insertion_time_s=ins_used,
        voltage_ramp_s=ramp_used,
        approximations=APPROXIMATIONS[first.connection]
        + (
            (f"pole closing instants rounded to the internal step of {step_ms}",)
            if np.any(delay > 0.0)
            else ()
        )
        + (
            (
                "pre-insertion resistor: a constant linear resistance in each line, shorted by "
                "all poles together (no scatter or arc at the bypass); the bypass instant "
                f"rounded to the internal step of {step_ms}",
            )
            if with_resistor
            else ()
        )
        + (
            (
                "reduced-voltage source: only the EMF amplitude is ramped, at fixed phase, "
                "behind the unchanged source impedance; the end of the hold and of the rise "
                f"rounded to the internal step of {step_ms}",
            )
            if any_ramp
            else ()
        ),
    )


def refined_abs_peak(y: FloatArray) -> FloatArray:
    """Largest |y| along the last axis with a parabola through the three samples around it."""
    a = np.abs(y)
    k = np.argmax(a, axis=-1)
    n = a.shape[-1]
    km = np.clip(k, 1, n - 2)
    y0 = np.take_along_axis(a, (km - 1)[..., None], -1)[..., 0]
    y1 = np.take_along_axis(a, km[..., None], -1)[..., 0]
    y2 = np.take_along_axis(a, (km + 1)[..., None], -1)[..., 0]
    den = y0 - 2.0 * y1 + y2
    with np.errstate(divide="ignore", invalid="ignore"):
        off = np.where(den < 0.0, 0.5 * (y0 - y2) / den, 0.0)
    peak: FloatArray = np.where(
        (k == km) & (den < 0.0), y1 - 0.25 * (y0 - y2) * off, np.max(a, axis=-1)
    )
    out: FloatArray = np.maximum(peak, np.max(a, axis=-1))
    return out


@dataclass(frozen=True)
class WorstCase:
    """Result of :func:`worst_closing_angle`."""

    closing_angle_deg: float
    peak_a: float
    phase_index: int
    peaks_by_phase_a: FloatArray


def worst_closing_angle(
    circuit: EquivalentCircuit,
    residual_flux_pu: ArrayLike,
    pole_delay_s: ArrayLike = 0.0,
    *,
    cycles: float = 2.0,
    max_steps: int | None = None,
) -> WorstCase:
    """Closing angle that gives the largest first-cycles inrush peak on any line.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The circuit.
    residual_flux_pu : array_like
        Residual flux per winding [pu of lambda_N].
    pole_delay_s : array_like
        Pole closing delays [s].
    cycles : float
        Window searched for the peak after t = 0 [cycles].
    max_steps : int or None
        Compute limit per simulation call, see :func:`simulate` [-].

    Returns
    -------
    WorstCase
        Angle of phase-A voltage at t = 0 [deg], the peak [A], the line that carries it, and
        every line's peak at that angle [A].

    Notes
    -----
    A scan over 0-360 degrees in 2.5-degree steps, then two local refinements (0.25 and 0.025
    degrees), each a single vectorised :func:`simulate` call. The angle is returned rounded to
    1e-6 degrees (the grid's accumulated rounding, ~1e-13 degrees, is noise) and wrapped into
    [0, 360), and the peaks are those simulated at exactly that angle.
    """
    duration = cycles / circuit.frequency_hz
    center, span, step = 180.0, 180.0, 2.5
    best_angle = 0.0
    for _ in range(3):
        angles = np.arange(center - span, center + span + 0.5 * step, step)
        sim = simulate(
            circuit,
            angles,
            residual_flux_pu,
            pole_delay_s,
            duration_s=duration,
            max_steps=max_steps,
        )
        peaks = refined_abs_peak(sim.line_current_a)
        worst = np.max(peaks, axis=1)
        j = int(np.argmax(worst))
        best_angle = float(angles[j])
        center, span, step = best_angle, step, step / 10.0
    angle = round(float(np.mod(round(best_angle, 6), 360.0)), 6)
    if angle >= 360.0:  # a tiny negative angle wraps to 360 - 1e-14, which rounds to 360
        angle -= 360.0
    sim = simulate(circuit, angle, residual_flux_pu, pole_delay_s, duration_s=duration)
    peaks = refined_abs_peak(sim.line_current_a)[0]
    ph = int(np.argmax(peaks))
    return WorstCase(angle, float(peaks[ph]), ph, peaks)
