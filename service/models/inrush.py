"""Request and response models of the inrush operations (peak, envelope)."""

from __future__ import annotations

from typing import Any, Literal

from pydantic import Field

from service.models.common import (
    CAUTION,
    Assumption,
    InrushStudy,
    Method,
    Model,
    WarningItem,
    x_rated,
)
from service.problems import Problem
from service.settings import default_limit


class PeakRequest(InrushStudy):
    """First inrush peak of one switching event, and its worst case."""

    method: Literal["analytic", "simulated", "both"] = Field(
        "both", description="Closed form, time-domain simulation, or both side by side"
    )


class AnalyticWindingPeak(Model):
    """Closed-form first peak of one winding, and of the line current at its leading terminal.

    For single-phase and wye windings the line current is the winding current. For a delta,
    line A carries c_AB - c_CA (Kirchhoff's current law): equal to one winding's current when
    only that winding saturates, the sum of two when both saturate in opposite directions.
    """

    winding: str
    line: str | None = Field(
        None, description="Line whose current first_peak_a is: A, B, C (A for AB, B for BC...)"
    )
    closing_angle_deg: float = Field(description="Winding voltage angle when energised [deg]")
    flux_offset_pu: float = Field(description="Centre of the first flux swing [pu of nominal]")
    first_peak_a: float = Field(
        description="First peak of the line current named in line [A] (for a delta the "
        "difference of two winding currents; see winding_current_peak_a for the winding's own)"
    )
    first_peak_x_rated: float | None = Field(
        description=x_rated("First peak of the line current named in line")
    )
    winding_current_peak_a: float | None = Field(
        None, description="First peak of this winding's own current [A]"
    )
    winding_current_peak_x_rated_winding: float | None = Field(
        None, description="winding_current_peak_a / rated rms winding current"
    )
    simulated_over_analytic: float | None = Field(
        None,
        description="Simulated first peak of the same line / first_peak_a (when both are "
        "computed and the closed form saturates) [-]",
    )


class SimulatedLinePeak(Model):
    """Simulated first peak of one line current."""

    line: str
    first_peak_a: float = Field(description="Largest |i| in the first cycles [A]")
    first_peak_x_rated: float | None = Field(description=x_rated("First peak"))
    time_of_peak_s: float = Field(description="Instant of the peak after t = 0 [s]")


class WorstCase(Model):
    """The largest first peak over the free parameter named in ``over``."""

    over: str = Field(description="What was varied to find it")
    peak_a: float
    peak_x_rated: float | None = Field(description=x_rated("Worst first peak"))
    closing_angle_deg: float | None = Field(None, description="Phase-A angle giving it [deg]")
    line: str | None = None
    residual_flux_pu: float | None = Field(None, description="Residual flux assumed [pu]")
    winding_current_peak_a: float | None = Field(
        None,
        description="Closed form only: Wang's worst case of one winding's own current, voltage-"
        "zero closing with the largest residual flux aligned [A]; for a delta a winding current, "
        "not a line current",
    )


class PeakResponse(Model):
    """First peak per winding/line, worst cases, and how they were obtained."""

    rated_current_a: float | None = Field(description="Rated rms line current [A]")
    first_peak_a: float = Field(
        description="Largest first peak of this event, simulated when simulated, else analytic [A]"
    )
    first_peak_x_rated: float | None = Field(description=x_rated("Largest first peak"))
    analytic: list[AnalyticWindingPeak] | None
    simulated: list[SimulatedLinePeak] | None
    worst_case_simulated: WorstCase | None
    worst_case_analytic: WorstCase | None
    saturation_flux_pu: float = Field(description="Knee B_S/B_N used [pu]")
    loop_resistance_ohm: float = Field(description="Saturated-loop resistance [ohm]")
    loop_inductance_h: float = Field(description="Saturated-loop inductance [H]")
    assumptions: list[Assumption]
    warnings: list[WarningItem]
    method: Method
    caution: str = CAUTION


