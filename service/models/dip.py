"""Request and response models of the generator-dip operation."""

from __future__ import annotations

from typing import Annotated, ClassVar, Literal

from pydantic import Field, model_validator

from service.models.common import (
    CAUTION,
    Assumption,
    IdealSource,
    ImpedanceSource,
    Method,
    Model,
    Rules,
    Study,
    WarningItem,
    given,
    implies,
)


class GeneratorIn(Model):
    """Synchronous generator; reactances per unit on its own rating."""

    kind: Literal["generator"]
    rating_kva: float = Field(ge=1.0, le=2_000_000.0, description="Rated power [kVA]")
    x_d2_pu: float = Field(gt=0.01, le=1.0, description="Subtransient reactance X''d [pu]")
    x_d1_pu: float = Field(gt=0.01, le=2.0, description="Transient reactance X'd [pu]")
    x_d_pu: float = Field(gt=0.05, le=5.0, description="Synchronous reactance Xd [pu]")
    t_d2_s: float = Field(gt=0.001, le=1.0, description="Short-circuit subtransient T''d [s]")
    t_d1_s: float | None = Field(None, gt=0.01, le=20.0, description="T'd [s] (or t_d1o_s)")
    t_d1o_s: float | None = Field(None, gt=0.05, le=50.0, description="T'do [s] (or t_d1_s)")
    armature_resistance_pu: float | None = Field(
        None, ge=0.0, le=0.1, description="Armature resistance [pu]; default 0.01 (from memory)"
    )

    SCHEMA_RULES: ClassVar[Rules] = (
        {"oneOf": [given("t_d1_s", "number"), given("t_d1o_s", "number")]},
    )

    @model_validator(mode="after")
    def _order(self) -> GeneratorIn:
        if not self.x_d2_pu < self.x_d1_pu < self.x_d_pu:
            raise ValueError("reactances must satisfy x_d2_pu < x_d1_pu < x_d_pu")
        if (self.t_d1_s is None) == (self.t_d1o_s is None):
            raise ValueError("give exactly one of t_d1_s and t_d1o_s")
        return self


class UtilityIn(Model):
    """Weak utility source: constant voltage behind its fault impedance."""

    kind: Literal["utility"]
    fault_mva: float = Field(ge=0.01, le=1e6, description="Three-phase fault level [MVA]")
    x_over_r: float = Field(ge=0.1, le=100.0, description="Source X/R [-]")


class RegulatorIn(Model):
    """First-order voltage regulator acting on the field."""

    kind: Literal["regulator"]
    gain_pu: float = Field(gt=0.1, le=1000.0, description="K_A [pu/pu]")
    time_constant_s: float = Field(gt=0.001, le=10.0, description="T_A [s]")
    ceiling_pu: float = Field(gt=0.5, le=10.0, description="Field ceiling [pu]")
    floor_pu: float = Field(0.0, ge=-5.0, le=1.0, description="Field floor [pu]")
    sensing_time_constant_s: float = Field(0.0, ge=0.0, le=1.0, description="T_R [s]")


class PresetExcitation(Model):
    """``unknown`` or ``constant_field``.

    ``unknown``: a first-order regulator set for the machine (gain for a 60 degree phase margin
    of its open-circuit voltage loop, T_A 0.5 s, T_R 0.02 s, ceiling 1.5 x the rated-load
    field), each value with its provenance in ``assumptions``.
    """

    kind: Literal["unknown", "constant_field"]


class BusLoadIn(Model):
    """Load already on the bus (constant impedance at rated voltage)."""

    active_kw: float = Field(ge=0.0, le=1e7, description="[kW]")
    reactive_kvar: float = Field(0.0, ge=0.0, le=1e7, description="[kvar], lagging")


class CustomLimit(Model):
    """A caller's limit (e.g. a rapid-voltage-change limit at a utility connection)."""

    name: str = Field(min_length=1, max_length=40)
    max_dip_percent: float = Field(gt=0.0, le=100.0, description="[%]")
    max_recovery_s: float | None = Field(None, gt=0.0, le=600.0, description="[s]")


class DipOptions(Model):
    """Limits, sizing and simulation options."""

    limits: Literal["iso_8528_5"] | CustomLimit = Field(
        "iso_8528_5", description="ISO 8528-5 classes G1-G3 (values from memory) or a limit"
    )
    size_for: Literal["G1", "G2", "G3", "custom"] | None = Field(
        "G2", description="Find the smallest generator meeting this class (or the custom limit)"
    )
    duration_s: float = Field(10.0, gt=0.5, le=30.0, description="Simulated time [s]")
    recovery_band_percent: float = Field(3.0, gt=0.1, le=20.0, description="[%]")
    voltage_measure: Literal["worst", "line", "phase"] = Field(
        "worst", description="Dip from the deeper of phase and line voltages, or one of them"
    )

    SCHEMA_RULES: ClassVar[Rules] = (
        implies(
            {"required": ["size_for"], "properties": {"size_for": {"const": "custom"}}},
            given("limits"),
        ),
    )

    @model_validator(mode="after")
    def _custom_size(self) -> DipOptions:
        if self.size_for == "custom" and not isinstance(self.limits, CustomLimit):
            raise ValueError("size_for 'custom' needs limits to be a custom limit")
        return self


