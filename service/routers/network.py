"""``/v1/network-energization``: several units on one bus, energised together or beside others."""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Annotated

import numpy as np
from fastapi import APIRouter, Body
from fastapi.responses import Response

from core import cost, waveform
from core.energization.switching_event import RESIDUAL_DEFAULT_SOURCE, switching_event
from core.errors import ParameterError
from core.network import Breaker, BusLoad, NetworkResult, Source, Unit, analysis, simulate_network
from core.network import peaks as network_peaks
from core.protection import coordination, device_operation, differential
from core.protection.inrush_curves import inrush_from_waveform
from core.transformer import circuit_model, plausibility
from core.transformer.circuit_model import EquivalentCircuit
from service import budget, compute, convert, figures
from service.deps import SettingsDep
from service.examples import NETWORK_EXAMPLES
from service.models.clearance import DifferentialOut
from service.models.common import (
    Assumption,
    FaultLevelSource,
    ImpedanceSource,
    Method,
    TransformerNameplate,
)
from service.models.network import (
    RECOVERY_PERCENT,
    SYMPATHETIC_FRACTION,
    VOLTAGE_TOLERANCE,
    BusVoltageOut,
    CurrentOut,
    FeederDeviceOut,
    NetworkRequest,
    NetworkResponse,
    NetworkUnitIn,
    RuleOfThumbOut,
    SympatheticOut,
    UnitOut,
)
from service.problems import PROBLEM_RESPONSES
from service.routers import clearance
from service.settings import Settings

router = APIRouter(
    prefix="/v1/network-energization",
    tags=["network"],
    responses={**PROBLEM_RESPONSES, **compute.BUSY_RESPONSES},
)
NETWORK_METHOD = (
    "three-phase network in the time domain (core.network): ideal source EMFs behind the "
    "source's R-L, a constant-impedance bus load, each unit's energised winding (its "
    "magnetising curve and winding resistance from the nameplate, as for /v1/inrush, or given "
    "as a three-phase SI circuit) behind its own breaker; units in service start in their "
    "phasor steady state; classical Runge-Kutta at a fixed step; feeder devices judged "
    "against the source current as in /v1/clearance"
)
LINES = ("A", "B", "C")
FIRST_PEAK_CYCLES = analysis.FIRST_PEAK_CYCLES
SAMPLES_PER_CYCLE = 128
EMF_CONVENTION = (
    "e_k = sqrt(2)*V_bus/sqrt(3)*sin(omega*t + closing_angle + theta_k), theta = 0, -120, "
    "+120 deg; ideal EMFs behind the source impedance, zero-sequence impedance equal to the "
    "positive-sequence one"
)


def _source(body: NetworkRequest) -> tuple[Source, list[Assumption]]:
    v = body.bus_voltage_kv * 1e3
    f = body.frequency_hz
    src = body.source
    if isinstance(src, FaultLevelSource):
        s = Source.from_fault_level(v, f, src.fault_mva * 1e6, src.x_over_r)
        how = "from source.fault_mva and source.x_over_r: Z = V^2/S, R = Z/sqrt(1 + (X/R)^2)"
    elif isinstance(src, ImpedanceSource):
        s = Source(v, f, src.resistance_ohm, src.reactance_ohm / (2.0 * math.pi * f))
        how = "given (source.reactance_ohm / omega)"
    else:
        s = Source(v, f)
        how = "given: ideal" if src is not None else "default: ideal source"
    return s, [
        Assumption(name="source_emf", value=EMF_CONVENTION, unit="-", source="model convention"),
        Assumption(name="source.resistance_ohm", value=s.resistance_ohm, unit="ohm", source=how),
        Assumption(name="source.inductance_h", value=s.inductance_h, unit="H", source=how),
    ]


