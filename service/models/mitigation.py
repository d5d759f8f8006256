"""Request and response models of the mitigation operation."""

from __future__ import annotations

from typing import Annotated, ClassVar, Literal

from pydantic import Field, model_validator

from service.models.common import (
    CAUTION,
    Assumption,
    Method,
    Model,
    Rules,
    SourceIn,
    WarningItem,
    given,
    x_rated,
)
from service.models.supplied import SuppliedStudy

ERROR_MS = Field(
    1.0,
    ge=0.0,
    le=5.0,
    description="Half-width of the breaker's closing-time error band; the worst point of the "
    "band is the design basis [ms]; default 1 ms (common practice, from memory)",
)


class ControlledClosingIn(Model):
    """Point-on-wave closing aimed at the residual flux of each winding."""

    kind: Literal["controlled_closing"]
    strategy: Literal["simultaneous", "first_phase_then_quarter_cycle", "independent"] | None = (
        Field(
            None,
            description="Pole timing; default independent poles (simultaneous for a delta "
            "winding, whose windings need two poles each)",
        )
    )
    closing_error_ms: float = ERROR_MS


class PreInsertionResistorIn(Model):
    """A resistor in each breaker pole, bypassed after the insertion time."""

    kind: Literal["pre_insertion_resistor"]
    resistance_ohm: float | None = Field(
        None,
        gt=0.0,
        le=1e5,
        description="Per pole [ohm]; default: sized - for the dip limit with a generator "
        "supply, else for the peak target, else the saturated-loop reactance",
    )
    insertion_time_ms: float | None = Field(
        None, ge=0.1, le=1000.0, description="Closing to bypass [ms]; default one cycle"
    )


class DemagnetizeIn(Model):
    """The residual flux reduced before energising."""

    kind: Literal["demagnetize"]
    residual_fraction: float = Field(
        0.0, ge=0.0, le=1.0, description="Share of the residual flux left; 0: fully demagnetised"
    )


class PreMagnetizeIn(Model):
    """The core pre-set to the flux that a simultaneous closing at a known instant matches."""

    kind: Literal["pre_magnetize"]
    max_flux_pu: float = Field(
        0.8,
        gt=0.0,
        le=1.2,
        description="Largest flux the pre-magnetising circuit leaves [pu of nominal peak "
        "flux]; default 0.8 (typical residual range, from memory)",
    )
    closing_angle_deg: float | None = Field(
        None,
        ge=-360.0,
        le=360.0,
        description="Phase-A voltage angle of the closing [deg]; default: the angle with the "
        "least flux mismatch over the error band",
    )
    closing_error_ms: float = ERROR_MS


class RampIn(Model):
    """The supply voltage raised from a reduced level with the unit connected."""

    kind: Literal["ramp"]
    start_pu: float = Field(0.0, ge=0.0, le=0.999, description="Voltage at closing [pu]")
    hold_s: float = Field(0.0, ge=0.0, le=2.0, description="Time held at start_pu [s]")
    rise_s: float = Field(
        0.5, ge=0.0, le=2.0, description="Linear rise to rated after the hold; 0: a step [s]"
    )


class TapIn(Model):
    """Another tap on the energised winding (same applied voltage)."""

    kind: Literal["tap"]
    turns_percent: float = Field(
        5.0,
        ge=-20.0,
        le=20.0,
        description="Change of the energised winding's turns [%]; default +5 (common practice "
        "off-circuit taps of +-2 x 2.5 %)",
    )


class CoreMaterialIn(Model):
    """Another core material, everything else the same."""

    kind: Literal["core_material"]
    material: Literal["grain_oriented", "amorphous", "custom"] | None = Field(
        None, description="Default: the other class than the unit's"
    )
    nominal_flux_density_t: float | None = Field(None, ge=0.2, le=2.5, description="B_N [T]")
    saturation_flux_density_t: float | None = Field(None, ge=0.2, le=3.0, description="B_S [T]")


class RatingIn(Model):
    """Another rating with the same per-unit data (oversizing or right-sizing)."""

    kind: Literal["rating"]
    rating_kva: float | None = Field(
        None,
        ge=0.1,
        le=2_000_000.0,
        description="[kVA]; default the next standard rating up (IEEE C57.12.00 list, from memory)",
    )


class OtherWindingIn(Model):
    """The unit energised from its other winding."""

    kind: Literal["other_winding"]
    voltage_kv: float = Field(ge=0.01, le=1000.0, description="Its rated line voltage [kV]")
    connection: Literal["wye_grounded", "wye", "delta"] = Field(description="Its connection")
    position: Literal["inner", "outer"] | None = Field(
        None, description="Its position on the leg; default the other one"
    )
    source: SourceIn | None = Field(None, description="Supply at its terminals; default ideal")


