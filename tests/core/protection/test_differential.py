"""Checks of the differential element against outside sources (named beside each)."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from core.errors import ParameterError
from core.protection import differential as d

F, N = 60.0, 128
A = np.exp(2j * np.pi / 3)


def _fortescue_matrix(theta_deg: float) -> np.ndarray:
    # Symmetrical components (Fortescue 1918): I_abc = A I_012; turn I1 by +theta, I2 by -theta,
    # drop I0. Written from the definition, independently of the closed form in the module.
    a = np.array([[1, 1, 1], [1, A**2, A], [1, A, A**2]])
    th = math.radians(theta_deg)
    return a @ np.diag([0, np.exp(1j * th), np.exp(-1j * th)]) @ np.linalg.inv(a)


@pytest.mark.parametrize("theta", [0.0, 30.0, -30.0, 60.0, 150.0, 330.0])
def test_matrix_equals_symmetrical_component_construction(theta: float) -> None:
    m = _fortescue_matrix(theta)
    assert np.max(np.abs(m.imag)) < 1e-12  # the construction is real
    assert np.allclose(d.compensation_matrix(theta), m.real, atol=1e-12)


def test_matrices_of_the_relay_literature() -> None:
    # IEEE C37.91-2008 and the relay literature (from memory): 30° is (Ia - Ib)/sqrt(3) and its
    # cyclic shifts; 0° with zero-sequence removal is (1/3)[[2,-1,-1],[-1,2,-1],[-1,-1,2]].
    s3 = math.sqrt(3.0)
    m30 = np.array([[1, -1, 0], [0, 1, -1], [-1, 0, 1]]) / s3
    m0 = np.array([[2, -1, -1], [-1, 2, -1], [-1, -1, 2]]) / 3.0
    assert np.allclose(d.compensation_matrix(30.0), m30)
    assert np.allclose(d.compensation_matrix(-30.0), m30.T)
    assert np.allclose(d.compensation_matrix(0.0), m0)


def test_zero_sequence_removed() -> None:
    # Kirchhoff: a zero-sequence set (equal currents) cannot pass a delta's lines; removed.
    for h in range(12):
        assert np.allclose(d.compensation_matrix(30.0 * h) @ np.ones(3), 0.0, atol=1e-12)


def _winding_currents_to_lines(delta_lead: bool, w: np.ndarray) -> np.ndarray:
    # Delta of windings ab, bc, ca (Kirchhoff's current law at each line terminal):
    # I_A = I_ab - I_ca for one way of closing the delta, I_A = I_ab - I_bc the other way
    # (winding k between lines k and k+1, or k and k-1).
    return np.asarray(w - np.roll(w, 1) if delta_lead else w - np.roll(w, -1), dtype=complex)


@pytest.mark.parametrize(
    ("group", "high_delta", "lead"),
    [("Dy1", True, False), ("Dy11", True, True), ("Yd1", False, True), ("Yd11", False, False)],
)
def test_balanced_through_current_gives_no_differential(
    group: str, high_delta: bool, lead: bool
) -> None:
    # Ampere-turn balance leg by leg (winding currents equal in pu), then Kirchhoff at the
    # delta's terminals; the clock number is measured from the result (IEC 60076-1: low side
    # lags by h x 30 deg), then the relay's compensation must cancel it.
    rng = np.random.default_rng(1)
    for _ in range(5):
        i1 = complex(*rng.normal(size=2))
        i0 = complex(*rng.normal(size=2))  # a ground fault on a grounded wye side
        i2 = complex(*rng.normal(size=2))
        pos = np.array([1, A**2, A]) * i1 + np.array([1, A, A**2]) * i2
        star = pos + i0 * (0 if high_delta else 1)  # wye line currents of the far side
        winding = pos + i0 * (1 if high_delta else 0)
        delta = _winding_currents_to_lines(lead, winding) / math.sqrt(3.0)
        high_in, low_in = (delta, -star) if high_delta else (star, -delta)
        # measured clock (x @ conj(1, a^2, a) = 3 I1): how far the low side lags the high side
        shift = np.angle(
            (-low_in @ np.conj([1, A**2, A])) / (high_in @ np.conj([1, A**2, A])),
            deg=True,
        )
        clock = round(float(-shift % 360.0) / 30.0) % 12
        assert f"{group[:2]}{clock}" == group
        for ref in ("high", "low"):
            ang_low = 30.0 * clock if ref == "high" else 0.0
            ang_high = 0.0 if ref == "high" else -30.0 * clock
            diff = (
                d.compensation_matrix(ang_high) @ high_in + d.compensation_matrix(ang_low) @ low_in
            )
            assert np.allclose(diff, 0.0, atol=1e-12), (group, ref)


def test_yy0_through_current_and_ground_fault() -> None:
    # Yy0 with the low neutral grounded: the zero sequence of a low-side ground fault has no
    # counterpart at an ungrounded high side (Kirchhoff); zero-sequence removal cancels it.
    pos = np.array([1, A**2, A]) * (0.7 - 0.2j)
    high_in, low_in = pos, -(pos + 0.4)
    m = d.compensation_matrix(0.0)
    assert np.allclose(m @ high_in + m @ low_in, 0.0, atol=1e-12)
    assert d.vector_group("Yy0").clock == 0


def test_one_cycle_dft_against_numpy_fft() -> None:
    # numpy's FFT of one whole cycle of a waveform with known harmonics: X_h = 2 |FFT_h| / N.
    t = np.arange(3 * N) / (F * N)
    w = 2 * np.pi * F
    x = 5 + 100 * np.sin(w * t + 0.2) + 23 * np.sin(2 * w * t - 1.0) + 7 * np.cos(5 * w * t)
    ph = d.one_cycle_phasors(x, N)
    for m in (N - 1, 2 * N + 17, 3 * N - 1):
        ref = 2.0 * np.abs(np.fft.fft(x[m - N + 1 : m + 1])) / N
        assert np.allclose(np.abs(ph[:, m]), ref[[1, 2, 5]], rtol=1e-12)
    # the known amplitudes themselves (a whole cycle rejects the dc and other harmonics)
    assert np.allclose(np.abs(ph[:, -1]), [100, 23, 7], rtol=1e-12)


def test_threshold_shape() -> None:
    # Analytic: floor, slope 1 through the origin, slope 2 above the breakpoint, continuous.
    thr = d.operate_threshold([0.5, 2.0, 3.0, 5.0], 0.3, 0.25, 0.5, 0.0, 3.0)
    assert np.allclose(thr, [0.3, 0.5, 0.75, 1.75])


def _grain_oriented_case() -> tuple[np.ndarray, np.ndarray]:
    # Common practice: modern grain-oriented cores with low residual-to-saturation margins give
    # inrush whose second harmonic can fall below 15 % in one phase while the others stay
    # above. Synthetic per-phase currents: fundamental 3 pu in each phase, second harmonic 9 %
    # in A, 30 % in B and C (window amplitudes exact for whole cycles). The second-harmonic
    # angles (0, pi - a, pi + a with cos a = 0.15) make its set sum to zero, so the relay's
    # zero-sequence removal leaves it as it is.
    t = np.arange(6 * N) / (F * N)
    w = 2 * np.pi * F
    r2, a = [0.09, 0.30, 0.30], math.acos(0.15)
    ang = [0.0, math.pi - a, math.pi + a]
    i = np.stack(
        [3 * np.sin(w * t - k * 2 * np.pi / 3) + 3 * r2[k] * np.sin(2 * w * t + ang[k])
         for k in range(3)]
    )  # fmt: skip
    return t, i


def test_per_phase_operates_where_cross_blocking_restrains() -> None:
    t, i = _grain_oriented_case()
    # Yy0, energised side is the reference: only zero-sequence removal.
    dev = d.Differential("87T", vector_group="YNyn0", base_current_a=1.0)
    r = d.differential_response(dev, t, i, F, 1.0)
    assert np.allclose(r.second_harmonic_percent[:, -1], [9.0, 30.0, 30.0])
    by = {v.logic: v for v in r.by_logic}
    assert by["own_phase"].operates
    assert by["own_phase"].phase == "A"
    assert not by["any_phase"].operates  # cross-blocking: B and C block A
    assert r.verdict.logic == "own_phase"
    assert r.verdict.operates
    # the summed logic: A's fundamental carries the three phases' second harmonics
    assert not by["summed_phases"].operates
    assert by["own_phase"].margin_pp is not None
    assert by["own_phase"].margin_pp < 0.0
    assert by["any_phase"].margin_pp is not None
    assert by["any_phase"].margin_pp > 0.0


def test_no_current_never_operates() -> None:
    # Limiting case: an unloaded, de-energised unit: nothing picks up.
    t = np.arange(2 * N) / (F * N)
    r = d.differential_response(d.Differential("87T"), t, np.zeros((3, t.size)), F, 100.0)
    assert not r.verdict.operates
    assert r.verdict.margin_pp is None
    assert r.verdict.margin_ratio == math.inf


def test_unrestrained_operates_regardless() -> None:
    t, i = _grain_oriented_case()
    dev = d.Differential("87T", vector_group="YNyn0", base_current_a=1.0 / 4.0,
                         harmonic_logic="any_phase", unrestrained_pu=8.0)  # fmt: skip
    r = d.differential_response(dev, t, i, F, 1.0)
    assert r.verdict.operates
    assert r.verdict.by_unrestrained


@pytest.mark.parametrize(
    ("field", "value"),
    [("vector_group", "Dy2"), ("vector_group", "Xy1"), ("energized_side", "middle"),
     ("second_harmonic_percent", -1.0), ("harmonic_logic", "majority")],
)  # fmt: skip
def test_bad_settings_name_the_field(field: str, value: object) -> None:
    with pytest.raises(ParameterError, match=field):
        d.Differential("87T", **{field: value})  # type: ignore[arg-type]


def test_non_whole_samples_per_cycle_rejected() -> None:
    t = np.arange(300) / (F * 100.5)
    with pytest.raises(ParameterError, match="time_s"):
        d.differential_response(d.Differential("87T"), t, np.zeros((3, 300)), F, 1.0)


def test_margin_ratio_agrees_with_the_verdict() -> None:
    # Operating needs pick-up and no blocking: the ratio max(I_thr/I_op, ratio/level) falls
    # below 1 exactly where it operates (own phase: 9/15 in A; any phase: 30/15 blocks).
    t, i = _grain_oriented_case()
    dev = d.Differential("87T", vector_group="YNyn0", base_current_a=1.0)
    by = {v.logic: v for v in d.differential_response(dev, t, i, F, 1.0).by_logic}
    assert by["own_phase"].margin_ratio < 1.0 < by["any_phase"].margin_ratio
    # whole-cycle windows give 9/15 in A; the first, part-empty windows (the closing inside the
    # window) may give less: the minimum is at most 9/15
    assert by["own_phase"].margin_ratio <= 9.0 / 15.0 + 1e-12


def test_ride_through_dispatches_a_differential_on_the_samples() -> None:
    from core.protection import device_operation as do

    t, i = _grain_oriented_case()
    dev = d.Differential("87T", vector_group="YNyn0", base_current_a=1.0)
    rt = do.ride_through(dev, do.inrush_from_waveform(t, i, F))
    assert rt.kind == "differential"
    assert rt.trips
    assert rt.differential is not None
    assert rt.line == "A"
    table = do.inrush_from_table([0.1, 1.0], [[10.0, 5.0]] * 3)
    with pytest.raises(ParameterError, match="inrush"):
        do.ride_through(dev, table)
    with pytest.raises(ParameterError, match="device"):
        do.device_times(dev, 10.0)


@settings(max_examples=40, deadline=None)
@given(
    st.lists(st.floats(0.0, 0.6), min_size=3, max_size=3),
    st.floats(0.5, 6.0),
    st.floats(0.0, 1.0),
    st.floats(0.1, 1.0),
    st.floats(10.0, 40.0),
    st.floats(0.0, 1.0),
    st.floats(1.0, 3.0),
)
def test_a_less_sensitive_setting_never_turns_a_restraint_into_an_operation(
    r2: list[float], amp: float, dc: float, pickup: float, slope: float, h2: float, k: float
) -> None:
    # Property (common practice: a higher operate characteristic or a lower harmonic blocking
    # level can only make a relay more secure): raising the minimum operate current and both
    # slopes by the factor k, and lowering the second-harmonic level by the fraction h2, keeps
    # every restraint a restraint, under every harmonic logic. Synthetic inrush-like currents:
    # a fundamental of `amp` pu with a decaying offset `dc` and a second harmonic r2 per phase.
    t = np.arange(6 * N) / (F * N)
    w = 2 * np.pi * F
    i = np.stack(
        [amp * (np.sin(w * t - p * 2 * np.pi / 3) + dc * np.exp(-t / 0.05))
         + amp * r2[p] * np.sin(2 * w * t + p) for p in range(3)]
    )  # fmt: skip
    base = d.Differential("87T", vector_group="YNyn0", base_current_a=1.0,
                          minimum_operate_pu=pickup, slope_1_percent=slope,
                          slope_2_percent=2 * slope)  # fmt: skip
    secure = dataclasses.replace(
        base,
        minimum_operate_pu=min(5.0, pickup * k),
        slope_1_percent=min(100.0, slope * k),
        slope_2_percent=min(200.0, 2 * slope * k),
        second_harmonic_percent=base.second_harmonic_percent * (1.0 - 0.99 * h2),
    )
    before = {v.logic: v for v in d.differential_response(base, t, i, F, 1.0).by_logic}
    after = {v.logic: v for v in d.differential_response(secure, t, i, F, 1.0).by_logic}
    for logic, v in before.items():
        if not v.operates:
            assert not after[logic].operates, logic