def _units(
    body: NetworkRequest,
) -> tuple[list[Unit], list[float], list[Assumption], list[tuple[str, str]]]:
    """The core units, their rated currents, the assumptions and the circuits' warnings."""
    out: list[Unit] = []
    rated: list[float] = []
    notes: list[Assumption] = []
    warns: list[tuple[str, str]] = []
    for k, u in enumerate(body.units):
        t = u.transformer
        # an SI circuit here has no source of its own: the network's feeds it
        left_out = {"source_resistance_ohm", "source_inductance_h"} if t is None else set()
        circuit = _si_unit(body, u, k) if t is None else _nameplate_unit(body, t, k)
        _check_differential(u, k)
        notes += [
            Assumption(name=f"{u.name}.{a.name}", value=a.value, unit=a.unit, source=a.source)
            for a in convert.assumptions_out(circuit.assumptions)
            if a.name not in left_out
        ]
        notes.append(
            Assumption(
                name=f"{u.name}.nominal_flux_wb",
                value=circuit.nominal_flux_wb,
                unit="Wb-turn",
                source="peak flux linkage of a winding at rated voltage",
            )
        )
        notes.append(
            Assumption(
                name=f"{u.name}.knee_flux_wb",
                value=circuit.knee_flux_wb,
                unit="Wb-turn",
                source="knee of the magnetising curve (B_S/B_N x nominal)"
                if t is not None
                else "knee of the given magnetising curve",
            )
        )
        warns += [(c, f"{u.name}: {m}") for c, m in circuit.warnings]
        rated.append(circuit.rated_line_current_a)
        if u.state == "in_service":
            out.append(Unit(circuit, in_service=True))
            notes.append(
                Assumption(
                    name=f"{u.name}.residual_flux_pu",
                    value="steady state",
                    unit="-",
                    source="in service: starts in its steady state, residual flux not used",
                )
            )
            continue
        delay = np.asarray(u.pole_closing_ms or [0.0, 0.0, 0.0], dtype=float) * 1e-3
        if float(delay.max()) > body.options.duration_s:
            raise ParameterError(
                f"units.{k}.pole_closing_ms",
                u.pole_closing_ms,
                f"at most options.duration_s = {body.options.duration_s * 1e3:g} ms",
            )
        res = None if u.residual_flux_pu is None else np.asarray(u.residual_flux_pu, dtype=float)
        event = switching_event(circuit, body.closing_angle_deg, res, delay)
        out.append(
            Unit(
                circuit,
                breaker=Breaker(closing_time_s=np.asarray(event.pole_delay_s, dtype=float)),
                residual_flux_pu=np.asarray(event.residual_flux_pu, dtype=float),
            )
        )
        notes.append(
            Assumption(
                name=f"{u.name}.residual_flux_pu",
                value=[float(x) for x in event.residual_flux_pu],
                unit="pu of nominal peak flux",
                source="given" if res is not None else RESIDUAL_DEFAULT_SOURCE,
            )
        )
        notes.append(
            Assumption(
                name=f"{u.name}.pole_closing_ms",
                value=[float(x) * 1e3 for x in delay],
                unit="ms",
                source="given" if u.pole_closing_ms is not None else "default 0",
            )
        )
    return out, rated, notes, warns


def _nameplate_unit(body: NetworkRequest, t: TransformerNameplate, k: int) -> EquivalentCircuit:
    """The circuit of a unit given by nameplate, checked against the bus."""
    v_bus = body.bus_voltage_kv
    where = f"units.{k}.transformer"
    if t.phases != 3:
        raise ParameterError(f"{where}.phases", t.phases, "3: the bus is three-phase")
    if abs(t.frequency_hz - body.frequency_hz) > 1e-9 * body.frequency_hz:
        raise ParameterError(
            f"{where}.frequency_hz", t.frequency_hz, f"{body.frequency_hz:g} Hz, the bus's"
        )
    v = t.energized_winding.voltage_kv
    if abs(v - v_bus) > VOLTAGE_TOLERANCE * v_bus:
        raise ParameterError(
            f"{where}.energized_winding.voltage_kv",
            v,
            f"within {VOLTAGE_TOLERANCE:.0%} of bus_voltage_kv = {v_bus:g} kV "
            f"([{v_bus * (1 - VOLTAGE_TOLERANCE):g}, {v_bus * (1 + VOLTAGE_TOLERANCE):g}] "
            "kV, the usual off-load tap range, common practice)",
        )
    return circuit_model.equivalent_circuit(convert.nameplate_of(t), None)