class EnvelopeOptions(Model):
    """Simulation and analysis options."""

    duration_s: float = Field(
        1.0,
        gt=0.0,
        le=default_limit("max_duration_s"),
        description="Simulated time [s]; the maximum is the service's default limit: an "
        "operator may set a lower one (FIRSTCYCLE_MAX_DURATION_S), then longer durations get a "
        "422 limit-exceeded",
    )
    samples_per_cycle: int = Field(
        128,
        ge=16,
        le=default_limit("max_samples_per_cycle"),
        description="Output samples per cycle; the maximum is the service's default limit: an "
        "operator may set a lower one (FIRSTCYCLE_MAX_SAMPLES_PER_CYCLE)",
    )
    below_x_rated: float = Field(
        1.0,
        gt=0.0,
        le=100.0,
        description=x_rated("Threshold for time_below_s, on the per-cycle peaks"),
    )
    below_current_a: float | None = Field(
        None, gt=0.0, le=1e9, description="Threshold in A (overrides below_x_rated)"
    )
    harmonic_cycles: int = Field(
        5,
        ge=1,
        le=600,
        description="First cycles over which the minimum second-harmonic ratio is taken",
    )
    waveform_points: int = Field(
        0,
        ge=0,
        le=200_000,
        description="Return the line currents with at most this many points per line; 0 for none",
    )


class EnvelopeRequest(InrushStudy):
    """Decay envelope of one switching event."""

    options: EnvelopeOptions = Field(default_factory=EnvelopeOptions)


class LineEnvelopeOut(Model):
    """Decay of one line current."""

    line: str
    cycle_peaks_a: list[float] = Field(description="Peak |i| of each cycle [A]")
    cycle_peaks_x_rated: list[float] | None = Field(description=x_rated("Peak of each cycle"))
    second_harmonic_ratio: list[float | None] = Field(description="|I2|/|I1| per cycle [-]")
    min_second_harmonic_ratio: float | None = Field(
        description="Minimum over the first harmonic_cycles cycles [-]"
    )
    min_second_harmonic_cycle: int = Field(description="Cycle (0-based) of that minimum")
    decay_time_constant_s: float | None = Field(
        description="Equivalent exponential time constant of the peaks [s]"
    )
    decay_fit_cycles: list[int] = Field(description="First and last cycle of the fit")
    time_below_s: float | None = Field(
        description="Time after which every peak stays below "
        "the threshold [s]; null when not reached"
    )
    equivalent_rms_a: list[float] = Field(description="I_eq(t) at equivalent_rms_times_s [A]")
    equivalent_rms_x_rated: list[float] | None = Field(
        description=x_rated("I_eq(t) at equivalent_rms_times_s", "rms")
    )


class AnalyticEnvelope(Model):
    """Closed-form per-cycle peaks of one winding's line (see AnalyticWindingPeak)."""

    winding: str
    line: str | None = Field(None, description="Line whose current cycle_peaks_a is")
    cycle_peaks_a: list[float] = Field(
        description="Per-cycle peak of the line current named in line [A]"
    )
    winding_current_cycle_peaks_a: list[float] | None = Field(
        None, description="Per-cycle peak of this winding's own current [A]"
    )
    simulated_over_analytic: list[float | None] | None = Field(
        None,
        description="Simulated per-cycle peak of the same line / cycle_peaks_a, per cycle; null "
        "where the closed form no longer saturates [-]",
    )


class Waveform(Model):
    """Sampled line currents."""

    time_s: list[float]
    current_a: dict[str, list[float]]


class EnvelopeResponse(Model):
    """Per-cycle envelope, rms over time, harmonics."""

    rated_current_a: float | None
    frequency_hz: float
    threshold_a: float | None = Field(description="Threshold used for time_below_s [A]")
    equivalent_rms_times_s: list[float]
    lines: list[LineEnvelopeOut]
    analytic: list[AnalyticEnvelope]
    waveform: Waveform | None
    steps_per_cycle: int = Field(description="Internal integration steps per cycle")
    assumptions: list[Assumption]
    warnings: list[WarningItem]
    method: Method
    caution: str = CAUTION


class PeakBatchRequest(Model):
    """Many peak requests; each item has the shape of a PeakRequest."""

    cases: list[dict[str, Any]] = Field(
        min_length=1,
        max_length=default_limit("max_cases"),
        description="The cases, each a PeakRequest body, validated on its own. The maximum is "
        "the service's default limit: an operator may set a lower one (FIRSTCYCLE_MAX_CASES), "
        "then longer batches get a 422 limit-exceeded",
        json_schema_extra={"items": {"$ref": "#/components/schemas/PeakRequest"}},
    )


class BatchItem(Model):
    """The answer for one case: a result (status 200) or a problem (status 422)."""

    index: int = Field(description="Position of the case in the request")
    status: int = Field(description="200, or the status the case alone would have had")
    result: PeakResponse | None = None
    problem: Problem | None = None


class PeakBatchResponse(Model):
    """Answers in the order of the cases."""

    count: int
    failed: int
    results: list[BatchItem]
