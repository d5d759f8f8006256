"""``/v1/clearance``: protective devices against the computed inrush and the damage limit."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Annotated

import numpy as np
from fastapi import APIRouter, Body
from fastapi.responses import Response

from core import cost
from core.errors import ParameterError
from core.protection import coordination, device_operation, differential, protection_study
from service import budget, compute, convert, figures
from service.deps import SettingsDep
from service.examples import CLEARANCE_EXAMPLES
from service.models.clearance import (
    ClearanceRequest,
    ClearanceResponse,
    DamageOut,
    DamagePortionOut,
    DeviceOut,
    DifferentialIn,
    DifferentialOut,
    DifferentialPhaseOut,
    HarmonicVerdictOut,
    InstantaneousCheckOut,
    PointOut,
    ProtectionOut,
    RideThroughOut,
    WindowOut,
)
from service.models.common import Assumption, Method
from service.problems import PROBLEM_RESPONSES
from service.settings import Settings

router = APIRouter(
    prefix="/v1/clearance",
    tags=["clearance"],
    responses={**PROBLEM_RESPONSES, **compute.BUSY_RESPONSES},
)
CLEARANCE_METHOD = (
    "inrush simulated as for /v1/inrush (worst closing angle unless given); relays integrated "
    "as 1/t(I) over the sliding one-cycle rms with the IEEE C37.112 reset (trip when the "
    "integral reaches 1), relay instantaneous against the largest sliding one-cycle rms; fuses "
    "and breaker bands against I_eq(t) = sqrt((1/t) integral i^2); breaker instantaneous "
    "against what its trip unit senses (default the first peak against sqrt(2) x the rms "
    "setting's lower edge; or the largest sliding half- or one-cycle rms against it); "
    "protection against the IEEE C57.109 through-fault curve (thermal table, mechanical "
    "I^2 t = K) from the check's start to the largest through-fault current the source allows; "
    "a transformer differential on the energised side's line currents (far side unloaded) "
    "after vector-group compensation, one-cycle discrete Fourier estimates sliding by one "
    "sample, dual-slope percentage characteristic and harmonic blocking"
)


def _study(
    body: ClearanceRequest, settings: Settings, figure: bool = False
) -> tuple[protection_study.ClearanceStudy, list[Assumption]]:
    circuit, event, assumptions = convert.study_inputs(body)
    t = body.transformer
    assert t is not None
    opt = body.options
    convert.check_work(settings, circuit.phases, circuit.frequency_hz, opt.duration_s, 128)
    relays = sum(1 for d in body.devices if d.kind == "relay")
    differentials = sum(1 for d in body.devices if d.kind == "differential")

    def estimate(o: Mapping[str, float]) -> cost.Work:
        r = budget.replaced
        return cost.clearance_work(
            circuit,
            worst_angle=opt.closing == "worst",
            duration_s=r(o, "options.duration_s", opt.duration_s),
            devices=int(r(o, "devices", len(body.devices))),
            windows=opt.coordination_window and relays > 0,
            pole_delay_max_s=float(np.max(event.pole_delay_s)),
            figure=figure,
            differentials=differentials,
        )

    knobs = [
        budget.Knob("options.duration_s", opt.duration_s, 0.1),
        budget.Knob("devices", len(body.devices), 1, integer=True),
    ]
    if opt.coordination_window and relays:
        knobs.append(budget.Knob("options.coordination_window", choice="false"))
    budget.enforce(estimate, knobs, settings.max_request_steps)
    study = protection_study.clearance_study(
        circuit,
        event,
        [convert.device_of(d, n) for n, d in enumerate(body.devices)],
        closing=opt.closing,
        rating_va=t.rating_kva * 1e3,
        impedance_percent=t.impedance_percent,
        duration_s=opt.duration_s,
        frequent_faults=opt.frequent_faults,
        insulation=opt.insulation,
        opening_time_s=opt.opening_time_s,
        damage_current_factor=opt.damage_current_factor,
        check_from_current=(
            opt.damage_check_from_a
            if opt.damage_check_from_x_rated is None
            else opt.damage_check_from_x_rated * circuit.rated_line_current_a
        ),
        overload_by_secondary_device=opt.overload_by_secondary_device,
        windows=opt.coordination_window,
        max_steps=settings.max_total_steps,
    )
    assumptions += convert.assumptions_out(study.evaluation.assumptions)
    return study, assumptions


def _instantaneous(ev: coordination.DeviceEvaluation) -> InstantaneousCheckOut | None:
    sensed = ev.ride_through.sensed
    if sensed is None:
        return None
    return InstantaneousCheckOut(
        sensing=sensed.sensing,
        sensed_a=sensed.sensed_a,
        compared_a=sensed.compared_a,
        lower_edge_a=sensed.pickup_a,
        time_s=convert.maybe(sensed.time_s),
        statement=sensed.text,
    )


def ride_through_out(ev: coordination.DeviceEvaluation) -> RideThroughOut:
    """The ride-through verdict of one device as the response gives it."""
    rt = ev.ride_through
    m = convert.maybe
    return RideThroughOut(
        trips=rt.trips,
        trip_time_s=rt.trip_time_s,
        margin_ratio=m(rt.margin_ratio),
        margin_time_s=rt.margin_time_s,
        line=rt.line,
        compared_current=rt.compared_current,
        time_margin_ratio=m(rt.time_margin_ratio),
        instantaneous_margin_ratio=(
            m(rt.instantaneous_margin_ratio) if rt.instantaneous_margin_ratio is not None else None
        ),
        instantaneous_check=_instantaneous(ev),
        differential=differential_out(ev.ride_through.differential),
    )


def points_out(ev: coordination.DeviceEvaluation) -> list[PointOut]:
    """The common-practice inrush points against one device, as the response gives them."""
    m = convert.maybe
    return [
        PointOut(
            multiple_x_rated=p.multiple_x_rated,
            current_a=p.current_a,
            time_s=p.time_s,
            device_time_s=m(p.device_time_s),
            ratio=m(p.ratio),
            above=p.above,
        )
        for p in ev.points
    ]


def _verdict_out(v: differential.Verdict) -> HarmonicVerdictOut:
    return HarmonicVerdictOut(
        harmonic_logic=v.logic,
        operates=v.operates,
        operate_time_s=v.time_s,
        operate_cycle=v.cycle,
        operate_phase=v.phase,
        by_unrestrained=v.by_unrestrained,
        margin_pp=v.margin_pp,
        margin_time_s=v.margin_time_s,
        margin_phase=v.margin_phase,
    )


def _statement(v: differential.Verdict) -> str:
    if v.operates:
        how = "its unrestrained element" if v.by_unrestrained else f"phase {v.phase}"
        text = f"operates at cycle {v.cycle} ({v.time_s:.4g} s), {how}"
    else:
        text = "restrains throughout the record"
    if v.margin_pp is None:
        return text + "; the percentage element never picks up"
    return (
        f"{text}; tightest harmonic margin {v.margin_pp:+.1f} percentage points in phase "
        f"{v.margin_phase} at {v.margin_time_s:.4g} s ({v.logic})"
    )


def differential_out(res: differential.DifferentialResult | None) -> DifferentialOut | None:
    """A differential element's per-cycle table and verdicts as the responses give them."""
    if res is None:
        return None
    m = convert.maybe
    phases = [
        DifferentialPhaseOut(
            phase=p,
            operate_pu=[round(float(x), 5) for x in res.operate_pu[k]],
            restraint_pu=[round(float(x), 5) for x in res.restraint_pu[k]],
            threshold_pu=[round(float(x), 5) for x in res.threshold_pu[k]],
            second_harmonic_percent=[m(round(float(x), 3)) for x in res.second_harmonic_percent[k]],
            fifth_harmonic_percent=[m(round(float(x), 3)) for x in res.fifth_harmonic_percent[k]],
            operates=[bool(x) for x in res.operates_in_cycle[k]],
            min_second_harmonic_percent=m(float(res.min_second_harmonic_percent[k])),
        )
        for k, p in enumerate(res.phases)
    ]
    return DifferentialOut(
        base_current_a=res.base_current_a,
        compensation_matrix=[[round(float(x), 6) for x in row] for row in res.compensation],
        filter=res.filter_words,
        restraint=res.restraint_words,
        cycle_end_s=[round(float(x), 6) for x in res.cycle_end_s],
        phases=phases,
        verdict=_verdict_out(res.verdict),
        verdict_by_logic=[_verdict_out(v) for v in res.by_logic],
        statement=_statement(res.verdict),
    )


