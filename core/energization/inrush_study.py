"""Inrush studies: the first peak and the decay envelope of one energisation, end to end.

These functions combine the closed forms (:mod:`core.energization.closed_form`), the time-domain
solver (:mod:`core.energization.energize`) and the waveform analysis
(:mod:`core.waveform`) into the answers the service returns, so that an HTTP handler
calls exactly one function. Warnings are returned as (code, message) pairs; nothing here formats
HTTP.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import ArrayLike, NDArray

from core import waveform
from core.energization import closed_form, energize, energize_plan, peaks
from core.energization.switching_event import SwitchingEvent, plain_event_arrays
from core.errors import ParameterError
from core.transformer.circuit_model import EquivalentCircuit

FloatArray = NDArray[np.float64]

__all__ = [
    "ANALYTIC_METHOD",
    "SIMULATED_METHOD",
    "AnalyticEnvelope",
    "EnvelopeStudy",
    "LinePeak",
    "PeakStudy",
    "WindingEstimate",
    "envelope_study",
    "line_names",
    "peak_studies",
    "peak_study",
    "winding_angles",
    "winding_names",
    "worst_closing_angles",
]

ANALYTIC_METHOD = (
    "closed-form first peak of Wang, Abdulsalam & Xu, IEEE Trans. Power Delivery 23(2), 2008, "
    "generalised to the closing angle by the flux-swing centre b_R + cos(alpha); per-cycle decay "
    "of the flux offset by its resistive drop (Specht 1951, Holcomb 1961 type; attributions from "
    "memory)"
)
SIMULATED_METHOD = (
    "time-domain solution of e = R*i + L_s*di/dt + d(lambda)/dt with i = f(lambda), classical "
    "Runge-Kutta at >= 128 steps per cycle, checked against scipy's LSODA/Radau at rtol 1e-9"
)
ANALYTIC_VALIDITY_R_OVER_X = 0.5


def winding_names(circuit: EquivalentCircuit) -> tuple[str, ...]:
    """Labels of the energised windings: A/B/C, or AB/BC/CA for delta, or A for one phase.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The circuit (its phases and connection) [-].
    """
    if circuit.phases == 1:
        return ("A",)
    return ("AB", "BC", "CA") if circuit.connection == "delta" else ("A", "B", "C")


def line_names(circuit: EquivalentCircuit) -> tuple[str, ...]:
    """Labels of the line currents: A, or A/B/C.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The circuit (its phases and connection) [-].
    """
    return ("A",) if circuit.phases == 1 else ("A", "B", "C")


@dataclass(frozen=True)
class WindingEstimate:
    """Closed-form first peak of one winding and of the line at its leading terminal.

    ``winding_peak_a`` is the winding's own current; ``line_peak_a`` the current of ``line``
    (A for winding A or AB, B for B or BC, C for C or CA), the same for single-phase and wye
    windings, the difference of two winding currents for a delta
    (:func:`core.energization.closed_form.line_first_peaks`) [A].
    """

    winding: str
    line: str
    closing_angle_deg: float
    flux_offset_pu: float
    winding_peak_a: float
    line_peak_a: float


@dataclass(frozen=True)
class LinePeak:
    """Simulated first peak of one line current."""

    line: str
    first_peak_a: float
    time_of_peak_s: float


@dataclass(frozen=True)
class PeakStudy:
    """Result of :func:`peak_study`; currents in [A], angles in [deg]."""

    rated_current_a: float
    rated_winding_current_a: float
    analytic: tuple[WindingEstimate, ...] | None
    analytic_worst_a: float | None
    analytic_worst_residual_pu: float | None
    analytic_worst_angle_deg: float | None
    analytic_worst_line: str | None
    analytic_worst_winding_a: float | None
    simulated: tuple[LinePeak, ...] | None
    simulated_worst_angle_deg: float | None
    simulated_worst_a: float | None
    simulated_worst_line: str | None
    saturation_flux_pu: float
    loop_resistance_ohm: float
    loop_inductance_h: float
    approximations: tuple[str, ...]
    warnings: tuple[tuple[str, str], ...] = field(default_factory=tuple)


def _loop(circuit: EquivalentCircuit) -> tuple[float, float, float]:
    """Saturated loop of one winding: resistance [ohm], inductance [H], source multiplier."""
    mult = 1.0 if circuit.connection in ("single_phase", "wye_grounded") else 2.0
    r = circuit.winding_resistance_ohm + mult * circuit.source_resistance_ohm
    L = circuit.air_core_inductance_h + mult * circuit.source_inductance_h
    return r, L, mult


def winding_angles(
    circuit: EquivalentCircuit, closing_angle_deg: float, pole_delay_s: FloatArray
) -> FloatArray:
    """Angle of each winding's source voltage at the instant it is energised.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The circuit (its phases and connection) [-].
    closing_angle_deg : float
        Phase-A voltage angle at t = 0 [deg].
    pole_delay_s : ndarray, shape (n_phases,)
        Pole closing instants [s].

    Returns
    -------
    ndarray, shape (n_windings,)
        alpha_w with the winding voltage sqrt(2)*V_w*sin(omega*t + alpha_w) at its closing,
        not wrapped [deg]: phases B and C lag and lead A by 120 degrees; a delta winding's
        line-to-line voltage leads its first phase by 30 degrees and is energised when the
        later of its two poles closes.
    """
    f = circuit.frequency_hz
    if circuit.phases == 1:
        return np.array([closing_angle_deg + 360.0 * f * pole_delay_s[0]])
    phase = closing_angle_deg + np.array([0.0, -120.0, 120.0])
    if circuit.connection == "delta":
        close = np.maximum(pole_delay_s, np.roll(pole_delay_s, -1))
        out: FloatArray = phase + 30.0 + 360.0 * f * close
        return out
    out = phase + 360.0 * f * pole_delay_s
    return out


def _event_checks(
    circuit: EquivalentCircuit, event: SwitchingEvent
) -> tuple[FloatArray, FloatArray, list[tuple[str, str]]]:
    """The event's residual flux and pole delays (copies) and the warnings of circuit and event."""
    res, delay = plain_event_arrays(circuit, event)
    warnings: list[tuple[str, str]] = [*circuit.warnings, *event.warnings]
    return res, delay, warnings


