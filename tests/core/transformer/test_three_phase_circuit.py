"""core.transformer.three_phase_circuit: the three-phase SI circuit, its bases and its checks.

References: circuit laws (lambda_N = sqrt(2)*V/omega for a sinusoidal winding voltage; a wye's
line voltage is sqrt(3) x its phase voltage, a delta's line current sqrt(3) x its winding
current).
"""

from __future__ import annotations

import math

import pytest

from core.errors import ParameterError
from core.network import step_rule
from core.transformer import magnetizing
from core.transformer.three_phase_circuit import circuit_three_phase_from_si, curve_key_values

CURVE = magnetizing.two_slope(70.0, 60.0, 0.1)


@pytest.mark.parametrize("connection", ["wye_grounded", "wye", "delta"])
def test_bases_follow_circuit_laws(connection: str) -> None:
    c = circuit_three_phase_from_si(connection, 50.0, 1000.0, 0.5, CURVE, 30.0, 0.01, 1e-3)
    delta = connection == "delta"
    assert c.phases == 3
    assert c.connection == connection
    # lambda_N = sqrt(2)*V_w/omega (circuit laws): sqrt(2)*1000/(2*pi*50) = 4.50158 Wb-turn
    assert c.nominal_flux_wb == pytest.approx(4.501581580785531, rel=1e-14)
    assert c.line_voltage_v == pytest.approx(1000.0 if delta else 1000.0 * math.sqrt(3.0))
    assert c.rated_line_current_a == 30.0
    assert c.rated_winding_current_a == pytest.approx(30.0 / math.sqrt(3.0) if delta else 30.0)
    assert (c.winding_resistance_ohm, c.source_resistance_ohm, c.source_inductance_h) == (
        0.5,
        0.01,
        1e-3,
    )
    assert (c.magnetizing_inductance_h, c.air_core_inductance_h, c.knee_flux_wb) == (
        70.0,
        0.1,
        60.0,
    )
    assert c.curve is CURVE
    assert not c.warnings


def test_without_rating_the_base_is_unknown() -> None:
    c = circuit_three_phase_from_si("delta", 60.0, 480.0, 0.0, CURVE)
    assert math.isnan(c.rated_line_current_a)
    assert math.isnan(c.rated_winding_current_a)
    assert {a.name: a.source for a in c.assumptions}["rated_current_a"].startswith("not given")


def test_key_values_of_each_curve_kind() -> None:
    smooth = magnetizing.smooth_knee(70.0, 60.0, 0.1, 1.0)
    table = magnetizing.from_table([50.0, 60.0], [0.5, 2.0], 0.2)
    assert curve_key_values(CURVE) == (70.0, 0.1, 60.0)
    assert curve_key_values(smooth) == (70.0, 0.1, 60.0)
    # table: first segment 50/0.5 = 100 H, slope beyond 0.2 H, knee at the last point
    assert curve_key_values(table) == pytest.approx((100.0, 0.2, 60.0))


def test_knee_at_or_below_nominal_is_warned() -> None:
    # lambda_N of 30 kV at 60 Hz is 112.5 Wb-turn, above the 60 Wb-turn knee
    c = circuit_three_phase_from_si("wye", 60.0, 30e3, 1.0, CURVE)
    assert [code for code, _ in c.warnings] == ["knee_below_nominal_flux"]


@pytest.mark.parametrize(
    ("args", "name"),
    [
        (("zigzag", 60.0, 480.0, 0.1, CURVE), "connection"),
        (("delta", 0.5, 480.0, 0.1, CURVE), "frequency_hz"),
        (("delta", 60.0, 0.0, 0.1, CURVE), "winding_voltage_v"),
        (("delta", 60.0, 480.0, -0.1, CURVE), "winding_resistance_ohm"),
        (("delta", 60.0, 480.0, math.nan, CURVE), "winding_resistance_ohm"),
        (("delta", 60.0, 480.0, 0.1, CURVE, 0.0), "rated_current_a"),
        (("delta", 60.0, 480.0, 0.1, CURVE, 10.0, -1.0), "source_resistance_ohm"),
        (("delta", 60.0, 480.0, 0.1, CURVE, 10.0, 0.0, math.inf), "source_inductance_h"),
        (("delta", 60.0, 480.0, 0.1, "two_slope"), "magnetizing"),
    ],
)
def test_errors_name_the_parameter(args: tuple[object, ...], name: str) -> None:
    with pytest.raises(ParameterError) as err:
        circuit_three_phase_from_si(*args)  # type: ignore[arg-type]
    assert err.value.parameter == name


def test_a_loop_too_fast_to_simulate_names_the_resistance() -> None:
    # CURVE's saturated inductance 0.1 H: the step rule's shortest L/R at 50 Hz is
    # 4/(50*16384) = 4.8828e-6 s (four RK4 steps per tau at the most steps a cycle), so the
    # loop's resistance R_w + 2*R_s may be at most 0.1/4.8828e-6 = 20480 ohm
    with pytest.raises(ParameterError) as err:
        circuit_three_phase_from_si("wye_grounded", 50.0, 1000.0, 30_000.0, CURVE)
    assert err.value.parameter == "winding_resistance_ohm"
    assert err.value.value == 30_000.0
    assert err.value.allowed.startswith("at most 20480 ohm")
    # with R_s = 10 ohm, R_w may be 20460 ohm
    with pytest.raises(ParameterError) as err:
        circuit_three_phase_from_si("delta", 50.0, 1000.0, 20_470.0, CURVE, None, 10.0)
    assert err.value.allowed.startswith("at most 20460 ohm")
    # the source's resistance alone too much: 2*R_s > 20480 names the source
    with pytest.raises(ParameterError) as err:
        circuit_three_phase_from_si("wye", 50.0, 1000.0, 0.0, CURVE, None, 10_300.0)
    assert err.value.parameter == "source_resistance_ohm"
    assert err.value.allowed.startswith("at most 10240 ohm")
    # just inside: built, and the solver's step rule plans at most its 16384 steps a cycle
    c = circuit_three_phase_from_si("wye_grounded", 50.0, 1000.0, 20_400.0, CURVE)
    tau = c.air_core_inductance_h / c.winding_resistance_ohm
    spc, _, _ = step_rule(50.0, 0.02, 128, tau)
    assert 16_000 < spc <= 16_384
