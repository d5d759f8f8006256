"""Compiled kernel of :func:`core.network.simulate_network`: the network's loop fluxes by RK4.

The equations, the states and the references are in the docstring of
:mod:`core.network.solver`; this module holds only the compiled arithmetic. Per case the states
are the loop fluxes psi of every energised winding (one per winding, shape (n_units, 3)) and
psi_L of each bus-load phase; at every Runge-Kutta stage the source-inductor fluxes
Phi = L_s*i_s follow from Kirchhoff's current law at the bus by Newton's method on the 3-vector
Phi (each unit contributing its own 3x3 block, so one iteration costs O(n_units)), and each unit
with a floating node (the neutral of an ungrounded wye, the terminal of a delta whose pole is
still open) solves one monotone scalar equation for that node's flux. Where every curve is
piecewise linear the stage starts with the Newton step from the previous stage's accepted point
on the pieces held there (affine in Phi and in the loop fluxes, so no curve evaluation is
needed) and accepts it when the one evaluation at that Phi finds every winding on those pieces.

A lone grounded-wye unit on a Thevenin source without bus load has decoupled phases: KCL at the
bus is Phi_k = L_s*f(lambda_k) per phase, and :func:`integrate_lone` integrates the same loop
fluxes with each phase's scalar equation psi_k = lambda_k + L_s*f(lambda_k) solved in closed
form on each linear piece (by Newton's method for the smooth knee), one element per case and
phase, serially or spread over the cores (:func:`integrate_lone_parallel`). Several grounded-wye
units on a Thevenin source (a bus load allowed) decouple the phases too: :func:`integrate_decoupled`
solves each phase's KCL, one scalar equation in Phi_k, for the records without the bus voltage
(the first peaks, the source current), one element per case and phase.

Compiled with numba (``cache=True``). Everything the kernels inline is defined in this file:
numba keys its cache by the file of the cached function only.
"""

from __future__ import annotations

import math
import types
from collections.abc import Callable

import numba
import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]

__all__ = [
    "DELTA",
    "FLOATING_WYE",
    "GROUNDED_WYE",
    "MAX_ITERATIONS",
    "NSRC",
    "PARALLEL_MIN_ELEMENTS",
    "RECORD_ALL",
    "RECORD_FIRST_PEAKS",
    "RECORD_SOURCE",
    "integrate",
    "integrate_decoupled",
    "integrate_lone",
    "integrate_lone_parallel",
]

GROUNDED_WYE, FLOATING_WYE, DELTA = 0, 1, 2
# Columns of the per-case source parameters (src, shape (n_cases, NSRC)): the Thevenin R_s
# [ohm], L_s [H]; DYN > 0 lets the machine's d-axis fluxes evolve, AVR > 0 its regulator; the
# reactances X''_d, X'_d, X_d [pu], T''_do, T'_do [s], the regulator K_A [pu], T_A [s], ceiling,
# floor [pu], T_R [s], V_ref [pu] and the base current I_b [A] of the per-unit d-axis current.
RS, LS, DYN, AVR, X2, X1, XD, T2O, T1O, KA, TA, EMAX, EMIN, TR, VREF, IB = range(16)
NSRC = 16
# Machine states (per case): E''_q, E'_q, E_fd, V_s [pu]
NMACH = 4
# Newton's method on Phi and on a floating node's flux: iteration cap (a guard, not a budget:
# warm-started from the previous stage a piecewise-linear curve needs two evaluations when no
# winding crosses a breakpoint) [-].
MAX_ITERATIONS = 60
# The piece reported for a point of a smooth curve: never equal to another point's piece, so the
# exit on an unchanged piece (exact only where the curves are piecewise linear) never fires.
NONLINEAR = 1 << 40
# What integrate writes at the sample instants (its ``record`` argument): every output array;
# the source current only (the other record arrays untouched, the bus voltage not computed);
# or no record at all, only each current's running first-peak maxima (out_peak) up to each
# case's window (peak_last), the case's integration stopping one sample after it.
RECORD_ALL, RECORD_SOURCE, RECORD_FIRST_PEAKS = 0, 1, 2
# Columns of out_peak (n_cases, 1 + n_units, 3, NPEAK), per current (the source's, then each
# unit's line currents) and line: the largest |i| over the window's samples (the first of equal
# ones), |i| at the sample before it and at the sample after it, and its sample index.
PEAK_MAX, PEAK_BEFORE, PEAK_AFTER, PEAK_INDEX = range(4)
NPEAK = 4


# The hot path (the stages' algebra, derivatives and outputs) is written out in one function
# with scalar helpers only: a call that passes arrays to a function numba does not inline costs
# atomic reference-count updates per array, which measured several microseconds per stage when
# the algebra was split into array-taking helpers.


@numba.njit(cache=True, inline="always")
def _curve_seg_s(
    lam: float, kd: int, p0: float, p1: float, p2: float, p3: float, p4: float
) -> tuple[float, float, int]:  # pragma: no cover - compiled
    # Current f(lambda), slope di/d(lambda) and the linear piece lambda is on: kind 0 two-slope
    # (p = 1/L_m, lambda_S, 1/L_air, i_S; pieces -1, 0, 1), kind 1 smooth knee (1/L_m,
    # 1/L_air - 1/L_m, lambda_S, width, g0; no linear piece, NONLINEAR)
    x = abs(lam)
    if kd == 0:
        # both pieces computed and one selected: no branch on the data, which a winding's
        # crossings of its knee make hard to predict (measured 5 % of the network kernel's time)
        sat = x > p1
        d = p2 if sat else p0
        i = (p3 + (x - p1) * p2) if sat else x * p0
        seg = (1 if lam >= 0.0 else -1) if sat else 0
    else:
        s = x - p2
        q = math.sqrt(s * s + p3 * p3)
        i = p0 * x + p1 * (0.5 * (s + q) - p4)
        d = p0 + p1 * 0.5 * (1.0 + s / q)
        seg = NONLINEAR
    return (i if lam >= 0.0 else -i), d, seg


@numba.njit(cache=True, inline="always")
def _curve_s(
    lam: float, kd: int, p0: float, p1: float, p2: float, p3: float, p4: float
) -> tuple[float, float]:  # pragma: no cover - compiled
    # Current f(lambda) and slope di/d(lambda) of a two-slope curve or a smooth knee
    i, d, _ = _curve_seg_s(lam, kd, p0, p1, p2, p3, p4)
    return i, d


@numba.njit(cache=True, inline="always")
def _curve_seg_table(
    lam: float, flux: FloatArray, cur: FloatArray, u: int, top: int, final: float
) -> tuple[float, float, int]:  # pragma: no cover - compiled
    # kind 2, a table: breakpoints flux[u, :top + 1], cur[u, :top + 1], final slope beyond; the
    # piece is the segment's index from 1 (top + 1 beyond the last point), signed as lambda
    x = abs(lam)
    if x >= flux[u, top]:
        d = final
        i = cur[u, top] + (x - flux[u, top]) * d
        seg = top + 1
    else:
        lo = 0
        hi = top
        while hi - lo > 1:
            mid = (lo + hi) // 2
            if flux[u, mid] < x:
                lo = mid
            else:
                hi = mid
        d = (cur[u, hi] - cur[u, lo]) / (flux[u, hi] - flux[u, lo])
        i = cur[u, lo] + (x - flux[u, lo]) * d
        seg = hi
    return (i if lam >= 0.0 else -i), d, (seg if lam >= 0.0 else -seg)


@numba.njit(cache=True, inline="always")
def _curve_table(
    lam: float, flux: FloatArray, cur: FloatArray, u: int, top: int, final: float
) -> tuple[float, float]:  # pragma: no cover - compiled
    # Current and slope of a table curve (kind 2)
    i, d, _ = _curve_seg_table(lam, flux, cur, u, top, final)
    return i, d


@numba.njit(cache=True, inline="always")
def _winding(
    lam: float,
    on: bool,
    kd: int,
    flux: FloatArray,
    cur: FloatArray,
    u: int,
    top: int,
    p0: float,
    p1: float,
    p2: float,
    p3: float,
    p4: float,
) -> tuple[float, float, int]:  # pragma: no cover - compiled
    # Current, slope and piece of a winding at lambda (0, 0, piece 0 where it is not energised)
    if not on:
        return 0.0, 0.0, 0
    if kd == 2:
        return _curve_seg_table(lam, flux, cur, u, top, p0)
    return _curve_seg_s(lam, kd, p0, p1, p2, p3, p4)


