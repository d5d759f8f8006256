"""``/v1/network-energization/statistics``: the network's energisation drawn at random.

The network as /v1/network-energization builds it; the events drawn and simulated in chunks by
:mod:`core.statistics.network_statistics`; the feeder devices judged on the first events. The
simulations run in the thread pool, never on the event loop.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Annotated

import numpy as np
from fastapi import APIRouter, Body
from fastapi.responses import Response

from core import cost
from core.errors import LimitError, ParameterError
from core.statistics import monte_carlo, network_statistics
from service import budget, compute, convert
from service.deps import SettingsDep
from service.examples import NETWORK_STATISTICS_EXAMPLES
from service.models.common import Assumption, Method
from service.models.network_statistics import (
    EventOut,
    EventUnitOut,
    FirstPeakStatisticsOut,
    NetworkStatisticsRequest,
    NetworkStatisticsResponse,
    RandomResidualIn,
    UnitStatisticsOut,
)
from service.problems import PROBLEM_RESPONSES
from service.routers import network, statistics
from service.settings import Settings

router = APIRouter(
    prefix="/v1/network-energization",
    tags=["network"],
    responses={**PROBLEM_RESPONSES, **compute.BUSY_RESPONSES},
)

NETWORK_STATISTICS_METHOD = (
    "Monte Carlo over the network of /v1/network-energization: the angle of the reference "
    "closing uniform over one cycle (or as given), every pole of every unit being energised "
    "scattered normally around its given instant, residual flux per winding as given or "
    "uniform; the events simulated as cases of one network simulation, in chunks; first peaks "
    "read as /v1/network-energization reads them (largest |i| within two cycles after the last "
    "pole, refined by a parabola); percentiles by linear interpolation, a distribution-free "
    "binomial order-statistic interval for P99 (e.g. David & Nagaraja, Order Statistics, from "
    "memory); feeder devices judged on the first sampling.check_events events, each simulated "
    "over options.duration_s and judged as /v1/network-energization judges one, with "
    "Clopper-Pearson intervals"
)


def _check_limits(body: NetworkStatisticsRequest, settings: Settings) -> None:
    """The limits a statistics request is held to before its network is built."""
    sp = body.sampling
    f = body.frequency_hz
    duration = body.options.duration_s
    if duration * f < 2.0:
        raise ParameterError(
            "options.duration_s", duration, f"at least two cycles, {2.0 / f:.4g} s at {f:g} Hz"
        )
    if sp.samples > settings.max_statistics_samples:
        raise LimitError("sampling.samples", sp.samples, settings.max_statistics_samples)
    n_dev = len(body.devices)
    events = min(sp.check_events, sp.samples)
    if n_dev and events * n_dev > settings.max_event_checks:
        raise LimitError(
            "sampling.check_events x devices",
            events * n_dev,
            settings.max_event_checks,
            knobs=(("sampling.check_events", f"<= {settings.max_event_checks // n_dev}"),),
        )
    if n_dev:  # each judged event's record, as the single operation's
        convert.check_work(
            settings, 3 * (len(body.units) + 1), f, duration, network.SAMPLES_PER_CYCLE
        )


def _enforce_budget(
    body: NetworkStatisticsRequest, net: network.Prepared, sigma_ms: float, settings: Settings
) -> cost.Work:
    sp = body.sampling
    latest = max(
        (float(np.max(u.breaker.closing_time_s)) for u in net.units if not u.in_service),
        default=0.0,
    )
    n_dev = len(body.devices)

    def estimate(o: Mapping[str, float]) -> cost.Work:
        r = budget.replaced
        samples = int(r(o, "sampling.samples", sp.samples))
        devices = int(r(o, "devices", n_dev))
        events = min(int(r(o, "sampling.check_events", sp.check_events)), samples)
        return cost.network_statistics_work(
            net.source,
            net.units,
            net.load,
            samples=samples,
            pole_closing_max_s=latest,
            pole_scatter_ms=r(o, "sampling.pole_scatter_ms", sigma_ms),
            events=events if devices else 0,
            devices=devices,
            duration_s=r(o, "options.duration_s", body.options.duration_s),
        )

    knobs = [budget.Knob("sampling.samples", sp.samples, 10, integer=True)]
    if n_dev:
        knobs += [
            budget.Knob("sampling.check_events", min(sp.check_events, sp.samples), 10, True),
            budget.Knob("options.duration_s", body.options.duration_s, _shortest(body)),
            budget.Knob("devices", n_dev, 0, integer=True),
        ]
    if sigma_ms > 0.0:
        knobs.append(budget.Knob("sampling.pole_scatter_ms", sigma_ms, 0.0))
    try:
        return budget.enforce(estimate, knobs, settings.max_request_steps)
    except ParameterError as exc:
        raise _step_error(exc, net) from None


def _shortest(body: NetworkStatisticsRequest) -> float:
    """The shortest options.duration_s the request may have: two cycles, and the field's
    minimum."""
    return max(0.05, 2.0 / body.frequency_hz)


def _step_error(exc: ParameterError, net: network.Prepared) -> ParameterError:
    """The solver's step refusal named by the source, as /v1/network-energization names it."""
    if exc.parameter != "resistance_ohm":
        return exc
    s = net.source
    x = s.inductance_h * 2.0 * math.pi * s.frequency_hz
    return ParameterError(
        "source",
        f"R = {s.resistance_ohm:.6g} ohm, X = {x:.6g} ohm",
        f"a source whose saturated loops keep {exc.allowed} (the step would be too short): "
        "a larger X/R or a smaller resistance",
    )


