"""core.transformer.plausibility: the source-strength floor and the rating/voltage warnings."""

from __future__ import annotations

import math

import pytest
from scipy.optimize import minimize_scalar

from core.errors import ParameterError
from core.transformer import circuit_model, plausibility


def _max_resistive_power_w(v: float, r_s: float, x_s: float) -> float:
    """Largest power into a load resistance from v behind r_s + j x_s, found numerically from
    P(R_L) = v^2 R_L / ((r_s + R_L)^2 + x_s^2) (Ohm's law), independently of the closed form."""
    res = minimize_scalar(
        lambda rl: -(v * v * rl / ((r_s + rl) ** 2 + x_s**2)),
        bounds=(1e-9, 1e3 * (r_s + x_s)),
        method="bounded",
        options={"xatol": 1e-12},
    )
    return float(-res.fun)


@pytest.mark.parametrize(("r_s", "x_s"), [(0.0, 2.0), (0.5, 2.0), (1.0, 1.0), (2.0, 0.1)])
def test_a_source_delivers_at_most_half_its_short_circuit_power(r_s: float, x_s: float) -> None:
    v = 277.0  # per phase [V]
    s_sc_phase = v * v / math.hypot(r_s, x_s)
    p_max = _max_resistive_power_w(v, r_s, x_s)
    # the closed form of the docstring, V^2/(2(|Z| + R)), and the bound S_sc/2
    assert p_max == pytest.approx(v * v / (2 * (math.hypot(r_s, x_s) + r_s)), rel=1e-6)
    assert p_max <= s_sc_phase / 2 * (1 + 1e-9)


def test_source_floor_is_twice_the_rating() -> None:
    v = 480.0
    s_r = 45e3
    z_limit = v * v / (2 * s_r)  # |Z_s| at S_sc = 2 S_r [ohm]
    plausibility.check_source_strength(s_r, v, 0.0, z_limit)  # on the bound: accepted
    plausibility.check_source_strength(s_r, v, 0.3 * z_limit, 0.9 * z_limit)
    with pytest.raises(ParameterError) as err:
        plausibility.check_source_strength(s_r, v, 0.0, 1.01 * z_limit)
    assert err.value.parameter == "source.short_circuit_power_va"
    assert "90000 VA" in err.value.allowed
    assert f"{z_limit:.6g} ohm" in err.value.allowed


def test_the_reported_case_is_rejected_by_the_nameplate_conversion() -> None:
    # 45 kVA, 480 V delta, Z 3.5 %, X/R 1.2, no-load 3 %, on a 0.01 MVA source: the source is
    # 0.22 x the rating (S_sc/S_r), far below the floor of 2
    npl = circuit_model.Nameplate(
        rating_va=45e3, phases=3, frequency_hz=60.0, line_voltage_v=480.0, connection="delta",
        position="inner", impedance_percent=3.5, x_over_r=1.2, no_load_current_percent=3.0,
    )  # fmt: skip
    with pytest.raises(ParameterError) as err:
        circuit_model.equivalent_circuit(npl, circuit_model.Source("fault_level", 1e4, 10.0))
    assert err.value.value == pytest.approx(1e4, rel=1e-12)
    ok = circuit_model.equivalent_circuit(npl, circuit_model.Source("fault_level", 9e4, 10.0))
    assert ok.warnings == ()


@pytest.mark.parametrize(
    ("rating_va", "phases", "volts", "codes"),
    [
        # the reported case: 45 kVA with 480 V typed as kV: I_r = 45e3/(sqrt(3)*480e3) = 0.054 A
        (45e3, 3, 480e3, {"voltage_looks_like_volts", "implausible_rating_voltage"}),
        (45e3, 3, 480.0, set()),
        # 2500 kVA at "480 kV": 3 A, inside the current range, caught by the voltage level
        (2.5e6, 3, 480e3, {"voltage_looks_like_volts"}),
        (2.5e6, 3, 13.8e3, set()),
        # the smallest distribution unit at the top distribution voltage: 5 kVA single phase at
        # 34.5 kV, 0.145 A, is not flagged (the basis of the 0.1 A floor)
        (5e3, 1, 34.5e3, set()),
        # 2500 kVA at 13.8 V (kV typed as... a thousand times too low): 105 kA
        (2.5e6, 3, 13.8, {"implausible_rating_voltage"}),
        # 400 kV is a transmission level: no volts warning for a 400 MVA unit
        (400e6, 3, 400e3, set()),
    ],
)
def test_rating_voltage_warnings(
    rating_va: float, phases: int, volts: float, codes: set[str]
) -> None:
    found = plausibility.rating_voltage_warnings(rating_va, phases, volts)
    assert {c for c, _ in found} == codes


def test_rated_current_in_the_message() -> None:
    (_, (_, msg)) = plausibility.rating_voltage_warnings(45e3, 3, 480e3)
    assert f"{45e3 / (math.sqrt(3) * 480e3):.3g} A" in msg  # 0.0541 A, IEEE C57.12.00 base
