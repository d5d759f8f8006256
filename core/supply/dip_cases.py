"""Case building, step planning and validation behind :mod:`core.supply.dip`.

:func:`build_case` reduces a source and a transformer's event to a network case together with
the pre-event steady state (:mod:`core.supply.dip_network`); :func:`run` chooses the step (at
least 128 per cycle, short enough for every time constant, with sub-steps while a
pre-insertion resistor is in), puts the breaker poles' closing instants and the bypass on the
step grid, runs every case on the network solver (:func:`core.network.simulate_network` with a
:class:`core.network.Machine` source) and returns per-cycle results. The equations are in
:mod:`core.network.solver` and :mod:`core.network.machine`; the dip study's physics and
references in :mod:`core.supply.dip` and :mod:`core.supply.sources`.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Protocol

import numpy as np
from numpy.typing import ArrayLike, NDArray

from core import checks
from core.energization.switching_event import SwitchingEvent
from core.errors import ParameterError
from core.network import BusLoad
from core.supply import dip_network
from core.supply.dip_network import NetworkCase as Case
from core.transformer.circuit_model import EquivalentCircuit

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]


class SourceLike(Protocol):
    """Anything with a rated line voltage [V] and frequency [Hz]."""

    @property
    def line_voltage_v(self) -> float: ...
    @property
    def frequency_hz(self) -> float: ...


__all__ = [
    "Case",
    "Raw",
    "SourceParameters",
    "build_case",
    "check_inputs",
    "check_insertion",
    "check_poles",
    "cycle_steps",
    "run",
]

# steps per cycle floor: common practice of this project (core.energization.energize uses the same
# floor); the ceiling bounds the work.
MIN_STEPS_PER_CYCLE = 128
MAX_STEPS_PER_CYCLE = 16384


@dataclass(frozen=True)
class SourceParameters:
    """A source reduced to numbers for :func:`build_case`.

    Attributes
    ----------
    line_voltage_v : float
        Rated line-to-line voltage, the voltage base [V].
    resistance_ohm, inductance_h : float
        Per-phase source impedance [ohm], [H].
    base_va : float
        Power base of the per-unit currents [VA].
    machine : tuple of float or None
        (X''_d, X'_d, X_d [pu], T''_do, T'_do [s], R_a [pu]) for a machine; None for a constant
        EMF.
    regulator : tuple of float or None
        (K_A [pu], T_A [s], ceiling, floor [pu], T_R [s]); None for a constant field.
    """

    line_voltage_v: float
    resistance_ohm: float
    inductance_h: float
    base_va: float
    machine: tuple[float, float, float, float, float, float] | None = None
    regulator: tuple[float, float, float, float, float] | None = None


def build_case(
    src: SourceParameters,
    circuit: EquivalentCircuit,
    event: SwitchingEvent,
    load_w_var: tuple[float, float] | None,
    v0_pu: float,
) -> Case:
    """One case and its pre-event steady state.

    Parameters
    ----------
    src : SourceParameters
        The source [-].
    circuit : EquivalentCircuit
        Three-phase transformer circuit (its own source impedance is ignored) [-].
    event : SwitchingEvent
        The energisation, checked by :func:`check_inputs`: its closing angle (phase-A terminal
        voltage angle at t = 0), residual flux per winding and pre-insertion resistor in each
        line to the transformer are taken here; whether and how long the resistor is in, and
        the pole instants, are decided by :func:`run` [-].
    load_w_var : tuple of float or None
        Bus load (P, Q) at rated voltage, constant impedance; None for none [W, var].
    v0_pu : float
        Pre-event terminal voltage [pu].

    Returns
    -------
    Case

    Raises
    ------
    ParameterError
        Naming ``excitation.ceiling_pu`` when the regulator cannot hold the pre-event field,
        ``bus_load.reactive_power_var`` when the load loop is too stiff for the step.

    Notes
    -----
    Steady state before closing (:func:`core.supply.dip_network.pre_event`): V = V_0∠alpha,
    I_L = V/Z_L, E'' = V + (R + jX)*I_L; E'_q = E''_q + (X'_d - X''_d)*I_d,
    E_fd = E'_q + (X_d - X'_d)*I_d. A purely resistive load is given an inductance of
    0.1 % of its resistance (the network's load branch needs one).

    References
    ----------
    Kirchhoff's laws; P. Kundur, 1994, ch. 5 and 8 -- from memory.
    """
    f = circuit.frequency_hz
    impedance = (src.resistance_ohm, src.inductance_h)
    state = dip_network.pre_event(
        src.line_voltage_v, f, impedance, src.base_va, src.machine, load_w_var, v0_pu,
        event.closing_angle_deg,
    )  # fmt: skip
    _check_field(src, state.field_voltage_pu)
    if state.load is not None and load_w_var is not None:
        _check_load_loop(state.load, impedance, f, load_w_var[1])
    return Case(
        src.line_voltage_v, src.base_va, impedance, src.machine, src.regulator, state, circuit,
        np.asarray(event.residual_flux_pu, dtype=float), float(event.insertion_resistance_ohm),
    )  # fmt: skip


def _check_field(src: SourceParameters, efd: float) -> None:
    # the regulator must hold the field the bus load needs before the event
    if src.machine is None or src.regulator is None:
        return
    _, _, emax, emin, _ = src.regulator
    if not emin <= efd <= emax:
        raise ParameterError(
            "excitation.ceiling_pu",
            emax,
            f"at least the pre-event field voltage {efd:.4g} pu that the bus load needs",
        )


def _check_load_loop(load: BusLoad, impedance: tuple[float, float], f: float, q_var: float) -> None:
    # the load loop's time constant (L_L + L_s)/(R_L + R_s) must reach 4 of the finest steps
    r_loop = load.resistance_ohm + impedance[0]
    tau = (load.inductance_h + impedance[1]) / r_loop if r_loop > 0.0 else math.inf
    if tau * f * MAX_STEPS_PER_CYCLE < 4.0:
        raise ParameterError(
            "bus_load.reactive_power_var",
            q_var,
            "enough reactive power that the load loop's time constant "
            f"(L_L + L_s)/(R_L + R_s) = {tau:.3g} s reaches "
            f"{4.0 / (f * MAX_STEPS_PER_CYCLE):.3g} s (a nearly resistive load on the "
            "source inductance is too stiff for the fixed step)",
        )


@dataclass(frozen=True)
class Raw:
    """Kernel output: per-cycle values, shapes (n_cases, 3, n_cycles) or (n_cases, n_cycles).

    ``insertion_energy_j`` (n_cases,) is the energy each case's pre-insertion resistor absorbs
    [J]; ``bypass_time_s`` the instant it is bypassed, on the step grid (0 when it is never in,
    past the simulated time when it is never bypassed) [s]; ``insertion_substeps`` (n_cases,)
    the sub-steps per step while it is in [-]; ``pole_close_s`` (3,) the closing instant of
    each pole on the step grid [s].
    """

    steps_per_cycle: int
    v_rms_pu: FloatArray
    v_line_rms_pu: FloatArray
    i_rms_a: FloatArray
    peaks_a: FloatArray
    emf_pu: FloatArray
    field_pu: FloatArray
    wave_t_s: FloatArray
    wave_v: FloatArray
    wave_i: FloatArray
    insertion_energy_j: FloatArray = field(default_factory=lambda: np.zeros(0))
    bypass_time_s: float = 0.0
    insertion_substeps: IntArray = field(default_factory=lambda: np.ones(0, dtype=np.int64))
    pole_close_s: FloatArray = field(default_factory=lambda: np.zeros(3))


def cycle_steps(frequency_hz: float, duration_s: float, steps_per_cycle: int) -> int:
    """Steps of a dip run: the whole cycles up to ``duration_s``, each of the given steps.

    Parameters
    ----------
    frequency_hz : float
        Frequency [Hz].
    duration_s : float
        Simulated time [s].
    steps_per_cycle : int
        Steps per cycle [-].

    Returns
    -------
    int
        floor(T*f) x steps per cycle (0 when T is shorter than a cycle) [-].

    Notes
    -----
    n = floor(T*f + 1e-9)*spc: :func:`run` simulates whole cycles only (the 1e-9 keeps a
    duration of exactly k cycles at k despite rounding).

    References
    ----------
    This project's dip solver (:func:`run`).
    """
    return math.floor(duration_s * frequency_hz + 1e-9) * steps_per_cycle


def run(
    cases: Sequence[Case],
    frequency_hz: float,
    voltage_base_v: float,
    duration_s: float,
    steps_per_cycle: int,
    wave_points: int,
    *,
    event: SwitchingEvent | None = None,
    exact_peaks: bool = False,
) -> Raw:
    """Integrate every case over whole cycles.

    Parameters
    ----------
    cases : sequence of Case
        One circuit, bus load, resistor and source kind for all [-].
    frequency_hz : float
        [Hz].
    voltage_base_v : float
        Rated phase voltage of the per-unit outputs [V].
    duration_s : float
        Whole cycles up to this time are simulated [s].
    steps_per_cycle : int
        At least 128; raised to a multiple of it when a time constant needs a shorter step
        (:func:`core.network.step_plan`) [-].
    wave_points : int
        About this many waveform samples returned (0: none) [-].
    event : SwitchingEvent or None
        The energisation the cases were built for; its timing is used here, the same for every
        case: each case's pre-insertion resistor (:func:`build_case`) is in from t = 0 to
        ``event.insertion_time_s`` rounded to the nearest step, then bypassed (nothing changes
        when that is 0 or every case's resistor is 0); poles a, b and c close at
        ``event.pole_delay_s``, each in [0, duration_s) (see :func:`check_poles`), rounded to
        the nearest step. None for all poles at t = 0 and no resistor [-].
    exact_peaks : bool
        Read each line's per-cycle peak exactly (:func:`core.network.peaks.line_cycle_peaks`);
        False leaves ``peaks_a`` NaN [-].

    Returns
    -------
    Raw

    Raises
    ------
    ParameterError
        When a time constant needs more than MAX_STEPS_PER_CYCLE steps per cycle: naming
        ``time_constants``, or ``insertion_resistance_ohm`` with the largest resistor the
        circuit allows; naming ``pole_delay_s`` when a pole would close at or after the end of
        the whole cycles simulated.

    Notes
    -----
    While the resistor is in, each step of each case is split into the fewest equal sub-steps
    that keep the sub-step at or below a quarter of that case's shortest time constant with it
    in (:func:`core.network.insertion_substeps`), the outputs staying on the step grid.

    The unit's poles follow the real circuit (:mod:`core.network.solver`): a grounded-wye
    winding conducts from its pole's closing, a floating wye and a delta from the second
    pole's (a delta's two windings on the open terminal in series until the third). The bus
    load is on the source side of the breaker and sees no pole. The pre-insertion resistor
    is timed from t = 0 whatever the poles do.
    """
    delays = check_poles(0.0 if event is None else event.pole_delay_s, duration_s)
    insertion_time_s = 0.0 if event is None else event.insertion_time_s
    f = frequency_hz
    if not (isinstance(steps_per_cycle, int) and steps_per_cycle >= MIN_STEPS_PER_CYCLE):
        raise ParameterError("steps_per_cycle", steps_per_cycle, "an integer >= 128")
    n_cyc = cycle_steps(f, duration_s, 1)
    if n_cyc < 1:
        raise ParameterError("duration_s", duration_s, f">= one cycle ({1.0 / f:g} s)")
    spc = _plan(cases, f, n_cyc, steps_per_cycle)
    h = 1.0 / (f * spc)
    n_steps = n_cyc * spc
    n_in = _insertion_steps(cases, f, spc, insertion_time_s)
    pole_step = np.floor(delays * f * spc + 0.5).astype(np.int64)
    if pole_step.max() >= n_steps:
        raise ParameterError(
            "pole_delay_s",
            float(delays.max()),
            f"before the end of the whole cycles simulated, {n_cyc / f:g} s, by at least "
            f"half an internal step ({0.5 * h:.3g} s)",
        )
    stride = max(1, math.ceil((n_steps + 1) / wave_points)) if wave_points > 0 else 0
    poles_s = np.asarray(pole_step * h, dtype=np.float64)
    out = dip_network.simulate(cases, f, spc, n_cyc, poles_s, n_in * h, stride, exact_peaks)
    if not np.all(np.isfinite(out.v2)):
        raise ParameterError("circuit", "non-finite result", "a circuit that stays finite")
    return _raw(cases, out, spc, voltage_base_v, h * stride, n_in * h)


def _plan(cases: Sequence[Case], f: float, n_cyc: int, steps_per_cycle: int) -> int:
    # the network's step, its error named as the dip family names it
    try:
        return dip_network.plan(cases, f, n_cyc / f, steps_per_cycle)
    except ParameterError as exc:
        if exc.parameter != "resistance_ohm":
            raise
        raise ParameterError(
            "time_constants",
            exc.value,
            f"a shortest time constant of at least {4.0 / (f * MAX_STEPS_PER_CYCLE):.3g} s",
        ) from exc


def _insertion_steps(cases: Sequence[Case], f: float, spc: int, time_s: float) -> int:
    # steps with the resistor in (0: none), after the resistor is checked against its limit
    r = max(c.insertion_resistance_ohm for c in cases)
    if r <= 0.0:
        return 0
    n_in = math.floor(check_insertion(0.0, time_s)[1] * f * spc + 0.5)
    if n_in == 0:
        return 0
    limit = min(dip_network.insertion_limit_ohm(c.circuit, c.impedance, f) for c in cases)
    if r > limit:
        raise ParameterError(
            "insertion_resistance_ohm",
            r,
            f"[0, {max(limit, 0.0):.4g}] ohm for this circuit and source: a larger resistor "
            "makes the transformer loop's time constant while it is in shorter than "
            f"{4.0 / (f * MAX_STEPS_PER_CYCLE):.3g} s, too short for the fixed step "
            f"({MAX_STEPS_PER_CYCLE} steps per cycle at most)",
        )
    return n_in


def _raw(
    cases: Sequence[Case], out: dip_network.Cycles, spc: int, v_base: float, dt: float,
    bypass_s: float,
) -> Raw:  # fmt: skip
    # per-cycle sums to rms and means, the kernel's record to the Raw the dip study reads
    n = len(cases)
    nw = out.wave_v.shape[-1]
    return Raw(
        steps_per_cycle=spc,
        v_rms_pu=np.sqrt(out.v2 / spc) / v_base,
        v_line_rms_pu=np.sqrt(out.vll2 / spc) / (math.sqrt(3.0) * v_base),
        i_rms_a=np.sqrt(out.i2 / spc),
        peaks_a=out.peaks,
        emf_pu=out.emf / spc,
        field_pu=out.field / spc,
        wave_t_s=np.arange(nw, dtype=np.float64) * dt,
        wave_v=out.wave_v if nw else np.zeros((n, 3, 0)),
        wave_i=out.wave_i if nw else np.zeros((n, 3, 0)),
        insertion_energy_j=out.energy,
        bypass_time_s=bypass_s,
        insertion_substeps=out.substeps,
        pole_close_s=out.pole_close_s,
    )


def check_insertion(resistance_ohm: float, time_s: float) -> tuple[float, float]:
    """Validate a pre-insertion resistor [ohm] and its insertion time [s]; return both as floats.

    The resistance must be finite and >= 0 (the largest a circuit allows is checked by
    :func:`run`, which knows the step); the time in [0, 600] s, the longest simulated duration.

    Parameters
    ----------
    resistance_ohm : float
        Pre-insertion resistor per pole, >= 0 [ohm].
    time_s : float
        Its time in circuit from closing, >= 0 [s].
    """
    try:
        r = float(resistance_ohm)
    except (TypeError, ValueError):
        r = math.nan
    if not (math.isfinite(r) and r >= 0.0):
        raise ParameterError("insertion_resistance_ohm", resistance_ohm, "finite and >= 0")
    try:
        t = float(time_s)
    except (TypeError, ValueError):
        t = math.nan
    if not (math.isfinite(t) and 0.0 <= t <= 600.0):
        raise ParameterError("insertion_time_s", time_s, "in [0, 600]")
    return r, t


def check_poles(pole_delay_s: ArrayLike, duration_s: float) -> FloatArray:
    """Validate pole closing instants [s], one or one per pole (a, b, c), in [0, duration_s).

    Returns them as an array of shape (3,); raises :class:`ParameterError` naming
    ``pole_delay_s``.

    Parameters
    ----------
    pole_delay_s : array_like
        A scalar or one closing instant per pole [s].
    duration_s : float
        Simulated time every pole must close within [s].
    """
    try:
        d = np.broadcast_to(np.asarray(pole_delay_s, dtype=float), (3,)).astype(float)
    except (TypeError, ValueError) as exc:
        raise ParameterError(
            "pole_delay_s", repr(pole_delay_s), "a scalar or 3 values (poles a, b, c)"
        ) from exc
    if not (np.all(np.isfinite(d)) and np.all(d >= 0.0) and np.all(d < duration_s)):
        raise ParameterError("pole_delay_s", d.tolist(), f"each in [0, {duration_s:g}) s")
    return d


def check_inputs(
    source: SourceLike,
    circuit: EquivalentCircuit,
    event: SwitchingEvent,
    pre_event_voltage_pu: float,
    duration_s: float,
) -> list[tuple[str, str]]:
    """Validate the inputs every dip simulation shares; return its (code, message) warnings.

    Raises :class:`ParameterError` naming the offending input.

    Parameters
    ----------
    source : Generator or UtilitySource
        The source; it needs line_voltage_v [V] and frequency_hz [Hz] [-].
    circuit : EquivalentCircuit
        Three-phase circuit built on an ideal source [-].
    event : SwitchingEvent
        The energisation, built for a three-phase circuit: residual flux in [-5, 5]
        [pu of lambda_N], the resistor's insertion time in [0, 600] [s] (:func:`check_insertion`),
        each pole within ``duration_s`` (:func:`check_poles`), no ramped source [-].
    pre_event_voltage_pu : float
        Terminal voltage before closing, in [0.5, 1.5] [pu].
    duration_s : float
        Simulated time, in (0, 600] [s].

    Returns
    -------
    list of (str, str)
        ``voltage_mismatch`` when the transformer's rated voltage is more than 10 % off the
        source's, then the event's own warnings.

    Notes
    -----
    The event itself was checked once when it was built
    (:func:`core.energization.switching_event.switching_event`); here only what the dip model
    adds: the bounds that depend on the simulated time, and what it does not model (a ramp).

    References
    ----------
    This project's input rules.
    """
    if not (hasattr(source, "line_voltage_v") and hasattr(source, "frequency_hz")):
        raise ParameterError("source", type(source).__name__, "a Generator or UtilitySource")
    if circuit.phases != 3:
        raise ParameterError("circuit.phases", circuit.phases, "3 (a three-phase unit)")
    if circuit.source_inductance_h != 0.0 or circuit.source_resistance_ohm != 0.0:
        raise ParameterError(
            "circuit.source_inductance_h",
            circuit.source_inductance_h,
            "0: build the circuit with an ideal source; the generator or utility model is the "
            "source impedance",
        )
    if abs(circuit.frequency_hz - source.frequency_hz) > 1e-9 * source.frequency_hz:
        raise ParameterError(
            "circuit.frequency_hz",
            circuit.frequency_hz,
            f"the source frequency {source.frequency_hz:g} Hz",
        )
    checks.in_range("pre_event_voltage_pu", pre_event_voltage_pu, 0.5, 1.5, open_low=False)
    checks.in_range("duration_s", duration_s, 0.0, 600.0)
    res = event.residual_flux_pu
    if res.shape != (3,) or event.pole_delay_s.shape != (3,):
        raise ParameterError("event", f"{res.size} windings", "an event built for 3 phases")
    if np.any(np.abs(res) > 5.0):
        raise ParameterError("residual_flux_pu", res.tolist(), "finite values in [-5, 5]")
    if not (
        event.voltage_start_pu == 1.0
        and event.voltage_hold_s == 0.0
        and event.voltage_rise_s == 0.0
    ):
        raise ParameterError("event", "a ramped source", "a closing onto the source as it is")
    check_insertion(event.insertion_resistance_ohm, event.insertion_time_s)
    check_poles(event.pole_delay_s, duration_s)
    warnings: list[tuple[str, str]] = []
    ratio = circuit.line_voltage_v / source.line_voltage_v
    if abs(ratio - 1.0) > 0.1:
        warnings.append(
            (
                "voltage_mismatch",
                f"transformer rated voltage is {ratio:.3g} x the "
                "source's: the unit is energised off its rated flux",
            )
        )
    warnings += event.warnings
    return warnings