@numba.njit(cache=True, inline="always")
def _floating_node(
    x0: float,
    x1: float,
    x2: float,
    u: int,
    q_u: float,
    s: float,
    tol: float,
    kd: int,
    top: int,
    avec: FloatArray,
    par: FloatArray,
    flux: FloatArray,
    cur: FloatArray,
    segf: IntArray,
) -> tuple[float, bool]:  # pragma: no cover - compiled
    # A floating node's sigma: sum_k a_k*f(x_k + a_k*sigma) = q (increasing in sigma), by
    # Newton's method safeguarded by bisection, from sigma = s; returns sigma and whether it
    # converged.
    lo = -math.inf
    hi = math.inf
    ok = False
    stepped = False  # s came from a full Newton step
    for _i in range(MAX_ITERATIONS):
        gs = -q_u
        dg = 0.0
        unchanged = stepped
        for k in range(3):
            ak = avec[u, k]
            xs_k = x0 if k == 0 else (x1 if k == 1 else x2)
            if ak != 0.0:
                if kd == 2:
                    ik, dk, sg = _curve_seg_table(xs_k + ak * s, flux, cur, u, top, par[u, 0])
                else:
                    ik, dk, sg = _curve_seg_s(
                        xs_k + ak * s, kd, par[u, 0], par[u, 1],
                        par[u, 2], par[u, 3], par[u, 4],
                    )  # fmt: skip
                gs += ak * ik
                dg += dk
                if sg != segf[k] or sg == NONLINEAR:
                    unchanged = False
                segf[k] = sg
        if gs == 0.0 or unchanged:
            # a root, or every winding on the piece of the point the
            # Newton step came from: the step was exact
            ok = True
            break
        if gs < 0.0:
            lo = s
        else:
            hi = s
        new = s - gs / dg
        stepped = True
        if not (lo < new < hi):
            stepped = False
            bracketed = math.isfinite(lo) and math.isfinite(hi)
            new = 0.5 * (lo + hi) if bracketed else s - 2.0 * gs / dg
        if abs(new - s) <= tol:
            s = new
            ok = True
            break
        s = new
    return s, ok


@numba.njit(cache=True, inline="always")
def _conductance(
    mode: IntArray,
    conn: IntArray,
    closed: NDArray[np.bool_],
    dw: FloatArray,
    avec: FloatArray,
) -> tuple[float, float, float, float, float, float]:  # pragma: no cover - compiled
    # G = sum over the units of S C D~ C^T S (entries 00, 01, 02, 11, 12, 22), the units'
    # part of the Jacobian of KCL at the bus.
    g00 = g01 = g02 = g11 = g12 = g22 = 0.0
    for u in range(mode.shape[0]):
        md = mode[u]
        if md == 0:
            continue
        cu = conn[u]
        c0, c1, c2 = closed[u, 0], closed[u, 1], closed[u, 2]
        e0, e1, e2 = dw[u, 0], dw[u, 1], dw[u, 2]
        t00, t11, t22 = e0, e1, e2
        t01 = t02 = t12 = 0.0
        if md == 2:
            a0, a1, a2 = avec[u, 0], avec[u, 1], avec[u, 2]
            den = a0 * a0 * e0 + a1 * a1 * e1 + a2 * a2 * e2
            if den > 0.0:
                b0, b1, b2 = a0 * e0, a1 * e1, a2 * e2
                t00 -= b0 * b0 / den
                t11 -= b1 * b1 / den
                t22 -= b2 * b2 / den
                t01 = -b0 * b1 / den
                t02 = -b0 * b2 / den
                t12 = -b1 * b2 / den
        if cu == DELTA:
            # (A T A^T)_ij = T_ij - T_i,j-1 - T_i-1,j + T_i-1,j-1
            h00 = t00 - 2.0 * t02 + t22
            h11 = t11 - 2.0 * t01 + t00
            h22 = t22 - 2.0 * t12 + t11
            h01 = t01 - t00 - t12 + t02
            h02 = t02 - t01 - t22 + t12
            h12 = t12 - t11 - t02 + t01
        else:
            h00, h11, h22, h01, h02, h12 = t00, t11, t22, t01, t02, t12
        g00 += h00 if c0 else 0.0
        g11 += h11 if c1 else 0.0
        g22 += h22 if c2 else 0.0
        g01 += h01 if (c0 and c1) else 0.0
        g02 += h02 if (c0 and c2) else 0.0
        g12 += h12 if (c1 and c2) else 0.0
    return g00, g01, g02, g11, g12, g22


@numba.njit(cache=True, inline="always")
def _solve3(
    m00: float,
    m01: float,
    m02: float,
    m11: float,
    m12: float,
    m22: float,
    b0: float,
    b1: float,
    b2: float,
) -> tuple[float, float, float]:  # pragma: no cover - compiled
    # x = m^-1 b for a symmetric 3x3 m, by Cramer's rule
    c00 = m11 * m22 - m12 * m12
    c01 = m12 * m02 - m01 * m22
    c02 = m01 * m12 - m11 * m02
    det = m00 * c00 + m01 * c01 + m02 * c02
    x0 = (b0 * c00 + b1 * c01 + b2 * c02) / det
    x1 = (b0 * c01 + b1 * (m00 * m22 - m02 * m02) + b2 * (m02 * m01 - m00 * m12)) / det
    x2 = (b0 * c02 + b1 * (m02 * m01 - m00 * m12) + b2 * (m00 * m11 - m01 * m01)) / det
    return x0, x1, x2


@numba.njit(cache=True, inline="always")
def _inverse3(
    m00: float, m01: float, m02: float, m11: float, m12: float, m22: float
) -> tuple[float, float, float, float, float, float]:  # pragma: no cover - compiled
    # The six entries (00, 01, 02, 11, 12, 22) of m^-1 for a symmetric 3x3 m, by cofactors
    c00 = m11 * m22 - m12 * m12
    c01 = m12 * m02 - m01 * m22
    c02 = m01 * m12 - m11 * m02
    det = m00 * c00 + m01 * c01 + m02 * c02
    return (
        c00 / det,
        c01 / det,
        c02 / det,
        (m00 * m22 - m02 * m02) / det,
        (m02 * m01 - m00 * m12) / det,
        (m00 * m11 - m01 * m01) / det,
    )


@numba.njit(cache=True, inline="always")
def _line_change(
    floating: bool,
    delta: bool,
    e0: float,
    e1: float,
    e2: float,
    a0: float,
    a1: float,
    a2: float,
    k0: float,
    k1: float,
    k2: float,
) -> tuple[float, float, float]:  # pragma: no cover - compiled
    # C D~ k: a unit's line currents' change for a change k of its loop fluxes at fixed Phi,
    # D = diag(e) the slopes f', D~ = D - (D a)(D a)^T/(a^T D a) with a floating node of
    # incidence a, C the winding-to-line incidence (the unit's closed poles S applied after)
    y0, y1, y2 = e0 * k0, e1 * k1, e2 * k2
    if floating:
        den = a0 * a0 * e0 + a1 * a1 * e1 + a2 * a2 * e2
        if den > 0.0:
            f = (a0 * e0 * k0 + a1 * e1 * k1 + a2 * e2 * k2) / den
            y0 -= a0 * e0 * f
            y1 -= a1 * e1 * f
            y2 -= a2 * e2 * f
    if delta:
        y0, y1, y2 = y0 - y2, y1 - y0, y2 - y1
    return y0, y1, y2


@numba.njit(cache=True, inline="always")
def _source_scale(x: float, j: int, g0: float, slope: float, kh: int, ke: int) -> float:
    # EMF amplitude factor at step position x (in steps) of step j: the piece is the step's
    if j >= ke:
        return 1.0
    if j < kh:
        return g0
    return g0 + slope * (x - kh)


@numba.njit(cache=True)
def _trig_table(n_steps: int, omega: float, h: float) -> FloatArray:  # pragma: no cover
    # sin and cos of omega*t at every half step t = m*h/2, the stage instants of an unsplit
    # step: by rotation through omega*h/2, exact every 64 half steps (a rotation adds about an
    # ulp); shape (2*n_steps + 3, 2)
    trig = np.empty((2 * n_steps + 3, 2))
    chh = math.cos(0.5 * omega * h)
    shh = math.sin(0.5 * omega * h)
    ts = tc = 0.0
    for m in range(2 * n_steps + 3):
        if m % 64 == 0:
            ts = math.sin(omega * (0.5 * m) * h)
            tc = math.cos(omega * (0.5 * m) * h)
        else:
            ts, tc = ts * chh + tc * shh, tc * chh - ts * shh
        trig[m, 0] = ts
        trig[m, 1] = tc
    return trig


@numba.njit(cache=True, inline="always")
def _stage_trig(
    trig: FloatArray,
    j: int,
    st: int,
    nsub: int,
    x_st: float,
    x_trig: float,
    omega: float,
    h: float,
    swt: float,
    cwt: float,
) -> tuple[float, float, float]:  # pragma: no cover - compiled
    # sin and cos of omega*t at stage st of step j (instant x_st [steps]) and the instant they
    # are of: from the table for an unsplit step; for a sub-step computed, once per instant
    # (the two middle stages, and a sub-step's end and the next one's start, are the same
    # instant), swt and cwt being those of x_trig
    if nsub == 1:
        m = 2 * j + (0 if st == 0 else (2 if st == 3 else 1))
        return trig[m, 0], trig[m, 1], x_trig
    if x_st != x_trig:
        wt = omega * x_st * h
        return math.sin(wt), math.cos(wt), x_st
    return swt, cwt, x_trig