_Simulated = tuple[tuple[LinePeak, ...], tuple[float, float, str]]


def worst_closing_angles(
    circuits: list[EquivalentCircuit],
    residual_flux_pu: FloatArray,
    pole_delay_s: FloatArray,
    *,
    duration_s: float,
    max_steps: int | None = None,
    per_case: Mapping[str, FloatArray] | None = None,
    exact: bool = False,
) -> tuple[FloatArray, FloatArray]:
    """Closing angle of the largest peak of each case, searched for all cases at once.

    Parameters
    ----------
    circuits : list of EquivalentCircuit
        One per case, sharing phases, connection and frequency [-].
    residual_flux_pu : ndarray, shape (n_cases, n_windings)
        Residual flux [pu of lambda_N].
    pole_delay_s : ndarray, shape (n_cases, n_phases)
        Pole closing delays [s].
    duration_s : float
        Record searched for the peak after t = 0 [s].
    max_steps : int or None
        Compute limit per vectorised simulation call [-].
    per_case : mapping of str to ndarray, shape (n_cases,), or None
        Further per-case keyword arguments of :func:`core.energization.energize.simulate` (a
        pre-insertion resistor, a voltage ramp), repeated with each trial angle [-].
    exact : bool
        Read the peaks at the angles found exactly (:func:`core.energization.peaks.first_peaks`;
        only without ``per_case``); the search itself reads them from samples [-].

    Returns
    -------
    tuple of ndarray
        The worst phase-A closing angle of each case, not wrapped [deg], and every line's peak
        at that angle, shape (n_cases, n_lines) [A].

    Notes
    -----
    Each stage is one vectorised :func:`core.energization.energize.simulate` call over every case
    and trial angle: a scan over 0-360 degrees in 2.5-degree steps, then two local refinements (0.25
    and 0.025 degrees), and a last call at the angles found.
    """
    n = len(circuits)
    extra = dict(per_case or {})
    center = np.full(n, 180.0)
    for offsets in energize_plan.search_offsets():
        trial = center[:, None] + offsets[None, :]
        reps = offsets.size
        scan = energize.simulate(
            [c for c in circuits for _ in range(reps)], trial.ravel(),
            np.repeat(residual_flux_pu, reps, axis=0), np.repeat(pole_delay_s, reps, axis=0),
            duration_s=duration_s, samples_per_cycle=128, max_steps=max_steps,
            **{k: np.repeat(v, reps) for k, v in extra.items()},
        )  # fmt: skip
        worst = energize.refined_abs_peak(scan.line_current_a).max(axis=-1).reshape(n, reps)
        center = trial[np.arange(n), np.argmax(worst, axis=1)]
    best = energize.simulate(circuits, center, residual_flux_pu, pole_delay_s,
                             duration_s=duration_s, samples_per_cycle=128, max_steps=max_steps,
                             **extra)  # fmt: skip
    if exact and not extra:
        return center, peaks.first_peaks(circuits, center, residual_flux_pu, best).peak_a
    return center, energize.refined_abs_peak(best.line_current_a)


