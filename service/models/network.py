"""Request and response models of the network operation (several units on one bus)."""

from __future__ import annotations

from typing import Annotated, ClassVar, Literal

from pydantic import Field, model_validator

from service.models.clearance import (
    CurvedDevice,
    DifferentialIn,
    DifferentialOut,
    Name,
    PointOut,
    RideThroughOut,
)
from service.models.common import (
    CAUTION,
    Assumption,
    Method,
    Model,
    Rules,
    SourceIn,
    ThreePhaseWindingIn,
    TransformerNameplate,
    WarningItem,
    given,
)
from service.settings import default_limit

#: Most units in one request (a bus of a plant or a feeder's pad-mount units).
MAX_UNITS = 64
#: How far an energised winding's rated voltage may sit from the bus voltage, as a fraction:
#: the usual off-load tap range of +/-2 x 2.5 % (common practice).
VOLTAGE_TOLERANCE = 0.05
#: The fraction of its own peak over which a unit in service's sympathetic current is timed.
SYMPATHETIC_FRACTION = 0.5
#: The per-cycle rms bus voltage above which the bus counts as recovered [% of nominal].
RECOVERY_PERCENT = 90.0

NETWORK_RATED_BASE = (
    "the sum of the rated rms line currents S/(sqrt(3)*V_LL) of the units being energised "
    "(state energized)"
)


class NetworkLoadIn(Model):
    """Load already on the bus: a constant impedance drawing this power at the bus voltage."""

    active_kw: float = Field(ge=0.0, le=1e7, description="Three-phase active power [kW]")
    reactive_kvar: float = Field(
        gt=0.001,
        le=1e7,
        description="Three-phase reactive power, lagging; above zero (a purely resistive load "
        "is outside the network model) [kvar]",
    )


class NetworkCircuitIn(ThreePhaseWindingIn):
    """A unit's energised windings in SI units, for cross-checks with circuit simulators: at the
    bus frequency, fed by the network's source."""

    rated_current_a: float = Field(
        ge=1e-3,
        le=1e7,
        description="Rated rms line current (sqrt(3) x the winding's own for a delta), the base "
        "of the unit's x-rated values; with the line voltage it gives the rating "
        "sqrt(3)*V_LL*I_r the source is checked against [A]",
    )


class NetworkUnitIn(Model):
    """One transformer on the bus, behind its own breaker: by nameplate or by SI circuit."""

    name: Name
    transformer: TransformerNameplate | None = Field(
        None,
        description="Nameplate as for the other operations; three-phase, its energised winding "
        "at the bus voltage and frequency (give this or circuit_three_phase)",
    )
    circuit_three_phase: NetworkCircuitIn | None = Field(
        None,
        description="The unit as a three-phase SI circuit, its line voltage (sqrt(3) x the "
        "winding voltage for a wye) at the bus voltage (give this or transformer)",
    )
    state: Literal["energized", "in_service"] = Field(
        "energized",
        description="energized: switched on at the closing; in_service: connected before and "
        "in its steady state then (it carries the sympathetic current)",
    )
    residual_flux_pu: list[Annotated[float, Field(ge=-1.5, le=1.5)]] | None = Field(
        None,
        min_length=3,
        max_length=3,
        description="Residual flux per winding (A, B, C or AB, BC, CA) [pu of nominal peak "
        "flux]; default for an energised unit 0.8 on the first winding, the others -0.4; "
        "not used for a unit in service (it starts in its steady state)",
    )
    pole_closing_ms: list[Annotated[float, Field(ge=0.0, le=1000.0)]] | None = Field(
        None,
        min_length=3,
        max_length=3,
        description="Closing instant of each pole of this unit's breaker after the reference "
        "closing t = 0 [ms]; default all 0; energised units only",
    )
    differential: DifferentialIn | None = Field(
        None,
        description="This unit's own transformer differential, judged on its own line currents "
        "from the simulation as in /v1/clearance (its far side unloaded): for a unit in "
        "service, whether it restrains through its neighbour's energisation (the sympathetic "
        "current); vector_group's energized_side letter must match the energised winding's "
        "connection; default none",
    )

    SCHEMA_RULES: ClassVar[Rules] = (
        {"oneOf": [given("transformer"), given("circuit_three_phase")]},
    )

    @model_validator(mode="after")
    def _in_service_closes_nothing(self) -> NetworkUnitIn:
        if (self.transformer is None) == (self.circuit_three_phase is None):
            raise ValueError("give exactly one of transformer or circuit_three_phase")
        if self.state == "in_service" and self.pole_closing_ms is not None:
            raise ValueError("pole_closing_ms is for units being energised, not in service")
        return self