def _response(
    study: protection_study.ClearanceStudy, assumptions: list[Assumption]
) -> ClearanceResponse:
    windows = {w.device: w for w in study.windows}
    m = convert.maybe
    devices = []
    for ev in study.evaluation.devices:
        pr = ev.protection
        w = windows.get(ev.device)
        devices.append(
            DeviceOut(
                name=ev.device,
                kind=ev.kind,
                suitable=ev.suitable,
                margin_ratio=m(ev.margin_ratio) if ev.margin_ratio is not None else None,
                ride_through=ride_through_out(ev),
                protection=ProtectionOut(
                    status=pr.status,
                    clearing_curve=pr.clearing_curve,
                    margin_ratio=m(pr.margin_ratio),
                    margin_current_a=m(pr.margin_current_a),
                    unprotected_from_a=pr.unprotected_from_a,
                    unprotected_to_a=pr.unprotected_to_a,
                    checked_from_a=m(pr.checked_from_a),
                    checked_to_a=m(pr.checked_to_a),
                )
                if pr is not None
                else None,
                common_practice_points=points_out(ev),
                coordination_window=WindowOut(
                    setting_range=list(w.setting_range),
                    lowest_riding_through=w.lowest_riding_through,
                    highest_protecting=w.highest_protecting,
                    exists=w.exists,
                    statement=w.statement,
                )
                if w is not None
                else None,
            )
        )
    dmg = study.damage
    peak = study.inrush.peak
    return ClearanceResponse(
        rated_current_a=study.rated_current_a,
        closing_angle_deg=study.closing_angle_deg,
        closing_angle_source=study.closing_angle_source,
        duration_s=study.duration_s,
        first_peak_a=float(np.max(peak.value)) if peak is not None else None,
        devices=devices,
        ranking=list(study.evaluation.ranking),
        damage=DamageOut(
            category=dmg.category,
            insulation=dmg.insulation,
            frequent=dmg.frequent,
            short_circuit_current_a=dmg.short_circuit_current,
            mechanical_from_current_a=dmg.mechanical_from_current,
            fault_current_a=m(dmg.fault_current),
            portions=[
                DamagePortionOut(
                    name=p.name,
                    from_current_a=p.from_current_a,
                    to_current_a=p.to_current_a,
                    checked=p.checked,
                    reason=p.reason,
                )
                for p in study.evaluation.portions
            ],
        )
        if dmg is not None
        else None,
        assumptions=assumptions,
        warnings=convert.warnings_out(study.warnings),
        method=Method(
            analytic=None, simulated=CLEARANCE_METHOD, approximations=list(study.approximations)
        ),
    )