def _simulated_batch(
    circuits: list[EquivalentCircuit],
    angles: FloatArray,
    res: FloatArray,
    delay: FloatArray,
    cycles: float,
    max_steps: int | None,
) -> list[_Simulated]:
    """Simulated first peaks of the events as given and their worst closing angles."""
    n = len(circuits)
    f = circuits[0].frequency_hz
    lines = line_names(circuits[0])
    duration = cycles / f + float(delay.max())
    sim = energize.simulate(circuits, angles, res, delay, duration_s=duration,
                            samples_per_cycle=128, max_steps=max_steps)  # fmt: skip
    first = peaks.first_peaks(circuits, angles, res, sim)
    center, best_peaks = worst_closing_angles(
        circuits, res, delay, duration_s=duration, max_steps=max_steps, exact=True
    )
    out: list[_Simulated] = []
    for i in range(n):
        part = tuple(
            LinePeak(lines[j], float(first.peak_a[i, j]), float(first.time_s[i, j]))
            for j in range(len(lines))
        )
        ph = int(np.argmax(best_peaks[i]))
        angle = float(np.mod(np.round(center[i], 6), 360.0))
        out.append((part, (angle, float(best_peaks[i, ph]), lines[ph])))
    return out


def peak_studies(
    cases: list[tuple[EquivalentCircuit, SwitchingEvent]],
    *,
    method: str = "both",
    cycles: float = 2.0,
    max_steps: int | None = None,
) -> list[PeakStudy]:
    """:func:`peak_study` for many cases, the simulations vectorised across them.

    Parameters
    ----------
    cases : list of (EquivalentCircuit, SwitchingEvent)
        The cases, each event built for its circuit; they may differ in everything, including
        connection and frequency [-].
    method : str
        ``"analytic"``, ``"simulated"`` or ``"both"`` for every case [-].
    cycles : float
        Window for the first peak [cycles].
    max_steps : int or None
        Compute limit per vectorised simulation call [-].

    Returns
    -------
    list of PeakStudy
        In the order of ``cases``; identical to calling :func:`peak_study` on each.

    Notes
    -----
    Cases are grouped by (phases, connection, frequency) and each group is simulated by one
    call per search stage, so a batch costs a few kernel calls instead of a few per case.
    """
    sims: dict[int, _Simulated] = {}
    if method in ("simulated", "both"):
        groups: dict[tuple[int, str, float], list[int]] = {}
        for idx, (c, *_rest) in enumerate(cases):
            groups.setdefault((c.phases, c.connection, c.frequency_hz), []).append(idx)
        for members in groups.values():
            events = [_event_checks(cases[i][0], cases[i][1]) for i in members]
            res = np.stack([e[0] for e in events])
            dl = np.stack([e[1] for e in events])
            results = _simulated_batch(
                [cases[i][0] for i in members],
                np.array([cases[i][1].closing_angle_deg for i in members], dtype=float),
                res, dl, cycles, max_steps,
            )  # fmt: skip
            sims.update(zip(members, results, strict=True))
    return [
        peak_study(c, e, method=method, cycles=cycles, max_steps=max_steps, simulated=sims.get(i))
        for i, (c, e) in enumerate(cases)
    ]


