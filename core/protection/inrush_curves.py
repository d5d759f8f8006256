"""The inrush as protective devices see it: I_eq(t), relay rms, first peak, half-cycle rms, I²t.

Derived once from sampled line currents (:func:`inrush_from_waveform`) or from a caller's
I_eq(t) table (:func:`inrush_from_table`), and then compared with every device by
:mod:`core.protection.device_operation`.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from core import checks, waveform
from core.errors import ParameterError

FloatArray = npt.NDArray[np.float64]

__all__ = ["Extreme", "InrushCurves", "inrush_from_table", "inrush_from_waveform"]


# ------------------------------------------------------------------------------------- inrush


@dataclass(frozen=True, eq=False)
class Extreme:
    """Largest value of a sub-cycle quantity on each line, and when it occurs."""

    value: FloatArray  #: per line [A] or [A²s]
    time_s: FloatArray  #: instant of the peak or end of the window; NaN: unknown [s]


@dataclass(frozen=True, eq=False)
class InrushCurves:
    """An inrush reduced to what devices are compared with; per-line arrays on the first axis."""

    lines: tuple[str, ...]  #: line labels
    rated_current_a: float | None  #: rated rms line current, for the inrush points [A]
    eq_time_s: FloatArray  #: times of I_eq, increasing [s]
    eq_current_a: FloatArray  #: I_eq(t), shape (n_lines, n_t) [A]
    rms_time_s: FloatArray  #: times from 0 at which each relay rms value starts to apply [s]
    rms_current_a: FloatArray  #: relay-measured rms, shape (n_lines, n_k) [A]
    peak: Extreme | None  #: largest |i| (an inrush's first peak) [A]
    half_cycle_rms: Extreme | None  #: largest rms over a half-cycle window [A]
    window_i2t: Extreme | None  #: largest ∫i² over the I²t window [A²s]
    #: the sampled line currents, shape (n_lines, n), for devices that filter them (a
    #: differential); None when the inrush came from a table [A]
    sampled_current_a: FloatArray | None = None
    frequency_hz: float | None = None  #: power frequency of the sampled record [Hz]


def _lines(lines: Sequence[str] | None, n: int) -> tuple[str, ...]:
    if lines is None:
        return ("A", "B", "C")[:n] if n <= 3 else tuple(str(k + 1) for k in range(n))
    if len(lines) != n or len(set(lines)) != n:
        raise ParameterError("lines", list(lines), f"{n} distinct labels, one per line")
    return tuple(str(x) for x in lines)


def _rated(value: float | None) -> float | None:
    return None if value is None else checks.positive("rated_current_a", value)


def _window(t: FloatArray, energy: FloatArray, width: float) -> FloatArray:
    """∫i² over (t − width, t] at every sample, with zero current before t = 0."""
    back = np.stack([np.interp(t - width, t, row, left=0.0) for row in energy])
    return np.asarray(np.maximum(energy - back, 0.0), dtype=np.float64)


def inrush_from_waveform(
    time_s: npt.ArrayLike,
    current_a: npt.ArrayLike,
    frequency_hz: float,
    *,
    rated_current_a: float | None = None,
    lines: Sequence[str] | None = None,
    points: int = 200,
    i2t_half_cycles: int = 1,
    peak: Extreme | None = None,
) -> InrushCurves:
    """Derive the curves devices are compared with from sampled line currents.

    Parameters
    ----------
    time_s : array_like, shape (n,)
        Uniform sample times from 0, as :func:`core.energization.energize.simulate` returns [s].
    current_a : array_like, shape (n_lines, n) or (n,)
        Line currents, e.g. ``Simulation.line_current_a[case]`` [A].
    frequency_hz : float
        Power frequency [Hz].
    rated_current_a : float or None
        Rated rms line current, for the common-practice inrush points [A].
    lines : sequence of str or None
        Line labels; A, B, C by default [-].
    points : int
        Log-spaced I_eq times from a half cycle to the last sample, 2-10 000 [-].
    i2t_half_cycles : int
        Width of the I²t window, 1-20 half cycles; 1 by default (the first lobe) [-].
    peak : Extreme or None
        Each line's peak read elsewhere (e.g. exactly, :func:`core.energization.peaks.
        first_peaks`), taken as it is; None reads it from the samples [-].

    Returns
    -------
    InrushCurves

    Raises
    ------
    ParameterError
        On non-uniform or non-finite samples, a record under one cycle, or bad counts.

    Notes
    -----
    With E(t) = ∫₀ᵗ i² (trapezoid, linear between samples) and T = 1/f: I_eq(t) = √(E/t)
    (:func:`core.waveform.equivalent_rms`); relay rms(t) = √((E(t) − E(t − T))/T), the
    window of a full-cycle numerical relay (common practice), zero current before t = 0; half-cycle
    rms alike with T/2; window I²t = max over t of E(t) − E(t − n·T/2). The peak, unless given,
    is the largest |i| sample refined by a parabola through it and its neighbours.

    References
    ----------
    I_eq and sub-cycle I²t against device curves: common practice; Joule
    integral: IEC 60269-1:2006 (from memory).
    """
    t = checks.finite_array("time_s", time_s, (1,))
    i = checks.finite_array("current_a", current_a, (1, 2))
    i = i.reshape(1, -1) if i.ndim == 1 else i
    f = checks.number("frequency_hz", frequency_hz, "in [1, 1000] Hz", lambda x: 1.0 <= x <= 1000.0)
    n_pts = checks.integer("points", points, 2, 10_000)
    n_half = checks.integer("i2t_half_cycles", i2t_half_cycles, 1, 20)
    if t.size < 3 or i.shape[1] != t.size:
        raise ParameterError("current_a", i.shape, f"(n_lines, {t.size}), at least 3 samples")
    dt = float(t[1] - t[0])
    if dt <= 0.0 or abs(t[0]) > 1e-9 * dt or np.any(np.abs(np.diff(t) - dt) > 1e-6 * dt):
        raise ParameterError("time_s", t[:3].tolist(), "uniform samples from t = 0")
    period = 1.0 / f
    if t[-1] < period * (1.0 - 1e-9):
        raise ParameterError("time_s", float(t[-1]), f"a record of at least one cycle ({period} s)")
    eq_t = np.geomspace(0.5 * period, float(t[-1]), n_pts)
    sq = i * i
    energy = np.zeros(i.shape)
    energy[:, 1:] = np.cumsum(0.5 * (sq[:, 1:] + sq[:, :-1]) * dt, axis=1)
    rows = np.arange(i.shape[0])

    def extreme(values: FloatArray) -> Extreme:
        k = np.argmax(values, axis=1)
        return Extreme(values[rows, k], t[k])

    a = np.abs(i)
    k = np.argmax(a, axis=1)
    km = np.clip(k, 1, t.size - 2)
    y0, y1, y2 = a[rows, km - 1], a[rows, km], a[rows, km + 1]
    den = 2.0 * y1 - y0 - y2
    with np.errstate(divide="ignore", invalid="ignore"):
        vertex = np.where((den > 0.0) & (km == k), y1 + (y0 - y2) ** 2 / (8.0 * den), y1)
    return InrushCurves(
        lines=_lines(lines, i.shape[0]),
        rated_current_a=_rated(rated_current_a),
        eq_time_s=eq_t,
        eq_current_a=waveform.equivalent_rms(i, dt, eq_t),
        rms_time_s=t,
        rms_current_a=np.sqrt(_window(t, energy, period) / period),
        peak=Extreme(np.maximum(vertex, a[rows, k]), t[k]) if peak is None else peak,
        half_cycle_rms=extreme(np.sqrt(_window(t, energy, 0.5 * period) / (0.5 * period))),
        window_i2t=extreme(_window(t, energy, n_half * 0.5 * period)),
        sampled_current_a=i,
        frequency_hz=f,
    )


def inrush_from_table(
    time_s: npt.ArrayLike,
    eq_current_a: npt.ArrayLike,
    *,
    rated_current_a: float | None = None,
    lines: Sequence[str] | None = None,
    peak_a: npt.ArrayLike | None = None,
    half_cycle_rms_a: npt.ArrayLike | None = None,
    window_i2t_a2s: npt.ArrayLike | None = None,
) -> InrushCurves:
    """Build the comparison curves from a caller-given I_eq(t) table.

    Parameters
    ----------
    time_s : array_like, shape (n_t,)
        Strictly increasing times > 0 [s].
    eq_current_a : array_like, shape (n_lines, n_t) or (n_t,)
        I_eq at those times [A].
    rated_current_a : float or None
        Rated rms line current, for the inrush points [A].
    lines : sequence of str or None
        Line labels [-].
    peak_a, half_cycle_rms_a, window_i2t_a2s : array_like or None
        Per-line largest |i|, half-cycle rms and window I²t if known; without them the breaker
        instantaneous and fuse I²t checks are skipped with a warning [A], [A], [A²s].

    Returns
    -------
    InrushCurves
        Times of the sub-cycle extremes unknown (NaN).

    Raises
    ------
    ParameterError
        On shapes, non-finite or negative values, or if t·I_eq² decreases.

    Notes
    -----
    E(t) = t·I_eq(t)² is ∫i² and cannot decrease. Relays integrate the interval rms
    √((E_{k+1} − E_k)/(t_{k+1} − t_k)), I_eq(t₀) before t₀: exact for an I²t-shaped curve, an
    average otherwise (modelling choice).

    References
    ----------
    Common practice.
    """
    t = checks.finite_array("time_s", time_s, (1,))
    eq = checks.finite_array("eq_current_a", eq_current_a, (1, 2), 0.0)
    eq = eq.reshape(1, -1) if eq.ndim == 1 else eq
    if t.size < 2 or t[0] <= 0.0 or np.any(np.diff(t) <= 0.0):
        raise ParameterError("time_s", t.tolist(), "at least 2 strictly increasing times > 0")
    if eq.shape[1] != t.size:
        raise ParameterError("eq_current_a", eq.shape, f"(n_lines, {t.size})")
    energy = t * eq * eq
    if np.any(np.diff(energy, axis=1) < -1e-12 * energy[:, 1:]):
        raise ParameterError("eq_current_a", "t·I_eq² decreases", "t·I_eq(t)² non-decreasing")
    step = np.sqrt(np.maximum(np.diff(energy, axis=1), 0.0) / np.diff(t))
    n = eq.shape[0]

    def given(value: npt.ArrayLike | None, name: str) -> Extreme | None:
        if value is None:
            return None
        return Extreme(
            np.broadcast_to(checks.finite_array(name, value, (0, 1), 0.0), (n,)), np.full(n, np.nan)
        )

    return InrushCurves(
        lines=_lines(lines, n),
        rated_current_a=_rated(rated_current_a),
        eq_time_s=t,
        eq_current_a=eq,
        rms_time_s=np.concatenate(([0.0], t)),
        rms_current_a=np.concatenate((eq[:, :1], step, step[:, -1:]), axis=1),
        peak=given(peak_a, "peak_a"),
        half_cycle_rms=given(half_cycle_rms_a, "half_cycle_rms_a"),
        window_i2t=given(window_i2t_a2s, "window_i2t_a2s"),
    )


# ------------------------------------------------------------------------------------ devices