@router.post(
    "",
    response_model=ClearanceResponse,
    operation_id="clearance",
    summary="Will these devices ride through the inrush and still protect the transformer?",
    response_description="Per device: ride-through margin, protection margin, common-practice "
    "points, coordination window; the suitable ones ranked",
)
async def clearance_op(
    body: Annotated[ClearanceRequest, Body(openapi_examples=CLEARANCE_EXAMPLES)],
    settings: SettingsDep,
) -> Response:
    """Evaluate candidate fuses, relays and breakers against the computed inrush (not a
    rule-of-thumb point) and against the transformer's through-fault damage curve."""

    def run() -> ClearanceResponse:
        return _response(*_study(body, settings))

    out = await compute.run_heavy(settings, run)
    return Response(out.model_dump_json(), media_type="application/json")


def _figure(body: ClearanceRequest, settings: Settings) -> str:
    study, _ = _study(body, settings, figure=True)
    inr = study.inrush
    t = body.transformer
    assert t is not None
    v_kv = t.energized_winding.voltage_kv
    ref_kv = body.options.reference_voltage_kv or v_kv
    scale = v_kv / ref_kv  # currents at the energised winding's voltage drawn at ref_kv
    traces = []
    for c in study.curves:
        lower = np.where(np.isfinite(c.minimum_time_s), c.minimum_time_s, np.nan)
        upper = np.where(np.isfinite(c.maximum_time_s), c.maximum_time_s, np.nan)
        has_upper = bool(np.any(np.isfinite(upper)))
        label = f"{c.name}: {c.minimum_label}" + (
            f" / {c.maximum_label} (dashed)" if has_upper else ""
        )
        traces.append(
            figures.CurveTrace(
                label,
                c.current_a * scale,
                lower,
                upper if has_upper else None,
                verticals=[(x * scale, lo, hi) for x, lo, hi in c.verticals],
                tag=c.name,
            )
        )
    markers = []
    for ev in study.evaluation.devices:
        sensed = ev.ride_through.sensed
        if sensed is not None:
            markers.append(
                figures.Marker(
                    sensed.compared_a * scale,
                    sensed.time_s,
                    f"{ev.device}: instantaneous compares {sensed.text}",
                    f"{ev.device} compares {sensed.compared_a:.4g} A",
                )
            )
    i_r = study.rated_current_a
    pts = device_operation.INRUSH_POINTS
    dmg = study.damage
    title = (
        f"{t.rating_kva:g} kVA, {v_kv:g} kV "
        f"{t.energized_winding.connection} energised: inrush, devices and damage limit"
    )
    unplotted = [d.name for d in body.devices if d.kind == "differential"]
    if unplotted:  # judged on the waveform, with no time-current curve to draw
        title += (
            f"\n{', '.join(unplotted)}: differential, no time-current curve "
            "(its verdict is in the clearance answer)"
        )
    ok = math.isfinite(i_r)
    return figures.tcc_svg(
        title,
        eq_time_s=inr.eq_time_s,
        eq_current_a=inr.eq_current_a * scale,
        line_names=inr.lines,
        points_current_a=[k * i_r * scale for k, _ in pts] if ok else [],
        points_time_s=[s for _, s in pts] if ok else [],
        devices=traces,
        damage_current_a=dmg.current * scale if dmg is not None else None,
        damage_time_s=dmg.time if dmg is not None else None,
        markers=markers,
        current_label=f"Current [A] at {ref_kv:g} kV",
    )


