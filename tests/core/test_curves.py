"""Tests of core.curves: limiting cases, properties, integration against independent references,
and explicit validation. Published reference values are in tests/references/test_standard_curves.py.
"""

from __future__ import annotations

import ast
import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import quad
from scipy.optimize import brentq

from core import curves
from core.errors import ParameterError

IEEE = ("moderately_inverse", "very_inverse", "extremely_inverse")
IEC = ("standard_inverse", "very_inverse", "extremely_inverse", "long_time_inverse")


# ------------------------------------------------------------------------------ relay equations


@pytest.mark.parametrize("curve", IEEE)
def test_ieee_no_operation_at_and_below_pickup(curve: curves.IeeeCurve) -> None:
    # limiting case: M <= 1 is below pickup, the element never operates
    t = curves.ieee_c37_112_trip_time([0.0, 0.5, 1.0], curve, 1.0)
    assert np.all(np.isinf(t))


@pytest.mark.parametrize("curve", IEEE)
def test_ieee_very_long_time_just_above_pickup(curve: curves.IeeeCurve) -> None:
    # limiting case: M → 1+ makes M^p − 1 → 0, so t grows without bound yet stays finite
    t = curves.ieee_c37_112_trip_time([1.0 + 1e-12, 1.0 + 1e-6, 1.01], curve, 1.0)
    assert np.all(np.isfinite(t))
    assert t[0] > t[1] > t[2] > 100.0


@pytest.mark.parametrize("curve", IEEE)
def test_ieee_tends_to_td_times_b_at_huge_multiples(curve: curves.IeeeCurve) -> None:
    # limiting case: M → ∞ leaves t = TD·B (no overflow warning even at 1e308); the moderately
    # inverse term A/(M^0.02 − 1) is still 3.6e-8 s at 1e308, hence rtol 1e-6
    c = curves.IEEE_C37_112[curve]
    t = curves.ieee_c37_112_trip_time([1e6, 1e308], curve, 2.0)
    np.testing.assert_allclose(t[1], 2.0 * c.b, rtol=1e-6)
    assert t[0] >= t[1]


@pytest.mark.parametrize("curve", IEEE)
def test_ieee_time_dial_is_a_pure_multiplier(curve: curves.IeeeCurve) -> None:
    m = np.array([1.5, 3.0, 10.0])
    one = curves.ieee_c37_112_trip_time(m, curve, 1.0)
    np.testing.assert_allclose(curves.ieee_c37_112_trip_time(m, curve, 3.5), 3.5 * one, rtol=1e-14)


@pytest.mark.parametrize("curve", IEEE)
def test_ieee_reset_limits(curve: curves.IeeeCurve) -> None:
    # limiting cases: zero current resets in TD·tr; at and above pickup there is no reset
    c = curves.IEEE_C37_112[curve]
    t = curves.ieee_c37_112_reset_time([0.0, 1.0, 3.0], curve, 2.0)
    assert t[0] == pytest.approx(2.0 * c.tr, rel=1e-14)
    assert np.all(np.isinf(t[1:]))
    near = curves.ieee_c37_112_reset_time([0.9, 0.99, 0.999], curve, 1.0)
    assert near[0] < near[1] < near[2]


@pytest.mark.parametrize("curve", IEC)
def test_iec_no_operation_and_scaling(curve: curves.IecCurve) -> None:
    assert np.all(np.isinf(curves.iec_60255_151_trip_time([0.0, 1.0], curve, 0.5)))
    m = np.array([1.2, 4.0, 20.0])
    np.testing.assert_allclose(
        curves.iec_60255_151_trip_time(m, curve, 0.25),
        0.25 * curves.iec_60255_151_trip_time(m, curve, 1.0),
        rtol=1e-14,
    )


@given(m=st.lists(st.floats(0.0, 1e4), min_size=1, max_size=20))
@settings(max_examples=50, deadline=None)
def test_relay_vector_equals_scalar_and_monotone(m: list[float]) -> None:
    for curve in IEEE:
        vec = curves.ieee_c37_112_trip_time(m, curve, 1.0)
        scal = [float(curves.ieee_c37_112_trip_time(x, curve, 1.0)) for x in m]
        np.testing.assert_array_equal(vec, scal)
        ordered = vec[np.argsort(m)]
        assert np.all(ordered[1:] <= ordered[:-1])  # non-increasing (inf <= inf holds)
    for icurve in IEC:
        ordered = curves.iec_60255_151_trip_time(m, icurve, 1.0)[np.argsort(m)]
        assert np.all(ordered[1:] <= ordered[:-1])


