"""Compiled kernel of :func:`core.energization.energize.simulate` for windings coupled through the
source.

A delta through a source impedance (or with a pre-insertion resistor in its lines) and an
ungrounded (floating-neutral) wye: :func:`integrate` runs the classical fourth-order Runge-Kutta
method (Kutta 1901) at a fixed step over the cases, in the states whose derivatives are
continuous at a knee -- the loop-flux vector psi = lambda + L_s*M*c of a delta, the
phase-difference state y of the floating neutral -- and recovers the winding fluxes from them at
every stage by Newton's method (:func:`_delta_newton_step`, :func:`_phase_flux`). The equations,
the approximations, the references and the measured accuracy are in the module docstring of
:mod:`core.energization.energize`; :mod:`core.energization.energize_plan` chooses the step and lays
out the inputs.

Compiled with numba (``cache=True``, cached beside this module). Everything the kernel inlines
is defined in this file: numba keys its cache by the file of the cached function only, so a
helper imported from another module could change without the kernel being recompiled.
"""

from __future__ import annotations

import math

import numba
import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]

__all__ = ["NEWTON_MAX_ITERATIONS", "NEWTON_TOLERANCE_PU", "integrate"]

# Newton's method recovering lambda from the coupled kernel's state: iteration cap and tolerance
# on the flux residual and step [pu of lambda_N]. Warm-started from the previous stage it needs
# few curve evaluations (measured per winding and RK4 step, 4 being the floor: delta 4.05 with a
# two-slope curve, 4.2 with a table, 7.7 with the smooth knee; wye 12.5, 13.5 and 27, its
# solves being nested). 1e-12 pu is far below the integrator's error and some 1e3 times above
# double rounding. The cap is generous, bisection halving the wye's brackets and step halving
# the delta's steps when a full step fails; it is a guard, not a budget.
NEWTON_MAX_ITERATIONS = 60
NEWTON_TOLERANCE_PU = 1e-12


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
    # parameters as in element_curves without the source shift: kind 0 two-slope (p = 1/L_m,
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


# A copy of this helper sits beside each kernel, in core.energization.kernel_coupled and
# core.energization.kernel_independent: numba's cache is keyed by the file of the cached function
# alone, so a helper inlined from another file could change without the cached kernel being
# recompiled.
@numba.njit(cache=True, inline="always")
def _source_scale(
    j: int, k: int, m: int, start: float, slope: float, hold_step: int, rise_end_step: int
) -> tuple[float, float, float]:  # pragma: no cover - compiled
    # Source amplitude factor g at the three stage times of sub-step k of the m that step j is
    # split into (t_j + (k, k + 1/2, k + 1)*h/m; m = 1 but while a pre-insertion resistor is
    # in): ``start`` before the hold ends, rising by ``slope`` per step to 1 at the end of the
    # rise, 1 afterwards. The piece is chosen by the step, not the stage time, so a step ending
    # at the instant of a jump (a rise of zero steps) sees the value it started with up to its
    # end. Exactly 1.0 once the rise is over, which is every step when the feature is off
    # (rise_end_step = 0), so multiplying by it changes nothing there; with m = 1 the offsets
    # k/m, (k + 1/2)/m and (k + 1)/m are exactly 0, 0.5 and 1.
    if j >= rise_end_step:
        return 1.0, 1.0, 1.0
    if j < hold_step:
        return start, start, start
    x = float(j - hold_step)
    return (
        start + slope * (x + k / m),
        start + slope * (x + (k + 0.5) / m),
        start + slope * (x + (k + 1.0) / m),
    )


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
def integrate(
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

    The state is psi (delta) or y (wye), see :mod:`core.energization.energize`; at each stage lambda
    is recovered from it by Newton's method warm-started from the previous stage, which also
    leaves the winding currents the rate needs. One curve per case (kind, par, flux, cur, npts
    as :func:`core.energization.energize_plan.element_curves` without the source shift). Mitigation
    per case: mit_f = (R_ins, g_0, slope of g per step), mit_i = (bypass step, end of hold, end of
    rise, sub-steps per step while the resistor is in); R_ins adds to every line's resistance
    for the steps before the bypass (wye: r_w, each phase being a line; delta: r_s), each of
    those steps being split into mit_i[c, 3] equal sub-steps (a single step when it is 1,
    computed exactly as without the split), and the source EMF is scaled by
    :func:`_source_scale` at each stage. The outputs stay at the steps. Returns how many flux
    solves missed the tolerance within NEWTON_MAX_ITERATIONS (0 normally).
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
        sub_in = mit_i[c, 3]
        h_in = h / sub_in
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
            # while the resistor is in, the step is split into sub_in equal sub-steps
            nsub = sub_in if j < k_ins else 1
            hs = h if nsub == 1 else h_in
            rw_j, rs_j = (r_w_ins, r_s_ins) if j < k_ins else (r_w, r_s)
            for k in range(nsub):
                ts = t + k * hs
                e_start = _emf(topo, ts, omega, v0, v1, v2, a0, a1, a2) if j + k == 0 else e_end
                e_mid = _emf(topo, ts + 0.5 * hs, omega, v0, v1, v2, a0, a1, a2)
                e_end = _emf(topo, ts + hs, omega, v0, v1, v2, a0, a1, a2)
                q0, q1, q2 = _source_scale(j, k, nsub, gs, gk, kh, ke)
                s0 = s1 = s2 = 0.0  # weighted sum of the rates
                # stages 0-3 at t, t + h/2, t + h/2, t + h (weights 1, 2, 2, 1), h the
                # (sub-)step; "stage" 4 recovers lambda at its end from the updated state
                for st in range(5):
                    if st > 0:
                        if st < 4:
                            a = hs if st == 3 else 0.5 * hs
                            y0, y1, y2 = x0 + a * k0, x1 + a * k1, x2 + a * k2
                        else:
                            x0 += hs / 6.0 * s0
                            x1 += hs / 6.0 * s1
                            x2 += hs / 6.0 * s2
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
                                gp = (
                                    d0 / (1.0 + ls * d0)
                                    + d1 / (1.0 + ls * d1)
                                    + d2 / (1.0 + ls * d2)
                                )
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
