"""Voltage dip when a transformer is energised from a generator or a weak utility source.

The inrush current is drawn through the source; the terminal voltage dips and recovers as the
inrush decays, the machine's d-axis fluxes decay and its regulator responds. This module
simulates that in the time domain and compares it with the subtransient voltage-divider hand
method. The sweep over generator rating and the smallest generator that keeps the dip within a
limit are in :mod:`core.supply.generator_sizing`; the study the HTTP operation calls is
:mod:`core.supply.dip_study`.

Model (per case, three phases; SI, the machine states per unit on the machine rating):

* Stator: a three-phase EMF e_k = sqrt(2)*V_r*E''_q(t)*sin(theta - 2*pi*k/3),
  theta = omega*t + beta, behind L''_d = X''_d*Z_b/omega and R_a, solved instantaneously
  together with the saturating transformer: the voltage-behind-subtransient-reactance form of
  the machine with X''_q = X''_d. A utility source is a constant EMF behind R + jX from its
  fault level and X/R; its dip is measured at the point of common coupling, which is the
  transformer terminals.
* Rotor d axis, the flux-decay equations of the subtransient model (leakage terms dropped)::

      T''_do dE''_q/dt = E'_q - E''_q - (X'_d - X''_d)*i_d
      T'_do  dE'_q/dt  = E_fd - E'_q - (X_d - X'_d)*i_d

  i_d is the instantaneous d-axis (Park) component of the stator currents in the EMF's frame,
  per unit of rated current, positive lagging. Its mean is the fundamental positive-sequence
  reactive current; the inrush's DC offset and negative sequence appear in it as ripple at f and
  2f that the rotor time constants filter, much as the rotor circuits of the machine see them.
  (Driving the equations with a one-cycle average instead would delay the flux decay by half a
  cycle.)
  The EMF is the rate of change of the rotor flux as it turns,
  e_k = sqrt(2)*V_r*(E''_q*sin(theta_k) - (dE''_q/dt/omega)*cos(theta_k)); the second term
  (the transformer voltage of the decaying rotor flux) keeps the model passive: without it a
  short T''_do and an undamped DC offset feed each other and the solution grows.
* Excitation: T_A dE_fd/dt = K_A*(V_ref - V_s) - E_fd within [floor, ceiling] (non-windup),
  V_s the magnitude of the terminal-voltage space vector (Park d and q components, no zero
  sequence) through a transducer lag T_R (IEEE Std 421.5 structure, from memory); or a constant
  field.
* Transformer: each winding of the :class:`core.transformer.circuit_model.EquivalentCircuit`
  with its magnetising curve, connected as it is (grounded wye, floating wye, delta) and solved
  as the three-phase circuit it forms with the source: a delta's windings close their loop
  through the source's phases, a floating neutral carries no current; an optional
  constant-impedance bus load in parallel at the terminals. The network solver
  :func:`core.network.simulate_network` with the machine as its source
  (:mod:`core.network.machine`) integrates it; loop fluxes as states.
* Pre-insertion resistor (optional): a linear resistor R in each line of the energising
  breaker, between the terminals (where the dip is measured and the bus load is connected) and
  the transformer, from closing until ``insertion_time_s``, then bypassed on all poles
  together. It damps the inrush while in; the flux it leaves in the windings at the bypass
  sets the inrush that follows. A small resistor damps the flux offset little; a very large
  one leaves the windings almost no voltage, the core ends demagnetised, and the bypass
  becomes the energisation, so a best value lies between. The energy it absorbs is
  E = R * sum over lines of the integral of i^2 from 0 to the bypass.
* Pole closing instants (optional, ``pole_delay_s``): pole k of the breaker closes t_k after
  the command at t = 0, as in :func:`core.energization.energize.simulate`. A grounded-wye
  winding conducts from its pole's closing; a floating wye's windings and a delta's from the
  second pole's (a delta's two windings on the still-open terminal in series until the third
  closes); until then each keeps its residual flux. The bus load is on the source side of the
  breaker and is unaffected; a pre-insertion resistor stays timed from t = 0. The instants are
  rounded to the internal step.

Numerics: classical fixed-step Runge-Kutta, at least 128 steps per cycle, compiled with numba.
Per-cycle rms of the terminal voltages is taken from the step samples over the cycles
[nT, (n+1)T) from closing. With a sharp (two-slope) knee the terminal voltage jumps at every
knee crossing, so that rms carries an error of order 1/N for N steps per cycle: measured 5e-3 pu
at 128 and 1.6e-3 pu at 512 on the demo case (tests/references/test_generator_references.py);
raise ``steps_per_cycle`` or use the smooth knee where that matters. While a pre-insertion
resistor is in, each step is split into sub-steps no longer than a quarter of the loop's
shortest time constant with it in; the bypass falls on a step boundary. Measured against
scipy's Radau (rtol 1e-9) with the resistor in for 1.5 cycles on the demo case with a bus load,
0.02 ohm at 128 and 1 ohm at 512 steps per cycle: grounded wye per-cycle rms voltages within
4.6e-6 pu, per-cycle current peaks within 3.7e-5 of the first peak, the resistor's energy
within 1.5e-5 (relative); delta (the real three-phase circuit) rms within 7.8e-6 pu, energy
1.8e-5, per-cycle peaks 3.2e-4 (the sampled tops of the line currents' spikes past the sharp
knee, differences of two winding currents). With the poles closing at 0, 2.1 and 4.7 ms (on
the step: 0, 2.083, 4.688 ms), 128 steps per cycle, the same demo case against Radau with each
winding switched on when its circuit closes: grounded wye within 2.7e-6 pu on the per-cycle rms
voltages, 1.2e-5 of the first peak on the per-cycle peaks and 7.9e-7 on the first peak; delta
2.3e-5 pu, 1.0e-3 (sampled spikes, 5.1e-4 at 512 steps per cycle) and 2.0e-6. The machine with
its regulator against an independent reference: tests/references/test_machine_vs_scipy.py.

References
----------
P. Kundur, "Power System Stability and Control", McGraw-Hill, 1994, ch. 4-5 (d-axis model and
time constants) and ch. 8 (excitation) -- from memory.
J. Machowski, J. W. Bialek, J. R. Bumby, "Power System Dynamics: Stability and Control", 2nd
ed., Wiley, 2008, ch. 11 (E'_q/E''_q generator model) -- from memory.
IEEE Std 399-1997, ch. 9 (voltage-divider first dip) -- from memory.
ISO 8528-5 (generating-set performance classes G1-G4) -- limits from memory, see
:data:`core.supply.dip_limits.ISO_8528_5_CLASSES`.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from core import checks
from core.energization.switching_event import SwitchingEvent
from core.errors import ParameterError
from core.supply import dip_cases
from core.supply.sources import (
    POOR_DAMPING_RATIO,
    BusLoad,
    Excitation,
    ExcitationSpec,
    Generator,
    Source,
    first_dip_voltage_divider,
    regulator_damping_ratio,
    source_assumptions,
    source_parameters,
    unknown_excitation,
)
from core.transformer.circuit_model import Assumption, EquivalentCircuit

FloatArray = NDArray[np.float64]

__all__ = [
    "APPROXIMATIONS",
    "DipStudy",
    "Measure",
    "Swings",
    "check_measure",
    "energize_from_source",
    "voltage_swings",
]

_BANK = "transformer phases magnetically independent (bank of single-phase cores)"
_TOGETHER = "; all poles close together at t = 0"
_COMMON = (
    "machine speed constant at synchronous speed: prime mover and governor not modelled, so no "
    "frequency dip (the inrush draws little active power, only the losses)",
    "q axis simplified: X''_q = X''_d and E''_d = 0 (no q-axis rotor circuits, no rotor-angle "
    "swing); the EMF keeps its pre-event phase",
    "unsaturated machine reactances; machine and transformer parameters constant",
    "source zero-sequence impedance taken equal to its positive-sequence impedance (each phase "
    "an independent loop through the machine neutral)",
    "no hysteresis or core loss: residual flux is an initial condition on a single-valued curve",
    _BANK + _TOGETHER,
)
APPROXIMATIONS: dict[str, tuple[str, ...]] = {
    "wye_grounded": _COMMON,
    "wye": _COMMON,
    "delta": _COMMON,
}
_INSERTION = (
    "pre-insertion resistor: linear and ideal (no heating change of R, no bypass-contact "
    "resistance or arcing), in each line between the terminals and the transformer; bypassed "
    "on all poles together at t = {bypass:.6g} s, the requested instant rounded to the nearest "
    "internal step (at most half a step, {half:.3g} s, away) so that no Runge-Kutta step "
    "straddles the bypass; the hand method is for closing without it",
)
_POLES = (
    "poles close at a {0:.4g} ms, b {1:.4g} ms, c {2:.4g} ms after t = 0, the requested instants "
    "rounded to the nearest internal step (at most half a step, {half:.3g} s, away); a winding "
    "carries no current and keeps its residual flux until {until} closes; the bus load, on the "
    "source side of the breaker, is energised throughout; the hand method closes all poles "
    "together at t = 0"
)
_POLES_STAGGERED = {
    "delta": "delta with staggered poles: its windings conduct once two poles are closed, the "
    "two on the still-open terminal in series until the third closes",
    "wye": "floating-neutral wye with staggered poles: its windings conduct once two poles are "
    "closed (the neutral carries no current)",
}


@dataclass(frozen=True)
class DipStudy:
    """Result of :func:`energize_from_source`.

    Attributes
    ----------
    source_kind : str
        ``"generator"`` or ``"utility"``.
    frequency_hz : float
        [Hz].
    cycle_start_s : ndarray, shape (n_cycles,)
        Start of each cycle after closing [s].
    voltage_rms_pu : ndarray, shape (3, n_cycles)
        Per-cycle rms phase-to-neutral terminal voltage [pu of rated phase voltage].
    voltage_line_rms_pu : ndarray, shape (3, n_cycles)
        Per-cycle rms line-to-line terminal voltage (ab, bc, ca) [pu of rated line voltage].
    pre_event_voltage_pu : float
        Terminal voltage before closing [pu].
    voltage_measure : str
        ``"worst"``, ``"line"`` or ``"phase"`` (see :func:`energize_from_source`).
    min_voltage_pu, min_voltage_time_s : float
        Lowest per-cycle rms of those voltages [pu] and the start of that cycle [s].
    dip_percent : float
        Headline dip, from the voltages chosen by ``voltage_measure`` [% of pre-event voltage].
    dip_phase_percent, dip_line_percent : float
        The two figures [%].
    recovery_time_s : float
        End of the last cycle in which any of those rms voltages is outside the band; 0 when
        none is; nan when the last simulated cycle still is [s].
    recovery_band_percent : float
        Half-width of the band [% of the reference].
    recovery_reference_pu : float
        Centre of the band [pu].
    inrush_peak_a : float
        Largest transformer line current with this source, read exactly [A].
    cycle_peak_current_a : ndarray, shape (3, n_cycles)
        Per-cycle peak of each transformer line current, read exactly (the network integrated
        again around each cycle's largest sample, :func:`core.network.peaks.
        line_cycle_peaks`) [A].
    emf_pu, field_voltage_pu : ndarray, shape (n_cycles,)
        Per-cycle mean of E''_q and E_fd [pu].
    hand_method_load_va : float
        First-cycle rms inrush on an ideal source at rated voltage, largest line, as
        three-phase power [VA].
    hand_method_dip_percent : float
        :func:`first_dip_voltage_divider` with that load [%].
    hand_method_difference_percent : float
        Hand method minus simulated headline dip [percentage points].
    steps_per_cycle : int
        Integration steps per cycle used.
    waveform_time_s, waveform_voltage_v, waveform_current_a : ndarray
        Decimated terminal phase voltages and transformer line currents, shape (3, n) (empty
        unless requested) [s], [V], [A].
    approximations : tuple of str
    assumptions : tuple of Assumption
        Every source parameter used, with provenance.
    warnings : tuple of (code, message)
    insertion_energy_j : float
        Energy absorbed by the pre-insertion resistor, R * sum over lines of the integral of
        i^2 while it is in; 0 without one [J].
    pole_delay_s : ndarray, shape (3,)
        Closing instant of poles a, b, c used, on the internal step grid [s].
    regulator_damping_ratio : float
        Least damping ratio of the linearised regulator loop at the state after the inrush
        (:func:`core.supply.sources.regulator_damping_ratio`); nan without a regulator [-].
    swings : Swings
        The swings of the simulated rms voltage after its lowest value (:func:`voltage_swings`).
    recovery_reliable : bool
        False when the regulator loop is poorly damped (either damping ratio below
        :data:`core.supply.sources.POOR_DAMPING_RATIO`): the recovery time then measures an
        oscillation, not a recovery, and is not to be judged (warning
        ``regulator_poorly_damped``).
    """

    source_kind: str
    frequency_hz: float
    cycle_start_s: FloatArray
    voltage_rms_pu: FloatArray
    voltage_line_rms_pu: FloatArray
    pre_event_voltage_pu: float
    voltage_measure: str
    min_voltage_pu: float
    min_voltage_time_s: float
    dip_percent: float
    dip_phase_percent: float
    dip_line_percent: float
    recovery_time_s: float
    recovery_band_percent: float
    recovery_reference_pu: float
    inrush_peak_a: float
    cycle_peak_current_a: FloatArray
    emf_pu: FloatArray
    field_voltage_pu: FloatArray
    hand_method_load_va: float
    hand_method_dip_percent: float
    hand_method_difference_percent: float
    steps_per_cycle: int
    waveform_time_s: FloatArray
    waveform_voltage_v: FloatArray
    waveform_current_a: FloatArray
    approximations: tuple[str, ...]
    assumptions: tuple[Assumption, ...]
    warnings: tuple[tuple[str, str], ...]
    insertion_energy_j: float = 0.0
    pole_delay_s: FloatArray = field(default_factory=lambda: np.zeros(3))
    regulator_damping_ratio: float = math.nan
    swings: Swings = field(default_factory=lambda: Swings(0, math.nan, math.nan, math.nan))
    recovery_reliable: bool = True


@dataclass(frozen=True)
class Swings:
    """Result of :func:`voltage_swings`.

    Attributes
    ----------
    count : int
        Alternating swings beyond the floor after the lowest value, that one excluded [-].
    damping_ratio : float
        From the logarithmic decrement fitted to the swings; nan with fewer than three [-].
    amplitude_pu : float
        Size of the last swing about the centre; nan without swings [pu].
    frequency_hz : float
        1/(mean time between swings of the same sign); nan with fewer than three [Hz].
    """

    count: int
    damping_ratio: float
    amplitude_pu: float
    frequency_hz: float


def voltage_swings(voltage_pu: ArrayLike, frequency_hz: float, floor_pu: float) -> Swings:
    """Swings of a per-cycle rms voltage about its settled value, and their damping.

    Parameters
    ----------
    voltage_pu : array_like, shape (n_cycles,)
        Per-cycle rms voltage, one value a cycle [pu].
    frequency_hz : float
        Cycles per second of the record, > 0 [Hz].
    floor_pu : float
        Deviations from the centre no larger than this are not swings, >= 0 [pu].

    Returns
    -------
    Swings

    Raises
    ------
    ParameterError
        On a non-finite record, or a frequency or floor out of range, naming it.

    Notes
    -----
    Centre: the mean of the last second (all of a shorter record). From the lowest value on,
    the local extrema of x = v - centre beyond the floor are kept, consecutive ones of the same
    sign merged into the larger; the first (the dip itself, forced by the inrush) is dropped.
    The rest, a_k = abs(x) at t_k, are the free swings of the loop. A least-squares line through
    ln(a_k) against t_k has slope -sigma; the period is T_d = 2*(t_last - t_first)/(n - 1) (same
    sign extrema a period apart), the logarithmic decrement delta = sigma*T_d and the damping
    ratio zeta = delta/sqrt(4*pi^2 + delta^2), exact for x = A*exp(-zeta*omega_n*t)*cos(omega_d*t)
    sampled at its extrema (second-order response, e.g. K. Ogata, "Modern Control Engineering",
    ch. 5, from memory); a growing swing gives zeta < 0. The fit over every swing, not the last
    two, keeps the small late swings, most sensitive to the centre, from setting it alone.
    """
    v = np.asarray(voltage_pu, dtype=float).ravel()
    if v.size == 0 or not np.all(np.isfinite(v)):
        raise ParameterError("voltage_pu", "non-finite or empty", "finite values")
    f = checks.in_range("frequency_hz", frequency_hz, 0.0, 1e4)
    floor = float(floor_pu)
    if not (math.isfinite(floor) and floor >= 0.0):
        raise ParameterError("floor_pu", floor_pu, ">= 0")
    centre = float(v[-max(1, min(v.size, round(f))) :].mean())
    x = v[int(np.argmin(v)) :] - centre
    d = np.diff(x)
    turns = np.nonzero(d[:-1] * d[1:] < 0.0)[0] + 1
    kept: list[int] = []
    for i in (0, *turns.tolist()):
        if abs(x[i]) <= floor:
            continue
        if kept and (x[kept[-1]] > 0.0) == (x[i] > 0.0):
            if abs(x[i]) > abs(x[kept[-1]]):
                kept[-1] = i
        else:
            kept.append(i)
    free = kept[1:]
    if not free:
        return Swings(0, math.nan, math.nan, math.nan)
    last = abs(float(x[free[-1]]))
    if len(free) < 3:
        return Swings(len(free), math.nan, last, math.nan)
    # least-squares line through ln(a_k) against the extrema's times: slope -sigma; the same-sign
    # extrema are a period T_d apart, on average 2*(t_last - t_first)/(n - 1)
    t = np.asarray(free, dtype=float) / f
    slope = float(np.polyfit(t, np.log(np.abs(x[free])), 1)[0])
    period = 2.0 * (t[-1] - t[0]) / (len(free) - 1)
    delta = -slope * period
    zeta = delta / math.sqrt(4.0 * math.pi**2 + delta**2)
    return Swings(len(free), zeta, last, 1.0 / period)


Measure = Literal["worst", "line", "phase"]


def check_measure(value: str) -> None:
    """Validate a ``voltage_measure``: ``"worst"``, ``"line"`` or ``"phase"``.

    Parameters
    ----------
    value : str
        The voltage measure asked for [-].

    Raises
    ------
    ParameterError
        Naming ``voltage_measure`` when it is none of those.
    """
    if value not in ("worst", "line", "phase"):
        raise ParameterError("voltage_measure", value, "worst, line or phase")


def _recovery(
    both: FloatArray, v0: float, reference: str, band_percent: float, f: float
) -> tuple[float, float]:
    """Recovery time [s] (0 if never outside, nan if still outside) and the band centre [pu]."""
    ref = v0 if reference == "pre_event" else float(both[:, -1].mean())
    out = np.any(np.abs(both - ref) > band_percent / 100.0 * ref, axis=0)
    if not np.any(out):
        return 0.0, ref
    if out[-1]:
        return math.nan, ref
    return (int(np.nonzero(out)[0][-1]) + 1) / f, ref


def _pole_approximations(
    approximations: tuple[str, ...], connection: str, used_s: FloatArray, half_step_s: float
) -> tuple[str, ...]:
    """The approximations with the poles' closing instants stated instead of "together"."""
    until = "its pole" if connection == "wye_grounded" else "the second pole"
    text = _POLES.format(*(1e3 * used_s), half=half_step_s, until=until)
    out = (*(_BANK if a == _BANK + _TOGETHER else a for a in approximations), text)
    if connection in _POLES_STAGGERED and np.ptp(used_s) > 0.0:
        out += (_POLES_STAGGERED[connection],)
    return out


def run_on_sources(
    sources: Sequence[Source],
    circuit: EquivalentCircuit,
    event: SwitchingEvent,
    *,
    excitation: ExcitationSpec,
    bus_load: BusLoad | None,
    pre_event_voltage_pu: float,
    duration_s: float,
    steps_per_cycle: int,
    waveform_points: int,
    exact_peaks: bool = False,
) -> tuple[list[dip_cases.SourceParameters], dip_cases.Raw, list[tuple[str, str]]]:
    """One dip case per source, the same energisation of each, checked and integrated at once.

    The shared first half of :func:`energize_from_source` (one source) and
    :func:`core.supply.generator_sizing.dip_sweep` (one machine at many ratings).

    Parameters
    ----------
    sources : sequence of Generator or UtilitySource
        The sources, all at the circuit's frequency and the same line voltage as the first,
        which the inputs are checked against [-].
    circuit : EquivalentCircuit
        Three-phase circuit on an ideal source [-].
    event : SwitchingEvent
        The energisation of every case: closing angle, residual flux per winding, pole
        instants, pre-insertion resistor and its time in circuit (checked by
        :func:`core.supply.dip_cases.check_inputs`) [-].
    excitation : Excitation, "unknown" or "constant_field"
        The regulator of every machine [-].
    bus_load : BusLoad or None
        Load on the bus, constant impedance [-].
    pre_event_voltage_pu : float
        Terminal voltage before closing, in [0.5, 1.5] [pu].
    duration_s : float
        Simulated time, in (0, 600] [s].
    steps_per_cycle : int
        Steps per cycle, at least 128 [-].
    waveform_points : int
        Waveform samples kept, 0 for none [-].
    exact_peaks : bool
        Read the transformer's per-cycle peaks, exactly (the network integrated again around
        each cycle's largest sample); False leaves them NaN [-].

    Returns
    -------
    tuple
        (the sources reduced to numbers, one per source; the kernel's output; the warnings of
        the inputs, (code, message)) [-].

    Notes
    -----
    Each case: :func:`core.supply.dip_cases.build_case` from
    :func:`core.supply.sources.source_parameters` at omega = 2*pi*f; all run by
    :func:`core.supply.dip_cases.run` with the phase voltage V_LL/sqrt(3) of the first source.

    References
    ----------
    The models of :mod:`core.supply.sources` and :mod:`core.supply.dip_cases`.
    """
    warnings = dip_cases.check_inputs(sources[0], circuit, event, pre_event_voltage_pu, duration_s)
    f = circuit.frequency_hz
    v0 = float(pre_event_voltage_pu)
    load = None if bus_load is None else (bus_load.active_power_w, bus_load.reactive_power_var)
    params = [source_parameters(s, excitation, 2.0 * math.pi * f) for s in sources]
    cases = [dip_cases.build_case(p, circuit, event, load, v0) for p in params]
    v_ph = sources[0].line_voltage_v / math.sqrt(3.0)
    raw = dip_cases.run(
        cases, f, v_ph, duration_s, steps_per_cycle, waveform_points, event=event,
        exact_peaks=exact_peaks,
    )  # fmt: skip
    return params, raw, warnings


def energize_from_source(
    source: Source,
    circuit: EquivalentCircuit,
    event: SwitchingEvent,
    *,
    excitation: ExcitationSpec = "unknown",
    bus_load: BusLoad | None = None,
    pre_event_voltage_pu: float = 1.0,
    duration_s: float = 10.0,
    steps_per_cycle: int = dip_cases.MIN_STEPS_PER_CYCLE,
    recovery_band_percent: float = 3.0,
    recovery_reference: Literal["pre_event", "final"] = "pre_event",
    voltage_measure: Measure = "worst",
    waveform_points: int = 0,
    exact_peaks: bool = True,
) -> DipStudy:
    """Energise a transformer from a generator or weak utility source: dip and recovery.

    Parameters
    ----------
    source : Generator or UtilitySource
        The supply [-].
    circuit : EquivalentCircuit
        Three-phase transformer circuit built with an ideal source [-].
    event : SwitchingEvent
        The energisation (:func:`core.energization.switching_event.switching_event` for this
        circuit): the angle of the phase-A terminal voltage at t = 0,
        sqrt(2)*V*sin(omega*t + alpha); the residual flux per winding (a, b, c; ab, bc, ca for
        delta), within [-5, 5] pu; the closing instant of breaker poles a, b, c after the
        command at t = 0, each in [0, duration_s), rounded to the nearest internal step; the
        pre-insertion resistor of the energising breaker, in each line to the transformer (the
        largest the fixed step allows depends on the circuit, tens of ohms for the demo unit,
        and is named in the error) and its time from closing to the bypass, in [0, 600] s,
        rounded to the nearest internal step. A ramped source is not modelled here [-].
    excitation : Excitation, "unknown" or "constant_field"
        Regulator; "unknown" is :func:`core.supply.sources.unknown_excitation` (defaults set
        for the machine, well damped). Ignored for a utility source [-].
    bus_load : BusLoad or None
        Load already on the bus, constant impedance [-].
    pre_event_voltage_pu : float
        Terminal voltage before closing [pu of the source's rated voltage].
    duration_s : float
        Simulated time; the default 10 s covers the longest ISO 8528-5 recovery limit (from
        memory) [s].
    steps_per_cycle : int
        Runge-Kutta steps per cycle, >= 128 (raised when a time constant needs it) [-].
    recovery_band_percent : float
        Half-width of the recovery band; 3 % is a common practice default, set it to the
        steady-state tolerance that applies [% of the reference].
    recovery_reference : str
        ``"pre_event"`` or ``"final"`` (mean of the last simulated cycle) [-].
    voltage_measure : str
        Voltages the headline dip and the recovery use: ``"worst"`` (the deeper of the phase
        and line figures, conservative), ``"line"`` (line-to-line: independent of the
        zero-sequence simplification, what a regulator senses) or ``"phase"`` [-].
    waveform_points : int
        Return the waveforms decimated to about this many points (0: none) [-].
    exact_peaks : bool
        Read the inrush's per-cycle peaks exactly (the network integrated again around each
        cycle's largest sample); False leaves ``inrush_peak_a`` and ``cycle_peak_current_a``
        NaN, for callers that use the dip only [-].

    Returns
    -------
    DipStudy

    Raises
    ------
    ParameterError
        On inputs outside the model's range, naming the parameter.

    Notes
    -----
    Dip = 100*(V_0 - V_min)/V_0, V_min the lowest per-cycle rms of the voltages chosen by
    ``voltage_measure``. With the source zero-sequence impedance taken equal to X''_d the
    phase-to-neutral figure of a grounded-wye winding is the larger; a solidly grounded machine
    has X_0 below X''_d (from memory), which the line-to-line figure does not depend on. The
    hand method uses the first-cycle rms of the largest transformer line current on an ideal
    source at rated voltage
    as the load kVA of :func:`core.supply.sources.first_dip_voltage_divider`; it is for closing
    without a pre-insertion resistor (a first-cycle current limited by the resistor would miss
    the inrush that follows its bypass, so the hand method stays the plain, conservative one).

    With a pre-insertion resistor R in until t_b the energy it absorbs is
    E = R * sum over lines k of the integral from 0 to t_b of i_k^2 dt [J] (Joule's law), i_k
    the transformer line currents.

    With pole closing instants t_k a grounded-wye winding k is energised at t_k, a floating
    wye's and a delta's windings at the second pole's instant (:mod:`core.network.solver`); the
    event's closing angle stays the phase-A angle at t = 0, so the phase-A voltage angle when
    pole a closes is alpha + 360*f*t_a [deg]. The cycles are counted from t = 0, the command.
    The hand method closes all poles together at t = 0 (:meth:`SwitchingEvent.closed_at_once`).

    References
    ----------
    See the module: Kundur (1994), Machowski et al. (2008), IEEE Std 399-1997 ch. 9 (hand
    method), ISO 8528-5 -- from memory.
    """
    checks.in_range("recovery_band_percent", recovery_band_percent, 0.0, 50.0)
    if recovery_reference not in ("pre_event", "final"):
        raise ParameterError("recovery_reference", recovery_reference, "pre_event or final")
    if not (isinstance(waveform_points, int) and 0 <= waveform_points <= 10_000_000):
        raise ParameterError("waveform_points", waveform_points, "an integer >= 0")
    check_measure(voltage_measure)
    v0 = float(pre_event_voltage_pu)
    f = circuit.frequency_hz
    (src,), raw, checked = run_on_sources(
        [source],
        circuit,
        event,
        excitation=excitation,
        bus_load=bus_load,
        pre_event_voltage_pu=v0,
        duration_s=duration_s,
        steps_per_cycle=steps_per_cycle,
        waveform_points=waveform_points,
        exact_peaks=exact_peaks,
    )
    warnings = [*circuit.warnings, *checked]
    low = _lowest(raw, v0, voltage_measure)
    n_cyc = low.worst.size
    if n_cyc > 2 and low.n_min >= n_cyc - max(1, n_cyc // 10):
        warnings.append(
            (
                "dip_at_end",
                "the lowest voltage is in the last tenth of the simulated time: simulate longer",
            )
        )
    rec, ref = _recovery(low.both, v0, recovery_reference, recovery_band_percent, f)
    damping, swings = _regulator_loop(
        source, excitation, bus_load, low.both, f, (recovery_band_percent, ref)
    )
    reliable = not (damping < POOR_DAMPING_RATIO or swings.damping_ratio < POOR_DAMPING_RATIO)
    warnings += _recovery_warnings(
        reliable, rec, damping, swings, ref, recovery_band_percent, n_cyc / f
    )
    approximations = _timing_notes(circuit, event, raw, n_cyc, warnings)
    s_load, hand = _hand_method(source, circuit, event, src.base_va)
    return DipStudy(
        source_kind="generator" if isinstance(source, Generator) else "utility",
        frequency_hz=f,
        cycle_start_s=np.arange(n_cyc) / f,
        voltage_rms_pu=raw.v_rms_pu[0],
        voltage_line_rms_pu=raw.v_line_rms_pu[0],
        pre_event_voltage_pu=v0,
        voltage_measure=voltage_measure,
        min_voltage_pu=float(low.worst[low.n_min]),
        min_voltage_time_s=low.n_min / f,
        dip_percent=low.dip,
        dip_phase_percent=low.dip_phase,
        dip_line_percent=low.dip_line,
        recovery_time_s=rec,
        recovery_band_percent=float(recovery_band_percent),
        recovery_reference_pu=ref,
        inrush_peak_a=float(raw.peaks_a[0].max()),
        cycle_peak_current_a=raw.peaks_a[0],
        emf_pu=raw.emf_pu[0],
        field_voltage_pu=raw.field_pu[0],
        hand_method_load_va=s_load,
        hand_method_dip_percent=hand,
        hand_method_difference_percent=hand - low.dip,
        steps_per_cycle=raw.steps_per_cycle,
        waveform_time_s=raw.wave_t_s,
        waveform_voltage_v=raw.wave_v[0],
        waveform_current_a=raw.wave_i[0],
        approximations=approximations,
        assumptions=source_assumptions(source, excitation, bus_load, v0),
        warnings=tuple(warnings),
        insertion_energy_j=float(raw.insertion_energy_j[0]),
        pole_delay_s=raw.pole_close_s,
        regulator_damping_ratio=damping,
        swings=swings,
        recovery_reliable=reliable,
    )


@dataclass(frozen=True)
class _Lowest:
    """The lowest voltages of one case: per-cycle worst of the chosen measure [pu], its cycle,
    the dips [%] and the per-cycle rms rows the recovery is judged on [pu]."""

    worst: FloatArray
    n_min: int
    dip: float
    dip_phase: float
    dip_line: float
    both: FloatArray


def _lowest(raw: dip_cases.Raw, v0: float, measure: Measure) -> _Lowest:
    """Dip = 100*(V_0 - V_min)/V_0 of the phase and line voltages, and of the chosen measure."""
    ph = raw.v_rms_pu[0].min(axis=0)
    ln = raw.v_line_rms_pu[0].min(axis=0)
    worst = {"worst": np.minimum(ph, ln), "line": ln, "phase": ph}[measure]
    dip_ph = 100.0 * (v0 - float(ph.min())) / v0
    dip_ln = 100.0 * (v0 - float(ln.min())) / v0
    both = {
        "worst": np.concatenate((raw.v_rms_pu[0], raw.v_line_rms_pu[0])),
        "line": raw.v_line_rms_pu[0],
        "phase": raw.v_rms_pu[0],
    }[measure]
    return _Lowest(
        worst=worst,
        n_min=int(np.argmin(worst)),
        dip={"worst": max(dip_ph, dip_ln), "line": dip_ln, "phase": dip_ph}[measure],
        dip_phase=dip_ph,
        dip_line=dip_ln,
        both=both,
    )


def _regulator_loop(
    source: Source,
    excitation: ExcitationSpec,
    bus_load: BusLoad | None,
    both: FloatArray,
    f: float,
    band: tuple[float, float],
) -> tuple[float, Swings]:
    """Damping ratio of the linearised regulator loop and the simulated swings (nan, none
    without a regulator); swings smaller than 1e-3 pu or a thousandth of the band (its
    half-width [%] and centre [pu]) in percent are not counted."""
    damping, swings = math.nan, Swings(0, math.nan, math.nan, math.nan)
    exc = (
        unknown_excitation(source)
        if excitation == "unknown" and isinstance(source, Generator)
        else excitation
    )
    if isinstance(source, Generator) and isinstance(exc, Excitation):
        damping = regulator_damping_ratio(source, exc, bus_load)
        floor = max(1e-3, 1e-3 * band[0] * band[1])
        swings = voltage_swings(both.mean(axis=0), f, floor)
    return damping, swings


def _recovery_warnings(
    reliable: bool,
    rec: float,
    damping: float,
    swings: Swings,
    ref: float,
    band_percent: float,
    simulated_s: float,
) -> list[tuple[str, str]]:
    """``regulator_poorly_damped`` (the recovery not judged) or ``not_recovered``, or none."""
    if not reliable:
        seen = (
            f"; the simulated voltage swings ±{100.0 * swings.amplitude_pu / ref:.2g} % at "
            f"{swings.frequency_hz:.2g} Hz, damping ratio {swings.damping_ratio:.2g} from "
            "its last swings"
            if math.isfinite(swings.damping_ratio)
            else ""
        )
        return [
            (
                "regulator_poorly_damped",
                "the regulator loop is poorly damped (damping ratio "
                f"{damping:.2g} of the linearised loop after the inrush{seen}; below "
                f"{POOR_DAMPING_RATIO:g} is poorly damped): the recovery time measures an "
                "oscillation and is not judged; check the regulator's data and its stability "
                "setting",
            )
        ]
    if math.isnan(rec):
        return [
            (
                "not_recovered",
                f"voltage still outside ±{band_percent:g} % "
                f"at the end of the simulated {simulated_s:g} s",
            )
        ]
    return []


def _timing_notes(
    circuit: EquivalentCircuit,
    event: SwitchingEvent,
    raw: dip_cases.Raw,
    n_cyc: int,
    warnings: list[tuple[str, str]],
) -> tuple[str, ...]:
    """The approximations, with the poles' instants and the resistor stated when they are
    used; appends the warnings about a resistor rounded out or never bypassed."""
    f = circuit.frequency_hz
    approximations = APPROXIMATIONS[circuit.connection]
    if np.any(event.pole_delay_s > 0.0):
        half = 0.5 / (f * raw.steps_per_cycle)
        approximations = _pole_approximations(
            approximations, circuit.connection, raw.pole_close_s, half
        )
    r_ins, t_ins = event.insertion_resistance_ohm, event.insertion_time_s
    if not (r_ins > 0.0 and t_ins > 0.0):
        return approximations
    half = 0.5 / (f * raw.steps_per_cycle)
    if raw.bypass_time_s == 0.0:
        warnings.append(
            (
                "insertion_rounded_out",
                f"insertion_time_s {t_ins:g} s is under half an internal step ({half:.3g} s) "
                "and rounds to no insertion: the resistor is not simulated",
            )
        )
        return approximations
    approximations += (_INSERTION[0].format(bypass=raw.bypass_time_s, half=half),)
    if raw.bypass_time_s >= (n_cyc - 0.25 / raw.steps_per_cycle) / f:
        warnings.append(
            (
                "resistor_not_bypassed",
                "the pre-insertion resistor is still in at the end of the simulated "
                f"{n_cyc / f:g} s: the inrush and dip after its bypass are not simulated",
            )
        )
    return approximations


def _hand_method(
    source: Source, circuit: EquivalentCircuit, event: SwitchingEvent, base_va: float
) -> tuple[float, float]:
    """The hand method's load [VA] and dip [%]: the first-cycle rms of the largest line current
    on an ideal source at rated voltage, all poles together and no resistor, as three-phase
    power, into :func:`core.supply.sources.first_dip_voltage_divider`."""
    f = circuit.frequency_hz
    v_ph = source.line_voltage_v / math.sqrt(3.0)
    ideal = dip_cases.SourceParameters(source.line_voltage_v, 0.0, 0.0, base_va)
    first = dip_cases.run(
        [dip_cases.build_case(ideal, circuit, event.closed_at_once(), None, 1.0)],
        f,
        v_ph,
        1.0 / f,
        dip_cases.MIN_STEPS_PER_CYCLE,
        0,
    )
    s_load = math.sqrt(3.0) * source.line_voltage_v * float(first.i_rms_a[0, :, 0].max())
    if isinstance(source, Generator):
        hand = float(first_dip_voltage_divider(source.x_d2_pu, source.rating_va, s_load))
    else:
        hand = float(first_dip_voltage_divider(1.0, source.fault_level_va, s_load))
    return s_load, hand
