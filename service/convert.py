"""Request models to core inputs (SI units), and core results to response models.

Unit conversions only (kVA to VA, kV to V, MVA to VA, ms to s) and the bookkeeping of
provenance; no physics lives here.
"""

from __future__ import annotations

import contextlib
import math
from collections.abc import Iterator, Sequence
from typing import Literal

import numpy as np

from core.energization import inrush_study
from core.energization.switching_event import (
    RESIDUAL_DEFAULT_SOURCE,
    SwitchingEvent,
    residual_flux_pu_from_wb,
    switching_event,
)
from core.errors import LimitError, ParameterError
from core.protection import device_operation, fuse_breaker_curves
from core.supply.dip_limits import DipLimit, iso_8528_5_class
from core.supply.sources import (
    BusLoad,
    Excitation,
    ExcitationSpec,
    Generator,
    UtilitySource,
)
from core.transformer import circuit_model, magnetizing, plausibility, three_phase_circuit
from core.transformer.circuit_model import EquivalentCircuit
from service.models.clearance import BreakerIn, CurvePoint, DifferentialIn, FuseIn, RelayIn
from service.models.common import (
    Assumption,
    FaultLevelSource,
    ImpedanceSource,
    Method,
    SmoothCurve,
    SourceIn,
    Study,
    TableCurve,
    ThreePhaseWindingIn,
    TransformerNameplate,
    TwoSlopeCurve,
    WarningItem,
)
from service.models.dip import (
    BusLoadIn,
    CustomLimit,
    GeneratorIn,
    PresetExcitation,
    RegulatorIn,
)
from service.settings import Settings

# Provenance of the API's own defaults, recorded when the caller leaves a field out.
DEFAULT_PROVENANCE = {
    "phases": "default: 3 phases",
    "frequency_hz": "default: 60 Hz",
    "no_load_current_percent": (
        "default: 1.0 % (typical of distribution and plant transformers; from memory)"
    ),
    "connection": "default: wye_grounded",
    "material": "default: grain_oriented",
    "curve": "default: two_slope",
    "knee_width_pu": "default: 0.01 pu (modelling choice)",
}


def _provenance(t: TransformerNameplate) -> dict[str, str]:
    unset = {
        n
        for n in ("phases", "frequency_hz", "no_load_current_percent")
        if n not in t.model_fields_set
    }
    if "connection" not in t.energized_winding.model_fields_set:
        unset.add("connection")
    unset |= {
        n
        for n in ("material", "curve", "knee_width_pu")
        if "core" not in t.model_fields_set or n not in t.core.model_fields_set
    }
    return {n: DEFAULT_PROVENANCE[n] for n in unset}


def nameplate_of(t: TransformerNameplate) -> circuit_model.Nameplate:
    """The core nameplate of a request's transformer, SI units, with the defaults' provenance."""
    c = t.core
    oc = c.open_circuit_test or []
    return circuit_model.Nameplate(
        rating_va=t.rating_kva * 1e3,
        phases=t.phases,
        frequency_hz=t.frequency_hz,
        line_voltage_v=t.energized_winding.voltage_kv * 1e3,
        connection=t.energized_winding.connection,
        position=t.energized_winding.position,
        impedance_percent=t.impedance_percent,
        x_over_r=t.x_over_r,
        no_load_current_percent=t.no_load_current_percent,
        material=c.material,
        nominal_flux_density_t=c.nominal_flux_density_t,
        saturation_flux_density_t=c.saturation_flux_density_t,
        geometry=(
            circuit_model.WindingGeometry(
                t.winding_geometry.turns,
                t.winding_geometry.mean_diameter_m,
                t.winding_geometry.height_m,
            )
            if t.winding_geometry is not None
            else None
        ),
        curve=c.curve,
        knee_width_pu=c.knee_width_pu,
        open_circuit_voltage_percent=tuple(p.voltage_percent for p in oc),
        open_circuit_current_percent=tuple(p.current_percent for p in oc),
        provenance=_provenance(t),
    )


def source_of(src: SourceIn | None) -> circuit_model.Source | None:
    """The core source of a request's ``source`` (None when absent: ideal by default)."""
    if isinstance(src, FaultLevelSource):
        return circuit_model.Source("fault_level", src.fault_mva * 1e6, src.x_over_r)
    if isinstance(src, ImpedanceSource):
        return circuit_model.Source(
            "impedance", resistance_ohm=src.resistance_ohm, reactance_ohm=src.reactance_ohm
        )
    if src is not None:
        return circuit_model.Source("ideal")
    return None


