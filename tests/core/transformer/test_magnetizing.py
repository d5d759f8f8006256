"""Tests of core.transformer.magnetizing: curve values, the smooth knee's limits, the rms of a
sinusoidal flux, the open-circuit (rms) to peak conversion, and validation.

The independent references are scipy.integrate.quad of the defining integrals.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad

from core.errors import ParameterError
from core.transformer import magnetizing

# ------------------------------------------------------------------ two-slope and table


def test_two_slope_values_and_slopes() -> None:
    # i = lambda/L_m below the knee; knee current + (|lambda| - lambda_S)/L_air above; odd
    lm, lam_s, l_air = 50.0, 1.2, 0.1
    curve = magnetizing.two_slope(lm, lam_s, l_air)
    lam = np.array([0.0, 0.6, 1.2, 1.5, -1.5, -0.3])
    expected = np.array([0.0, 0.012, 0.024, 0.024 + 3.0, -(0.024 + 3.0), -0.006])
    np.testing.assert_allclose(curve.current(lam), expected, rtol=1e-14, atol=1e-17)
    np.testing.assert_allclose(
        curve.slope(np.array([0.3, 1.19, 1.21, -2.0])), [0.02, 0.02, 10.0, 10.0], rtol=1e-14
    )
    assert curve.unsaturated_inductance_h == pytest.approx(lm, rel=1e-14)
    assert curve.final_inductance_h == l_air


def test_table_interpolates_and_continues_with_the_final_slope() -> None:
    # by hand: segments (0,0)-(1,1)-(2,3)-(3,10), then slope 1/0.05 = 20 A per Wb-turn
    curve = magnetizing.from_table([1.0, 2.0, 3.0], [1.0, 3.0, 10.0], 0.05)
    lam = np.array([0.5, 1.5, 2.5, 4.0, -2.5])
    np.testing.assert_allclose(curve.current(lam), [0.5, 2.0, 6.5, 30.0, -6.5], rtol=1e-14)
    np.testing.assert_allclose(curve.slope(np.array([0.5, 1.5, 2.5, 4.0])), [1.0, 2.0, 7.0, 20.0])
    np.testing.assert_array_equal(curve.flux_wb, [0.0, 1.0, 2.0, 3.0])  # origin added


def test_piecewise_curve_is_odd_and_increasing() -> None:
    curve = magnetizing.from_table([1.0, 2.0, 3.0], [1.0, 3.0, 10.0], 0.05)
    lam = np.linspace(-6.0, 6.0, 2001)
    i = curve.current(lam)
    np.testing.assert_array_equal(curve.current(-lam), -i)
    assert np.all(np.diff(i) > 0.0)


# ------------------------------------------------------------------ smooth knee

LM, LAM_S, L_AIR, WIDTH = 100.0, 1.2, 0.1, 0.05


def _smooth() -> magnetizing.SmoothKneeCurve:
    return magnetizing.smooth_knee(LM, LAM_S, L_AIR, WIDTH)


def test_smooth_curve_follows_the_unsaturated_line_well_below_the_knee() -> None:
    # Below the knee the hyperbola's excess over its lower asymptote is about e^2/(4|s|), less
    # the shift that makes i(0) = 0: both ~5e-4 Wb-turn here, i.e. a current error of at most
    # (1/L_air) * 1e-3 = 1e-2 A on i = 1e-3..1e-2 A -- so the test uses the closed form of that
    # bound rather than a loose percentage.
    curve = _smooth()
    x = np.array([0.0, 0.1, 0.3, 0.6])
    s = x - LAM_S
    bound = (1.0 / L_AIR) * (WIDTH**2 / (4.0 * np.abs(s)) + WIDTH**2 / (4.0 * LAM_S))
    assert np.all(np.abs(curve.current(x) - x / LM) <= bound)
    assert float(curve.current(0.0)) == 0.0


def test_smooth_curve_tends_to_the_saturated_asymptote() -> None:
    # Far above the knee g(x) -> s - g0, so i -> x/L_m + (1/L_air - 1/L_m)(x - lambda_S - g0):
    # parallel to the two-slope line, lower by (1/L_air - 1/L_m)*g0 (g0 = shift that makes
    # i(0) = 0); the remaining gap shrinks like e^2/(4 s).
    curve = _smooth()
    two = magnetizing.two_slope(LM, LAM_S, L_AIR)
    g0 = 0.5 * (-LAM_S + math.hypot(LAM_S, WIDTH))
    b = 1.0 / L_AIR - 1.0 / LM
    for s in (10.0, 100.0, 1000.0):
        x = LAM_S + s
        gap = float(curve.current(x) - two.current(x)) + b * g0
        assert 0.0 < gap <= b * WIDTH**2 / (4.0 * s) * (1.0 + 1e-6)
    assert float(curve.slope(LAM_S + 1000.0)) == pytest.approx(1.0 / L_AIR, rel=1e-8)
    # at the origin the hyperbola's tail still adds b*(1 - lambda_S/sqrt(lambda_S^2 + e^2))/2,
    # at most b*e^2/(4*lambda_S^2), to the unsaturated slope
    d0 = float(curve.slope(0.0))
    assert 1.0 / LM < d0 <= 1.0 / LM + b * WIDTH**2 / (4.0 * LAM_S**2)


def test_smooth_slope_is_monotone_and_is_the_derivative_of_the_current() -> None:
    curve = _smooth()
    x = np.linspace(0.0, 3.0, 3001)
    d = curve.slope(x)
    assert np.all(np.diff(d) >= 0.0)
    # central differences (error ~ h^2 * i''' ~ 1e-7 relative with h = 1e-5)
    h = 1e-5
    numeric = (curve.current(x[1:] + h) - curve.current(x[1:] - h)) / (2.0 * h)
    np.testing.assert_allclose(d[1:], numeric, rtol=1e-5)
    np.testing.assert_array_equal(curve.current(-x), -curve.current(x))


# ------------------------------------------------------------------ rms of a sinusoidal flux


def _known_curve() -> magnetizing.PiecewiseLinearCurve:
    # an invented saturation curve, 5 segments with falling inductance (10, 8, 1, 0.25, 0.07 H),
    # then 0.02 H
    return magnetizing.from_table(
        [0.5, 0.9, 1.0, 1.1, 1.2], [0.05, 0.1, 0.2, 0.6, 2.0], final_inductance_h=0.02
    )


def _rms_by_quad(curve: magnetizing.PiecewiseLinearCurve, peak: float) -> float:
    # I^2 = (2/pi) * integral_0^{pi/2} i(peak * sin(theta))^2 d(theta), integrated by quad with
    # the kinks (breakpoints crossed) passed as points
    kinks = [math.asin(x / peak) for x in curve.flux_wb[1:] if x < peak]
    val, _ = quad(
        lambda th: float(curve.current(peak * math.sin(th))) ** 2,
        0.0,
        0.5 * math.pi,
        points=kinks or None,
        epsabs=0.0,
        epsrel=1e-13,
        limit=200,
    )
    return math.sqrt(2.0 / math.pi * val)


@pytest.mark.parametrize("peak", [0.3, 0.5, 0.95, 1.2, 1.5])
def test_rms_current_of_a_sinusoidal_flux_matches_quad(peak: float) -> None:
    # tolerance 1e-10: both sides are exact up to rounding and quad's 1e-13 target
    curve = _known_curve()
    got = magnetizing.rms_current_sinusoidal_flux(curve, peak)
    assert got == pytest.approx(_rms_by_quad(curve, peak), rel=1e-10)


def test_rms_on_the_linear_segment_is_crest_over_sqrt2() -> None:
    # limiting case: i = lambda/L sinusoidal, rms = (peak/L)/sqrt(2)
    curve = _known_curve()
    assert magnetizing.rms_current_sinusoidal_flux(curve, 0.4) == pytest.approx(
        0.4 / 10.0 / math.sqrt(2.0), rel=1e-14
    )


# ------------------------------------------------------------------ open-circuit conversion


def test_open_circuit_conversion_recovers_the_curve_that_produced_the_rms_points() -> None:
    # Generate the rms test points independently: at test voltage V_k the flux is
    # lambda_k sin(theta) with lambda_k = sqrt(2) V_k / omega, and the rms current is the quad
    # integral above. The point-by-point conversion (Neves & Dommel 1993, from memory) must
    # return the breakpoints and their currents. Tolerance 1e-6: quad's 1e-13 targets, then
    # errors grow a little through the recursion (each point depends on all lower ones).
    f_hz = 50.0
    omega = 2.0 * math.pi * f_hz
    curve = _known_curve()
    lam_k = curve.flux_wb[1:]
    v_rms = lam_k * omega / math.sqrt(2.0)
    i_rms = np.array([_rms_by_quad(curve, x) for x in lam_k])
    back = magnetizing.from_open_circuit_rms(v_rms, i_rms, f_hz, curve.final_inductance_h)
    np.testing.assert_allclose(back.flux_wb, curve.flux_wb, rtol=1e-12)
    np.testing.assert_allclose(back.current_a, curve.current_a, rtol=1e-6, atol=0.0)
    assert back.final_inductance_h == curve.final_inductance_h


def test_open_circuit_single_point_is_the_linear_curve() -> None:
    # one point: i_1 = sqrt(2) I_1 at lambda_1 = sqrt(2) V_1/omega (a linear core)
    back = magnetizing.from_open_circuit_rms([1000.0], [2.0], 60.0, 0.01)
    assert back.current_a[1] == pytest.approx(2.0 * math.sqrt(2.0), rel=1e-15)
    assert back.flux_wb[1] == pytest.approx(math.sqrt(2.0) * 1000.0 / (2 * math.pi * 60), rel=1e-15)


# ------------------------------------------------------------------ validation


@pytest.mark.parametrize(
    ("flux", "current", "final", "parameter"),
    [
        ([], [], 0.01, "flux_wb"),
        ([1.0, 1.0, 2.0], [1.0, 2.0, 3.0], 0.01, "flux_wb"),  # not increasing
        ([1.0, 2.0], [2.0, 1.0], 0.01, "current_a"),  # not increasing
        ([1.0, math.nan], [1.0, 2.0], 0.01, "flux_wb"),
        ([1.0, 2.0], [1.0, math.nan], 0.01, "current_a"),
        ([1.0, 2.0], [1.0], 0.01, "current_a"),  # unequal lengths
        ([-1.0, 2.0], [1.0, 2.0], 0.01, "flux_wb"),
        ([1.0, 2.0], [1.0, 2.0], 5.0, "final_inductance_h"),  # steeper than the last segment
        ([1.0, 2.0], [1.0, 2.0], math.inf, "final_inductance_h"),
        # a segment steeper than 1e9 H: 1e5 Wb-turn over the smallest positive current overflows
        ([1e5], [5e-324], 1e-9, "current_a"),
        ([1.0, 2.0], [1.0, 1.0 + 1e-12], 0.01, "current_a"),  # 1e12 H
    ],
)
def test_table_validation_names_the_parameter(
    flux: list[float], current: list[float], final: float, parameter: str
) -> None:
    with pytest.raises(ParameterError) as info:
        magnetizing.from_table(flux, current, final)
    assert info.value.parameter == parameter
    assert parameter in str(info.value)


@pytest.mark.parametrize(
    ("voltage", "current", "parameter"),
    [
        ([], [], "voltage_rms_v"),
        ([100.0, 100.0], [1.0, 2.0], "voltage_rms_v"),
        ([100.0, math.nan], [1.0, 2.0], "voltage_rms_v"),
        ([100.0, 200.0], [1.0, math.nan], "current_rms_a"),
        ([100.0, 200.0], [2.0, 1.0], "current_rms_a"),
        # the current must rise at least in proportion to the voltage: no increasing curve
        # gives twice the flux for 1 % more current
        ([100.0, 200.0], [1.0, 1.01], "current_rms_a[1]"),
    ],
)
def test_open_circuit_validation_names_the_parameter(
    voltage: list[float], current: list[float], parameter: str
) -> None:
    with pytest.raises(ParameterError) as info:
        magnetizing.from_open_circuit_rms(voltage, current, 60.0, 1e-3)
    assert info.value.parameter == parameter


@pytest.mark.parametrize(
    ("args", "parameter"),
    [
        ((-1.0, 1.0, 0.1), "unsaturated_inductance_h"),
        ((1.0, 0.0, 0.1), "knee_flux_wb"),
        ((1.0, 1.0, math.nan), "saturated_inductance_h"),
        ((1.0, 1.0, 2.0), "saturated_inductance_h"),  # air-core above the magnetising slope
    ],
)
def test_two_slope_validation_names_the_parameter(args: tuple, parameter: str) -> None:
    with pytest.raises(ParameterError) as info:
        magnetizing.two_slope(*args)
    assert info.value.parameter == parameter


def test_smooth_knee_validation_names_the_parameter() -> None:
    with pytest.raises(ParameterError) as info:
        magnetizing.smooth_knee(100.0, 1.2, 0.1, 1.5)  # wider than the knee flux
    assert info.value.parameter == "knee_width_wb"
    with pytest.raises(ParameterError) as info:
        magnetizing.smooth_knee(100.0, 1.2, 0.1, 0.0)
    assert info.value.parameter == "knee_width_wb"
