"""Tests of core.protection.device_operation: devices against a synthetic inrush and against the
damage curve.

References are computed independently inside the tests (quadrature of the analytic current, a
plain-loop integration of the relay equation written out here, root finding on the melt curve);
limiting cases carry one comment each. All device data is invented, not any maker's.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq

from core.errors import ParameterError
from core.protection import (
    coordination,
    damage_curves,
    device_operation,
    fuse_breaker_curves,
    protection_study,
)

F = 60.0  # power frequency of the synthetic records [Hz]
T = 1.0 / F
W = 2.0 * math.pi * F


def unipolar(t: np.ndarray | float, amplitude: float, tau: float) -> np.ndarray:
    """Inrush-like current: a decaying unipolar lobe a·e^(−t/τ)·(1 − cos ωt) [A]."""
    return np.asarray(amplitude * np.exp(-np.asarray(t) / tau) * (1.0 - np.cos(W * t)))


def record(amplitude: float, tau: float, duration: float, spc: int = 64) -> tuple[np.ndarray, ...]:
    t = np.arange(round(duration * F * spc) + 1) / (F * spc)
    return t, unipolar(t, amplitude, tau)


def table(points: list[tuple[float, float]]) -> fuse_breaker_curves.TabulatedCurve:
    cur, tim = zip(*points, strict=True)
    return fuse_breaker_curves.TabulatedCurve(np.array(cur), np.array(tim))


# -------------------------------------------------------------------------- inrush derivation


def test_sinusoid_limits() -> None:
    # limiting case: a steady sine of rms I has I_eq = I at every half cycle, sliding one-cycle
    # rms = I once a whole cycle has elapsed, peak √2·I, half-cycle rms I and I²t = I²·T/2
    t = np.arange(20 * 128 + 1) / (F * 128)
    i_rms = 100.0
    inr = device_operation.inrush_from_waveform(t, math.sqrt(2) * i_rms * np.sin(W * t), F)
    assert inr.eq_time_s[0] == pytest.approx(T / 2)
    assert inr.eq_time_s[-1] == t[-1]
    whole = np.isclose(inr.eq_time_s * 2 * F, np.round(inr.eq_time_s * 2 * F), atol=1e-9)
    np.testing.assert_allclose(inr.eq_current_a[0, whole], i_rms, rtol=1e-6)
    np.testing.assert_allclose(inr.rms_current_a[0, t >= T], i_rms, rtol=1e-6)
    assert inr.peak is not None
    assert inr.half_cycle_rms is not None
    assert inr.window_i2t is not None
    assert inr.peak.value[0] == pytest.approx(math.sqrt(2) * i_rms, rel=1e-5)  # parabola
    assert inr.half_cycle_rms.value[0] == pytest.approx(i_rms, rel=1e-4)
    assert inr.window_i2t.value[0] == pytest.approx(i_rms**2 * T / 2, rel=1e-4)


def test_sliding_rms_against_quadrature() -> None:
    # independent reference: the one-cycle rms by adaptive quadrature of the analytic current
    # (zero before t = 0). Trapezoid error at 64 samples per cycle: below 2e-5 over a whole
    # cycle; 1e-3 over the partial first-cycle window at k = 40, where i² rises as t⁴
    t, i = record(1000.0, 0.3, 0.3)
    inr = device_operation.inrush_from_waveform(t, i, F)
    for k, rtol in ((40, 1e-3), (64, 2e-5), (100, 2e-5), (300, 2e-5), (t.size - 1, 2e-5)):
        e, _ = quad(lambda x: unipolar(x, 1000.0, 0.3) ** 2, max(0.0, t[k] - T), t[k], limit=200)
        assert inr.rms_current_a[0, k] == pytest.approx(math.sqrt(e / T), rel=rtol)


def test_table_interval_rms_is_exact_for_constant_and_rejects_decreasing_energy() -> None:
    inr = device_operation.inrush_from_table([0.1, 1.0, 10.0], [50.0, 50.0, 50.0])
    np.testing.assert_allclose(inr.rms_current_a, 50.0, rtol=1e-14)  # constant stays constant
    with pytest.raises(ParameterError, match="eq_current_a"):
        device_operation.inrush_from_table([1.0, 2.0], [100.0, 10.0])  # 2·10² < 1·100²


@pytest.mark.parametrize(
    ("args", "name"),
    [
        ((np.array([0.0, 1e-3, 3e-3, 4e-3]), np.ones(4), F), "time_s"),  # not uniform
        ((np.arange(10) * 1e-4, np.ones(10), F), "time_s"),  # shorter than a cycle
        ((np.arange(300) / 7680.0, np.ones(299), F), "current_a"),  # shapes differ
        ((np.arange(300) / 7680.0, np.full(300, np.nan), F), "current_a"),
    ],
)
def test_waveform_validation(args: tuple[object, object, float], name: str) -> None:
    with pytest.raises(ParameterError) as err:
        device_operation.inrush_from_waveform(*args)  # type: ignore[arg-type]
    assert err.value.parameter == name


# ------------------------------------------------------------------------------------ relays


def _brute_force_theta(
    t: np.ndarray,
    rms: np.ndarray,
    pickup: float,
    td: float,
    a: float,
    b: float,
    p: float,
    tr: float,
) -> tuple[np.ndarray, float]:
    """θ by a plain loop over the staircase of rms values: t_op = TD·(A/(M^p − 1) + B) above
    pickup, reset at TD·tr/(1 − M²) below (IEEE C37.112 form, constants typed in by hand)."""
    theta = np.zeros(t.size)
    trip = math.inf
    for k in range(t.size - 1):
        m = rms[k] / pickup
        dt = t[k + 1] - t[k]
        if m > 1.0:
            rate = 1.0 / (td * (a / (m**p - 1.0) + b))
        else:
            rate = -1.0 / (td * tr / (1.0 - m * m))
        theta[k + 1] = max(0.0, theta[k] + rate * dt)
        if math.isinf(trip) and theta[k + 1] >= 1.0:
            trip = t[k] + (1.0 - theta[k]) / rate
    return theta, trip


# very inverse, IEEE C37.112 Table 1 (from memory): A 19.61 s, B 0.491 s, p 2, tr 21.6 s
VI = (19.61, 0.491, 2.0, 21.6)


@pytest.mark.parametrize("td", [0.5, 1.0, 3.0])
def test_relay_matches_brute_force_integration(td: float) -> None:
    # the rms fed to the loop is the quadrature reference, so the loop is independent of the
    # module end to end; rtol 1e-4 covers the trapezoid rms error at 32 samples per cycle
    t, i = record(1000.0, 1.0, 1.5, spc=32)
    inr = device_operation.inrush_from_waveform(t, i, F)
    ref_rms = np.array(
        [
            math.sqrt(quad(lambda x: unipolar(x, 1000.0, 1.0) ** 2, max(0.0, s - T), s)[0] / T)
            for s in t
        ]
    )
    theta, trip = _brute_force_theta(t, ref_rms, 200.0, td, *VI)
    got = device_operation.relay_ride_through(
        device_operation.Relay("51", "ieee_c37_112", "very_inverse", 200.0, td), inr
    )
    assert got.time_margin_ratio == pytest.approx(1.0 / theta.max(), rel=1e-4)
    assert got.trips == math.isfinite(trip)
    if math.isfinite(trip):
        assert got.trip_time_s == pytest.approx(trip, rel=1e-4)
    else:
        assert got.trip_time_s is None
        assert got.margin_ratio > 1.0


def test_relay_reset_lowers_travel_after_the_inrush_falls_below_pickup() -> None:
    # the current falls below pickup at 0.4·ln(6.1) ≈ 0.72 s: the disk then resets, so its
    # peak travel is before the end of the record, and holding θ can only give less margin
    t, i = record(1000.0, 0.4, 1.5, spc=32)
    inr = device_operation.inrush_from_waveform(t, i, F)
    disk = device_operation.Relay("51", "ieee_c37_112", "very_inverse", 200.0, 1.0)
    r_disk = device_operation.relay_ride_through(disk, inr)
    r_hold = device_operation.relay_ride_through(replace(disk, reset="hold"), inr)
    assert r_disk.margin_time_s is not None
    assert 0.6 < r_disk.margin_time_s < 0.8
    assert r_hold.time_margin_ratio == pytest.approx(r_disk.time_margin_ratio, rel=1e-12)
    assert not any(code == "margin_at_record_end" for code, _ in r_disk.warnings)


@pytest.mark.parametrize(
    ("standard", "curve", "td"),
    [("ieee_c37_112", "very_inverse", 2.0), ("ieee_c37_112", "moderately_inverse", 0.7),
     ("iec_60255_151", "standard_inverse", 0.3), ("iec_60255_151", "extremely_inverse", 1.0)],
)  # fmt: skip
def test_constant_current_reproduces_the_curve(standard: str, curve: str, td: float) -> None:
    # limiting case: a constant rms current trips at exactly the curve's own time, and a record
    # that ends at a fifth of that time leaves θ = 1/5, a time-dial margin of exactly 5
    relay = device_operation.Relay("51", standard, curve, 150.0, td)  # type: ignore[arg-type]
    expected = float(device_operation.device_times(relay, 600.0).minimum_time)
    long = device_operation.inrush_from_table(
        np.geomspace(1e-3, 10 * expected, 50), np.full(50, 600.0)
    )
    got = device_operation.relay_ride_through(relay, long)
    assert got.trips
    assert got.trip_time_s == pytest.approx(expected, rel=1e-12)
    short = device_operation.inrush_from_table(
        np.geomspace(1e-3, expected / 5, 50), np.full(50, 600.0)
    )
    got = device_operation.relay_ride_through(relay, short)
    assert not got.trips
    assert got.time_margin_ratio == pytest.approx(5.0, rel=1e-12)
    assert got.margin_time_s == pytest.approx(expected / 5, rel=1e-12)
    assert got.warnings[0][0] == "margin_at_record_end"


def test_relay_instantaneous_compares_largest_sliding_rms() -> None:
    t, i = record(1000.0, 0.4, 1.0)
    inr = device_operation.inrush_from_waveform(t, i, F)
    top = float(inr.rms_current_a.max())
    slow = device_operation.Relay("51", "ieee_c37_112", "extremely_inverse", 900.0, 10.0)
    below = device_operation.relay_ride_through(
        replace(slow, instantaneous_pickup_a=1.05 * top), inr
    )
    above = device_operation.relay_ride_through(
        replace(slow, instantaneous_pickup_a=0.95 * top), inr
    )
    assert not below.trips
    assert below.instantaneous_margin_ratio == pytest.approx(1.05)
    assert above.trips
    assert above.instantaneous_margin_ratio == pytest.approx(0.95)
    assert above.compared_current == "largest sliding one-cycle rms"
    assert above.trip_time_s is not None
    assert above.trip_time_s < 2 * T


# -------------------------------------------------------------------------------------- fuses


def test_fuse_far_above_the_inrush_rides_through() -> None:
    t, i = record(1000.0, 0.3, 1.0)
    inr = device_operation.inrush_from_waveform(t, i, F)
    fuse = device_operation.Fuse("big", table([(3000.0, 300.0), (30000.0, 0.05)]))
    got = device_operation.fuse_ride_through(fuse, inr)
    assert not got.trips
    assert got.trip_time_s is None
    assert got.margin_ratio > 1.0
    # the margin is the time ratio at its tightest grid point (melt curve current-derated 0.8)
    i_eq = inr.eq_current_a[0]
    ratio = fuse.minimum_melt.trip_time(i_eq / 0.8) / inr.eq_time_s
    assert got.margin_ratio == pytest.approx(ratio.min(), rel=1e-12)


def test_fuse_far_below_melts_at_the_expected_time() -> None:
    # independent reference: I_eq from quadrature of the analytic current, the derated melt
    # curve interpolated log-log by hand, and the crossing t'_mm(I_eq(t)) = t by brentq;
    # rtol 2e-3 covers the module's log-log interpolation between its 200 grid times
    amplitude, tau = 1000.0, 0.5
    t, i = record(amplitude, tau, 2.0)
    inr = device_operation.inrush_from_waveform(t, i, F)
    mm = [(100.0, 100.0), (400.0, 1.0), (2000.0, 0.01)]
    fuse = device_operation.Fuse("small", table(mm), melt_current_factor=0.9, melt_time_factor=0.9)
    li, lt = np.log([p[0] for p in mm]), np.log([p[1] for p in mm])

    def melt(current: float) -> float:
        return 0.9 * math.exp(float(np.interp(math.log(current / 0.9), li, lt)))

    def ieq(s: float) -> float:
        return math.sqrt(quad(lambda x: unipolar(x, amplitude, tau) ** 2, 0.0, s, limit=400)[0] / s)

    expected = brentq(lambda s: melt(ieq(s)) - s, 0.02, 1.9, xtol=1e-9)
    got = device_operation.fuse_ride_through(fuse, inr)
    assert got.trips
    assert got.margin_ratio < 1.0
    assert got.trip_time_s == pytest.approx(expected, rel=2e-3)


def test_fuse_constant_current_melts_at_the_derated_curve_time() -> None:
    # limiting case: constant I_eq melts at k_t·t_mm(I/k_i) exactly (log-log linear crossing)
    fuse = device_operation.Fuse(
        "f", table([(100.0, 100.0), (1000.0, 0.1)]), melt_current_factor=0.75
    )
    inr = device_operation.inrush_from_table(np.geomspace(0.01, 1000.0, 31), np.full(31, 300.0))
    expected = float(fuse.minimum_melt.trip_time(300.0 / 0.75))
    assert device_operation.fuse_ride_through(fuse, inr).trip_time_s == pytest.approx(
        expected, 1e-12
    )


def test_fuse_melting_i2t_against_the_first_half_cycle() -> None:
    t, i = record(1000.0, 0.3, 0.5)
    inr = device_operation.inrush_from_waveform(t, i, F)
    assert inr.window_i2t is not None
    first = float(inr.window_i2t.value[0])
    mm = table([(5000.0, 100.0), (50000.0, 0.01)])  # far above in time
    low = device_operation.Fuse("cl", mm, minimum_melting_i2t_a2s=0.9 * first / 0.8**2)
    high = device_operation.Fuse("cl", mm, minimum_melting_i2t_a2s=1.1 * first / 0.8**2)
    assert device_operation.fuse_ride_through(low, inr).i2t_margin_ratio == pytest.approx(0.9)
    assert device_operation.fuse_ride_through(low, inr).trips
    assert not device_operation.fuse_ride_through(high, inr).trips
    # a table without I²t skips the check and says so
    tab = device_operation.inrush_from_table(inr.eq_time_s, inr.eq_current_a)
    got = device_operation.fuse_ride_through(high, tab)
    assert got.i2t_margin_ratio is None
    assert got.warnings[0][0] == "i2t_not_checked"


# ----------------------------------------------------------------------------------- breakers


def _breaker(
    inst: float,
    tol: float = 0.1,
    peak_factor: float | None = None,
    sensing: device_operation.Sensing | None = None,
) -> device_operation.Breaker:
    unit = fuse_breaker_curves.LowVoltageBreaker(
        long_time_pickup=2000.0, long_time_delay=20.0, instantaneous_pickup=inst,
        instantaneous_tolerance=tol,
    )  # fmt: skip
    return device_operation.Breaker("cb", unit, peak_factor, sensing)


def test_breaker_instantaneous_trips_when_first_peak_exceeds_lower_edge() -> None:
    t, i = record(1000.0, 0.5, 0.5, spc=128)
    inr = device_operation.inrush_from_waveform(t, i, F)
    assert inr.peak is not None
    peak = float(inr.peak.value[0])
    # independent reference: the crest of 1000·e^(−t/0.5)·(1 − cos ωt), where its derivative
    # ω·sin ωt − (1 − cos ωt)/τ vanishes; the parabola through 128-per-cycle samples is 1e-6 close
    crest = brentq(lambda s: W * math.sin(W * s) - (1 - math.cos(W * s)) / 0.5, 0.3 * T, 0.7 * T)
    assert peak == pytest.approx(float(unipolar(crest, 1000.0, 0.5)), rel=1e-6)
    tol = 0.15
    # peak factor 1: the peak compared as if it were rms
    trips = device_operation.breaker_ride_through(_breaker(0.99 * peak / (1 - tol), tol, 1.0), inr)
    rides = device_operation.breaker_ride_through(_breaker(1.01 * peak / (1 - tol), tol, 1.0), inr)
    assert trips.trips
    assert trips.compared_current.startswith("largest |i| (first peak)")
    assert trips.instantaneous_margin_ratio == pytest.approx(0.99)
    assert trips.trip_time_s == pytest.approx(crest, abs=T / 128)
    assert not rides.trips
    assert rides.margin_ratio == pytest.approx(1.01)


def test_breaker_peak_sensing_compares_with_root_two_times_the_setting() -> None:
    # common practice (from memory): a peak-sensing unit picks up when the peak reaches √2 × the
    # rms setting (the crest of a sine at the setting): the default. The same breaker that
    # "trips" with the peak read as rms rides through with margin 0.99·√2.
    t, i = record(1000.0, 0.5, 0.5, spc=128)
    inr = device_operation.inrush_from_waveform(t, i, F)
    crest = brentq(lambda s: W * math.sin(W * s) - (1 - math.cos(W * s)) / 0.5, 0.3 * T, 0.7 * T)
    peak = float(unipolar(crest, 1000.0, 0.5))
    tol = 0.15
    got = device_operation.breaker_ride_through(_breaker(0.99 * peak / (1 - tol), tol), inr)
    assert not got.trips
    assert got.instantaneous_margin_ratio == pytest.approx(0.99 * math.sqrt(2.0), rel=1e-6)
    assert got.sensed is not None
    assert got.sensed.sensing == "peak"
    assert got.sensed.compared_a == pytest.approx(peak / math.sqrt(2.0), rel=1e-6)
    assert got.sensed.pickup_a == pytest.approx(0.99 * peak, rel=1e-12)
    # the words name what was compared, with the numbers the verdict used
    assert got.compared_current == got.sensed.text
    assert f"{peak / math.sqrt(2.0):.4g} A rms-equivalent" in got.compared_current
    assert f"lower edge {0.99 * peak:.4g} A" in got.compared_current


def test_breaker_rms_sensing_over_a_half_cycle() -> None:
    # an rms-sensing unit: the largest sliding half-cycle rms against the lower edge itself;
    # reference: the half-cycle rms of the analytic waveform by scipy quad over end times
    t, i = record(1000.0, 0.5, 0.5, spc=128)
    inr = device_operation.inrush_from_waveform(t, i, F)

    def window_rms(end: float) -> float:
        e = quad(lambda s: float(unipolar(s, 1000.0, 0.5)) ** 2, max(end - T / 2, 0.0), end)[0]
        return math.sqrt(e / (T / 2))

    ref = max(window_rms(x) for x in np.linspace(0.3 * T, 1.2 * T, 400))
    got = device_operation.breaker_ride_through(
        _breaker(1000.0, 0.1, sensing="half_cycle_rms"), inr
    )
    assert got.sensed is not None
    assert got.sensed.sensed_a == pytest.approx(ref, rel=1e-3)
    assert got.instantaneous_margin_ratio == pytest.approx(900.0 / ref, rel=1e-3)
    assert got.compared_current.startswith("largest sliding half-cycle rms")
    with pytest.raises(ParameterError, match="sensing"):
        _breaker(1000.0, sensing="average")  # type: ignore[arg-type]


def test_breaker_long_time_band_against_constant_current() -> None:
    # limiting case: constant I_eq trips at the band's lower edge, (1 − 0.2)·36·(P/I)²·d
    inr = device_operation.inrush_from_table(np.geomspace(0.01, 1000.0, 41), np.full(41, 6000.0))
    got = device_operation.breaker_ride_through(_breaker(50000.0), inr)
    assert got.trip_time_s == pytest.approx(0.8 * 36.0 * (2000.0 / 6000.0) ** 2 * 20.0, 1e-12)
    assert got.warnings[0][0] == "instantaneous_not_checked"


# --------------------------------------------------------------------------------- protection

# invented 500 kVA three-phase unit, 480 V: Category I, damage from the C57.109 table from 2 pu
# to 1/Z (log-log between its points, which the curve holds, so interpolation is exact)
I_R = 500e3 / (math.sqrt(3) * 480.0)
DAMAGE = damage_curves.through_fault_damage_curve(500.0, 3, I_R, 0.05, points=32)


def test_clearing_at_half_the_damage_time_has_margin_two() -> None:
    # t_clear = t_damage/2 on the same 1/I² lines (log-log straight), so the ratio is 2 at
    # every current; a curve ten times above the damage curve protects nowhere
    pts = [(1.9 * I_R, 0.6 * DAMAGE.time[0])] + [
        (c, 0.5 * s) for c, s in zip(DAMAGE.current, DAMAGE.time, strict=True)
    ]
    half = device_operation.Fuse("f", table([(c * 0.9, s * 0.5) for c, s in pts]), table(pts))
    got = coordination.protection_check(half, DAMAGE)
    assert got.status == "protects"
    assert got.protects
    assert got.margin_ratio == pytest.approx(2.0, rel=1e-9)
    slow = device_operation.Fuse("s", half.minimum_melt, table([(c, 20.0 * s) for c, s in pts]))
    bad = coordination.protection_check(slow, DAMAGE)
    assert bad.status == "does_not_protect"
    assert bad.margin_ratio == pytest.approx(0.1, rel=1e-9)
    assert bad.unprotected_from_a == pytest.approx(DAMAGE.current[0])
    assert bad.unprotected_to_a == pytest.approx(DAMAGE.current[-1])


def test_relay_protection_adds_opening_time_and_a_gap_is_partial() -> None:
    relay = device_operation.Relay("51", "ieee_c37_112", "very_inverse", 1.2 * I_R, 1.0)
    got = coordination.protection_check(relay, DAMAGE, opening_time_s=0.05)
    m = DAMAGE.current / relay.pickup_a
    t_clear = 1.0 * (19.61 / (m**2 - 1) + 0.491) + 0.05
    assert got.margin_ratio <= float(np.min(DAMAGE.time / t_clear)) * (1 + 1e-12)
    assert got.clearing_curve == "relay curve + opening time"
    # pickup above the damage curve's 2 pu end: the lowest currents are never cleared (and just
    # above pickup too slowly), the highest are
    high = coordination.protection_check(replace(relay, pickup_a=3.0 * I_R), DAMAGE)
    assert high.status == "partial"
    assert high.margin_ratio == 0.0
    assert high.unprotected_from_a == pytest.approx(2.0 * I_R)
    assert high.unprotected_to_a is not None
    assert 3.0 * I_R < high.unprotected_to_a < 5.0 * I_R


def test_damage_factor_and_vertical_step() -> None:
    # a Category IV frequent-fault curve has a vertical step: the lower (mechanical) time holds
    # at the step current, which a fuse clearing just inside the thermal part fails there
    cat4 = damage_curves.through_fault_damage_curve(
        40000.0, 3, 1000.0, 0.1, frequent=True, points=64
    )
    assert cat4.mechanical_from_current is not None
    step = cat4.mechanical_from_current
    t_mech = float(cat4.time[np.searchsorted(cat4.current, step) + 1])
    clearing = [(1900.0, 0.6 * 1250 / 1.9**2), (step, 1.1 * t_mech), (1.1 * cat4.current[-1], 0.01)]
    fuse = device_operation.Fuse("f", table([(1500.0, 1000.0), (20000.0, 0.01)]), table(clearing))
    got = coordination.protection_check(fuse, cat4)
    assert not got.protects
    assert got.margin_current_a == pytest.approx(step, rel=1e-12)
    assert got.margin_ratio == pytest.approx(1 / 1.1, rel=1e-9)
    with pytest.raises(ParameterError, match="damage_current_factor"):
        coordination.protection_check(fuse, cat4, damage_current_factor=1.5)
    with pytest.raises(ParameterError, match="total_clearing"):
        coordination.protection_check(replace(fuse, total_clearing=None), cat4)


# ------------------------------------------------------------------------ coordination window


def test_window_limits_match_the_time_dial_scaling() -> None:
    # θ ∝ 1/TD, so the lowest riding-through TD is TD₀/(time margin at TD₀); t_clear =
    # TD·f(M) + t_open, so the highest protecting TD is min over I of (t_d − t_open)/f(M)
    t, i = record(12.0 * I_R, 1.0, 2.0, spc=32)
    inr = device_operation.inrush_from_waveform(t, i, F, rated_current_a=I_R)
    relay = device_operation.Relay("51", "ieee_c37_112", "very_inverse", 1.5 * I_R, 1.0)
    win = coordination.coordination_window(relay, inr, DAMAGE, rtol=1e-6)
    assert win.setting_range == (0.5, 15.0)
    assert win.exists
    assert win.lowest_riding_through is not None
    assert win.highest_protecting is not None
    assert win.lowest_riding_through <= win.highest_protecting
    margin = device_operation.relay_ride_through(relay, inr).time_margin_ratio
    assert win.lowest_riding_through == pytest.approx(1.0 / margin, rel=1e-5)
    grid = np.geomspace(DAMAGE.current[0], DAMAGE.current[-1], 20001)
    f_m = 19.61 / ((grid / relay.pickup_a) ** 2 - 1) + 0.491
    # C57.109 thermal table (from memory), log-log between its points
    tab_x, tab_t = [2.0, 3.0, 4.75, 6.3, 11.3, 25.0], [1800.0, 300.0, 60.0, 30.0, 10.0, 2.0]
    t_d = np.exp(np.interp(np.log(grid / I_R), np.log(tab_x), np.log(tab_t)))
    assert win.highest_protecting == pytest.approx(float(np.min((t_d - 5 / 60) / f_m)), rel=1e-4)
    # just inside each limit passes, just outside fails
    lo, hi = win.lowest_riding_through, win.highest_protecting
    assert not device_operation.relay_ride_through(replace(relay, time_dial=lo), inr).trips
    assert device_operation.relay_ride_through(replace(relay, time_dial=0.999 * lo), inr).trips
    assert coordination.protection_check(replace(relay, time_dial=hi), DAMAGE).protects
    assert not coordination.protection_check(replace(relay, time_dial=1.001 * hi), DAMAGE).protects


def test_window_monotone_in_inrush_and_absent_cases() -> None:
    relay = device_operation.Relay("51", "ieee_c37_112", "very_inverse", 1.5 * I_R, 1.0)
    lows, highs = [], []
    for amplitude, tau in ((12.0, 1.0), (12.0, 3.0), (14.0, 10.0)):  # longer inrush: higher TD
        t, i = record(amplitude * I_R, tau, 4.0, spc=32)
        inr = device_operation.inrush_from_waveform(t, i, F)
        win = coordination.coordination_window(relay, inr, DAMAGE)
        lows.append(win.lowest_riding_through or math.inf)
        highs.append(win.highest_protecting)
        assert win.exists == (lows[-1] <= (win.highest_protecting or 0.0))
    assert lows[0] < lows[1] < lows[2]
    assert highs[0] == highs[1] == highs[2]  # the protection limit does not see the inrush
    # no window: the longest inrush needs a higher dial than protection allows
    assert not win.exists
    assert win.lowest_riding_through is not None
    assert win.highest_protecting is not None
    assert win.lowest_riding_through > win.highest_protecting
    assert win.statement.startswith("no window")
    # none at all: an instantaneous element below the inrush trips at any time dial
    t, i = record(12.0 * I_R, 0.3, 1.0, spc=32)
    inr = device_operation.inrush_from_waveform(t, i, F)
    inst = replace(relay, instantaneous_pickup_a=5.0 * I_R)
    none = coordination.coordination_window(inst, inr, DAMAGE)
    assert not none.exists
    assert none.lowest_riding_through is None
    assert "rides through" in none.statement
    # none protects: the damage curve moved to 0.58 × its currents (delta-wye, line-to-ground)
    # starts at 1.16 pu, below the 1.5 pu pickup
    unprotected = coordination.coordination_window(relay, inr, DAMAGE, damage_current_factor=0.58)
    assert unprotected.highest_protecting is None
    assert not unprotected.exists
    assert unprotected.statement.endswith("protects against through-faults")


# ------------------------------------------------------------------------ evaluation, ranking


def test_evaluate_ranks_suitable_devices_and_reports_points_and_defaults() -> None:
    t, i = record(10.0 * I_R, 0.2, 1.0)
    inr = device_operation.inrush_from_waveform(t, i, F, rated_current_a=I_R)
    fast = device_operation.Relay("fast", "ieee_c37_112", "very_inverse", 1.5 * I_R, 0.1)
    good = device_operation.Relay("good", "ieee_c37_112", "very_inverse", 1.5 * I_R, 1.0)
    better = device_operation.Relay("better", "ieee_c37_112", "extremely_inverse", 1.5 * I_R, 1.0)
    melt = table([(1.8 * I_R, 2000.0), (40.0 * I_R, 0.01)])
    no_tc = device_operation.Fuse("no_tc", melt)
    ev = coordination.evaluate(inr, [fast, good, better, no_tc], DAMAGE)
    by = {e.device: e for e in ev.devices}
    assert by["fast"].ride_through.trips
    assert not by["fast"].suitable
    assert by["no_tc"].protection is None
    assert ("protection_not_checked", "no_tc: no total-clearing curve") in ev.warnings
    suitable = [e for e in ev.devices if e.suitable]
    assert ev.ranking == tuple(
        e.device for e in sorted(suitable, key=lambda e: -(e.margin_ratio or 0.0))
    )
    for e in suitable:
        assert e.protection is not None
        assert e.margin_ratio == min(e.ride_through.margin_ratio, e.protection.margin_ratio)
    # inrush points: 12 × I_r at 0.1 s and 25 × I_r at 0.01 s against each minimum curve
    pts = by["good"].points
    assert [p.multiple_x_rated for p in pts] == [12.0, 25.0]
    expected = device_operation.device_times(good, 12.0 * I_R).minimum_time / 0.1
    assert pts[0].ratio == pytest.approx(float(expected))
    assert pts[0].above == (expected > 1)
    names = {a.name: a for a in ev.assumptions}
    assert names["opening_time_s"].value == pytest.approx(5 / 60)
    assert "common practice" in names["opening_time_s"].source
    assert names["no_tc.melt_current_factor"].value == 0.8
    with pytest.raises(ParameterError, match="devices"):
        coordination.evaluate(inr, [good, good])


def test_device_validation() -> None:
    with pytest.raises(ParameterError, match="curve"):
        device_operation.Relay("r", "iec_60255_151", "very_inverse_typo", 1.0, 1.0)
    with pytest.raises(ParameterError, match="pickup_a"):
        device_operation.Relay("r", "ieee_c37_112", "very_inverse", -1.0, 1.0)
    with pytest.raises(ParameterError, match="melt_current_factor"):
        device_operation.Fuse("f", table([(1.0, 10.0), (10.0, 0.1)]), melt_current_factor=1.2)
    with pytest.raises(ParameterError, match="peak_factor"):
        _breaker(1000.0, peak_factor=0.5)


def test_table_with_a_peak_checks_the_instantaneous_without_a_time() -> None:
    # an I_eq table says nothing of when the peak occurs: the breaker trips, time unknown (None)
    # (peak-sensing unit: threshold √2 × 0.9 × 1800 A = 2291 A below the 3000 A peak)
    inr = device_operation.inrush_from_table([0.01, 0.1, 1.0], [800.0, 400.0, 150.0], peak_a=3000.0)
    got = device_operation.breaker_ride_through(_breaker(1800.0), inr)
    assert got.trips
    assert got.trip_time_s is None
    assert got.margin_time_s is None
    assert got.instantaneous_margin_ratio == pytest.approx(math.sqrt(2) * 0.9 * 1800.0 / 3000.0)


def test_each_kind_reports_its_own_notes_in_order_and_a_differential_has_no_curve() -> None:
    # the answers' contract: kinds by name; one note list per device, in the order devices come
    t, i = record(10.0 * I_R, 0.2, 1.0)
    inr = device_operation.inrush_from_waveform(t, i, F, rated_current_a=I_R)
    relay = device_operation.Relay("r", "ieee_c37_112", "very_inverse", 1.5 * I_R, 1.0)
    fuse = device_operation.Fuse("f", table([(1.8 * I_R, 2000.0), (40.0 * I_R, 0.01)]))
    breaker = _breaker(20.0 * I_R)
    diff = device_operation.Differential("d")
    kinds = [device_operation.device_kind(d) for d in (relay, fuse, breaker, diff)]
    assert kinds == ["relay", "fuse", "breaker", "differential"]
    ev = coordination.evaluate(inr, [breaker, relay, fuse], DAMAGE)
    assert [a.name for a in ev.assumptions][4:] == [
        f"{breaker.name}.instantaneous_sensing",
        f"{breaker.name}.peak_factor",
        "r.measured_current",
        "r.reset",
        "f.melt_current_factor",
    ]
    assert [a.name for a in diff.assumption_notes()] == ["d.filter", "d.restraint"]
    # a differential is judged on the waveform: every curve-based call names it the same way
    calls = (
        lambda: device_operation.device_times(diff, [I_R]),
        lambda: protection_study.device_curves(diff, [I_R, 2 * I_R]),
        lambda: coordination.protection_check(diff, DAMAGE),
    )
    for call in calls:
        with pytest.raises(ParameterError) as err:
            call()
        assert (err.value.parameter, err.value.value) == ("device", "d")
        assert err.value.allowed == "a device with a time-current curve"