def _source_error(exc: ParameterError, t: TransformerNameplate, src: SourceIn) -> ParameterError:
    """A core error about the source, named by the request field and in its unit."""
    need_mva = plausibility.SOURCE_STRENGTH_FACTOR * t.rating_kva / 1e3
    why = (
        f"twice the unit's rating of {t.rating_kva / 1e3:.6g} MVA: a weaker source cannot carry "
        "the unit's rated load at any voltage (it delivers at most half its short-circuit power "
        "into a load); utility supplies are usually tens to thousands of times the rating "
        "(common practice)"
    )
    if isinstance(src, FaultLevelSource):
        return ParameterError(
            "source.fault_mva", src.fault_mva, f"at least {need_mva:.6g} MVA, {why}"
        )
    if isinstance(src, ImpedanceSource):
        v_kv = t.energized_winding.voltage_kv
        z_max = v_kv * v_kv / need_mva
        name = "reactance_ohm" if src.reactance_ohm >= src.resistance_ohm else "resistance_ohm"
        return ParameterError(
            f"source.{name}",
            getattr(src, name),
            f"a source impedance sqrt(resistance_ohm^2 + reactance_ohm^2) of at most "
            f"{z_max:.6g} ohm (a short-circuit power of at least {need_mva:.6g} MVA), {why}",
        )
    return exc


@contextlib.contextmanager
def under(where: str) -> Iterator[None]:
    """Name a core ParameterError raised inside by its request path: ``where.parameter``."""
    try:
        yield
    except ParameterError as exc:
        raise ParameterError(f"{where}.{exc.parameter}", exc.value, exc.allowed) from None


def _circuit(study: Study) -> EquivalentCircuit:
    if study.transformer is not None:
        try:
            return circuit_model.equivalent_circuit(
                nameplate_of(study.transformer), source_of(study.source)
            )
        except ParameterError as exc:
            if exc.parameter == "source.short_circuit_power_va" and study.source is not None:
                raise _source_error(exc, study.transformer, study.source) from None
            raise
    three = getattr(study, "circuit_three_phase", None)
    if three is not None:
        return circuit_three_phase_of(three, "circuit_three_phase")
    assert study.circuit is not None
    ci = study.circuit
    with under("circuit.magnetizing"):
        curve = curve_of(ci.magnetizing)
    with under("circuit"):
        return circuit_model.circuit_from_si(
            ci.voltage_rms_v,
            ci.frequency_hz,
            ci.resistance_ohm,
            ci.inductance_h,
            curve,
            ci.rated_current_a,
        )


def curve_of(m: TwoSlopeCurve | SmoothCurve | TableCurve) -> magnetizing.MagnetizingCurve:
    """The core magnetising curve of a request's ``magnetizing``."""
    if isinstance(m, TwoSlopeCurve):
        return magnetizing.two_slope(
            m.unsaturated_inductance_h, m.knee_flux_wb, m.saturated_inductance_h
        )
    if isinstance(m, SmoothCurve):
        return magnetizing.smooth_knee(
            m.unsaturated_inductance_h, m.knee_flux_wb, m.saturated_inductance_h, m.knee_width_wb
        )
    return magnetizing.from_table(m.flux_wb, m.current_a, m.final_inductance_h)


def circuit_three_phase_of(
    ci: ThreePhaseWindingIn, where: str, frequency_hz: float | None = None
) -> EquivalentCircuit:
    """The core circuit of a three-phase SI circuit; a core error names its field under
    ``where`` (the request path of the circuit). ``frequency_hz`` replaces the circuit's own
    (a network unit takes the bus's); its source fields are used when it has them."""
    with under(f"{where}.magnetizing"):
        curve = curve_of(ci.magnetizing)
    f = frequency_hz if frequency_hz is not None else getattr(ci, "frequency_hz", 60.0)
    with under(where):
        return three_phase_circuit.circuit_three_phase_from_si(
            ci.connection,
            f,
            ci.winding_voltage_v,
            ci.winding_resistance_ohm,
            curve,
            ci.rated_current_a,
            getattr(ci, "source_resistance_ohm", 0.0),
            getattr(ci, "source_inductance_h", 0.0),
        )


