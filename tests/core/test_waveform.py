"""Tests of core.waveform on synthetic signals whose answers are known in closed
form."""

from __future__ import annotations

import math

import numpy as np
import pytest

from core import waveform
from core.errors import ParameterError

F_HZ = 60.0


def _t(n_cycles: int, spc: int) -> np.ndarray:
    return np.arange(n_cycles * spc + 1) / (spc * F_HZ)


# ------------------------------------------------------------------ per-cycle peaks


@pytest.mark.parametrize("phase_fraction", [0.0, 0.13, 0.5, 0.77])
def test_cycle_peaks_of_a_sinusoid_with_parabolic_refinement(phase_fraction: float) -> None:
    # A sin(wt + phi) with the crest between samples (phase offset a fraction of a sample).
    # At 32 samples/cycle the grid alone can miss the crest by 1 - cos(pi/32) = 4.8e-3; the
    # parabola through the top three samples leaves ~3.5e-5 (measured worst over the offset,
    # a Taylor estimate gives the same order, (2*pi/32)^4/96 ~ 1.5e-5 .. 5e-5). 1e-4 it is.
    spc, amp = 32, 3.7
    phi = phase_fraction * 2.0 * math.pi / spc
    y = amp * np.sin(2.0 * math.pi * F_HZ * _t(6, spc) + phi)
    peaks = waveform.cycle_peaks(y, spc)
    assert peaks.shape == (6,)
    np.testing.assert_allclose(peaks, amp, rtol=1e-4)
    # never below the largest sample (the refinement only adds)
    raw = np.abs(y[: 6 * spc]).reshape(6, spc).max(-1)
    assert np.all(peaks >= raw)


def test_cycle_peaks_keep_leading_axes_and_follow_a_decay() -> None:
    spc = 64
    t = _t(8, spc)
    env = np.exp(-t / 0.05)
    y = np.stack([env * np.sin(2 * math.pi * F_HZ * t + 0.3), 2.0 * np.ones_like(t)])[None]
    peaks = waveform.cycle_peaks(y, spc)
    assert peaks.shape == (1, 2, 8)
    assert np.all(np.diff(peaks[0, 0]) < 0.0)
    np.testing.assert_array_equal(peaks[0, 1], 2.0)  # a constant: no refinement, the value


# ------------------------------------------------------------------ equivalent rms


def test_equivalent_rms_of_a_sine_at_whole_cycles() -> None:
    # I_eq = A/sqrt(2) over whole cycles; the trapezoid of sin^2 on a uniform whole-period grid
    # is exact (the sum of sin^2 over N >= 3 equal steps is N/2), so rounding only: 1e-12
    spc, amp = 64, 10.0
    y = amp * np.sin(2.0 * math.pi * F_HZ * _t(10, spc) + 0.4)
    times = np.array([1, 2, 5, 10]) / F_HZ
    got = waveform.equivalent_rms(y, 1.0 / (spc * F_HZ), times)
    np.testing.assert_allclose(got, amp / math.sqrt(2.0), rtol=1e-12)


def test_equivalent_rms_of_a_constant_is_the_constant() -> None:
    y = np.full((2, 3, 101), 4.5)
    got = waveform.equivalent_rms(y, 1e-3, [0.0005, 0.01, 0.1])
    assert got.shape == (2, 3, 3)
    np.testing.assert_allclose(got, 4.5, rtol=1e-12)


def test_equivalent_rms_of_a_step_by_hand() -> None:
    # 10 A for the first 0.1 s, then 0: I_eq(0.4 s) = sqrt(10^2 * 0.1/0.4) = 5 A. The step is
    # smeared over one 1 ms sample by the trapezoid: error <= 100*0.5e-3/0.4 in I^2 -> 1e-2 rel.
    dt = 1e-3
    t = np.arange(0, 0.5 + dt / 2, dt)
    y = np.where(t < 0.1, 10.0, 0.0)
    assert float(waveform.equivalent_rms(y, dt, [0.4])[0]) == pytest.approx(5.0, rel=1e-2)


def test_equivalent_rms_rejects_times_outside_the_samples() -> None:
    with pytest.raises(ParameterError) as info:
        waveform.equivalent_rms(np.ones(11), 0.1, [0.0, 0.5])
    assert info.value.parameter == "times_s"
    with pytest.raises(ParameterError):
        waveform.equivalent_rms(np.ones(11), 0.1, [1.5])


# ------------------------------------------------------------------ harmonics


def test_harmonic_ratio_of_a_known_mixture() -> None:
    # sin(wt) + 0.17 sin(2wt + 0.3) + 0.05 sin(3wt): the 2nd/1st ratio is 0.17 in every cycle;
    # the DFT of whole-cycle windows of harmonics below Nyquist is exact (1e-12).
    spc = 64
    w = 2.0 * math.pi * F_HZ
    t = _t(4, spc)
    y = np.sin(w * t) + 0.17 * np.sin(2 * w * t + 0.3) + 0.05 * np.sin(3 * w * t)
    np.testing.assert_allclose(waveform.harmonic_ratio(y, spc, 2), 0.17, rtol=1e-12)
    np.testing.assert_allclose(waveform.harmonic_ratio(y, spc, 3), 0.05, rtol=1e-12)


