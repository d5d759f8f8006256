"""Compiled kernel of :func:`core.network.simulate_network`: the network's loop fluxes by RK4.

The equations, the states and the references are in the docstring of
:mod:`core.network.solver`; this module holds only the compiled arithmetic. Per case the states
are the loop fluxes psi of every energised winding (one per winding, shape (n_units, 3)) and
psi_L of each bus-load phase; at every Runge-Kutta stage the source-inductor fluxes
Phi = L_s*i_s follow from Kirchhoff's current law at the bus by Newton's method on the 3-vector
Phi (each unit contributing its own 3x3 block, so one iteration costs O(n_units)), and each unit
with a floating node (the neutral of an ungrounded wye, the terminal of a delta whose pole is
still open) solves one monotone scalar equation for that node's flux.

Compiled with numba (``cache=True``). Everything the kernel inlines is defined in this file:
numba keys its cache by the file of the cached function only.
"""

from __future__ import annotations

import math

import numba
import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]

__all__ = ["DELTA", "FLOATING_WYE", "GROUNDED_WYE", "MAX_ITERATIONS", "integrate"]

GROUNDED_WYE, FLOATING_WYE, DELTA = 0, 1, 2
# Newton's method on Phi and on a floating node's flux: iteration cap (a guard, not a budget:
# warm-started from the previous stage a piecewise-linear curve needs two evaluations when no
# winding crosses a breakpoint) [-].
MAX_ITERATIONS = 60


@numba.njit(cache=True, inline="always")
def _curve(
    lam: float,
    kd: int,
    par: FloatArray,
    flux: FloatArray,
    cur: FloatArray,
    u: int,
    top: int,
) -> tuple[float, float]:  # pragma: no cover - compiled
    # Current f(lambda) and slope di/d(lambda) of unit u's curve: kind 0 two-slope
    # (par = 1/L_m, lambda_S, 1/L_air, i_S), 1 smooth knee (1/L_m, 1/L_air - 1/L_m, lambda_S,
    # width, g0), 2 table (flux[u], cur[u] up to index top; par[0] the final slope).
    x = abs(lam)
    if kd == 0:
        if x > par[u, 1]:
            d = par[u, 2]
            i = par[u, 3] + (x - par[u, 1]) * d
        else:
            d = par[u, 0]
            i = x * d
    elif kd == 1:
        s = x - par[u, 2]
        q = math.sqrt(s * s + par[u, 3] * par[u, 3])
        i = par[u, 0] * x + par[u, 1] * (0.5 * (s + q) - par[u, 4])
        d = par[u, 0] + par[u, 1] * 0.5 * (1.0 + s / q)
    elif x >= flux[u, top]:
        d = par[u, 0]
        i = cur[u, top] + (x - flux[u, top]) * d
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
    return (i if lam >= 0.0 else -i), d


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
def _eval_unit(
    u: int,
    conn: int,
    mode: int,
    phi: FloatArray,
    psi: FloatArray,
    lam: FloatArray,
    cw: FloatArray,
    dw: FloatArray,
    sig: FloatArray,
    q: FloatArray,
    avec: FloatArray,
    on: NDArray[np.bool_],
    closed: NDArray[np.bool_],
    kind: IntArray,
    par: FloatArray,
    flux: FloatArray,
    cur: FloatArray,
    npts: IntArray,
    tol: float,
) -> bool:  # pragma: no cover - compiled
    # Winding fluxes, currents and slopes of unit u for the source fluxes phi; False when the
    # floating node's solve did not converge. Unenergised windings keep lambda, carry nothing.
    kd = kind[u]
    top = npts[u] - 1
    p0 = phi[0] if closed[u, 0] else 0.0
    p1 = phi[1] if closed[u, 1] else 0.0
    p2 = phi[2] if closed[u, 2] else 0.0
    if conn == DELTA:
        x0 = psi[u, 0] - (p0 - p1)
        x1 = psi[u, 1] - (p1 - p2)
        x2 = psi[u, 2] - (p2 - p0)
    else:
        x0 = psi[u, 0] - p0
        x1 = psi[u, 1] - p1
        x2 = psi[u, 2] - p2
    if mode == 0:
        for k in range(3):
            cw[u, k] = 0.0
            dw[u, k] = 0.0
        return True
    if mode == 1:
        for k in range(3):
            if on[u, k]:
                xk = x0 if k == 0 else (x1 if k == 1 else x2)
                lam[u, k] = xk
                cw[u, k], dw[u, k] = _curve(xk, kd, par, flux, cur, u, top)
            else:
                cw[u, k] = 0.0
                dw[u, k] = 0.0
        return True
    # one floating node: g(s) = sum_k a_k*f(x_k + a_k*s) - q = 0, increasing in s
    a0 = avec[u, 0]
    a1 = avec[u, 1]
    a2 = avec[u, 2]
    s = sig[u]
    lo = -math.inf
    hi = math.inf
    ok = False
    for _ in range(MAX_ITERATIONS):
        g = -q[u]
        dg = 0.0
        if a0 != 0.0:
            i0, d0 = _curve(x0 + a0 * s, kd, par, flux, cur, u, top)
            g += a0 * i0
            dg += d0
        if a1 != 0.0:
            i1, d1 = _curve(x1 + a1 * s, kd, par, flux, cur, u, top)
            g += a1 * i1
            dg += d1
        if a2 != 0.0:
            i2, d2 = _curve(x2 + a2 * s, kd, par, flux, cur, u, top)
            g += a2 * i2
            dg += d2
        if g == 0.0:
            ok = True
            break
        if g < 0.0:
            lo = s
        else:
            hi = s
        step = g / dg
        new = s - step
        if not (lo < new < hi):
            new = 0.5 * (lo + hi) if math.isfinite(lo) and math.isfinite(hi) else s - 2.0 * step
        if abs(new - s) <= tol:
            s = new
            ok = True
            break
        s = new
    sig[u] = s
    xs = (x0, x1, x2)
    for k in range(3):
        if on[u, k]:
            lk = xs[k] + avec[u, k] * s
            lam[u, k] = lk
            cw[u, k], dw[u, k] = _curve(lk, kd, par, flux, cur, u, top)
        else:
            cw[u, k] = 0.0
            dw[u, k] = 0.0
    return ok


