"""Tests of core.transformer.variants: the same transformer with another tap, material, rating or
winding."""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest

from core.energization import closed_form, energize
from core.errors import ParameterError
from core.transformer import circuit_model, variants

# 2.5 MVA 13.8 kV delta - 480Y/277 V unit (typical nameplate values, common practice)
UNIT = circuit_model.Nameplate(
    rating_va=2.5e6,
    phases=3,
    frequency_hz=60,
    line_voltage_v=13.8e3,
    connection="delta",
    position="outer",
    impedance_percent=5.75,
    x_over_r=7,
    no_load_current_percent=0.8,
)
# one phase of it, for single-phase checks
PHASE = replace(UNIT, rating_va=2.5e6 / 3, phases=1, line_voltage_v=7.97e3)


def test_retap_by_one_changes_nothing() -> None:
    c = circuit_model.equivalent_circuit(PHASE)
    r = variants.retap(c, 1.0)
    assert r.knee_flux_wb == c.knee_flux_wb
    assert r.air_core_inductance_h == c.air_core_inductance_h
    assert r.winding_resistance_ohm == c.winding_resistance_ohm
    lam = np.linspace(-3.0, 3.0, 61) * c.nominal_flux_wb
    np.testing.assert_array_equal(r.curve.current(lam), c.curve.current(lam))


@pytest.mark.parametrize("k", [0.9, 1.05, 1.2])
def test_retap_scales_the_core_point(k: float) -> None:
    # Ampere's law and Faraday's law (N*i = H*l, lambda = N*A*B): the core point (B, H) of the
    # original at (lambda, i) is the retapped winding's (k*lambda, i/k)
    c = circuit_model.equivalent_circuit(PHASE)
    r = variants.retap(c, k)
    lam = np.linspace(-3.0, 3.0, 61) * c.nominal_flux_wb
    np.testing.assert_allclose(r.curve.current(k * lam), c.curve.current(lam) / k, rtol=1e-12)
    assert r.air_core_inductance_h == pytest.approx(k * k * c.air_core_inductance_h, rel=1e-12)
    assert r.knee_flux_wb / r.nominal_flux_wb == pytest.approx(
        k * c.knee_flux_wb / c.nominal_flux_wb, rel=1e-12
    )
    assert r.nominal_flux_wb == c.nominal_flux_wb  # set by the applied voltage


def test_retap_equals_the_original_at_lower_volts_per_turn() -> None:
    # volts per turn (common practice): k times the turns at voltage V is the original winding
    # at V/k, with k times less current (equal ampere-turns). Exact with no resistance and no
    # source impedance, which this check uses; the residual flux density is the same, i.e.
    # k*b_r in per unit of each circuit's own nominal flux.
    k = 1.1
    c = replace(circuit_model.equivalent_circuit(PHASE), winding_resistance_ohm=0.0)
    tapped = variants.retap(c, k)
    v = c.winding_voltage_v / k
    low = replace(c, winding_voltage_v=v, line_voltage_v=v, nominal_flux_wb=c.nominal_flux_wb / k)
    b_r = 0.6
    a = energize.simulate(tapped, 0.0, k * b_r, duration_s=2 / 60, samples_per_cycle=256)
    b = energize.simulate(low, 0.0, k * b_r, duration_s=2 / 60, samples_per_cycle=256)
    scale = float(np.abs(b.line_current_a).max())
    np.testing.assert_allclose(a.line_current_a * k, b.line_current_a, atol=1e-9 * scale)


def test_retap_lowers_the_closed_form_peak() -> None:
    # Wang et al. (IEEE Trans. Power Delivery 23(2), 2008): I ~ (2 + b_r - b_s)/X_air, and a
    # tap with more turns raises b_s (x k) and X_air (x k^2)
    c = circuit_model.equivalent_circuit(PHASE)
    b_s = c.knee_flux_wb / c.nominal_flux_wb
    f, v = c.frequency_hz, c.winding_voltage_v
    before = closed_form.first_peak_wang(v, f, c.air_core_inductance_h, 0.0, 0.8, b_s)
    r = variants.retap(c, 1.05)
    after = closed_form.first_peak_wang(v, f, r.air_core_inductance_h, 0.0, 1.05 * 0.8, 1.05 * b_s)
    assert after < before
    assert after / before == pytest.approx((2 + 1.05 * (0.8 - b_s)) / (2 + 0.8 - b_s) / 1.05**2)


def test_retap_range() -> None:
    c = circuit_model.equivalent_circuit(PHASE)
    for bad in (0.5, 1.5, math.nan):
        with pytest.raises(ParameterError) as info:
            variants.retap(c, bad)
        assert info.value.parameter == "turns_ratio"


def test_next_standard_rating() -> None:
    # IEEE C57.12.00 preferred three-phase ratings (from memory): 2500 -> 3750, 112.5 -> 150
    assert variants.next_standard_rating_kva(2500, 3) == 3750
    assert variants.next_standard_rating_kva(112.5, 3) == 150
    assert variants.next_standard_rating_kva(2400, 3) == 2500
    assert variants.next_standard_rating_kva(167, 1) == 250
    assert variants.next_standard_rating_kva(2e5, 3) == pytest.approx(3e5)  # beyond the list
    with pytest.raises(ParameterError):
        variants.next_standard_rating_kva(0.0, 3)
    with pytest.raises(ParameterError):
        variants.next_standard_rating_kva(100.0, 2)


def test_rating_variant_scales_impedances() -> None:
    base = circuit_model.equivalent_circuit(UNIT)
    same = variants.with_rating(UNIT, None, UNIT.rating_va)
    assert same.air_core_inductance_h == pytest.approx(base.air_core_inductance_h, rel=1e-12)
    big = variants.with_rating(UNIT, None, 1.5 * UNIT.rating_va)
    # same per-unit data: ohms scale with 1/S, rated current with S
    assert big.air_core_inductance_h == pytest.approx(base.air_core_inductance_h / 1.5)
    assert big.rated_line_current_a == pytest.approx(1.5 * base.rated_line_current_a)


def test_material_variant_moves_the_knee() -> None:
    amorphous = variants.with_material(UNIT, None, "amorphous")
    # class values of core.transformer.circuit_model.MATERIALS (typical, from memory): B_S/B_N =
    # 1.56/1.35
    assert amorphous.knee_flux_wb / amorphous.nominal_flux_wb == pytest.approx(1.56 / 1.35)
    custom = variants.with_material(UNIT, None, "custom", 1.5, 2.0)
    assert custom.knee_flux_wb / custom.nominal_flux_wb == pytest.approx(2.0 / 1.5)
    with pytest.raises(ParameterError):
        variants.with_material(UNIT, None, "custom")


def test_other_winding_variant_and_notes() -> None:
    lv = variants.from_other_winding(UNIT, None, 480.0, "wye_grounded", "inner")
    direct = circuit_model.equivalent_circuit(
        replace(UNIT, line_voltage_v=480.0, connection="wye_grounded", position="inner")
    )
    assert lv.air_core_inductance_h == pytest.approx(direct.air_core_inductance_h, rel=1e-12)
    assert lv.rated_line_current_a == pytest.approx(2.5e6 / (math.sqrt(3) * 480.0))
    assert variants.variant_notes(UNIT) == ()
    with_geometry = replace(UNIT, geometry=circuit_model.WindingGeometry(500, 0.6, 1.2))
    assert len(variants.variant_notes(with_geometry)) == 1
