"""Tests of core.transformer.circuit_model and core.transformer.per_unit: per-unit bases, the
equivalent circuit, the air-core inductance, the source impedance, provenance and validation.

Reference values are ordinary per-unit arithmetic done by hand (common practice; the rated
current definition is that of IEEE Std C57.12.00), written out beside each number.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from core.errors import ParameterError
from core.transformer import circuit_model, magnetizing, per_unit

F_HZ = 60.0
OMEGA = 2.0 * math.pi * F_HZ


def _demo(**kw: object) -> circuit_model.Nameplate:
    # demo scenario unit: 2500 kVA, 13.8 kV delta - 480Y/277 V, Z 5.75 %, X/R 7, I0 0.8 %
    base = {
        "rating_va": 2500e3,
        "phases": 3,
        "frequency_hz": F_HZ,
        "line_voltage_v": 480.0,
        "connection": "wye_grounded",
        "position": "inner",
        "impedance_percent": 5.75,
        "x_over_r": 7.0,
        "no_load_current_percent": 0.8,
    }
    base.update(kw)
    return circuit_model.Nameplate(**base)  # type: ignore[arg-type]


# ------------------------------------------------------------------ bases


def test_rated_currents_of_the_demo_unit() -> None:
    # I_r = S/(sqrt(3) V_LL): 2500e3/(1.7320508*480) = 3007.03 A; at 13.8 kV 104.592 A;
    # a delta winding carries I_r/sqrt(3) = 60.386 A. rel 1e-5: hand values to 6 figures.
    lv = circuit_model.equivalent_circuit(_demo())
    hv = circuit_model.equivalent_circuit(
        _demo(line_voltage_v=13.8e3, connection="delta", position="outer")
    )
    assert lv.rated_line_current_a == pytest.approx(3007.03, rel=1e-5)
    assert lv.rated_winding_current_a == pytest.approx(3007.03, rel=1e-5)
    assert hv.rated_line_current_a == pytest.approx(104.592, rel=1e-5)
    assert hv.rated_winding_current_a == pytest.approx(60.386, rel=1e-5)
    # single-phase: S/V, 167e3/7967 = 20.961 A
    assert per_unit.rated_line_current_a(167e3, 1, 7967.0) == pytest.approx(20.961, rel=1e-4)


def test_winding_voltage_base_impedance_and_nominal_flux() -> None:
    # wye: V_w = 480/sqrt(3) = 277.128 V; Z_b = V_w^2/(S/3) = 480^2/2.5e6 = 0.09216 ohm
    # delta: V_w = 13.8 kV; Z_b = 13800^2/(2.5e6/3) = 228.528 ohm
    # lambda_N = sqrt(2)*277.128/(2*pi*60) = 391.918/376.991 = 1.039596 Wb-turn
    assert per_unit.winding_voltage_v(480.0, 3, "wye_grounded") == pytest.approx(277.128, rel=1e-6)
    assert per_unit.winding_voltage_v(13.8e3, 3, "delta") == 13.8e3
    assert per_unit.winding_voltage_v(7967.0, 1, "delta") == 7967.0
    lv = circuit_model.equivalent_circuit(_demo())
    assert per_unit.base_impedance_ohm(2500e3, 3, lv.winding_voltage_v) == pytest.approx(0.09216)
    assert per_unit.base_impedance_ohm(2500e3, 3, 13.8e3) == pytest.approx(228.528, rel=1e-9)
    assert lv.nominal_flux_wb == pytest.approx(1.039596, rel=1e-6)


def test_winding_resistance_is_half_the_short_circuit_resistance() -> None:
    # r_T = z/sqrt(1 + (X/R)^2) = 0.0575/sqrt(50) = 0.00813173 pu; the energised winding
    # carries half (common practice): 0.5 * 0.00813173 * 0.09216 ohm = 3.74710e-4 ohm
    lv = circuit_model.equivalent_circuit(_demo())
    assert lv.winding_resistance_ohm == pytest.approx(3.74710e-4, rel=1e-5)


def test_magnetising_inductance_and_knee() -> None:
    # X_m = Z_b / i0_pu = 0.09216/0.008 = 11.52 ohm -> L_m = 11.52/(2*pi*60) = 0.0305577 H;
    # knee lambda_S = (B_S/B_N) lambda_N = (2.03/1.7) * 1.039596 = 1.241400 Wb-turn
    lv = circuit_model.equivalent_circuit(_demo())
    assert lv.magnetizing_inductance_h == pytest.approx(0.0305577, rel=1e-5)
    assert lv.knee_flux_wb == pytest.approx(1.241400, rel=1e-6)
    assert isinstance(lv.curve, magnetizing.PiecewiseLinearCurve)


def test_default_air_core_reactance_by_winding_position() -> None:
    # default multiples of x_T = 7 r_T = 0.0569221 pu (from memory: 1-2 x inner, 2-4 x outer,
    # the mid-points 1.5 and 3 used): inner 0.0853832 pu, outer 0.170766 pu of Z_b
    inner = circuit_model.equivalent_circuit(_demo())
    outer = circuit_model.equivalent_circuit(_demo(position="outer"))
    z_b = 0.09216
    assert OMEGA * inner.air_core_inductance_h / z_b == pytest.approx(0.0853832, rel=1e-5)
    assert OMEGA * outer.air_core_inductance_h / z_b == pytest.approx(0.170766, rel=1e-5)
    src = {a.name: a.source for a in inner.assumptions}["air_core_inductance_h"]
    assert "from memory" in src


def test_long_solenoid_formula_by_hand() -> None:
    # L = mu0 N^2 A / h, A = pi D^2/4: N = 200, D = 0.5 m, h = 1.0 m ->
    # 4*pi*1e-7 * 40000 * 0.1963495 / 1.0 = 9.869604e-3 H (= pi^2/1000). rel 1e-8: scipy's
    # measured mu_0 differs from 4*pi*1e-7 by 5.5e-10 relative.
    got = circuit_model.air_core_inductance_solenoid(200.0, 0.5, 1.0)
    assert got == pytest.approx(math.pi**2 / 1000.0, rel=1e-8)
    # the solenoid value is used when the geometry is given, and says so
    geom = circuit_model.WindingGeometry(turns=20.0, mean_diameter_m=0.5, height_m=1.0)
    circ = circuit_model.equivalent_circuit(_demo(geometry=geom))
    assert circ.air_core_inductance_h == pytest.approx(math.pi**2 / 1000.0 / 100.0, rel=1e-8)
    src = {a.name: a.source for a in circ.assumptions}["air_core_inductance_h"]
    assert "solenoid" in src


def test_source_impedance_from_fault_level_and_x_over_r() -> None:
    # Z_s = V_LL^2/S_sc = 13800^2/250e6 = 0.76176 ohm; R_s = Z_s/sqrt(1 + 12^2) = 0.0632607;
    # X_s = 12 R_s = 0.759129 ohm (common practice)
    src = circuit_model.Source("fault_level", fault_va=250e6, x_over_r=12.0)
    r, x = circuit_model.source_impedance(src, 13.8e3, 3)
    assert r == pytest.approx(0.0632607, rel=1e-6)
    assert x == pytest.approx(0.759129, rel=1e-6)
    circ = circuit_model.equivalent_circuit(
        _demo(line_voltage_v=13.8e3, connection="delta", position="outer"), src
    )
    assert circ.source_resistance_ohm == pytest.approx(0.0632607, rel=1e-6)
    assert circ.source_inductance_h == pytest.approx(0.759129 / OMEGA, rel=1e-6)
    assert circuit_model.source_impedance(circuit_model.Source(), 13.8e3, 3) == (0.0, 0.0)
    given = circuit_model.Source("impedance", resistance_ohm=0.01, reactance_ohm=0.2)
    assert circuit_model.source_impedance(given, 480.0, 3) == (0.01, 0.2)


# ------------------------------------------------------------------ curve variants


def test_open_circuit_points_define_the_curve_and_reproduce_the_no_load_current() -> None:
    # the converted curve, driven at rated voltage, must draw the given 100 % test current
    npl = _demo(
        open_circuit_voltage_percent=(50.0, 90.0, 100.0, 110.0),
        open_circuit_current_percent=(0.2, 0.5, 0.8, 2.0),
    )
    circ = circuit_model.equivalent_circuit(npl)
    assert isinstance(circ.curve, magnetizing.PiecewiseLinearCurve)
    irms = magnetizing.rms_current_sinusoidal_flux(circ.curve, circ.nominal_flux_wb)
    assert irms == pytest.approx(0.008 * circ.rated_winding_current_a, rel=1e-9)
    assert circ.curve.final_inductance_h == circ.air_core_inductance_h


def test_smooth_curve_variant() -> None:
    circ = circuit_model.equivalent_circuit(_demo(curve="smooth", knee_width_pu=0.01))
    assert isinstance(circ.curve, magnetizing.SmoothKneeCurve)
    assert circ.curve.knee_width_wb == pytest.approx(0.01 * circ.nominal_flux_wb)


def test_smooth_curve_passes_through_the_no_load_point() -> None:
    # the rounded knee must not inflate the magnetising current at rated voltage: the crest
    # current at lambda_N equals the two-slope curve's, sqrt(2) x I_0 (nameplate arithmetic)
    npl = _demo(curve="smooth", knee_width_pu=0.01)
    smooth = circuit_model.equivalent_circuit(npl)
    sharp = circuit_model.equivalent_circuit(_demo())
    lam_n = smooth.nominal_flux_wb
    assert float(smooth.curve.current(lam_n)) == pytest.approx(
        float(sharp.curve.current(lam_n)), rel=1e-12
    )
    i0 = npl.no_load_current_percent / 100.0 * smooth.rated_winding_current_a
    assert float(sharp.curve.current(lam_n)) == pytest.approx(math.sqrt(2.0) * i0, rel=1e-12)


def test_too_wide_smooth_knee_is_rejected_naming_the_field() -> None:
    # a knee so wide that its tail alone exceeds the no-load current cannot be calibrated
    with pytest.raises(ParameterError) as err:
        circuit_model.equivalent_circuit(_demo(curve="smooth", knee_width_pu=0.1))
    assert err.value.parameter == "knee_width_pu"


CASES = {
    "defaults": (_demo(), None),
    "smooth": (_demo(curve="smooth"), None),
    "open_circuit": (
        _demo(open_circuit_voltage_percent=(90.0, 100.0), open_circuit_current_percent=(0.5, 0.8)),
        None,
    ),
    "custom": (
        _demo(material="custom", nominal_flux_density_t=1.5, saturation_flux_density_t=1.9),
        None,
    ),
    "amorphous_geometry_fault": (
        _demo(material="amorphous", geometry=circuit_model.WindingGeometry(20.0, 0.5, 1.0)),
        circuit_model.Source("fault_level", fault_va=50e6, x_over_r=10.0),
    ),
}


@pytest.mark.parametrize("name", sorted(CASES))
def test_every_assumption_carries_a_source(name: str) -> None:
    npl, src = CASES[name]
    circ = circuit_model.equivalent_circuit(npl, src)
    assert circ.assumptions
    for a in circ.assumptions:
        assert isinstance(a.source, str), a
        assert a.source.strip(), a
        assert a.name
        assert a.unit, a
    names = {a.name for a in circ.assumptions}
    assert {"winding_resistance_ohm", "air_core_inductance_h", "source_inductance_h"} <= names


def test_material_defaults_cite_their_source_and_overrides_say_given() -> None:
    circ = circuit_model.equivalent_circuit(_demo())
    prov = {a.name: a.source for a in circ.assumptions}
    assert "from memory" in prov["saturation_flux_density_t"]
    over = circuit_model.equivalent_circuit(_demo(saturation_flux_density_t=1.95))
    prov = {a.name: (a.value, a.source) for a in over.assumptions}
    assert prov["saturation_flux_density_t"] == (1.95, "given")


def test_custom_material_needs_both_flux_densities() -> None:
    for kw in ({}, {"nominal_flux_density_t": 1.5}, {"saturation_flux_density_t": 1.9}):
        with pytest.raises(ParameterError) as info:
            circuit_model.equivalent_circuit(_demo(material="custom", **kw))
        assert info.value.parameter == "material"
    ok = circuit_model.equivalent_circuit(
        _demo(material="custom", nominal_flux_density_t=1.5, saturation_flux_density_t=1.9)
    )
    assert ok.knee_flux_wb == pytest.approx(1.9 / 1.5 * ok.nominal_flux_wb)


# ------------------------------------------------------------------ validation


@pytest.mark.parametrize(
    ("field", "value"),
    [
        ("rating_va", 0.0),
        ("rating_va", math.nan),
        ("phases", 2),
        ("frequency_hz", 0.0),
        ("line_voltage_v", -480.0),
        ("connection", "zigzag"),
        ("position", "middle"),
        ("curve", "spline"),
        ("impedance_percent", 150.0),
        ("x_over_r", -1.0),
        ("no_load_current_percent", 0.0),
        ("no_load_current_percent", math.inf),
        ("material", "unobtainium"),
        ("saturation_flux_density_t", 1.6),  # not above the 1.7 T default B_N
        ("nominal_flux_density_t", 5.0),
        ("knee_width_pu", 0.0),
    ],
)
def test_invalid_nameplate_values_name_the_field(field: str, value: object) -> None:
    npl = _demo(curve="smooth") if field == "knee_width_pu" else _demo()
    npl = dataclasses.replace(npl, **{field: value})
    with pytest.raises(ParameterError) as info:
        circuit_model.equivalent_circuit(npl)
    assert info.value.parameter == field
    assert field in str(info.value)


def test_no_load_current_too_large_for_the_air_core_inductance() -> None:
    # 50 % no-load current gives X_m = 2 pu, still above the 0.085 pu air-core reactance; a
    # geometry with a huge air-core inductance is what trips the check
    geom = circuit_model.WindingGeometry(turns=2000.0, mean_diameter_m=2.0, height_m=0.1)
    with pytest.raises(ParameterError) as info:
        circuit_model.equivalent_circuit(_demo(geometry=geom))
    assert info.value.parameter == "no_load_current_percent"


@pytest.mark.parametrize(
    ("source", "parameter"),
    [
        (circuit_model.Source("fault_level", fault_va=0.0, x_over_r=10.0), "source.fault_va"),
        (circuit_model.Source("fault_level", fault_va=50e6), "source.x_over_r"),
        (
            circuit_model.Source("impedance", resistance_ohm=-1.0, reactance_ohm=1.0),
            "source.resistance_ohm",
        ),
        (
            circuit_model.Source("impedance", resistance_ohm=0.0, reactance_ohm=math.nan),
            "source.reactance_ohm",
        ),
        (circuit_model.Source("battery"), "source.kind"),
    ],
)
def test_invalid_sources_name_the_field(source: circuit_model.Source, parameter: str) -> None:
    with pytest.raises(ParameterError) as info:
        circuit_model.equivalent_circuit(_demo(), source)
    assert info.value.parameter == parameter


@pytest.mark.parametrize(
    ("args", "parameter"),
    [
        ((0, 0.5, 1.0), "turns"),
        ((100, -0.5, 1.0), "mean_diameter_m"),
        ((100, 0.5, math.inf), "height_m"),
    ],
)
def test_invalid_geometry_names_the_field(args: tuple, parameter: str) -> None:
    with pytest.raises(ParameterError) as info:
        circuit_model.air_core_inductance_solenoid(*args)
    assert info.value.parameter == parameter


def test_circuit_from_si_values_and_validation() -> None:
    curve = magnetizing.two_slope(30.0, 1.2, 0.05)
    circ = circuit_model.circuit_from_si(1000.0, F_HZ, 0.0, 0.0, curve, rated_current_a=100.0)
    assert circ.nominal_flux_wb == pytest.approx(math.sqrt(2.0) * 1000.0 / OMEGA)
    assert (circ.air_core_inductance_h, circ.magnetizing_inductance_h, circ.knee_flux_wb) == (
        0.05,
        pytest.approx(30.0),
        1.2,
    )
    assert np.isnan(
        circuit_model.circuit_from_si(1000.0, F_HZ, 1.0, 0.0, curve).rated_line_current_a
    )
    for kwargs, parameter in (
        ({"voltage_rms_v": 0.0}, "voltage_rms_v"),
        ({"resistance_ohm": -1.0}, "resistance_ohm"),
        ({"inductance_h": math.nan}, "inductance_h"),
        ({"frequency_hz": 0.5}, "frequency_hz"),
    ):
        args = {
            "voltage_rms_v": 1000.0,
            "frequency_hz": F_HZ,
            "resistance_ohm": 1.0,
            "inductance_h": 0.0,
            "curve": curve,
        } | kwargs
        with pytest.raises(ParameterError) as info:
            circuit_model.circuit_from_si(**args)  # type: ignore[arg-type]
        assert info.value.parameter == parameter
