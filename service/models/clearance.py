"""Request and response models of the clearance operation (devices vs inrush vs damage)."""

from __future__ import annotations

import re
from typing import Annotated, ClassVar, Literal

from pydantic import Field, field_validator, model_validator

from service.models.common import (
    CAUTION,
    Assumption,
    Method,
    Model,
    Rules,
    Study,
    WarningItem,
    given,
    x_rated,
)
from service.settings import default_limit

Name = Annotated[str, Field(min_length=1, max_length=40, pattern=r"^[A-Za-z0-9 ._/()+-]+$")]
RelayCurve = Literal[
    "moderately_inverse",
    "very_inverse",
    "extremely_inverse",
    "standard_inverse",
    "long_time_inverse",
]
_IEEE = {"moderately_inverse", "very_inverse", "extremely_inverse"}
_IEC = {"standard_inverse", "very_inverse", "extremely_inverse", "long_time_inverse"}


class CurvePoint(Model):
    """One point of a tabulated time-current curve."""

    current_a: float = Field(gt=0.001, le=1e7, description="rms current [A]")
    time_s: float = Field(gt=1e-5, le=1e6, description="time [s]")


class RelayIn(Model):
    """Inverse-time overcurrent relay (IEEE C37.112 or IEC 60255-151), optional instantaneous."""

    kind: Literal["relay"]
    name: Name
    standard: Literal["ieee_c37_112", "iec_60255_151"]
    curve: RelayCurve = Field(description="Curve name of the chosen standard")
    pickup_a: float = Field(gt=0.01, le=1e6, description="Pickup, primary amperes [A]")
    time_dial: float = Field(gt=0.005, le=20.0, description="Time dial (IEEE) or TMS (IEC)")
    instantaneous_pickup_a: float | None = Field(None, gt=0.01, le=1e7, description="[A]")
    reset: Literal["curve", "hold", "instantaneous"] = Field(
        "curve", description="Reset below pickup: the standard's disk emulation, hold, or none"
    )

    SCHEMA_RULES: ClassVar[Rules] = (
        {
            "anyOf": [
                {
                    "properties": {
                        "standard": {"const": "ieee_c37_112"},
                        "curve": {"enum": sorted(_IEEE)},
                    }
                },
                {
                    "properties": {
                        "standard": {"const": "iec_60255_151"},
                        "curve": {"enum": sorted(_IEC)},
                    }
                },
            ]
        },
    )

    @model_validator(mode="after")
    def _curve_of_standard(self) -> RelayIn:
        names = _IEEE if self.standard == "ieee_c37_112" else _IEC
        if self.curve not in names:
            raise ValueError(f"curve {self.curve} is not a {self.standard} curve: {sorted(names)}")
        return self


class FuseIn(Model):
    """Fuse given by its published curves (tabulated)."""

    kind: Literal["fuse"]
    name: Name
    minimum_melt: list[CurvePoint] = Field(
        min_length=2, max_length=100, description="Minimum-melting curve, current increasing"
    )
    total_clearing: list[CurvePoint] | None = Field(
        None, min_length=2, max_length=100, description="Total-clearing curve"
    )
    minimum_melting_i2t_a2s: float | None = Field(
        None, gt=0.0, le=1e12, description="Melting I2t of a current-limiting fuse [A2s]"
    )
    melt_current_factor: float | None = Field(
        None,
        ge=0.5,
        le=1.0,
        description="Derating of the melt curve's current for preload and "
        "ageing; default 0.8 (common practice range 0.75-0.9)",
    )