class NetworkOptions(Model):
    """Simulation options."""

    duration_s: float = Field(
        1.0,
        ge=0.05,
        le=default_limit("max_duration_s"),
        description="Simulated time [s]; the maximum is the service's default limit: an "
        "operator may set a lower one (FIRSTCYCLE_MAX_DURATION_S)",
    )
    harmonic_cycles: int = Field(
        5, ge=1, le=600, description="First cycles over which the minimum second-harmonic "
        "ratio is taken",
    )  # fmt: skip


class NetworkRequest(Model):
    """Units energised together on one bus, beside units in service, from one source."""

    bus_voltage_kv: float = Field(
        ge=0.01, le=1000.0, description="Rated line-to-line rms voltage of the bus [kV]"
    )
    frequency_hz: float = Field(60.0, ge=10.0, le=400.0, description="[Hz]")
    source: SourceIn | None = Field(
        None,
        description="Supply at the bus (three-phase fault level at the bus voltage, or the "
        "per-phase impedance); default ideal",
    )
    bus_load: NetworkLoadIn | None = Field(None, description="Load on the bus; default none")
    closing_angle_deg: float = Field(
        0.0,
        ge=-360.0,
        le=360.0,
        description="Angle of the phase-A source EMF e_a = sqrt(2)*V/sqrt(3)*sin(wt + angle) "
        "at t = 0, the reference closing; 0 is a rising zero [deg]",
    )
    units: list[NetworkUnitIn] = Field(min_length=1, max_length=MAX_UNITS)
    devices: list[CurvedDevice] = Field(
        default_factory=list,
        max_length=20,
        description="The feeder's protective devices, judged against the current out of the "
        "source (currents at the bus voltage)",
    )
    options: NetworkOptions = Field(default_factory=NetworkOptions)

    @model_validator(mode="after")
    def _names(self) -> NetworkRequest:
        names = [u.name for u in self.units]
        if len(set(names)) != len(names):
            raise ValueError("unit names must be distinct")
        devs = [d.name for d in self.devices]
        if len(set(devs)) != len(devs):
            raise ValueError("device names must be distinct")
        if all(u.state == "in_service" for u in self.units):
            raise ValueError("at least one unit must be energized")
        return self


class SympatheticOut(Model):
    """The current a unit in service draws while its neighbour's inrush depresses the bus."""

    peak_a: float = Field(description="Largest per-cycle peak of its line currents [A]")
    peak_x_rated: float = Field(
        description="peak_a / the unit's own rated rms line current S/(sqrt(3)*V_LL) [-]"
    )
    peak_cycle: int = Field(description="Cycle (0-based from t = 0) of that peak")
    line: str = Field(description="Line carrying it")
    fraction_of_peak: float = Field(description="The fraction of peak_a over which it is timed [-]")
    above_from_s: float = Field(description="Start of the first cycle whose peak is above [s]")
    above_until_s: float = Field(
        description="End of the last cycle whose peak is above; the record's end when it never "
        "falls below [s]"
    )
    duration_above_s: float = Field(description="above_until_s - above_from_s [s]")
    steady_peak_a: float = Field(description="Peak of its current in the first cycle [A]")