@numba.njit(cache=True)
def _reduced_slopes(
    u: int, mode: int, dw: FloatArray, avec: FloatArray, dt: FloatArray
) -> None:  # pragma: no cover - compiled
    # D~ = D - (D a)(D a)^T/(a^T D a) with a floating node, D = diag(f') otherwise (3x3 into dt)
    for i in range(3):
        for j in range(3):
            dt[i, j] = 0.0
        dt[i, i] = dw[u, i]
    if mode == 2:
        den = 0.0
        for k in range(3):
            den += avec[u, k] * avec[u, k] * dw[u, k]
        if den > 0.0:
            for i in range(3):
                for j in range(3):
                    dt[i, j] -= avec[u, i] * dw[u, i] * avec[u, j] * dw[u, j] / den


@numba.njit(cache=True)
def _line_matrix(conn: int, dt: FloatArray, out: FloatArray) -> None:  # pragma: no cover
    # out = C dt C^T, C = I for a wye, A for a delta (line a = c_ab - c_ca, ...)
    if conn != DELTA:
        for i in range(3):
            for j in range(3):
                out[i, j] = dt[i, j]
        return
    # rows: (A dt)_i,j = dt[i, j] - dt[i - 1, j]
    for i in range(3):
        for j in range(3):
            out[i, j] = (
                dt[i, j] - dt[i, (j + 2) % 3] - dt[(i + 2) % 3, j] + dt[(i + 2) % 3, (j + 2) % 3]
            )


@numba.njit(cache=True)
def _solve3(m: FloatArray, b: FloatArray, x: FloatArray) -> None:  # pragma: no cover - compiled
    # x = m^{-1} b by Cramer's rule (m symmetric positive definite here)
    c00 = m[1, 1] * m[2, 2] - m[1, 2] * m[2, 1]
    c01 = m[1, 2] * m[2, 0] - m[1, 0] * m[2, 2]
    c02 = m[1, 0] * m[2, 1] - m[1, 1] * m[2, 0]
    det = m[0, 0] * c00 + m[0, 1] * c01 + m[0, 2] * c02
    x[0] = (
        b[0] * c00
        + m[0, 1] * (m[1, 2] * b[2] - b[1] * m[2, 2])
        + m[0, 2] * (b[1] * m[2, 1] - m[1, 1] * b[2])
    ) / det
    x[1] = (
        m[0, 0] * (b[1] * m[2, 2] - m[1, 2] * b[2])
        + b[0] * c01
        + m[0, 2] * (m[1, 0] * b[2] - b[1] * m[2, 0])
    ) / det
    x[2] = (
        m[0, 0] * (m[1, 1] * b[2] - b[1] * m[2, 1])
        + m[0, 1] * (b[1] * m[2, 0] - m[1, 0] * b[2])
        + b[0] * c02
    ) / det


