"""The dip family's cases as networks: a machine or utility source, the bus load, one unit.

:func:`core.supply.dip_cases.build_case` reduces a source, the bus load and the transformer's
event to a :class:`NetworkCase` (the pre-event steady state: the EMF and its angle behind the
source impedance that give the pre-event terminal voltage); :func:`simulate` runs cases on
:func:`core.network.simulate_network` (a :class:`core.network.Machine` with per-case data, the
unit behind its breaker with the poles, the pre-insertion resistor and its bypass) in chunks
that bound the memory of the per-step record, and reduces each chunk to the per-cycle values
the dip study reads (:class:`Cycles`). The circuit, the machine model and their references are
in :mod:`core.network.solver` and :mod:`core.network.machine`: the windings of a delta or a
floating wye are solved as the real three-phase circuit (the delta's loop through the
source, the floating neutral), the bus (the transformer terminals, on the source side of the
breaker) carries the load.
"""

from __future__ import annotations

import cmath
import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from core.errors import ParameterError
from core.network import (
    Breaker,
    BusLoad,
    Machine,
    NetworkResult,
    Regulator,
    Unit,
    insertion_substeps,
    simulate_network,
    step_plan,
)
from core.network import machine as network_machine
from core.network import peaks as network_peaks
from core.network.solver import MAX_STEPS_PER_CYCLE
from core.transformer.circuit_model import EquivalentCircuit

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]

__all__ = ["Cycles", "NetworkCase", "PreEvent", "insertion_limit_ohm", "pre_event", "simulate"]

# Bytes of per-step record a chunk of cases may hold (17 values a step and case: bus voltages,
# source, line and winding currents, fluxes, E''_q, E_fd; this project's choice). One case is
# never split: its record is bounded by the work budget instead (40 M winding-steps at
# core.cost.DIP_STEP_WEIGHT 30 is 1.3 M steps, 180 MB).
CHUNK_BYTES = 64_000_000
# X/R of the inductance given to a purely resistive bus load, which the network's load branch
# needs (this project's choice: 0.1 % reactive power).
RESISTIVE_LOAD_X_OVER_R = 1e-3


@dataclass(frozen=True)
class PreEvent:
    """The steady state before closing, for one source.

    Attributes
    ----------
    emf_pu : float
        E''_q, the EMF magnitude [pu of rated phase voltage].
    emf_angle_deg : float
        Phase-A EMF angle at t = 0 [deg].
    field_voltage_pu : float
        E_fd at rest (E''_q for a utility source) [pu].
    load : BusLoad or None
        The bus load as a network branch [-].
    """

    emf_pu: float
    emf_angle_deg: float
    field_voltage_pu: float
    load: BusLoad | None


@dataclass(frozen=True)
class NetworkCase:
    """One source's case: its data, the pre-event state, the unit and its resistor.

    ``machine`` is (X''_d, X'_d, X_d [pu], T''_do, T'_do [s], R_a [pu]) or None,
    ``regulator`` (K_A [pu], T_A [s], ceiling, floor [pu], T_R [s]) or None; ``impedance``
    (R [ohm], L [H]) of the source; ``base_va`` its power base [VA]; ``line_voltage_v`` its
    rated voltage [V]; ``residual_flux_pu`` (3,) [pu of lambda_N];
    ``insertion_resistance_ohm`` [ohm].
    """

    line_voltage_v: float
    base_va: float
    impedance: tuple[float, float]
    machine: tuple[float, float, float, float, float, float] | None
    regulator: tuple[float, float, float, float, float] | None
    state: PreEvent
    circuit: EquivalentCircuit
    residual_flux_pu: FloatArray
    insertion_resistance_ohm: float


@dataclass(frozen=True)
class Cycles:
    """Per-cycle values of a run, shapes (n_cases, 3, n_cycles) or (n_cases, n_cycles).

    ``v2`` and ``vll2`` are the per-cycle sums of the squared phase and line voltages [V^2],
    ``i2`` of the squared transformer line currents [A^2], ``peaks`` the per-cycle peak |i|
    [A], ``emf`` and ``field`` the per-cycle sums of E''_q and E_fd [pu]; ``wave_v``,
    ``wave_i`` the decimated bus phase voltages [V] and line currents [A], (n_cases, 3,
    n_wave); ``energy`` (n_cases,) the resistor's absorbed energy [J]; ``substeps``
    (n_cases,) the sub-steps while it is in [-]; ``pole_close_s`` (3,) the pole instants on
    the step [s].
    """

    v2: FloatArray
    vll2: FloatArray
    i2: FloatArray
    peaks: FloatArray
    emf: FloatArray
    field: FloatArray
    wave_v: FloatArray
    wave_i: FloatArray
    energy: FloatArray
    substeps: IntArray
    pole_close_s: FloatArray