class CurrentOut(Model):
    """One current's readings (a unit's line currents, or the current out of the source)."""

    first_peak_a: float = Field(
        description="Largest |i| of the three lines within two cycles after the last pole of "
        "the energised units closes [A]"
    )
    first_peak_x_rated: float | None = Field(
        description="first_peak_a / rated rms line current (a unit: its own; the source: "
        f"{NETWORK_RATED_BASE}) [-]"
    )
    first_peak_line: str
    cycle_peaks_a: list[float] = Field(description="Peak |i| of each cycle, largest line [A]")
    cycle_mean_a: dict[str, list[float]] = Field(
        description="Mean of each line's current over each cycle (its direct component: the "
        "sign shows the polarity of the offset) [A]"
    )
    equivalent_rms_a: list[float] = Field(
        description="I_eq(t) of the largest line at equivalent_rms_times_s [A]"
    )
    second_harmonic_ratio: list[float | None] = Field(
        description="|I2|/|I1| per cycle, smallest of the three lines [-]"
    )
    min_second_harmonic_ratio: float | None = Field(
        description="Minimum of second_harmonic_ratio over the first options.harmonic_cycles "
        "cycles [-]"
    )


class UnitOut(Model):
    """One unit's currents."""

    name: str
    state: str
    rated_current_a: float = Field(description="Rated rms line current of its energised winding")
    current: CurrentOut
    sympathetic: SympatheticOut | None = Field(description="Units in service only")
    differential: DifferentialOut | None = Field(
        None,
        description="The unit's differential (when given) on its own line currents: per-cycle "
        "table and the verdict under each harmonic logic",
    )


class BusVoltageOut(Model):
    """The bus voltage's dip: per-cycle rms of each phase to ground."""

    nominal_phase_voltage_v: float = Field(description="bus_voltage_kv/sqrt(3) [V]")
    cycle_rms_percent: list[float] = Field(
        description="Per-cycle rms, lowest phase, each cycle [% of nominal]"
    )
    min_percent: float = Field(description="Lowest per-cycle rms [% of nominal]")
    min_cycle: int = Field(description="Cycle (0-based) of that minimum")
    recovery_percent: float = Field(description="The recovery threshold [% of nominal]")
    recovered_cycle: int | None = Field(
        description="First cycle from which every later cycle's rms on every phase stays at or "
        "above recovery_percent; 0 when it never dips below; null when not within the record"
    )
    recovered_s: float | None = Field(description="Start of recovered_cycle [s]")


class RuleOfThumbOut(Model):
    """A common-practice inrush point summed over the energised units, beside the simulation."""

    multiple_x_rated: float = Field(description=f"Multiple of {NETWORK_RATED_BASE} [-]")
    time_s: float = Field(description="The point's duration [s]")
    current_a: float = Field(
        description=f"multiple_x_rated x {NETWORK_RATED_BASE}: what the rule of thumb says the "
        "feeder carries [A]"
    )
    simulated_equivalent_rms_a: float | None = Field(
        description="The simulated source current's I_eq at time_s (largest line); null when "
        "the record is shorter [A]"
    )
    simulated_over_rule: float | None = Field(description="The ratio of the two [-]")


class FeederDeviceOut(Model):
    """A feeder device against the current out of the source."""

    name: str
    kind: str
    ride_through: RideThroughOut
    common_practice_points: list[PointOut] = Field(
        description="The common-practice inrush points (x the summed rated current of the "
        "energised units) against its minimum curve"
    )


class NetworkResponse(Model):
    """Per unit and at the source: peaks, decay, harmonics; the bus dip; the feeder devices."""

    frequency_hz: float
    closing_angle_deg: float
    duration_s: float
    steps_per_cycle: int = Field(description="Internal integration steps per cycle")
    energized_rated_current_a: float = Field(description=f"{NETWORK_RATED_BASE} [A]")
    equivalent_rms_times_s: list[float]
    source: CurrentOut
    units: list[UnitOut]
    bus_voltage: BusVoltageOut
    rule_of_thumb: list[RuleOfThumbOut]
    devices: list[FeederDeviceOut]
    assumptions: list[Assumption]
    warnings: list[WarningItem]
    method: Method
    caution: str = CAUTION