def peak_study(
    circuit: EquivalentCircuit,
    event: SwitchingEvent,
    *,
    method: str = "both",
    cycles: float = 2.0,
    max_steps: int | None = None,
    simulated: _Simulated | None = None,
) -> PeakStudy:
    """First inrush peak for one switching event, and its worst case over closing angle.

    Parameters
    ----------
    circuit : EquivalentCircuit
        Energisation circuit [-].
    event : SwitchingEvent
        Closing angle, residual flux per winding and pole instants, from
        :func:`core.energization.switching_event.switching_event` (a plain closing: no resistor,
        no ramp) [-].
    method : str
        ``"analytic"``, ``"simulated"`` or ``"both"`` [-].
    cycles : float
        Window after t = 0 in which the simulated first peak is sought [cycles].
    max_steps : int or None
        Compute limit per simulation, see :func:`core.energization.energize.simulate` [-].
    simulated : tuple or None
        The simulated part when :func:`peak_studies` has computed it for a whole batch [-].

    Returns
    -------
    PeakStudy

    Raises
    ------
    ParameterError
        On an unknown method or out-of-range inputs.

    Notes
    -----
    Analytic: per winding I = I_A*max(|b_R + cos(alpha_w)| + 1 - b_S, 0) with
    I_A = sqrt(2)*V_w/sqrt(X^2 + R^2) of the saturated loop, alpha_w the winding's voltage
    angle when it is energised; per line :func:`core.energization.closed_form.line_first_peaks` (for
    a delta the difference of the two windings' closed-form currents); the worst case is the largest
    line peak over the closing angle for the given residual fluxes
    (:func:`core.energization.closed_form.worst_line_first_peak`), Wang's formula with the largest
    |b_R| for windings that are their own lines, which is also returned for the winding.
    Simulated: :func:`core.energization.energize.simulate` over ``cycles`` and
    :func:`core.energization.energize.worst_closing_angle` for the same residual flux and pole
    delays.
    """
    if method not in ("analytic", "simulated", "both"):
        raise ParameterError("method", method, "analytic, simulated or both")
    closing_angle_deg = event.closing_angle_deg
    res, delay, warnings = _event_checks(circuit, event)
    r, L, _ = _loop(circuit)
    b_s = circuit.knee_flux_wb / circuit.nominal_flux_wb
    names = winding_names(circuit)
    x = 2.0 * math.pi * circuit.frequency_hz * L
    analytic_part: tuple[WindingEstimate, ...] | None = None
    worst_a = worst_res = worst_angle = worst_winding = None
    worst_line: str | None = None
    if method in ("analytic", "both"):
        angles = winding_angles(circuit, closing_angle_deg, delay)
        d = closed_form.flux_offset_pu(res, angles)
        amp = float(
            closed_form.first_peak_wang(
                circuit.winding_voltage_v, circuit.frequency_hz, L, r, 0.0, 1.0
            )
        )  # sqrt(2) V / |Z| times (2 + 0 - 1) = 1
        winding_peaks = amp * np.maximum(np.abs(d) + 1.0 - b_s, 0.0)
        delta = circuit.connection == "delta"
        shift = winding_angles(circuit, 0.0, np.zeros_like(delay))
        line_peaks = closed_form.line_first_peaks(amp, d, closing_angle_deg + shift, b_s, delta)
        lines = line_names(circuit)
        analytic_part = tuple(
            WindingEstimate(n, ln, float(np.mod(a, 360.0)), float(dd), float(p), float(q))
            for n, ln, a, dd, p, q in zip(
                names, lines, angles, d, winding_peaks, line_peaks, strict=True
            )
        )
        worst_res = float(np.abs(res).max())
        worst_winding = float(
            closed_form.first_peak_wang(
                circuit.winding_voltage_v, circuit.frequency_hz, L, r, worst_res, b_s
            )
        )
        worst_a, worst_angle, j = closed_form.worst_line_first_peak(
            amp, res, shift, winding_angles(circuit, 0.0, delay) - shift, b_s, delta
        )
        worst_line = lines[j]
        if r / x > ANALYTIC_VALIDITY_R_OVER_X:
            warnings.append(
                (
                    "analytic_outside_validity",
                    f"saturated-loop R/X = {r / x:.2f} exceeds {ANALYTIC_VALIDITY_R_OVER_X}: the "
                    "closed form loses accuracy; use the simulated value",
                )
            )
        if circuit.connection == "wye":
            warnings.append(
                (
                    "analytic_floating_neutral",
                    "the closed form treats each phase as grounded; with a floating neutral the "
                    "return path is through the other phases and the simulated value is lower",
                )
            )
    sim_part: tuple[LinePeak, ...] | None = None
    w_angle = w_peak = None
    w_line = None
    if method in ("simulated", "both"):
        if simulated is None:
            simulated = _simulated_batch(
                [circuit], np.array([closing_angle_deg]), res[None, :], delay[None, :], cycles,
                max_steps,
            )[0]  # fmt: skip
        sim_part, (w_angle, w_peak, w_line) = simulated
    if b_s >= 2.0 + float(np.abs(res).max()):
        warnings.append(
            (
                "no_saturation",
                "the knee lies above the largest possible flux (2 + |b_R| pu): no inrush beyond "
                "magnetising current is expected",
            )
        )
    approx = energize.APPROXIMATIONS.get(circuit.connection, ())
    if circuit.phases == 3 and method in ("analytic", "both"):
        approx = (*approx, "closed form: each winding treated as a single-phase circuit")
    return PeakStudy(
        rated_current_a=circuit.rated_line_current_a,
        rated_winding_current_a=circuit.rated_winding_current_a,
        analytic=analytic_part,
        analytic_worst_a=worst_a,
        analytic_worst_residual_pu=worst_res,
        analytic_worst_angle_deg=worst_angle,
        analytic_worst_line=worst_line,
        analytic_worst_winding_a=worst_winding,
        simulated=sim_part,
        simulated_worst_angle_deg=w_angle,
        simulated_worst_a=w_peak,
        simulated_worst_line=w_line,
        saturation_flux_pu=b_s,
        loop_resistance_ohm=r,
        loop_inductance_h=L,
        approximations=approx,
        warnings=tuple(warnings),
    )