def _si_unit(body: NetworkRequest, u: NetworkUnitIn, k: int) -> EquivalentCircuit:
    """The circuit of a unit given as a three-phase SI circuit, at the bus frequency, its line
    voltage checked against the bus's."""
    ci = u.circuit_three_phase
    assert ci is not None  # the request model holds one of transformer and circuit_three_phase
    where = f"units.{k}.circuit_three_phase"
    circuit = convert.circuit_three_phase_of(ci, where, body.frequency_hz)
    v_bus = body.bus_voltage_kv * 1e3
    if abs(circuit.line_voltage_v - v_bus) > VOLTAGE_TOLERANCE * v_bus:
        factor = 1.0 if ci.connection == "delta" else math.sqrt(3.0)
        lo, hi = (v_bus * (1.0 + s * VOLTAGE_TOLERANCE) / factor for s in (-1.0, 1.0))
        raise ParameterError(
            f"{where}.winding_voltage_v",
            ci.winding_voltage_v,
            f"a line voltage ({'x 1 for a delta' if factor == 1.0 else 'x sqrt(3) for a wye'}) "
            f"within {VOLTAGE_TOLERANCE:.0%} of bus_voltage_kv = {body.bus_voltage_kv:g} kV: "
            f"[{lo:.6g}, {hi:.6g}] V (the usual off-load tap range, common practice)",
        )
    return circuit


def _rating_va(u: NetworkUnitIn) -> float:
    """A unit's rated power: its nameplate's, or sqrt(3)*V_LL*I_r of its SI circuit [VA]."""
    if u.transformer is not None:
        return u.transformer.rating_kva * 1e3
    ci = u.circuit_three_phase
    assert ci is not None
    v_ll = ci.winding_voltage_v * (1.0 if ci.connection == "delta" else math.sqrt(3.0))
    return math.sqrt(3.0) * v_ll * ci.rated_current_a


def _check_differential(u: NetworkUnitIn, k: int) -> None:
    """Refuse a differential whose vector group's energised side is not the unit's energised
    winding's connection (delta against wye), as /v1/clearance does."""
    d = u.differential
    if d is None:
        return
    g = re.match(r"^(YN|Y|D)(yn|y|d)", d.vector_group)
    if g is None:  # the field's pattern has already matched
        return
    delta = g.group(1 if d.energized_side == "high" else 2).lower() == "d"
    if u.transformer is not None:
        conn: str = u.transformer.energized_winding.connection
    else:
        assert u.circuit_three_phase is not None
        conn = u.circuit_three_phase.connection
    if delta != (conn == "delta"):
        raise ParameterError(
            f"units.{k}.differential.vector_group",
            d.vector_group,
            f"a group whose {d.energized_side} side (differential.energized_side) is "
            f"{'wye' if delta else 'delta'}: the energised winding is {conn}",
        )


def _differential(
    u: NetworkUnitIn, time: np.ndarray, line: np.ndarray, f: float, rated: float
) -> tuple[DifferentialOut | None, list[Assumption]]:
    """The unit's own differential on its own line currents (far side unloaded), judged as
    /v1/clearance judges it."""
    d = u.differential
    if d is None:
        return None, []
    inrush = inrush_from_waveform(time, line, f, rated_current_a=rated, lines=LINES)
    rt = device_operation.ride_through(convert.device_of(d), inrush)
    name = f"{u.name}.{d.name}"
    notes = [
        Assumption(
            name=f"{name}.filter",
            value=differential.FILTER_WORDS,
            unit="-",
            source=differential.DEFAULTS_SOURCE,
        ),
        Assumption(
            name=f"{name}.restraint",
            value=differential.RESTRAINT_WORDS[d.restraint],
            unit="-",
            source="setting",
        ),
    ]
    return clearance.differential_out(rt.differential), notes


