"""Readings of a network record: first peaks, per-cycle peaks and means, the bus dip, the
sympathetic current of a unit in service, the rule of thumb beside the simulation.

Every function takes a record as :func:`core.network.simulate_network` returns it: samples
uniformly spaced from t = 0 with a whole number of samples per cycle of the power frequency,
three lines (or phases) on the second-to-last axis and time on the last. Cycle n covers
[n*T, (n+1)*T) with T = 1/f, counted from the reference closing t = 0. The per-cycle peaks,
I_eq(t) and harmonic ratios are those of :mod:`core.waveform`, so a network reading
and a single unit's reading are the same number for the same waveform.

Limits: the readings are of the sampled record; a peak between samples is refined by a parabola
through the largest sample and its neighbours (its error is of the order of the curvature's
change over a sample), unless the exact readings of :mod:`core.network.peaks` are passed in
(the network operations do).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from core import checks, waveform
from core.errors import ParameterError

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]

__all__ = [
    "FIRST_PEAK_CYCLES",
    "BusDip",
    "CurrentReadings",
    "RulePoint",
    "Sympathetic",
    "bus_dip",
    "current_readings",
    "first_peak_window_end",
    "first_peaks",
    "first_peaks_of_maxima",
    "rule_of_thumb",
    "sympathetic_current",
]

# Cycles after the last pole of the energised units closes within which the first peak is
# sought (this project's choice: the largest peak of an energisation falls in its first cycle,
# the second leaves room for a pole closing late in a cycle; common practice).
FIRST_PEAK_CYCLES = 2.0


@dataclass(frozen=True)
class CurrentReadings:
    """Readings of one set of three line currents.

    Attributes
    ----------
    first_peak_a : float
        Largest |i| of the three lines up to the window's end, refined [A].
    first_peak_line : int
        Line (0, 1, 2) carrying it [-].
    cycle_peaks_a : ndarray, shape (n_cycles,)
        Peak |i| of each whole cycle, largest line [A].
    cycle_mean_a : ndarray, shape (3, n_cycles)
        Mean of each line's current over each whole cycle (its direct component) [A].
    equivalent_rms_times_s : ndarray, shape (n_times,)
        The times of :data:`core.waveform.STANDARD_TIMES_S` within the record [s].
    equivalent_rms_a : ndarray, shape (n_times,)
        I_eq(t) of the line with the largest per-cycle peak at those times [A].
    second_harmonic_ratio : ndarray, shape (n_cycles,)
        |I2|/|I1| per cycle, smallest of the three lines; nan where no line has a
        fundamental [-].
    min_second_harmonic_ratio : float
        Smallest of second_harmonic_ratio over the first ``harmonic_cycles`` cycles; nan when
        none is defined there [-].
    """

    first_peak_a: float
    first_peak_line: int
    cycle_peaks_a: FloatArray
    cycle_mean_a: FloatArray
    equivalent_rms_times_s: FloatArray
    equivalent_rms_a: FloatArray
    second_harmonic_ratio: FloatArray
    min_second_harmonic_ratio: float


@dataclass(frozen=True)
class Sympathetic:
    """The current of a unit in service while a neighbour's inrush depresses the bus.

    Attributes
    ----------
    peak_a : float
        Largest per-cycle peak of its lines [A].
    peak_cycle : int
        Cycle (0-based) of that peak [-].
    line : int
        Line (0, 1, 2) carrying it [-].
    above_from_s : float
        Start of the first cycle whose peak is at or above the fraction of peak_a [s].
    above_until_s : float
        End of the last such cycle; the record's end when the last whole cycle is one [s].
    duration_above_s : float
        above_until_s - above_from_s [s].
    steady_peak_a : float
        Peak of the first cycle (the unit's own magnetising current before the disturbance
        grows) [A].
    """

    peak_a: float
    peak_cycle: int
    line: int
    above_from_s: float
    above_until_s: float
    duration_above_s: float
    steady_peak_a: float


@dataclass(frozen=True)
class BusDip:
    """The bus voltage's dip, from its per-cycle rms.

    Attributes
    ----------
    cycle_rms_percent : ndarray, shape (n_cycles,)
        Per-cycle rms of the lowest phase, each whole cycle [% of nominal].
    min_percent : float
        Lowest of them [% of nominal].
    min_cycle : int
        Cycle (0-based) of that minimum [-].
    recovered_cycle : int or None
        First cycle from which every later cycle stays at or above the recovery level; 0 when
        the bus never dips below it, None when it has not recovered within the record [-].
    """

    cycle_rms_percent: FloatArray
    min_percent: float
    min_cycle: int
    recovered_cycle: int | None


@dataclass(frozen=True)
class RulePoint:
    """A common-practice inrush point beside the simulated equivalent rms.

    Attributes
    ----------
    multiple_x_rated : float
        The point's multiple of rated current [-].
    time_s : float
        The point's duration [s].
    current_a : float
        multiple_x_rated x the rated current [A].
    simulated_equivalent_rms_a : float or None
        I_eq(time_s) of the line with the largest |i| over the record; None when the record is
        shorter than time_s [A].
    simulated_over_rule : float or None
        simulated_equivalent_rms_a / current_a [-].
    """

    multiple_x_rated: float
    time_s: float
    current_a: float
    simulated_equivalent_rms_a: float | None
    simulated_over_rule: float | None


def _record(time_s: ArrayLike, values: ArrayLike, name: str) -> tuple[FloatArray, FloatArray]:
    t = np.asarray(time_s, dtype=float)
    x = np.asarray(values, dtype=float)
    if t.ndim != 1 or t.size < 2:
        raise ParameterError("time_s", t.shape, "one axis of at least two samples")
    if x.ndim < 2 or x.shape[-2] != 3 or x.shape[-1] != t.size:
        raise ParameterError(name, x.shape, f"shape (..., 3, {t.size})")
    return t, x


def first_peak_window_end(
    closing_time_s: ArrayLike,
    energized: Sequence[bool],
    frequency_hz: float,
    cycles: float = FIRST_PEAK_CYCLES,
) -> FloatArray:
    """End of the window within which the first peak is sought, per case.

    Parameters
    ----------
    closing_time_s : array_like, shape (..., n_units, 3)
        Pole closing instants of every unit (as :attr:`core.network.NetworkResult.
        closing_time_s`) [s].
    energized : sequence of bool, length n_units
        True for the units being energised (the others are in service) [-].
    frequency_hz : float
        Power frequency [Hz].
    cycles : float
        Cycles after the last pole closes, > 0 [-].

    Returns
    -------
    ndarray, shape (...)
        t_end = max over the energised units' poles of t_close + cycles/f [s].

    Raises
    ------
    ParameterError
        When no unit is energised, or a shape or value is out of range.

    Notes
    -----
    t_end = max_{u energised, k} t_{u,k} + cycles/f.

    References
    ----------
    This project's choice of window (see :data:`FIRST_PEAK_CYCLES`; common practice).
    """
    t = np.asarray(closing_time_s, dtype=float)
    mask = np.asarray(energized, dtype=bool)
    if t.ndim < 2 or t.shape[-2:] != (mask.size, 3):
        raise ParameterError("closing_time_s", t.shape, f"shape (..., {mask.size}, 3)")
    if not mask.any():
        raise ParameterError("energized", list(mask), "at least one unit energised")
    f = checks.positive("frequency_hz", frequency_hz)
    n = checks.positive("cycles", cycles)
    out: FloatArray = t[..., mask, :].max(axis=(-2, -1)) + n / f
    return out


def _vertex(
    y0: FloatArray,
    y1: FloatArray,
    y2: FloatArray,
    j: NDArray[np.float64] | NDArray[np.int64],
    n: int,
) -> FloatArray:
    """The parabola's vertex through the largest sample y1 (index j of n) and its neighbours,
    where it is an inner sample on a rounded top; y1 itself otherwise."""
    den = y0 - 2.0 * y1 + y2
    inner = (j > 0) & (j < n - 1) & (den < 0.0) & (y1 >= y0) & (y1 >= y2)
    with np.errstate(divide="ignore", invalid="ignore"):
        vertex = y1 - 0.125 * (y2 - y0) ** 2 / den
    peak: FloatArray = np.where(inner, vertex, y1)
    return peak


def first_peaks(
    time_s: ArrayLike, current_a: ArrayLike, window_end_s: ArrayLike
) -> tuple[FloatArray, IntArray]:
    """Largest |i| of three lines from t = 0 to the window's end, refined, for many records.

    Parameters
    ----------
    time_s : array_like, shape (n_samples,)
        Sample instants from t = 0 [s].
    current_a : array_like, shape (..., 3, n_samples)
        Line currents [A].
    window_end_s : array_like, shape (...) or scalar
        End of each record's window (inclusive, to 1e-12 relative) [s].

    Returns
    -------
    peak_a : ndarray, shape (...)
        The first peak of each record [A].
    line : ndarray of int, shape (...)
        The line carrying it (the first of equal ones) [-].

    Raises
    ------
    ParameterError
        On inconsistent shapes.

    Notes
    -----
    j = the largest sample of |i| on the line with the largest sample within the window; when
    j has a neighbour on each side, neither larger than y_j (a local maximum of the sampled
    waveform: its right neighbour may lie just outside the window), and the parabola through
    (y_{j-1}, y_j, y_{j+1}) opens downwards (d = y_{j-1} - 2 y_j + y_{j+1} < 0), the peak is
    its vertex y_j - (y_{j+1} - y_{j-1})^2/(8 d), at most |y_{j+1} - y_{j-1}|/8 above y_j;
    otherwise y_j (a window ending on a rising edge is not extrapolated).

    References
    ----------
    Three-point parabolic interpolation of a maximum (e.g. W. H. Press et al., Numerical
    Recipes, 3rd ed., Cambridge 2007, section 10.3, from memory).
    """
    t, i = _record(time_s, current_a, "current_a")
    a = np.abs(i)
    end = np.asarray(window_end_s, dtype=float)
    try:
        end = np.broadcast_to(end, a.shape[:-2])
    except ValueError as exc:
        raise ParameterError("window_end_s", end.shape, f"a scalar or {a.shape[:-2]}") from exc
    inside = t <= (end + 1e-12 * end)[..., None, None]
    seg = np.where(inside, a, -1.0)
    line = np.argmax(seg.max(axis=-1), axis=-1)
    row = np.take_along_axis(a, line[..., None, None], axis=-2)[..., 0, :]
    seg_row = np.take_along_axis(seg, line[..., None, None], axis=-2)[..., 0, :]
    j = np.argmax(seg_row, axis=-1)
    n = t.size
    jm = np.clip(j - 1, 0, n - 1)[..., None]
    jp = np.clip(j + 1, 0, n - 1)[..., None]
    y0 = np.take_along_axis(row, jm, -1)[..., 0]
    y1 = np.take_along_axis(row, j[..., None], -1)[..., 0]
    y2 = np.take_along_axis(row, jp, -1)[..., 0]
    return _vertex(y0, y1, y2, j, n), line.astype(np.int64)


def first_peaks_of_maxima(maxima: ArrayLike, n_samples: int) -> tuple[FloatArray, IntArray]:
    """:func:`first_peaks` from running maxima kept during the integration instead of a record.

    Parameters
    ----------
    maxima : array_like, shape (..., 3, 4)
        Per line: the largest |i| over the window's samples (the first of equal ones), |i| at
        the sample before it and at the sample after it (each the largest itself where there
        is none), and its sample index, as :func:`core.network.kernel.integrate` keeps them
        [A, A, A, -].
    n_samples : int
        Samples of the record the maxima stand for, >= 1 [-].

    Returns
    -------
    peak_a : ndarray, shape (...)
        The first peak [A].
    line : ndarray of int, shape (...)
        The line carrying it (the first of equal ones) [-].

    Raises
    ------
    ParameterError
        On a shape or size out of range.

    Notes
    -----
    The reading of :func:`first_peaks` on the same samples, operation for operation: the line
    with the largest maximum, y_j its maximum, y_{j-1} and y_{j+1} its neighbours, the vertex
    y_j - (y_{j+1} - y_{j-1})^2/(8 d), d = y_{j-1} - 2 y_j + y_{j+1}, where 0 < j < n - 1,
    d < 0 and y_j is no smaller than either neighbour; otherwise y_j. The same waveform gives
    the same number, bit for bit.

    References
    ----------
    As :func:`first_peaks` (W. H. Press et al., Numerical Recipes, 3rd ed., Cambridge 2007,
    section 10.3, from memory).
    """
    m = np.asarray(maxima, dtype=float)
    if m.ndim < 2 or m.shape[-2:] != (3, 4):
        raise ParameterError("maxima", m.shape, "shape (..., 3, 4)")
    n = checks.integer("n_samples", n_samples, 1, 2**62)
    line = np.argmax(m[..., 0], axis=-1)
    row = np.take_along_axis(m, line[..., None, None], axis=-2)[..., 0, :]
    return _vertex(row[..., 1], row[..., 0], row[..., 2], row[..., 3], n), line.astype(np.int64)


def current_readings(
    time_s: ArrayLike,
    current_a: ArrayLike,
    samples_per_cycle: int,
    window_end_s: float,
    harmonic_cycles: int,
    exact: tuple[float, int, FloatArray] | None = None,
) -> CurrentReadings:
    """First peak, per-cycle peaks and means, I_eq(t) and second harmonic of three lines.

    Parameters
    ----------
    time_s : array_like, shape (n_samples,)
        Sample instants from t = 0 [s].
    current_a : array_like, shape (3, n_samples)
        Line currents [A].
    samples_per_cycle : int
        Samples per cycle of the record [-].
    window_end_s : float
        End of the first peak's window (:func:`first_peak_window_end`) [s].
    harmonic_cycles : int
        First cycles over which the smallest second-harmonic ratio is taken, >= 1 [-].
    exact : tuple or None
        The first peak [A], its line [-] and the per-cycle peaks (largest line) [A] read
        exactly (:func:`core.network.peaks.signal_peaks`), which then replace the readings of
        the samples; None reads the samples [-].

    Returns
    -------
    CurrentReadings

    Raises
    ------
    ParameterError
        On inconsistent shapes or a record shorter than one cycle.

    Notes
    -----
    First peak: :func:`first_peaks`. Per-cycle peak: :func:`core.waveform.
    cycle_peaks`, the largest line each cycle. Mean of line k over cycle n:
    (1/N) sum_{j=0}^{N-1} i_k[nN + j], N samples per cycle. I_eq(t) =
    sqrt((1/t) integral_0^t i^2 dt) of the line whose largest per-cycle peak is largest
    (:func:`core.waveform.equivalent_rms`). Second harmonic: |I2|/|I1| of a
    one-cycle DFT (:func:`core.waveform.harmonic_ratio`), the smallest line each
    cycle (the line a cross-blocking relay would release on first).

    References
    ----------
    I_eq(t) against a time-current characteristic and the one-cycle DFT of a differential
    relay's harmonic restraint: common practice (see :mod:`core.waveform`).
    """
    t, i = _record(time_s, current_a, "current_a")
    if i.ndim != 2:
        raise ParameterError("current_a", i.shape, f"shape (3, {t.size})")
    spc = checks.integer("samples_per_cycle", samples_per_cycle, 4, 1_000_000)
    hc = checks.integer("harmonic_cycles", harmonic_cycles, 1, 1_000_000)
    peak, line = first_peaks(t, i, window_end_s)
    cyc = waveform.cycle_peaks(i, spc)
    n_cyc = cyc.shape[1]
    means = i[:, : n_cyc * spc].reshape(3, n_cyc, spc).mean(axis=2)
    times = np.array([x for x in waveform.STANDARD_TIMES_S if x <= t[-1] * (1 + 1e-12)])
    worst = int(np.argmax(cyc.max(axis=1)))
    dt = float(t[1] - t[0])
    ieq = waveform.equivalent_rms(i[worst], dt, times) if times.size else np.zeros(0)
    h2 = waveform.harmonic_ratio(i, spc, 2)
    h2_min = np.min(np.where(np.isnan(h2), np.inf, h2), axis=0)
    h2_min = np.where(np.isfinite(h2_min), h2_min, np.nan)
    head = h2_min[:hc]
    head = head[np.isfinite(head)]
    per_cycle = cyc.max(axis=0)
    first_a, first_line = float(peak), int(line)
    if exact is not None:
        first_a, first_line, per_cycle = float(exact[0]), int(exact[1]), exact[2]
        if per_cycle.shape != (n_cyc,):
            raise ParameterError("exact", per_cycle.shape, f"({n_cyc},) per-cycle peaks")
    return CurrentReadings(
        first_peak_a=first_a,
        first_peak_line=first_line,
        cycle_peaks_a=np.asarray(per_cycle, dtype=float),
        cycle_mean_a=means,
        equivalent_rms_times_s=times.astype(float),
        equivalent_rms_a=np.asarray(ieq, dtype=float),
        second_harmonic_ratio=h2_min,
        min_second_harmonic_ratio=float(head.min()) if head.size else math.nan,
    )


def sympathetic_current(
    line_current_a: ArrayLike,
    samples_per_cycle: int,
    frequency_hz: float,
    record_end_s: float,
    fraction: float,
    exact: tuple[FloatArray, IntArray] | None = None,
) -> Sympathetic:
    """Peak, line, polarity-free timing of a unit in service's sympathetic current.

    Parameters
    ----------
    line_current_a : array_like, shape (3, n_samples)
        The unit's line currents from t = 0 [A].
    samples_per_cycle : int
        Samples per cycle of the record [-].
    frequency_hz : float
        Power frequency [Hz].
    record_end_s : float
        End of the record (the cycles may stop short of it) [s].
    fraction : float
        Fraction of the peak over which the current is timed, in (0, 1] [-].
    exact : tuple of ndarray or None
        The per-cycle peaks (largest line) [A] and their lines [-] read exactly
        (:func:`core.network.peaks.signal_peaks`), used instead of the samples' [-].

    Returns
    -------
    Sympathetic

    Raises
    ------
    ParameterError
        On a value out of range or an empty record.

    Notes
    -----
    p_n = max over lines of the cycle-n peak (:func:`core.waveform.cycle_peaks`);
    the peak is max_n p_n at cycle m (the first of equal ones), on the line largest in that
    cycle. The cycles with p_n >= fraction x p_m run
    from a to b (first and last); above_from = a/f, above_until = min((b + 1)/f, record end),
    the record's end when b is the last whole cycle (the current may stay above beyond it).

    References
    ----------
    The timing of the sympathetic current above half its peak is this project's modelling
    choice; the phenomenon: H. S. Bronzeado, P. B. Brogan, R. Yacamini, "Harmonic analysis of
    transient currents during sympathetic interaction," IEEE Trans. Power Systems 11(4), 1996
    (from memory).
    """
    i = np.asarray(line_current_a, dtype=float)
    if i.ndim != 2 or i.shape[0] != 3:
        raise ParameterError("line_current_a", i.shape, "shape (3, n_samples)")
    spc = checks.integer("samples_per_cycle", samples_per_cycle, 4, 1_000_000)
    cyc = waveform.cycle_peaks(i, spc)
    f = checks.positive("frequency_hz", frequency_hz)
    frac = checks.in_range("fraction", fraction, 0.0, 1.0)
    end = float(record_end_s)
    per = cyc.max(axis=0)
    k = int(np.argmax(per))
    line = int(np.argmax(cyc[:, k]))
    if exact is not None:
        if exact[0].shape != per.shape:
            raise ParameterError("exact", exact[0].shape, f"{per.shape} per-cycle peaks")
        per = np.asarray(exact[0], dtype=float)
        k = int(np.argmax(per))
        line = int(exact[1][k])
    peak = float(per[k])
    above = np.nonzero(per >= frac * peak)[0]
    start = float(above[0]) / f
    until = min(float(above[-1] + 1) / f, end)
    if above[-1] == per.size - 1:
        until = end
    return Sympathetic(
        peak_a=peak,
        peak_cycle=k,
        line=line,
        above_from_s=start,
        above_until_s=until,
        duration_above_s=until - start,
        steady_peak_a=float(per[0]),
    )


def bus_dip(
    bus_voltage_v: ArrayLike,
    nominal_phase_voltage_v: float,
    samples_per_cycle: int,
    recovery_percent: float,
) -> BusDip:
    """Per-cycle rms of the bus voltage, its lowest value, and when it recovers.

    Parameters
    ----------
    bus_voltage_v : array_like, shape (3, n_samples)
        Phase-to-ground bus voltages from t = 0 [V].
    nominal_phase_voltage_v : float
        Rms phase voltage the percentages are of, > 0 [V].
    samples_per_cycle : int
        Samples per cycle of the record [-].
    recovery_percent : float
        Level at and above which the bus counts as recovered, in (0, 200] [% of nominal].

    Returns
    -------
    BusDip

    Raises
    ------
    ParameterError
        On a value out of range or a record shorter than one cycle.

    Notes
    -----
    V_n,k = sqrt((1/N) sum_{j=0}^{N-1} v_k[nN + j]^2) over the N samples of cycle n (the
    rectangle rule over one period, exact for a sampled sinusoid and its harmonics below
    N/2); the lowest phase each cycle, in per cent of nominal. Recovered: the cycle after the
    last one below the level (0 when none is below; None when the last cycle is below).

    References
    ----------
    Per-cycle rms as the measure of a voltage dip: IEC 61000-4-30, clause 5.4 (its
    Urms(1/2) over one cycle refreshed each half cycle; here refreshed each cycle; from memory).
    """
    v = np.asarray(bus_voltage_v, dtype=float)
    if v.ndim != 2 or v.shape[0] != 3:
        raise ParameterError("bus_voltage_v", v.shape, "shape (3, n_samples)")
    v_nom = checks.positive("nominal_phase_voltage_v", nominal_phase_voltage_v)
    spc = checks.integer("samples_per_cycle", samples_per_cycle, 4, 1_000_000)
    level = checks.in_range("recovery_percent", recovery_percent, 0.0, 200.0)
    n_cyc = (v.shape[1] - 1) // spc
    if n_cyc < 1:
        raise ParameterError("bus_voltage_v", v.shape[1], f"at least {spc + 1} samples")
    rms = np.sqrt(np.mean(v[:, : n_cyc * spc].reshape(3, n_cyc, spc) ** 2, axis=2))
    pct = 100.0 * rms.min(axis=0) / v_nom
    k = int(np.argmin(pct))
    below = np.nonzero(pct < level)[0]
    rec: int | None
    if below.size == 0:
        rec = 0
    elif below[-1] + 1 < n_cyc:
        rec = int(below[-1] + 1)
    else:
        rec = None
    return BusDip(
        cycle_rms_percent=pct, min_percent=float(pct[k]), min_cycle=k, recovered_cycle=rec
    )


def rule_of_thumb(
    time_s: ArrayLike,
    current_a: ArrayLike,
    rated_current_a: float,
    points: Sequence[tuple[float, float]],
) -> tuple[RulePoint, ...]:
    """Common-practice inrush points beside the simulated equivalent rms at their durations.

    Parameters
    ----------
    time_s : array_like, shape (n_samples,)
        Sample instants from t = 0, uniformly spaced [s].
    current_a : array_like, shape (3, n_samples)
        Line currents (e.g. out of the source) [A].
    rated_current_a : float
        The rated rms current the multiples are of, > 0 [A].
    points : sequence of (float, float)
        (multiple of rated current, duration) pairs, e.g.
        :data:`core.protection.device_operation.INRUSH_POINTS` [-, s].

    Returns
    -------
    tuple of RulePoint
        In the order of ``points``.

    Raises
    ------
    ParameterError
        On inconsistent shapes or a rated current out of range.

    Notes
    -----
    I_eq(t) = sqrt((1/t) integral_0^t i^2 dt) of the line whose largest |i| over the record
    is largest (:func:`core.waveform.equivalent_rms`), against m x I_r.

    References
    ----------
    The points (12 x for 0.1 s, 25 x for 0.01 s): common practice, no published source (see
    :data:`core.protection.device_operation.INRUSH_POINTS`).
    """
    t, i = _record(time_s, current_a, "current_a")
    if i.ndim != 2:
        raise ParameterError("current_a", i.shape, f"shape (3, {t.size})")
    rated = checks.positive("rated_current_a", rated_current_a)
    worst = int(np.argmax(np.abs(i).max(axis=1)))
    dt = float(t[1] - t[0])
    out = []
    for mult, t_pt in points:
        sim = float(waveform.equivalent_rms(i[worst], dt, [t_pt])[0]) if t_pt <= t[-1] else None
        cur = mult * rated
        out.append(
            RulePoint(
                multiple_x_rated=mult,
                time_s=t_pt,
                current_a=cur,
                simulated_equivalent_rms_a=sim,
                simulated_over_rule=sim / cur if sim is not None else None,
            )
        )
    return tuple(out)