class BreakerIn(Model):
    """Low-voltage breaker trip unit described by its settings."""

    kind: Literal["breaker"]
    name: Name
    long_time_pickup_a: float = Field(gt=0.01, le=1e6, description="[A]")
    long_time_delay_s: float = Field(gt=0.01, le=1000.0, description="Time at 6 x pickup [s]")
    short_time_pickup_a: float | None = Field(None, gt=0.01, le=1e7, description="[A]")
    short_time_delay_s: float = Field(0.0, ge=0.0, le=2.0, description="[s]")
    instantaneous_pickup_a: float | None = Field(None, gt=0.01, le=1e7, description="[A]")
    pickup_tolerance: float = Field(0.10, ge=0.0, le=0.5, description="+/- fraction [-]")
    instantaneous_tolerance: float = Field(0.10, ge=0.0, le=0.5, description="+/- [-]")
    instantaneous_sensing: Literal["peak", "half_cycle_rms", "one_cycle_rms"] | None = Field(
        None,
        description="What the instantaneous element senses: the current's peak, compared with "
        "peak_factor x the rms setting, or the rms over a sliding half or one cycle, compared "
        "with the setting. Default peak: electronic trip units detect the peak and magnetic "
        "elements respond to the instantaneous (asymmetrical) current (common practice)",
    )
    peak_factor: float | None = Field(
        None,
        ge=1.0,
        le=3.0,
        description="Peak-sensing only: the peak that picks up as a multiple of the rms "
        "setting; default sqrt(2), the crest of a sine at the setting (common practice) [-]",
    )


class DifferentialIn(Model):
    """Transformer differential element of the unit being energised (its far side unloaded).

    Currents in per unit of the relay's tap on the energised side. Its filter is a one-cycle
    discrete Fourier estimate of the fundamental and harmonics over a window sliding one sample
    at a time (the usual phasor filter of numerical relays; common practice).
    """

    kind: Literal["differential"]
    name: Name
    vector_group: str = Field(
        "Dyn1",
        pattern=r"^(YN|Y|D)(yn|y|d)(1[01]|[0-9])$",
        max_length=6,
        description="The unit's vector group, IEC 60076-1 notation: high-side letter, "
        "low-side letter, clock number (the low side lags by clock x 30 deg), e.g. Dyn1, "
        "Dyn11, YNd1, Yy0",
    )
    energized_side: Literal["high", "low"] = Field(
        "high", description="Which side of vector_group the unit is switched on from"
    )
    reference_side: Literal["high", "low"] = Field(
        "high",
        description="The side whose currents the relay keeps in phase (zero sequence removed "
        "only); the other side's currents are turned by the clock angle (zero sequence removed)",
    )
    ct_primary_a: float | None = Field(
        None, gt=0.1, le=1e6, description="Energised side's CT primary rating [A]"
    )
    ct_secondary_a: float = Field(5.0, gt=0.01, le=10.0, description="CT secondary rating [A]")
    tap_a: float | None = Field(
        None,
        gt=0.01,
        le=100.0,
        description="Relay tap on the energised side, secondary amperes [A]; with "
        "ct_primary_a, 1 pu = tap_a x ct_primary_a / ct_secondary_a primary amperes. Without "
        "both, 1 pu is the energised side's rated line current",
    )
    minimum_operate_pu: float = Field(
        0.3, gt=0.0, le=5.0, description="Minimum operate current [pu of tap]; default 0.3"
    )
    slope_1_percent: float = Field(25.0, ge=0.0, le=100.0, description="Slope 1 [%]")
    slope_2_percent: float = Field(50.0, ge=0.0, le=200.0, description="Slope 2 [%]")
    slope_1_from_pu: float = Field(
        0.0, ge=0.0, le=5.0, description="Restraint where slope 1 crosses zero [pu of tap]"
    )
    breakpoint_pu: float = Field(
        3.0, gt=0.0, le=50.0, description="Restraint where slope 2 takes over [pu of tap]"
    )
    second_harmonic_percent: float = Field(
        15.0, gt=0.0, le=100.0, description="Second-harmonic blocking level [% of fundamental]"
    )
    fifth_harmonic_percent: float | None = Field(
        None, gt=0.0, le=100.0, description="Fifth-harmonic blocking level; null: off [%]"
    )
    harmonic_logic: Literal["own_phase", "any_phase", "summed_phases"] = Field(
        "own_phase",
        description="own_phase: each phase blocked by its own ratio (default; operates "
        "soonest, so conservative for ride-through); any_phase: one phase above the level "
        "blocks all three (cross-blocking); summed_phases: the three phases' harmonic "
        "magnitudes summed over the phase's own fundamental. The answer gives the verdict "
        "under all three",
    )
    restraint: Literal["average", "maximum"] = Field(
        "average",
        description="Restraint quantity: average of the two sides' fundamental magnitudes "
        "(far side unloaded: I_op/2) or the larger of them (I_op)",
    )
    unrestrained_pu: float | None = Field(
        None, gt=1.0, le=100.0, description="Unrestrained element; null: off [pu of tap]"
    )

    @field_validator("vector_group")
    @classmethod
    def _clock_of_connections(cls, value: str) -> str:
        m = re.match(r"^(YN|Y|D)(yn|y|d)(\d+)$", value)
        if m is not None and (int(m.group(3)) % 2 == 1) == (m.group(1)[0] == m.group(2)[0].upper()):
            raise ValueError(f"{value}: the clock number is even for Yy/Dd, odd for Yd/Dy")
        return value

    @model_validator(mode="after")
    def _ct_and_tap(self) -> DifferentialIn:
        if (self.ct_primary_a is None) != (self.tap_a is None):
            raise ValueError("give ct_primary_a and tap_a together, or neither")
        return self


