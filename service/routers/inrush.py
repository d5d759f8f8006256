"""``/v1/inrush``: the first peak and the decay envelope of an energisation.

CPU-bound work never runs on the event loop: simulations go to a simulation slot
(service/compute.py); only the closed-form path, a fraction of a millisecond, runs inline. The
response model is serialised once, by pydantic, and returned as bytes (the declared
``response_model`` documents it in the contract).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Annotated, Any

import numpy as np
from fastapi import APIRouter, Body
from fastapi.responses import Response
from pydantic import BaseModel, ValidationError

from core import cost
from core.energization import inrush_study
from core.errors import CoreError, LimitError
from service import budget, compute, convert
from service.deps import SettingsDep
from service.examples import (
    ENVELOPE_EXAMPLES,
    PEAK_BATCH_EXAMPLES,
    PEAK_EXAMPLES,
)
from service.models.common import Assumption
from service.models.inrush import (
    AnalyticEnvelope,
    AnalyticWindingPeak,
    BatchItem,
    EnvelopeRequest,
    EnvelopeResponse,
    LineEnvelopeOut,
    PeakBatchRequest,
    PeakBatchResponse,
    PeakRequest,
    PeakResponse,
    SimulatedLinePeak,
    Waveform,
    WorstCase,
)
from service.problems import PROBLEM_RESPONSES, batch_problem
from service.settings import Settings

router = APIRouter(prefix="/v1/inrush", tags=["inrush"], responses=PROBLEM_RESPONSES)


def _json(model: BaseModel) -> Response:
    return Response(model.model_dump_json(), media_type="application/json")


@router.post(
    "/peak",
    response_model=PeakResponse,
    operation_id="inrush_peak",
    summary="First inrush peak and its worst case",
    response_description="First peak per winding (closed form) and per line (simulated), the "
    "worst cases, assumptions, warnings and method",
    responses=compute.BUSY_RESPONSES,
)
async def peak(
    body: Annotated[PeakRequest, Body(openapi_examples=PEAK_EXAMPLES)],
    settings: SettingsDep,
) -> Response:
    """First peak of one switching event; the worst closing angle for the same residual flux
    (simulated) and the worst case of the closed form (voltage-zero closing, residual aligned).
    """
    if body.method == "analytic":
        return _json(_peak(body, settings))
    return _json(await compute.run_heavy(settings, _peak, body, settings))


def _peak(body: PeakRequest, settings: Settings) -> PeakResponse:
    circuit, event, assumptions = convert.study_inputs(body)
    if body.method != "analytic":
        work = cost.peak_work(circuit, True, float(np.max(event.pole_delay_s)))
        budget.enforce(
            lambda _o: work, [budget.Knob("method", choice="analytic")], settings.max_request_steps
        )
    study = inrush_study.peak_study(
        circuit,
        event,
        method=body.method,
        max_steps=settings.max_total_steps,
    )
    return _peak_response(study, assumptions)


def _peak_response(study: inrush_study.PeakStudy, assumptions: list[Assumption]) -> PeakResponse:
    rated = study.rated_current_a
    sim_by_line = {p.line: p.first_peak_a for p in study.simulated or ()}
    analytic = (
        [
            AnalyticWindingPeak(
                winding=w.winding,
                line=w.line,
                closing_angle_deg=w.closing_angle_deg,
                flux_offset_pu=w.flux_offset_pu,
                first_peak_a=w.line_peak_a,
                first_peak_x_rated=convert.x_rated(w.line_peak_a, rated),
                winding_current_peak_a=w.winding_peak_a,
                winding_current_peak_x_rated_winding=convert.x_rated(
                    w.winding_peak_a, study.rated_winding_current_a
                ),
                simulated_over_analytic=(
                    sim_by_line[w.line] / w.line_peak_a
                    if w.line in sim_by_line and w.line_peak_a > 0.0
                    else None
                ),
            )
            for w in study.analytic
        ]
        if study.analytic is not None
        else None
    )
    simulated = (
        [
            SimulatedLinePeak(
                line=p.line,
                first_peak_a=p.first_peak_a,
                first_peak_x_rated=convert.x_rated(p.first_peak_a, rated),
                time_of_peak_s=p.time_of_peak_s,
            )
            for p in study.simulated
        ]
        if study.simulated is not None
        else None
    )
    if simulated is not None:
        first = max(p.first_peak_a for p in simulated)
    else:
        first = max(w.first_peak_a for w in analytic or [])
    ws = (
        WorstCase(
            over="closing angle, for the given residual flux and pole delays (simulated)",
            peak_a=study.simulated_worst_a,
            peak_x_rated=convert.x_rated(study.simulated_worst_a, rated),
            closing_angle_deg=study.simulated_worst_angle_deg,
            line=study.simulated_worst_line,
        )
        if study.simulated_worst_a is not None
        else None
    )
    wa = (
        WorstCase(
            over="closing angle, for the given residual flux and pole delays (closed form: the "
            "largest line current; for windings that are their own lines, closing at a voltage "
            "zero with the largest given residual flux aligned)",
            peak_a=study.analytic_worst_a,
            peak_x_rated=convert.x_rated(study.analytic_worst_a, rated),
            closing_angle_deg=study.analytic_worst_angle_deg,
            line=study.analytic_worst_line,
            residual_flux_pu=study.analytic_worst_residual_pu,
            winding_current_peak_a=study.analytic_worst_winding_a,
        )
        if study.analytic_worst_a is not None
        else None
    )
    return PeakResponse(
        rated_current_a=convert.maybe(rated),
        first_peak_a=first,
        first_peak_x_rated=convert.x_rated(first, rated),
        analytic=analytic,
        simulated=simulated,
        worst_case_simulated=ws,
        worst_case_analytic=wa,
        saturation_flux_pu=study.saturation_flux_pu,
        loop_resistance_ohm=study.loop_resistance_ohm,
        loop_inductance_h=study.loop_inductance_h,
        assumptions=assumptions,
        warnings=convert.warnings_out(study.warnings),
        method=convert.method_out(
            study.analytic is not None, study.simulated is not None, study.approximations
        ),
    )


@router.post(
    "/envelope",
    response_model=EnvelopeResponse,
    operation_id="inrush_envelope",
    summary="Decay envelope: per-cycle peaks, rms over time, second harmonic",
    response_description="Per-line envelope, I_eq(t) table, harmonic ratios, optional waveform",
    responses=compute.BUSY_RESPONSES,
)
async def envelope(
    body: Annotated[EnvelopeRequest, Body(openapi_examples=ENVELOPE_EXAMPLES)],
    settings: SettingsDep,
) -> Response:
    """Simulated decay of one switching event with the closed-form envelope beside it."""
    return _json(await compute.run_heavy(settings, _envelope, body, settings))


def _envelope(
    body: EnvelopeRequest, settings: Settings, ieq_times_s: tuple[float, ...] | None = None
) -> EnvelopeResponse:
    """The envelope response; ``ieq_times_s`` replaces the I_eq table's times (for the sheet)."""
    circuit, event, assumptions = convert.study_inputs(body)
    opt = body.options
    convert.check_work(
        settings,
        circuit.phases,
        circuit.frequency_hz,
        opt.duration_s,
        opt.samples_per_cycle,
        samples_field="options.samples_per_cycle",
    )

    def estimate(o: Mapping[str, float]) -> cost.Work:
        return cost.envelope_work(
            circuit,
            budget.replaced(o, "options.duration_s", opt.duration_s)
            + float(np.max(event.pole_delay_s)),
            int(budget.replaced(o, "options.samples_per_cycle", opt.samples_per_cycle)),
        )

    budget.enforce(
        estimate,
        [
            budget.Knob("options.duration_s", opt.duration_s, 1.0 / circuit.frequency_hz),
            budget.Knob("options.samples_per_cycle", opt.samples_per_cycle, 16, integer=True),
        ],
        settings.max_request_steps,
    )
    points = min(opt.waveform_points, settings.max_waveform_points)
    study = inrush_study.envelope_study(
        circuit,
        event,
        duration_s=opt.duration_s,
        samples_per_cycle=opt.samples_per_cycle,
        below_x_rated=opt.below_x_rated,
        below_current_a=opt.below_current_a,
        harmonic_cycles=opt.harmonic_cycles,
        waveform_points=points,
        max_steps=settings.max_total_steps,
        equivalent_rms_times_s=ieq_times_s,
    )
    rated = study.rated_current_a
    known = convert.x_rated(1.0, rated) is not None
    lines = [
        LineEnvelopeOut(
            line=ln.line,
            cycle_peaks_a=convert.floats(ln.cycle_peaks_a),
            cycle_peaks_x_rated=convert.floats(ln.cycle_peaks_a / rated) if known else None,
            second_harmonic_ratio=[convert.maybe(v) for v in ln.second_harmonic_ratio],
            min_second_harmonic_ratio=convert.maybe(ln.min_second_harmonic_ratio),
            min_second_harmonic_cycle=ln.min_second_harmonic_cycle,
            decay_time_constant_s=convert.maybe(ln.decay_time_constant_s),
            decay_fit_cycles=list(ln.decay_fit_cycles),
            time_below_s=convert.maybe(ln.time_below_s),
            equivalent_rms_a=convert.floats(ln.equivalent_rms_a),
            equivalent_rms_x_rated=convert.floats(ln.equivalent_rms_a / rated) if known else None,
        )
        for ln in study.lines
    ]
    wave = None
    if study.waveform_time_s is not None and study.waveform_current_a is not None:
        wave = Waveform(
            time_s=convert.floats(study.waveform_time_s),
            current_a={
                ln.line: convert.floats(row)
                for ln, row in zip(study.lines, study.waveform_current_a, strict=True)
            },
        )
    return EnvelopeResponse(
        rated_current_a=convert.maybe(rated),
        frequency_hz=study.frequency_hz,
        threshold_a=convert.maybe(study.below_threshold_a),
        equivalent_rms_times_s=convert.floats(np.asarray(study.equivalent_rms_times_s)),
        lines=lines,
        analytic=[
            AnalyticEnvelope(
                winding=a.winding,
                line=a.line,
                cycle_peaks_a=convert.floats(a.line_cycle_peaks_a),
                winding_current_cycle_peaks_a=convert.floats(a.winding_cycle_peaks_a),
                simulated_over_analytic=[convert.maybe(v) for v in a.simulated_over_analytic],
            )
            for a in study.analytic
        ],
        waveform=wave,
        steps_per_cycle=study.steps_per_cycle,
        assumptions=assumptions,
        warnings=convert.warnings_out(study.warnings),
        method=convert.method_out(True, True, study.approximations),
    )


