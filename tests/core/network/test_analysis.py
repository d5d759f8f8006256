"""core.network.analysis on hand-made records whose readings are known in closed form.

References used below (each check names its own):

* the parabola through three samples of a parabola is that parabola, so its vertex is exact;
* a sinusoid sampled N times per period, N >= 3: sum of sin over the period = 0 and sum of
  sin^2 = N/2 (discrete orthogonality of the DFT basis), hence a cycle's mean is its offset, its
  rms is amplitude/sqrt(2), and the one-cycle DFT reads each harmonic's amplitude exactly;
* for a sine, the trapezoid rule over whole half-periods of uniformly spaced samples is exact
  (same identity), so I_eq(t) = A/sqrt(2) there; a constant current's I_eq is the current.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from core.errors import ParameterError
from core.network import analysis

F = 50.0
SPC = 64
PHASES = np.array([0.0, -2.0 * math.pi / 3.0, 2.0 * math.pi / 3.0])


def _time(cycles: int) -> np.ndarray:
    return np.arange(cycles * SPC + 1) / (F * SPC)


def _bumps(length: int = 41) -> np.ndarray:
    """Three lines; line 1 carries the parabola 10 - (j - 20.3)^2 near sample 20, line 2 a
    larger one, 12 - (j - 35.6)^2, near sample 36; everything else 1."""
    j = np.arange(length, dtype=float)
    i = np.ones((3, length))
    i[1] = np.maximum(1.0, 10.0 - (j - 20.3) ** 2)
    i[2] = -np.maximum(1.0, 12.0 - (j - 35.6) ** 2)  # negative: |i| is what counts
    return i


def test_first_peak_is_the_vertex_of_a_sampled_parabola() -> None:
    t = np.arange(41) * 1e-3
    i = _bumps()
    # window to sample 30 sees line 1 only: vertex 10 (exact for a parabola)
    peak, line = analysis.first_peaks(t, i, 0.030)
    assert float(peak) == pytest.approx(10.0, rel=1e-12)
    assert int(line) == 1
    # to the end, line 2's larger parabola (vertex 12, exact) wins
    peak, line = analysis.first_peaks(t, i, 0.040)
    assert float(peak) == pytest.approx(12.0, rel=1e-12)
    assert int(line) == 2


def test_first_peaks_per_case_windows_equal_one_case_at_a_time() -> None:
    # vector = scalar: each case's window applies to that case alone
    t = np.arange(41) * 1e-3
    cases = np.stack([_bumps(), 0.5 * _bumps(), _bumps()[::-1]])
    ends = np.array([0.030, 0.040, 0.012])
    peaks, lines = analysis.first_peaks(t, cases, ends)
    for k in range(3):
        p, ln = analysis.first_peaks(t, cases[k], ends[k])
        assert peaks[k] == float(p)
        assert lines[k] == int(ln)
    assert peaks[1] == pytest.approx(6.0, rel=1e-12)  # half of line 2's vertex 12


@settings(max_examples=60, deadline=None)
@given(
    values=st.lists(
        st.floats(-1e4, 1e4, allow_nan=False, allow_infinity=False), min_size=3 * 12, max_size=36
    ),
    end=st.integers(0, 11),
)
def test_first_peak_is_at_least_the_largest_sample_in_the_window(
    values: list[float], end: int
) -> None:
    # property: the refined peak is never below the largest |i| sampled within the window, and
    # exceeds it by at most what a parabola through a local maximum y1 >= y0, y2 can add:
    # (y2 - y0)^2 / (8 |d|) <= |y2 - y0| / 8, since |d| = (y1 - y0) + (y1 - y2) >= |y2 - y0|
    t = np.arange(12) * 1e-3
    i = np.asarray(values).reshape(3, 12)
    peak, line = analysis.first_peaks(t, i, t[end])
    top = float(np.abs(i[:, : end + 1]).max())
    assert float(peak) >= top
    a = np.abs(i[int(line)])
    assert float(peak) <= top + 0.125 * float(np.ptp(a)) + 1e-9 * max(1.0, top)


def test_a_window_ending_on_a_rising_edge_is_not_extrapolated() -> None:
    # |i| = 0, 1, 1.99 ...: the parabola through the last three would put a vertex at 50
    t = np.arange(4) * 1e-3
    i = np.zeros((3, 4))
    i[0] = [0.0, 1.0, 1.99, 2.5]
    peak, _ = analysis.first_peaks(t, i, t[1])
    assert float(peak) == 1.0


def test_first_peak_at_the_record_edge_is_not_refined() -> None:
    t = np.arange(5) * 1e-3
    i = np.array([[0.0, 1.0, 2.0, 3.0, 4.0], [0.0] * 5, [0.0] * 5])
    peak, _ = analysis.first_peaks(t, i, 1.0)
    assert float(peak) == 4.0  # the last sample has no right neighbour: taken as it is


def test_first_peak_window_end() -> None:
    closing = np.array([[[0.001, 0.002, 0.004], [0.0, 0.0, 0.0], [0.010, 0.003, 0.0]]])
    # units 0 and 2 energised, 1 in service (its zeros do not count): 0.010 + 2/50
    end = analysis.first_peak_window_end(closing, [True, False, True], F)
    assert end.shape == (1,)
    assert float(end[0]) == pytest.approx(0.010 + 2.0 / F, rel=1e-15)
    end = analysis.first_peak_window_end(closing[0], [True, False, False], F, cycles=1.0)
    assert float(end) == pytest.approx(0.004 + 1.0 / F, rel=1e-15)
    with pytest.raises(ParameterError, match="energized"):
        analysis.first_peak_window_end(closing, [False, False, False], F)


def test_current_readings_of_offset_sines_with_a_second_harmonic() -> None:
    cycles = 4
    t = _time(cycles)
    w = 2.0 * math.pi * F
    offsets = np.array([3.0, -2.0, 0.5])
    second = np.array([0.2, 0.1, 0.3])  # per unit of the fundamental's amplitude
    amp = 100.0
    i = np.stack(
        [
            offsets[k] + amp * np.sin(w * t + PHASES[k]) + second[k] * amp * np.sin(2 * w * t)
            for k in range(3)
        ]
    )
    r = analysis.current_readings(t, i, SPC, 2.0 / F, harmonic_cycles=2)
    # cycle mean = the offset (sum of a whole period's sine samples is zero)
    np.testing.assert_allclose(r.cycle_mean_a, np.repeat(offsets[:, None], cycles, 1), atol=1e-11)
    # one-cycle DFT reads |I2|/|I1| exactly; the smallest line is line 1 (0.1)
    np.testing.assert_allclose(r.second_harmonic_ratio, np.full(cycles, 0.1), rtol=1e-12)
    assert r.min_second_harmonic_ratio == pytest.approx(0.1, rel=1e-12)
    # the record is periodic: every cycle has the same peak, and the first peak is that peak
    np.testing.assert_allclose(r.cycle_peaks_a, r.cycle_peaks_a[0], rtol=1e-12)
    assert r.first_peak_a == pytest.approx(r.cycle_peaks_a[0], rel=1e-12)
    assert r.equivalent_rms_times_s.tolist() == [0.01, 0.02, 0.05]


def test_current_readings_equivalent_rms_of_a_sine() -> None:
    t = _time(3)
    amp = 50.0
    i = amp * np.sin(2.0 * math.pi * F * t + PHASES[:, None])
    i[0] *= 2.0  # line 0 largest: I_eq is read on it
    r = analysis.current_readings(t, i, SPC, 1.0 / F, harmonic_cycles=1)
    # trapezoid over whole half-periods of a sampled sine is exact: I_eq = A/sqrt(2)
    np.testing.assert_allclose(r.equivalent_rms_a, 2.0 * amp / math.sqrt(2.0), rtol=1e-12)
    # the crest of line 0 falls on sample 16 (a quarter cycle): exactly 2 x amp
    assert r.first_peak_a == pytest.approx(2.0 * amp, rel=1e-14)
    assert r.first_peak_line == 0


def _stepped_sine(amplitudes: list[float], rest: float = 0.5) -> tuple[np.ndarray, np.ndarray]:
    """Line 0: a_n sin(wt) in cycle n (crest on a sample); lines 1, 2 at ``rest`` x that."""
    t = _time(len(amplitudes))
    env = np.repeat(np.asarray(amplitudes, dtype=float), SPC)
    env = np.append(env, amplitudes[-1])
    i = env * np.sin(2.0 * math.pi * F * t + PHASES[:, None])
    i[1:] *= rest
    return t, i


def test_sympathetic_current_timing() -> None:
    t, i = _stepped_sine([1, 1, 2, 5, 8, 6, 3.9, 3, 1, 1])
    s = analysis.sympathetic_current(i, SPC, F, float(t[-1]), 0.5)
    # peak 8 in cycle 4 on line 0; cycles 3-5 (5, 8, 6) are at or above 4
    assert s.peak_a == pytest.approx(8.0, rel=1e-14)
    assert (s.peak_cycle, s.line) == (4, 0)
    assert s.above_from_s == pytest.approx(3.0 / F)
    assert s.above_until_s == pytest.approx(6.0 / F)
    assert s.duration_above_s == pytest.approx(3.0 / F)
    assert s.steady_peak_a == pytest.approx(1.0, rel=1e-14)


def test_sympathetic_current_still_above_at_the_end_runs_to_the_record_end() -> None:
    t, i = _stepped_sine([1, 2, 8, 7, 6])
    end = float(t[-1]) + 0.3  # a record longer than its whole cycles
    s = analysis.sympathetic_current(i, SPC, F, end, 0.5)
    assert s.above_from_s == pytest.approx(2.0 / F)
    assert s.above_until_s == end


def _bus(levels: list[float], low_phase: float = 0.98) -> tuple[np.ndarray, float]:
    v_nom = 7967.0
    t = _time(len(levels))
    env = np.append(np.repeat(np.asarray(levels, dtype=float), SPC), levels[-1])
    v = math.sqrt(2.0) * v_nom * env * np.sin(2.0 * math.pi * F * t + PHASES[:, None])
    v[1] *= low_phase
    return v, v_nom


def test_bus_dip_per_cycle_rms_and_recovery() -> None:
    levels = [1.0, 0.7, 0.8, 0.85, 0.95, 1.0]
    v, v_nom = _bus(levels)
    d = analysis.bus_dip(v, v_nom, SPC, 90.0)
    # rms of a sampled sine over its period is amplitude/sqrt(2); phase 1 is 2 % lower
    np.testing.assert_allclose(d.cycle_rms_percent, 98.0 * np.array(levels), rtol=1e-12)
    assert d.min_percent == pytest.approx(98.0 * 0.7, rel=1e-12)
    assert d.min_cycle == 1
    assert d.recovered_cycle == 4  # 0.95 x 98 % = 93.1 % >= 90 % from cycle 4 on


def test_bus_dip_never_below_and_never_recovered() -> None:
    v, v_nom = _bus([1.0, 0.95, 1.0])
    assert analysis.bus_dip(v, v_nom, SPC, 90.0).recovered_cycle == 0
    v, v_nom = _bus([1.0, 0.9, 0.8])
    assert analysis.bus_dip(v, v_nom, SPC, 90.0).recovered_cycle is None


def test_rule_of_thumb_against_a_constant_current() -> None:
    t = _time(10)  # 0.2 s
    i = np.zeros((3, t.size))
    i[2] = -600.0  # a constant current's I_eq is the current itself
    i[0] = 100.0
    pts = analysis.rule_of_thumb(t, i, 10.0, ((12.0, 0.1), (25.0, 0.01), (2.0, 0.5)))
    assert [p.current_a for p in pts] == [120.0, 250.0, 20.0]
    assert pts[0].simulated_equivalent_rms_a == pytest.approx(600.0, rel=1e-12)
    assert pts[0].simulated_over_rule == pytest.approx(5.0, rel=1e-12)
    assert pts[1].simulated_over_rule == pytest.approx(2.4, rel=1e-12)
    assert pts[2].simulated_equivalent_rms_a is None  # beyond the 0.2 s record
    assert pts[2].simulated_over_rule is None


def test_shapes_are_checked() -> None:
    t = _time(2)
    with pytest.raises(ParameterError, match="current_a"):
        analysis.first_peaks(t, np.zeros((2, t.size)), 0.01)
    with pytest.raises(ParameterError, match="bus_voltage_v"):
        analysis.bus_dip(np.zeros((3, 10)), 1.0, SPC, 90.0)
    with pytest.raises(ParameterError, match="rated_current_a"):
        analysis.rule_of_thumb(t, np.zeros((3, t.size)), 0.0, ((12.0, 0.1),))