def _check_source(body: NetworkRequest, source: Source) -> None:
    """Refuse a source that cannot carry the units' summed rating at any voltage (the bound
    the other operations apply to one unit: :data:`plausibility.SOURCE_STRENGTH_FACTOR`)."""
    src = body.source
    if not isinstance(src, FaultLevelSource | ImpedanceSource):
        return
    v = body.bus_voltage_kv * 1e3
    w = 2.0 * math.pi * body.frequency_hz
    s_sc = plausibility.short_circuit_power_va(v, source.resistance_ohm, source.inductance_h * w)
    total_va = sum(_rating_va(u) for u in body.units)
    need = plausibility.SOURCE_STRENGTH_FACTOR * total_va
    if s_sc >= need * (1.0 - 1e-9):
        return
    why = (
        f"at least {plausibility.SOURCE_STRENGTH_FACTOR:g} x the units' summed rating of "
        f"{total_va / 1e6:.6g} MVA: a weaker source cannot carry their rated load at any "
        "voltage (it delivers at most half its short-circuit power into a load)"
    )
    if isinstance(src, FaultLevelSource):
        raise ParameterError(
            "source.fault_mva", src.fault_mva, f"{need / 1e6:.6g} MVA or more, {why}"
        )
    z_max = v * v / need
    name = "reactance_ohm" if src.reactance_ohm >= src.resistance_ohm else "resistance_ohm"
    raise ParameterError(
        f"source.{name}",
        getattr(src, name),
        f"a source impedance sqrt(resistance_ohm^2 + reactance_ohm^2) of at most {z_max:.6g} "
        f"ohm, {why}",
    )


def _load(body: NetworkRequest) -> BusLoad | None:
    ld = body.bus_load
    if ld is None:
        return None
    return BusLoad.from_power(
        body.bus_voltage_kv * 1e3, body.frequency_hz, ld.active_kw * 1e3, ld.reactive_kvar * 1e3
    )


def _current(
    time: np.ndarray,
    i: np.ndarray,
    spc: int,
    rated: float | None,
    first_end_s: float,
    harmonic_cycles: int,
    exact: tuple[float, int, np.ndarray],
) -> CurrentOut:
    """Readings of three line currents i, shape (3, n), with the peaks read exactly."""
    r = analysis.current_readings(time, i, spc, first_end_s, harmonic_cycles, exact)
    first = r.first_peak_a
    return CurrentOut(
        first_peak_a=first,
        first_peak_x_rated=first / rated if rated else None,
        first_peak_line=LINES[r.first_peak_line],
        cycle_peaks_a=convert.floats(r.cycle_peaks_a),
        cycle_mean_a={LINES[k]: convert.floats(r.cycle_mean_a[k]) for k in range(3)},
        equivalent_rms_a=convert.floats(r.equivalent_rms_a),
        second_harmonic_ratio=[convert.maybe(x) for x in r.second_harmonic_ratio],
        min_second_harmonic_ratio=convert.maybe(r.min_second_harmonic_ratio),
    )


def _sympathetic(
    line: np.ndarray,
    spc: int,
    rated: float,
    f: float,
    duration: float,
    exact: tuple[np.ndarray, np.ndarray],
) -> SympatheticOut:
    """line: the unit's line currents, shape (3, n); exact: its per-cycle peaks and lines."""
    s = analysis.sympathetic_current(line, spc, f, duration, SYMPATHETIC_FRACTION, exact)
    return SympatheticOut(
        peak_a=s.peak_a,
        peak_x_rated=s.peak_a / rated,
        peak_cycle=s.peak_cycle,
        line=LINES[s.line],
        fraction_of_peak=SYMPATHETIC_FRACTION,
        above_from_s=s.above_from_s,
        above_until_s=s.above_until_s,
        duration_above_s=s.duration_above_s,
        steady_peak_a=s.steady_peak_a,
    )


def _bus(res: NetworkResult, v_nom: float, spc: int, f: float) -> BusVoltageOut:
    d = analysis.bus_dip(res.bus_voltage_v[0], v_nom, spc, RECOVERY_PERCENT)
    rec = d.recovered_cycle
    return BusVoltageOut(
        nominal_phase_voltage_v=v_nom,
        cycle_rms_percent=convert.floats(d.cycle_rms_percent),
        min_percent=d.min_percent,
        min_cycle=d.min_cycle,
        recovery_percent=RECOVERY_PERCENT,
        recovered_cycle=rec,
        recovered_s=rec / f if rec is not None else None,
    )


