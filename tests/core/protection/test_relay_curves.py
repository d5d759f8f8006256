"""Tests of core.protection.relay_curves: limiting cases, properties, integration against
independent references, and explicit validation. Published reference values are in
tests/references/test_standard_curves.py.
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

from core.errors import ParameterError
from core.protection import relay_curves

IEEE = ("moderately_inverse", "very_inverse", "extremely_inverse")
IEC = ("standard_inverse", "very_inverse", "extremely_inverse", "long_time_inverse")


# ------------------------------------------------------------------------------ relay equations


@pytest.mark.parametrize("curve", IEEE)
def test_ieee_no_operation_at_and_below_pickup(curve: relay_curves.IeeeCurve) -> None:
    # limiting case: M <= 1 is below pickup, the element never operates
    t = relay_curves.ieee_c37_112_trip_time([0.0, 0.5, 1.0], curve, 1.0)
    assert np.all(np.isinf(t))


@pytest.mark.parametrize("curve", IEEE)
def test_ieee_very_long_time_just_above_pickup(curve: relay_curves.IeeeCurve) -> None:
    # limiting case: M → 1+ makes M^p − 1 → 0, so t grows without bound yet stays finite
    t = relay_curves.ieee_c37_112_trip_time([1.0 + 1e-12, 1.0 + 1e-6, 1.01], curve, 1.0)
    assert np.all(np.isfinite(t))
    assert t[0] > t[1] > t[2] > 100.0


@pytest.mark.parametrize("curve", IEEE)
def test_ieee_tends_to_td_times_b_at_huge_multiples(curve: relay_curves.IeeeCurve) -> None:
    # limiting case: M → ∞ leaves t = TD·B (no overflow warning even at 1e308); the moderately
    # inverse term A/(M^0.02 − 1) is still 3.6e-8 s at 1e308, hence rtol 1e-6
    c = relay_curves.IEEE_C37_112[curve]
    t = relay_curves.ieee_c37_112_trip_time([1e6, 1e308], curve, 2.0)
    np.testing.assert_allclose(t[1], 2.0 * c.b, rtol=1e-6)
    assert t[0] >= t[1]


@pytest.mark.parametrize("curve", IEEE)
def test_ieee_time_dial_is_a_pure_multiplier(curve: relay_curves.IeeeCurve) -> None:
    m = np.array([1.5, 3.0, 10.0])
    one = relay_curves.ieee_c37_112_trip_time(m, curve, 1.0)
    np.testing.assert_allclose(
        relay_curves.ieee_c37_112_trip_time(m, curve, 3.5), 3.5 * one, rtol=1e-14
    )


@pytest.mark.parametrize("curve", IEEE)
def test_ieee_reset_limits(curve: relay_curves.IeeeCurve) -> None:
    # limiting cases: zero current resets in TD·tr; at and above pickup there is no reset
    c = relay_curves.IEEE_C37_112[curve]
    t = relay_curves.ieee_c37_112_reset_time([0.0, 1.0, 3.0], curve, 2.0)
    assert t[0] == pytest.approx(2.0 * c.tr, rel=1e-14)
    assert np.all(np.isinf(t[1:]))
    near = relay_curves.ieee_c37_112_reset_time([0.9, 0.99, 0.999], curve, 1.0)
    assert near[0] < near[1] < near[2]


@pytest.mark.parametrize("curve", IEC)
def test_iec_no_operation_and_scaling(curve: relay_curves.IecCurve) -> None:
    assert np.all(np.isinf(relay_curves.iec_60255_151_trip_time([0.0, 1.0], curve, 0.5)))
    m = np.array([1.2, 4.0, 20.0])
    np.testing.assert_allclose(
        relay_curves.iec_60255_151_trip_time(m, curve, 0.25),
        0.25 * relay_curves.iec_60255_151_trip_time(m, curve, 1.0),
        rtol=1e-14,
    )


@given(m=st.lists(st.floats(0.0, 1e4), min_size=1, max_size=20))
@settings(max_examples=50, deadline=None)
def test_relay_vector_equals_scalar_and_monotone(m: list[float]) -> None:
    for curve in IEEE:
        vec = relay_curves.ieee_c37_112_trip_time(m, curve, 1.0)
        scal = [float(relay_curves.ieee_c37_112_trip_time(x, curve, 1.0)) for x in m]
        np.testing.assert_array_equal(vec, scal)
        ordered = vec[np.argsort(m)]
        assert np.all(ordered[1:] <= ordered[:-1])  # non-increasing (inf <= inf holds)
    for icurve in IEC:
        ordered = relay_curves.iec_60255_151_trip_time(m, icurve, 1.0)[np.argsort(m)]
        assert np.all(ordered[1:] <= ordered[:-1])


def test_definite_time_and_instantaneous() -> None:
    t = relay_curves.definite_time_trip_time([0.0, 100.0, 100.0001, 1e5], 100.0, 0.3)
    np.testing.assert_array_equal(t, [np.inf, np.inf, 0.3, 0.3])
    inst = relay_curves.definite_time_trip_time([50.0, 150.0], 100.0, 0.0)
    np.testing.assert_array_equal(inst, [np.inf, 0.0])


# ------------------------------------------------------------------------------ cumulative trip


def _vi(i: np.ndarray) -> np.ndarray:
    return relay_curves.ieee_c37_112_trip_time(i / 100.0, "very_inverse", 1.0)


def _vi_reset(i: np.ndarray) -> np.ndarray:
    return relay_curves.ieee_c37_112_reset_time(i / 100.0, "very_inverse", 1.0)


@pytest.mark.parametrize("multiple", [1.5, 4.0, 20.0])
def test_constant_current_reproduces_the_curve(multiple: float) -> None:
    # limiting case: a constant current must trip at the curve's own time; the zero-order-hold
    # integration is exact for it, so only float rounding of the running sum remains (1e-9)
    expected = float(_vi(np.array(multiple * 100.0)))
    t = np.linspace(0.0, 2.0 * expected, 4001)
    res = relay_curves.cumulative_trip(t, np.full(t.shape, multiple * 100.0), _vi)
    assert res.trip_time == pytest.approx(expected, rel=1e-9)


def test_below_pickup_never_trips() -> None:
    t = np.linspace(0.0, 100.0, 101)
    res = relay_curves.cumulative_trip(t, np.full(t.shape, 99.0), _vi, _vi_reset)
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
        res = relay_curves.cumulative_trip(t, 100.0 * (1.5 + 15.0 * np.exp(-t / 0.3)), _vi)
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
    res = relay_curves.cumulative_trip(t, i, _vi, _vi_reset)
    assert res.trip_time == pytest.approx(expected, rel=1e-9)
    held = relay_curves.cumulative_trip(t, i, _vi)  # no reset function: θ holds, trips earlier
    assert held.trip_time == pytest.approx(1.5 + (1.0 - 0.5 / t5) * t5, rel=1e-9)
    instant = relay_curves.cumulative_trip(t, i, _vi, lambda x: np.zeros_like(x))
    assert instant.trip_time == pytest.approx(1.5 + t5, rel=1e-9)


def test_instantaneous_element_trips_at_first_sample_above() -> None:
    t = np.linspace(0.0, 1.0, 11)
    i = np.where(t >= 0.3, 2000.0, 10.0)
    res = relay_curves.cumulative_trip(
        t, i, lambda x: relay_curves.definite_time_trip_time(x, 1000.0, 0.0)
    )
    assert res.trip_time == pytest.approx(0.3)


# ------------------------------------------------------------------------------ validation


@pytest.mark.parametrize(
    ("call", "parameter"),
    [
        (lambda: relay_curves.ieee_c37_112_trip_time(2.0, "very_inverse", -1.0), "time_dial"),
        (
            lambda: relay_curves.ieee_c37_112_trip_time(2.0, "very_inverse", float("nan")),
            "time_dial",
        ),
        (
            lambda: relay_curves.ieee_c37_112_trip_time([2.0, float("nan")], "very_inverse", 1.0),
            "multiple",
        ),
        (lambda: relay_curves.ieee_c37_112_trip_time(-2.0, "very_inverse", 1.0), "multiple"),
        (lambda: relay_curves.ieee_c37_112_trip_time(2.0, "inverse", 1.0), "curve"),
        (lambda: relay_curves.ieee_c37_112_reset_time(0.5, "very_inverse", 0.0), "time_dial"),
        (lambda: relay_curves.iec_60255_151_trip_time(2.0, "standard_inverse", 0.0), "tms"),
        (lambda: relay_curves.iec_60255_151_trip_time(2.0, "moderately_inverse", 1.0), "curve"),
        (lambda: relay_curves.definite_time_trip_time(10.0, 0.0, 0.1), "pickup"),
        (lambda: relay_curves.definite_time_trip_time(10.0, 5.0, -0.1), "delay"),
        (lambda: relay_curves.definite_time_trip_time(float("inf"), 5.0, 0.1), "current"),
        (lambda: relay_curves.cumulative_trip([0.0, 0.0], [1.0, 1.0], _vi), "times"),
        (lambda: relay_curves.cumulative_trip([0.0, 1.0], [1.0], _vi), "current_rms"),
        (lambda: relay_curves.cumulative_trip([0.0, 1.0], [1.0, -1.0], _vi), "current_rms"),
        (
            lambda: relay_curves.cumulative_trip([0.0, 1.0], [1.0, 1.0], lambda i: i * np.nan),
            "trip_time_fn",
        ),
        (
            lambda: relay_curves.cumulative_trip([0.0, 1.0], [1.0, 1.0], _vi, lambda i: -i),
            "reset_time_fn",
        ),
        (
            lambda: relay_curves.cumulative_trip([0.0, 1.0], [1.0, 1.0], lambda i: [1.0, 2.0, 3.0]),
            "trip_time_fn",
        ),
    ],
)
def test_invalid_inputs_name_the_parameter(call: object, parameter: str) -> None:
    with pytest.raises(ParameterError) as err:
        call()  # type: ignore[operator]
    assert err.value.parameter == parameter


def test_core_modules_import_only_numpy_scipy_and_core() -> None:
    root = Path(__file__).resolve().parents[3] / "core" / "protection"
    for name in ("relay_curves.py", "fuse_breaker_curves.py", "damage_curves.py"):
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
