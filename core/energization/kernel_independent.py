"""Compiled kernel of :func:`core.energization.energize.simulate` for windings that are independent
circuits.

Single-phase windings, grounded-wye windings on a source of equal sequence impedances, and a
delta on an ideal source (each winding on its line-to-line EMF): one element is one winding of
one case, integrated by the classical fourth-order Runge-Kutta method (Kutta 1901) at a fixed
step. For a piecewise-linear curve the state is the loop flux psi = lambda + L_s*i, through the
curve re-expressed against psi by :func:`core.energization.energize_plan.element_curves`; for the
smooth knee it is lambda. The equations, the approximations, the references and the measured
accuracy are in the module docstring of :mod:`core.energization.energize`.

Compiled with numba (``cache=True``, cached beside this module), serially (:func:`integrate`) and
with the element loop spread over the cores (:func:`integrate_parallel`). Everything the kernel
inlines is defined in this file: numba keys its cache by the file of the cached function only,
so a helper imported from another module could change without the kernel being recompiled.
"""

from __future__ import annotations

import math

import numba
import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]

__all__ = ["PARALLEL_MIN_ELEMENTS", "integrate", "integrate_parallel"]


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
def _element_current(
    lam: float,
    seg: int,
    kd: int,
    p0: float,
    p1: float,
    p2: float,
    p3: float,
    p4: float,
    flux: FloatArray,
    cur: FloatArray,
    e: int,
    top: int,
) -> tuple[float, float, int]:  # pragma: no cover - compiled
    # Current, its slope against the state and the table segment of element e at state lam
    # (curve parameters as in _independent's docstring); a table is searched from the segment
    # of the previous call, seg, which moves little between stages. Inlined, it costs what the
    # same lines written out in the loop did (measured).
    x = abs(lam)
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
    return (-i if lam < 0.0 else i), d, seg


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
    = final 1/L). Mitigation as in :func:`core.energization.kernel_coupled.integrate`: the
    pre-insertion resistor mit_f[e, 0] adds to r_el[e] before the bypass step; the source EMF is
    scaled by
    :func:`_source_scale`, folded into the three per-step source values (v*g)*sin so that the
    stages cost what they did without it. When mit_i[e, 3] > 1 the steps before the bypass are
    each split into that many equal sub-steps, in a loop of their own ahead of the one for the
    remaining steps (a sub-step loop nested in the main one was measured 15 to 25 % slower
    without any resistor); with mit_i[e, 3] = 1 every step, with the resistor or without, is
    computed by the main loop exactly as before the split existed. The outputs stay at the
    steps. Scalar locals keep the hot loop in registers.
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
        # while the resistor is in, a step too long for its loop is split into sub_in equal
        # sub-steps of h_in: the steps j < j0 first, then the others as without the resistor
        sub_in = mit_i[e, 3]
        j0 = min(k_ins, n_steps) if sub_in > 1 else 0
        h_in = h / sub_in
        ch_in = math.cos(0.5 * omega * h_in)
        sh_in = math.sin(0.5 * omega * h_in)
        for j in range(j0):
            energised = j >= start
            if j % decimate == 0:
                i, _, seg = _element_current(lam, seg, kd, p0, p1, p2, p3, p4, flux, cur, e, top)
                out[e, j // decimate] = i if energised else 0.0
            if not energised:
                continue
            for k in range(sub_in):
                # source phase at the sub-step's start, middle and end by rotation, as below
                if k == 0 and (j == start or (j - start) % 64 == 0):
                    s0 = math.sin(omega * j * h + p)
                    c0 = math.cos(omega * j * h + p)
                else:
                    s0 = s2
                    c0 = c2
                s1 = s0 * ch_in + c0 * sh_in
                c1 = c0 * ch_in - s0 * sh_in
                s2 = s1 * ch_in + c1 * sh_in
                c2 = c1 * ch_in - s1 * sh_in
                q0, q1, q2 = _source_scale(j, k, sub_in, gs, gk, kh, ke)
                u0 = v * q0 * s0
                u1 = v * q1 * s1
                u2 = v * q2 * s2
                acc = 0.0
                lx = lam
                for st in range(4):
                    i, d, seg = _element_current(lx, seg, kd, p0, p1, p2, p3, p4, flux, cur, e, top)
                    sv = u0 if st == 0 else (u2 if st == 3 else u1)
                    kk = (sv - r_in * i) / (1.0 + ls * d)
                    acc += kk if st == 0 or st == 3 else 2.0 * kk
                    lx = lam + (h_in if st == 2 else 0.5 * h_in) * kk
                lam += h_in / 6.0 * acc
        for j in range(j0, n_steps + 1):
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
                q0, q1, q2 = _source_scale(j, 0, 1, gs, gk, kh, ke)
                u0 = v * q0 * s0
                u1 = v * q1 * s1
                u2 = v * q2 * s2
                r = r_in if j < k_ins else r0
            acc = 0.0
            lx = lam
            for st in range(4):
                i, d, seg = _element_current(lx, seg, kd, p0, p1, p2, p3, p4, flux, cur, e, top)
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
integrate = numba.njit(cache=True, nogil=True)(_independent)
integrate_parallel = numba.njit(cache=True, nogil=True, parallel=True)(_independent)
PARALLEL_MIN_ELEMENTS = 64