@dataclass(frozen=True)
class Prepared:
    """A network request in SI, checked: what the core is called with, and what it assumed."""

    source: Source
    units: list[Unit]
    rated_current_a: list[float]
    load: BusLoad | None
    assumptions: list[Assumption]
    warnings: list[tuple[str, str]]


def prepare(body: NetworkRequest) -> Prepared:
    """The source, units and load of a request, as /v1/network-energization builds them (the
    operations that take the same network call this)."""
    source, assumptions = _source(body)
    _check_source(body, source)
    units, rated, notes, warns = _units(body)
    return Prepared(source, units, rated, _load(body), assumptions + notes, warns)


def _differentials(body: NetworkRequest) -> int:
    return sum(1 for u in body.units if u.differential is not None)


def _estimate(
    source: Source, units: list[Unit], load: BusLoad | None, body: NetworkRequest
) -> budget.Estimate:
    def estimate(o: Mapping[str, float]) -> cost.Work:
        r = budget.replaced
        n = int(r(o, "units", len(units)))
        return cost.network_work(
            source,
            units[:n],
            r(o, "options.duration_s", body.options.duration_s),
            load,
            devices=int(r(o, "devices", len(body.devices))),
            differentials=int(r(o, "units.differential", _differentials(body))),
        )

    return estimate


def _figure_estimate(
    source: Source, units: list[Unit], load: BusLoad | None, body: NetworkRequest
) -> budget.Estimate:
    def estimate(o: Mapping[str, float]) -> cost.Work:
        n = int(budget.replaced(o, "units", len(units)))
        duration = budget.replaced(o, "options.duration_s", body.options.duration_s)
        return cost.network_figure_work(source, units[:n], duration, load)

    return estimate


@dataclass(frozen=True)
class _Simulated:
    """One network request simulated: the record and what it was built from."""

    res: NetworkResult
    rated: list[float]
    assumptions: list[Assumption]
    warns: list[tuple[str, str]]
    load: BusLoad | None
    source: Source
    units: list[Unit]


def _simulate(body: NetworkRequest, settings: Settings, figure: bool = False) -> _Simulated:
    """Check the request, enforce its work budget (the JSON operation's, or the figure's) and
    simulate it."""
    f = body.frequency_hz
    duration = body.options.duration_s
    if duration * f < 2.0:
        raise ParameterError(
            "options.duration_s", duration, f"at least two cycles, {2.0 / f:.4g} s at {f:g} Hz"
        )
    convert.check_work(settings, 3 * (len(body.units) + 1), f, duration, SAMPLES_PER_CYCLE)
    net = prepare(body)
    source, units, load = net.source, net.units, net.load
    knobs = [
        budget.Knob("options.duration_s", duration, 0.05),
        budget.Knob("units", len(units), 1, integer=True),
    ]
    if body.devices and not figure:
        knobs.append(budget.Knob("devices", len(body.devices), 0, integer=True))
    if _differentials(body) and not figure:
        knobs.append(budget.Knob("units.differential", _differentials(body), 0, integer=True))
    estimate = (_figure_estimate if figure else _estimate)(source, units, load, body)
    try:
        budget.enforce(estimate, knobs, settings.max_request_steps)
        res = simulate_network(
            source,
            units,
            closing_angle_deg=body.closing_angle_deg,
            duration_s=duration,
            load=load,
            max_steps=settings.max_total_steps // 3,  # unit-steps: three windings each
        )
    except ParameterError as exc:
        if exc.parameter != "resistance_ohm":
            raise
        raise ParameterError(
            "source",
            f"R = {source.resistance_ohm:.6g} ohm, X = "
            f"{source.inductance_h * 2.0 * math.pi * f:.6g} ohm",
            f"a source whose saturated loops keep {exc.allowed} (the step would be too short): "
            "a larger X/R or a smaller resistance",
        ) from None
    return _Simulated(res, net.rated_current_a, net.assumptions, net.warnings, load, source, units)