def _first_peak(
    s: network_statistics.PeakStatistics, rated: float | None
) -> FirstPeakStatisticsOut:
    p = s.percentiles
    lo, hi = p.p99_interval_a
    m = convert.maybe
    return FirstPeakStatisticsOut(
        p50_a=p.p50_a,
        p95_a=p.p95_a,
        p99_a=p.p99_a,
        mean_a=s.mean_a,
        max_a=p.max_a,
        p99_low_a=m(lo),
        p99_high_a=m(hi),
        p99_x_rated=p.p99_a / rated if rated else None,
        worst_sample=s.worst_sample,
        convergence=statistics.convergence_out(s.convergence),
    )


def _event(
    body: NetworkStatisticsRequest,
    dist: network_statistics.NetworkPeakDistribution,
    sample: int,
    worst_of: str,
    peak: float,
) -> EventOut:
    angle, residual, closing = network_statistics.replay_values(dist, sample)
    units = []
    for k, u in enumerate(body.units):
        given = u.state == "energized"
        units.append(
            EventUnitOut(
                name=u.name,
                residual_flux_pu=convert.floats(residual[k]) if given else None,
                pole_closing_ms=convert.floats(closing[k] * 1e3) if given else None,
            )
        )
    return EventOut(
        sample=sample,
        worst_of=worst_of,
        first_peak_a=peak,
        closing_angle_deg=angle,
        units=units,
    )


