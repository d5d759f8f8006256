"""Independent reference for core.network's machine source: one unit on a synchronous machine.

Nothing here calls the code under test; only the inputs are shared (machine data, the unit's
winding resistance, two-slope curve, connection and residual flux). Written from the circuit
laws and the machine equations (the voltage-behind-subtransient-reactance model with
X''_q = X''_d, the d-axis flux-decay equations and a first-order regulator with a transducer
lag; P. Kundur, "Power System Stability and Control", McGraw-Hill, 1994, ch. 4-5 and 8, from
memory), in a formulation unlike the solver's: the states are the winding flux linkages lambda
and the machine states E''_q, E'_q, E_fd, V_s; at every right-hand-side call the winding
currents c = f(lambda) give the line (machine) currents i = C*c, the Park d current
i_d = -(2/3)*sum_k i_k*cos(theta_k)/(sqrt(2)*I_b), the d-axis rates and the EMF
e_k = sqrt(2)*V_r*(E''_q*sin(theta_k) - (dE''_q/dt/omega)*cos(theta_k)); then one dense
linear system (numpy.linalg.solve) gives the flux rates lambda' and the terminal voltages v:

* per phase: v_k + L*(C*D*lambda')_k = e_k - R*i_k (KVL through the machine impedance),
* per winding: lambda'_w - (C^T v)_w = -R_w*c_w (KVL around the winding),

and V_s' = (|v|_space - V_s)/T_R, E_fd' = (K_A*(V_ref - V_s) - E_fd)/T_A with
|v|_space = (2/3)*|sum_k v_k*exp(j*theta_k)|/(sqrt(2)*V_r). scipy.integrate.solve_ivp (Radau,
rtol 1e-10) integrates it, stopping at every knee crossing (terminal events, the fixed side of
the knee on each piece keeps every piece smooth). The regulator's limits are not modelled: the
tests choose limits the field does not reach (and check it). Integrator: E. Hairer,
G. Wanner, "Solving Ordinary Differential Equations II", Springer, 1996 (Radau IIA; from
memory).
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
class RefMachine:
    """Machine data (SI and per unit on its rating) and the regulator."""

    v_ll: float  # rated line voltage [V]
    f: float  # [Hz]
    s_va: float  # rating [VA]
    x2: float  # X''_d [pu]
    x1: float  # X'_d [pu]
    xd: float  # X_d [pu]
    t2o: float  # T''_do [s]
    t1o: float  # T'_do [s]
    ra: float  # R_a [pu]
    ka: float  # regulator gain [pu]
    ta: float  # [s]
    tr: float  # transducer lag [s]


@dataclass(frozen=True)
class RefWinding:
    connection: str  # "wye_grounded" or "delta"
    r_w: float  # [ohm]
    l_m: float  # unsaturated slope [H]
    knee: float  # [Wb-turn]
    l_air: float  # saturated slope [H]
    lam0: tuple[float, float, float]  # residual flux [Wb-turn]


def _incidence(conn: str) -> Array:
    if conn == "delta":
        return np.array([[1.0, 0.0, -1.0], [-1.0, 1.0, 0.0], [0.0, -1.0, 1.0]])
    return np.eye(3)


def _rhs(m: RefMachine, u: RefWinding, alpha_deg: float, side: Array):  # type: ignore[no-untyped-def]
    w = 2.0 * math.pi * m.f
    zb = m.v_ll**2 / m.s_va
    r, ell = m.ra * zb, m.x2 * zb / w
    vr = m.v_ll / math.sqrt(3.0)
    ib = m.s_va / (math.sqrt(3.0) * m.v_ll)
    cm = _incidence(u.connection)
    slope = np.where(side > 0, 1.0 / u.l_air, 1.0 / u.l_m)
    a = np.zeros((6, 6))
    a[:3, 3:] = np.eye(3)
    a[:3, :3] = ell * cm * slope[None, :]
    a[3:, :3] = np.eye(3)
    a[3:, 3:] = -cm.T
    a_inv = np.linalg.inv(a)
    vref = 1.0 + 1.0 / m.ka  # at rest, no load: E_fd = 1, V_s = 1

    def evaluate(t: float, y: Array) -> tuple[Array, Array, Array]:
        lam, (e2, e1, efd, vs) = y[:3], y[3:]
        x = np.abs(lam)
        mag = np.where(side > 0, u.knee / u.l_m + (x - u.knee) / u.l_air, x / u.l_m)
        c = np.sign(lam) * mag
        i = cm @ c
        th = w * t + math.radians(alpha_deg) + SHIFT
        i_d = -(2.0 / 3.0) * float(np.sum(i * np.cos(th))) / (math.sqrt(2.0) * ib)
        d2 = (e1 - e2 - (m.x1 - m.x2) * i_d) / m.t2o
        d1 = (efd - e1 - (m.xd - m.x1) * i_d) / m.t1o
        e = math.sqrt(2.0) * vr * (e2 * np.sin(th) - d2 / w * np.cos(th))
        b = np.concatenate([e - r * i, -u.r_w * c])
        sol = a_inv @ b
        v = sol[3:]
        mag_v = (2.0 / 3.0) * abs(np.sum(v * np.exp(1j * th))) / (math.sqrt(2.0) * vr)
        dvs = (mag_v - vs) / m.tr
        dfd = (m.ka * (vref - vs) - efd) / m.ta
        return np.concatenate([sol[:3], [d2, d1, dfd, dvs]]), i, v

    return evaluate


@dataclass(frozen=True)
class RefResult:
    line_current_a: Array  # (3, n)
    bus_voltage_v: Array  # (3, n)
    states: Array  # (7, n): lambda, E''_q, E'_q, E_fd, V_s


def simulate(
    m: RefMachine, u: RefWinding, alpha_deg: float, t_eval: Array, rtol: float = 1e-10
) -> RefResult:
    """Integrate from rest (E''_q = E'_q = E_fd = V_s = 1, no load) and sample at t_eval."""
    y = np.array([*u.lam0, 1.0, 1.0, 1.0, 1.0])
    t_end = float(t_eval[-1])
    atol = np.array([1e-11 * u.knee] * 3 + [1e-12] * 4)
    out_i = np.zeros((3, t_eval.size))
    out_v = np.zeros((3, t_eval.size))
    out_y = np.zeros((7, t_eval.size))
    t = 0.0
    while t < t_end:
        lam = y[:3]
        rough = np.where(np.abs(lam) > u.knee, 1.0, -1.0)
        d0 = _rhs(m, u, alpha_deg, rough)(t, y)[0][:3]
        at = np.isclose(np.abs(lam), u.knee, rtol=0.0, atol=1e-12 * u.knee)
        side = np.where(at, np.where(np.sign(lam) * d0 > 0.0, 1.0, -1.0), rough)
        evaluate = _rhs(m, u, alpha_deg, side)
        events = []
        for k in range(3):

            def ev(tt: float, yy: Array, k: int = k) -> float:
                return float(abs(yy[k]) - u.knee)

            ev.terminal = True  # type: ignore[attr-defined]
            ev.direction = -side[k]  # type: ignore[attr-defined]
            events.append(ev)

        def rates(tt: float, yy: Array, evaluate=evaluate) -> Array:  # type: ignore[no-untyped-def]
            out: Array = evaluate(tt, yy)[0]
            return out

        sol = solve_ivp(
            rates, (t, t_end), y, method="Radau", rtol=rtol,
            atol=atol, dense_output=True, events=events,
        )  # fmt: skip
        if not sol.success:
            raise RuntimeError(sol.message)
        t_stop = float(sol.t[-1])
        for idx in np.flatnonzero((t_eval >= t - 1e-15) & (t_eval <= t_stop + 1e-15)):
            yy = sol.sol(t_eval[idx])
            _, i, v = evaluate(float(t_eval[idx]), yy)
            out_i[:, idx], out_v[:, idx], out_y[:, idx] = i, v, yy
        y = sol.y[:, -1].copy()
        t = t_stop
    return RefResult(out_i, out_v, out_y)