@numba.njit(cache=True)
def _lines(
    u: int, conn: int, cw: FloatArray, closed: NDArray[np.bool_], line: FloatArray
) -> None:  # pragma: no cover - compiled
    # line currents of unit u into its terminals (0 on an open pole)
    if conn == DELTA:
        la = cw[u, 0] - cw[u, 2]
        lb = cw[u, 1] - cw[u, 0]
        lc = cw[u, 2] - cw[u, 1]
    else:
        la = cw[u, 0]
        lb = cw[u, 1]
        lc = cw[u, 2]
    line[u, 0] = la if closed[u, 0] else 0.0
    line[u, 1] = lb if closed[u, 1] else 0.0
    line[u, 2] = lc if closed[u, 2] else 0.0


@numba.njit(cache=True)
def _algebra(
    n_units: int,
    conn: IntArray,
    mode: IntArray,
    phi: FloatArray,
    psi: FloatArray,
    psi_l: FloatArray,
    lam: FloatArray,
    cw: FloatArray,
    dw: FloatArray,
    sig: FloatArray,
    q: FloatArray,
    avec: FloatArray,
    on: NDArray[np.bool_],
    closed: NDArray[np.bool_],
    kind: IntArray,
    par: FloatArray,
    flux: FloatArray,
    cur: FloatArray,
    npts: IntArray,
    tol_u: FloatArray,
    tol_phi: float,
    l_s: float,
    l_l: float,
    has_load: bool,
    line: FloatArray,
    i_l: FloatArray,
    i_s: FloatArray,
    jac: FloatArray,
    work: FloatArray,
) -> int:  # pragma: no cover - compiled
    # Solve the stage's algebra: Phi from KCL at the bus, every unit's fluxes and currents, the
    # line, load and source currents; jac holds J = I/L_s + sum G_u + I/L_L at the solution.
    # Returns the number of solves that did not converge.
    failed = 0
    dt = work[0]
    gm = work[1]
    res = work[2, 0]
    dphi = work[2, 1]
    trial = work[2, 2]
    if l_s <= 0.0:
        tot = work[3, 0]
        for k in range(3):
            phi[k] = 0.0
            tot[k] = 0.0
        for u in range(n_units):
            if not _eval_unit(
                u, conn[u], mode[u], phi, psi, lam, cw, dw, sig, q, avec, on, closed,
                kind, par, flux, cur, npts, tol_u[u],
            ):  # fmt: skip
                failed += 1
            _lines(u, conn[u], cw, closed, line)
            for k in range(3):
                tot[k] += line[u, k]
        for k in range(3):
            i_l[k] = psi_l[k] / l_l if has_load else 0.0
            i_s[k] = tot[k] + i_l[k]
        return failed
    norm0 = math.inf
    t = 1.0
    for k in range(3):
        trial[k] = phi[k]
    converged = False
    for _ in range(4 * MAX_ITERATIONS):
        # evaluate the residual and the Jacobian at the trial point
        for i in range(3):
            for j in range(3):
                jac[i, j] = 0.0
            jac[i, i] = 1.0 / l_s + (1.0 / l_l if has_load else 0.0)
            res[i] = trial[i] / l_s
        bad = 0
        for u in range(n_units):
            if not _eval_unit(
                u, conn[u], mode[u], trial, psi, lam, cw, dw, sig, q, avec, on, closed,
                kind, par, flux, cur, npts, tol_u[u],
            ):  # fmt: skip
                bad += 1
            _lines(u, conn[u], cw, closed, line)
            if mode[u] == 0:
                continue
            _reduced_slopes(u, mode[u], dw, avec, dt)
            _line_matrix(conn[u], dt, gm)
            for i in range(3):
                res[i] -= line[u, i]
                if closed[u, i]:
                    for j in range(3):
                        if closed[u, j]:
                            jac[i, j] += gm[i, j]
        for k in range(3):
            i_l[k] = (psi_l[k] - trial[k]) / l_l if has_load else 0.0
            res[k] -= i_l[k]
        norm = abs(res[0]) + abs(res[1]) + abs(res[2])
        if norm > norm0 and t > 1e-6:
            # the full step increased the residual: halve it from the last accepted point
            t *= 0.5
            for k in range(3):
                trial[k] = phi[k] - t * dphi[k]
            continue
        for k in range(3):
            phi[k] = trial[k]
        norm0 = norm
        failed_here = bad
        _solve3(jac, res, dphi)
        step = max(abs(dphi[0]), abs(dphi[1]), abs(dphi[2]))
        if step <= tol_phi or norm == 0.0:
            converged = True
            failed += failed_here
            break
        t = 1.0
        for k in range(3):
            trial[k] = phi[k] - dphi[k]
    if not converged:
        failed += 1
    for k in range(3):
        i_s[k] = phi[k] / l_s
    return failed