def test_half_wave_rectified_sine_second_harmonic_ratio() -> None:
    # Standard Fourier series of max(sin(wt), 0):
    #   1/pi + (1/2) sin(wt) - (2/pi) * sum_k cos(2k wt)/(4k^2 - 1)
    # so b1 = 1/2 and a2 = -2/(3 pi): ratio |a2|/|b1| = 4/(3 pi) = 0.424413.
    # Sampled at 4096 per cycle the kinks alias harmonics ~N away, whose coefficients fall as
    # 1/k^2: error ~1e-7; 1e-5 relative leaves margin.
    spc = 4096
    y = np.maximum(np.sin(2.0 * math.pi * F_HZ * _t(2, spc)), 0.0)
    np.testing.assert_allclose(waveform.harmonic_ratio(y, spc, 2), 4.0 / (3.0 * math.pi), rtol=1e-5)


def test_harmonic_ratio_validation_and_zero_fundamental() -> None:
    with pytest.raises(ParameterError) as info:
        waveform.harmonic_ratio(np.ones(65), 32, 1)
    assert info.value.parameter == "order"
    with pytest.raises(ParameterError) as info:
        waveform.harmonic_ratio(np.ones(65), 32, 16)  # at Nyquist
    assert info.value.parameter == "order"
    assert np.all(np.isnan(waveform.harmonic_ratio(np.zeros(65), 32, 2)))


def test_short_or_coarse_sample_sets_are_refused() -> None:
    with pytest.raises(ParameterError) as info:
        waveform.cycle_peaks(np.ones(10), 32)  # not one whole cycle
    assert info.value.parameter == "duration"
    with pytest.raises(ParameterError) as info:
        waveform.cycle_peaks(np.ones(10), 3)
    assert info.value.parameter == "samples_per_cycle"


# ------------------------------------------------------------------ decay


def test_decay_time_constant_of_exponential_peaks() -> None:
    # peaks A exp(-n/(f tau)): the log-linear fit returns tau exactly (rounding only, 1e-10)
    tau = 0.25
    n = np.arange(60)
    peaks = 1000.0 * np.exp(-n / (F_HZ * tau))
    fit = waveform.decay_time_constant(peaks, F_HZ, floor_a=1.0)
    assert fit.time_constant_s == pytest.approx(tau, rel=1e-10)
    assert (fit.first_cycle, fit.last_cycle) == (0, 59)
    # the floor cuts the fit where the peaks fall to it: 1000 e^(-n/15) > 100 up to n = 34
    fit = waveform.decay_time_constant(peaks, F_HZ, floor_a=100.0)
    assert fit.last_cycle == math.floor(15.0 * math.log(10.0))
    assert fit.time_constant_s == pytest.approx(tau, rel=1e-10)


def test_decay_time_constant_edge_cases() -> None:
    assert waveform.decay_time_constant(np.full(10, 5.0), F_HZ, 1.0).time_constant_s == math.inf
    assert math.isnan(waveform.decay_time_constant(np.array([5.0, 4.0]), F_HZ, 1.0).time_constant_s)
    assert math.isnan(waveform.decay_time_constant(np.array([]), F_HZ, 1.0).time_constant_s)


def test_time_below_on_exponential_peaks() -> None:
    # peaks 1000 exp(-n/15): the last cycle at or above 100 A is n = floor(15 ln 10) = 34, so
    # every peak from cycle 35 on is below: t = 35/60 s
    n = np.arange(60)
    peaks = 1000.0 * np.exp(-n / 15.0)
    assert waveform.time_below(peaks, 100.0, F_HZ) == pytest.approx(35.0 / F_HZ, rel=1e-15)
    assert waveform.time_below(peaks, 2000.0, F_HZ) == 0.0  # never reached
    assert math.isnan(waveform.time_below(peaks, 1e-3, F_HZ))  # still above at the end


# ------------------------------------------------------------------ a peak within a window


def test_window_peak_is_exact_on_a_parabola_and_a_sample_at_the_window_edge() -> None:
    # y = 5 - 2*(t - t*)^2 sampled every 0.1 s: the three-point parabola is the function itself,
    # so the vertex (5 at t*) is read exactly wherever t* falls between the samples
    dt = 0.1
    t = np.tile(np.arange(11) * dt, (3, 1))
    t_star = np.array([0.437, 0.5, 0.262])
    y = 5.0 - 2.0 * (t - t_star[:, None]) ** 2
    lo, hi = np.zeros(3), np.full(3, 1.05)
    peak, when, k = waveform.window_peak(y, t, lo, hi, dt, 1e-9 * dt)
    assert peak == pytest.approx([5.0, 5.0, 5.0], rel=1e-14)
    assert when == pytest.approx(t_star, abs=1e-14)
    assert k.tolist() == [4, 5, 3]
    # the window closes before the crest: the largest sample inside, with no neighbour beyond
    # the window to fit, is read as it is (a rising edge has no vertex inside)
    hi = np.full(3, 0.25)
    peak, when, k = waveform.window_peak(y, t, lo, hi, dt, 1e-9 * dt)
    assert k.tolist() == [2, 2, 2]
    assert peak == pytest.approx(y[:, 2], rel=0.0)
    assert when == pytest.approx([0.2, 0.2, 0.2], abs=1e-15)


def test_window_peak_never_reads_below_the_largest_sample_at_a_corner() -> None:
    # a sharp top (a triangle, like a line current whose slope changes where a winding crosses
    # its knee): the parabola's offset is clipped to one sample and its value never below the
    # largest sample
    dt = 0.1
    t = (np.arange(9) * dt)[None, :]
    tri = 1.0 - np.abs(t - 0.43) * 2.0
    peak, when, k = waveform.window_peak(tri, t, np.zeros(1), np.ones(1), dt, 1e-9 * dt)
    assert k.tolist() == [4]
    assert peak[0] >= tri[0, 4]
    assert abs(when[0] - 0.4) <= dt