@dataclass(frozen=True)
class LineEnvelope:
    """Decay of one line current; per-cycle arrays have one value per whole cycle."""

    line: str
    cycle_peaks_a: FloatArray
    second_harmonic_ratio: FloatArray
    min_second_harmonic_ratio: float
    min_second_harmonic_cycle: int
    decay_time_constant_s: float
    decay_fit_cycles: tuple[int, int]
    time_below_s: float
    equivalent_rms_a: FloatArray


@dataclass(frozen=True)
class AnalyticEnvelope:
    """Closed-form per-cycle peaks of one winding and of the line at its leading terminal.

    ``simulated_over_analytic`` is the simulated per-cycle peak of ``line`` over
    ``line_cycle_peaks_a`` (nan where the closed form has no saturation) [-]; currents [A].
    """

    winding: str
    line: str
    winding_cycle_peaks_a: FloatArray
    line_cycle_peaks_a: FloatArray
    simulated_over_analytic: FloatArray


@dataclass(frozen=True)
class EnvelopeStudy:
    """Result of :func:`envelope_study`."""

    rated_current_a: float
    frequency_hz: float
    lines: tuple[LineEnvelope, ...]
    equivalent_rms_times_s: FloatArray
    analytic: tuple[AnalyticEnvelope, ...]
    below_threshold_a: float
    harmonic_cycles: int
    waveform_time_s: FloatArray | None
    waveform_current_a: FloatArray | None
    steps_per_cycle: int
    approximations: tuple[str, ...]
    warnings: tuple[tuple[str, str], ...]


