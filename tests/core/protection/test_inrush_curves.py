"""core.protection.inrush_curves: what devices see of a current, against closed forms of a sinusoid.

References, worked out by hand in each test (calculus of sin², no call into core for the value):
the rms of a sinusoid of crest I is I/sqrt(2) over whole cycles; the integral of (I·sin(omega·t))²
over a half cycle is I²·T/4; the crest itself is the largest |i|.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from core.errors import ParameterError
from core.protection.inrush_curves import inrush_from_table, inrush_from_waveform

F_HZ = 60.0
T = 1.0 / F_HZ
CREST_A = 1000.0
SAMPLES_PER_CYCLE = 512


def _sinusoid(cycles: int) -> tuple[np.ndarray, np.ndarray]:
    t = np.arange(cycles * SAMPLES_PER_CYCLE + 1) / (SAMPLES_PER_CYCLE * F_HZ)
    return t, CREST_A * np.sin(2.0 * math.pi * F_HZ * t)


def test_steady_sinusoid_is_seen_at_its_rms_its_crest_and_half_cycle_i2t() -> None:
    t, i = _sinusoid(10)
    seen = inrush_from_waveform(t, i, F_HZ, rated_current_a=500.0)
    rms = CREST_A / math.sqrt(2.0)  # rms of a sinusoid
    # I_eq(t) at the whole cycles is the rms exactly (sampled: trapezoidal rule, 512 per cycle)
    whole = np.isclose(np.mod(seen.eq_time_s * F_HZ, 1.0), 0.0, atol=1e-9) & (seen.eq_time_s > 0)
    if whole.any():
        assert seen.eq_current_a[0, whole] == pytest.approx(rms, rel=1e-4)
    # between, I_eq stays within the half-cycle ripple of the rms: at t >= T/2 the partial cycle
    # weighs at most T/2 of t, so |I_eq^2 - rms^2| <= rms^2 * (T/2)/t / ... bounded by 2x here
    assert np.all(np.abs(seen.eq_current_a[0] - rms) <= rms)
    # the relay's sliding one-cycle rms of a steady sinusoid is its rms once a full cycle is in
    # the window (before, the window holds zero current from before t = 0)
    full = seen.rms_time_s >= T * (1.0 + 1e-9)
    assert full.any()
    assert seen.rms_current_a[0, full] == pytest.approx(rms, rel=1e-3)
    # the largest |i| is the crest; the largest half-cycle rms is the rms; the largest integral
    # of i² over one half cycle is crest² T/4
    assert seen.peak is not None
    assert seen.half_cycle_rms is not None
    assert seen.window_i2t is not None
    assert seen.peak.value[0] == pytest.approx(CREST_A, rel=1e-6)
    assert seen.half_cycle_rms.value[0] == pytest.approx(rms, rel=1e-3)
    assert seen.window_i2t.value[0] == pytest.approx(CREST_A**2 * T / 4.0, rel=1e-3)


def test_an_i2t_window_of_n_half_cycles_holds_n_times_the_energy() -> None:
    # n half cycles of sin²: n * crest² T/4 (each half cycle carries the same energy)
    t, i = _sinusoid(6)
    seen = inrush_from_waveform(t, i, F_HZ, i2t_half_cycles=4)
    assert seen.window_i2t is not None
    assert seen.window_i2t.value[0] == pytest.approx(4.0 * CREST_A**2 * T / 4.0, rel=1e-3)


def test_lines_are_labelled_and_checked() -> None:
    t, i = _sinusoid(3)
    three = inrush_from_waveform(t, np.stack([i, 0.5 * i, 0.25 * i]), F_HZ)
    assert three.lines == ("A", "B", "C")
    # the rms scales with the amplitude (linearity of the rms in the amplitude)
    ratio = three.rms_current_a[1, -1] / three.rms_current_a[0, -1]
    assert ratio == pytest.approx(0.5, rel=1e-9)
    with pytest.raises(ParameterError) as err:
        inrush_from_waveform(t, np.stack([i, i]), F_HZ, lines=["X", "X"])
    assert err.value.parameter == "lines"


@pytest.mark.parametrize(
    ("kwargs", "parameter"),
    [
        ({"frequency_hz": 0.0}, "frequency_hz"),
        ({"frequency_hz": F_HZ, "points": 1}, "points"),
        ({"frequency_hz": F_HZ, "i2t_half_cycles": 21}, "i2t_half_cycles"),
        ({"frequency_hz": F_HZ, "rated_current_a": -1.0}, "rated_current_a"),
    ],
)
def test_bad_inputs_name_their_parameter(kwargs: dict[str, float], parameter: str) -> None:
    t, i = _sinusoid(2)
    with pytest.raises(ParameterError) as err:
        inrush_from_waveform(t, i, **kwargs)  # type: ignore[arg-type]
    assert err.value.parameter == parameter


def test_a_table_is_taken_as_given() -> None:
    # a table of I_eq against time (e.g. read off a maker's inrush record): what devices see is
    # the table itself, with no peak, half-cycle rms or I2t unless given
    times = np.array([0.01, 0.1, 1.0])
    ieq = np.array([[8000.0, 4000.0, 1500.0]])
    seen = inrush_from_table(times, ieq)
    assert seen.eq_time_s.tolist() == times.tolist()
    assert seen.eq_current_a.tolist() == ieq.tolist()
    assert seen.peak is None