#: The source EMFs of the single-unit operations (core.energization.energize), as they are.
EMF_THREE_PHASE = (
    "e_k = sqrt(2)*V_LL/sqrt(3)*sin(omega*t + closing_angle + theta_k), theta = 0, -120, +120 "
    "deg, V_LL the energised winding's rated line voltage; ideal EMFs behind the source "
    "resistance and inductance per phase (wye-equivalent), zero-sequence impedance equal to "
    "the positive-sequence one"
)
EMF_SINGLE_PHASE = (
    "e = sqrt(2)*V*sin(omega*t + closing_angle), V the winding's rated voltage "
    "(circuit mode: voltage_rms_v); an ideal EMF behind the series resistance and inductance"
)
#: The generator-dip operation's supply (core.supply.dip).
EMF_DIP = (
    "pre-event phase-A terminal voltage sqrt(2)*V_0*V_LL/sqrt(3)*sin(omega*t + closing_angle), "
    "B and C at -120 and +120 deg; a generator's EMF "
    "e_k = sqrt(2)*V_r*(E''_q*sin(theta_k) - (dE''_q/dt/omega)*cos(theta_k)), "
    "theta_k = omega*t + beta + (0, -120, +120 deg), behind R_a + jX''_d, with beta and E''_q "
    "at t = 0 from the pre-event steady state; a utility source a constant EMF behind its R + jX"
)


def flux_notes(circuit: EquivalentCircuit, emf: str | None = None) -> list[Assumption]:
    """lambda_N and lambda_knee of the energised winding, and the source EMF convention
    (``emf``; by default that of the single-unit operations for the circuit's phases)."""
    return [
        Assumption(
            name="nominal_flux_wb",
            value=circuit.nominal_flux_wb,
            unit="Wb-turn",
            source="lambda_N: peak flux linkage of one energised winding at rated voltage, "
            "sqrt(2)*V_w/omega",
        ),
        Assumption(
            name="knee_flux_wb",
            value=circuit.knee_flux_wb,
            unit="Wb-turn",
            source="lambda_knee: knee of the energised winding's magnetising curve",
        ),
        Assumption(
            name="source_emf",
            value=emf or (EMF_THREE_PHASE if circuit.phases == 3 else EMF_SINGLE_PHASE),
            unit="-",
            source="model convention",
        ),
    ]


def study_inputs(
    study: Study, emf: str | None = None
) -> tuple[EquivalentCircuit, SwitchingEvent, list[Assumption]]:
    """Circuit, switching event (residual flux [pu], pole delays [s]) and the assumptions
    (``emf``: the source EMF convention stated, when not the single-unit operations')."""
    circuit = _circuit(study)
    m = circuit.phases
    sw = study.switching
    extra: list[Assumption] = []
    res: np.ndarray | None
    if sw.residual_flux_wb is not None:
        res = residual_flux_pu_from_wb(sw.residual_flux_wb, circuit)
        extra.append(
            Assumption(
                name="residual_flux_wb",
                value=list(sw.residual_flux_wb),
                unit="Wb-turn",
                source="given",
            )
        )
        res_source = "from residual_flux_wb"
    elif sw.residual_flux_pu is not None:
        res = np.asarray(sw.residual_flux_pu, dtype=float)
        res_source = "given"
    else:
        res = None  # the core's default
        res_source = RESIDUAL_DEFAULT_SOURCE
    delay = (
        np.asarray(sw.pole_delay_ms, dtype=float) * 1e-3
        if sw.pole_delay_ms is not None
        else np.zeros(m)
    )
    event = switching_event(circuit, sw.closing_angle_deg, res, delay)
    assumptions = assumptions_out(circuit.assumptions)
    assumptions += flux_notes(circuit, emf)
    assumptions += extra
    assumptions.append(
        Assumption(
            name="closing_angle_deg",
            value=sw.closing_angle_deg,
            unit="deg",
            source="given"
            if "closing_angle_deg" in sw.model_fields_set
            else "default: 0 (phase A at a rising voltage zero)",
        )
    )
    assumptions.append(
        Assumption(
            name="residual_flux_pu",
            value=[float(x) for x in event.residual_flux_pu],
            unit="pu of nominal peak flux",
            source=res_source,
        )
    )
    assumptions.append(
        Assumption(
            name="pole_delay_ms",
            value=[float(x) * 1e3 for x in delay],
            unit="ms",
            source="given" if sw.pole_delay_ms else "default 0",
        )
    )
    return circuit, event, assumptions