def envelope_study(
    circuit: EquivalentCircuit,
    event: SwitchingEvent,
    *,
    duration_s: float,
    samples_per_cycle: int,
    below_x_rated: float = 1.0,
    below_current_a: float | None = None,
    harmonic_cycles: int = 5,
    waveform_points: int = 0,
    max_steps: int | None = None,
    equivalent_rms_times_s: ArrayLike | None = None,
) -> EnvelopeStudy:
    """Per-cycle envelope, rms over time and harmonic content of one energisation.

    Parameters
    ----------
    circuit : EquivalentCircuit
        Energisation circuit [-].
    event : SwitchingEvent
        Closing angle, residual flux per winding and pole instants, from
        :func:`core.energization.switching_event.switching_event` (a plain closing: no resistor,
        no ramp) [-].
    duration_s : float
        Simulated time [s].
    samples_per_cycle : int
        Output samples per cycle [-].
    below_x_rated : float
        Threshold for ``time_below_s`` as a multiple of rated rms current, compared with the
        per-cycle peak [x rated].
    below_current_a : float or None
        Threshold in amperes; overrides ``below_x_rated`` (needed when no rating is known) [A].
    harmonic_cycles : int
        Number of first cycles over which the minimum second-harmonic ratio is taken [-].
    waveform_points : int
        Return the line currents decimated to at most this many points per line (0: none) [-].
    max_steps : int or None
        Compute limit, see :func:`core.energization.energize.simulate` [-].
    equivalent_rms_times_s : array_like or None
        Times at which I_eq(t) is tabulated, within the record; None for
        :data:`core.waveform.STANDARD_TIMES_S` up to the simulated time [s].

    Returns
    -------
    EnvelopeStudy

    Notes
    -----
    Per-cycle peaks are read exactly (:func:`core.energization.peaks.cycle_peaks`). I_eq(t) is
    tabulated at :data:`core.waveform.STANDARD_TIMES_S` up to the simulated time, or at
    the times given. The analytic envelope is
    :func:`core.energization.closed_form.peak_envelope_holcomb` per winding, and per line
    :func:`core.energization.closed_form.line_first_peaks` on each cycle's decayed flux offsets
    (:func:`core.energization.closed_form.flux_offsets_holcomb`).
    """
    closing_angle_deg = event.closing_angle_deg
    res, delay, warnings = _event_checks(circuit, event)
    if not (isinstance(harmonic_cycles, int) and harmonic_cycles >= 1):
        raise ParameterError("harmonic_cycles", harmonic_cycles, "an integer >= 1")
    if below_current_a is not None:
        threshold = float(below_current_a)
    elif math.isfinite(circuit.rated_line_current_a):
        threshold = below_x_rated * circuit.rated_line_current_a
    else:
        threshold = math.nan
    sim = energize.simulate(
        circuit,
        closing_angle_deg,
        res,
        delay,
        duration_s=duration_s,
        samples_per_cycle=samples_per_cycle,
        max_steps=max_steps,
    )
    spc = samples_per_cycle
    f = circuit.frequency_hz
    n_cycles = (sim.time_s.size - 1) // spc
    if n_cycles < 1:
        raise ParameterError("duration_s", duration_s, f">= one cycle ({1.0 / f:g} s)")
    cur = sim.line_current_a[0]
    cyc_peaks = peaks.cycle_peaks([circuit], np.array([closing_angle_deg]), res[None, :], sim)[0]
    h2 = waveform.harmonic_ratio(cur, spc, 2)
    t_end = float(sim.time_s[-1])
    if equivalent_rms_times_s is not None:
        times = np.asarray(equivalent_rms_times_s, dtype=float)
    else:
        times = np.array([t for t in waveform.STANDARD_TIMES_S if t <= t_end * (1 + 1e-12)])
        if times.size == 0:
            times = np.array([t_end])
    ieq = waveform.equivalent_rms(cur, float(sim.time_s[1]), times)
    # magnetising-level floor for the decay fit: twice the steady peak magnetising current
    lam_n = circuit.nominal_flux_wb
    floor = 2.0 * float(np.asarray(circuit.curve.current(lam_n)))
    lines_out = []
    hc = min(harmonic_cycles, n_cycles)
    for j, name in enumerate(line_names(circuit)):
        fit = waveform.decay_time_constant(cyc_peaks[j], f, floor)
        window = h2[j, :hc]
        if np.all(np.isnan(window)):
            mn, at = math.nan, 0
        else:
            at = int(np.nanargmin(window))
            mn = float(window[at])
        tb = (
            waveform.time_below(cyc_peaks[j], threshold, f)
            if math.isfinite(threshold)
            else math.nan
        )
        lines_out.append(
            LineEnvelope(
                line=name,
                cycle_peaks_a=cyc_peaks[j],
                second_harmonic_ratio=h2[j],
                min_second_harmonic_ratio=mn,
                min_second_harmonic_cycle=at,
                decay_time_constant_s=fit.time_constant_s,
                decay_fit_cycles=(fit.first_cycle, fit.last_cycle),
                time_below_s=tb,
                equivalent_rms_a=ieq[j],
            )
        )
        if math.isfinite(threshold) and math.isnan(tb):
            warnings.append(
                (
                    "envelope_truncated",
                    f"line {name}: the peak is still above the threshold at the end of the "
                    f"simulated {t_end:g} s; simulate longer for time_below_s",
                )
            )
    r, L, _ = _loop(circuit)
    b_s = circuit.knee_flux_wb / lam_n
    angles = winding_angles(circuit, closing_angle_deg, delay)
    offsets = closed_form.flux_offset_pu(res, angles)
    x = 2.0 * math.pi * f * L
    amp = float(closed_form.first_peak_wang(circuit.winding_voltage_v, f, L, r, 0.0, 1.0))
    per_cycle = np.stack(
        [closed_form.flux_offsets_holcomb(x, r, float(o), b_s, n_cycles) for o in offsets], axis=-1
    )  # (n_cycles, n_windings); an overshoot of the decay past zero stops at zero
    sign = np.where(offsets < 0.0, -1.0, 1.0)
    per_cycle = sign * np.maximum(sign * per_cycle, 0.0)
    line_env = closed_form.line_first_peaks(
        amp, per_cycle, closing_angle_deg + winding_angles(circuit, 0.0, np.zeros_like(delay)),
        b_s, circuit.connection == "delta",
    ).T  # fmt: skip
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(
            line_env > 0.0, cyc_peaks / np.where(line_env > 0.0, line_env, 1.0), np.nan
        )
    analytic_env = tuple(
        AnalyticEnvelope(
            wname, lname,
            closed_form.peak_envelope_holcomb(
                circuit.winding_voltage_v, f, L, r, float(o), b_s, n_cycles
            ),
            line_env[j], ratio[j],
        )
        for j, (wname, lname, o) in enumerate(
            zip(winding_names(circuit), line_names(circuit), offsets, strict=True)
        )
    )  # fmt: skip
    if r / x > closed_form.ENVELOPE_VALIDITY_R_OVER_X:
        warnings.append(
            (
                "analytic_envelope_outside_validity",
                f"saturated-loop R/X = {r / x:.2f} exceeds "
                f"{closed_form.ENVELOPE_VALIDITY_R_OVER_X}: "
                "the closed-form per-cycle peaks after the first deviate from the exact two-slope "
                "solution by more than about 10 % (measured: -15 % at 0.15, -40 % at 0.27, no "
                "saturation left after the first cycle at 0.53); use the simulated "
                "envelope (simulated_over_analytic gives the ratio per cycle)",
            )
        )
    wt: FloatArray | None = None
    wc: FloatArray | None = None
    if waveform_points > 0:
        step = max(1, math.ceil(sim.time_s.size / waveform_points))
        wt = sim.time_s[::step]
        wc = cur[:, ::step]
    return EnvelopeStudy(
        rated_current_a=circuit.rated_line_current_a,
        frequency_hz=f,
        lines=tuple(lines_out),
        equivalent_rms_times_s=times,
        analytic=analytic_env,
        below_threshold_a=threshold,
        harmonic_cycles=hc,
        waveform_time_s=wt,
        waveform_current_a=wc,
        steps_per_cycle=sim.steps_per_cycle,
        approximations=sim.approximations,
        warnings=tuple(warnings),
    )
