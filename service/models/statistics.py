"""Request and response models of the peak-statistics operation."""

from __future__ import annotations

from typing import Annotated, Literal

from pydantic import Field

from service.models.common import CAUTION, Assumption, Method, Model, WarningItem, x_rated
from service.models.supplied import SuppliedStudy
from service.settings import default_limit


class FixedResidualIn(Model):
    """The residual flux of ``switching.residual_flux_pu`` (or its default) in every sample."""

    kind: Literal["fixed"]


class UniformResidualIn(Model):
    """Residual-flux magnitude uniform in [low, high] per winding, optionally random sign."""

    kind: Literal["uniform"]
    low_pu: float = Field(0.2, ge=0.0, le=1.2, description="[pu of nominal peak flux]")
    high_pu: float = Field(0.8, ge=0.0, le=1.2, description="[pu of nominal peak flux]")
    random_sign: bool = Field(True, description="Sign of each winding's residual at random")
    zero_sum: bool = Field(False, description="Three-phase: remove the mean so they sum to zero")


class StatisticsOptions(Model):
    """Monte Carlo settings."""

    samples: int = Field(
        10_000,
        ge=10,
        le=default_limit("max_statistics_samples"),
        description="Number of switching events; the maximum is the service's default limit: an "
        "operator may set a lower one (FIRSTCYCLE_MAX_STATISTICS_SAMPLES), then larger samples "
        "get a 422 limit-exceeded",
    )
    random_state: int = Field(
        1, ge=0, le=2**32 - 1, description="Random generator state, for reproducible answers"
    )
    residual: Annotated[FixedResidualIn | UniformResidualIn, Field(discriminator="kind")] = Field(
        default_factory=lambda: UniformResidualIn(kind="uniform"),
        description="Residual-flux distribution; default uniform 0.2-0.8 pu, random sign "
        "(typical range, from memory)",
    )
    pole_scatter_ms: float | None = Field(
        None,
        ge=0.0,
        le=5.0,
        description="Std. dev. of each pole's closing instant [ms]; "
        "default 1 ms for three phase (common practice), 0 for one phase",
    )
    closing_angle_fixed_deg: float | None = Field(
        None,
        ge=-360.0,
        le=360.0,
        description="Angle of the phase-A source voltage at the first pole's closing in every "
        "sample (e.g. a controlled-closing target), the statistics then over the residual flux "
        "and the pole scatter only; null: drawn uniform over one cycle [deg]",
    )
    threshold_a: float | None = Field(
        None,
        gt=0.0,
        le=1e8,
        description="Report the probability that the worst-line peak "
        "exceeds this [A] (e.g. a device's instantaneous pickup)",
    )
    check_events: int = Field(
        200,
        ge=10,
        le=2000,
        description="Events (the first of the sample) simulated in full to judge the devices "
        "and the dip; each probability comes with its binomial interval",
    )
    device_duration_s: float = Field(
        2.0, ge=0.1, le=5.0, description="Record each device is judged on [s]"
    )
    dip_duration_s: float = Field(
        0.5,
        ge=0.1,
        le=10.0,
        description="Simulated time of each dip (the dip falls in the "
        "first cycles; recovery is not judged here) [s]",
    )


class StatisticsRequest(SuppliedStudy):
    """Distribution of the first inrush peak over random closing instants and residual flux."""

    options: StatisticsOptions = Field(default_factory=StatisticsOptions)


class PercentilesOut(Model):
    """Percentiles of the first peak [A] and a 95 % interval for P99."""

    line: str
    p50_a: float
    p95_a: float
    p99_a: float
    max_a: float
    p99_low_a: float | None = Field(description="Lower end of the P99 interval; null: unbounded")
    p99_high_a: float | None = Field(description="Upper end; null: unbounded at this size")
    p99_x_rated: float | None = Field(description=x_rated("P99 of the first peak"))


class ConvergenceOut(Model):
    """P99 of the worst line and its interval as the sample grows."""

    samples: list[int]
    p99_a: list[float]
    p99_low_a: list[float | None]
    p99_high_a: list[float | None]


class ExceedanceOut(Model):
    """Probability that the worst-line peak exceeds the threshold."""

    threshold_a: float
    probability: float
    low: float
    high: float
    exceedances: int
    samples: int
    method: str


class DeviceOddsOut(Model):
    """How often a device operates on a random energisation."""

    device: str
    probability: float
    low: float
    high: float
    operations: int
    events: int
    smallest_margin: float | None = Field(description="Tightest ride-through margin seen")


class DipOddsOut(Model):
    """How often the generator's dip exceeds the limit."""

    limit: str
    max_dip_percent: float
    probability: float
    low: float
    high: float
    exceedances: int
    events: int
    dip_p50_percent: float
    dip_max_percent: float


class StatisticsResponse(Model):
    """Percentiles per line and of the worst line, convergence, exceedance."""

    rated_current_a: float | None
    samples: int
    random_state: int
    lines: list[PercentilesOut]
    worst_line: PercentilesOut
    convergence: ConvergenceOut
    exceedance: ExceedanceOut | None
    device_operation: list[DeviceOddsOut] | None = None
    dip_exceedance: DipOddsOut | None = None
    confidence_level: float
    assumptions: list[Assumption]
    warnings: list[WarningItem]
    method: Method
    caution: str = CAUTION
