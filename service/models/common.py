"""Request parts and response parts shared by the compute operations.

Field names carry their unit (``rating_kva``, ``voltage_kv``, ``time_s``); per-unit values end in
``_pu`` and say their base; multiples of rated current end in ``_x_rated``. Every float is
bounded, so NaN, infinities and values outside the model's range are rejected at the edge.
"""

from __future__ import annotations

from typing import Annotated, Any, ClassVar, Literal

from pydantic import BaseModel, ConfigDict, Field, model_validator

#: The definition every ``_x_rated`` field states: what "x rated" divides by.
RATED_BASE = (
    "the rated rms line current I_r = S/(sqrt(3)*V_LL) of the energised winding (S/V for one phase)"
)
#: Description of a peak given as a multiple of rated current.
PEAK_X_RATED = (
    f"Instantaneous peak [A] divided by {RATED_BASE}; a steady rated current peaks at 1.414 "
    "x rated [-]"
)
#: Description of an rms value given as a multiple of rated current.
RMS_X_RATED = f"Rms current [A] divided by {RATED_BASE} [-]"


def x_rated(what: str, kind: str = "peak") -> str:
    """A field description that defines x rated: ``what`` followed by the definition."""
    return f"{what}: {PEAK_X_RATED if kind == 'peak' else RMS_X_RATED}"


CAUTION = (
    "Engineering estimate for design studies. Verify against the equipment manufacturers' data "
    "(transformer test reports, device time-current curves); local codes and licensed "
    "engineering practice govern every protection and equipment decision."
)


Rules = tuple[dict[str, Any], ...]


def _schema_rules(schema: dict[str, Any], model: type[Any]) -> None:
    """Publish a model's cross-field rules (its own and its bases') as ``allOf`` of the schema.

    The rules sit under ``allOf`` so that the object keeps its properties and ``required`` list
    where client generators (and the compatibility gate) look for them.
    A rule that constrains properties at its own top level (``given("transformer")``) is
    published as the one member of an ``anyOf``: the same constraint, but a client generator that
    merges the properties of ``allOf`` members into the model (openapi-python-client 0.29 does)
    would otherwise try to merge the rule's bare ``{"type": "object"}`` with the field's own
    schema, fail, and leave the whole request model (and its operation) out of the client.
    """
    rules = [r for cls in reversed(model.__mro__) for r in cls.__dict__.get("SCHEMA_RULES", ())]
    if rules:
        schema["allOf"] = [{"anyOf": [r]} if "properties" in r else r for r in rules]


def given(name: str, json_type: str = "object") -> dict[str, Any]:
    """JSON Schema: the field ``name`` is present with a value of this type (not null)."""
    return {"required": [name], "properties": {name: {"type": json_type}}}


def is_not(rule: dict[str, Any]) -> dict[str, Any]:
    """JSON Schema: ``rule`` does not hold."""
    return {"not": rule}


def implies(condition: dict[str, Any], consequence: dict[str, Any]) -> dict[str, Any]:
    """JSON Schema: when ``condition`` holds, so does ``consequence`` (not A, or B)."""
    return {"anyOf": [is_not(condition), consequence]}


def both(a: dict[str, Any], b: dict[str, Any]) -> dict[str, Any]:
    """JSON Schema: both rules hold."""
    return {"allOf": [a, b]}


class Model(BaseModel):
    """Base of every request and response model: unknown fields are rejected, no NaN/inf.

    ``SCHEMA_RULES`` holds the cross-field rules a model's validators enforce, written in JSON
    Schema so that client generators and contract fuzzers see them too.
    """

    model_config = ConfigDict(
        extra="forbid", allow_inf_nan=False, strict=True, json_schema_extra=_schema_rules
    )
    SCHEMA_RULES: ClassVar[Rules] = ()


# ---------------------------------------------------------------------------- transformer input


class EnergizedWinding(Model):
    """The winding the unit is switched on from."""

    voltage_kv: float = Field(
        ge=0.01,
        le=1000.0,
        description="Rated line-to-line rms voltage (winding voltage for a single-phase unit) [kV]",
    )
    connection: Literal["wye_grounded", "wye", "delta"] = Field(
        "wye_grounded", description="Winding connection (ignored for a single-phase unit)"
    )
    position: Literal["inner", "outer"] = Field(
        description="Where the winding sits on the leg (required: it sets the air-core "
        "inductance). The inner winding, usually the low-voltage one, has the smaller air-core "
        "inductance and draws the larger inrush: energising a step-down unit from its "
        "low-voltage side is the inner case",
    )