@router.post(
    "/peak/batch",
    response_model=PeakBatchResponse,
    operation_id="inrush_peak_batch",
    summary="First peaks of many cases in one call",
    response_description="One result or one problem per case, in the order given",
    responses=compute.BUSY_RESPONSES,
)
async def peak_batch(
    body: Annotated[PeakBatchRequest, Body(openapi_examples=PEAK_BATCH_EXAMPLES)],
    settings: SettingsDep,
) -> Response:
    """Each case is validated and answered on its own: a bad case gets its own problem document
    and never fails the others. The simulations of all valid cases with the same ``method`` run
    vectorised together.
    """
    if len(body.cases) > settings.max_cases:
        raise LimitError("cases", len(body.cases), settings.max_cases)
    return _json(await compute.run_heavy(settings, _peak_batch, body, settings))


def _peak_batch(body: PeakBatchRequest, settings: Settings) -> PeakBatchResponse:
    items: list[BatchItem | None] = [None] * len(body.cases)
    valid: dict[str, list[tuple[int, tuple[Any, ...], list[Assumption]]]] = {}
    for idx, raw in enumerate(body.cases):
        try:
            req = PeakRequest.model_validate(raw)
            circuit, event, assumptions = convert.study_inputs(req)
        except ValidationError as exc:
            items[idx] = BatchItem(index=idx, status=422, problem=batch_problem(idx, exc, raw))
            continue
        except CoreError as exc:
            items[idx] = BatchItem(index=idx, status=422, problem=batch_problem(idx, exc))
            continue
        case = (circuit, event)
        valid.setdefault(req.method, []).append((idx, case, assumptions))
    # the work of every valid case, before any of them is simulated
    per_case = sorted(
        (idx, cost.peak_work(c[0], method != "analytic", float(np.max(c[1].pole_delay_s))).steps)
        for method, group in valid.items()
        for idx, c, _ in group
    )

    def estimate(o: Mapping[str, float]) -> cost.Work:
        n = int(o.get("cases", len(body.cases)))
        steps = sum(w for idx, w in per_case if idx < n)
        return cost.Work(steps, (("simulated cases", steps),))

    budget.enforce(
        estimate,
        [budget.Knob("cases", len(body.cases), 1, integer=True)],
        settings.max_request_steps,
    )
    for method, group in valid.items():
        studies: list[inrush_study.PeakStudy | None]
        try:
            studies = inrush_study.peak_studies(  # type: ignore[assignment]
                [c for _, c, _ in group], method=method, max_steps=settings.max_total_steps
            )
        except CoreError:  # one case breaks the vectorised call: answer each on its own
            studies = []
            for idx, case, _ in group:
                compute.checkpoint()
                try:
                    studies.append(
                        inrush_study.peak_study(
                            *case, method=method, max_steps=settings.max_total_steps
                        )
                    )
                except CoreError as exc:
                    items[idx] = BatchItem(index=idx, status=422, problem=batch_problem(idx, exc))
                    studies.append(None)
        for (idx, _, assumptions), study in zip(group, studies, strict=True):
            if study is not None:
                items[idx] = BatchItem(
                    index=idx, status=200, result=_peak_response(study, assumptions)
                )
    done = [it for it in items if it is not None]
    return PeakBatchResponse(
        count=len(done), failed=sum(1 for it in done if it.status != 200), results=done
    )