Device = Annotated[RelayIn | FuseIn | BreakerIn | DifferentialIn, Field(discriminator="kind")]
#: Devices with a time-current curve: what the statistics and mitigation operations judge on
#: their many events (a differential is judged on one simulated record, in clearance only).
CurvedDevice = Annotated[RelayIn | FuseIn | BreakerIn, Field(discriminator="kind")]


class ClearanceOptions(Model):
    """How the inrush and the damage limit are taken."""

    closing: Literal["worst", "given"] = Field(
        "worst",
        description="Evaluate at the worst closing angle for the given residual flux, or at "
        "switching.closing_angle_deg",
    )
    duration_s: float = Field(
        2.0,
        gt=0.1,
        le=default_limit("max_duration_s"),
        description="Simulated inrush [s]; the maximum is the service's default limit: an "
        "operator may set a lower one (FIRSTCYCLE_MAX_DURATION_S)",
    )
    frequent_faults: bool = Field(False, description="Use the frequent-fault damage curve")
    insulation: Literal["liquid", "dry"] = Field("liquid", description="Liquid or dry type")
    opening_time_s: float | None = Field(
        None,
        ge=0.0,
        le=1.0,
        description="Breaker opening time added to relay curves; default "
        "5 cycles at 60 Hz (common practice)",
    )
    damage_current_factor: float | None = Field(
        None,
        gt=0.1,
        le=1.0,
        description="Damage-curve current multiplier (e.g. 0.58 for a "
        "delta-wye unit and a secondary line-to-ground fault, common practice)",
    )
    coordination_window: bool = Field(True, description="Search each relay's time-dial window")
    overload_by_secondary_device: bool = Field(
        True,
        description="A secondary-side device carries the overload range, so the protection "
        "check starts at damage_check_from_x_rated (default 6 x rated, common practice); false "
        "checks from the damage curve's lowest current (2 x rated)",
    )
    damage_check_from_x_rated: float | None = Field(
        None,
        ge=1.0,
        le=100.0,
        description=x_rated("Where the protection check starts (overrides the default)", "rms"),
    )
    damage_check_from_a: float | None = Field(
        None,
        gt=0.001,
        le=1e7,
        description="Where the protection check starts, in amperes on the energised side [A]; "
        "give this or damage_check_from_x_rated",
    )
    reference_voltage_kv: float | None = Field(
        None,
        ge=0.01,
        le=1000.0,
        description="Figure only: the voltage the TCC's currents are drawn at; currents are "
        "scaled by energised-winding voltage / this. Default: the energised winding's voltage "
        "[kV]",
    )

    @model_validator(mode="after")
    def _one_start(self) -> ClearanceOptions:
        if self.damage_check_from_x_rated is not None and self.damage_check_from_a is not None:
            raise ValueError("give damage_check_from_x_rated or damage_check_from_a, not both")
        return self


