"""Tests of core.mitigation.point_on_wave: controlled closing and its tolerance window."""

from __future__ import annotations

import math

import numpy as np
import pytest

from core.energization import closed_form, energize
from core.errors import ParameterError
from core.mitigation import point_on_wave
from core.transformer import circuit_model


def _overlap(a: tuple[float, float], b: tuple[float, float]) -> bool:
    return a[0] <= b[1] and b[0] <= a[1]


def test_zero_residual_optimum_is_voltage_peak(
    single_phase: circuit_model.EquivalentCircuit,
) -> None:
    # fact of the trade: with no residual flux, close at the voltage peak
    out = point_on_wave.controlled_closing(single_phase, 0.0, errors_ms=[0.0])
    assert out.optimal_angle_deg[0] == pytest.approx(90.0, abs=1e-12)
    assert out.closing_angle_deg == pytest.approx(90.0, abs=1e-12)


@pytest.mark.parametrize("residual", [0.0, 0.6, -0.5])
def test_controlled_closing_magnetising_level_and_quarter_cycle(
    single_phase: circuit_model.EquivalentCircuit, residual: float
) -> None:
    c = single_phase
    quarter_ms = 250.0 / c.frequency_hz
    out = point_on_wave.controlled_closing(c, residual, errors_ms=[0.0, -quarter_ms, quarter_ms])
    assert out.optimal_angle_deg[0] == pytest.approx(math.degrees(math.acos(-residual)))
    assert abs(out.flux_offset_pu[0]) < 1e-12
    i0 = 0.008 * c.rated_line_current_a
    assert out.worst_peak_a[0] < 2.0 * math.sqrt(2.0) * i0
    # a quarter cycle off: the flux-swing centre is b_r + cos(alpha -+ 90) = b_r +- sin(alpha),
    # and the closed form gives sqrt(2) V/|Z| (|d| + 1 - b_S) = first_peak_wang(..., |d| - 1, b_S)
    r = c.winding_resistance_ohm + c.source_resistance_ohm
    L = c.air_core_inductance_h + c.source_inductance_h
    x = 2.0 * math.pi * c.frequency_hz * L
    b_s = c.knee_flux_wb / c.nominal_flux_wb
    alpha = math.acos(-residual)
    for k, shifted in ((1, alpha - math.pi / 2), (2, alpha + math.pi / 2)):
        d = float(closed_form.flux_offset_pu(residual, math.degrees(shifted)))
        wang = float(
            closed_form.first_peak_wang(
                c.winding_voltage_v, c.frequency_hz, L, r, abs(d) - 1.0, b_s
            )
        )
        if wang == 0.0:
            assert out.worst_peak_a[k] < 2.0 * math.sqrt(2.0) * i0
            continue
        # the closed form is exact at R = 0 (tests/core/energization/test_energize.py) up to the
        # knee current lambda_S/L_m; the resistance lowers the peak by at most
        # (1/L) * integral of R*|i| over the half cycle to it <= pi*(R/X)*I_pk
        knee = c.knee_flux_wb / c.magnetizing_inductance_h
        assert out.worst_peak_a[k] <= wang + knee
        assert out.worst_peak_a[k] >= wang * (1.0 - math.pi * r / x)
    # with no residual flux a quarter cycle off is a voltage zero: the full Wang peak, >> i0
    if residual == 0.0:
        assert out.worst_peak_a[1:].min() > 1000.0 * i0


def test_independent_poles_match_every_phase(three_phase: circuit_model.EquivalentCircuit) -> None:
    out = point_on_wave.controlled_closing(
        three_phase, [0.6, -0.3, -0.3], errors_ms=[0.0], strategy="independent"
    )
    np.testing.assert_allclose(out.flux_offset_pu, 0.0, atol=1e-12)
    assert out.worst_peak_a[0] < 2.0 * math.sqrt(2.0) * 0.008 * three_phase.rated_line_current_a
    # the simultaneous strategy matches only the winding with the largest residual
    sim = point_on_wave.controlled_closing(three_phase, [0.6, -0.3, -0.3], errors_ms=[0.0])
    assert abs(sim.flux_offset_pu[0]) < 1e-12
    assert np.all(np.abs(sim.flux_offset_pu[1:]) > 0.5)


def test_tolerance_window(single_phase: circuit_model.EquivalentCircuit) -> None:
    c = single_phase
    target = 5.0 * math.sqrt(2.0) * 0.008 * c.rated_line_current_a
    win = point_on_wave.tolerance_window(c, 0.6, target)
    assert win.bounded
    assert 0.0 < win.half_width_ms < 250.0 / c.frequency_hz
    assert win.half_width_ms == min(-win.early_limit_ms, win.late_limit_ms)
    inside = point_on_wave.controlled_closing(
        c, 0.6, errors_ms=np.linspace(-win.half_width_ms, win.half_width_ms, 41)
    )
    assert np.all(inside.worst_peak_a < target)
    # just outside the limiting side the target is reached (bisection resolution 1e-3 ms)
    edge = win.late_limit_ms if win.late_limit_ms <= -win.early_limit_ms else win.early_limit_ms
    outside = point_on_wave.controlled_closing(c, 0.6, errors_ms=[edge + math.copysign(2e-3, edge)])
    assert outside.worst_peak_a[0] >= target
    # a target below the magnetising current leaves no window
    none = point_on_wave.tolerance_window(c, 0.6, 1.0)
    assert none.half_width_ms == 0.0


def test_controlled_closing_errors(
    single_phase: circuit_model.EquivalentCircuit, three_phase: circuit_model.EquivalentCircuit
) -> None:
    with pytest.raises(ParameterError) as info:
        point_on_wave.controlled_closing(single_phase, 0.0, strategy="late")
    assert info.value.parameter == "strategy"
    with pytest.raises(ParameterError) as info:
        point_on_wave.controlled_closing(three_phase, [0.1, 0.2])
    assert info.value.parameter == "residual_flux_pu"
    with pytest.raises(ParameterError) as info:
        point_on_wave.controlled_closing(single_phase, 0.0, errors_ms=[100.0])
    assert info.value.parameter == "errors_ms"
    with pytest.raises(ParameterError) as info:
        point_on_wave.tolerance_window(single_phase, 0.0, -1.0)
    assert info.value.parameter == "target_a"


def test_delta_simultaneous_matches_the_winding_with_the_largest_residual() -> None:
    # a delta winding's line-to-line voltage leads its first phase by 30 degrees (ABC
    # sequence), so the aimed phase-A angle is arccos(-b_r) - 30 for winding AB
    delta = circuit_model.equivalent_circuit(
        circuit_model.Nameplate(
            rating_va=2.5e6, phases=3, frequency_hz=60, line_voltage_v=13.8e3,
            connection="delta", position="outer", impedance_percent=5.75, x_over_r=7,
            no_load_current_percent=0.8,
        )
    )  # fmt: skip
    out = point_on_wave.controlled_closing(delta, [0.7, -0.35, -0.35], errors_ms=[0.0])
    assert out.closing_angle_deg == pytest.approx(math.degrees(math.acos(-0.7)) - 30.0)
    assert abs(out.flux_offset_pu[0]) < 1e-12
    # the uncontrolled worst case is far larger than what the aimed closing leaves
    worst = energize.worst_closing_angle(delta, [0.7, -0.35, -0.35])
    assert out.worst_peak_a[0] < 0.5 * worst.peak_a
    with pytest.raises(ParameterError) as info:
        point_on_wave.controlled_closing(delta, [0.7, -0.35, -0.35], strategy="independent")
    assert info.value.parameter == "strategy"
