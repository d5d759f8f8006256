"""``/v1/inrush/statistics``: the first peak as a statistic, and how often devices or the dip fail.

Monte Carlo over the closing instant, pole scatter and residual flux
(:mod:`core.statistics.monte_carlo`); devices and a generator's dip judged on the first events of
the sample (:mod:`core.statistics.event_outcomes`). The simulations run in the thread pool, never on
the event loop.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Annotated

import numpy as np
from fastapi import APIRouter, Body
from fastapi.responses import Response

from core import cost
from core.errors import LimitError
from core.statistics import event_outcomes, monte_carlo
from core.supply import sources
from core.supply.sources import Generator
from core.transformer import circuit_model
from core.transformer.circuit_model import EquivalentCircuit
from service import budget, compute, convert
from service.deps import SettingsDep
from service.examples import STATISTICS_EXAMPLES
from service.models.common import Assumption, Method
from service.models.statistics import (
    ConvergenceOut,
    DeviceOddsOut,
    DipOddsOut,
    ExceedanceOut,
    FixedResidualIn,
    PercentilesOut,
    StatisticsRequest,
    StatisticsResponse,
)
from service.problems import PROBLEM_RESPONSES
from service.settings import Settings

router = APIRouter(prefix="/v1/inrush", tags=["inrush"], responses=PROBLEM_RESPONSES)


STATISTICS_METHOD = (
    "Monte Carlo: closing instant uniform over one cycle, pole scatter normal per pole, "
    "residual flux from the stated distribution; each event simulated as in /v1/inrush/peak "
    "(vectorised); percentiles by linear interpolation; a distribution-free binomial "
    "order-statistic interval for P99 (e.g. David & Nagaraja, Order Statistics, from memory); "
    "exceedance with a Clopper-Pearson interval; devices and the generator dip judged on the "
    "first check_events events, each simulated in full (as /v1/clearance and "
    "/v1/generator-dip judge one event), with Clopper-Pearson intervals"
)


def device_odds_out(o: event_outcomes.DeviceOdds) -> DeviceOddsOut:
    """How often a device operated over the events judged, as the responses give it."""
    return DeviceOddsOut(
        device=o.device,
        probability=o.operates.probability,
        low=o.operates.low,
        high=o.operates.high,
        operations=o.operates.exceedances,
        events=o.operates.samples,
        smallest_margin=convert.maybe(o.smallest_margin),
    )


def convergence_out(c: monte_carlo.Convergence) -> ConvergenceOut:
    """The P99 convergence table as the responses give it."""
    m = convert.maybe
    return ConvergenceOut(
        samples=[int(x) for x in c.samples],
        p99_a=convert.floats(c.p99_a),
        p99_low_a=[m(x) for x in c.p99_low_a],
        p99_high_a=[m(x) for x in c.p99_high_a],
    )


def _supplied(
    body: StatisticsRequest, circuit: EquivalentCircuit, assumptions: list[Assumption]
) -> tuple[EquivalentCircuit, Generator | None]:
    """The circuit the peaks are drawn for: on the generator's X''d when one is the supply."""
    if body.supply is None or body.transformer is None:
        return circuit, None
    npl = convert.nameplate_of(body.transformer)
    gen = convert.generator_of(body.supply, npl.line_voltage_v, npl.frequency_hz)
    fed = circuit_model.equivalent_circuit(npl, sources.subtransient_source(gen))
    swap = {"source", "source_resistance_ohm", "source_inductance_h"}
    note = "the generator's X''d and R_a as a fixed impedance (generator.subtransient_source)"
    assumptions[:] = [a for a in assumptions if a.name not in swap] + [
        a.model_copy(update={"source": note})
        for a in convert.assumptions_out(fed.assumptions)
        if a.name in swap
    ]
    return fed, gen


