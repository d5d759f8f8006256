"""``/v1/mitigation``: what each mitigation of the inrush buys, on the same case, ranked."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Annotated

import numpy as np
from fastapi import APIRouter, Body
from fastapi.responses import Response

from core import cost
from core.mitigation import mitigation_options, mitigation_study
from service import budget, compute, convert
from service.deps import SettingsDep
from service.examples import MITIGATION_EXAMPLES
from service.models.common import Assumption, Method
from service.models.mitigation import (
    ControlledClosingIn,
    CoreMaterialIn,
    DemagnetizeIn,
    MitigationRequest,
    MitigationResponse,
    OptionDeviceOut,
    OptionDipOut,
    OptionIn,
    OptionOut,
    OtherWindingIn,
    PreInsertionResistorIn,
    PreMagnetizeIn,
    RampIn,
    RatingIn,
    SweepOut,
    TapIn,
)
from service.problems import PROBLEM_RESPONSES
from service.settings import Settings

router = APIRouter(
    prefix="/v1/mitigation",
    tags=["mitigation"],
    responses={**PROBLEM_RESPONSES, **compute.BUSY_RESPONSES},
)
MITIGATION_METHOD = (
    "each option applied to the same case and simulated as in /v1/inrush/peak: the design-basis "
    "first peak is the worst over the closing angle (uncontrolled closing, 0.025 degree search) "
    "or over the closing-time error band (controlled or pre-magnetised closing, 21 points); at "
    "that event I_eq(0.1 s), the devices as in /v1/clearance and the dip as in "
    "/v1/generator-dip; a pre-insertion resistor is sized by a logarithmic scan and bisection; "
    "tap, material, rating and winding what-ifs rebuild the equivalent circuit"
)
RANKING = (
    "options that pass every check made of them (peak target, dip limit, every device riding "
    "through) first, then by design-basis peak in x rated; options that do not apply last"
)


def _option(o: OptionIn) -> mitigation_options.Option:
    if isinstance(o, ControlledClosingIn):
        return mitigation_options.ControlledClosing(o.strategy, o.closing_error_ms)
    if isinstance(o, PreInsertionResistorIn):
        t = o.insertion_time_ms
        return mitigation_options.PreInsertionResistor(
            o.resistance_ohm, t * 1e-3 if t is not None else None
        )
    if isinstance(o, DemagnetizeIn):
        return mitigation_options.Demagnetize(o.residual_fraction)
    if isinstance(o, PreMagnetizeIn):
        return mitigation_options.PreMagnetize(
            o.max_flux_pu, o.closing_angle_deg, o.closing_error_ms
        )
    if isinstance(o, RampIn):
        return mitigation_options.Ramp(o.start_pu, o.hold_s, o.rise_s)
    if isinstance(o, TapIn):
        return mitigation_options.Retap(o.turns_percent)
    if isinstance(o, CoreMaterialIn):
        return mitigation_options.CoreMaterial(
            o.material, o.nominal_flux_density_t, o.saturation_flux_density_t
        )
    if isinstance(o, RatingIn):
        return mitigation_options.Rating(o.rating_kva * 1e3 if o.rating_kva is not None else None)
    if isinstance(o, OtherWindingIn):
        return mitigation_options.OtherWinding(
            o.voltage_kv * 1e3, o.connection, o.position, convert.source_of(o.source)
        )
    raise TypeError(type(o).__name__)  # pragma: no cover - the union is exhaustive


def _out(
    r: mitigation_study.OptionResult, rank: int | None, base: float, limit: str | None
) -> OptionOut:
    m = convert.maybe
    devices = None
    if r.devices is not None:
        devices = [
            OptionDeviceOut(
                name=d.device,
                rides_through=not d.ride_through.trips,
                ride_through_margin=m(d.ride_through.margin_ratio),
                protects=d.protection.protects if d.protection is not None else None,
                protection_margin=m(d.protection.margin_ratio) if d.protection else None,
            )
            for d in r.devices.devices
        ]
    dip = None
    if r.dip is not None:
        dip = OptionDipOut(
            limit=limit or "",
            dip_percent=r.dip.dip_percent,
            recovery_time_s=m(r.dip.recovery_time_s),
            passed=r.dip.passed,
            inrush_peak_a=r.dip.inrush_peak_a,
        )
    x = m(r.peak_x_rated)
    return OptionOut(
        rank=rank,
        kind=r.kind,
        label=r.label,
        evaluated=r.evaluated,
        passes=r.passes,
        peak_a=m(r.peak_a),
        peak_x_rated=x,
        peak_reduction_percent=m(100.0 * (1.0 - r.peak_x_rated / base)) if x is not None else None,
        peak_line=r.peak_line or None,
        meets_target=r.meets_target,
        worst_over=r.worst_over,
        closing_angle_deg=m(r.closing_angle_deg),
        pole_delay_ms=[float(v) * 1e3 for v in r.pole_delay_s],
        residual_flux_pu=convert.floats(r.residual_flux_pu),
        equivalent_rms_100ms_a=m(r.equivalent_rms_a),
        equivalent_rms_100ms_x_rated=m(r.equivalent_rms_a / r.rated_current_a),
        devices=devices,
        dip=dip,
        parameters=convert.assumptions_out(r.parameters),
        requires=list(r.requires),
        notes=list(r.notes),
    )


def _mitigation(body: MitigationRequest, settings: Settings) -> MitigationResponse:
    circuit, event, assumptions = convert.study_inputs(body)
    t = body.transformer
    if t is None:  # pragma: no cover - the request model requires it
        raise ValueError("transformer")
    npl = convert.nameplate_of(t)
    supply = None
    limit_name = None
    if body.supply is not None:
        limit = convert.dip_limit_of(body.dip_limit)
        limit_name = limit.name
        supply = mitigation_options.GeneratorSupply(
            convert.generator_of(body.supply, npl.line_voltage_v, npl.frequency_hz),
            limit,
            convert.excitation_of(body.excitation),
            convert.bus_load_of(body.bus_load),
            body.dip_duration_s,
        )
    check = None
    if body.devices is not None:
        d = body.device_options
        check = mitigation_options.DeviceCheck(
            tuple(convert.device_of(x, n) for n, x in enumerate(body.devices)),
            d.duration_s,
            d.frequent_faults,
            d.insulation,
            d.opening_time_s,
            d.damage_current_factor,
        )
    n_opt = len(body.options) if body.options is not None else len(mitigation_options.KINDS) - 1
    n_dev = len(body.devices or [])

    def estimate(o: Mapping[str, float]) -> cost.Work:
        r = budget.replaced
        return cost.mitigation_work(
            circuit,
            options=int(r(o, "options", n_opt)),
            sweep=len(mitigation_study.RESIDUAL_SWEEP),
            devices=int(r(o, "devices", n_dev)),
            device_duration_s=r(o, "device_options.duration_s", body.device_options.duration_s),
            dip_duration_s=r(o, "dip_duration_s", body.dip_duration_s) if supply else None,
            pole_delay_max_s=float(np.max(event.pole_delay_s)),
        )

    knobs = [budget.Knob("options", n_opt, 1, integer=True)]
    if supply is not None:
        knobs.append(budget.Knob("dip_duration_s", body.dip_duration_s, 0.5))
    if n_dev:
        knobs.append(budget.Knob("devices", n_dev, 1, integer=True))
        knobs.append(budget.Knob("device_options.duration_s", body.device_options.duration_s, 0.1))
    budget.enforce(estimate, knobs, settings.max_request_steps)
    target = (
        body.target_peak_x_rated * circuit.rated_line_current_a
        if body.target_peak_x_rated is not None
        else None
    )
    study = mitigation_study.mitigation_study(
        npl,
        convert.source_of(body.source),
        event,
        [_option(o) for o in body.options] if body.options is not None else None,
        supply=supply,
        devices=check,
        target_peak_a=target,
        max_steps=settings.max_total_steps,
    )
    base = study.baseline.peak_x_rated
    known = {a.name for a in assumptions}
    assumptions += [a for a in convert.assumptions_out(study.assumptions) if a.name not in known]
    if body.options is None:
        assumptions.append(
            Assumption(
                name="options",
                value=", ".join(mitigation_options.KINDS[:-1]),
                unit="-",
                source="default: every option that needs no further data",
            )
        )
    rated = study.rated_current_a
    return MitigationResponse(
        rated_current_a=rated,
        target_peak_a=study.target_peak_a,
        ranking=RANKING,
        baseline=_out(study.baseline, None, base, limit_name),
        options=[_out(r, i + 1, base, limit_name) for i, r in enumerate(study.ranked)],
        residual_sweep=[
            SweepOut(
                scale=s.scale,
                residual_flux_pu=convert.floats(s.residual_flux_pu),
                peak_a=s.peak_a,
                peak_x_rated=s.peak_a / rated,
            )
            for s in study.residual_sweep
            if math.isfinite(s.peak_a)
        ],
        assumptions=assumptions,
        warnings=convert.warnings_out(study.warnings),
        method=Method(simulated=MITIGATION_METHOD, approximations=list(study.approximations)),
    )


@router.post(
    "",
    response_model=MitigationResponse,
    operation_id="mitigation",
    summary="Mitigations of the inrush side by side, ranked",
    response_description="The case as it is and each option at its design-basis event: peak, "
    "I_eq(0.1 s), device margins, generator dip, and what the option needs",
)
async def mitigation_options_compared(
    body: Annotated[MitigationRequest, Body(openapi_examples=MITIGATION_EXAMPLES)],
    settings: SettingsDep,
) -> Response:
    """Controlled closing, a pre-insertion resistor, demagnetising, pre-magnetising, a ramped
    energisation, another tap, core material or rating, energising from the other winding:
    each computed on the same case and ranked.
    """
    out = await compute.run_heavy(settings, _mitigation, body, settings)
    return Response(out.model_dump_json(), media_type="application/json")