def _field_at_rest(
    machine: tuple[float, ...] | None, e2: float, i_d0: float
) -> tuple[float, float]:
    # E'_q and E_fd of the d-axis equations at rest (E''_q for a constant EMF)
    if machine is None:
        return e2, e2
    x2, x1, xd = machine[0], machine[1], machine[2]
    e1 = e2 + (x1 - x2) * i_d0
    return e1, e1 + (xd - x1) * i_d0


def pre_event(
    line_voltage_v: float,
    frequency_hz: float,
    impedance: tuple[float, float],
    base_va: float,
    machine: tuple[float, float, float, float, float, float] | None,
    load_w_var: tuple[float, float] | None,
    v0_pu: float,
    closing_angle_deg: float,
) -> PreEvent:
    """Steady state before closing: the EMF behind the source impedance that feeds the load.

    Parameters
    ----------
    line_voltage_v : float
        Rated line voltage, the voltage base [V].
    frequency_hz : float
        [Hz].
    impedance : tuple of float
        Source resistance R and inductance L per phase [ohm, H].
    base_va : float
        Power base of the per-unit currents [VA].
    machine : tuple of float or None
        (X''_d, X'_d, X_d, T''_do, T'_do, R_a); None for a constant EMF [pu, pu, pu, s, s, pu].
    load_w_var : tuple of float or None
        Bus load (P, Q) at rated voltage, constant impedance [W, var].
    v0_pu : float
        Pre-event terminal voltage [pu].
    closing_angle_deg : float
        Phase-A terminal-voltage angle at t = 0 [deg].

    Returns
    -------
    PreEvent

    Notes
    -----
    Phasors, sine convention: V = V_0∠alpha, I_L = V/Z_L, Z_L = V_LL^2/S* per phase (wye),
    E'' = V + (R + jX)*I_L; the EMF angle is that of E''; in its frame
    I_q - j*I_d = I_L*e^(-j*beta)/I_b and E_fd follows from the d-axis equations at rest.

    References
    ----------
    Kirchhoff's laws; P. Kundur, 1994, ch. 5 (the d-axis equations) -- from memory.
    """
    omega = 2.0 * math.pi * frequency_hz
    v_ph = line_voltage_v / math.sqrt(3.0)
    v_bus = cmath.rect(v0_pu * v_ph, math.radians(closing_angle_deg))
    i_l = 0j
    load = None
    if load_w_var is not None:
        p, q = load_w_var
        if q <= 0.0:
            q = RESISTIVE_LOAD_X_OVER_R * p
        load = BusLoad.from_power(line_voltage_v, frequency_hz, p, q)
        i_l = v_bus / complex(load.resistance_ohm, omega * load.inductance_h)
    emf = v_bus + complex(impedance[0], omega * impedance[1]) * i_l
    beta = cmath.phase(emf)
    i_base = base_va / (math.sqrt(3.0) * line_voltage_v)
    i_d0 = -(i_l * cmath.rect(1.0, -beta) / i_base).imag
    e2 = abs(emf) / v_ph
    _, efd = _field_at_rest(machine, e2, i_d0)
    return PreEvent(e2, math.degrees(beta), efd, load)


def insertion_limit_ohm(
    circuit: EquivalentCircuit, impedance: tuple[float, float], frequency_hz: float
) -> float:
    """Largest pre-insertion resistor the finest step allows for this unit and source [ohm].

    Parameters
    ----------
    circuit : EquivalentCircuit
        The transformer [-].
    impedance : tuple of float
        Source resistance R and inductance L per phase [ohm, H].
    frequency_hz : float
        [Hz].

    Returns
    -------
    float
        R_max = ((L_air + L_s)*f*MAX_STEPS_PER_CYCLE/4 - R_w - 2*R_s)/k [ohm].

    Notes
    -----
    The inserted loop's time constant (L_air + L_s)/(R_w + 2*R_s + k*R), k = 3 for a delta
    and 1 for a wye (the rule of :func:`core.network.insertion_substeps`), at 4 steps of
    1/(f*MAX_STEPS_PER_CYCLE) or more.

    References
    ----------
    This project's step rule (four steps per saturated time constant).
    """
    r_s, l_s = impedance
    k = 3.0 if circuit.connection == "delta" else 1.0
    room = (circuit.air_core_inductance_h + l_s) * frequency_hz * MAX_STEPS_PER_CYCLE / 4.0
    return (room - circuit.winding_resistance_ohm - 2.0 * r_s) / k