@numba.njit(cache=True)
def _derivatives(
    n_units: int,
    conn: IntArray,
    mode: IntArray,
    on: NDArray[np.bool_],
    closed: NDArray[np.bool_],
    r_w: FloatArray,
    r_ins_now: FloatArray,
    e: FloatArray,
    r_s: float,
    r_l: float,
    cw: FloatArray,
    line: FloatArray,
    i_s: FloatArray,
    i_l: FloatArray,
    kpsi: FloatArray,
    kl: FloatArray,
    drive: FloatArray,
) -> None:  # pragma: no cover - compiled
    # psi' of every winding and psi_L' of the load (Kirchhoff's voltage law around each loop)
    for k in range(3):
        kl[k] = e[k] - r_s * i_s[k] - r_l * i_l[k]
    for u in range(n_units):
        for k in range(3):
            drive[k] = e[k] - r_s * i_s[k] - r_ins_now[u] * line[u, k] if closed[u, k] else 0.0
        for k in range(3):
            if mode[u] == 0 or not on[u, k]:
                kpsi[u, k] = 0.0
            elif conn[u] == DELTA:
                kpsi[u, k] = drive[k] - drive[(k + 1) % 3] - r_w[u] * cw[u, k]
            else:
                kpsi[u, k] = drive[k] - r_w[u] * cw[u, k]


