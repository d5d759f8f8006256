"""Independent reference for core.network: the same network written from Kirchhoff's laws alone.

Nothing here calls the code under test: the circuit *inputs* (EMF, source and load impedance,
each unit's winding resistance, two-slope curve, connection, pole and bypass instants) are
shared, the equations are not. Formulation (deliberately different from the solver's loop
fluxes and Schur reduction): the states are the winding flux linkages lambda and the load
currents i_L; at every right-hand-side call one dense linear system is assembled and solved
(numpy.linalg.solve) for all the unknown rates and node voltages at once:

* source, per phase: v_k + L_s*(sum_u S_u*(C_u*D_u*lambda_u')_k + i_Lk') = e_k - R_s*i_sk,
  i_s = sum_u S_u*l_u + i_L (KVL through the source, KCL at the bus);
* load: v_k - L_L*i_Lk' = R_L*i_Lk;
* winding w from node p to node q: lambda_w' - V_p + V_q = -R_w*c_w, V of a terminal whose pole
  is closed = v_k - R_ins*l_k, V of a floating node (ungrounded neutral, the terminal of a delta
  whose pole is open) an unknown, V of ground 0;
* floating node: d/dt of the current into it is zero, sum_w a_w*f'(lambda_w)*lambda_w' = 0.

scipy.integrate.solve_ivp (LSODA, rtol 1e-10, with the exact Jacobian of each piece; Radau
gives the same numbers some five times slower) integrates it interval by interval between the
switching instants, and, because lambda' jumps where a winding crosses the knee of the
two-slope curve (the incremental inductance changes there), stops at every knee crossing
(terminal events) and restarts on the other side, so that every piece it integrates is smooth.
A unit in service starts at the network's phasor steady state (computed here with the windings
at their unsaturated inductance, the curve's first slope, below the knee). Circuit laws: any
circuits textbook; the integrator: L. Petzold, "Automatic selection of methods for solving stiff
and nonstiff systems of ordinary differential equations", SIAM J. Sci. Stat. Comput. 4(1), 1983
(LSODA; from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from scipy.integrate import solve_ivp

Array = NDArray[np.float64]
SHIFT = np.array([0.0, -2.0 * math.pi / 3.0, 2.0 * math.pi / 3.0])


@dataclass(frozen=True)
class RefUnit:
    """One unit as the reference sees it (plain numbers, SI)."""

    connection: str  # "wye_grounded", "wye", "delta"
    r_w: float  # winding resistance [ohm]
    l_m: float  # unsaturated slope [H]
    knee: float  # knee flux [Wb-turn]
    l_air: float  # saturated slope [H]
    close: tuple[float, float, float]  # pole instants [s] (already on the solver's step)
    lam0: tuple[float, float, float]  # flux at t = 0 (residual) [Wb-turn]
    in_service: bool = False
    r_ins: float = 0.0  # pre-insertion resistor [ohm]
    t_bypass: float = 0.0  # [s]

    def current(self, lam: Array) -> Array:
        x = np.abs(lam)
        i = np.where(
            x <= self.knee, x / self.l_m, self.knee / self.l_m + (x - self.knee) / self.l_air
        )
        out: Array = np.sign(lam) * i
        return out

    def slope(self, lam: Array, side: Array) -> Array:
        # side: +1 above the knee, -1 below (fixed on each integrated piece)
        out: Array = np.where(side > 0, 1.0 / self.l_air, 1.0 / self.l_m)
        return out


@dataclass(frozen=True)
class RefNetwork:
    v_ll: float  # rms line-to-line EMF [V]
    f: float  # [Hz]
    alpha_deg: float  # phase-A EMF angle at t = 0 [deg]
    r_s: float
    l_s: float
    units: tuple[RefUnit, ...]
    r_l: float = 0.0
    l_l: float = 0.0  # 0: no load


def _incidence(conn: str) -> Array:
    # line current = C @ winding current
    if conn == "delta":
        return np.array([[1.0, 0.0, -1.0], [-1.0, 1.0, 0.0], [0.0, -1.0, 1.0]])
    return np.eye(3)


def steady_state(net: RefNetwork) -> tuple[Array, Array]:
    """Phasor steady state: fluxes of units in service (n_units, 3) and load currents (3,)."""
    w = 2.0 * math.pi * net.f
    e = net.v_ll / math.sqrt(3.0)
    y = 0.0j
    if net.l_l > 0.0:
        y += 1.0 / (net.r_l + 1j * w * net.l_l)
    for u in net.units:
        if u.in_service:
            y += (3.0 if u.connection == "delta" else 1.0) / (u.r_w + 1j * w * u.l_m)
    v = e / (1.0 + (net.r_s + 1j * w * net.l_s) * y)
    ph = math.radians(net.alpha_deg) + SHIFT
    lam = np.zeros((len(net.units), 3))
    for k, u in enumerate(net.units):
        if u.in_service:
            vw = v * (math.sqrt(3.0) * np.exp(1j * math.pi / 6.0) if u.connection == "delta" else 1)
            lam[k] = math.sqrt(2.0) * np.imag(
                u.l_m * vw / (u.r_w + 1j * w * u.l_m) * np.exp(1j * ph)
            )
        else:
            lam[k] = u.lam0
    il = np.zeros(3)
    if net.l_l > 0.0:
        il = math.sqrt(2.0) * np.imag(v / (net.r_l + 1j * w * net.l_l) * np.exp(1j * ph))
    return lam, il


class _Topology:
    """Which windings are energised and where the floating nodes are, for one set of poles."""

    def __init__(self, net: RefNetwork, closed: Array) -> None:
        self.net = net
        self.closed = closed  # (n_units, 3) bool
        self.on = np.zeros_like(closed)
        self.floating = np.zeros(len(net.units), dtype=bool)
        self.avec = np.zeros((len(net.units), 3))
        for k, u in enumerate(net.units):
            nc = int(closed[k].sum())
            if u.connection == "wye_grounded":
                self.on[k] = closed[k]
            elif nc >= 2:
                self.on[k] = True if u.connection == "delta" else closed[k]
                if u.connection == "wye":
                    self.floating[k] = True
                    self.avec[k] = closed[k].astype(float)
                elif nc == 2:
                    o = int(np.flatnonzero(~closed[k])[0])
                    self.floating[k] = True
                    self.avec[k] = _incidence("delta")[o]


def _rhs_factory(net: RefNetwork, topo: _Topology, side: Array):  # type: ignore[no-untyped-def]
    n_u = len(net.units)
    w = 2.0 * math.pi * net.f
    vpk = math.sqrt(2.0) * net.v_ll / math.sqrt(3.0)
    ph = math.radians(net.alpha_deg) + SHIFT
    has_load = net.l_l > 0.0
    n_x = 3 * n_u + 3 + 3 + n_u  # lambda', v, i_L', floating node voltages

    # the matrix depends on the topology and on each winding's side of the knee only, so it
    # is assembled and factorised once per integrated piece
    dw = np.zeros((n_u, 3))
    for k, u in enumerate(net.units):
        dw[k] = np.where(topo.on[k], u.slope(np.zeros(3), side[k]), 0.0)
    a = np.zeros((n_x, n_x))
    iv = 3 * n_u  # v columns
    il_c = iv + 3  # i_L' columns
    fl = il_c + 3  # floating columns
    for p in range(3):
        row = iv + p
        a[row, iv + p] = 1.0
        for k, u in enumerate(net.units):
            if topo.closed[k, p]:
                cmat = _incidence(u.connection)
                for wi in range(3):
                    a[row, 3 * k + wi] += net.l_s * cmat[p, wi] * dw[k, wi]
        if has_load:
            a[row, il_c + p] = net.l_s
            a[il_c + p, iv + p] = 1.0
            a[il_c + p, il_c + p] = -net.l_l
        else:
            a[il_c + p, il_c + p] = 1.0
    # winding rows: lambda_w' - V_p + V_q = -R_w*c_w (+ resistor drops, in b)
    terms = []  # (row, unit, node, sign) of closed terminals, for the resistor drops
    for k, u in enumerate(net.units):
        for wi in range(3):
            row = 3 * k + wi
            a[row, row] = 1.0
            if not topo.on[k, wi]:
                continue
            nodes = ((wi, 1.0), ((wi + 1) % 3, -1.0)) if u.connection == "delta" else ((wi, 1.0),)
            for node, sgn in nodes:
                if topo.closed[k, node]:
                    a[row, iv + node] -= sgn
                    terms.append((row, k, node, sgn))
                else:
                    a[row, fl + k] -= sgn
            if u.connection == "wye":
                a[row, fl + k] += 1.0  # neutral voltage
        row = fl + k
        if topo.floating[k]:
            for wi in range(3):
                a[row, 3 * k + wi] = topo.avec[k, wi] * dw[k, wi]
        else:
            a[row, row] = 1.0
    a_inv = np.linalg.inv(a)
    knee = np.array([u.knee for u in net.units])[:, None]
    l_m = np.array([u.l_m for u in net.units])[:, None]
    l_air = np.array([u.l_air for u in net.units])[:, None]
    r_w = np.array([u.r_w for u in net.units])[:, None]
    on = topo.on
    closed = topo.closed
    cmats = np.array([_incidence(u.connection) for u in net.units])

    def b_vector(t: float, cw: Array, il: Array) -> tuple[Array, Array, Array]:
        lines = np.where(closed, np.einsum("kij,kj->ki", cmats, cw), 0.0)
        i_s = lines.sum(axis=0) + il
        b = np.zeros(n_x)
        b[iv : iv + 3] = vpk * np.sin(w * t + ph) - net.r_s * i_s
        if has_load:
            b[il_c : il_c + 3] = net.r_l * il
        b[: 3 * n_u] = np.where(on, -r_w * cw, 0.0).ravel()
        for row, k, node, sgn in terms:
            u = net.units[k]
            if t < u.t_bypass:
                b[row] -= sgn * u.r_ins * lines[k, node]
        return b, i_s, lines

    def solve(t: float, y: Array) -> tuple[Array, Array, Array, Array]:
        lam = y[: 3 * n_u].reshape(n_u, 3)
        il = y[3 * n_u :] if has_load else np.zeros(3)
        x_abs = np.abs(lam)
        mag = np.where(x_abs <= knee, x_abs / l_m, knee / l_m + (x_abs - knee) / l_air)
        cw = np.where(on, np.sign(lam) * mag, 0.0)
        b, i_s, lines = b_vector(t, cw, il)
        x = a_inv @ b
        return x, i_s, lines, cw

    def jac(t: float, y: Array) -> Array:
        # on a piece the currents are affine in the states (slopes dw), b is affine in the
        # currents and the matrix is constant: the Jacobian is a^-1 (db/dc * dw, db/di_L)
        n_y = 3 * n_u + (3 if has_load else 0)
        b0, _, _ = b_vector(t, np.zeros((n_u, 3)), np.zeros(3))
        cols = np.zeros((n_x, n_y))
        for j in range(3 * n_u):
            unit_c = np.zeros(3 * n_u)
            unit_c[j] = 1.0
            bj, _, _ = b_vector(t, unit_c.reshape(n_u, 3), np.zeros(3))
            cols[:, j] = (bj - b0) * dw.ravel()[j]
        for j in range(3 if has_load else 0):
            unit_l = np.zeros(3)
            unit_l[j] = 1.0
            bj, _, _ = b_vector(t, np.zeros((n_u, 3)), unit_l)
            cols[:, 3 * n_u + j] = bj - b0
        x = a_inv @ cols
        out = np.empty((n_y, n_y))
        out[: 3 * n_u] = x[: 3 * n_u]
        if has_load:
            out[3 * n_u :] = x[3 * n_u + 3 : 3 * n_u + 6]
        return out

    def rhs(t: float, y: Array) -> Array:
        x, _, _, _ = solve(t, y)
        out = np.empty_like(y)
        out[: 3 * n_u] = x[: 3 * n_u]
        if has_load:
            out[3 * n_u :] = x[3 * n_u + 3 : 3 * n_u + 6]
        return out

    return rhs, solve, jac


@dataclass(frozen=True)
class RefResult:
    time_s: Array
    source_current_a: Array  # (3, n)
    line_current_a: Array  # (n_units, 3, n)
    winding_current_a: Array  # (n_units, 3, n)
    bus_voltage_v: Array  # (3, n)


def simulate(
    net: RefNetwork, t_eval: Array, rtol: float = 1e-10, method: str = "LSODA"
) -> RefResult:
    """Integrate the reference network and sample it at ``t_eval`` (from t = 0)."""
    n_u = len(net.units)
    lam0, il0 = steady_state(net)
    has_load = net.l_l > 0.0
    y = np.concatenate([lam0.ravel(), il0 if has_load else np.zeros(0)])
    t_end = float(t_eval[-1])
    switch = sorted(
        {
            float(tc)
            for u in net.units
            if not u.in_service
            for tc in (*u.close, *((u.t_bypass,) if u.r_ins > 0 else ()))
            if 0.0 < tc < t_end
        }
    )
    bounds = [0.0, *switch, t_end]
    lam_scale = max(u.knee for u in net.units)
    atol = np.full(y.size, 1e-11 * lam_scale)
    if has_load:
        atol[3 * n_u :] = 1e-11 * max(np.abs(il0).max(), 1.0)
    samples = np.full((y.size, t_eval.size), np.nan)
    extra = {"src": np.zeros((3, t_eval.size)), "bus": np.zeros((3, t_eval.size))}
    lines_out = np.zeros((n_u, 3, t_eval.size))
    wind_out = np.zeros((n_u, 3, t_eval.size))
    for seg in range(len(bounds) - 1):
        t0, t1 = bounds[seg], bounds[seg + 1]
        closed = np.array(
            [[u.in_service or tc <= t0 + 1e-15 for tc in u.close] for u in net.units], dtype=bool
        )
        topo = _Topology(net, closed)
        t = t0
        while t < t1:
            lam = y[: 3 * n_u].reshape(n_u, 3)
            knees = np.array([u.knee for u in net.units])[:, None]
            # which side of the knee each winding is on, looking at where it is heading
            rhs0, _, _ = _rhs_factory(net, topo, np.where(np.abs(lam) > knees, 1.0, -1.0))
            d0 = rhs0(t, y)[: 3 * n_u].reshape(n_u, 3)
            at = np.isclose(np.abs(lam), knees, rtol=0.0, atol=1e-12 * lam_scale)
            heading_out = np.sign(lam) * d0 > 0.0
            side = np.where(
                at, np.where(heading_out, 1.0, -1.0), np.where(np.abs(lam) > knees, 1.0, -1.0)
            )
            rhs, solve, jac = _rhs_factory(net, topo, side)
            events = []
            for k in range(n_u):
                for wi in range(3):
                    if not topo.on[k, wi]:
                        continue

                    def ev(tt: float, yy: Array, k: int = k, wi: int = wi) -> float:
                        return abs(yy[3 * k + wi]) - net.units[k].knee

                    ev.terminal = True  # type: ignore[attr-defined]
                    ev.direction = -side[k, wi]  # type: ignore[attr-defined]
                    events.append(ev)
            sol = solve_ivp(
                rhs, (t, t1), y, method=method, rtol=rtol, atol=atol, dense_output=True, jac=jac,
                events=events or None,
            )  # fmt: skip
            if not sol.success:
                raise RuntimeError(sol.message)
            t_stop = float(sol.t[-1])
            mask = (t_eval >= t - 1e-15) & (t_eval <= t_stop + 1e-15)
            if seg < len(bounds) - 2:
                mask &= t_eval < t1 - 1e-15  # the sample at a switching belongs to the next
            for idx in np.flatnonzero(mask):
                yy = sol.sol(t_eval[idx])
                samples[:, idx] = yy
                x, i_s, lines, cw = solve(float(t_eval[idx]), yy)
                extra["src"][:, idx] = i_s
                extra["bus"][:, idx] = x[3 * n_u : 3 * n_u + 3]
                lines_out[:, :, idx] = lines
                wind_out[:, :, idx] = cw
            y = sol.y[:, -1].copy()
            t = t_stop
    return RefResult(t_eval, extra["src"], lines_out, wind_out, extra["bus"])


def cycle_peaks(x: Array, samples_per_cycle: int, cycles: int) -> Array:
    """Largest |x| over each cycle [n*T, (n+1)*T) of samples along the last axis."""
    n = samples_per_cycle * cycles
    out: Array = np.abs(x[..., :n]).reshape(*x.shape[:-1], cycles, samples_per_cycle).max(-1)
    return out
