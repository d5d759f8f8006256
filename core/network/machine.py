"""A synchronous machine as the source of :func:`core.network.simulate_network`.

The machine is a three-phase EMF behind its subtransient impedance R_a + jX''_d (the
voltage-behind-subtransient-reactance form with X''_q = X''_d), the EMF evolving with the
machine's d-axis fluxes and its regulator. Per case, with the machine states per unit on its
rating:

* EMF of phase k, the rate of change of the rotor flux as it turns:
  e_k = sqrt(2)*V_r*(E''_q*sin(theta_k) - (dE''_q/dt/omega)*cos(theta_k)),
  theta_k = omega*t + alpha + (0, -120, +120 degrees), V_r the rated phase voltage; the second
  term (the transformer voltage of the decaying rotor flux) keeps the model passive;
* rotor d axis, the flux-decay equations of the subtransient model (leakage terms dropped)::

      T''_do dE''_q/dt = E'_q - E''_q - (X'_d - X''_d)*i_d
      T'_do  dE'_q/dt  = E_fd - E'_q - (X_d - X'_d)*i_d

  i_d = -(2/3)*sum_k i_sk*cos(theta_k)/(sqrt(2)*I_b), the instantaneous Park d component of
  the machine's terminal (source) currents in the EMF's frame per unit of rated current I_b,
  positive lagging: its mean is the fundamental positive-sequence reactive current, an
  inrush's DC offset and negative sequence appear in it as ripple at f and 2f that the rotor
  time constants filter;
* excitation: T_A dE_fd/dt = K_A*(V_ref - V_s) - E_fd, held within [floor, ceiling]
  (non-windup: the derivative is zero while at a limit and pushing past it, and E_fd is
  clipped after every step), V_s the magnitude of the bus-voltage space vector
  (2/3)*|sum_k v_k*exp(j*theta_k)|/(sqrt(2)*V_r) (positive and negative sequence, no zero
  sequence) through a transducer lag T_R (T_R = 0: no lag); or a constant field (no
  regulator); or, with ``dynamic`` False, a constant EMF E''_q (a utility source, or the
  machine frozen at its subtransient EMF).

The states E''_q, E'_q, E_fd, V_s are integrated with the same Runge-Kutta stages as the
network's loop fluxes. Before t = 0 the machine is at rest with the network's phasor steady
state: E'_q = E''_q + (X'_d - X''_d)*i_d0, E_fd = E'_q + (X_d - X'_d)*i_d0, V_s = |V_bus|,
V_ref = V_s + E_fd/K_A, i_d0 from the steady source current.

Approximations: machine speed constant (no governor, no frequency dip); q axis simplified
(X''_q = X''_d, E''_d = 0, no rotor-angle swing); unsaturated reactances; the source
zero-sequence impedance equal to X''_d (each phase a loop through the machine neutral).

References
----------
P. Kundur, "Power System Stability and Control", McGraw-Hill, 1994, ch. 4-5 (d-axis model and
time constants) and ch. 8 (excitation) -- from memory.
J. Machowski, J. W. Bialek, J. R. Bumby, "Power System Dynamics: Stability and Control", 2nd
ed., Wiley, 2008, ch. 11 (E'_q/E''_q generator model) -- from memory.
IEEE Std 421.5 (excitation-system model structure: regulator gain and time constant,
transducer lag, non-windup limits) -- from memory.
R. H. Park, "Two-reaction theory of synchronous machines," AIEE Trans. 48, 1929 (the d-q
transformation) -- from memory.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from core.errors import ParameterError
from core.network import kernel

FloatArray = NDArray[np.float64]

__all__ = ["Machine", "Regulator", "case_count", "impedance", "pack", "thevenin_pack"]


@dataclass(frozen=True)
class Regulator:
    """The machine's voltage regulator and exciter (first-order, with a transducer lag).

    Each attribute is a scalar or one value per case, shape (n_cases,).

    Attributes
    ----------
    gain_pu : array_like
        K_A, > 0 [pu of field voltage per pu of voltage].
    time_constant_s : array_like
        T_A, > 0 [s].
    ceiling_pu : array_like
        Largest field voltage [pu].
    floor_pu : array_like
        Smallest field voltage, below the ceiling [pu].
    sensing_time_constant_s : array_like
        T_R of the voltage transducer, >= 0 (0: none) [s].
    """

    gain_pu: ArrayLike
    time_constant_s: ArrayLike
    ceiling_pu: ArrayLike
    floor_pu: ArrayLike
    sensing_time_constant_s: ArrayLike = 0.0


@dataclass(frozen=True)
class Machine:
    """A synchronous machine (or, with ``dynamic`` False, a constant EMF) as network source.

    Every per-unit attribute is a scalar or one value per case, shape (n_cases,), so one call
    can simulate a machine at many ratings.

    Attributes
    ----------
    line_voltage_v : float
        Rated line-to-line voltage, the voltage base [V].
    frequency_hz : float
        [Hz].
    rating_va : array_like
        Rating, the power base [VA].
    x_d2_pu : array_like
        Subtransient reactance X''_d (= X''_q), > 0 (>= 0 for a frozen EMF: 0 is an ideal
        source) [pu].
    armature_resistance_pu : array_like
        R_a, >= 0 [pu].
    x_d1_pu, x_d_pu : array_like
        Transient and synchronous d-axis reactances, X''_d <= X'_d <= X_d (with ``dynamic``) [pu].
    t_d2o_s, t_d1o_s : array_like
        Open-circuit subtransient and transient time constants, > 0 (with ``dynamic``) [s].
    emf_pu : array_like
        E''_q before t = 0, > 0 [pu of rated phase voltage].
    regulator : Regulator or None
        The regulator; None for a constant field [-].
    dynamic : bool
        False freezes the EMF at ``emf_pu`` (no flux decay, no regulator) [-].
    """

    line_voltage_v: float
    frequency_hz: float
    rating_va: ArrayLike
    x_d2_pu: ArrayLike
    armature_resistance_pu: ArrayLike = 0.0
    x_d1_pu: ArrayLike = math.nan
    x_d_pu: ArrayLike = math.nan
    t_d2o_s: ArrayLike = math.nan
    t_d1o_s: ArrayLike = math.nan
    emf_pu: ArrayLike = 1.0
    regulator: Regulator | None = None
    dynamic: bool = True


def _fields(machine: Machine) -> dict[str, ArrayLike]:
    out: dict[str, ArrayLike] = {
        "rating_va": machine.rating_va,
        "x_d2_pu": machine.x_d2_pu,
        "armature_resistance_pu": machine.armature_resistance_pu,
        "emf_pu": machine.emf_pu,
    }
    if machine.dynamic:
        out |= {
            "x_d1_pu": machine.x_d1_pu,
            "x_d_pu": machine.x_d_pu,
            "t_d2o_s": machine.t_d2o_s,
            "t_d1o_s": machine.t_d1o_s,
        }
        reg = machine.regulator
        if reg is not None:
            out |= {
                "regulator.gain_pu": reg.gain_pu,
                "regulator.time_constant_s": reg.time_constant_s,
                "regulator.ceiling_pu": reg.ceiling_pu,
                "regulator.floor_pu": reg.floor_pu,
                "regulator.sensing_time_constant_s": reg.sensing_time_constant_s,
            }
    return out


def case_count(machine: Machine) -> int:
    """Cases the machine's per-case attributes imply: the largest of their sizes [-].

    Parameters
    ----------
    machine : Machine
        The machine [-].

    Returns
    -------
    int
        1 when every attribute is a scalar [-].

    Notes
    -----
    n = max over the attributes of their size (scalars 1); :func:`pack` checks each is 1 or n.

    References
    ----------
    This project's convention for per-case arrays.
    """
    return max(int(np.asarray(v).size) for v in _fields(machine).values())


def _arrays(machine: Machine, n: int) -> dict[str, FloatArray]:
    out = {}
    for name, value in _fields(machine).items():
        a = np.asarray(value, dtype=float).ravel()
        if a.size not in (1, n):
            raise ParameterError(f"source.{name}", f"{a.size} values", f"1 or {n}")
        if not np.all(np.isfinite(a)):
            raise ParameterError(f"source.{name}", a.tolist(), "finite numbers")
        out[name] = np.broadcast_to(a, (n,)).astype(float)
    positive = ["rating_va", "emf_pu", "t_d2o_s", "t_d1o_s"]
    if machine.dynamic:
        positive.append("x_d2_pu")
    elif np.any(out["x_d2_pu"] < 0.0):
        raise ParameterError("source.x_d2_pu", float(out["x_d2_pu"].min()), ">= 0")
    positive += ["regulator.gain_pu", "regulator.time_constant_s"]
    for name in positive:
        if name in out and np.any(out[name] <= 0.0):
            raise ParameterError(f"source.{name}", float(out[name].min()), "> 0")
    for name in ("armature_resistance_pu", "regulator.sensing_time_constant_s"):
        if name in out and np.any(out[name] < 0.0):
            raise ParameterError(f"source.{name}", float(out[name].min()), ">= 0")
    if machine.dynamic:
        if np.any(out["x_d1_pu"] < out["x_d2_pu"]) or np.any(out["x_d_pu"] < out["x_d1_pu"]):
            raise ParameterError("source.x_d1_pu", out["x_d1_pu"].tolist(), "X''_d <= X'_d <= X_d")
        if "regulator.floor_pu" in out and np.any(
            out["regulator.floor_pu"] >= out["regulator.ceiling_pu"]
        ):
            raise ParameterError("source.regulator.floor_pu", out["regulator.floor_pu"].tolist(),
                                 "below the ceiling")  # fmt: skip
    return out


def impedance(machine: Machine, n: int) -> tuple[FloatArray, FloatArray]:
    """Per-case source resistance and inductance of the machine: R_a and X''_d in ohms.

    Parameters
    ----------
    machine : Machine
        The machine [-].
    n : int
        Cases [-].

    Returns
    -------
    tuple of ndarray, shape (n,)
        (R [ohm], L [H]).

    Raises
    ------
    ParameterError
        On an attribute out of range or of the wrong size, naming it.

    Notes
    -----
    Z_b = V_LL^2/S, R = R_a*Z_b, L = X''_d*Z_b/omega (per-unit system, common practice).

    References
    ----------
    P. Kundur, 1994, ch. 3 (per-unit system) -- from memory.
    """
    a = _arrays(machine, n)
    zb = machine.line_voltage_v**2 / a["rating_va"]
    omega = 2.0 * math.pi * machine.frequency_hz
    r: FloatArray = a["armature_resistance_pu"] * zb
    ind: FloatArray = a["x_d2_pu"] * zb / omega
    return r, ind


def pack(
    machine: Machine, n: int, i_d0_a: FloatArray, v_bus0_pu: FloatArray
) -> tuple[FloatArray, FloatArray]:
    """Kernel columns and initial states of the machine, from the steady state before t = 0.

    Parameters
    ----------
    machine : Machine
        The machine [-].
    n : int
        Cases [-].
    i_d0_a : ndarray, shape (n,)
        Steady d-axis source current before t = 0, rms, positive lagging [A].
    v_bus0_pu : ndarray, shape (n,)
        Steady bus-voltage magnitude before t = 0 [pu of rated phase voltage].

    Returns
    -------
    tuple of ndarray
        (src, shape (n, kernel.NSRC); m0, shape (n, 4): E''_q, E'_q, E_fd, V_s [pu]).

    Raises
    ------
    ParameterError
        When the pre-event field voltage lies outside the regulator's limits, naming
        ``source.regulator.ceiling_pu``.

    Notes
    -----
    At rest: i_d0 [pu] = i_d0_a/I_b, I_b = S/(sqrt(3)*V_LL); E'_q = E''_q + (X'_d - X''_d)*i_d0,
    E_fd = E'_q + (X_d - X'_d)*i_d0, V_s = |V_bus|, V_ref = V_s + E_fd/K_A (the d-axis and
    regulator equations with zero derivatives).

    References
    ----------
    P. Kundur, 1994, ch. 5 and 8 -- from memory.
    """
    a = _arrays(machine, n)
    r, ind = impedance(machine, n)
    src, m0 = thevenin_pack(r, ind)
    i_b = a["rating_va"] / (math.sqrt(3.0) * machine.line_voltage_v)
    e2 = a["emf_pu"]
    m0[:, 0] = m0[:, 1] = m0[:, 2] = e2
    src[:, kernel.IB] = i_b
    if not machine.dynamic:
        return src, m0
    i_d = i_d0_a / i_b
    e1 = e2 + (a["x_d1_pu"] - a["x_d2_pu"]) * i_d
    efd = e1 + (a["x_d_pu"] - a["x_d1_pu"]) * i_d
    m0[:, 1], m0[:, 2], m0[:, 3] = e1, efd, v_bus0_pu
    src[:, kernel.DYN] = 1.0
    cols = [kernel.X2, kernel.X1, kernel.XD, kernel.T2O, kernel.T1O]
    src[:, cols] = np.stack([a[k] for k in ("x_d2_pu", "x_d1_pu", "x_d_pu", "t_d2o_s", "t_d1o_s")],
                            axis=1)  # fmt: skip
    if machine.regulator is None:
        return src, m0
    ka, ceiling, floor = a["regulator.gain_pu"], a["regulator.ceiling_pu"], a["regulator.floor_pu"]
    bad = (efd > ceiling) | (efd < floor)
    if np.any(bad):
        k = int(np.argmax(bad))
        raise ParameterError(
            "source.regulator.ceiling_pu",
            float(ceiling[k]),
            f"at least the pre-event field voltage {efd[k]:.4g} pu that the bus load needs "
            f"(and a floor below it, {floor[k]:.4g} pu given)",
        )
    src[:, kernel.AVR] = 1.0
    src[:, kernel.KA], src[:, kernel.TA] = ka, a["regulator.time_constant_s"]
    src[:, kernel.EMAX], src[:, kernel.EMIN] = ceiling, floor
    src[:, kernel.TR] = a["regulator.sensing_time_constant_s"]
    src[:, kernel.VREF] = v_bus0_pu + efd / ka
    return src, m0


def thevenin_pack(r_ohm: FloatArray, l_h: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Kernel columns and states of a constant unit EMF behind per-case R and L.

    Parameters
    ----------
    r_ohm : ndarray, shape (n,)
        Source resistance per phase [ohm].
    l_h : ndarray, shape (n,)
        Source inductance per phase [H].

    Returns
    -------
    tuple of ndarray
        (src, shape (n, kernel.NSRC); m0, shape (n, 4), E''_q = 1 and no dynamics) [-].

    Notes
    -----
    E''_q = 1 with DYN = 0: e_k = g*sqrt(2)*V/sqrt(3)*sin(theta_k), the Thevenin source; the
    unused time constants are set to 1 s so that no column divides by zero.

    References
    ----------
    Thevenin's theorem.
    """
    n = r_ohm.size
    src = np.zeros((n, kernel.NSRC))
    src[:, kernel.RS], src[:, kernel.LS] = r_ohm, l_h
    src[:, [kernel.T2O, kernel.T1O, kernel.TA, kernel.IB]] = 1.0
    return src, np.ones((n, kernel.NMACH))