@numba.njit(cache=True)
def _status(
    conn: int, closed: NDArray[np.bool_], on: NDArray[np.bool_], avec: FloatArray
) -> int:  # pragma: no cover - compiled
    # Which windings of a unit are energised and its floating-node incidence a, from the pole
    # states; returns the mode: 0 unenergised, 1 no floating node, 2 one floating node.
    n_closed = int(closed[0]) + int(closed[1]) + int(closed[2])
    for k in range(3):
        on[k] = False
        avec[k] = 0.0
    if conn == GROUNDED_WYE:
        for k in range(3):
            on[k] = closed[k]
        return 1 if n_closed > 0 else 0
    if n_closed < 2:
        return 0
    if conn == FLOATING_WYE:
        for k in range(3):
            on[k] = closed[k]
            avec[k] = 1.0 if closed[k] else 0.0
        return 2
    for k in range(3):
        on[k] = True
    if n_closed == 3:
        return 1
    # delta with terminal o open: lambda = psi - A^T S Phi + a*sigma, a = A^T e_o
    o = 0 if not closed[0] else (1 if not closed[1] else 2)
    avec[o] = 1.0  # winding o runs from terminal o to the next
    avec[(o + 2) % 3] = -1.0  # winding o - 1 ends at terminal o
    return 2


@numba.njit(cache=True)
def _switch(
    conn: IntArray,
    closed: NDArray[np.bool_],
    on: NDArray[np.bool_],
    avec: FloatArray,
    mode: IntArray,
    lam: FloatArray,
    cw: FloatArray,
    line: FloatArray,
    sig: FloatArray,
    q: FloatArray,
    psi: FloatArray,
    phi: FloatArray,
    psi_l: FloatArray,
    i_l: FloatArray,
    l_s: float,
    l_l: float,
    kind: IntArray,
    par: FloatArray,
    flux: FloatArray,
    cur: FloatArray,
    npts: IntArray,
) -> None:  # pragma: no cover - compiled
    # After poles switch (or at t = 0): the windings' status, the floating nodes' held current
    # q, and the states rebuilt from the fluxes lambda and load currents i_L (continuous), the
    # source flux taking KCL's new sum of the line currents.
    n_units = conn.shape[0]
    t0 = t1 = t2 = 0.0
    for u in range(n_units):
        mode[u] = _status(conn[u], closed[u], on[u], avec[u])
        sig[u] = 0.0
        for k in range(3):
            if on[u, k]:
                if kind[u] == 2:
                    cw[u, k] = _curve_table(lam[u, k], flux, cur, u, npts[u] - 1, par[u, 0])[0]
                else:
                    cw[u, k] = _curve_s(
                        lam[u, k], kind[u], par[u, 0], par[u, 1], par[u, 2], par[u, 3], par[u, 4]
                    )[0]
            else:
                cw[u, k] = 0.0
        qq = 0.0
        for k in range(3):
            lk = cw[u, k] - cw[u, (k + 2) % 3] if conn[u] == DELTA else cw[u, k]
            line[u, k] = lk if closed[u, k] else 0.0
            qq += avec[u, k] * cw[u, k]
        q[u] = qq
        t0 += line[u, 0]
        t1 += line[u, 1]
        t2 += line[u, 2]
    if l_s > 0.0:
        phi[0] = l_s * (t0 + i_l[0])
        phi[1] = l_s * (t1 + i_l[1])
        phi[2] = l_s * (t2 + i_l[2])
    else:
        phi[0] = phi[1] = phi[2] = 0.0
    for k in range(3):
        psi_l[k] = phi[k] + l_l * i_l[k]
    for u in range(n_units):
        p0 = phi[0] if closed[u, 0] else 0.0
        p1 = phi[1] if closed[u, 1] else 0.0
        p2 = phi[2] if closed[u, 2] else 0.0
        if conn[u] == DELTA:
            psi[u, 0] = lam[u, 0] + p0 - p1
            psi[u, 1] = lam[u, 1] + p1 - p2
            psi[u, 2] = lam[u, 2] + p2 - p0
        else:
            psi[u, 0] = lam[u, 0] + p0
            psi[u, 1] = lam[u, 1] + p1
            psi[u, 2] = lam[u, 2] + p2