Source = Annotated[GeneratorIn | UtilityIn, Field(discriminator="kind")]
ExcitationIn = Annotated[RegulatorIn | PresetExcitation, Field(discriminator="kind")]


class GeneratorDipRequest(Study):
    """A transformer energised from a generator or a weak utility source."""

    supply: Source | None = Field(
        None,
        description="The generator or the weak utility source; give this or source (a utility "
        "feeder by its fault level or impedance at the terminals)",
    )
    excitation: ExcitationIn = Field(
        default_factory=lambda: PresetExcitation(kind="unknown"),
        description="Regulator (generator only)",
    )
    bus_load: BusLoadIn | None = None
    options: DipOptions = Field(default_factory=DipOptions)

    SCHEMA_RULES: ClassVar[Rules] = (
        {
            "required": ["transformer"],
            "properties": {
                "transformer": {"type": "object", "properties": {"phases": {"const": 3}}}
            },
        },
        # exactly one of supply and source; a source here is a feeder with an impedance
        {"oneOf": [given("supply"), given("source")]},
        implies(
            given("source"),
            {
                "properties": {
                    "source": {"properties": {"kind": {"enum": ["fault_level", "impedance"]}}}
                }
            },
        ),
    )

    @model_validator(mode="after")
    def _nameplate(self) -> GeneratorDipRequest:
        if self.transformer is None:
            raise ValueError("generator-dip needs transformer (nameplate mode)")
        if self.transformer.phases != 3:
            raise ValueError("generator-dip models three-phase units")
        if (self.supply is None) == (self.source is None):
            raise ValueError(
                "give exactly one of supply (a generator, or kind utility) or source (a utility "
                "feeder: kind fault_level or impedance)"
            )
        if isinstance(self.source, IdealSource):
            raise ValueError(
                "an ideal source has no impedance, so energising the unit dips no voltage: give "
                "the feeder as source kind fault_level or impedance, or a generator in supply"
            )
        if isinstance(self.source, ImpedanceSource) and not (
            self.source.resistance_ohm > 0.0 and self.source.reactance_ohm > 0.0
        ):
            raise ValueError(
                "source kind impedance for generator-dip needs resistance_ohm > 0 and "
                "reactance_ohm > 0 (its X/R must be finite and > 0)"
            )
        return self


class VerdictOut(Model):
    """Judgement against one limit."""

    limit: str
    max_dip_percent: float | None
    max_recovery_s: float | None
    source: str
    dip_ok: bool | None
    recovery_ok: bool | None
    passed: bool | None = Field(description="null: no verdict (e.g. G4, by agreement)")
    note: str


class SizingOut(Model):
    """Smallest generator (same per-unit data) that meets the limit."""

    limit: str
    status: str = Field(description="found, smallest_bound_passes or largest_bound_fails")
    rating_kva: float | None
    dip_percent: float | None
    recovery_time_s: float | None
    statement: str


class GeneratorDipResponse(Model):
    """Dip, recovery, verdicts and the generator size that would pass."""

    dip_percent: float = Field(description="Headline dip (per voltage_measure) [%]")
    dip_phase_percent: float
    dip_line_percent: float
    min_voltage_pu: float
    min_voltage_time_s: float
    recovery_time_s: float | None = Field(
        description="Into the band for good; null: not within the simulated time. With the "
        "warning regulator_poorly_damped it measures an oscillation and is not judged"
    )
    inrush_peak_a: float = Field(description="First inrush peak with this source [A]")
    hand_method_dip_percent: float = Field(description="Subtransient voltage-divider estimate")
    hand_method_difference_percent: float = Field(description="Hand method minus simulation")
    verdicts: list[VerdictOut]
    sizing: SizingOut | None
    cycle_start_s: list[float]
    voltage_rms_pu: dict[str, list[float]] = Field(description="Phase-to-neutral rms per cycle")
    voltage_line_rms_pu: dict[str, list[float]] = Field(description="Line-to-line rms per cycle")
    frequency_dip: str = Field(description="What is said about frequency")
    assumptions: list[Assumption]
    warnings: list[WarningItem]
    method: Method
    caution: str = CAUTION
