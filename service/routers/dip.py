"""``/v1/generator-dip``: energising a transformer from a generator or a weak source."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Annotated

from fastapi import APIRouter, Body
from fastapi.responses import Response

from core import cost
from core.supply import dip_limits, dip_study, sources
from service import budget, compute, convert, figures
from service.deps import SettingsDep
from service.examples import DIP_EXAMPLES
from service.models.common import Assumption, Method
from service.models.dip import (
    CustomLimit,
    GeneratorDipRequest,
    GeneratorDipResponse,
    GeneratorIn,
    SizingOut,
    VerdictOut,
)
from service.problems import PROBLEM_RESPONSES
from service.settings import Settings

router = APIRouter(
    prefix="/v1/generator-dip",
    tags=["generator-dip"],
    responses={**PROBLEM_RESPONSES, **compute.BUSY_RESPONSES},
)
DIP_METHOD = (
    "three-phase EMF behind the subtransient reactance, its amplitude following the d-axis "
    "flux-decay equations (T''do, T'do) driven by the instantaneous Park d-axis current, with a "
    "first-order regulator (IEEE Std 421.5 structure, from memory); solved together with the "
    "saturating transformer (loop-flux states, RK4, >= 128 steps per cycle); dip from the "
    "per-cycle rms; beside it the subtransient voltage-divider hand method "
    "X''d*S/(S_gen + X''d*S) (IEEE Std 399, from memory)"
)
NO_FREQUENCY = (
    "not modelled: the machine runs at constant speed (prime mover and governor are not "
    "simulated), so no frequency dip is computed"
)


def _report(body: GeneratorDipRequest) -> tuple[dip_study.DipReport, list[Assumption]]:
    # the supply model replaces the source: the circuit is built on an ideal source
    circuit, event, assumptions = convert.study_inputs(
        body.model_copy(update={"source": None}), convert.EMF_DIP
    )
    t = body.transformer
    assert t is not None
    v_ll = t.energized_winding.voltage_kv * 1e3
    sup = body.supply
    source: sources.Source
    if isinstance(sup, GeneratorIn):
        source = convert.generator_of(sup, v_ll, t.frequency_hz)
    elif sup is not None:
        source = sources.UtilitySource(sup.fault_mva * 1e6, sup.x_over_r, v_ll, t.frequency_hz)
    else:
        source = convert.utility_of(body.source, v_ll, t.frequency_hz)
    excitation = convert.excitation_of(body.excitation)
    opt = body.options
    if isinstance(opt.limits, CustomLimit):
        lim = opt.limits
        limits: tuple[dip_limits.DipLimit, ...] = (
            dip_limits.DipLimit(lim.name, lim.max_dip_percent, lim.max_recovery_s, "given"),
        )
    else:
        limits = dip_limits.ISO_8528_5_CLASSES
    size_for = None
    if opt.size_for == "custom":
        size_for = limits[0]
    elif opt.size_for is not None:
        size_for = dip_limits.iso_8528_5_class(opt.size_for)
    load = body.bus_load
    report = dip_study.dip_study(
        source,
        circuit,
        event,
        limits=limits,
        size_for=size_for,
        excitation=excitation,
        bus_load=convert.bus_load_of(load),
        duration_s=opt.duration_s,
        recovery_band_percent=opt.recovery_band_percent,
        voltage_measure=opt.voltage_measure,
    )
    assumptions += convert.assumptions_out(report.study.assumptions)
    return report, assumptions


def _response(report: dip_study.DipReport, assumptions: list[Assumption]) -> GeneratorDipResponse:
    s = report.study
    m = convert.maybe
    names = ("A", "B", "C")
    lines = ("AB", "BC", "CA")
    sz = report.sizing
    return GeneratorDipResponse(
        dip_percent=s.dip_percent,
        dip_phase_percent=s.dip_phase_percent,
        dip_line_percent=s.dip_line_percent,
        min_voltage_pu=s.min_voltage_pu,
        min_voltage_time_s=s.min_voltage_time_s,
        recovery_time_s=m(s.recovery_time_s),
        inrush_peak_a=s.inrush_peak_a,
        hand_method_dip_percent=s.hand_method_dip_percent,
        hand_method_difference_percent=s.hand_method_difference_percent,
        verdicts=[
            VerdictOut(
                limit=v.limit.name,
                max_dip_percent=v.limit.max_dip_percent,
                max_recovery_s=v.limit.max_recovery_s,
                source=v.limit.source,
                dip_ok=v.dip_ok,
                recovery_ok=v.recovery_ok,
                passed=v.passed,
                note=v.note,
            )
            for v in report.verdicts
        ],
        sizing=SizingOut(
            limit=sz.limit.name,
            status=sz.status,
            rating_kva=sz.rating_va / 1e3 if sz.rating_va is not None else None,
            dip_percent=m(sz.dip_percent),
            recovery_time_s=m(sz.recovery_time_s),
            statement=sz.statement,
        )
        if sz is not None
        else None,
        cycle_start_s=convert.floats(s.cycle_start_s),
        voltage_rms_pu={
            n: convert.floats(row) for n, row in zip(names, s.voltage_rms_pu, strict=True)
        },
        voltage_line_rms_pu={
            n: convert.floats(row) for n, row in zip(lines, s.voltage_line_rms_pu, strict=True)
        },
        frequency_dip=NO_FREQUENCY,
        assumptions=assumptions,
        warnings=convert.warnings_out(s.warnings),
        method=Method(simulated=DIP_METHOD, approximations=list(s.approximations)),
    )


def _check(body: GeneratorDipRequest, settings: Settings, figure: bool = False) -> None:
    """The work budget (core/cost.py), before anything is simulated."""
    t = body.transformer
    f = t.frequency_hz if t is not None else 60.0
    opt = body.options
    sizing = opt.size_for is not None and isinstance(body.supply, GeneratorIn)
    recovery: float | None = None
    if sizing:
        if opt.size_for == "custom":
            recovery = opt.limits.max_recovery_s if isinstance(opt.limits, CustomLimit) else None
        else:
            recovery = dip_limits.iso_8528_5_class(str(opt.size_for)).max_recovery_s

    def estimate(o: Mapping[str, float]) -> cost.Work:
        rec = budget.replaced(o, "options.limits.max_recovery_s", recovery or 0.0)
        return cost.dip_study_work(
            f,
            budget.replaced(o, "options.duration_s", opt.duration_s),
            sizing=sizing,
            recovery_limit_s=rec if recovery is not None else None,
            figure=figure,
        )

    knobs = [budget.Knob("options.duration_s", opt.duration_s, 0.5)]
    if sizing:
        knobs.append(budget.Knob("options.size_for", choice="null"))
        if opt.size_for == "custom" and recovery is not None:
            knobs.append(budget.Knob("options.limits.max_recovery_s", recovery, 0.0))
    budget.enforce(estimate, knobs, settings.max_request_steps)


@router.post(
    "",
    response_model=GeneratorDipResponse,
    operation_id="generator_dip",
    summary="Voltage dip and recovery when a generator or weak source energises the unit",
    response_description="Dip, recovery, verdicts against ISO 8528-5 (or a limit), the hand "
    "method beside it, and the smallest generator that would pass",
)
async def generator_dip(
    body: Annotated[GeneratorDipRequest, Body(openapi_examples=DIP_EXAMPLES)],
    settings: SettingsDep,
) -> Response:
    """The machine and the saturating transformer simulated together."""
    _check(body, settings)

    def run() -> GeneratorDipResponse:
        return _response(*_report(body))

    out = await compute.run_heavy(settings, run)
    return Response(out.model_dump_json(), media_type="application/json")


def _figure(body: GeneratorDipRequest) -> str:
    report, _ = _report(body)
    s = report.study
    limit = None
    chosen = [v for v in report.verdicts if v.limit.max_dip_percent is not None]
    if body.options.size_for not in (None, "custom"):
        chosen = [v for v in chosen if v.limit.name == body.options.size_for] or chosen
    if chosen:
        limit = chosen[0].limit.max_dip_percent
    line = body.options.voltage_measure == "line"
    t = body.transformer
    assert t is not None
    title = f"Terminal voltage energising {t.rating_kva:g} kVA from the supply"
    return figures.voltage_dip_svg(
        title,
        s.cycle_start_s,
        s.voltage_line_rms_pu if line else s.voltage_rms_pu,
        line_names=("AB", "BC", "CA") if line else ("A", "B", "C"),
        dip_limit_percent=limit,
        band_percent=s.recovery_band_percent,
        recovery_time_s=s.recovery_time_s if math.isfinite(s.recovery_time_s) else None,
    )


@router.post(
    "/figure",
    operation_id="generator_dip_figure",
    summary="Terminal voltage over time as SVG",
    response_class=Response,
    responses={200: {"content": {"image/svg+xml": {"schema": {"type": "string"}}},
                     "description": "Rms per cycle, limit, band and recovery point"}},
)  # fmt: skip
async def generator_dip_figure(
    body: Annotated[GeneratorDipRequest, Body(openapi_examples=DIP_EXAMPLES)],
    settings: SettingsDep,
) -> Response:
    """Terminal voltage (rms per cycle) against time with the limit band and recovery point."""
    _check(body, settings, figure=True)
    svg = await compute.run_heavy(settings, _figure, body)
    return Response(svg, media_type="image/svg+xml")