@numba.njit(cache=True, nogil=True)
def integrate(
    n_steps: int,
    decimate: int,
    h: float,
    omega: float,
    vpk: float,
    phase: FloatArray,
    ramp: FloatArray,
    ramp_steps: IntArray,
    src: FloatArray,
    m0: FloatArray,
    r_l: float,
    l_l: float,
    has_load: bool,
    conn: IntArray,
    r_w: FloatArray,
    r_ins: FloatArray,
    bypass_step: IntArray,
    kind: IntArray,
    par: FloatArray,
    flux: FloatArray,
    cur: FloatArray,
    npts: IntArray,
    close_step: IntArray,
    lam0: FloatArray,
    il0: FloatArray,
    tol_u: FloatArray,
    tol_phi: float,
    out_src: FloatArray,
    out_bus: FloatArray,
    out_line: FloatArray,
    out_wind: FloatArray,
    out_flux: FloatArray,
    out_mach: FloatArray,
    out_energy: FloatArray,
    n_in: int,
    sub: IntArray,
    record: int,
    peak_last: IntArray,
    out_peak: FloatArray,
) -> int:  # pragma: no cover - compiled
    """Integrate every case; returns the number of algebraic solves that did not converge.

    Shapes: phase (n_cases, 3) [rad] (EMF e_k = g*vpk*(E''_q*sin(omega*t + phase_k) -
    (dE''_q/dt/omega)*cos(omega*t + phase_k))); ramp (g0, slope per step); ramp_steps (end of
    hold, end of rise) [steps]; src (n_cases, NSRC) the source columns above; m0 (n_cases,
    NMACH) the machine states at t = 0 [pu]; per unit conn, r_w [ohm], r_ins [ohm],
    bypass_step, curve (kind, par, flux, cur, npts); close_step (n_cases, n_units, 3) [steps];
    lam0 (n_cases, n_units, 3) [Wb-turn]; il0 (n_cases, 3) [A]; outputs (n_cases, 3,
    n_samples), (n_cases, n_units, 3, n_samples), out_mach (n_cases, 2 or 4, n_samples) E''_q
    and E_fd, then (with 4 rows) E'_q and V_s [pu], out_energy (n_cases, n_units) the integral
    of the summed squared line currents while the unit's pre-insertion resistor is in [A^2*s];
    the steps j < n_in are each split into ``sub[c]`` equal Runge-Kutta sub-steps (a
    resistor's short time constant while it is in), the samples staying on the step. ``record``
    (RECORD_ALL, RECORD_SOURCE, RECORD_FIRST_PEAKS) says what is written at the samples; with
    RECORD_FIRST_PEAKS, peak_last (n_cases,) is the last sample of each case's first-peak window
    and out_peak (n_cases, 1 + n_units, 3, NPEAK) receives the running maxima (columns above; set
    to -1 on entry), the record arrays are not touched and each case stops after sample
    peak_last + 1 (or the last step); a non-finite source current sets out_peak[c, 0, 0,
    PEAK_MAX] to nan.
    """
    n_cases = phase.shape[0]
    n_units = conn.shape[0]
    g0, slope = ramp[0], ramp[1]
    kh, ke = ramp_steps[0], ramp_steps[1]
    inv_ll = 1.0 / l_l if has_load else 0.0
    failed = 0
    sq2 = math.sqrt(2.0)
    # sin and cos of omega*t at every half step, shared by the cases
    trig = _trig_table(n_steps, omega, h)
    # every curve piecewise linear: the stage algebra may start from the held pieces
    linear = True
    for u in range(n_units):
        if kind[u] == 1:
            linear = False
    for c in range(n_cases):
        r_s = src[c, RS]
        l_s = src[c, LS]
        dyn = src[c, DYN] > 0.0
        avr = dyn and src[c, AVR] > 0.0
        ms = m0[c].copy()
        mbase = np.zeros(NMACH)
        macc = np.zeros(NMACH)
        km = np.zeros(NMACH)
        en_acc = np.zeros(n_units)
        sa = np.zeros(3)  # sin and cos of omega*t + phase_k at the stage
        ca = np.zeros(3)
        sph = np.sin(phase[c])
        cph = np.cos(phase[c])
        psi = np.zeros((n_units, 3))
        base = np.zeros((n_units, 3))
        acc = np.zeros((n_units, 3))
        kpsi = np.zeros((n_units, 3))
        lam = lam0[c].copy()
        cw = np.zeros((n_units, 3))
        dw = np.zeros((n_units, 3))
        sig = np.zeros(n_units)
        q = np.zeros(n_units)
        avec = np.zeros((n_units, 3))
        on = np.zeros((n_units, 3), dtype=np.bool_)
        closed = np.zeros((n_units, 3), dtype=np.bool_)
        mode = np.zeros(n_units, dtype=np.int64)
        segp = np.zeros((n_units, 3), dtype=np.int64)  # linear pieces at the accepted Phi
        segn = np.zeros((n_units, 3), dtype=np.int64)  # and at the trial
        segf = np.zeros(3, dtype=np.int64)  # at a floating node's previous iterate
        line = np.zeros((n_units, 3))
        psa = np.zeros((n_units, 3))  # the loop fluxes and load fluxes at the accepted Phi
        psa_l = np.zeros(3)
        r_now = np.zeros(n_units)
        phi = np.zeros(3)
        trial = np.zeros(3)
        psi_l = np.zeros(3)
        base_l = np.zeros(3)
        acc_l = np.zeros(3)
        kl = np.zeros(3)
        i_l = il0[c].copy()
        i_s = np.zeros(3)
        e = np.zeros(3)
        for u in range(n_units):
            for k in range(3):
                closed[u, k] = close_step[c, u, k] <= 0
        _switch(
            conn, closed, on, avec, mode, lam, cw, line, sig, q, psi, phi, psi_l, i_l, l_s,
            l_l, kind, par, flux, cur, npts,
        )  # fmt: skip
        j00 = j01 = j02 = j11 = j12 = j22 = 0.0
        # J^-1 (symmetric) and the residual R at the accepted Phi; held: the pieces there are
        # linear and J, R, the pieces, psa and the units' lambda, c, f' are those of that point
        v00 = v01 = v02 = v11 = v12 = v22 = 0.0
        fr0 = fr1 = fr2 = 0.0
        held = False
        x_trig = -1.0  # the stage instant of swt, cwt [steps]
        swt = cwt = 0.0
        stop = False  # RECORD_FIRST_PEAKS: the case's window and the sample after it are read
        last = peak_last[c] if record == RECORD_FIRST_PEAKS else -1
        prev_abs = np.zeros((n_units + 1, 3))  # |i| at the previous sample, per current
        for j in range(n_steps + 1):
            pending = False
            for u in range(n_units):
                r_now[u] = r_ins[u] if j < bypass_step[u] else 0.0
                if j > 0:
                    for k in range(3):
                        if close_step[c, u, k] == j:
                            pending = True
            sample_step = j % decimate == 0 or j == n_steps
            nsub = sub[c] if (j < n_in and j < n_steps) else 1
            hh = h / nsub
            for sb in range(nsub):
                st = 0
                while st < 4:
                    x_st = j + (sb + (0.0 if st == 0 else (1.0 if st == 3 else 0.5))) / nsub
                    # ---- algebra: Phi from KCL at the bus (Newton), every unit's currents ----
                    if l_s > 0.0:
                        trial[0], trial[1], trial[2] = phi[0], phi[1], phi[2]
                    else:
                        trial[0] = trial[1] = trial[2] = 0.0
                    norm0 = math.inf
                    tstep = 1.0
                    d0 = d1 = d2 = 0.0
                    converged = False
                    pred = held and l_s > 0.0
                    if pred:
                        # R is affine in Phi and in the loop fluxes on the accepted point's
                        # pieces: R(Phi; psi) = R_acc + J*(Phi - Phi_acc) - sum S C D~ dpsi -
                        # dpsi_L/L_L, so the Newton step from the accepted point with the new
                        # psi needs no curve evaluation; the evaluation at the trial checks
                        # the pieces (each floating node's sigma predicted likewise)
                        b0 = fr0 - (psi_l[0] - psa_l[0]) * inv_ll
                        b1 = fr1 - (psi_l[1] - psa_l[1]) * inv_ll
                        b2 = fr2 - (psi_l[2] - psa_l[2]) * inv_ll
                        for u in range(n_units):
                            md = mode[u]
                            if md == 0:
                                continue
                            y0, y1, y2 = _line_change(
                                md == 2, conn[u] == DELTA, dw[u, 0], dw[u, 1], dw[u, 2],
                                avec[u, 0], avec[u, 1], avec[u, 2], psi[u, 0] - psa[u, 0],
                                psi[u, 1] - psa[u, 1], psi[u, 2] - psa[u, 2],
                            )  # fmt: skip
                            b0 -= y0 if closed[u, 0] else 0.0
                            b1 -= y1 if closed[u, 1] else 0.0
                            b2 -= y2 if closed[u, 2] else 0.0
                        trial[0] = phi[0] - (v00 * b0 + v01 * b1 + v02 * b2)
                        trial[1] = phi[1] - (v01 * b0 + v11 * b1 + v12 * b2)
                        trial[2] = phi[2] - (v02 * b0 + v12 * b1 + v22 * b2)
                    newton = 0  # evaluations of the Newton iteration proper
                    for _it in range(4 * MAX_ITERATIONS):
                        r0 = r1 = r2 = 0.0  # sum of the line currents into the units
                        g00 = g01 = g02 = g11 = g12 = g22 = 0.0
                        bad = 0
                        # every winding on the linear piece of the accepted point's: the full
                        # Newton step from there solved KCL exactly (the system is linear between)
                        same = pred or (newton > 0 and tstep == 1.0)
                        if not pred:
                            newton += 1
                        for u in range(n_units):
                            md = mode[u]
                            if md == 0:
                                for k in range(3):
                                    cw[u, k] = 0.0
                                    dw[u, k] = 0.0
                                    line[u, k] = 0.0
                                continue
                            cu = conn[u]
                            kd = kind[u]
                            top = npts[u] - 1
                            c0, c1, c2 = closed[u, 0], closed[u, 1], closed[u, 2]
                            q0 = trial[0] if c0 else 0.0
                            q1 = trial[1] if c1 else 0.0
                            q2 = trial[2] if c2 else 0.0
                            if cu == DELTA:
                                x0 = psi[u, 0] - (q0 - q1)
                                x1 = psi[u, 1] - (q1 - q2)
                                x2 = psi[u, 2] - (q2 - q0)
                            else:
                                x0 = psi[u, 0] - q0
                                x1 = psi[u, 1] - q1
                                x2 = psi[u, 2] - q2
                            a0, a1, a2 = avec[u, 0], avec[u, 1], avec[u, 2]
                            s = 0.0
                            if md == 2 and pred:
                                # sigma on the held pieces: sum_k a_k*(c_k + f'_k*(x_k + a_k*s -
                                # lambda_k)) = q, exact where the evaluation below finds them
                                s = sig[u]
                                num = q[u]
                                den = 0.0
                                if a0 != 0.0:
                                    num -= a0 * (cw[u, 0] + dw[u, 0] * (x0 + a0 * s - lam[u, 0]))
                                    den += a0 * a0 * dw[u, 0]
                                if a1 != 0.0:
                                    num -= a1 * (cw[u, 1] + dw[u, 1] * (x1 + a1 * s - lam[u, 1]))
                                    den += a1 * a1 * dw[u, 1]
                                if a2 != 0.0:
                                    num -= a2 * (cw[u, 2] + dw[u, 2] * (x2 + a2 * s - lam[u, 2]))
                                    den += a2 * a2 * dw[u, 2]
                                if den > 0.0:
                                    s += num / den
                                else:
                                    same = False
                                sig[u] = s
                            elif md == 2:
                                # floating node: sum_k a_k*f(x_k + a_k*s) = q, increasing in s
                                s, ok = _floating_node(
                                    x0, x1, x2, u, q[u], sig[u], tol_u[u], kd, top, avec, par, flux,
                                    cur, segf,
                                )  # fmt: skip
                                if not ok:
                                    bad += 1
                                sig[u] = s
                            # every winding at lambda = x + a*sigma, unrolled (scalars in registers)
                            on0, on1, on2 = on[u, 0], on[u, 1], on[u, 2]
                            p0, p1, p2, p3, p4 = (
                                par[u, 0],
                                par[u, 1],
                                par[u, 2],
                                par[u, 3],
                                par[u, 4],
                            )
                            l0 = x0 + a0 * s
                            l1 = x1 + a1 * s
                            l2 = x2 + a2 * s
                            w0, e0, sg0 = _winding(
                                l0, on0, kd, flux, cur, u, top, p0, p1, p2, p3, p4
                            )
                            w1, e1, sg1 = _winding(
                                l1, on1, kd, flux, cur, u, top, p0, p1, p2, p3, p4
                            )
                            w2, e2, sg2 = _winding(
                                l2, on2, kd, flux, cur, u, top, p0, p1, p2, p3, p4
                            )
                            # an energised winding off its accepted piece, or a smooth curve (no
                            # linear piece; a unit in the network has a winding energised): one
                            # test a unit, without branches (bitwise)
                            moved = (
                                (kd == 1)
                                | (on0 & (sg0 != segp[u, 0]))
                                | (on1 & (sg1 != segp[u, 1]))
                                | (on2 & (sg2 != segp[u, 2]))
                            )
                            same = same & (not moved)
                            if on0:
                                lam[u, 0] = l0
                            if on1:
                                lam[u, 1] = l1
                            if on2:
                                lam[u, 2] = l2
                            cw[u, 0], cw[u, 1], cw[u, 2] = w0, w1, w2
                            dw[u, 0], dw[u, 1], dw[u, 2] = e0, e1, e2
                            segn[u, 0], segn[u, 1], segn[u, 2] = sg0, sg1, sg2
                            if cu == DELTA:
                                la, lb, lc = w0 - w2, w1 - w0, w2 - w1
                            else:
                                la, lb, lc = w0, w1, w2
                            la = la if c0 else 0.0
                            lb = lb if c1 else 0.0
                            lc = lc if c2 else 0.0
                            line[u, 0], line[u, 1], line[u, 2] = la, lb, lc
                            r0 += la
                            r1 += lb
                            r2 += lc
                        if l_s <= 0.0:
                            failed += bad
                            for k in range(3):
                                i_l[k] = psi_l[k] * inv_ll
                            i_s[0] = r0 + i_l[0]
                            i_s[1] = r1 + i_l[1]
                            i_s[2] = r2 + i_l[2]
                            converged = True
                            break
                        for k in range(3):
                            i_l[k] = (psi_l[k] - trial[k]) * inv_ll
                        if same and bad == 0:
                            # the Jacobian at trial is the accepted point's, bit for bit
                            phi[0], phi[1], phi[2] = trial[0], trial[1], trial[2]
                            converged = True
                            if linear:
                                held = True
                                fr0 = trial[0] / l_s - r0 - i_l[0]
                                fr1 = trial[1] / l_s - r1 - i_l[1]
                                fr2 = trial[2] / l_s - r2 - i_l[2]
                                for u in range(n_units):
                                    for k in range(3):
                                        psa[u, k] = psi[u, k]
                                for k in range(3):
                                    psa_l[k] = psi_l[k]
                            break
                        if pred:
                            # a winding left its piece: Newton's method from the accepted point
                            pred = False
                            trial[0], trial[1], trial[2] = phi[0], phi[1], phi[2]
                            continue
                        # G = sum over the units of S C D~ C^T S, D~ = D - (D a)(D a)^T/(a^T D a)
                        g00, g01, g02, g11, g12, g22 = _conductance(mode, conn, closed, dw, avec)
                        f0 = trial[0] / l_s - r0 - i_l[0]
                        f1 = trial[1] / l_s - r1 - i_l[1]
                        f2 = trial[2] / l_s - r2 - i_l[2]
                        norm = abs(f0) + abs(f1) + abs(f2)
                        if norm > norm0 and tstep > 1e-6:
                            # the step increased the residual: halve it from the accepted point
                            tstep *= 0.5
                            trial[0] = phi[0] - tstep * d0
                            trial[1] = phi[1] - tstep * d1
                            trial[2] = phi[2] - tstep * d2
                            continue
                        phi[0], phi[1], phi[2] = trial[0], trial[1], trial[2]
                        for u in range(n_units):
                            for k in range(3):
                                segp[u, k] = segn[u, k]
                        norm0 = norm
                        diag = 1.0 / l_s + inv_ll
                        j00, j11, j22 = diag + g00, diag + g11, diag + g22
                        j01, j02, j12 = g01, g02, g12
                        d0, d1, d2 = _solve3(j00, j01, j02, j11, j12, j22, f0, f1, f2)
                        v00, v01, v02, v11, v12, v22 = _inverse3(j00, j01, j02, j11, j12, j22)
                        fr0, fr1, fr2 = f0, f1, f2
                        if max(abs(d0), abs(d1), abs(d2)) <= tol_phi or norm == 0.0:
                            failed += bad
                            converged = True
                            if linear and bad == 0:
                                held = True
                                for u in range(n_units):
                                    for k in range(3):
                                        psa[u, k] = psi[u, k]
                                for k in range(3):
                                    psa_l[k] = psi_l[k]
                            break
                        tstep = 1.0
                        trial[0] = phi[0] - d0
                        trial[1] = phi[1] - d1
                        trial[2] = phi[2] - d2
                    if not converged:
                        failed += 1
                    if l_s > 0.0:
                        i_s[0] = phi[0] / l_s
                        i_s[1] = phi[1] / l_s
                        i_s[2] = phi[2] / l_s
                    if st == 0 and pending:
                        # poles close at this step: lambda and i_L are now those of t_j
                        pending = False
                        for u in range(n_units):
                            for k in range(3):
                                if close_step[c, u, k] == j:
                                    closed[u, k] = True
                        _switch(
                            conn, closed, on, avec, mode, lam, cw, line, sig, q, psi, phi, psi_l,
                            i_l, l_s, l_l, kind, par, flux, cur, npts,
                        )  # fmt: skip
                        held = False
                        continue
                    # ---- derivatives: KVL around every loop ----
                    gsc = _source_scale(x_st, j, g0, slope, kh, ke)
                    swt, cwt, x_trig = _stage_trig(
                        trig, j, st, nsub, x_st, x_trig, omega, h, swt, cwt
                    )
                    for k in range(3):
                        sa[k] = swt * cph[k] + cwt * sph[k]
                        ca[k] = cwt * cph[k] - swt * sph[k]
                    km[0] = km[1] = km[2] = km[3] = 0.0
                    if dyn:
                        # machine: Park d component of the source currents in the EMF's frame
                        # [pu of rated current], positive lagging; the d-axis flux decay
                        sd = 0.0
                        for k in range(3):
                            sd -= i_s[k] * ca[k]
                        i_d = sd / (1.5 * sq2 * src[c, IB])
                        km[0] = (ms[1] - ms[0] - (src[c, X1] - src[c, X2]) * i_d) / src[c, T2O]
                        km[1] = (ms[2] - ms[1] - (src[c, XD] - src[c, X1]) * i_d) / src[c, T1O]
                    rate = km[0] / omega
                    for k in range(3):
                        e[k] = gsc * vpk * (ms[0] * sa[k] - rate * ca[k])
                        kl[k] = e[k] - r_s * i_s[k] - r_l * i_l[k]
                    # the bus side of every loop, e - R_s*i_s, then per unit: unrolled
                    u0 = e[0] - r_s * i_s[0]
                    u1 = e[1] - r_s * i_s[1]
                    u2 = e[2] - r_s * i_s[2]
                    # and the Runge-Kutta stage of every unit's loop fluxes (nothing below reads
                    # them before the next stage's algebra)
                    wgt = 1.0 if (st == 0 or st == 3) else 2.0
                    hs = hh / 6.0 if st == 3 else (hh if st == 2 else 0.5 * hh)
                    for u in range(n_units):
                        k0 = k1 = k2 = 0.0
                        if mode[u] != 0:
                            rn = r_now[u]
                            z0 = u0 - rn * line[u, 0] if closed[u, 0] else 0.0
                            z1 = u1 - rn * line[u, 1] if closed[u, 1] else 0.0
                            z2 = u2 - rn * line[u, 2] if closed[u, 2] else 0.0
                            rw = r_w[u]
                            if conn[u] == DELTA:
                                z0, z1, z2 = z0 - z1, z1 - z2, z2 - z0
                            k0 = z0 - rw * cw[u, 0] if on[u, 0] else 0.0
                            k1 = z1 - rw * cw[u, 1] if on[u, 1] else 0.0
                            k2 = z2 - rw * cw[u, 2] if on[u, 2] else 0.0
                        kpsi[u, 0], kpsi[u, 1], kpsi[u, 2] = k0, k1, k2
                        if st == 0:
                            b0, b1, b2 = psi[u, 0], psi[u, 1], psi[u, 2]
                            base[u, 0], base[u, 1], base[u, 2] = b0, b1, b2
                            acc[u, 0], acc[u, 1], acc[u, 2] = k0, k1, k2
                        else:
                            b0, b1, b2 = base[u, 0], base[u, 1], base[u, 2]
                            acc[u, 0] += wgt * k0
                            acc[u, 1] += wgt * k1
                            acc[u, 2] += wgt * k2
                        if st < 3:
                            psi[u, 0] = b0 + hs * k0
                            psi[u, 1] = b1 + hs * k1
                            psi[u, 2] = b2 + hs * k2
                        else:
                            psi[u, 0] = b0 + hs * acc[u, 0]
                            psi[u, 1] = b1 + hs * acc[u, 1]
                            psi[u, 2] = b2 + hs * acc[u, 2]
                    # ---- bus voltage, regulator, outputs at the sample instants ----
                    sample = st == 0 and sb == 0 and sample_step
                    v0 = v1 = v2 = 0.0
                    if (sample and record != RECORD_FIRST_PEAKS) or avr:
                        # bus voltage v = e - R_s*i_s - Phi', J*Phi' = sum S C D~ psi' + psi_L'/L_L
                        p0 = p1 = p2 = 0.0
                        if l_s > 0.0:
                            b0 = kl[0] * inv_ll
                            b1 = kl[1] * inv_ll
                            b2 = kl[2] * inv_ll
                            for u in range(n_units):
                                md = mode[u]
                                if md == 0:
                                    continue
                                y0, y1, y2 = _line_change(
                                    md == 2, conn[u] == DELTA, dw[u, 0], dw[u, 1], dw[u, 2],
                                    avec[u, 0], avec[u, 1], avec[u, 2], kpsi[u, 0], kpsi[u, 1],
                                    kpsi[u, 2],
                                )  # fmt: skip
                                b0 += y0 if closed[u, 0] else 0.0
                                b1 += y1 if closed[u, 1] else 0.0
                                b2 += y2 if closed[u, 2] else 0.0
                            p0 = v00 * b0 + v01 * b1 + v02 * b2
                            p1 = v01 * b0 + v11 * b1 + v12 * b2
                            p2 = v02 * b0 + v12 * b1 + v22 * b2
                        v0 = e[0] - r_s * i_s[0] - p0
                        v1 = e[1] - r_s * i_s[1] - p1
                        v2 = e[2] - r_s * i_s[2] - p2
                        if avr:
                            # magnitude of the bus-voltage space vector [pu of rated phase voltage]
                            vd = v0 * ca[0] + v1 * ca[1] + v2 * ca[2]
                            vq = v0 * sa[0] + v1 * sa[1] + v2 * sa[2]
                            valg = math.sqrt(vd * vd + vq * vq) / (1.5 * vpk)
                            vs = ms[3]
                            if src[c, TR] > 0.0:
                                km[3] = (valg - vs) / src[c, TR]
                            else:
                                vs = valg
                            de = (src[c, KA] * (src[c, VREF] - vs) - ms[2]) / src[c, TA]
                            if (ms[2] >= src[c, EMAX] and de > 0.0) or (
                                ms[2] <= src[c, EMIN] and de < 0.0
                            ):
                                de = 0.0
                            km[2] = de
                    if sample and record == RECORD_FIRST_PEAKS:
                        s_idx = j // decimate
                        for r in range(n_units + 1):
                            for k in range(3):
                                y = abs(i_s[k]) if r == 0 else abs(line[r - 1, k])
                                if s_idx > 0 and out_peak[c, r, k, PEAK_INDEX] == s_idx - 1:
                                    out_peak[c, r, k, PEAK_AFTER] = y
                                if s_idx <= last and y > out_peak[c, r, k, PEAK_MAX]:
                                    out_peak[c, r, k, PEAK_MAX] = y
                                    out_peak[c, r, k, PEAK_BEFORE] = prev_abs[r, k] if s_idx else y
                                    out_peak[c, r, k, PEAK_AFTER] = y
                                    out_peak[c, r, k, PEAK_INDEX] = s_idx
                                prev_abs[r, k] = y
                        for k in range(3):
                            if not math.isfinite(i_s[k]):
                                out_peak[c, 0, 0, PEAK_MAX] = math.nan
                        if s_idx > last or j == n_steps:
                            stop = True
                            break
                    if sample and record == RECORD_SOURCE:
                        s_idx = j // decimate
                        for k in range(3):
                            out_src[c, k, s_idx] = i_s[k]
                        if j == n_steps:
                            break
                    if sample and record == RECORD_ALL:
                        s_idx = j // decimate
                        out_bus[c, 0, s_idx] = v0
                        out_bus[c, 1, s_idx] = v1
                        out_bus[c, 2, s_idx] = v2
                        out_mach[c, 0, s_idx] = ms[0]
                        out_mach[c, 1, s_idx] = ms[2]
                        if out_mach.shape[1] > 2:
                            # E'_q and V_s as well: every state, for a restart at the sample
                            out_mach[c, 2, s_idx] = ms[1]
                            out_mach[c, 3, s_idx] = ms[3]
                        for k in range(3):
                            out_src[c, k, s_idx] = i_s[k]
                            for u in range(n_units):
                                out_line[c, u, k, s_idx] = line[u, k]
                                out_wind[c, u, k, s_idx] = cw[u, k]
                                out_flux[c, u, k, s_idx] = lam[u, k]
                        if j == n_steps:
                            break
                    # ---- Runge-Kutta: the machine's and the load's states (the units' loop
                    # fluxes were stepped with their derivatives), the resistors' energy ----
                    for u in range(n_units):
                        if j < bypass_step[u]:
                            pw = line[u, 0] ** 2 + line[u, 1] ** 2 + line[u, 2] ** 2
                            en_acc[u] = wgt * pw + (en_acc[u] if st > 0 else 0.0)
                    if st == 0:
                        for k in range(NMACH):
                            mbase[k] = ms[k]
                            macc[k] = km[k]
                        for k in range(3):
                            base_l[k] = psi_l[k]
                            acc_l[k] = kl[k]
                    else:
                        for k in range(NMACH):
                            macc[k] += wgt * km[k]
                        for k in range(3):
                            acc_l[k] += wgt * kl[k]
                    if st < 3:
                        for k in range(NMACH):
                            ms[k] = mbase[k] + hs * km[k]
                        for k in range(3):
                            psi_l[k] = base_l[k] + hs * kl[k]
                    else:
                        for k in range(NMACH):
                            ms[k] = mbase[k] + hs * macc[k]
                        if avr:
                            ms[2] = min(max(ms[2], src[c, EMIN]), src[c, EMAX])
                        for u in range(n_units):
                            if j < bypass_step[u]:
                                out_energy[c, u] += hs * en_acc[u]
                        for k in range(3):
                            psi_l[k] = base_l[k] + hs * acc_l[k]
                    st += 1
                if stop:
                    break
            if stop:
                break
    return failed


