"""Tests of core.protection.damage_curves: curve construction, limiting cases, properties and
validation.

Category boundaries and the thermal point are also checked in
tests/references/test_standard_curves.py. Every constant the module uses is from memory (IEEE Std
C57.109-1993 / C57.12.00 not at hand); the tests check the construction, not the standard.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from core.errors import ParameterError
from core.protection import damage_curves

I_R = 100.0  # rated current used throughout [A]

# IEEE Std C57.109-1993 through-fault duration table, liquid-immersed (values from memory):
# (multiple of rated current, seconds), read log-log between points; 1250/x² above 25 ×.
C57_109_TABLE = [(2.0, 1800.0), (3.0, 300.0), (4.75, 60.0), (6.3, 30.0), (11.3, 10.0), (25.0, 2.0)]


def c57_109_thermal(x: np.ndarray) -> np.ndarray:
    """The table read log-log (the reading of the standard's figure), 1250/x² above 25 ×."""
    lx, lt = np.log([p[0] for p in C57_109_TABLE]), np.log([p[1] for p in C57_109_TABLE])
    x = np.asarray(x, dtype=float)
    return np.where(x > 25.0, 1250.0 / x**2, np.exp(np.interp(np.log(x), lx, lt)))


def test_category_rating_below_category_i_is_refused() -> None:
    # C57.12.00 categories start at 5 kVA single-phase / 15 kVA three-phase (from memory)
    for phases, kva in ((1, 4.99), (3, 14.99)):
        with pytest.raises(ParameterError) as err:
            damage_curves.through_fault_category(kva, phases)
        assert err.value.parameter == "rating_kva"


def test_category_fractional_rating_falls_in_the_next_category() -> None:
    assert damage_curves.through_fault_category(500.5, 3) == "II"
    assert damage_curves.through_fault_category(1667.5, 1) == "III"


def test_dry_type_has_no_category_iv() -> None:
    # IEEE C57.12.59-2015 gives Categories I-III only (clause text read in a secondary copy)
    assert damage_curves.through_fault_category(30_000.0, 3, "dry") == "III"
    with pytest.raises(ParameterError) as err:
        damage_curves.through_fault_category(30_001.0, 3, "dry")
    assert err.value.parameter == "rating_kva"


def test_short_circuit_current() -> None:
    assert damage_curves.short_circuit_current_pu(0.05) == pytest.approx(20.0, rel=1e-14)
    assert damage_curves.short_circuit_current_pu(0.05, 0.05) == pytest.approx(10.0, rel=1e-14)


def test_category_i_ignores_source_impedance() -> None:
    # Category I is limited by the transformer impedance alone (C57.109 clause 4, from memory);
    # the source still limits what can flow, 1/(Z_T + Z_S) = 10 pu
    a = damage_curves.through_fault_damage_curve(300.0, 3, I_R, 0.05)
    b = damage_curves.through_fault_damage_curve(300.0, 3, I_R, 0.05, z_source_pu=0.05)
    probe = np.geomspace(2.0, 20.0, 50) * I_R
    np.testing.assert_array_equal(
        damage_curves.through_fault_damage_time(probe, 300.0, 3, I_R, 0.05),
        damage_curves.through_fault_damage_time(probe, 300.0, 3, I_R, 0.05, 0.05),
    )
    assert a.current[-1] == b.current[-1] == pytest.approx(20.0 * I_R)
    assert a.short_circuit_current == pytest.approx(20.0 * I_R)
    assert a.fault_current == pytest.approx(20.0 * I_R)
    assert b.fault_current == pytest.approx(10.0 * I_R)
    assert 10.0 * I_R in b.current  # the fault current is a point of the curve
    assert a.mechanical_from_current is None


def test_curve_is_nan_outside_its_range() -> None:
    # below 2 pu (from memory) is overload, above I_sc no through-fault can flow: undefined
    t = damage_curves.through_fault_damage_time([0.0, 1.99 * I_R, 20.01 * I_R], 300.0, 3, I_R, 0.05)
    assert np.all(np.isnan(t))
    ends = damage_curves.through_fault_damage_time([2.0 * I_R, 20.0 * I_R], 300.0, 3, I_R, 0.05)
    np.testing.assert_allclose(ends, c57_109_thermal(np.array([2.0, 20.0])), rtol=1e-12)
    assert ends[0] == pytest.approx(1800.0, rel=1e-12)  # the table's 2 × point, not 1250/4


@pytest.mark.parametrize(
    ("kva", "frequent", "fraction", "with_source"),
    [
        # Category II: I_sc = 1/Z_T, transformer impedance alone (C57.109, from memory)
        (2500.0, True, 0.7, False),  # frequent: from 70 % of I_sc (from memory)
        (2500.0, False, None, False),  # infrequent: thermal only (from memory)
        # Categories III and IV: I_sc = 1/(Z_T + Z_S) (C57.109, from memory)
        (10_000.0, True, 0.5, True),  # Category III frequent: from 50 % (from memory)
        (10_000.0, False, None, True),  # Category III infrequent: thermal only (from memory)
        (50_000.0, True, 0.5, True),  # Category IV: one curve from 50 % (from memory)
        (50_000.0, False, 0.5, True),
    ],
)
def test_mechanical_portion_by_category(
    kva: float, frequent: bool, fraction: float | None, with_source: bool
) -> None:
    z_t, z_s = 0.08, 0.02
    i_sc = 1.0 / (z_t + z_s) if with_source else 1.0 / z_t  # 10 pu or 12.5 pu
    c = damage_curves.through_fault_damage_curve(kva, 3, I_R, z_t, z_s, frequent)
    assert c.short_circuit_current == pytest.approx(i_sc * I_R, rel=1e-14)
    assert c.fault_current == pytest.approx(10.0 * I_R, rel=1e-14)  # what the source lets flow
    if fraction is None:
        assert c.mechanical_from_current is None
        assert c.mechanical_i2t is None
        np.testing.assert_allclose(c.time, c57_109_thermal(c.current / I_R), rtol=1e-12)
        return
    assert c.mechanical_from_current == pytest.approx(fraction * i_sc * I_R, rel=1e-14)
    k = 2.0 * i_sc**2  # K = 2·I_sc² pu²·s (from memory), i.e. 2 s at I_sc
    assert c.mechanical_i2t == pytest.approx(k * I_R**2, rel=1e-14)
    x = np.array([0.99 * fraction * i_sc, fraction * i_sc, i_sc])
    t = damage_curves.through_fault_damage_time(x * I_R, kva, 3, I_R, z_t, z_s, frequent)
    np.testing.assert_allclose(t, [c57_109_thermal(x[0]), k / x[1] ** 2, 2.0], rtol=1e-12)
    # the plotted curve holds the vertical drop: two points at the starting current
    j = int(np.flatnonzero(c.current == c.mechanical_from_current)[0])
    assert c.current[j + 1] == c.current[j]
    assert c.time[j] == pytest.approx(c57_109_thermal(fraction * i_sc), rel=1e-12)
    assert c.time[j + 1] == pytest.approx(k / (fraction * i_sc) ** 2, rel=1e-12)


def test_low_impedance_unit_mechanical_never_below_thermal() -> None:
    # I_sc = 1/0.03 = 33 pu > 25 pu gives K = 2·I_sc² > 1250: the thermal limit governs
    c = damage_curves.through_fault_damage_curve(50_000.0, 3, I_R, 0.03, frequent=True)
    np.testing.assert_allclose(c.time, c57_109_thermal(c.current / I_R), rtol=1e-12)
    assert np.all(np.diff(c.current) > 0.0)  # no vertical step drawn


def test_dry_type_limits() -> None:
    # C57.12.59-2015 clause 4 (read in a secondary copy): at most 25 pu; Categories II and III
    # stop at 100 s (longer durations: loading guide), i.e. start at √(1250/100) = 3.536 pu
    one = damage_curves.through_fault_damage_curve(112.5, 3, I_R, 0.02, insulation="dry")
    assert one.current[-1] == pytest.approx(25.0 * I_R, rel=1e-12)
    assert one.time[-1] == pytest.approx(2.0, rel=1e-12)
    two = damage_curves.through_fault_damage_curve(3000.0, 3, I_R, 0.0575, insulation="dry")
    assert two.current[0] == pytest.approx(np.sqrt(12.5) * I_R, rel=1e-12)
    assert two.time[0] == pytest.approx(100.0, rel=1e-12)
    assert np.isnan(
        damage_curves.through_fault_damage_time(3.0 * I_R, 3000.0, 3, I_R, 0.0575, 0, False, "dry")
    )


@given(
    z_t=st.floats(0.02, 0.15),
    z_s=st.floats(0.0, 0.1),
    kva=st.sampled_from([300.0, 2500.0, 10_000.0, 50_000.0]),
    frequent=st.booleans(),
    insulation=st.sampled_from(["liquid", "dry"]),
)
@settings(max_examples=60, deadline=None)
def test_curve_properties(
    z_t: float, z_s: float, kva: float, frequent: bool, insulation: damage_curves.Insulation
) -> None:
    if insulation == "dry" and kva > 30_000.0:
        kva = 10_000.0
    c = damage_curves.through_fault_damage_curve(
        kva, 3, I_R, z_t, z_s, frequent, insulation, points=40
    )
    assert np.all(np.diff(c.current) >= 0.0)  # increasing, repeated only at the step
    assert np.all(np.diff(c.time) <= 0.0)  # permitted time never rises with current
    assert np.all(np.isfinite(c.time))
    thermal = (
        1250.0 / (c.current / I_R) ** 2 if insulation == "dry" else c57_109_thermal(c.current / I_R)
    )
    assert np.all(c.time <= thermal * (1 + 1e-12))  # never above the thermal limit
    # vector equals scalar, and the time function agrees with the plotted curve off the step
    probe = c.current[c.current != (c.mechanical_from_current or -1.0)]
    vec = damage_curves.through_fault_damage_time(
        probe, kva, 3, I_R, z_t, z_s, frequent, insulation
    )
    scal = [
        float(
            damage_curves.through_fault_damage_time(p, kva, 3, I_R, z_t, z_s, frequent, insulation)
        )
        for p in probe
    ]
    np.testing.assert_array_equal(vec, scal)
    np.testing.assert_allclose(vec, c.time[c.current != (c.mechanical_from_current or -1.0)])


@pytest.mark.parametrize(
    ("kwargs", "parameter"),
    [
        ({"z_transformer_pu": 0.0}, "z_transformer_pu"),
        ({"z_transformer_pu": 1.5}, "z_transformer_pu"),
        ({"z_transformer_pu": float("nan")}, "z_transformer_pu"),
        ({"z_source_pu": -0.01}, "z_source_pu"),
        ({"z_source_pu": float("inf")}, "z_source_pu"),
        ({"z_transformer_pu": 0.4, "z_source_pu": 0.2}, "z_transformer_pu + z_source_pu"),
        ({"phases": 2}, "phases"),
        ({"rated_current": 0.0}, "rated_current"),
        ({"rating_kva": float("nan")}, "rating_kva"),
        ({"rating_kva": -100.0}, "rating_kva"),
        ({"frequent": "yes"}, "frequent"),
        ({"insulation": "oil"}, "insulation"),
        ({"points": 1}, "points"),
        ({"points": 2.5}, "points"),
    ],
)
def test_invalid_inputs_name_the_parameter(kwargs: dict[str, object], parameter: str) -> None:
    args: dict[str, object] = {
        "rating_kva": 2500.0,
        "phases": 3,
        "rated_current": I_R,
        "z_transformer_pu": 0.0575,
        "z_source_pu": 0.01,
        "frequent": True,
        "insulation": "liquid",
        "points": 20,
    }
    args.update(kwargs)
    with pytest.raises(ParameterError) as err:
        damage_curves.through_fault_damage_curve(**args)  # type: ignore[arg-type]
    assert err.value.parameter == parameter


@pytest.mark.parametrize("current", [[float("nan")], [-1.0], "abc"])
def test_invalid_current(current: object) -> None:
    with pytest.raises(ParameterError) as err:
        damage_curves.through_fault_damage_time(current, 2500.0, 3, I_R, 0.0575)  # type: ignore[arg-type]
    assert err.value.parameter == "current"