class OpenCircuitPoint(Model):
    """One open-circuit (excitation) test point."""

    voltage_percent: float = Field(gt=1.0, le=200.0, description="Test voltage [% of rated]")
    current_percent: float = Field(
        gt=0.0001, le=1000.0, description="Measured rms no-load current [% of rated current]"
    )


class CoreSpec(Model):
    """Core material and magnetising characteristic."""

    material: Literal["grain_oriented", "amorphous", "custom"] = Field(
        "grain_oriented", description="Core material class; custom needs both flux densities"
    )
    nominal_flux_density_t: float | None = Field(
        None, ge=0.2, le=2.5, description="Design peak flux density B_N at rated voltage [T]"
    )
    saturation_flux_density_t: float | None = Field(
        None, ge=0.2, le=3.0, description="Saturation flux density B_S, the knee [T]"
    )
    curve: Literal["two_slope", "smooth"] = Field(
        "two_slope", description="Shape of the magnetising curve"
    )
    knee_width_pu: float = Field(
        0.01,
        gt=0.0005,
        le=0.5,
        description="Knee rounding of the smooth curve [pu of B_N]; the unsaturated slope is "
        "then set so the curve still passes through the rated no-load point, which limits how "
        "wide the knee can be",
    )
    open_circuit_test: list[OpenCircuitPoint] | None = Field(
        None,
        min_length=1,
        max_length=50,
        description="Open-circuit test points, increasing; when given they define the "
        "magnetising curve (converted to peak values), continued by the air-core slope",
    )


class WindingGeometry(Model):
    """Geometry of the energised winding for the long-solenoid air-core inductance."""

    turns: float = Field(ge=1.0, le=100_000.0, description="Number of turns [-]")
    mean_diameter_m: float = Field(ge=0.01, le=10.0, description="Mean winding diameter [m]")
    height_m: float = Field(ge=0.01, le=10.0, description="Axial winding height [m]")


class TransformerNameplate(Model):
    """Nameplate and design data; the equivalent circuit is derived with stated defaults."""

    rating_kva: float = Field(ge=0.1, le=2_000_000.0, description="Rated power [kVA]")
    phases: Literal[1, 3] = Field(3, description="Number of phases")
    frequency_hz: float = Field(60.0, ge=10.0, le=400.0, description="Rated frequency [Hz]")
    energized_winding: EnergizedWinding
    impedance_percent: float = Field(
        ge=0.5, le=30.0, description="Short-circuit impedance [% on rating]"
    )
    x_over_r: float = Field(ge=0.1, le=100.0, description="Short-circuit X/R ratio [-]")
    no_load_current_percent: float = Field(
        1.0, ge=0.01, le=20.0, description="No-load current at rated voltage [% of rated]"
    )
    core: CoreSpec = Field(default_factory=CoreSpec)
    winding_geometry: WindingGeometry | None = Field(
        None,
        description="Winding geometry; when absent the air-core inductance is a default "
        "multiple of the short-circuit reactance by winding position",
    )


# ------------------------------------------------------------------------------- circuit input


class TwoSlopeCurve(Model):
    """Two-slope flux-linkage/current curve in SI units."""

    kind: Literal["two_slope"]
    unsaturated_inductance_h: float = Field(ge=1e-6, le=1e6, description="Slope below the knee [H]")
    knee_flux_wb: float = Field(ge=1e-6, le=1e5, description="Knee flux linkage [Wb-turn]")
    saturated_inductance_h: float = Field(
        ge=1e-9, le=10.0, description="Slope above the knee, the air-core inductance [H]"
    )


class SmoothCurve(Model):
    """Two-slope curve with a hyperbolic knee, SI units."""

    kind: Literal["smooth"]
    unsaturated_inductance_h: float = Field(ge=1e-6, le=1e6, description="Slope below the knee [H]")
    knee_flux_wb: float = Field(ge=1e-6, le=1e5, description="Asymptotes' intersection [Wb-turn]")
    saturated_inductance_h: float = Field(
        ge=1e-9, le=10.0, description="Slope far above the knee [H]"
    )
    knee_width_wb: float = Field(ge=1e-9, le=1e5, description="Knee rounding half-width [Wb-turn]")


class TableCurve(Model):
    """Peak flux-linkage/current table, odd-symmetric, through the origin."""

    kind: Literal["table"]
    flux_wb: list[Annotated[float, Field(gt=0.0, le=1e5)]] = Field(
        min_length=1, max_length=200, description="Flux linkages, strictly increasing [Wb-turn]"
    )
    current_a: list[Annotated[float, Field(gt=0.0, le=1e9)]] = Field(
        min_length=1,
        max_length=200,
        description="Currents at those fluxes, strictly increasing [A]",
    )
    final_inductance_h: float = Field(
        ge=1e-9, le=10.0, description="Slope beyond the last point [H]"
    )