# ---- one grounded-wye unit alone on a Thevenin source: the phases are decoupled ----


@numba.njit(cache=True, inline="always")
def _lone_invert(
    psi: float,
    l_s: float,
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
    pb: FloatArray,
    top: int,
    tol: float,
) -> tuple[float, float, int, bool]:  # pragma: no cover - compiled
    # The winding's flux lambda and current i = f(lambda) for its loop flux psi = lambda +
    # L_s*f(lambda) (closed pole, one winding on the phase). Two-slope (kind 0) and table
    # (kind 2): on the piece [F, F'] of slope d, lambda = F + (|psi| - P)/(1 + L_s*d) with the
    # piece's start P = F + L_s*f(F) in psi (pb, the table's breakpoints in psi; the table
    # searched from the previous piece, seg); smooth knee (kind 1): Newton's method on
    # lambda + L_s*f(lambda) = psi from the previous lambda, kept in a bracket (the left side
    # increases with slope 1 + L_s*f' >= 1). Returns lambda, i, the piece, convergence.
    x = abs(psi)
    if kd == 0:
        ps = p1 + l_s * p3  # the knee in psi
        if x > ps:
            lm = p1 + (x - ps) / (1.0 + l_s * p2)
            i = p3 + (lm - p1) * p2
        else:
            lm = x / (1.0 + l_s * p0)
            i = lm * p0
        return (lm, i, seg, True) if psi >= 0.0 else (-lm, -i, seg, True)
    if kd == 2:
        if x >= pb[top]:
            lm = flux[0, top] + (x - pb[top]) / (1.0 + l_s * p0)
            i = cur[0, top] + (lm - flux[0, top]) * p0
        else:
            while seg > 1 and pb[seg - 1] > x:
                seg -= 1
            while pb[seg] <= x:
                seg += 1
            d = (cur[0, seg] - cur[0, seg - 1]) / (flux[0, seg] - flux[0, seg - 1])
            lm = flux[0, seg - 1] + (x - pb[seg - 1]) / (1.0 + l_s * d)
            i = cur[0, seg - 1] + (lm - flux[0, seg - 1]) * d
        return (lm, i, seg, True) if psi >= 0.0 else (-lm, -i, seg, True)
    lm = lam
    lo = -math.inf
    hi = math.inf
    ok = False
    i = 0.0
    for _it in range(MAX_ITERATIONS):
        i, d = _curve_s(lm, 1, p0, p1, p2, p3, p4)
        g = lm + l_s * i - psi
        if g == 0.0:
            ok = True
            break
        if g < 0.0:
            lo = lm
        else:
            hi = lm
        step = -g / (1.0 + l_s * d)
        new = lm + step
        if not (lo < new < hi) and math.isfinite(lo) and math.isfinite(hi):
            new = 0.5 * (lo + hi)
            step = new - lm
        if abs(step) <= tol:
            # the current at the root to first order: its error, f''*step^2/2, is far below
            # rounding at this step
            i += d * step
            lm = new
            ok = True
            break
        lm = new
    return lm, i, seg, ok


