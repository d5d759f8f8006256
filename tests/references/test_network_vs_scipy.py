"""core.network.simulate_network against an independent scipy reference written from circuit laws.

The reference (tests/references/network_reference.py) integrates the winding fluxes and load
currents with scipy's LSODA at rtol 1e-10, solving one dense Kirchhoff system per call and
stopping at every knee crossing; it shares only the circuit inputs with the solver. Both are
sampled at the same instants (128 per cycle) over the first ten cycles, and each signal -- the
line currents of every unit and the source currents, every phase -- is compared by its
per-cycle peaks |i| relative to that signal's largest peak (for a unit in service, whose
sympathetic current starts small, its own largest, a stricter bound than the first peak of the
energised unit). Tolerance 1e-3 (0.1 %), the project's requirement for this solver; the
measured worst deviation is in each test's comment and assertion message. The bus voltage is
compared sample by sample relative to its amplitude.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import network_reference as ref
import numpy as np
import pytest
from numpy.typing import NDArray

from core import transformer
from core.network import Breaker, BusLoad, NetworkResult, Source, Unit, simulate_network
from core.transformer.magnetizing import PiecewiseLinearCurve

Array = NDArray[np.float64]
F = 50.0
V_LL = 11_000.0
CYCLES = 10
SPC = 128
TOL = 1e-3


def _circuit(connection: str, rating_va: float = 1e6) -> transformer.EquivalentCircuit:
    # 11 kV distribution units, nameplate defaults of core.transformer (typical values, common
    # practice): 5.75 %, X/R 7, 1 % no-load current, grain-oriented steel, outer winding
    return transformer.equivalent_circuit(
        transformer.Nameplate(
            rating_va=rating_va,
            phases=3,
            frequency_hz=F,
            line_voltage_v=V_LL,
            connection=connection,
        )
    )


def _ref_unit(unit: Unit, closing_s: Array) -> ref.RefUnit:
    c = unit.circuit
    cv = c.curve
    assert isinstance(cv, PiecewiseLinearCurve)
    lam0 = np.broadcast_to(np.asarray(unit.residual_flux_pu, dtype=float), (3,)) * c.nominal_flux_wb
    return ref.RefUnit(
        connection=unit.connection or c.connection,
        r_w=c.winding_resistance_ohm,
        l_m=float(cv.flux_wb[1] / cv.current_a[1]),
        knee=float(cv.flux_wb[1]),
        l_air=cv.final_inductance_h,
        close=(float(closing_s[0]), float(closing_s[1]), float(closing_s[2])),
        lam0=(float(lam0[0]), float(lam0[1]), float(lam0[2])),
        in_service=unit.in_service,
        r_ins=unit.breaker.insertion_resistance_ohm,
        t_bypass=unit.breaker.bypass_time_s,
    )


def _ref_network(
    source: Source,
    units: Sequence[Unit],
    sim: NetworkResult,
    alpha_deg: float,
    load: BusLoad | None,
) -> ref.RefNetwork:
    """The reference's network: the pole instants and the bypass as the solver put them on its
    step (inputs), case 0 of ``sim``."""
    closing = sim.closing_time_s[0]
    h = 1.0 / (F * sim.steps_per_cycle)
    ref_units = []
    for k, u in enumerate(units):
        ru = _ref_unit(u, closing[k])
        if u.breaker.insertion_resistance_ohm > 0.0:
            ru = ref.RefUnit(**{**ru.__dict__, "t_bypass": round(u.breaker.bypass_time_s / h) * h})
        ref_units.append(ru)
    return ref.RefNetwork(
        v_ll=source.line_voltage_v,
        f=F,
        alpha_deg=alpha_deg,
        r_s=source.resistance_ohm,
        l_s=source.inductance_h,
        units=tuple(ref_units),
        r_l=load.resistance_ohm if load else 0.0,
        l_l=load.inductance_h if load else 0.0,
    )


def _compare(
    source: Source, units: Sequence[Unit], alpha_deg: float, load: BusLoad | None = None
) -> tuple[dict[str, float], NetworkResult, ref.RefResult]:
    sim = simulate_network(
        source,
        units,
        closing_angle_deg=alpha_deg,
        duration_s=CYCLES / F,
        load=load,
        samples_per_cycle=SPC,
    )
    r = ref.simulate(_ref_network(source, units, sim, alpha_deg, load), sim.time_s)

    def dev(a: Array, b: Array) -> float:
        pa = ref.cycle_peaks(a, SPC, CYCLES)
        pb = ref.cycle_peaks(b, SPC, CYCLES)
        return float(np.max(np.abs(pa - pb)) / np.max(pb))

    out = {"source": dev(sim.source_current_a[0], r.source_current_a)}
    for k in range(len(units)):
        out[f"unit {k}"] = dev(sim.line_current_a[0, k], r.line_current_a[k])
    out["bus voltage"] = float(
        np.max(np.abs(sim.bus_voltage_v[0] - r.bus_voltage_v)) / np.max(np.abs(r.bus_voltage_v))
    )
    return out, sim, r


def _check(out: dict[str, float]) -> None:
    worst = max(out.values())
    assert worst < TOL, f"deviations {out}"


def test_sympathetic_inrush_beside_identical_unit_in_service() -> None:
    # (a) a grounded-wye unit energised beside an identical one in service, 20 MVA X/R 5 source
    # measured: source 6.1e-6, in service 1.6e-5, energised 6.1e-6, bus voltage 2.9e-7
    src = Source.from_fault_level(V_LL, F, 20e6, 5.0)
    c = _circuit("wye_grounded")
    out, _, _ = _compare(
        src, [Unit(c, in_service=True), Unit(c, residual_flux_pu=[0.7, -0.35, -0.35])], 0.0
    )
    _check(out)


def test_delta_energised_beside_floating_wye_in_service() -> None:
    # (b) measured: source 3.5e-6, floating wye in service 4.3e-5, delta 3.5e-6, bus 1.5e-7
    src = Source.from_fault_level(V_LL, F, 20e6, 5.0)
    units = [
        Unit(_circuit("wye"), in_service=True),
        Unit(_circuit("delta"), residual_flux_pu=[0.6, -0.3, -0.3]),
    ]
    out, _, _ = _compare(src, units, 10.0)
    _check(out)


def test_four_mixed_units_picked_up_together_with_bus_load() -> None:
    # (c) four units of three connections closed together on a loaded bus, one with a
    # pre-insertion resistor bypassed after 2.5 cycles; measured: source 6.7e-6, units
    # 1.1e-5, 3.2e-6, 6.7e-6 and 3.0e-4 (the one with the resistor), bus voltage 8e-6
    src = Source.from_fault_level(V_LL, F, 50e6, 10.0)
    load = BusLoad.from_power(V_LL, F, 2e6, 1e6)
    units = [
        Unit(_circuit("wye_grounded", 1e6), residual_flux_pu=[0.8, -0.4, -0.4]),
        Unit(_circuit("delta", 0.5e6), residual_flux_pu=[-0.5, 0.6, -0.1]),
        Unit(_circuit("wye", 2e6), residual_flux_pu=[0.2, 0.5, -0.7]),
        Unit(
            _circuit("delta", 1e6),
            breaker=Breaker(insertion_resistance_ohm=60.0, bypass_time_s=2.5 / F),
            residual_flux_pu=[0.7, -0.7, 0.0],
        ),
    ]
    out, _, _ = _compare(src, units, 75.0, load)
    _check(out)


def test_staggered_poles_on_a_delta_unit() -> None:
    # (d) poles closing 0, 3.1 and 7.3 ms apart: with one pole open the two windings on that
    # terminal carry the same current in series; measured: source and line 1.9e-5, bus 2.8e-8
    src = Source.from_fault_level(V_LL, F, 20e6, 5.0)
    units = [
        Unit(
            _circuit("delta"),
            breaker=Breaker(closing_time_s=[0.0, 3.1e-3, 7.3e-3]),
            residual_flux_pu=[0.6, -0.3, -0.3],
        )
    ]
    out, sim, _ = _compare(src, units, 30.0)
    # before the third pole closes, windings bc and ca carry the same current in series (up
    # to the magnetising current of their residual fluxes, held from the second closing)
    second, third = round(3.1e-3 * F * SPC), round(7.3e-3 * F * SPC)
    c_bc, c_ca = sim.winding_current_a[0, 0, 1], sim.winding_current_a[0, 0, 2]
    assert np.max(np.abs(c_ca[second + 1 : third])) > 0.0
    offset = c_ca[second + 1 : third] - c_bc[second + 1 : third]
    assert np.ptp(offset) < 1e-9 * np.max(np.abs(c_ca[second + 1 : third]))
    _check(out)


@pytest.mark.parametrize("connection", ["wye_grounded", "wye"])
def test_staggered_poles_on_a_wye_unit(connection: str) -> None:
    # the same pole scatter on the two wye connections; measured: grounded 6.9e-6, floating
    # 1.1e-5 (source and line), bus 9.6e-8 and 6e-8
    src = Source.from_fault_level(V_LL, F, 20e6, 5.0)
    units = [
        Unit(
            _circuit(connection),
            breaker=Breaker(closing_time_s=[2.0e-3, 0.0, 5.3e-3]),
            residual_flux_pu=[0.6, -0.3, -0.3],
        )
    ]
    out, _, _ = _compare(src, units, 100.0)
    _check(out)


@pytest.mark.parametrize(
    ("connection", "residual", "alpha_deg"),
    [("delta", (0.8, -0.8, 0.0), 300.95), ("wye", (0.8, -0.4, -0.4), 1.38)],
)
def test_unit_behind_subtransient_reactance(
    connection: str, residual: tuple[float, float, float], alpha_deg: float
) -> None:
    # A 1000 kVA, 480 V unit (inner winding) behind the subtransient reactance of a 1250 kVA
    # machine, X''d = 0.15 pu, as a constant EMF (X/R 40), closed at the angle
    # core.energize.worst_closing_angle finds for it: the delta's loop through the source and
    # the floating neutral, not each winding alone. Measured first peaks, this solver /
    # reference: delta 12 204.06 / 12 204.05 A, floating wye 9 548 A both; the former dip model
    # (removed; the dip now runs on this solver), which took each delta winding alone behind
    # 2 x Z_s and the floating wye's phases as independent, gave 15 139 A and 12 730 A.
    # Per-cycle peaks within 1.6e-6 (delta) and 3.5e-6 (floating wye) over six cycles.
    f, v = 60.0, 480.0
    x_d2 = 0.15 * v * v / 1.25e6
    fault = v * v / (x_d2 * math.sqrt(1.0 + 1.0 / 40.0**2))
    npl = transformer.Nameplate(
        rating_va=1e6,
        phases=3,
        frequency_hz=f,
        line_voltage_v=v,
        connection=connection,
        position="inner",
    )
    c = transformer.equivalent_circuit(npl)
    src = Source.from_fault_level(v, f, fault, 40.0)
    sim = simulate_network(
        src, [Unit(c, residual_flux_pu=residual)], closing_angle_deg=alpha_deg, duration_s=6 / f
    )
    cv = c.curve
    assert isinstance(cv, PiecewiseLinearCurve)
    lam0 = tuple(x * c.nominal_flux_wb for x in residual)
    unit = ref.RefUnit(
        connection,
        c.winding_resistance_ohm,
        float(cv.flux_wb[1] / cv.current_a[1]),
        float(cv.flux_wb[1]),
        cv.final_inductance_h,
        (0.0, 0.0, 0.0),
        (lam0[0], lam0[1], lam0[2]),
    )
    net = ref.RefNetwork(v, f, alpha_deg, src.resistance_ohm, src.inductance_h, (unit,))
    r = ref.simulate(net, sim.time_s)
    pa = ref.cycle_peaks(sim.line_current_a[0, 0], SPC, 6)
    pb = ref.cycle_peaks(r.line_current_a[0], SPC, 6)
    worst = float(np.max(np.abs(pa - pb)) / np.max(pb))
    assert worst < TOL, f"deviation {worst:.2g}, first peaks {np.max(pa):.2f} {np.max(pb):.2f} A"


def _parabola_crest(x: Array, end: int) -> float:
    """Largest |x| over samples 0..end, refined by the parabola through it and its neighbours
    (three-point interpolation; the sample itself at either end of the record)."""
    a = np.abs(x[: end + 1])
    m = int(np.argmax(a))
    if m == 0 or m + 1 >= x.size:
        return float(a[m])
    y0, y1, y2 = abs(x[m - 1]), abs(x[m]), abs(x[m + 1])
    den = y0 - 2.0 * y1 + y2
    return float(y1 - 0.125 * (y2 - y0) ** 2 / den) if den < 0.0 else float(y1)


def test_grounded_wye_feeder_phase_by_phase() -> None:
    # (g) grounded-wye units only: record="source" and record="first_peaks" run on the kernel of
    # decoupled phases (core.network.kernel.integrate_decoupled), one scalar KCL per phase. A
    # loaded bus, a unit in service, one with staggered poles and a pre-insertion resistor
    # bypassed after 2.5 cycles, one closed at t = 0. The source current's per-cycle peaks over
    # ten cycles, and every current's first peak within two cycles of the last pole (the
    # reference's read by the three-point parabola through its largest sample); measured:
    # source 1.4e-5, first peaks within 1.5e-5 (source), 2.4e-7, 1.1e-5 and 4.2e-7 (units)
    src = Source.from_fault_level(V_LL, F, 30e6, 8.0)
    load = BusLoad.from_power(V_LL, F, 1.5e6, 0.7e6)
    units = [
        Unit(_circuit("wye_grounded", 1.5e6), in_service=True),
        Unit(
            _circuit("wye_grounded", 1e6),
            breaker=Breaker(
                closing_time_s=[0.0, 3.1e-3, 5.7e-3],
                insertion_resistance_ohm=60.0,
                bypass_time_s=2.5 / F,
            ),
            residual_flux_pu=[0.8, -0.4, -0.4],
        ),
        Unit(_circuit("wye_grounded", 0.5e6), residual_flux_pu=[-0.6, 0.7, -0.1]),
    ]
    kw = {"closing_angle_deg": 20.0, "duration_s": CYCLES / F, "load": load}
    sim = simulate_network(src, units, record="source", **kw)  # type: ignore[arg-type]
    peaks = simulate_network(src, units, record="first_peaks", **kw)  # type: ignore[arg-type]
    closing = sim.closing_time_s[0]
    r = ref.simulate(_ref_network(src, units, sim, 20.0, load), sim.time_s)
    pa = ref.cycle_peaks(sim.source_current_a[0], SPC, CYCLES)
    pb = ref.cycle_peaks(r.source_current_a, SPC, CYCLES)
    out = {"source": float(np.max(np.abs(pa - pb)) / np.max(pb))}
    # the window: the last pole of the units being energised, two cycles on
    end = math.floor((float(closing[1:].max()) + 2.0 / F) * F * SPC + 1e-9)
    signals = [r.source_current_a] + [r.line_current_a[k] for k in range(len(units))]
    for j, x in enumerate(signals):
        expected = max(_parabola_crest(x[p], end) for p in range(3))
        out[f"first peak {j}"] = abs(float(peaks.first_peak_a[0, j]) - expected) / expected
    _check(out)