class ClearanceRequest(Study):
    """Devices to evaluate against a transformer's inrush and its damage limit."""

    devices: list[Device] = Field(min_length=1, max_length=20)
    options: ClearanceOptions = Field(default_factory=ClearanceOptions)

    SCHEMA_RULES: ClassVar[Rules] = (given("transformer"),)

    @model_validator(mode="after")
    def _nameplate_and_names(self) -> ClearanceRequest:
        if self.transformer is None:
            raise ValueError("clearance needs transformer (nameplate mode) for the damage limit")
        names = [d.name for d in self.devices]
        if len(set(names)) != len(names):
            raise ValueError("device names must be distinct")
        for d in self.devices:
            if d.kind != "differential":
                continue
            if self.transformer.phases != 3:
                raise ValueError(f"{d.name}: a differential needs a three-phase unit")
            g = re.match(r"^(YN|Y|D)(yn|y|d)", d.vector_group)
            if g is None:  # the field's pattern has already matched
                continue
            delta = g.group(1 if d.energized_side == "high" else 2).lower() == "d"
            if delta != (self.transformer.energized_winding.connection == "delta"):
                raise ValueError(
                    f"{d.name}: vector_group {d.vector_group} has the {d.energized_side} side "
                    f"{'delta' if delta else 'wye'}, the energised winding is "
                    f"{self.transformer.energized_winding.connection}"
                )
        return self


class InstantaneousCheckOut(Model):
    """A breaker's instantaneous element against the inrush, like with like (worst line)."""

    sensing: str = Field(description="What the element senses")
    sensed_a: float = Field(description="The sensed value: a peak or a sliding rms [A]")
    compared_a: float = Field(
        description="The same in the setting's rms terms (peak / peak factor for a "
        "peak-sensing unit) [A]; marked on the TCC"
    )
    lower_edge_a: float = Field(description="Instantaneous pickup x (1 - tolerance) [A]")
    time_s: float | None = Field(description="When the sensed value occurs [s]")
    statement: str = Field(description="The comparison in words")


class HarmonicVerdictOut(Model):
    """A differential element under one harmonic logic over the whole record."""

    harmonic_logic: str
    operates: bool
    operate_time_s: float | None = Field(description="End of the first window it operates on [s]")
    operate_cycle: int | None = Field(description="That window's cycle, 1 for the first")
    operate_phase: str | None = Field(description="The phase element that operates first")
    by_unrestrained: bool = Field(description="The unrestrained element operates first")
    margin_pp: float | None = Field(
        description="Smallest (harmonic ratio - blocking level) over the windows where the "
        "percentage element picks up [percentage points]; negative: operates; null: it never "
        "picks up"
    )
    margin_time_s: float | None = Field(description="Where that margin is tightest [s]")
    margin_phase: str | None = Field(description="The phase where it is tightest")


class DifferentialPhaseOut(Model):
    """One phase element's values for the window ending at each cycle's end."""

    phase: str
    operate_pu: list[float] = Field(description="|I_1| of the compensated current [pu of tap]")
    restraint_pu: list[float] = Field(description="Restraint quantity [pu of tap]")
    threshold_pu: list[float] = Field(description="Percentage characteristic [pu of tap]")
    second_harmonic_percent: list[float | None] = Field(
        description="|I_2| / |I_1| of this phase [%]; null where I_1 = 0"
    )
    fifth_harmonic_percent: list[float | None] = Field(description="|I_5| / |I_1| [%]")
    operates: list[bool] = Field(
        description="The chosen logic operates in some window of the cycle"
    )
    min_second_harmonic_percent: float | None = Field(
        description="Smallest second-harmonic ratio over the windows where this phase picks "
        "up [%]; null: it never picks up"
    )


class DifferentialOut(Model):
    """A differential element through the energisation of its own unit."""

    base_current_a: float = Field(description="1 pu of the relay's tap, primary amperes [A]")
    compensation_matrix: list[list[float]] = Field(
        description="Applied to the energised side's line currents (turns by the clock angle "
        "where that side is not the reference; zero sequence removed)"
    )
    filter: str = Field(description="How the relay estimates fundamental and harmonics")
    restraint: str = Field(description="The restraint quantity's definition")
    cycle_end_s: list[float] = Field(description="End of each one-cycle window tabulated [s]")
    phases: list[DifferentialPhaseOut]
    verdict: HarmonicVerdictOut = Field(description="Under the chosen harmonic logic")
    verdict_by_logic: list[HarmonicVerdictOut] = Field(
        description="Under each harmonic logic: own_phase, any_phase, summed_phases"
    )
    statement: str = Field(description="The verdict in words")