def test_definite_time_and_instantaneous() -> None:
    t = curves.definite_time_trip_time([0.0, 100.0, 100.0001, 1e5], 100.0, 0.3)
    np.testing.assert_array_equal(t, [np.inf, np.inf, 0.3, 0.3])
    inst = curves.definite_time_trip_time([50.0, 150.0], 100.0, 0.0)
    np.testing.assert_array_equal(inst, [np.inf, 0.0])


# ------------------------------------------------------------------------------ tabulated curves

# invented demo table (not any maker's data): a fuse-like minimum-melt curve with a flat step
DEMO_TABLE = curves.TabulatedCurve(
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
def tables(draw: st.DrawFn) -> curves.TabulatedCurve:
    n = draw(st.integers(2, 8))
    steps = draw(st.lists(st.floats(0.01, 3.0), min_size=n, max_size=n))
    drops = draw(st.lists(st.floats(0.0, 3.0), min_size=n - 1, max_size=n - 1))
    current = 10.0 * np.exp(np.cumsum(steps))
    time = 1e3 * np.exp(-np.concatenate(([0.0], np.cumsum(drops))))
    return curves.TabulatedCurve(current, time)


@given(table=tables(), x=st.lists(st.floats(0.0, 1e7), min_size=2, max_size=30))
@settings(max_examples=100, deadline=None)
def test_tabulated_exact_and_monotone_property(
    table: curves.TabulatedCurve, x: list[float]
) -> None:
    np.testing.assert_array_equal(table.trip_time(table.current), table.time)
    xs = np.sort(np.array(x))
    t = table.trip_time(xs)
    assert np.all(t[1:] <= t[:-1])  # non-increasing (inf <= inf holds)
    np.testing.assert_array_equal(t, [float(table.trip_time(v)) for v in xs])


# ------------------------------------------------------------------------------ LV breaker band


def test_lv_breaker_band() -> None:
    b = curves.LowVoltageBreaker(
        long_time_pickup=1000.0,
        long_time_delay=10.0,
        short_time_pickup=4000.0,
        short_time_delay=0.2,
        instantaneous_pickup=12000.0,
    )
    band = curves.lv_breaker_trip_band([800.0, 950.0, 3000.0, 6000.0, 11500.0, 13500.0], b)
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
    b = curves.LowVoltageBreaker(500.0, 7.0, pickup_tolerance=0.0, time_tolerance=0.0)
    band = curves.lv_breaker_trip_band(3000.0, b)
    assert float(band.minimum_time) == pytest.approx(7.0, rel=1e-14)
    assert float(band.maximum_time) == pytest.approx(7.0, rel=1e-14)


def test_lv_breaker_short_time_i2t_ramp() -> None:
    b = curves.LowVoltageBreaker(
        1000.0, 10.0, 3000.0, 0.3, short_time_i2t=True, pickup_tolerance=0.0, time_tolerance=0.0
    )
    t = curves.lv_breaker_trip_band([5000.0, 10000.0, 20000.0], b).minimum_time
    # ramp 0.3·(10 000/I)² (reference 10 × pickup, common-practice default) meeting 0.3 s
    np.testing.assert_allclose(t, [0.3 * 4.0, 0.3, 0.3], rtol=1e-14)


# ------------------------------------------------------------------------------ fuse I²t


def test_i2t_of_a_constant_and_a_sine() -> None:
    dt = 1e-5
    np.testing.assert_allclose(curves.i2t(np.full(101, 10.0), dt)[-1], 100.0 * 1e-3, rtol=1e-12)
    # half cycle of 60 Hz sine, peak Ip: ∫ Ip² sin² = Ip²·T/4 (T = 1/60 s)
    t = np.arange(0.0, 1.0 / 120.0 + dt / 2, dt)
    i = 1000.0 * np.sin(2 * np.pi * 60.0 * t)
    assert curves.i2t(i, dt)[-1] == pytest.approx(1000.0**2 / 240.0, rel=1e-6)


def test_melting_i2t_check() -> None:
    chk = curves.melting_i2t_check(np.full(11, 100.0), 1e-3, 5.0)  # 1e4·t reaches 5 at 0.5 ms
    assert chk.melts
    assert chk.ratio == pytest.approx(20.0)
    assert chk.time_to_melt == pytest.approx(5e-4, rel=1e-12)
    safe = curves.melting_i2t_check(np.full(11, 10.0), 1e-3, 5.0)
    assert not safe.melts
    assert np.isinf(safe.time_to_melt)


# ------------------------------------------------------------------------------ cumulative trip


def _vi(i: np.ndarray) -> np.ndarray:
    return curves.ieee_c37_112_trip_time(i / 100.0, "very_inverse", 1.0)


def _vi_reset(i: np.ndarray) -> np.ndarray:
    return curves.ieee_c37_112_reset_time(i / 100.0, "very_inverse", 1.0)


@pytest.mark.parametrize("multiple", [1.5, 4.0, 20.0])
def test_constant_current_reproduces_the_curve(multiple: float) -> None:
    # limiting case: a constant current must trip at the curve's own time; the zero-order-hold
    # integration is exact for it, so only float rounding of the running sum remains (1e-9)
    expected = float(_vi(np.array(multiple * 100.0)))
    t = np.linspace(0.0, 2.0 * expected, 4001)
    res = curves.cumulative_trip(t, np.full(t.shape, multiple * 100.0), _vi)
    assert res.trip_time == pytest.approx(expected, rel=1e-9)


def test_below_pickup_never_trips() -> None:
    t = np.linspace(0.0, 100.0, 101)
    res = curves.cumulative_trip(t, np.full(t.shape, 99.0), _vi, _vi_reset)
    assert np.isinf(res.trip_time)
    assert np.all(res.theta == 0.0)


def test_decaying_current_against_quad() -> None:
    # synthetic inrush-like rms envelope I(t) = 100 A·(1.5 + 15·e^(−t/0.3)) on a VI relay (TD 1,
    # 100 A pickup); the independent reference solves ∫₀ᵀ dt/t(I(t)) = 1 with quad and brentq,
    # the formula written out here (C37.112 VI constants from memory)
    def rate(tt: float) -> float:
        m = 1.5 + 15.0 * math.exp(-tt / 0.3)
        return 1.0 / (19.61 / (m * m - 1.0) + 0.491)

    t_ref = brentq(lambda T: quad(rate, 0.0, T, limit=200)[0] - 1.0, 1e-3, 50.0, xtol=1e-12)
    errors = []
    for dt in (1e-3, 5e-4):
        t = np.arange(0.0, 2.0 * t_ref, dt)
        res = curves.cumulative_trip(t, 100.0 * (1.5 + 15.0 * np.exp(-t / 0.3)), _vi)
        # a left-held, monotonically falling rate over-counts θ by at most dt·(r(0) − r(T))
        # (telescoping sum), so it trips early by at most that over r(T), plus one step
        bound = dt * (rate(0.0) - rate(t_ref)) / rate(t_ref) + dt
        assert res.trip_time <= t_ref
        assert t_ref - res.trip_time <= bound
        errors.append(t_ref - res.trip_time)
    # first order in the step: halving dt halves the error (within 5 %)
    assert errors[0] / errors[1] == pytest.approx(2.0, rel=0.05)


def test_reset_against_hand_integration_of_steps() -> None:
    # 0.5 s at 5 × pickup, 1 s at 0.5 × pickup (disk travels back), then 5 × pickup again.
    # θ1 = 0.5/t(5); θ2 = max(0, θ1 − 1/t_r(0.5)); trip at 1.5 + (1 − θ2)·t(5).
    t5 = 19.61 / 24.0 + 0.491  # VI, TD 1 (constants from memory, C37.112 Table 1)
    tr05 = 21.6 / (1.0 - 0.25)
    theta2 = max(0.0, 0.5 / t5 - 1.0 / tr05)
    expected = 1.5 + (1.0 - theta2) * t5
    t = np.round(np.arange(0.0, 4.0, 1e-3), 12)
    i = np.where((t >= 0.5) & (t < 1.5), 50.0, 500.0)
    res = curves.cumulative_trip(t, i, _vi, _vi_reset)
    assert res.trip_time == pytest.approx(expected, rel=1e-9)
    held = curves.cumulative_trip(t, i, _vi)  # no reset function: θ holds, trips earlier
    assert held.trip_time == pytest.approx(1.5 + (1.0 - 0.5 / t5) * t5, rel=1e-9)
    instant = curves.cumulative_trip(t, i, _vi, lambda x: np.zeros_like(x))
    assert instant.trip_time == pytest.approx(1.5 + t5, rel=1e-9)


def test_instantaneous_element_trips_at_first_sample_above() -> None:
    t = np.linspace(0.0, 1.0, 11)
    i = np.where(t >= 0.3, 2000.0, 10.0)
    res = curves.cumulative_trip(t, i, lambda x: curves.definite_time_trip_time(x, 1000.0, 0.0))
    assert res.trip_time == pytest.approx(0.3)


# ------------------------------------------------------------------------------ validation


@pytest.mark.parametrize(
    ("call", "parameter"),
    [
        (lambda: curves.ieee_c37_112_trip_time(2.0, "very_inverse", -1.0), "time_dial"),
        (lambda: curves.ieee_c37_112_trip_time(2.0, "very_inverse", float("nan")), "time_dial"),
        (
            lambda: curves.ieee_c37_112_trip_time([2.0, float("nan")], "very_inverse", 1.0),
            "multiple",
        ),
        (lambda: curves.ieee_c37_112_trip_time(-2.0, "very_inverse", 1.0), "multiple"),
        (lambda: curves.ieee_c37_112_trip_time(2.0, "inverse", 1.0), "curve"),
        (lambda: curves.ieee_c37_112_reset_time(0.5, "very_inverse", 0.0), "time_dial"),
        (lambda: curves.iec_60255_151_trip_time(2.0, "standard_inverse", 0.0), "tms"),
        (lambda: curves.iec_60255_151_trip_time(2.0, "moderately_inverse", 1.0), "curve"),
        (lambda: curves.definite_time_trip_time(10.0, 0.0, 0.1), "pickup"),
        (lambda: curves.definite_time_trip_time(10.0, 5.0, -0.1), "delay"),
        (lambda: curves.definite_time_trip_time(float("inf"), 5.0, 0.1), "current"),
        (lambda: curves.TabulatedCurve(np.array([]), np.array([])), "current"),
        (lambda: curves.TabulatedCurve(np.array([10.0]), np.array([1.0])), "current"),
        (lambda: curves.TabulatedCurve(np.array([10.0, 5.0]), np.array([2.0, 1.0])), "current"),
        (lambda: curves.TabulatedCurve(np.array([10.0, 10.0]), np.array([2.0, 1.0])), "current"),
        (lambda: curves.TabulatedCurve(np.array([5.0, 10.0]), np.array([1.0, 2.0])), "time"),
        (lambda: curves.TabulatedCurve(np.array([5.0, 10.0]), np.array([1.0, np.nan])), "time"),
        (lambda: curves.TabulatedCurve(np.array([0.0, 10.0]), np.array([2.0, 1.0])), "current"),
        (lambda: curves.TabulatedCurve(np.array([5.0, 10.0]), np.array([2.0, 1.0, 0.5])), "time"),
        (lambda: DEMO_TABLE.trip_time(-1.0), "current"),
        (lambda: DEMO_TABLE.current_for_time(float("nan")), "time"),
        (lambda: curves.LowVoltageBreaker(0.0, 10.0), "long_time_pickup"),
        (lambda: curves.LowVoltageBreaker(100.0, -1.0), "long_time_delay"),
        (
            lambda: curves.LowVoltageBreaker(100.0, 1.0, instantaneous_pickup=0.0),
            "instantaneous_pickup",
        ),
        (lambda: curves.LowVoltageBreaker(100.0, 1.0, pickup_tolerance=1.0), "pickup_tolerance"),
        (lambda: curves.i2t(np.array([1.0, 2.0]), 0.0), "dt"),
        (lambda: curves.i2t(np.array([1.0]), 1e-3), "current_samples"),
        (lambda: curves.melting_i2t_check(np.array([1.0, 2.0]), 1e-3, 0.0), "minimum_melting_i2t"),
        (lambda: curves.cumulative_trip([0.0, 0.0], [1.0, 1.0], _vi), "times"),
        (lambda: curves.cumulative_trip([0.0, 1.0], [1.0], _vi), "current_rms"),
        (lambda: curves.cumulative_trip([0.0, 1.0], [1.0, -1.0], _vi), "current_rms"),
        (
            lambda: curves.cumulative_trip([0.0, 1.0], [1.0, 1.0], lambda i: i * np.nan),
            "trip_time_fn",
        ),
        (
            lambda: curves.cumulative_trip([0.0, 1.0], [1.0, 1.0], _vi, lambda i: -i),
            "reset_time_fn",
        ),
        (
            lambda: curves.cumulative_trip([0.0, 1.0], [1.0, 1.0], lambda i: [1.0, 2.0, 3.0]),
            "trip_time_fn",
        ),
    ],
)
def test_invalid_inputs_name_the_parameter(call: object, parameter: str) -> None:
    with pytest.raises(ParameterError) as err:
        call()  # type: ignore[operator]
    assert err.value.parameter == parameter


def test_core_modules_import_only_numpy_scipy_and_core() -> None:
    root = Path(__file__).resolve().parents[2] / "core"
    for name in ("curves.py", "damage.py"):
        tree = ast.parse((root / name).read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.Import):
                mods = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom):
                mods = [node.module or ""]
            else:
                continue
            for mod in mods:
                top = mod.split(".")[0]
                assert top in {
                    "numpy",
                    "scipy",
                    "core",
                    "__future__",
                    "collections",
                    "dataclasses",
                    "types",
                    "typing",
                    "math",
                }, (name, mod)
