"""Request and response models of the network statistics operation (random energisations of
several units on one bus)."""

from __future__ import annotations

from typing import Annotated, Literal

from pydantic import Field

from service.models.common import CAUTION, Assumption, Method, Model, WarningItem
from service.models.network import NETWORK_RATED_BASE, NetworkRequest
from service.models.statistics import ConvergenceOut, DeviceOddsOut
from service.settings import default_limit


class GivenResidualIn(Model):
    """Each unit's own residual_flux_pu (or its default) in every sample."""

    kind: Literal["as_given"]


class RandomResidualIn(Model):
    """Residual flux drawn for every winding of every unit being energised, independently:
    magnitude uniform in [low_pu, high_pu], optionally with a random sign."""

    kind: Literal["uniform"]
    low_pu: float = Field(0.2, ge=0.0, le=1.0, description="[pu of nominal peak flux]")
    high_pu: float = Field(0.8, ge=0.0, le=1.0, description="[pu of nominal peak flux]")
    random_sign: bool = Field(True, description="Sign of each winding's residual at random")
    zero_sum: bool = Field(
        False,
        description="Subtract the mean of a unit's three draws so that they sum to zero (a "
        "three-limb core's set); values may then fall outside the range",
    )


class NetworkSamplingIn(Model):
    """How the random energisations are drawn."""

    samples: int = Field(
        1000,
        ge=10,
        le=default_limit("max_statistics_samples"),
        description="Number of energisations drawn; the maximum is the service's default "
        "limit: an operator may set a lower one (FIRSTCYCLE_MAX_STATISTICS_SAMPLES), then "
        "larger samples get a 422 limit-exceeded",
    )
    random_state: int = Field(
        1, ge=0, le=2**32 - 1, description="Random generator state, for reproducible answers"
    )
    closing: Literal["random", "as_given"] = Field(
        "random",
        description="random: the angle of the phase-A EMF at the reference closing uniform over "
        "one cycle; as_given: closing_angle_deg in every sample",
    )
    residual: Annotated[GivenResidualIn | RandomResidualIn, Field(discriminator="kind")] = Field(
        default_factory=lambda: RandomResidualIn(kind="uniform"),
        description="Residual flux of the units being energised; default uniform 0.2-0.8 pu, "
        "random sign (typical range, from memory), as /v1/inrush/statistics",
    )
    pole_scatter_ms: float | None = Field(
        None,
        ge=0.0,
        le=5.0,
        description="Std. dev. of each pole's closing instant around the unit's "
        "pole_closing_ms, every pole of every unit being energised drawn independently; the "
        "earliest drawn pole keeps its given instant [ms]; default 1 ms (common practice)",
    )
    check_events: int = Field(
        50,
        ge=10,
        le=2000,
        description="Events (the first of the sample) simulated over options.duration_s to "
        "judge the feeder devices; each probability comes with its binomial interval (50 "
        "events bound a probability seen 0 times below 0.07 at 95 %); used only with "
        "devices; each costs a whole network simulation, so the default keeps a feeder of a "
        "few units within the work budget",
    )


class NetworkStatisticsRequest(NetworkRequest):
    """A network energisation drawn at random: the network as for /v1/network-energization,
    and how its energisations are drawn."""

    sampling: NetworkSamplingIn = Field(default_factory=NetworkSamplingIn)


class FirstPeakStatisticsOut(Model):
    """The first peak of one current over the sample (largest line each sample)."""

    p50_a: float
    p95_a: float
    p99_a: float
    mean_a: float
    max_a: float
    p99_low_a: float | None = Field(description="Lower end of the P99 interval; null: unbounded")
    p99_high_a: float | None = Field(description="Upper end; null: unbounded at this size")
    p99_x_rated: float | None = Field(
        description="p99_a / rated rms line current (a unit: its own; the source: "
        f"{NETWORK_RATED_BASE}) [-]"
    )
    worst_sample: int = Field(description="The sample (0-based) of max_a: see worst_events")
    convergence: ConvergenceOut = Field(description="P99 and its interval as the sample grows")


class UnitStatisticsOut(Model):
    """One unit's first peak over the sample."""

    name: str
    state: str
    rated_current_a: float = Field(description="Rated rms line current of its energised winding")
    first_peak: FirstPeakStatisticsOut | None = Field(
        description="Units being energised only (a unit in service has no first peak of its "
        "own: its sympathetic current is in /v1/network-energization)"
    )


class EventUnitOut(Model):
    """One unit's part of a sampled event, as /v1/network-energization takes it."""

    name: str
    residual_flux_pu: list[float] | None = Field(
        description="The value to send as units[].residual_flux_pu; null for a unit in "
        "service [pu of nominal peak flux]"
    )
    pole_closing_ms: list[float] | None = Field(
        description="The value to send as units[].pole_closing_ms; null for a unit in service [ms]"
    )


class EventOut(Model):
    """A sampled event: the request to /v1/network-energization with these values replays it
    (same network, closing_angle_deg and each unit's residual_flux_pu and pole_closing_ms)."""

    sample: int = Field(description="Its index in the sample (0-based)")
    worst_of: str = Field(description="'source' or the unit whose largest first peak it is")
    first_peak_a: float = Field(description="That current's first peak in this event [A]")
    closing_angle_deg: float = Field(description="The value to send as closing_angle_deg [deg]")
    units: list[EventUnitOut]


class NetworkStatisticsResponse(Model):
    """First peaks at the source and per unit over random energisations; the feeder devices'
    odds of operating."""

    samples: int
    random_state: int
    frequency_hz: float
    pole_scatter_ms: float = Field(description="Std. dev. of the pole scatter drawn [ms]")
    energized_rated_current_a: float = Field(description=f"{NETWORK_RATED_BASE} [A]")
    source: FirstPeakStatisticsOut = Field(description="The current out of the source")
    units: list[UnitStatisticsOut]
    worst_events: list[EventOut] = Field(
        description="The event of the largest first peak at the source, then of each unit "
        "being energised (an event may appear more than once)"
    )
    device_operation: list[DeviceOddsOut] | None = Field(
        None,
        description="Per feeder device: how often it operates on the source current, judged on "
        "the first sampling.check_events events over options.duration_s; null without devices",
    )
    confidence_level: float
    assumptions: list[Assumption]
    warnings: list[WarningItem]
    method: Method
    caution: str = CAUTION