class RideThroughOut(Model):
    """Does the device ride through the inrush? (ratio > 1: yes)"""

    trips: bool
    trip_time_s: float | None = Field(description="Earliest operation on the inrush [s]")
    margin_ratio: float | None = Field(
        description="Factor by which its operating times could "
        "shrink before it operates; > 1 rides through"
    )
    margin_time_s: float | None = Field(description="Where it is tightest [s]")
    line: str
    compared_current: str = Field(description="Which inrush curve the tightest check compares")
    time_margin_ratio: float | None
    instantaneous_margin_ratio: float | None
    instantaneous_check: InstantaneousCheckOut | None = Field(
        None, description="Breakers: what the instantaneous element compared"
    )
    differential: DifferentialOut | None = Field(
        None, description="Differentials: per-cycle table and the verdict under each logic"
    )


class ProtectionOut(Model):
    """Does the device clear through-faults before the damage limit? (ratio > 1: yes)"""

    status: Literal["protects", "partial", "does_not_protect"]
    clearing_curve: str
    margin_ratio: float | None = Field(description="min over current of t_damage / t_clear")
    margin_current_a: float | None = Field(description="Where it is tightest [A]")
    unprotected_from_a: float | None
    unprotected_to_a: float | None
    checked_from_a: float | None = Field(None, description="Lowest current checked [A]")
    checked_to_a: float | None = Field(None, description="Highest current checked [A]")


class PointOut(Model):
    """A common-practice inrush point against the device's minimum curve."""

    multiple_x_rated: float = Field(description=x_rated("The point's current", "rms"))
    current_a: float
    time_s: float
    device_time_s: float | None = Field(description="Device minimum time there; null: never")
    ratio: float | None
    above: bool = Field(description="The device curve lies above the point")


class WindowOut(Model):
    """Time-dial window of an inverse-time relay at its pickup."""

    setting_range: list[float]
    lowest_riding_through: float | None
    highest_protecting: float | None
    exists: bool
    statement: str


class DeviceOut(Model):
    """The verdict on one device."""

    name: str
    kind: str
    suitable: bool = Field(description="Rides through and protects")
    margin_ratio: float | None = Field(description="Smaller of the two margins")
    ride_through: RideThroughOut
    protection: ProtectionOut | None
    common_practice_points: list[PointOut]
    coordination_window: WindowOut | None


class DamagePortionOut(Model):
    """A part of the damage curve and whether the protection check covers it."""

    name: str
    from_current_a: float
    to_current_a: float
    checked: bool
    reason: str


class DamageOut(Model):
    """The through-fault damage limit used."""

    category: str
    insulation: str
    frequent: bool
    short_circuit_current_a: float = Field(
        description="I_sc of the category rule, where the curve ends: 1/Z_T (Categories I and "
        "II) or 1/(Z_T + Z_S) (III and IV), IEEE C57.109 (from memory) [A]"
    )
    mechanical_from_current_a: float | None
    fault_current_a: float | None = Field(
        None, description="Largest through-fault current the source allows, 1/(Z_T + Z_S) [A]"
    )
    portions: list[DamagePortionOut] = Field(
        default_factory=list,
        description="Each part of the damage curve, whether the protection check used it, and why",
    )


class ClearanceResponse(Model):
    """Devices against the inrush and the damage limit, ranked."""

    rated_current_a: float
    closing_angle_deg: float
    closing_angle_source: str
    duration_s: float
    first_peak_a: float | None
    devices: list[DeviceOut]
    ranking: list[str] = Field(description="Suitable devices, best margin first")
    damage: DamageOut | None
    assumptions: list[Assumption]
    warnings: list[WarningItem]
    method: Method
    caution: str = CAUTION