def _lone(
    n_steps: int,
    decimate: int,
    h: float,
    omega: float,
    vpk: float,
    phase: FloatArray,
    ramp: FloatArray,
    ramp_steps: IntArray,
    r_src: FloatArray,
    l_src: FloatArray,
    r_w: float,
    r_ins: float,
    bypass_step: int,
    kd: int,
    par: FloatArray,
    flux: FloatArray,
    cur: FloatArray,
    npts: int,
    close_step: IntArray,
    lam0: FloatArray,
    tol: float,
    n_in: int,
    sub: IntArray,
    out: FloatArray,
) -> int:  # pragma: no cover - compiled
    """Integrate one grounded-wye unit alone on a Thevenin source; returns the failed solves.

    The network of :func:`integrate` with one grounded-wye unit, no bus load and no machine:
    KCL at the bus gives Phi_k = L_s*f(lambda_k) on each closed phase, so the loop flux of
    winding k is psi_k = lambda_k + L_s*f(lambda_k), a scalar equation per phase (solved by
    :func:`_lone_invert`), and d(psi_k)/dt = e_k - (R_s + R_ins + R_w)*f(lambda_k). The states,
    the Runge-Kutta stages, the step, the sub-steps, the EMF (its sine and cosine by the same
    rotation) and the switching are those of :func:`integrate`, so the two agree to rounding.
    One element is one phase of one case; the elements are independent (numba's prange in the
    parallel build). Shapes: phase, close_step, lam0 (n_cases, 3); r_src, l_src, sub
    (n_cases,); one curve (kind kd, par (5,), flux, cur (1, width), npts points); out (n_cases,
    3, n_samples) the line current of each phase, which is its winding's current [A].
    """
    n_cases = phase.shape[0]
    n_el = 3 * n_cases
    g0, slope = ramp[0], ramp[1]
    kh, ke = ramp_steps[0], ramp_steps[1]
    p0, p1, p2, p3, p4 = par[0], par[1], par[2], par[3], par[4]
    top = npts - 1
    trig = _trig_table(n_steps, omega, h)
    fails = np.zeros(n_el, dtype=np.int64)
    for el in numba.prange(n_el):
        c = el // 3
        k = el - 3 * c
        r_s = r_src[c]
        l_s = l_src[c]
        sph = math.sin(phase[c, k])
        cph = math.cos(phase[c, k])
        start = close_step[c, k]
        pb = np.empty(top + 1)  # the table's breakpoints in psi
        for m in range(top + 1):
            pb[m] = flux[0, m] + l_s * cur[0, m]
        lam = lam0[c, k]
        seg = 1
        psi = 0.0
        i = 0.0
        closed = start <= 0
        if closed:
            if kd == 2:
                i = _curve_table(lam, flux, cur, 0, top, p0)[0]
            else:
                i = _curve_s(lam, kd, p0, p1, p2, p3, p4)[0]
            psi = lam + l_s * i
        base = acc = 0.0
        x_trig = -1.0
        swt = cwt = 0.0
        bad = 0
        for j in range(n_steps + 1):
            sample_step = j % decimate == 0 or j == n_steps
            if not closed:
                if j > 0 and start == j:
                    # the pole closes: lambda continuous, the loop flux rebuilt from it
                    closed = True
                    if kd == 2:
                        i = _curve_table(lam, flux, cur, 0, top, p0)[0]
                    else:
                        i = _curve_s(lam, kd, p0, p1, p2, p3, p4)[0]
                    psi = lam + l_s * i
                else:
                    if sample_step:
                        out[c, k, j // decimate] = 0.0
                    continue
            r_now = r_ins if j < bypass_step else 0.0
            nsub = sub[c] if (j < n_in and j < n_steps) else 1
            hh = h / nsub
            done = False
            for sb in range(nsub):
                for st in range(4):
                    x_st = j + (sb + (0.0 if st == 0 else (1.0 if st == 3 else 0.5))) / nsub
                    # ---- algebra: the winding's flux and current from its loop flux ----
                    if l_s > 0.0:
                        lam, i, seg, ok = _lone_invert(
                            psi, l_s, lam, seg, kd, p0, p1, p2, p3, p4, flux, cur, pb, top, tol
                        )
                        if not ok:
                            bad += 1
                    else:
                        lam = psi
                        if kd == 2:
                            i = _curve_table(lam, flux, cur, 0, top, p0)[0]
                        else:
                            i = _curve_s(lam, kd, p0, p1, p2, p3, p4)[0]
                    if st == 0 and sb == 0 and sample_step:
                        out[c, k, j // decimate] = i
                        if j == n_steps:
                            done = True
                            break
                    # ---- derivative: KVL around the loop ----
                    gsc = _source_scale(x_st, j, g0, slope, kh, ke)
                    swt, cwt, x_trig = _stage_trig(
                        trig, j, st, nsub, x_st, x_trig, omega, h, swt, cwt
                    )
                    sa = swt * cph + cwt * sph
                    kk = gsc * vpk * sa - r_s * i - r_now * i - r_w * i
                    # ---- Runge-Kutta ----
                    if st == 0:
                        base = psi
                        acc = kk
                    else:
                        acc += (1.0 if st == 3 else 2.0) * kk
                    if st < 3:
                        psi = base + (hh if st == 2 else 0.5 * hh) * kk
                    else:
                        psi = base + hh / 6.0 * acc
                if done:
                    break
        fails[el] = bad
    return int(fails.sum())


# ---- grounded-wye units on a Thevenin source: the phases are decoupled ----


def _decoupled(
    n_steps: int,
    decimate: int,
    h: float,
    omega: float,
    vpk: float,
    phase: FloatArray,
    ramp: FloatArray,
    ramp_steps: IntArray,
    src: FloatArray,
    r_l: float,
    l_l: float,
    has_load: bool,
    r_w: FloatArray,
    r_ins: FloatArray,
    bypass_step: IntArray,
    kind: IntArray,
    par: FloatArray,
    flux: FloatArray,
    cur: FloatArray,
    npts: IntArray,
    close_step: IntArray,
    lam0: FloatArray,
    il0: FloatArray,
    tol_phi: float,
    n_in: int,
    sub: IntArray,
    record: int,
    peak_last: IntArray,
    out_src: FloatArray,
    out_peak: FloatArray,
    out_energy: FloatArray,
) -> int:  # pragma: no cover - compiled
    """Integrate grounded-wye units on a Thevenin source, phase by phase; returns the failed
    solves.

    The network of :func:`integrate` where every unit is a grounded wye and the source a
    Thevenin EMF (no machine): phase k's windings, its source branch and its bus-load branch
    meet only at bus node k and ground, so KCL at the bus is one scalar equation per phase,
    g(Phi_k) = Phi_k/L_s - sum_u f_u(psi_uk - Phi_k) - (psi_Lk - Phi_k)/L_L = 0, increasing in
    Phi_k (g' = 1/L_s + sum_u f_u' + 1/L_L > 0). It is solved by Newton's method kept in a
    bracket; where every curve is piecewise linear, from the Newton step off the previous stage's
    accepted point on the pieces held there (g is affine on them, so no curve evaluation is
    needed), accepted when the one evaluation at that Phi_k finds every winding on those pieces.
    The states, the stages, the step, the sub-steps, the EMF and the switching are those of
    :func:`integrate`, so the two agree to rounding. ``record`` is RECORD_FIRST_PEAKS or
    RECORD_SOURCE (out_src, (n_cases, 3, n_samples)); the other arguments are integrate's (src
    read for R_s and L_s only). Each element, one phase of one case, is integrated alone.
    """
    n_cases = phase.shape[0]
    n_units = r_w.shape[0]
    g0, slope = ramp[0], ramp[1]
    kh, ke = ramp_steps[0], ramp_steps[1]
    inv_ll = 1.0 / l_l if has_load else 0.0
    trig = _trig_table(n_steps, omega, h)
    linear = True
    for u in range(n_units):
        if kind[u] == 1:
            linear = False
    failed = 0
    # per element, per unit: the loop flux, its Runge-Kutta base and sum, the winding's flux,
    # current, slope and piece at the accepted point, its pole, the resistor's energy sum
    psi = np.zeros(n_units)
    base = np.zeros(n_units)
    acc = np.zeros(n_units)
    lam = np.zeros(n_units)
    cw = np.zeros(n_units)
    dw = np.zeros(n_units)
    seg = np.zeros(n_units, dtype=np.int64)
    cl = np.zeros(n_units, dtype=np.bool_)
    en_acc = np.zeros(n_units)
    prev_abs = np.zeros(n_units + 1)
    # the element's first-peak maxima (out_peak's columns), written out when it ends
    p_max = np.zeros(n_units + 1)
    p_before = np.zeros(n_units + 1)
    p_after = np.zeros(n_units + 1)
    p_index = np.zeros(n_units + 1, dtype=np.int64)
    last_bypass = 0  # no resistor's energy to sum from this step on
    for u in range(n_units):
        last_bypass = max(last_bypass, bypass_step[u])
    for el in range(3 * n_cases):
        c = el // 3
        k = el - 3 * c
        r_s = src[c, RS]
        l_s = src[c, LS]
        sph = math.sin(phase[c, k])
        cph = math.cos(phase[c, k])
        last = peak_last[c] if record == RECORD_FIRST_PEAKS else -1
        i_l = il0[c, k] if has_load else 0.0
        for u in range(n_units):
            lam[u] = lam0[c, u, k]
            cl[u] = close_step[c, u, k] <= 0
            cw[u] = 0.0
            dw[u] = 0.0
            seg[u] = 0
            psi[u] = lam[u]
        for r in range(n_units + 1):
            p_max[r] = p_before[r] = p_after[r] = -1.0
            p_index[r] = -1
        switching = True  # the states rebuilt at t = 0, then after each closing
        phi = psi_l = 0.0
        i_s = 0.0
        held = False
        x_trig = -1.0
        swt = cwt = 0.0
        base_l = acc_l = 0.0
        # held: the numerator and the slope sum of g's root on the accepted point's pieces,
        # summed with the loop fluxes' Runge-Kutta stage
        p_num = p_den = 0.0
        stop = False
        for j in range(n_steps + 1):
            pending = False
            if j > 0:
                for u in range(n_units):
                    if close_step[c, u, k] == j:
                        pending = True
            sample_step = j % decimate == 0 or j == n_steps
            nsub = sub[c] if (j < n_in and j < n_steps) else 1
            hh = h / nsub
            for sb in range(nsub):
                st = 0
                while st < 4:
                    x_st = j + (sb + (0.0 if st == 0 else (1.0 if st == 3 else 0.5))) / nsub
                    if switching:
                        # the windings' fluxes and the load current are continuous; the source
                        # flux takes KCL's new sum and the loop fluxes are rebuilt from them
                        switching = False
                        held = False
                        tot = 0.0
                        for u in range(n_units):
                            if cl[u]:
                                i, d, sg = _winding(
                                    lam[u], True, kind[u], flux, cur, u, npts[u] - 1, par[u, 0],
                                    par[u, 1], par[u, 2], par[u, 3], par[u, 4],
                                )  # fmt: skip
                                cw[u], dw[u], seg[u] = i, d, sg
                                tot += i
                        phi = l_s * (tot + i_l) if l_s > 0.0 else 0.0
                        psi_l = phi + l_l * i_l
                        for u in range(n_units):
                            if cl[u]:
                                psi[u] = lam[u] + phi
                    # ---- algebra: Phi_k from KCL at bus node k, every winding's current ----
                    tot = 0.0
                    if l_s > 0.0:
                        gs = 1.0 / l_s + inv_ll
                        exact = held
                        # held: g is affine on the accepted point's pieces, its root needs no
                        # evaluation; otherwise from the accepted point
                        trial = (p_num + psi_l * inv_ll) / (gs + p_den) if held else phi
                        lo = -math.inf
                        hi = math.inf
                        converged = False
                        for _it in range(4 * MAX_ITERATIONS):
                            tot = 0.0
                            slopes = 0.0
                            moved = not linear
                            for u in range(n_units):
                                if cl[u]:
                                    x = psi[u] - trial
                                    i, d, sg = _winding(
                                        x, True, kind[u], flux, cur, u, npts[u] - 1, par[u, 0],
                                        par[u, 1], par[u, 2], par[u, 3], par[u, 4],
                                    )  # fmt: skip
                                    moved = moved | (sg != seg[u])
                                    lam[u], cw[u], dw[u], seg[u] = x, i, d, sg
                                    tot += i
                                    slopes += d
                            if exact and not moved:
                                # the step was taken on the pieces found here: g(trial) = 0
                                converged = True
                                break
                            g = trial / l_s - tot - (psi_l - trial) * inv_ll
                            if g > 0.0:
                                hi = trial
                            elif g < 0.0:
                                lo = trial
                            else:
                                converged = True
                                break
                            step = -g / (gs + slopes)
                            if abs(step) <= tol_phi:
                                converged = True
                                break
                            new = trial + step
                            exact = True
                            if not (lo < new < hi):
                                # past a bracket's end (both ends then known): bisect
                                new = 0.5 * (lo + hi)
                                exact = False
                            trial = new
                        if not converged:
                            failed += 1
                        held = linear and converged
                        phi = trial
                        i_l = (psi_l - phi) * inv_ll
                        i_s = phi / l_s
                    else:
                        for u in range(n_units):
                            if cl[u]:
                                i, d, sg = _winding(
                                    psi[u], True, kind[u], flux, cur, u, npts[u] - 1, par[u, 0],
                                    par[u, 1], par[u, 2], par[u, 3], par[u, 4],
                                )  # fmt: skip
                                lam[u], cw[u], dw[u], seg[u] = psi[u], i, d, sg
                                tot += i
                        i_l = psi_l * inv_ll
                        i_s = tot + i_l
                    if st == 0 and pending:
                        # poles close at this step: lambda and i_L are now those of t_j
                        pending = False
                        for u in range(n_units):
                            if close_step[c, u, k] == j:
                                cl[u] = True
                        switching = True
                        continue
                    # ---- derivatives (KVL around every loop) and the Runge-Kutta stage ----
                    gsc = _source_scale(x_st, j, g0, slope, kh, ke)
                    swt, cwt, x_trig = _stage_trig(
                        trig, j, st, nsub, x_st, x_trig, omega, h, swt, cwt
                    )
                    e = gsc * vpk * (swt * cph + cwt * sph)
                    ub = e - r_s * i_s
                    kl = ub - r_l * i_l
                    wgt = 1.0 if (st == 0 or st == 3) else 2.0
                    hs = hh / 6.0 if st == 3 else (hh if st == 2 else 0.5 * hh)
                    p_num = p_den = 0.0
                    for u in range(n_units):
                        kk = 0.0
                        ps = psi[u]
                        if cl[u]:
                            iw = cw[u]
                            rn = r_ins[u] if j < bypass_step[u] else 0.0
                            kk = ub - rn * iw - r_w[u] * iw
                            if st == 0:
                                base[u] = ps
                                acc[u] = kk
                                ps += hs * kk
                            else:
                                a = acc[u] + wgt * kk
                                acc[u] = a
                                ps = base[u] + (hs * kk if st < 3 else hs * a)
                            psi[u] = ps
                            d = dw[u]
                            p_num += iw + d * (ps - lam[u])
                            p_den += d
                    # ---- outputs at the sample instants ----
                    if st == 0 and sb == 0 and sample_step:
                        s_idx = j // decimate
                        if record == RECORD_FIRST_PEAKS:
                            for r in range(n_units + 1):
                                y = abs(i_s) if r == 0 else (abs(cw[r - 1]) if cl[r - 1] else 0.0)
                                if s_idx > 0 and p_index[r] == s_idx - 1:
                                    p_after[r] = y
                                if s_idx <= last and y > p_max[r]:
                                    p_max[r] = y
                                    p_before[r] = prev_abs[r] if s_idx else y
                                    p_after[r] = y
                                    p_index[r] = s_idx
                                prev_abs[r] = y
                            if not math.isfinite(i_s):
                                p_max[0] = math.nan
                            if s_idx > last or j == n_steps:
                                stop = True
                                break
                        else:
                            out_src[c, k, s_idx] = i_s
                            if j == n_steps:
                                break
                    # ---- Runge-Kutta: the load's loop flux, the resistors' energy ----
                    if j < last_bypass:
                        for u in range(n_units):
                            if j < bypass_step[u]:
                                pw = cw[u] * cw[u] if cl[u] else 0.0
                                en_acc[u] = wgt * pw + (en_acc[u] if st > 0 else 0.0)
                                if st == 3:
                                    out_energy[c, u] += hs * en_acc[u]
                    if st == 0:
                        base_l = psi_l
                        acc_l = kl
                    else:
                        acc_l += wgt * kl
                    psi_l = base_l + (hs * kl if st < 3 else hs * acc_l)
                    st += 1
                if stop:
                    break
            if stop:
                break
        if record == RECORD_FIRST_PEAKS:
            for r in range(n_units + 1):
                out_peak[c, r, k, PEAK_MAX] = p_max[r]
                out_peak[c, r, k, PEAK_BEFORE] = p_before[r]
                out_peak[c, r, k, PEAK_AFTER] = p_after[r]
                out_peak[c, r, k, PEAK_INDEX] = p_index[r]
    return failed


def _renamed(fn: Callable[..., int], name: str) -> Callable[..., int]:
    # A copy of fn under another name: numba's cache keys an entry by the function's qualified
    # name and signature, not by its compile options, so the serial and the parallel builds of
    # one function would load each other's machine code from the cache.
    copy = types.FunctionType(fn.__code__, fn.__globals__, name, fn.__defaults__, fn.__closure__)
    copy.__qualname__ = name
    copy.__doc__ = fn.__doc__
    return copy


# The same kernel compiled twice: serially for small batches and with its elements spread over
# the cores (numba's prange) for large ones; elements are independent, so both give the same
# result bit for bit. error_model="numpy": a division does not test its divisor for zero (none
# of these can be zero: 1 + L_s*f' >= 1, a table's breakpoints increase strictly, nsub >= 1);
# with Python's check the serial build measured three times slower (its loops not optimised).
integrate_lone = numba.njit(cache=True, nogil=True, error_model="numpy")(
    _renamed(_lone, "_lone_serial")
)
integrate_lone_parallel = numba.njit(cache=True, nogil=True, parallel=True, error_model="numpy")(
    _renamed(_lone, "_lone_parallel")
)
# Fewest elements (cases x 3 phases) for the parallel build: below, starting the threads costs
# more than it saves (measured for the single-unit kernels this replaces).
PARALLEL_MIN_ELEMENTS = 64
# Grounded-wye units on a Thevenin source, phase by phase (see _decoupled); serial, the cases'
# chunks spread over threads by the caller as for integrate. error_model="numpy" as above (its
# divisors: L_s > 0, 1/L_s + sum f' + 1/L_L > 0, a table's increasing breakpoints, nsub >= 1).
integrate_decoupled = numba.njit(cache=True, nogil=True, error_model="numpy")(_decoupled)