def check_work(
    settings: Settings,
    lines: int,
    frequency_hz: float,
    duration_s: float,
    samples_per_cycle: int,
    *,
    samples_field: str | None = None,
) -> None:
    """Raise LimitError when a simulation would exceed the configured limits.

    Over the sample limit (lines x samples, a memory bound) the error lists the request's
    fields that would fit: ``options.duration_s`` with its longest value, and
    ``samples_field`` (when the request sets the samples per cycle) with its largest.
    """
    if duration_s > settings.max_duration_s:
        raise LimitError("options.duration_s", duration_s, settings.max_duration_s)
    if samples_per_cycle > settings.max_samples_per_cycle:
        raise LimitError(
            "options.samples_per_cycle", samples_per_cycle, settings.max_samples_per_cycle
        )
    total = lines * (duration_s * frequency_hz * samples_per_cycle + 1)
    if total > settings.max_total_samples:
        per_line = settings.max_total_samples / lines - 1.0
        knobs = []
        longest = math.floor(per_line / (frequency_hz * samples_per_cycle) * 1e4) / 1e4
        if longest > 0.0:
            knobs.append(("options.duration_s", f"<= {longest:g} (now {duration_s:g})"))
        most = math.floor(per_line / (frequency_hz * duration_s))
        if samples_field is not None and most >= 16:
            knobs.append((samples_field, f"<= {most} (now {samples_per_cycle})"))
        raise LimitError(
            f"samples simulated ({lines} lines x samples per line)",
            total,
            settings.max_total_samples,
            knobs=tuple(knobs),
            detail="a memory bound (FIRSTCYCLE_MAX_TOTAL_SAMPLES); reduce one of the fields listed",
        )


def x_rated(value: float, rated: float) -> float | None:
    """value/rated, or None when no rating is known."""
    return value / rated if math.isfinite(rated) and rated > 0 else None


def maybe(value: float) -> float | None:
    """None for nan/inf (JSON has neither)."""
    return float(value) if math.isfinite(value) else None


def floats(values: Sequence[float] | np.ndarray) -> list[float]:
    """Plain floats for JSON."""
    return [float(v) for v in values]


def warnings_out(items: Sequence[tuple[str, str]]) -> list[WarningItem]:
    """Core (code, message) pairs to response items, each once, in order."""
    return [WarningItem(code=c, message=msg) for c, msg in dict.fromkeys(items)]


def method_out(analytic: bool, simulated: bool, approximations: Sequence[str]) -> Method:
    """The method block of a response."""
    return Method(
        analytic=inrush_study.ANALYTIC_METHOD if analytic else None,
        simulated=inrush_study.SIMULATED_METHOD if simulated else None,
        approximations=list(approximations),
    )


def assumptions_out(items: Sequence[circuit_model.Assumption]) -> list[Assumption]:
    """Core assumptions to response items."""
    return [
        Assumption(
            name=a.name,
            value=list(a.value) if isinstance(a.value, tuple) else a.value,
            unit=a.unit,
            source=a.source,
        )
        for a in items
    ]


def generator_of(sup: GeneratorIn, line_voltage_v: float, frequency_hz: float) -> Generator:
    """The core generator of a request's supply, at the energised winding's voltage."""
    prov = {}
    if sup.armature_resistance_pu is None:
        prov["armature_resistance_pu"] = "default 0.01 pu (typical 0.005-0.03, from memory)"
    return Generator(
        rating_va=sup.rating_kva * 1e3,
        line_voltage_v=line_voltage_v,
        frequency_hz=frequency_hz,
        x_d2_pu=sup.x_d2_pu,
        x_d1_pu=sup.x_d1_pu,
        x_d_pu=sup.x_d_pu,
        t_d2_s=sup.t_d2_s,
        t_d1_s=sup.t_d1_s,
        t_d1o_s=sup.t_d1o_s,
        armature_resistance_pu=(
            sup.armature_resistance_pu if sup.armature_resistance_pu is not None else 0.01
        ),
        provenance=prov,
    )