def _statistics(body: NetworkStatisticsRequest, settings: Settings) -> NetworkStatisticsResponse:
    _check_limits(body, settings)
    net = network.prepare(body)
    sp = body.sampling
    sigma = monte_carlo.pole_scatter_sigma_ms(3, sp.pole_scatter_ms)
    _enforce_budget(body, net, sigma, settings)
    spec = None
    if isinstance(sp.residual, RandomResidualIn):
        r = sp.residual
        if r.high_pu < r.low_pu:
            raise ParameterError(
                "sampling.residual.high_pu", r.high_pu, f"at least low_pu = {r.low_pu:g}"
            )
        spec = monte_carlo.UniformResidual(r.low_pu, r.high_pu, r.random_sign, r.zero_sum)
    try:
        dist = network_statistics.network_peak_distribution(
            net.source,
            net.units,
            samples=sp.samples,
            random_state=sp.random_state,
            closing_angle_deg=body.closing_angle_deg if sp.closing == "as_given" else None,
            residual=spec,
            pole_scatter_ms=sigma,
            load=net.load,
            max_steps=settings.max_total_steps // 3,  # unit-steps: three windings each
            checkpoint=compute.checkpoint,
        )
    except ParameterError as exc:
        raise _step_error(exc, net) from None
    energized = [k for k, u in enumerate(body.units) if u.state == "energized"]
    rated_sum = float(sum(net.rated_current_a[k] for k in energized))
    assumptions = list(net.assumptions)
    devices = None
    if body.devices:
        events = min(sp.check_events, sp.samples)
        latest = float(np.nanmax(dist.pole_closing_s[:events]))
        if latest > body.options.duration_s:
            raise ParameterError(
                "options.duration_s",
                body.options.duration_s,
                f"at least {latest:.6g} s, the latest pole instant drawn for the events judged",
            )
        odds = network_statistics.network_device_odds(
            net.source,
            net.units,
            dist,
            [convert.device_of(d, n) for n, d in enumerate(body.devices)],
            rated_sum,
            events=events,
            duration_s=body.options.duration_s,
            load=net.load,
            max_steps=settings.max_total_steps // 3,
            checkpoint=compute.checkpoint,
        )
        devices = [statistics.device_odds_out(o) for o in odds]
        assumptions.append(
            Assumption(
                name="check_events",
                value=float(events),
                unit="-",
                source="the first events of the sample, simulated over options.duration_s",
            )
        )
    units_out = []
    worst = [_event(body, dist, dist.source.worst_sample, "source", dist.source.percentiles.max_a)]
    for k, u in enumerate(body.units):
        s = dist.units[k]
        rated = net.rated_current_a[k]
        units_out.append(
            UnitStatisticsOut(
                name=u.name,
                state=u.state,
                rated_current_a=rated,
                first_peak=_first_peak(s, rated) if s is not None else None,
            )
        )
        if s is not None:
            worst.append(_event(body, dist, s.worst_sample, u.name, s.percentiles.max_a))
    assumptions += [
        Assumption(
            name="sampling.closing",
            value=sp.closing,
            unit="-",
            source="given" if "closing" in sp.model_fields_set else "default: random",
        ),
        Assumption(
            name="sampling.residual",
            value=sp.residual.kind,
            unit="-",
            source="given"
            if "residual" in sp.model_fields_set
            else "default: uniform 0.2-0.8 pu, random sign (typical range, from memory)",
        ),
        Assumption(
            name="sampling.pole_scatter_ms",
            value=sigma,
            unit="ms",
            source="given"
            if sp.pole_scatter_ms is not None
            else "default: 1 ms per pole (common practice)",
        ),
    ]
    return NetworkStatisticsResponse(
        samples=sp.samples,
        random_state=sp.random_state,
        frequency_hz=body.frequency_hz,
        pole_scatter_ms=sigma,
        energized_rated_current_a=rated_sum,
        source=_first_peak(dist.source, rated_sum),
        units=units_out,
        worst_events=worst,
        device_operation=devices,
        confidence_level=dist.confidence_level,
        assumptions=assumptions,
        warnings=convert.warnings_out(net.warnings),
        method=Method(
            simulated=NETWORK_STATISTICS_METHOD, approximations=list(dist.approximations)
        ),
    )


@router.post(
    "/statistics",
    response_model=NetworkStatisticsResponse,
    operation_id="network_energization_statistics",
    summary="Several units on one bus energised at random: first peaks as statistics, the "
    "feeder devices' odds",
    response_description="Per unit and at the source: P50/P95/P99/mean/max of the first peak, "
    "the P99 interval and its convergence, the worst events to replay; how often each feeder "
    "device operates, with its interval",
)
async def network_energization_statistics(
    body: Annotated[NetworkStatisticsRequest, Body(openapi_examples=NETWORK_STATISTICS_EXAMPLES)],
    settings: SettingsDep,
) -> Response:
    """Monte Carlo of the network's energisation, reproducible through
    ``sampling.random_state``.

    One request's work is bounded (samples, events judged in full, their records; a request
    over the budget gets 422 naming the fields to reduce). For a larger study, split it across
    requests with different ``random_state`` values: each is an independent sample, so
    ``device_operation[].operations`` and their event counts add up (recompute the interval
    from the sums); percentiles do not add up.
    """
    out = await compute.run_heavy(settings, _statistics, body, settings)
    return Response(out.model_dump_json(), media_type="application/json")