@router.post(
    "/figure",
    operation_id="clearance_figure",
    summary="The TCC of a clearance request as SVG",
    response_class=Response,
    responses={200: {"content": {"image/svg+xml": {"schema": {"type": "string"}}},
                     "description": "Log-log time-current characteristic"}},
)  # fmt: skip
async def clearance_figure(
    body: Annotated[ClearanceRequest, Body(openapi_examples=CLEARANCE_EXAMPLES)],
    settings: SettingsDep,
) -> Response:
    """Log-log axes: the inrush I_eq(t) per line, the common-practice inrush points, each
    device's curve or band, and the transformer's through-fault damage curve."""
    svg = await compute.run_heavy(settings, _figure, body, settings)
    return Response(svg, media_type="image/svg+xml")


def _differential_figure(body: ClearanceRequest, settings: Settings) -> str:
    which = [d for d in body.devices if isinstance(d, DifferentialIn)]
    if not which:
        raise ParameterError(
            "devices", [d.kind for d in body.devices], "at least one device of kind differential"
        )
    d = which[0]
    study, _ = _study(body, settings, figure=True)
    ev = next(e for e in study.evaluation.devices if e.device == d.name)
    res = ev.ride_through.differential
    assert res is not None  # a differential device is judged by the differential element
    reach = max(float(np.nanmax(res.restraint_pu, initial=0.0)) * 1.2, 1.5 * d.breakpoint_pu)
    grid = np.linspace(0.0, reach, 241)
    threshold = differential.operate_threshold(
        grid,
        d.minimum_operate_pu,
        d.slope_1_percent / 100.0,
        d.slope_2_percent / 100.0,
        d.slope_1_from_pu,
        d.breakpoint_pu,
    )
    return figures.differential_svg(
        f"{d.name} ({d.vector_group}, {d.harmonic_logic.replace('_', ' ')} blocking): "
        + _statement(res.verdict).split(";")[0],
        phases=res.phases,
        operate_pu=res.operate_pu,
        restraint_pu=res.restraint_pu,
        second_harmonic_percent=res.second_harmonic_percent,
        cycle_end_s=res.cycle_end_s,
        characteristic_restraint_pu=grid,
        characteristic_operate_pu=threshold,
        second_harmonic_level_percent=d.second_harmonic_percent,
    )


@router.post(
    "/differential-figure",
    operation_id="clearance_differential_figure",
    summary="The first differential device of a clearance request through the energisation, SVG",
    response_class=Response,
    responses={200: {"content": {"image/svg+xml": {"schema": {"type": "string"}}},
                     "description": "Operate against restraint per phase with the "
                     "characteristic; second-harmonic ratio against the blocking level"}},
)  # fmt: skip
async def clearance_differential_figure(
    body: Annotated[ClearanceRequest, Body(openapi_examples=CLEARANCE_EXAMPLES)],
    settings: SettingsDep,
) -> Response:
    """Top: each phase's operate current against its restraint, cycle by cycle, with the
    percentage characteristic; bottom: the second-harmonic ratio the relay sees per phase
    against its blocking level. The first device of kind ``differential`` is drawn (422 naming
    ``devices`` when there is none)."""
    svg = await compute.run_heavy(settings, _differential_figure, body, settings)
    return Response(svg, media_type="image/svg+xml")