CurveIn = Annotated[TwoSlopeCurve | SmoothCurve | TableCurve, Field(discriminator="kind")]


class EquivalentCircuitIn(Model):
    """Single-phase energisation circuit in SI units, for cross-checks with circuit simulators."""

    voltage_rms_v: float = Field(ge=1.0, le=1e6, description="Source rms voltage [V]")
    frequency_hz: float = Field(60.0, ge=10.0, le=400.0, description="Source frequency [Hz]")
    resistance_ohm: float = Field(ge=0.0, le=1e4, description="Series resistance [ohm]")
    inductance_h: float = Field(
        ge=0.0, le=10.0, description="Series inductance outside the magnetising branch [H]"
    )
    magnetizing: CurveIn
    rated_current_a: float | None = Field(
        None, ge=1e-3, le=1e7, description="Rated rms current, for the x-rated values [A]"
    )


class ThreePhaseWindingIn(Model):
    """Three identical windings in SI units: resistance, magnetising curve, connection."""

    connection: Literal["wye_grounded", "wye", "delta"] = Field(
        description="How the three windings are connected: grounded wye, wye with a floating "
        "neutral, or delta"
    )
    winding_voltage_v: float = Field(
        ge=1.0,
        le=1e6,
        description="Rated rms voltage across one winding (line-to-neutral for a wye, "
        "line-to-line for a delta); it sets the nominal peak flux linkage "
        "lambda_N = sqrt(2)*V/omega and the line voltage (sqrt(3) x this for a wye) [V]",
    )
    winding_resistance_ohm: float = Field(
        ge=0.0, le=1e4, description="Resistance of one winding [ohm]"
    )
    magnetizing: CurveIn = Field(
        description="Flux linkage of one winding [Wb-turn] against the winding's own current "
        "[A] (for a delta the winding current, not the line current)"
    )
    rated_current_a: float | None = Field(
        None,
        ge=1e-3,
        le=1e7,
        description="Rated rms line current (sqrt(3) x the winding's own for a delta), the base "
        "of the x-rated values [A]",
    )


class ThreePhaseCircuitIn(ThreePhaseWindingIn):
    """Three-phase energisation circuit in SI units behind an R-L source, for cross-checks with
    circuit simulators. The source EMFs are at the windings' rated voltage: phase A
    e_a = sqrt(2)*V_LL/sqrt(3)*sin(wt + closing_angle), B and C 120 deg behind and ahead."""

    frequency_hz: float = Field(60.0, ge=10.0, le=400.0, description="Source frequency [Hz]")
    source_resistance_ohm: float = Field(
        0.0, ge=0.0, le=1e4, description="Source resistance per phase, wye-equivalent [ohm]"
    )
    source_inductance_h: float = Field(
        0.0, ge=0.0, le=10.0, description="Source inductance per phase, wye-equivalent [H]"
    )


# -------------------------------------------------------------------------------- source input


class IdealSource(Model):
    """Infinite bus: no source impedance."""

    kind: Literal["ideal"]


class FaultLevelSource(Model):
    """Source given by its short-circuit power at the energised terminals."""

    kind: Literal["fault_level"]
    fault_mva: float = Field(
        ge=0.01,
        le=1e6,
        description="Three-phase fault level (single-phase for a single-phase unit) [MVA]",
    )
    x_over_r: float = Field(ge=0.1, le=100.0, description="Source X/R [-]")


class ImpedanceSource(Model):
    """Source given by its per-phase (wye-equivalent) impedance."""

    kind: Literal["impedance"]
    resistance_ohm: float = Field(ge=0.0, le=1e4, description="Source resistance [ohm]")
    reactance_ohm: float = Field(ge=0.0, le=1e4, description="Source reactance [ohm]")


SourceIn = Annotated[IdealSource | FaultLevelSource | ImpedanceSource, Field(discriminator="kind")]