def _study(body: NetworkRequest, settings: Settings) -> NetworkResponse:
    run = _simulate(body, settings)
    res, rated, assumptions, warns, load = (
        run.res, run.rated, run.assumptions, run.warns, run.load
    )  # fmt: skip
    f = body.frequency_hz
    duration = body.options.duration_s
    spc = SAMPLES_PER_CYCLE
    energized = [k for k, u in enumerate(body.units) if u.state == "energized"]
    is_energized = [u.state == "energized" for u in body.units]
    first_end = float(analysis.first_peak_window_end(res.closing_time_s[0], is_energized, f))
    hc = body.options.harmonic_cycles
    i_rated_sum = float(sum(rated[k] for k in energized))
    n_units = len(body.units)
    # every unit's and the source's peaks, read exactly (one set of re-integrated windows)
    exact = network_peaks.signal_peaks(
        run.source, run.units, load, res, [*range(n_units), network_peaks.SOURCE],
        np.array([first_end]),
    )  # fmt: skip

    def read(k: int) -> tuple[float, int, np.ndarray]:
        return (
            float(exact.first_peak_a[0, k]),
            int(exact.first_peak_line[0, k]),
            exact.cycle_peaks_a[0, k],
        )

    out_units = []
    for k, u in enumerate(body.units):
        line = res.line_current_a[0, k]
        sym = None
        if u.state == "in_service":
            sym = _sympathetic(
                line, spc, rated[k], f, float(res.time_s[-1]),
                (exact.cycle_peaks_a[0, k], exact.cycle_peak_line[0, k]),
            )  # fmt: skip
        diff, diff_notes = _differential(u, res.time_s, line, f, rated[k])
        assumptions += diff_notes
        out_units.append(
            UnitOut(
                name=u.name,
                state=u.state,
                rated_current_a=rated[k],
                current=_current(res.time_s, line, spc, rated[k], first_end, hc, read(k)),
                sympathetic=sym,
                differential=diff,
            )
        )
    src_i = res.source_current_a[0]
    src_out = _current(res.time_s, src_i, spc, i_rated_sum, first_end, hc, read(n_units))
    curves = inrush_from_waveform(res.time_s, src_i, f, rated_current_a=i_rated_sum, lines=LINES)
    rule = [
        RuleOfThumbOut(
            multiple_x_rated=p.multiple_x_rated,
            time_s=p.time_s,
            current_a=p.current_a,
            simulated_equivalent_rms_a=p.simulated_equivalent_rms_a,
            simulated_over_rule=p.simulated_over_rule,
        )
        for p in analysis.rule_of_thumb(
            res.time_s, src_i, i_rated_sum, device_operation.INRUSH_POINTS
        )
    ]
    devices = []
    if body.devices:
        ev = coordination.evaluate(
            curves, [convert.device_of(d, n) for n, d in enumerate(body.devices)], None
        )
        assumptions += convert.assumptions_out(ev.assumptions)
        warns += list(ev.warnings)
        for e in ev.devices:
            devices.append(
                FeederDeviceOut(
                    name=e.device,
                    kind=e.kind,
                    ride_through=clearance.ride_through_out(e),
                    common_practice_points=clearance.points_out(e),
                )
            )
    for uo in out_units:
        s = uo.sympathetic
        if s is not None and s.above_until_s >= duration:
            warns.append(
                (
                    "sympathetic_not_decayed",
                    f"{uo.name}: the sympathetic current is still above "
                    f"{SYMPATHETIC_FRACTION:.0%} of its peak at the record's end; lengthen "
                    "options.duration_s",
                )
            )
    bus = _bus(res, body.bus_voltage_kv * 1e3 / math.sqrt(3.0), spc, f)
    if load is not None:
        assumptions.append(
            Assumption(
                name="bus_load",
                value=[load.resistance_ohm, load.inductance_h],
                unit="ohm, H per phase (series R-L, wye-grounded)",
                source="from bus_load: the impedance drawing active_kw, reactive_kvar at "
                "bus_voltage_kv",
            )
        )
    assumptions.append(
        Assumption(
            name="sympathetic_fraction",
            value=SYMPATHETIC_FRACTION,
            unit="-",
            source="modelling choice: sympathetic current timed while above half its peak",
        )
    )
    return NetworkResponse(
        frequency_hz=f,
        closing_angle_deg=body.closing_angle_deg,
        duration_s=float(res.time_s[-1]),
        steps_per_cycle=res.steps_per_cycle,
        energized_rated_current_a=i_rated_sum,
        equivalent_rms_times_s=[t for t in waveform.STANDARD_TIMES_S if t <= res.time_s[-1]],
        source=src_out,
        units=out_units,
        bus_voltage=bus,
        rule_of_thumb=rule,
        devices=devices,
        assumptions=assumptions,
        warnings=convert.warnings_out(warns),
        method=Method(simulated=NETWORK_METHOD, approximations=list(res.approximations)),
    )