def _machine(cases: Sequence[NetworkCase], frequency_hz: float) -> Machine:
    # one network source for the cases: per-case ratings, reactances, time constants, EMFs
    first = cases[0]
    omega = 2.0 * math.pi * frequency_hz
    zb = np.array([first.line_voltage_v**2 / c.base_va for c in cases])
    emf = np.array([c.state.emf_pu for c in cases])
    rating = np.array([c.base_va for c in cases])
    if first.machine is None:
        r = np.array([c.impedance[0] for c in cases]) / zb
        x = np.array([c.impedance[1] for c in cases]) * omega / zb
        return Machine(first.line_voltage_v, frequency_hz, rating, x, r, emf_pu=emf,
                       dynamic=False)  # fmt: skip
    m = np.array([c.machine for c in cases])
    reg = None
    if first.regulator is not None:
        g = np.array([c.regulator for c in cases])
        reg = Regulator(g[:, 0], g[:, 1], g[:, 2], g[:, 3], g[:, 4])
    return Machine(
        first.line_voltage_v, frequency_hz, rating, m[:, 0], m[:, 5], m[:, 1], m[:, 2],
        m[:, 3], m[:, 4], emf, reg,
    )  # fmt: skip


def _check_alike(cases: Sequence[NetworkCase]) -> None:
    first = cases[0]
    for c in cases[1:]:
        same = (
            c.circuit is first.circuit
            and c.line_voltage_v == first.line_voltage_v
            and (c.machine is None) == (first.machine is None)
            and (c.regulator is None) == (first.regulator is None)
            and c.state.load == first.state.load
            and c.insertion_resistance_ohm == first.insertion_resistance_ohm
        )
        if not same:
            raise ParameterError(
                "cases", "cases of different circuits, loads, resistors or source kinds",
                "one circuit, bus load, resistor and source kind for every case of a run",
            )  # fmt: skip


def _units(cases: Sequence[NetworkCase], poles_s: FloatArray, bypass_s: float) -> list[Unit]:
    # the one unit behind its breaker, its residual flux per case
    first = cases[0]
    r_ins = first.insertion_resistance_ohm if bypass_s > 0.0 else 0.0
    breaker = Breaker(poles_s, r_ins, bypass_s)
    residual = np.array([c.residual_flux_pu for c in cases])
    return [Unit(first.circuit, breaker, residual_flux_pu=residual)]


def plan(
    cases: Sequence[NetworkCase],
    frequency_hz: float,
    duration_s: float,
    steps_per_cycle: int,
) -> int:
    """Steps per cycle for the cases: the network's rule from ``steps_per_cycle`` up [-].

    Parameters
    ----------
    cases : sequence of NetworkCase
        The cases, alike but for the source (:func:`simulate`) [-].
    frequency_hz : float
        [Hz].
    duration_s : float
        Simulated time [s].
    steps_per_cycle : int
        Least steps per cycle [-].

    Returns
    -------
    int
        spc = steps_per_cycle*ceil(need/steps_per_cycle) (:func:`core.network.step_plan`,
        the resistor sub-stepped) [-].

    Notes
    -----
    need = max(128, 4/(f*tau_min)) over every case's loops and machine time constants.

    References
    ----------
    This project's step rule.
    """
    _check_alike(cases)
    machine = _machine(cases, frequency_hz)
    units = _units(cases, np.zeros(3), 0.0)
    _, spc, _ = step_plan(
        machine, units, duration_s, cases[0].state.load, steps_per_cycle, substep_insertion=True
    )
    return spc


