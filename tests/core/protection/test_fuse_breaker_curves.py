"""Tests of core.protection.fuse_breaker_curves: tabulated curves, the low-voltage breaker band and
the fuse I²t, with limiting cases, properties and explicit validation.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from core.errors import ParameterError
from core.protection import fuse_breaker_curves

# ------------------------------------------------------------------------------ tabulated curves

# invented demo table (not any maker's data): a fuse-like minimum-melt curve with a flat step
DEMO_TABLE = fuse_breaker_curves.TabulatedCurve(
    np.array([20.0, 30.0, 60.0, 100.0, 200.0, 400.0]),
    np.array([600.0, 60.0, 6.0, 6.0, 0.5, 0.02]),
)


def test_tabulated_exact_at_points_and_edges() -> None:
    np.testing.assert_array_equal(DEMO_TABLE.trip_time(DEMO_TABLE.current), DEMO_TABLE.time)
    t = DEMO_TABLE.trip_time([0.0, 19.999, 400.0, 1e6])
    assert np.isinf(t[0])
    assert np.isinf(t[1])
    assert t[2] == t[3] == 0.02  # above the last current: flat at the last time


def test_tabulated_is_log_log_linear_between_points() -> None:
    # geometric mean of two currents must give the geometric mean of their times
    i = math.sqrt(20.0 * 30.0)
    assert float(DEMO_TABLE.trip_time(i)) == pytest.approx(math.sqrt(600.0 * 60.0), rel=1e-12)


def test_tabulated_inverse() -> None:
    np.testing.assert_array_equal(DEMO_TABLE.current_for_time([600.0, 60.0]), [20.0, 30.0])
    # flat segment (60 A and 100 A both 6 s): the lowest current reaching 6 s
    assert float(DEMO_TABLE.current_for_time(6.0)) == 60.0
    assert float(DEMO_TABLE.current_for_time(1e4)) == 20.0  # slower than the table: first point
    assert np.isinf(DEMO_TABLE.current_for_time(0.01))  # faster than the last point: never
    t = np.array([300.0, 10.0, 1.0, 0.05])
    np.testing.assert_allclose(DEMO_TABLE.trip_time(DEMO_TABLE.current_for_time(t)), t, rtol=1e-12)


@st.composite
def tables(draw: st.DrawFn) -> fuse_breaker_curves.TabulatedCurve:
    n = draw(st.integers(2, 8))
    steps = draw(st.lists(st.floats(0.01, 3.0), min_size=n, max_size=n))
    drops = draw(st.lists(st.floats(0.0, 3.0), min_size=n - 1, max_size=n - 1))
    current = 10.0 * np.exp(np.cumsum(steps))
    time = 1e3 * np.exp(-np.concatenate(([0.0], np.cumsum(drops))))
    return fuse_breaker_curves.TabulatedCurve(current, time)


@given(table=tables(), x=st.lists(st.floats(0.0, 1e7), min_size=2, max_size=30))
@settings(max_examples=100, deadline=None)
def test_tabulated_exact_and_monotone_property(
    table: fuse_breaker_curves.TabulatedCurve, x: list[float]
) -> None:
    np.testing.assert_array_equal(table.trip_time(table.current), table.time)
    xs = np.sort(np.array(x))
    t = table.trip_time(xs)
    assert np.all(t[1:] <= t[:-1])  # non-increasing (inf <= inf holds)
    np.testing.assert_array_equal(t, [float(table.trip_time(v)) for v in xs])


# ------------------------------------------------------------------------------ LV breaker band


def test_lv_breaker_band() -> None:
    b = fuse_breaker_curves.LowVoltageBreaker(
        long_time_pickup=1000.0,
        long_time_delay=10.0,
        short_time_pickup=4000.0,
        short_time_delay=0.2,
        instantaneous_pickup=12000.0,
    )
    band = fuse_breaker_curves.lv_breaker_trip_band(
        [800.0, 950.0, 3000.0, 6000.0, 11500.0, 13500.0], b
    )
    lo, hi = band.minimum_time, band.maximum_time
    assert np.isinf(lo[0])
    assert np.isinf(hi[0])
    assert np.isfinite(lo[1])
    assert np.isinf(hi[1])
    # long time at 3 × pickup: 10·36/9 = 40 s, ±20 % (common-practice default tolerance)
    assert lo[2] == pytest.approx(32.0)
    assert hi[2] == pytest.approx(48.0)
    assert lo[3] == pytest.approx(0.16)
    assert hi[3] == pytest.approx(0.24)
    assert lo[4] == 0.0
    assert hi[4] == pytest.approx(0.24)
    assert lo[5] == 0.0
    assert hi[5] == pytest.approx(0.05)
    assert np.all(lo <= hi)


def test_lv_breaker_long_time_delay_is_time_at_six_times_pickup() -> None:
    b = fuse_breaker_curves.LowVoltageBreaker(500.0, 7.0, pickup_tolerance=0.0, time_tolerance=0.0)
    band = fuse_breaker_curves.lv_breaker_trip_band(3000.0, b)
    assert float(band.minimum_time) == pytest.approx(7.0, rel=1e-14)
    assert float(band.maximum_time) == pytest.approx(7.0, rel=1e-14)


def test_lv_breaker_short_time_i2t_ramp() -> None:
    b = fuse_breaker_curves.LowVoltageBreaker(
        1000.0, 10.0, 3000.0, 0.3, short_time_i2t=True, pickup_tolerance=0.0, time_tolerance=0.0
    )
    t = fuse_breaker_curves.lv_breaker_trip_band([5000.0, 10000.0, 20000.0], b).minimum_time
    # ramp 0.3·(10 000/I)² (reference 10 × pickup, common-practice default) meeting 0.3 s
    np.testing.assert_allclose(t, [0.3 * 4.0, 0.3, 0.3], rtol=1e-14)


# ------------------------------------------------------------------------------ fuse I²t


def test_i2t_of_a_constant_and_a_sine() -> None:
    dt = 1e-5
    np.testing.assert_allclose(
        fuse_breaker_curves.i2t(np.full(101, 10.0), dt)[-1], 100.0 * 1e-3, rtol=1e-12
    )
    # half cycle of 60 Hz sine, peak Ip: ∫ Ip² sin² = Ip²·T/4 (T = 1/60 s)
    t = np.arange(0.0, 1.0 / 120.0 + dt / 2, dt)
    i = 1000.0 * np.sin(2 * np.pi * 60.0 * t)
    assert fuse_breaker_curves.i2t(i, dt)[-1] == pytest.approx(1000.0**2 / 240.0, rel=1e-6)


def test_melting_i2t_check() -> None:
    # 1e4·t reaches 5 at 0.5 ms
    chk = fuse_breaker_curves.melting_i2t_check(np.full(11, 100.0), 1e-3, 5.0)
    assert chk.melts
    assert chk.ratio == pytest.approx(20.0)
    assert chk.time_to_melt == pytest.approx(5e-4, rel=1e-12)
    safe = fuse_breaker_curves.melting_i2t_check(np.full(11, 10.0), 1e-3, 5.0)
    assert not safe.melts
    assert np.isinf(safe.time_to_melt)


# ------------------------------------------------------------------------------ validation


@pytest.mark.parametrize(
    ("call", "parameter"),
    [
        (lambda: fuse_breaker_curves.TabulatedCurve(np.array([]), np.array([])), "current"),
        (lambda: fuse_breaker_curves.TabulatedCurve(np.array([10.0]), np.array([1.0])), "current"),
        (
            lambda: fuse_breaker_curves.TabulatedCurve(np.array([10.0, 5.0]), np.array([2.0, 1.0])),
            "current",
        ),
        (
            lambda: fuse_breaker_curves.TabulatedCurve(
                np.array([10.0, 10.0]), np.array([2.0, 1.0])
            ),
            "current",
        ),
        (
            lambda: fuse_breaker_curves.TabulatedCurve(np.array([5.0, 10.0]), np.array([1.0, 2.0])),
            "time",
        ),
        (
            lambda: fuse_breaker_curves.TabulatedCurve(
                np.array([5.0, 10.0]), np.array([1.0, np.nan])
            ),
            "time",
        ),
        (
            lambda: fuse_breaker_curves.TabulatedCurve(np.array([0.0, 10.0]), np.array([2.0, 1.0])),
            "current",
        ),
        (
            lambda: fuse_breaker_curves.TabulatedCurve(
                np.array([5.0, 10.0]), np.array([2.0, 1.0, 0.5])
            ),
            "time",
        ),
        (lambda: DEMO_TABLE.trip_time(-1.0), "current"),
        (lambda: DEMO_TABLE.current_for_time(float("nan")), "time"),
        (lambda: fuse_breaker_curves.LowVoltageBreaker(0.0, 10.0), "long_time_pickup"),
        (lambda: fuse_breaker_curves.LowVoltageBreaker(100.0, -1.0), "long_time_delay"),
        (
            lambda: fuse_breaker_curves.LowVoltageBreaker(100.0, 1.0, instantaneous_pickup=0.0),
            "instantaneous_pickup",
        ),
        (
            lambda: fuse_breaker_curves.LowVoltageBreaker(100.0, 1.0, pickup_tolerance=1.0),
            "pickup_tolerance",
        ),
        (lambda: fuse_breaker_curves.i2t(np.array([1.0, 2.0]), 0.0), "dt"),
        (lambda: fuse_breaker_curves.i2t(np.array([1.0]), 1e-3), "current_samples"),
        (
            lambda: fuse_breaker_curves.melting_i2t_check(np.array([1.0, 2.0]), 1e-3, 0.0),
            "minimum_melting_i2t",
        ),
    ],
)
def test_invalid_inputs_name_the_parameter(call: object, parameter: str) -> None:
    with pytest.raises(ParameterError) as err:
        call()  # type: ignore[operator]
    assert err.value.parameter == parameter
