"""Analysis of a sampled inrush current: per-cycle peaks, decay, rms over time, harmonics.

Every function takes currents sampled uniformly from t = 0 with a whole number of samples per
cycle of the power frequency, as :func:`core.energization.energize.simulate` and
:func:`core.network.simulate_network` return them, with time on the last axis; leading axes
(cases, phases) are carried through. Cycle n covers [n*T, (n+1)*T) with T = 1/f, counted from
the closing command.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from core.errors import ParameterError

FloatArray = NDArray[np.float64]

__all__ = [
    "MAX_SAMPLES_PER_CYCLE",
    "MAX_STEPS_PER_CYCLE",
    "MIN_STEPS_PER_CYCLE",
    "STAGE_FACTOR",
    "STANDARD_TIMES_S",
    "DecayFit",
    "cycle_peaks",
    "decay_time_constant",
    "equivalent_rms",
    "finer_samples_per_cycle",
    "harmonic_ratio",
    "refinement_stages",
    "shortest_time_constant",
    "time_below",
    "window_peak",
]

# Times at which the equivalent rms is tabulated (common practice: the 0.01 s and 0.1 s points of
# the inrush "rule of thumb" plus a 1-2-5 series up to 2 s).
STANDARD_TIMES_S = (0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1.0, 2.0)


def _cycles(current: FloatArray, samples_per_cycle: int) -> FloatArray:
    if samples_per_cycle < 4:
        raise ParameterError("samples_per_cycle", samples_per_cycle, "an integer >= 4")
    n_cycles = (current.shape[-1] - 1) // samples_per_cycle
    if n_cycles < 1:
        raise ParameterError("duration", current.shape[-1], "at least one whole cycle of samples")
    body = current[..., : n_cycles * samples_per_cycle]
    return body.reshape((*current.shape[:-1], n_cycles, samples_per_cycle))


def cycle_peaks(current_a: ArrayLike, samples_per_cycle: int) -> FloatArray:
    """Largest absolute current in each whole cycle.

    Parameters
    ----------
    current_a : array_like, shape (..., n_samples)
        Sampled current [A].
    samples_per_cycle : int
        Samples per cycle [-].

    Returns
    -------
    ndarray, shape (..., n_cycles)
        Peak |i| of each cycle [A], refined by a parabola through the largest sample and its two
        neighbours (the sample grid alone underestimates a narrow peak).

    Notes
    -----
    For samples y0 <= y1 >= y2 the parabola's vertex is y1 + (y0 - y2)^2 / (8*(2*y1 - y0 - y2)).
    """
    i = np.abs(np.asarray(current_a, dtype=float))
    cyc = _cycles(i, samples_per_cycle)
    n = samples_per_cycle
    k = np.argmax(cyc, axis=-1)
    base = np.arange(cyc.shape[-2]) * n
    flat_index = base + k  # index into the full series
    full = i
    km = np.clip(flat_index, 1, full.shape[-1] - 2)
    y0 = np.take_along_axis(full, km - 1, -1)
    y1 = np.take_along_axis(full, km, -1)
    y2 = np.take_along_axis(full, km + 1, -1)
    den = 2.0 * y1 - y0 - y2
    with np.errstate(divide="ignore", invalid="ignore"):
        vertex = y1 + np.where(den > 0.0, (y0 - y2) ** 2 / (8.0 * den), 0.0)
    ok = (km == flat_index) & (y1 >= y0) & (y1 >= y2)
    raw = np.max(cyc, axis=-1)
    out: FloatArray = np.where(ok, np.maximum(vertex, raw), raw)
    return out


def window_peak(
    y: FloatArray,
    t: FloatArray,
    t_lo: FloatArray,
    t_hi: FloatArray,
    step_s: float,
    tolerance_s: float,
) -> tuple[FloatArray, FloatArray, NDArray[np.int64]]:
    """Largest value of each row within a time window, read by the parabola around it.

    Parameters
    ----------
    y : ndarray, shape (n_rows, n_samples)
        Sampled values, >= 0 (an absolute current) [A].
    t : ndarray, shape (n_rows, n_samples)
        Instant of each sample, equally spaced by ``step_s`` along a row [s].
    t_lo, t_hi : ndarray, shape (n_rows,)
        Each row's window [t_lo, t_hi) [s].
    step_s : float
        Sample spacing [s].
    tolerance_s : float
        Slack on both ends of the window, against rounding of the instants [s].

    Returns
    -------
    tuple of ndarray, shape (n_rows,)
        The largest value [A]; its instant [s]; the index of the largest sample [-]. Where the
        largest sample has a neighbour in the window on each side, the value and the instant are
        the vertex of the parabola through the three samples (the offset clipped to one sample,
        never below the sample); otherwise the sample itself.

    Notes
    -----
    For samples y0, y1, y2 with d = y0 - 2*y1 + y2 < 0 the vertex lies at the offset
    o = (y0 - y2)/(2*d) steps from y1 and its value is y1 - (y0 - y2)*o/4.

    References
    ----------
    Three-point parabolic interpolation of a maximum (any numerical-analysis text, e.g. Press et
    al., Numerical Recipes, 3rd ed., 2007, sec. 10.3, from memory).
    """
    inside = (t >= t_lo[:, None] - tolerance_s) & (t < t_hi[:, None] - tolerance_s)
    y_in = np.where(inside, y, -1.0)
    k = np.argmax(y_in, axis=1)
    rows = np.arange(y.shape[0])
    km = np.clip(k, 1, y.shape[1] - 2)
    y0 = np.where(inside[rows, km - 1], y[rows, km - 1], -np.inf)
    y2 = np.where(inside[rows, km + 1], y[rows, km + 1], -np.inf)
    a, b, c = y[rows, km - 1], y[rows, km], y[rows, km + 1]
    den = a - 2.0 * b + c
    with np.errstate(divide="ignore", invalid="ignore"):
        off = np.where(den < 0.0, np.clip(0.5 * (a - c) / den, -1.0, 1.0), 0.0)
    v = np.maximum(b - 0.25 * (a - c) * off, b)
    smooth = (km == k) & np.isfinite(y0) & np.isfinite(y2)
    peak: FloatArray = np.where(smooth, v, y[rows, k])
    when: FloatArray = t[rows, k] + np.where(smooth, off, 0.0) * step_s
    return peak, when, k.astype(np.int64)


@dataclass(frozen=True)
class DecayFit:
    """Exponential fit of per-cycle peaks, peak_n ~ A*exp(-t_n/tau).

    Attributes
    ----------
    time_constant_s : float
        tau [s]; +inf when the peaks do not decay, nan when too few cycles qualify.
    first_cycle, last_cycle : int
        Cycles used (inclusive, 0-based).
    """

    time_constant_s: float
    first_cycle: int
    last_cycle: int


def decay_time_constant(
    peaks_a: ArrayLike, frequency_hz: float, floor_a: float, max_cycles: int = 60
) -> DecayFit:
    """Fit an exponential decay time constant to per-cycle peaks of one current.

    Parameters
    ----------
    peaks_a : array_like, shape (n_cycles,)
        Per-cycle peaks [A].
    frequency_hz : float
        Power frequency [Hz].
    floor_a : float
        Peaks at or below this value (e.g. twice the steady magnetising peak) are left out [A].
    max_cycles : int
        At most this many cycles from the largest peak are used [-].

    Returns
    -------
    DecayFit

    Notes
    -----
    Least-squares line through ln(peak_n) against t_n = n/f from the largest peak onwards, while
    peaks stay above the floor. Inrush does not decay exactly exponentially (faster at first,
    slower later, as the saturated interval shrinks), so tau is an equivalent single time
    constant over the cycles reported.
    """
    p = np.asarray(peaks_a, dtype=float).ravel()
    if p.size == 0:
        return DecayFit(math.nan, 0, 0)
    start = int(np.argmax(p))
    stop = start
    while stop + 1 < p.size and stop + 1 - start < max_cycles and p[stop + 1] > floor_a:
        stop += 1
    if stop - start < 2 or p[start] <= floor_a:
        return DecayFit(math.nan, start, stop)
    n = np.arange(start, stop + 1)
    slope = float(np.polyfit(n / frequency_hz, np.log(p[start : stop + 1]), 1)[0])
    tau = -1.0 / slope if slope < 0.0 else math.inf
    return DecayFit(tau, start, stop)


def time_below(peaks_a: ArrayLike, threshold_a: float, frequency_hz: float) -> float:
    """Time from which every later per-cycle peak stays below a threshold.

    Parameters
    ----------
    peaks_a : array_like, shape (n_cycles,)
        Per-cycle peaks [A].
    threshold_a : float
        Threshold [A].
    frequency_hz : float
        Power frequency [Hz].

    Returns
    -------
    float
        Start of the first cycle after which no peak reaches the threshold [s]; 0 when none
        does; nan when the last simulated cycle still reaches it (simulate longer).
    """
    p = np.asarray(peaks_a, dtype=float).ravel()
    above = np.nonzero(p >= threshold_a)[0]
    if above.size == 0:
        return 0.0
    last = int(above[-1])
    if last == p.size - 1:
        return math.nan
    return (last + 1) / frequency_hz


def equivalent_rms(
    current_a: ArrayLike, sample_interval_s: float, times_s: ArrayLike
) -> FloatArray:
    """Equivalent rms current from t = 0 to t, I_eq(t) = sqrt((1/t) * integral_0^t i^2 dt).

    Parameters
    ----------
    current_a : array_like, shape (..., n_samples)
        Sampled current from t = 0 [A].
    sample_interval_s : float
        Sample spacing [s].
    times_s : array_like, shape (n_times,)
        Times at which to evaluate, 0 < t <= last sample [s].

    Returns
    -------
    ndarray, shape (..., n_times)
        I_eq [A].

    Notes
    -----
    Cumulative trapezoid of i^2, interpolated linearly between samples. This is the rms that a
    time-current characteristic is compared with (the heating-equivalent constant current over
    the same time; common practice).
    """
    i = np.asarray(current_a, dtype=float)
    t = np.asarray(times_s, dtype=float)
    dt = float(sample_interval_s)
    t_end = (i.shape[-1] - 1) * dt
    if np.any(t <= 0.0) or np.any(t > t_end * (1.0 + 1e-12)):
        raise ParameterError("times_s", t.tolist(), f"in (0, {t_end:g}] s")
    sq = i * i
    cum = np.concatenate(
        (np.zeros((*i.shape[:-1], 1)), np.cumsum(0.5 * (sq[..., 1:] + sq[..., :-1]) * dt, -1)),
        axis=-1,
    )
    grid = np.arange(i.shape[-1]) * dt
    flat = cum.reshape(-1, cum.shape[-1])
    energy = np.stack([np.interp(t, grid, row) for row in flat]).reshape((*i.shape[:-1], t.size))
    out: FloatArray = np.sqrt(np.maximum(energy, 0.0) / t)
    return out


def harmonic_ratio(current_a: ArrayLike, samples_per_cycle: int, order: int = 2) -> FloatArray:
    """Ratio of a harmonic to the fundamental in each whole cycle.

    Parameters
    ----------
    current_a : array_like, shape (..., n_samples)
        Sampled current [A].
    samples_per_cycle : int
        Samples per cycle [-].
    order : int
        Harmonic order, 2 for the second harmonic a differential relay restrains on [-].

    Returns
    -------
    ndarray, shape (..., n_cycles)
        |I_order| / |I_1| per cycle [-]; nan where the fundamental is zero.

    Notes
    -----
    Discrete Fourier transform over each one-cycle window [n*T, (n+1)*T) (the window a
    full-cycle relay filter uses; common practice).
    """
    if not 2 <= order < samples_per_cycle // 2:
        raise ParameterError("order", order, f"in [2, {samples_per_cycle // 2 - 1}]")
    cyc = _cycles(np.asarray(current_a, dtype=float), samples_per_cycle)
    spec = np.fft.rfft(cyc, axis=-1)
    h1 = np.abs(spec[..., 1])
    hk = np.abs(spec[..., order])
    with np.errstate(divide="ignore", invalid="ignore"):
        out: FloatArray = np.where(h1 > 0.0, hk / h1, np.nan)
    return out


# Step bounds per cycle of the solver's step rule (core.network.step_rule; this project's
# choice): the floor keeps RK4's error small on the smooth stretches, the ceiling guards against
# an absurd step.
MIN_STEPS_PER_CYCLE = 128
MAX_STEPS_PER_CYCLE = 16384


def shortest_time_constant(frequency_hz: float) -> float:
    """Shortest saturated-loop time constant the solver's step rule can simulate.

    Parameters
    ----------
    frequency_hz : float
        Source frequency, > 0 [Hz].

    Returns
    -------
    float
        4/(f*MAX_STEPS_PER_CYCLE): four steps per time constant at the most steps a cycle [s].

    References
    ----------
    This project's step rule (core.network.step_rule): four RK4 steps per time constant of the
    fastest loop (classical Runge-Kutta is stable on a decaying mode for h/tau < 2.78; Butcher,
    Numerical Methods for Ordinary Differential Equations, 2008, from memory).
    """
    return 4.0 / (float(frequency_hz) * MAX_STEPS_PER_CYCLE)


# Finest re-integration, samples (= steps) per cycle; the solver accepts at most 100 000
# samples per cycle. Stage factors: 16, then what brings the total closest below this.
MAX_SAMPLES_PER_CYCLE = 100_000
STAGE_FACTOR = 16


def finer_samples_per_cycle(samples_per_cycle: int) -> int:
    """Samples per cycle of the re-integration one stage finer than ``samples_per_cycle``.

    Parameters
    ----------
    samples_per_cycle : int
        Samples per cycle of the record refined [-].

    Returns
    -------
    int
        16 times as many, capped at :data:`MAX_SAMPLES_PER_CYCLE` (never fewer) [-].

    References
    ----------
    The exact peak reading's plan (:mod:`core.energization.peaks`).
    """
    return samples_per_cycle * max(1, min(STAGE_FACTOR, MAX_SAMPLES_PER_CYCLE // samples_per_cycle))


def refinement_stages(samples_per_cycle: int) -> tuple[tuple[int, int], ...]:
    """Samples per cycle of each re-integration stage, before and after it.

    Parameters
    ----------
    samples_per_cycle : int
        Output samples per cycle of the simulation read [-].

    Returns
    -------
    tuple of (int, int)
        For each stage, (samples per cycle of the record it refines, of its own record) [-];
        each stage re-integrates two intervals of the first around each candidate.

    Notes
    -----
    A stage is 16 times finer, capped at :data:`MAX_SAMPLES_PER_CYCLE`; the second stage runs
    when it can be at least twice finer than the first. The exact readings
    (:mod:`core.energization.peaks`, :mod:`core.network.peaks`) run exactly these stages, so a
    work estimate can count them.

    References
    ----------
    The exact peak reading's plan (:mod:`core.energization.peaks`, :mod:`core.network.peaks`).
    """
    first = finer_samples_per_cycle(samples_per_cycle)
    stages = [(samples_per_cycle, first)]
    if MAX_SAMPLES_PER_CYCLE // first >= 2:
        stages.append((first, finer_samples_per_cycle(first)))
    return tuple(stages)