OptionIn = Annotated[
    ControlledClosingIn
    | PreInsertionResistorIn
    | DemagnetizeIn
    | PreMagnetizeIn
    | RampIn
    | TapIn
    | CoreMaterialIn
    | RatingIn
    | OtherWindingIn,
    Field(discriminator="kind"),
]


class DeviceOptions(Model):
    """How the devices are judged (as in /v1/clearance)."""

    duration_s: float = Field(2.0, ge=0.1, le=5.0, description="Inrush record judged [s]")
    frequent_faults: bool = Field(False, description="Use the frequent-fault damage curve")
    insulation: Literal["liquid", "dry"] = Field("liquid", description="Liquid or dry type")
    opening_time_s: float | None = Field(
        None, ge=0.0, le=1.0, description="Breaker opening time added to relay curves [s]"
    )
    damage_current_factor: float | None = Field(
        None, gt=0.1, le=1.0, description="Damage-curve current multiplier"
    )


class MitigationRequest(SuppliedStudy):
    """Mitigations of one unit's energisation inrush, side by side."""

    options: list[OptionIn] | None = Field(
        None,
        min_length=1,
        max_length=16,
        description="The mitigations to weigh; default every one that needs no further data "
        "(all kinds except other_winding, with their defaults)",
    )
    target_peak_x_rated: float | None = Field(
        None,
        gt=0.0,
        le=100.0,
        description=x_rated("Largest acceptable design-basis first peak"),
    )
    dip_duration_s: float = Field(5.0, ge=0.5, le=30.0, description="Simulated dip [s]")
    device_options: DeviceOptions = Field(default_factory=DeviceOptions)

    SCHEMA_RULES: ClassVar[Rules] = (given("transformer"),)

    @model_validator(mode="after")
    def _nameplate(self) -> MitigationRequest:
        if self.transformer is None:
            raise ValueError("mitigation needs transformer (nameplate mode)")
        return self


class OptionDeviceOut(Model):
    """One device against this option's inrush."""

    name: str
    rides_through: bool
    ride_through_margin: float | None = Field(
        description="> 1 rides through; null: no finite margin (never near operating)"
    )
    protects: bool | None = Field(description="Clears through-faults within the damage limit")
    protection_margin: float | None = Field(description="> 1 protects")


class OptionDipOut(Model):
    """The generator's dip with this option."""

    limit: str
    dip_percent: float
    recovery_time_s: float | None = Field(description="null: not within the simulated time")
    passed: bool | None
    inrush_peak_a: float = Field(description="First peak with the generator's dynamics [A]")


class OptionOut(Model):
    """One option (or the baseline) judged at its design-basis event."""

    rank: int | None = Field(description="1 is best; null for the baseline")
    kind: str
    label: str
    evaluated: bool = Field(description="False when the option does not apply (see notes)")
    passes: bool = Field(description="Every check made of it passed")
    peak_a: float | None = Field(description="Design-basis first peak [A]")
    peak_x_rated: float | None = Field(description=x_rated("Design-basis first peak"))
    peak_reduction_percent: float | None = Field(description="Against the baseline [%]")
    peak_line: str | None
    meets_target: bool | None
    worst_over: str = Field(description="What the peak is the worst of")
    closing_angle_deg: float | None = Field(description="Of the design-basis event [deg]")
    pole_delay_ms: list[float]
    residual_flux_pu: list[float]
    equivalent_rms_100ms_a: float | None = Field(description="Largest line I_eq(0.1 s) [A]")
    equivalent_rms_100ms_x_rated: float | None = Field(
        description=x_rated("Largest line I_eq(0.1 s)", "rms")
    )
    devices: list[OptionDeviceOut] | None
    dip: OptionDipOut | None
    parameters: list[Assumption] = Field(description="What defines the option, with provenance")
    requires: list[str] = Field(description="What the option needs in practice")
    notes: list[str]


class SweepOut(Model):
    """Worst first peak of the baseline with its residual flux scaled."""

    scale: float
    residual_flux_pu: list[float]
    peak_a: float
    peak_x_rated: float = Field(description=x_rated("Worst first peak"))


class MitigationResponse(Model):
    """The baseline and the options, ranked."""

    rated_current_a: float
    target_peak_a: float | None
    ranking: str = Field(description="How the options are ordered")
    baseline: OptionOut
    options: list[OptionOut]
    residual_sweep: list[SweepOut]
    assumptions: list[Assumption]
    warnings: list[WarningItem]
    method: Method
    caution: str = CAUTION