def _odds(
    body: StatisticsRequest,
    ideal: EquivalentCircuit,
    circuit: EquivalentCircuit,
    gen: Generator | None,
    dist: monte_carlo.PeakDistribution,
    settings: Settings,
    assumptions: list[Assumption],
) -> tuple[list[DeviceOddsOut] | None, DipOddsOut | None, list[str]]:
    """The devices' and the dip's probabilities, judged on the first events of the sample."""
    opt = body.options
    events = min(opt.check_events, opt.samples)
    if body.devices is None and gen is None:
        return None, None, []
    assumptions.append(
        Assumption(
            name="check_events",
            value=float(events),
            unit="-",
            source="the first events of the sample, simulated in full",
        )
    )
    devices = None
    if body.devices is not None:
        odds = event_outcomes.device_operation_odds(
            circuit,
            dist,
            [convert.device_of(d, n) for n, d in enumerate(body.devices)],
            events=events,
            duration_s=opt.device_duration_s,
            max_steps=settings.max_total_steps,
            checkpoint=compute.checkpoint,
        )
        devices = [device_odds_out(o) for o in odds]
    dip_out = None
    approximations: list[str] = []
    if gen is not None:
        lim = convert.dip_limit_of(body.dip_limit)
        name, limit = lim.name, float(lim.max_dip_percent or 100.0)
        d = event_outcomes.dip_exceedance_odds(
            gen,
            ideal,
            dist,
            limit,
            events=events,
            excitation=convert.excitation_of(body.excitation),
            bus_load=convert.bus_load_of(body.bus_load),
            duration_s=opt.dip_duration_s,
            checkpoint=compute.checkpoint,
        )
        e = d.exceeds
        dip_out = DipOddsOut(
            limit=name,
            max_dip_percent=limit,
            probability=e.probability,
            low=e.low,
            high=e.high,
            exceedances=e.exceedances,
            events=e.samples,
            dip_p50_percent=float(np.median(d.dips_percent)),
            dip_max_percent=float(d.dips_percent.max()),
        )
        approximations = list(d.approximations)
    return devices, dip_out, approximations


def check_limits(
    body: StatisticsRequest, circuit: EquivalentCircuit, gen: Generator | None, settings: Settings
) -> cost.Work:
    """Every limit of a statistics request, checked before any simulation."""
    opt = body.options
    if opt.samples > settings.max_statistics_samples:
        raise LimitError("options.samples", opt.samples, settings.max_statistics_samples)
    n_dev = len(body.devices or [])
    judged_by = n_dev + (1 if gen is not None else 0)
    events = min(opt.check_events, opt.samples)
    if judged_by and events * judged_by > settings.max_event_checks:
        raise LimitError(
            "options.check_events x (devices + dip)",
            events * judged_by,
            settings.max_event_checks,
            knobs=(("options.check_events", f"<= {settings.max_event_checks // judged_by}"),),
        )
    scatter = monte_carlo.pole_scatter_sigma_ms(circuit.phases, opt.pole_scatter_ms)

    def estimate(o: Mapping[str, float]) -> cost.Work:
        r = budget.replaced
        samples = int(r(o, "options.samples", opt.samples))
        n = int(r(o, "devices", n_dev))
        ev = min(int(r(o, "options.check_events", opt.check_events)), samples)
        return cost.statistics_work(
            circuit,
            samples=samples,
            pole_scatter_ms=scatter,
            events=ev if (n or gen is not None) else 0,
            devices=n,
            device_duration_s=r(o, "options.device_duration_s", opt.device_duration_s),
            dip_duration_s=r(o, "options.dip_duration_s", opt.dip_duration_s)
            if gen is not None
            else None,
        )

    knobs = [
        budget.Knob("options.samples", opt.samples, 10, integer=True),
        budget.Knob("options.check_events", min(opt.check_events, opt.samples), 10, True),
        budget.Knob("options.device_duration_s", opt.device_duration_s, 0.1),
        budget.Knob("options.dip_duration_s", opt.dip_duration_s, 0.1),
        budget.Knob("devices", n_dev, 0, integer=True),
    ]
    if n_dev == 0:
        knobs = [k for k in knobs if k.field not in ("devices", "options.device_duration_s")]
    if gen is None:
        knobs = [k for k in knobs if k.field != "options.dip_duration_s"]
    return budget.enforce(estimate, knobs, settings.max_request_steps)


