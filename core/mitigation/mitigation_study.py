"""Mitigations of energisation inrush, each computed on the same case and ranked.

One call for the ``/v1/mitigation`` operation. The case is a transformer (nameplate), its supply
(a source impedance, or a generator) and its residual flux; each mitigation is a change to that
case, and every option -- and the case as it is, the baseline -- is judged by the same numbers:

* the design-basis first peak: the largest line peak at the worst closing instant the option
  leaves possible (over the closing angle for an uncontrolled breaker; over the closing-time
  error band for a controlled or pre-magnetised closing), simulated
  (:func:`core.energization.inrush_study.worst_closing_angles`,
  :func:`core.energization.energize.simulate`), the angle searched on samples and, for an
  option with neither a resistor nor a ramp (the baseline among them), its peaks then read
  exactly at the angle found (:func:`core.energization.peaks.first_peaks`, as the peak
  operation reads them);
* at that same event: the equivalent rms over the first 0.1 s, the ride-through and protection
  margins of the caller's devices (:func:`core.protection.coordination.evaluate`) and, with a
  generator, the voltage dip and its verdict (:func:`core.supply.dip.energize_from_source`).

The mitigations (:data:`KINDS`): controlled (point-on-wave) closing, a pre-insertion resistor
(sized for a peak target or for the dip limit when not given, see
:mod:`core.mitigation.pre_insertion`), demagnetising, pre-magnetising matched to a known closing
instant, a ramped (reduced-voltage) energisation, another tap, core material or rating, and
energising from the other winding (:mod:`core.transformer.variants`). Options are ranked: those that
pass every check made of them first (peak target, dip limit, every device riding through), then by
the design-basis peak.

Limits: the solver's approximations apply to every option (reported); the closing-time error is
a band searched for its worst point, not a distribution; a ramp is a property of the source, so
no dip is defined for it; energising from the other winding moves the supply, so neither the
devices nor the dip of the presently energised side apply to it.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from core import waveform
from core.energization import energize, inrush_study, peaks
from core.energization.switching_event import (
    SwitchingEvent,
    plain_event_arrays,
    switching_event,
)
from core.errors import ParameterError
from core.mitigation import pre_insertion
from core.mitigation.mitigation_options import (
    KINDS,
    DeviceCheck,
    GeneratorSupply,
    Option,
    default_options,
)
from core.mitigation.plans import (
    WINDOW_CYCLES,
    Context,
    Plan,
    plan_for,
    preset_flux,
)
from core.protection import coordination, damage_curves, device_operation, protection_study
from core.supply import dip, dip_limits, sources
from core.transformer import circuit_model
from core.transformer.circuit_model import Assumption, Nameplate, Source

FloatArray = NDArray[np.float64]

__all__ = [
    "IEQ_TIME_S",
    "KINDS",
    "DipOutcome",
    "MitigationStudy",
    "OptionResult",
    "SweepPoint",
    "default_options",
    "mitigation_study",
    "preset_flux",
]

#: Time at which the equivalent rms is reported: the 0.1 s of the common-practice inrush point
#: (12 x rated for 0.1 s, common practice; see core.protection.device_operation.INRUSH_POINTS) [s].
IEQ_TIME_S = 0.1
#: Scale factors of the residual-flux sweep of the baseline [-].
RESIDUAL_SWEEP = (0.0, 0.25, 0.5, 0.75, 1.0)
#: Points of the closing-time error band searched for its worst event [-].
ERROR_POINTS = 21


@dataclass(frozen=True)
class DipOutcome:
    """The dip of one option with a generator supply.

    Attributes
    ----------
    dip_percent : float
        Headline dip [% of the pre-event voltage].
    recovery_time_s : float
        Into the recovery band for good; nan when not within the simulated time [s].
    passed : bool or None
        Against the supply's limit; None when it cannot be judged.
    inrush_peak_a : float
        First peak with the generator's dynamics [A].
    """

    dip_percent: float
    recovery_time_s: float
    passed: bool | None
    inrush_peak_a: float


@dataclass(frozen=True)
class OptionResult:
    """One option (or the baseline) evaluated.

    Attributes
    ----------
    kind : str
        ``"baseline"`` or one of :data:`KINDS`.
    label : str
        The option in words, with its key value.
    evaluated : bool
        False when the option does not apply to this case (``notes`` says why).
    rated_current_a : float
        Rated rms line current of the energised side of this option [A].
    peak_a : float
        Design-basis first peak [A] (nan when not evaluated).
    peak_x_rated : float
        The same as a multiple of the present unit's rated line current (of the other
        winding's, for that option) [-].
    peak_line : str
        Line that carries it.
    worst_over : str
        What the peak is the worst of.
    closing_angle_deg : float
        Phase-A voltage angle at t = 0 of the design-basis event [deg].
    pole_delay_s : ndarray
        Pole closing instants of that event [s].
    residual_flux_pu : ndarray
        Residual flux of that event [pu of lambda_N of this option's circuit].
    equivalent_rms_a : float
        Largest line I_eq(0.1 s) of that event [A].
    devices : coordination.Evaluation or None
        The caller's devices against this option's inrush; None when not evaluated.
    dip : DipOutcome or None
        With a generator supply; None when not evaluated.
    meets_target : bool or None
        peak <= target; None without a target.
    passes : bool
        Every check made of it passed (target, dip, devices riding through).
    parameters : tuple of Assumption
        The values that define the option, with their provenance.
    requires : tuple of str
        What the option needs in practice.
    notes : tuple of str
        What was not evaluated and why, and what the option changed.
    """

    kind: str
    label: str
    evaluated: bool
    rated_current_a: float
    peak_a: float
    peak_x_rated: float
    peak_line: str
    worst_over: str
    closing_angle_deg: float
    pole_delay_s: FloatArray
    residual_flux_pu: FloatArray
    equivalent_rms_a: float
    devices: coordination.Evaluation | None
    dip: DipOutcome | None
    meets_target: bool | None
    passes: bool
    parameters: tuple[Assumption, ...]
    requires: tuple[str, ...]
    notes: tuple[str, ...]


@dataclass(frozen=True)
class SweepPoint:
    """Worst first peak of the baseline with its residual flux scaled."""

    scale: float
    residual_flux_pu: FloatArray
    peak_a: float


@dataclass(frozen=True)
class MitigationStudy:
    """Result of :func:`mitigation_study`."""

    rated_current_a: float
    target_peak_a: float | None
    baseline: OptionResult
    ranked: tuple[OptionResult, ...]
    residual_sweep: tuple[SweepPoint, ...]
    approximations: tuple[str, ...]
    assumptions: tuple[Assumption, ...]
    warnings: tuple[tuple[str, str], ...]


def _search(plans: list[Plan], max_steps: int | None) -> None:
    """Fill each plan's design-basis event: angle, pole delays and line peaks."""
    groups: dict[tuple[int, str, float, float], list[Plan]] = {}
    for p in plans:
        if p.error is not None:
            continue
        if p.fixed_angle_deg is None:
            c = p.circuit
            groups.setdefault((c.phases, c.connection, c.frequency_hz, p.window_s), []).append(p)
        else:
            _search_error_band(p, max_steps)
    for (_, _, _, window), members in groups.items():
        names = sorted({k for p in members for k in p.extras})
        per_case = {
            k: np.array([p.extras.get(k, pre_insertion.NEUTRAL_EXTRAS[k]) for p in members])
            for k in names
        }
        angles, found = inrush_study.worst_closing_angles(
            [p.circuit for p in members],
            np.stack([p.residual for p in members]),
            np.stack([p.delay for p in members]),
            duration_s=window,
            max_steps=max_steps,
            per_case=per_case,
        )
        for p, a, pk in zip(members, angles, found, strict=True):
            p.angle_deg = float(np.mod(np.round(a, 6), 360.0))
            p.event_delay = p.delay
            p.peaks = pk
        _read_exactly(members, window, max_steps)


def _read_exactly(members: list[Plan], window_s: float, max_steps: int | None) -> None:
    """Re-read the design-basis peaks of the plain plans (no resistor, no ramp) exactly.

    The search reads its trial peaks from samples; at the angles found the peaks of the plans
    :func:`core.energization.peaks.first_peaks` can re-integrate (every mitigation argument
    neutral) are read as the peak operation reads them, so the baseline's peak is that
    operation's worst-case peak of the same event.
    """
    neutral = pre_insertion.NEUTRAL_EXTRAS
    plain = [p for p in members if all(p.extras.get(k, v) == v for k, v in neutral.items())]
    if not plain:
        return
    circuits = [p.circuit for p in plain]
    angles = np.array([p.angle_deg for p in plain], dtype=float)
    residual = np.stack([p.residual for p in plain])
    sim = energize.simulate(
        circuits, angles, residual, np.stack([p.delay for p in plain]),
        duration_s=window_s, samples_per_cycle=128, max_steps=max_steps,
    )  # fmt: skip
    exact = peaks.first_peaks(circuits, angles, residual, sim).peak_a
    for p, pk in zip(plain, exact, strict=True):
        p.peaks = pk


def _simulate(
    p: Plan, angle_deg: ArrayLike, delay: FloatArray, duration_s: float, max_steps: int | None
) -> energize.Simulation:
    """One solver call for a plan's circuit, residual flux and source terms."""
    e = {**pre_insertion.NEUTRAL_EXTRAS, **p.extras}
    return energize.simulate(
        p.circuit,
        angle_deg,
        p.residual,
        delay,
        duration_s=duration_s,
        max_steps=max_steps,
        insertion_resistance_ohm=e["insertion_resistance_ohm"],
        insertion_time_s=e["insertion_time_s"],
        voltage_start_pu=e["voltage_start_pu"],
        voltage_hold_s=e["voltage_hold_s"],
        voltage_rise_s=e["voltage_rise_s"],
    )


def _search_error_band(p: Plan, max_steps: int | None) -> None:
    """Worst event of a fixed closing over its closing-time error band."""
    f = p.circuit.frequency_hz
    errors = np.linspace(-p.error_ms, p.error_ms, ERROR_POINTS) if p.error_ms > 0 else np.zeros(1)
    angle = float(p.fixed_angle_deg if p.fixed_angle_deg is not None else 0.0)
    sim = _simulate(p, angle + 360.0 * f * errors * 1e-3, p.delay, p.window_s, max_steps)
    peaks = energize.refined_abs_peak(sim.line_current_a)
    k = int(np.argmax(peaks.max(axis=1)))
    p.angle_deg = float(np.mod(angle + 360.0 * f * errors[k] * 1e-3, 360.0))
    p.event_delay = p.delay
    p.peaks = peaks[k]


def _evaluate(
    p: Plan, ctx: Context, check: DeviceCheck | None, base_rated_a: float
) -> OptionResult:
    """Everything else at the plan's design-basis event."""
    c = p.circuit
    f = c.frequency_hz
    rated = c.rated_line_current_a
    lines = inrush_study.line_names(c)
    delay = p.event_delay if p.event_delay is not None else p.delay
    notes = list(p.notes)
    params = list(p.parameters)
    if p.error is not None or p.peaks is None:
        return OptionResult(
            p.kind,
            p.label,
            False,
            rated,
            math.nan,
            math.nan,
            "",
            p.worst_over,
            math.nan,
            delay,
            p.residual,
            math.nan,
            None,
            None,
            None,
            False,
            tuple(params),
            tuple(p.requires),
            (*notes, p.error or "not evaluated"),
        )
    extra_end = p.window_s - WINDOW_CYCLES / f
    duration = max(p.window_s, IEQ_TIME_S + 1.0 / f)
    devices_now = check is not None and p.devices_apply
    if devices_now and check is not None:
        duration = max(duration, check.duration_s + extra_end)
    sim = _simulate(p, p.angle_deg, delay, duration, ctx.max_steps)
    cur = sim.line_current_a[0]
    ieq = float(waveform.equivalent_rms(cur, float(sim.time_s[1]), [IEQ_TIME_S]).max())
    evaluation = None
    if devices_now and check is not None:
        seen = device_operation.inrush_from_waveform(
            sim.time_s, cur, f, rated_current_a=rated, lines=lines
        )
        rating = p.rating_va if math.isfinite(p.rating_va) else ctx.nameplate.rating_va
        limit_curve = damage_curves.through_fault_damage_curve(
            rating / 1e3,
            c.phases,
            rated,
            ctx.nameplate.impedance_percent / 100.0,
            protection_study.source_impedance_pu(c, rating),
            frequent=check.frequent_faults,
            insulation=check.insulation,
        )
        evaluation = coordination.evaluate(
            seen,
            check.devices,
            limit_curve,
            opening_time_s=check.opening_time_s,
            damage_current_factor=check.damage_current_factor,
        )
    r_ins = p.extras.get("insertion_resistance_ohm", 0.0)
    t_ins = p.extras.get("insertion_time_s", 0.0)
    # the plan's design-basis event, resistor included
    design = switching_event(
        c, p.angle_deg, p.residual, delay, insertion_resistance_ohm=r_ins, insertion_time_s=t_ins
    )
    if r_ins > 0.0:
        used = float(sim.insertion_time_s[0])  # the bypass as the solver rounded it
        at_event = float(pre_insertion.insertion_energy_j(sim.time_s, cur, r_ins, used))
        largest, at_angle = pre_insertion.largest_insertion_energy_j(
            c, design, max_steps=ctx.max_steps
        )
        params += [
            Assumption(
                "energy_at_design_event_kj",
                at_event / 1e3,
                "kJ",
                "absorbed by the three resistors at the design-basis event",
            ),
            Assumption(
                "largest_energy_kj",
                max(largest, at_event) / 1e3,
                "kJ",
                f"largest over closing angles on a 5 degree grid (at {at_angle:g} deg)",
            ),
        ]
    outcome = None
    sup = ctx.supply
    if sup is not None:
        if p.dip_note is not None or p.dip_circuit is None:
            notes.append(p.dip_note or "dip not evaluated")
        else:
            d = dip.energize_from_source(
                sup.generator,
                p.dip_circuit,
                design,
                excitation=sup.excitation,
                bus_load=sup.bus_load,
                duration_s=sup.duration_s,
            )
            verdict = dip_limits.verdicts(
                d.dip_percent,
                d.recovery_time_s,
                (sup.limit,),
                simulated_s=sup.duration_s,
                recovery_reliable=d.recovery_reliable,
            )[0]
            outcome = DipOutcome(d.dip_percent, d.recovery_time_s, verdict.passed, d.inrush_peak_a)
    k = int(np.argmax(p.peaks))
    peak = float(p.peaks[k])
    meets = None if ctx.target_a is None else peak <= ctx.target_a
    rides = evaluation is None or not any(d.ride_through.trips for d in evaluation.devices)
    passes = meets is not False and rides and (outcome is None or outcome.passed is not False)
    basis = p.x_rated_base_a if math.isfinite(p.x_rated_base_a) else base_rated_a
    return OptionResult(
        p.kind,
        p.label,
        True,
        rated,
        peak,
        peak / basis,
        lines[k],
        p.worst_over,
        p.angle_deg,
        delay,
        p.residual,
        ieq,
        evaluation,
        outcome,
        meets,
        passes,
        tuple(params),
        tuple(p.requires),
        tuple(notes),
    )


def mitigation_study(
    nameplate: Nameplate,
    source: Source | None,
    event: SwitchingEvent,
    options: Sequence[Option] | None = None,
    *,
    supply: GeneratorSupply | None = None,
    devices: DeviceCheck | None = None,
    target_peak_a: float | None = None,
    residual_sweep: Sequence[float] = RESIDUAL_SWEEP,
    max_steps: int | None = None,
) -> MitigationStudy:
    """Weigh mitigations of the energisation inrush of one unit on one supply.

    Parameters
    ----------
    nameplate : Nameplate
        The transformer [-].
    source : Source or None
        Supply at the energised terminals; None for an ideal source, or with ``supply`` (whose
        subtransient impedance then is the source) [-].
    event : SwitchingEvent
        The energisation as it is, a plain closing built for the unit's phase count
        (:func:`core.energization.switching_event.switching_event`): its residual flux per
        winding and the pole closing instants of an uncontrolled closing; its closing angle is
        not used (each option's design-basis angle is searched) [-].
    options : sequence of options or None
        The mitigations to weigh; None for
        :func:`core.mitigation.mitigation_options.default_options` [-].
    supply : GeneratorSupply or None
        A generator: its X''_d and R_a are the source of the peak searches and every option's
        dip is simulated and judged [-].
    devices : DeviceCheck or None
        Protective devices judged against every option's inrush [-].
    target_peak_a : float or None
        Largest acceptable design-basis first peak, > 0 [A].
    residual_sweep : sequence of float
        Scale factors of the baseline residual flux for the sweep, each in [0, 1.5] [-].
    max_steps : int or None
        Compute limit per solver call [-].

    Returns
    -------
    MitigationStudy
        The baseline, the options ranked, and the baseline's worst peak against its residual.

    Raises
    ------
    ParameterError
        On inconsistent inputs (e.g. both ``source`` and ``supply``). An option that does not
        apply to the case is returned unevaluated with the reason, not raised.

    Notes
    -----
    The design-basis peak is the worst the option leaves possible: over the closing angle
    (:func:`core.energization.inrush_study.worst_closing_angles`, 0.025 degree resolution) for an
    uncontrolled closing, over the closing-time error band (21 points) for a controlled one.
    Ranking: the options that pass every check made of them first, then by their peak as a multiple
    of the present unit's rated current (of the other winding's, for that option).
    """
    if supply is not None and source is not None:
        raise ParameterError("source", source.kind, "absent when a generator supply is given")
    if target_peak_a is not None and not (math.isfinite(target_peak_a) and target_peak_a > 0):
        raise ParameterError("target_peak_a", target_peak_a, "a finite number > 0")
    scales = [float(x) for x in residual_sweep]
    if any(not (math.isfinite(x) and 0.0 <= x <= 1.5) for x in scales):
        raise ParameterError("residual_sweep", scales, "factors in [0, 1.5]")
    peak_source = sources.subtransient_source(supply.generator) if supply is not None else source
    circuit = circuit_model.equivalent_circuit(nameplate, peak_source)
    dip_circuit = circuit_model.equivalent_circuit(nameplate, None) if supply is not None else None
    res, delay = plain_event_arrays(circuit, event)
    ctx = Context(
        nameplate, peak_source, circuit, dip_circuit, event, supply, target_peak_a, max_steps
    )
    warnings: list[tuple[str, str]] = list(circuit.warnings)
    base = Plan(
        "baseline",
        "as it is (uncontrolled closing)",
        circuit,
        res,
        delay,
        dip_circuit=dip_circuit,
        worst_over="closing angle (uncontrolled breaker)",
    )
    plans: list[Plan] = [base]
    for opt in default_options() if options is None else options:
        try:
            plans.append(plan_for(opt, ctx, warnings))
        except ParameterError as exc:  # a compute limit (LimitError) is the caller's to see
            failed = Plan(
                getattr(opt, "kind", "option"), getattr(opt, "kind", "option"), circuit, res, delay
            )
            failed.error = f"not applicable to this case: {exc}"
            plans.append(failed)
    sweep = [Plan("sweep", f"x{s:g}", circuit, res * s, delay) for s in scales]
    _search(plans + sweep, max_steps)
    base_rated = circuit.rated_line_current_a
    results = [_evaluate(p, ctx, devices, base_rated) for p in plans]

    def key(r: OptionResult) -> tuple[int, int, float]:
        return (not r.evaluated, not r.passes, r.peak_x_rated if r.evaluated else math.inf)

    ranked = tuple(sorted(results[1:], key=key))
    approximations = tuple(
        dict.fromkeys(
            energize.APPROXIMATIONS.get(circuit.connection, ())
            + (dip.APPROXIMATIONS.get(circuit.connection, ()) if supply else ())
        )
    )
    assumptions = [
        Assumption(
            "peak_source",
            peak_source.kind if peak_source else "ideal",
            "-",
            "the generator's X''d and R_a as a fixed impedance (the first cycles of the inrush)"
            if supply
            else "given or ideal",
        ),
        Assumption(
            "ieq_time_s",
            IEQ_TIME_S,
            "s",
            "the 0.1 s of the 12 x rated common-practice inrush point",
        ),
    ]
    if target_peak_a is not None:
        assumptions.append(Assumption("target_peak_a", target_peak_a, "A", "given"))
    return MitigationStudy(
        rated_current_a=base_rated,
        target_peak_a=target_peak_a,
        baseline=results[0],
        ranked=ranked,
        residual_sweep=tuple(
            SweepPoint(s, p.residual, float(np.max(p.peaks)) if p.peaks is not None else math.nan)
            for s, p in zip(scales, sweep, strict=True)
        ),
        approximations=approximations,
        assumptions=tuple(assumptions) + circuit.assumptions,
        warnings=tuple(warnings),
    )