@router.post(
    "",
    response_model=NetworkResponse,
    operation_id="network_energization",
    summary="Several units on one bus: energised together, or beside units in service",
    response_description="Per unit and at the source: first peak, per-cycle peaks, I_eq(t), "
    "second harmonic; sympathetic current of units in service; bus voltage dip; feeder devices "
    "against the summed inrush; the rule of thumb beside it",
)
async def network_energization(
    body: Annotated[NetworkRequest, Body(openapi_examples=NETWORK_EXAMPLES)],
    settings: SettingsDep,
) -> Response:
    """Simulate transformers on one bus in the time domain (at most 64 units): those being
    energised and those in service, the current out of the source, the bus voltage."""

    def run() -> NetworkResponse:
        return _study(body, settings)

    out = await compute.run_heavy(settings, run)
    return Response(out.model_dump_json(), media_type="application/json")


def _figure(body: NetworkRequest, settings: Settings) -> str:
    """The source's and each unit's current over time (the line with the largest current)."""
    res = _simulate(body, settings, figure=True).res
    energized: list[figures.CurrentTrace] = []
    in_service: list[figures.CurrentTrace] = []

    def trace(i: np.ndarray, label: str, tag: str, gid: str) -> figures.CurrentTrace:
        line = int(np.argmax(np.abs(i).max(axis=1)))
        return figures.CurrentTrace(f"{label}, line {LINES[line]}", tag, i[line], gid)

    energized.append(trace(res.source_current_a[0], "Source", "Source", "source"))
    for k, u in enumerate(body.units):
        what = "energised" if u.state == "energized" else "in service"
        tr = trace(res.line_current_a[0, k], f"{u.name} ({what})", u.name, f"unit-{k}")
        (energized if u.state == "energized" else in_service).append(tr)
    n_on = sum(1 for u in body.units if u.state == "energized")
    title = (
        f"{n_on} of {len(body.units)} units energised on the {body.bus_voltage_kv:g} kV bus, "
        f"closing angle {body.closing_angle_deg:g} deg"
    )
    return figures.network_svg(title, res.time_s, energized, in_service)


@router.post(
    "/figure",
    operation_id="network_energization_figure",
    summary="The currents of a network energisation over time as SVG",
    response_class=Response,
    responses={200: {"content": {"image/svg+xml": {"schema": {"type": "string"}}},
                     "description": "The source current and each energised unit's current "
                     "against time; the units in service below"}},
)  # fmt: skip
async def network_energization_figure(
    body: Annotated[NetworkRequest, Body(openapi_examples=NETWORK_EXAMPLES)],
    settings: SettingsDep,
) -> Response:
    """The same request as POST /v1/network-energization, drawn: for the source and for each
    unit the line carrying the largest current, in A against time in s, each curve named on the
    plot; the energised units with the source, the units in service (sympathetic current) on
    their own axes below. The feeder devices and differentials are not judged here."""
    svg = await compute.run_heavy(settings, _figure, body, settings)
    return Response(svg, media_type="image/svg+xml")