@numba.njit(cache=True)
def _source_scale(x: float, j: int, g0: float, slope: float, kh: int, ke: int) -> float:
    # EMF amplitude factor at step position x (in steps) of step j: the piece is the step's
    if j >= ke:
        return 1.0
    if j < kh:
        return g0
    return g0 + slope * (x - kh)


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
    r_s: float,
    l_s: float,
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
) -> int:  # pragma: no cover - compiled
    """Integrate every case; returns the number of algebraic solves that did not converge.

    Shapes: phase (n_cases, 3) [rad] (EMF e_k = g*vpk*sin(omega*t + phase_k)); ramp (g0,
    slope per step); ramp_steps (end of hold, end of rise) [steps]; per unit conn, r_w [ohm],
    r_ins [ohm], bypass_step, curve (kind, par, flux, cur, npts); close_step (n_cases,
    n_units, 3) [steps]; lam0 (n_cases, n_units, 3) [Wb-turn]; il0 (n_cases, 3) [A]; outputs
    (n_cases, 3, n_samples) and (n_cases, n_units, 3, n_samples).
    """
    n_cases = phase.shape[0]
    n_units = conn.shape[0]
    g0, slope = ramp[0], ramp[1]
    kh, ke = ramp_steps[0], ramp_steps[1]
    failed = 0
    for c in range(n_cases):
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
        line = np.zeros((n_units, 3))
        r_now = np.zeros(n_units)
        phi = np.zeros(3)
        psi_l = np.zeros(3)
        base_l = np.zeros(3)
        acc_l = np.zeros(3)
        kl = np.zeros(3)
        i_l = il0[c].copy()
        i_s = np.zeros(3)
        e = np.zeros(3)
        jac = np.zeros((3, 3))
        work = np.zeros((4, 3, 3))
        rhs = np.zeros(3)
        dphi = np.zeros(3)
        dt = np.zeros((3, 3))
        gm = np.zeros((3, 3))
        first = True
        for j in range(n_steps + 1):
            # switching at the step boundary: poles closing now, then re-initialise the states
            # from the fluxes and load currents (continuous) and KCL for the source current
            changed = first
            for u in range(n_units):
                for k in range(3):
                    if not closed[u, k] and close_step[c, u, k] == j:
                        closed[u, k] = True
                        changed = True
                r_now[u] = r_ins[u] if j < bypass_step[u] else 0.0
            if changed:
                if not first:
                    # fluxes and load currents at t_j with the poles as they were
                    failed += _algebra(
                        n_units, conn, mode, phi, psi, psi_l, lam, cw, dw, sig, q, avec, on,
                        closed, kind, par, flux, cur, npts, tol_u, tol_phi, l_s, l_l, has_load,
                        line, i_l, i_s, jac, work,
                    )  # fmt: skip
                first = False
                tot = work[3, 2]
                for k in range(3):
                    tot[k] = 0.0
                for u in range(n_units):
                    mode[u] = _status(conn[u], closed[u], on[u], avec[u])
                    sig[u] = 0.0
                    for k in range(3):
                        if on[u, k]:
                            cw[u, k], dw[u, k] = _curve(
                                lam[u, k], kind[u], par, flux, cur, u, npts[u] - 1
                            )
                        else:
                            cw[u, k] = 0.0
                    _lines(u, conn[u], cw, closed, line)
                    qq = 0.0
                    for k in range(3):
                        tot[k] += line[u, k]
                        qq += avec[u, k] * cw[u, k]
                    q[u] = qq
                for k in range(3):
                    phi[k] = l_s * (tot[k] + i_l[k]) if l_s > 0.0 else 0.0
                    psi_l[k] = phi[k] + l_l * i_l[k]
                for u in range(n_units):
                    p0 = phi[0] if closed[u, 0] else 0.0
                    p1 = phi[1] if closed[u, 1] else 0.0
                    p2 = phi[2] if closed[u, 2] else 0.0
                    for k in range(3):
                        if conn[u] == DELTA:
                            pk = (p0, p1, p2)[k] - (p0, p1, p2)[(k + 1) % 3]
                        else:
                            pk = (p0, p1, p2)[k]
                        psi[u, k] = lam[u, k] + pk
            # four stages
            for k in range(3):
                acc_l[k] = 0.0
                base_l[k] = psi_l[k]
            for u in range(n_units):
                for k in range(3):
                    acc[u, k] = 0.0
                    base[u, k] = psi[u, k]
            for st in range(4):
                x = j + (0.0 if st == 0 else (1.0 if st == 3 else 0.5))
                g = _source_scale(x, j, g0, slope, kh, ke)
                for k in range(3):
                    e[k] = g * vpk * math.sin(omega * x * h + phase[c, k])
                failed += _algebra(
                    n_units, conn, mode, phi, psi, psi_l, lam, cw, dw, sig, q, avec, on,
                    closed, kind, par, flux, cur, npts, tol_u, tol_phi, l_s, l_l, has_load,
                    line, i_l, i_s, jac, work,
                )  # fmt: skip
                if st == 0 and (j % decimate == 0 or j == n_steps):
                    s_idx = j // decimate
                    _derivatives(
                        n_units, conn, mode, on, closed, r_w, r_now, e, r_s, r_l, cw, line,
                        i_s, i_l, kpsi, kl, work[3, 1],
                    )  # fmt: skip
                    # bus voltage v = e - R_s*i_s - Phi', J*Phi' = sum S C D~ psi' + psi_L'/L_L
                    for k in range(3):
                        dphi[k] = 0.0
                    if l_s > 0.0:
                        for k in range(3):
                            rhs[k] = kl[k] / l_l if has_load else 0.0
                        for u in range(n_units):
                            if mode[u] == 0:
                                continue
                            _reduced_slopes(u, mode[u], dw, avec, dt)
                            # S C dt psi'
                            for i in range(3):
                                gm[0, i] = 0.0
                                for m2 in range(3):
                                    gm[0, i] += dt[i, m2] * kpsi[u, m2]
                            for i in range(3):
                                if not closed[u, i]:
                                    continue
                                if conn[u] == DELTA:
                                    rhs[i] += gm[0, i] - gm[0, (i + 2) % 3]
                                else:
                                    rhs[i] += gm[0, i]
                        _solve3(jac, rhs, dphi)
                    for k in range(3):
                        out_src[c, k, s_idx] = i_s[k]
                        out_bus[c, k, s_idx] = e[k] - r_s * i_s[k] - dphi[k]
                        for u in range(n_units):
                            out_line[c, u, k, s_idx] = line[u, k]
                            out_wind[c, u, k, s_idx] = cw[u, k]
                            out_flux[c, u, k, s_idx] = lam[u, k]
                    if j == n_steps:
                        break
                else:
                    _derivatives(
                        n_units, conn, mode, on, closed, r_w, r_now, e, r_s, r_l, cw, line,
                        i_s, i_l, kpsi, kl, work[3, 1],
                    )  # fmt: skip
                w = 1.0 if st == 0 or st == 3 else 2.0
                for k in range(3):
                    acc_l[k] += w * kl[k]
                for u in range(n_units):
                    for k in range(3):
                        acc[u, k] += w * kpsi[u, k]
                if st < 3:
                    hs = h if st == 2 else 0.5 * h
                    for k in range(3):
                        psi_l[k] = base_l[k] + hs * kl[k]
                    for u in range(n_units):
                        for k in range(3):
                            psi[u, k] = base[u, k] + hs * kpsi[u, k]
                else:
                    for k in range(3):
                        psi_l[k] = base_l[k] + h / 6.0 * acc_l[k]
                    for u in range(n_units):
                        for k in range(3):
                            psi[u, k] = base[u, k] + h / 6.0 * acc[u, k]
    return failed