def _reduce(
    res: NetworkResult, spc: int, n_cyc: int, stride: int, peaks: FloatArray
) -> list[FloatArray]:
    # the chunk's record to per-cycle sums and the decimated waveforms
    n = n_cyc * spc
    v = res.bus_voltage_v
    i = res.line_current_a[:, 0]

    def cyc(x: FloatArray) -> FloatArray:
        out: FloatArray = x[..., :n].reshape(*x.shape[:-1], n_cyc, spc).sum(-1)
        return out

    vll = v - np.roll(v, -1, axis=1)
    wave_v = v[..., ::stride] if stride else v[..., :0]
    wave_i = i[..., ::stride] if stride else i[..., :0]
    return [
        cyc(v * v), cyc(vll * vll), cyc(i * i), peaks,
        cyc(res.emf_pu), cyc(res.field_voltage_pu), wave_v, wave_i,
        res.insertion_energy_j[:, 0],
    ]  # fmt: skip


def simulate(
    cases: Sequence[NetworkCase],
    frequency_hz: float,
    spc: int,
    n_cycles: int,
    poles_s: FloatArray,
    bypass_s: float,
    stride: int,
    exact_peaks: bool = True,
) -> Cycles:
    """Run the cases on the network solver in chunks and reduce each to per-cycle values.

    Parameters
    ----------
    cases : sequence of NetworkCase
        Alike but for the source [-].
    frequency_hz : float
        [Hz].
    spc : int
        Steps per cycle, from :func:`plan` [-].
    n_cycles : int
        Whole cycles simulated, >= 1 [-].
    poles_s : ndarray, shape (3,)
        Pole closing instants, on the step [s].
    bypass_s : float
        The resistor's bypass instant on the step, 0 for no resistor [s].
    stride : int
        Keep every stride-th step in the waveforms, 0 for none [-].
    exact_peaks : bool
        Read the per-cycle peaks (exactly); False leaves them NaN, for callers that do not
        use them [-].

    Returns
    -------
    Cycles

    Notes
    -----
    Every step is a sample (samples_per_cycle = spc); a chunk holds at most CHUNK_BYTES of
    record, so the memory does not grow with the number of cases. The per-cycle sums are over
    the samples of [nT, (n+1)T); the peak of each line and cycle is read exactly, the network
    integrated again around the cycle's largest sample (:func:`core.network.peaks.
    line_cycle_peaks`).

    References
    ----------
    :func:`core.network.simulate_network`.
    """
    _check_alike(cases)
    n_samples = n_cycles * spc + 1
    size = max(1, CHUNK_BYTES // (17 * 8 * n_samples))
    parts: list[list[FloatArray]] = []
    subs: list[IntArray] = []
    closing = np.zeros(3)
    for start in range(0, len(cases), size):
        chunk = cases[start : start + size]
        machine = _machine(chunk, frequency_hz)
        units = _units(chunk, poles_s, bypass_s)
        res = simulate_network(
            machine, units, closing_angle_deg=np.array([c.state.emf_angle_deg for c in chunk]),
            duration_s=n_cycles / frequency_hz, load=chunk[0].state.load,
            samples_per_cycle=spc, substep_insertion=True,
        )  # fmt: skip
        if res.steps_per_cycle != spc:
            raise ParameterError("steps_per_cycle", res.steps_per_cycle, f"the planned {spc}")
        # the transformer's per-cycle peaks read exactly (the network re-integrated around
        # each cycle's largest sample of each line)
        load = chunk[0].state.load
        if exact_peaks:
            exact = network_peaks.line_cycle_peaks(machine, units, load, res, 0, n_cycles)
        else:
            exact = np.full((len(chunk), 3, n_cycles), np.nan)
        parts.append(_reduce(res, spc, n_cycles, stride, exact))
        subs.append(_substeps(machine, units, spc, bypass_s))
        closing = res.closing_time_s[0, 0]
    v2, vll2, i2, peaks, emf, fld, wave_v, wave_i, energy = (
        np.concatenate([p[k] for p in parts]) for k in range(len(parts[0]))
    )
    return Cycles(
        v2, vll2, i2, peaks, emf, fld, wave_v, wave_i, energy, np.concatenate(subs), closing
    )


def _substeps(machine: Machine, units: Sequence[Unit], spc: int, bypass_s: float) -> IntArray:
    # sub-steps per step while the resistor is in, per case, as the solver splits them
    n = network_machine.case_count(machine)
    if bypass_s <= 0.0 or units[0].breaker.insertion_resistance_ohm <= 0.0:
        return np.ones(n, dtype=np.int64)
    out: IntArray = np.broadcast_to(insertion_substeps(machine, units, spc), (n,)).copy()
    return out