class Switching(Model):
    """The switching event."""

    closing_angle_deg: float = Field(
        0.0,
        ge=-360.0,
        le=360.0,
        description="Angle of the phase-A source voltage e_a = sqrt(2)*V*sin(wt + angle) at "
        "t = 0, the closing command; 0 is a rising voltage zero [deg]",
    )
    residual_flux_pu: list[Annotated[float, Field(ge=-1.5, le=1.5)]] | None = Field(
        None,
        min_length=1,
        max_length=3,
        description="Residual flux per winding (A, B, C or AB, BC, CA) [pu of nominal peak "
        "flux]; default 0.8 on the first winding, the others sharing -0.4 each",
    )
    residual_flux_wb: list[Annotated[float, Field(ge=-1e5, le=1e5)]] | None = Field(
        None,
        min_length=1,
        max_length=1,
        description="Residual flux linkage, equivalent-circuit mode only [Wb-turn]",
    )
    pole_delay_ms: list[Annotated[float, Field(ge=0.0, le=20.0)]] | None = Field(
        None,
        min_length=1,
        max_length=3,
        description="Closing instant of each pole after t = 0 [ms]; default all 0",
    )

    SCHEMA_RULES: ClassVar[Rules] = (
        is_not(both(given("residual_flux_pu", "array"), given("residual_flux_wb", "array"))),
    )

    @model_validator(mode="after")
    def _one_residual(self) -> Switching:
        if self.residual_flux_pu is not None and self.residual_flux_wb is not None:
            raise ValueError("give residual_flux_pu or residual_flux_wb, not both")
        return self


class Study(Model):
    """What is studied: a transformer from its nameplate, or an SI equivalent circuit."""

    transformer: TransformerNameplate | None = Field(
        None,
        description="Nameplate mode; give exactly one of the modes this operation offers "
        "(transformer, circuit and, where listed, circuit_three_phase)",
    )
    circuit: EquivalentCircuitIn | None = Field(
        None,
        description="Single-phase SI equivalent-circuit mode; give exactly one of the modes "
        "this operation offers (transformer, circuit and, where listed, circuit_three_phase)",
    )
    source: SourceIn | None = Field(
        None, description="Supply at the energised terminals (nameplate mode); default ideal"
    )
    switching: Switching = Field(default_factory=Switching)

    SCHEMA_RULES: ClassVar[Rules] = (
        # circuit_three_phase exists only where a subclass declares it (InrushStudy)
        {"oneOf": [given("transformer"), given("circuit"), given("circuit_three_phase")]},
        is_not(both(given("circuit"), given("source"))),
        is_not(
            both(
                given("transformer"),
                {
                    "required": ["switching"],
                    "properties": {"switching": given("residual_flux_wb", "array")},
                },
            )
        ),
    )

    @model_validator(mode="after")
    def _one_mode(self) -> Study:
        three = getattr(self, "circuit_three_phase", None)
        modes = [m for m in (self.transformer, self.circuit, three) if m is not None]
        if len(modes) != 1:
            raise ValueError(
                "give exactly one of transformer or circuit"
                + (
                    " or circuit_three_phase"
                    if "circuit_three_phase" in type(self).model_fields
                    else ""
                )
            )
        if self.circuit is not None and self.source is not None:
            raise ValueError("source applies to nameplate mode; put it in the circuit instead")
        if three is not None and self.source is not None:
            raise ValueError(
                "source applies to nameplate mode; give circuit_three_phase.source_resistance_ohm "
                "and source_inductance_h instead"
            )
        if self.circuit is None and self.switching.residual_flux_wb is not None:
            raise ValueError(
                "residual_flux_wb is for the single-phase circuit mode; use residual_flux_pu"
            )
        phases = 1 if self.circuit is not None else 3
        if self.transformer is not None:
            phases = self.transformer.phases
        for name in ("residual_flux_pu", "pole_delay_ms"):
            values = getattr(self.switching, name)
            if values is not None and len(values) != phases:
                raise ValueError(f"switching.{name} needs {phases} value(s), one per phase")
        return self


class InrushStudy(Study):
    """A study that also takes a three-phase equivalent circuit in SI units."""

    circuit_three_phase: ThreePhaseCircuitIn | None = Field(
        None,
        description="Three-phase equivalent-circuit mode, SI units (give this, transformer or "
        "circuit); the source is in it",
    )

    SCHEMA_RULES: ClassVar[Rules] = (
        is_not(both(given("circuit_three_phase"), given("source"))),
        is_not(
            both(
                given("circuit_three_phase"),
                {
                    "required": ["switching"],
                    "properties": {"switching": given("residual_flux_wb", "array")},
                },
            )
        ),
    )


# ------------------------------------------------------------------------------ response parts


class Assumption(Model):
    """A parameter actually used, with its provenance."""

    name: str
    value: float | str | list[float]
    unit: str
    source: str = Field(description="'given', or the default and where it comes from")


class WarningItem(Model):
    """Something the caller should know about this result."""

    code: str = Field(description="Stable machine-readable code")
    message: str


class Method(Model):
    """The models used and their references."""

    analytic: str | None = None
    simulated: str | None = None
    approximations: list[str] = Field(default_factory=list)