def utility_of(src: SourceIn | None, line_voltage_v: float, frequency_hz: float) -> UtilitySource:
    """The core utility supply of a generator-dip request's ``source`` (fault level or impedance).

    An impedance R + jX per phase is the fault level V_LL^2/abs(Z) with X/R = X/R, the same
    circuit (common practice); the request model has already refused an ideal source and an
    impedance without both R and X.
    """
    if isinstance(src, FaultLevelSource):
        return UtilitySource(src.fault_mva * 1e6, src.x_over_r, line_voltage_v, frequency_hz)
    if isinstance(src, ImpedanceSource):
        z = math.hypot(src.resistance_ohm, src.reactance_ohm)
        how = "from source kind impedance: "
        return UtilitySource(
            line_voltage_v**2 / z,
            src.reactance_ohm / src.resistance_ohm,
            line_voltage_v,
            frequency_hz,
            provenance={
                "fault_level_va": how + "V_LL^2/|R + jX|",
                "x_over_r": how + "reactance_ohm/resistance_ohm",
            },
        )
    raise ParameterError("source", src, "a fault_level or impedance source")


def excitation_of(exc: RegulatorIn | PresetExcitation) -> ExcitationSpec:
    """The core excitation model of a request's ``excitation``."""
    if isinstance(exc, RegulatorIn):
        return Excitation(
            exc.gain_pu,
            exc.time_constant_s,
            exc.ceiling_pu,
            exc.floor_pu,
            exc.sensing_time_constant_s,
        )
    return exc.kind


def dip_limit_of(limit: Literal["G1", "G2", "G3"] | CustomLimit) -> DipLimit:
    """The core dip limit of a request's ``dip_limit`` (an ISO 8528-5 class or the caller's)."""
    if isinstance(limit, CustomLimit):
        return DipLimit(limit.name, limit.max_dip_percent, limit.max_recovery_s, "given")
    return iso_8528_5_class(limit)


def bus_load_of(load: BusLoadIn | None) -> BusLoad | None:
    """The core bus load of a request's ``bus_load`` (kW, kvar to W, var)."""
    return BusLoad(load.active_kw * 1e3, load.reactive_kvar * 1e3) if load is not None else None


def _table(points: list[CurvePoint], path: str, device: str) -> fuse_breaker_curves.TabulatedCurve:
    """A tabulated curve; a bad table is a ParameterError naming its request path and device."""
    current = np.array([p.current_a for p in points])
    time = np.array([p.time_s for p in points])
    try:
        return fuse_breaker_curves.TabulatedCurve(current, time)
    except ParameterError as err:
        if err.parameter == "current":
            what = "currents must increase from each point to the next"
        else:
            what = "times must not rise as the current increases"
        pairs = ", ".join(f"({c:g} A, {t:g} s)" for c, t in zip(current, time, strict=True))
        raise ParameterError(
            path, pairs, f"a curve of device '{device}' where {what} ({err.allowed})"
        ) from None


def device_of(
    d: RelayIn | FuseIn | BreakerIn | DifferentialIn, index: int = 0
) -> device_operation.Device:
    """The core protective device of a request's device (``index``: its place in ``devices``)."""
    if isinstance(d, DifferentialIn):
        base = None
        if d.ct_primary_a is not None and d.tap_a is not None:
            base = d.tap_a * d.ct_primary_a / d.ct_secondary_a
        return device_operation.Differential(
            d.name, d.vector_group, d.energized_side, d.reference_side, base,
            d.minimum_operate_pu, d.slope_1_percent, d.slope_2_percent, d.slope_1_from_pu,
            d.breakpoint_pu, d.second_harmonic_percent, d.fifth_harmonic_percent,
            d.harmonic_logic, d.restraint, d.unrestrained_pu,
        )  # fmt: skip
    if isinstance(d, RelayIn):
        return device_operation.Relay(
            d.name, d.standard, d.curve, d.pickup_a, d.time_dial, d.instantaneous_pickup_a,
            d.reset,
        )  # fmt: skip
    if isinstance(d, FuseIn):
        tc = d.total_clearing
        return device_operation.Fuse(
            d.name,
            _table(d.minimum_melt, f"devices.{index}.minimum_melt", d.name),
            _table(tc, f"devices.{index}.total_clearing", d.name) if tc else None,
            d.minimum_melting_i2t_a2s,
            d.melt_current_factor,
        )
    return device_operation.Breaker(
        d.name,
        fuse_breaker_curves.LowVoltageBreaker(
            long_time_pickup=d.long_time_pickup_a,
            long_time_delay=d.long_time_delay_s,
            short_time_pickup=d.short_time_pickup_a,
            short_time_delay=d.short_time_delay_s,
            instantaneous_pickup=d.instantaneous_pickup_a,
            pickup_tolerance=d.pickup_tolerance,
            instantaneous_tolerance=d.instantaneous_tolerance,
        ),
        peak_factor=d.peak_factor,
        sensing=d.instantaneous_sensing,
    )