def _statistics(body: StatisticsRequest, settings: Settings) -> StatisticsResponse:
    ideal, event, assumptions = convert.study_inputs(body)
    circuit, gen = _supplied(body, ideal, assumptions)
    opt = body.options
    check_limits(body, circuit, gen, settings)
    spec: monte_carlo.ResidualSpec
    if isinstance(opt.residual, FixedResidualIn):
        spec = monte_carlo.FixedResidual(tuple(float(x) for x in event.residual_flux_pu))
    else:
        r = opt.residual
        spec = monte_carlo.UniformResidual(r.low_pu, r.high_pu, r.random_sign, r.zero_sum)
    dist = monte_carlo.peak_distribution(
        circuit,
        samples=opt.samples,
        random_state=opt.random_state,
        residual=spec,
        pole_scatter_ms=opt.pole_scatter_ms,
        max_steps=settings.max_total_steps,
        checkpoint=compute.checkpoint,
        closing_angle_deg=opt.closing_angle_fixed_deg,
    )
    rated = circuit.rated_line_current_a
    m = convert.maybe

    def pct(name: str, p: monte_carlo.Percentiles) -> PercentilesOut:
        lo, hi = p.p99_interval_a
        return PercentilesOut(
            line=name,
            p50_a=p.p50_a,
            p95_a=p.p95_a,
            p99_a=p.p99_a,
            max_a=p.max_a,
            p99_low_a=m(lo),
            p99_high_a=m(hi),
            p99_x_rated=convert.x_rated(p.p99_a, rated),
        )

    exceed = None
    if opt.threshold_a is not None:
        ex = monte_carlo.exceedance_probability(dist.peaks_a.max(axis=1), opt.threshold_a)
        exceed = ExceedanceOut(
            threshold_a=opt.threshold_a,
            probability=ex.probability,
            low=ex.low,
            high=ex.high,
            exceedances=ex.exceedances,
            samples=ex.samples,
            method=ex.method,
        )
    devices, dip_odds, dip_approximations = _odds(
        body, ideal, circuit, gen, dist, settings, assumptions
    )
    conv = dist.convergence
    assumptions.append(
        Assumption(
            name="residual_distribution",
            value=opt.residual.kind,
            unit="-",
            source="given"
            if "residual" in opt.model_fields_set
            else "default: uniform 0.2-0.8 pu, random sign (typical range, from memory)",
        )
    )
    if opt.closing_angle_fixed_deg is not None:
        assumptions.append(
            Assumption(
                name="closing_angle_fixed_deg",
                value=opt.closing_angle_fixed_deg,
                unit="deg",
                source="given: the phase-A voltage angle at the first pole's closing in every "
                "sample, not drawn",
            )
        )
    return StatisticsResponse(
        rated_current_a=m(rated),
        samples=opt.samples,
        random_state=opt.random_state,
        lines=[pct(n, p) for n, p in zip(dist.lines, dist.by_line, strict=True)],
        worst_line=pct("worst", dist.worst_line),
        convergence=convergence_out(conv),
        exceedance=exceed,
        device_operation=devices,
        dip_exceedance=dip_odds,
        confidence_level=dist.confidence_level,
        assumptions=assumptions,
        warnings=convert.warnings_out(ideal.warnings),
        method=Method(
            simulated=STATISTICS_METHOD,
            approximations=list(dict.fromkeys([*dist.approximations, *dip_approximations])),
        ),
    )


@router.post(
    "/statistics",
    response_model=StatisticsResponse,
    operation_id="inrush_statistics",
    summary="Distribution of the first peak over random closing instants and residual flux",
    response_description="P50/P95/P99/max per line and of the worst line, the P99 interval and "
    "its convergence, and the probability of exceeding a threshold",
    responses=compute.BUSY_RESPONSES,
)
async def inrush_statistics(
    body: Annotated[StatisticsRequest, Body(openapi_examples=STATISTICS_EXAMPLES)],
    settings: SettingsDep,
) -> Response:
    """Monte Carlo of the switching event, reproducible through ``options.random_state``.

    One request's work is bounded (samples, events checked in full, their records; a request
    over the budget gets 422 naming the fields to reduce). For a larger study, split it across
    requests with different ``random_state`` values: each is an independent sample, so the
    exceedance counts (``exceedance.exceedances``, ``device_operation[].operations``,
    ``dip_exceedance.exceedances``) and their sample counts add up to those of the combined
    sample (recompute the interval from the sums); percentiles do not add up.
    """
    out = await compute.run_heavy(settings, _statistics, body, settings)
    return Response(out.model_dump_json(), media_type="application/json")
