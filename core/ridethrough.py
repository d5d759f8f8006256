"""Protective devices against a computed inrush, and against the transformer's damage limit.

Ride-through: does a relay, fuse or low-voltage breaker operate on the energisation current?
Protection: does it clear a through-fault before the IEEE C57.109 limit (:mod:`core.damage`)?
Each answer is a margin ratio, > 1 passing, with the point where it is tightest; candidates are
ranked, and an inverse-time relay gets its time-dial window.

One rule for every ride-through margin: the factor by which all operating times of a timed
element could be divided (the device made uniformly faster) before it operates on the inrush.
For a curve read against a current I(t) that is min over t of t_device(I(t))/t; for an integrated
relay it is 1/max θ(t), exactly how far the time dial could fall (θ ∝ 1/TD, reset included).
A pickup-only (instantaneous) element gives threshold/current, an I²t check melting I²t/inrush
I²t. A device's margin is the smallest of its ratios; exactly 1 counts as operating. Protection:
min over current of t_damage/t_clear, from the damage curve's lowest current up to I_sc.

What each element compares (named in ``RideThrough.compared_current``):

* fuse minimum melt (derated), breaker long-/short-time minimum band: I_eq(t) = √((1/t)∫₀ᵗ i²),
  the heating-equivalent constant current (common practice);
* relay inverse-time element: θ = ∫dt/t(I) over the sliding one-cycle true rms
  (:func:`core.curves.cumulative_trip`); relay instantaneous: the largest sliding one-cycle rms;
* breaker instantaneous: the largest |i| (the first peak) and the largest half-cycle rms;
* current-limiting fuse melting I²t: the largest ∫i² over a window of half cycles.

Limits: results hold for the record given (a tightest point at its end raises a warning); relay
pickup tolerance, CT saturation and harmonic filtering are not modelled (true rms is at least
the fundamental: conservative for a filtering relay); each line is compared on its own.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace
from typing import Literal, cast

import numpy as np
import numpy.typing as npt

from core import curves, waveform
from core.damage import DamageCurve
from core.errors import ParameterError
from core.transformer import Assumption

FloatArray = npt.NDArray[np.float64]
TimeFn = Callable[[FloatArray], FloatArray]
Standard = Literal["ieee_c37_112", "iec_60255_151"]
Reset = Literal["curve", "hold", "instantaneous"]
Status = Literal["protects", "partial", "does_not_protect"]

#: Breaker opening time added to a relay's operating time: 5 cycles at 60 Hz. Common practice for
#: a medium-voltage breaker (rated interrupting times of 3-5 cycles, from memory).
DEFAULT_OPENING_TIME_S = 5.0 / 60.0
OPENING_SOURCE = "default 5 cycles at 60 Hz (common practice; 3-5 cycle breakers, from memory)"

#: Minimum-melt current factor for preload, ambient and ageing: common practice is 0.75-0.9 on
#: the melt current; 0.8 is this module's choice within that range (modelling choice).
DEFAULT_MELT_CURRENT_FACTOR = 0.8
MELT_SOURCE = "default 0.8 (common practice 0.75-0.9 on melt current; 0.8 a modelling choice)"

#: Breaker peak factor: the first peak read as if it were an rms value (conservative; common
#: practice). √2 models a peak-sensing unit calibrated in symmetrical rms amperes.
DEFAULT_PEAK_FACTOR = 1.0
PEAK_SOURCE = "default 1 (first peak compared as if rms; conservative common practice)"

#: Common-practice inrush points (multiple of rated rms current, duration [s]): 12 × for 0.1 s
#: (8 × for some large units) and 25 × for 0.01 s. Common practice; design.md §4.
INRUSH_POINTS: tuple[tuple[float, float], ...] = ((12.0, 0.1), (25.0, 0.01))

#: Ranges searched for the coordination window: TD 0.5-15 (IEEE), TMS 0.05-1.5 (IEC); common
#: practice for numerical relays (from memory; a given relay's range may differ).
TIME_DIAL_RANGE = {"ieee_c37_112": (0.5, 15.0), "iec_60255_151": (0.05, 1.5)}

RESET_SOURCE = "setting; default 'curve': C37.112 disk reset on IEEE curves, θ held on IEC ones"
_EQ = "equivalent rms I_eq(t) = sqrt((1/t)·∫i² dt)"
_RMS = "sliding one-cycle true rms, integrated as ∫dt/t(I)"


def _num(value: object, name: str, allowed: str, ok: Callable[[float], bool]) -> float:
    try:
        out = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        out = math.nan
    if not (math.isfinite(out) and ok(out)):
        raise ParameterError(name, value, allowed)
    return out


def _pos(value: object, name: str) -> float:
    return _num(value, name, "a finite number > 0", lambda x: x > 0.0)


def _count(value: object, name: str, low: int, high: int) -> int:
    if isinstance(value, bool) or not isinstance(value, int) or not low <= value <= high:
        raise ParameterError(name, value, f"an integer from {low} to {high}")
    return value


def _arr(value: object, name: str, ndim: tuple[int, ...], low: float = -math.inf) -> FloatArray:
    try:
        a = np.array(value, dtype=np.float64)
    except (TypeError, ValueError):
        raise ParameterError(name, value, "finite numbers") from None
    if a.ndim not in ndim or a.size == 0 or not np.all(np.isfinite(a)) or np.any(a < low):
        raise ParameterError(name, a.shape, f"finite numbers >= {low:g}, {ndim} dimension(s)")
    return a


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


def _lines(lines: Sequence[str] | None, n: int) -> tuple[str, ...]:
    if lines is None:
        return ("A", "B", "C")[:n] if n <= 3 else tuple(str(k + 1) for k in range(n))
    if len(lines) != n or len(set(lines)) != n:
        raise ParameterError("lines", list(lines), f"{n} distinct labels, one per line")
    return tuple(str(x) for x in lines)


def _rated(value: float | None) -> float | None:
    return None if value is None else _pos(value, "rated_current_a")


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
) -> InrushCurves:
    """Derive the curves devices are compared with from sampled line currents.

    Parameters
    ----------
    time_s : array_like, shape (n,)
        Uniform sample times from 0, as :func:`core.energize.simulate` returns [s].
    current_a : array_like, shape (n_lines, n) or (n,)
        Line currents, e.g. ``Simulation.line_current_a[case]`` [A].
    frequency_hz : float
        Power frequency [Hz].
    rated_current_a : float or None
        Rated rms line current, for the common-practice inrush points [A].
    lines : sequence of str or None
        Line labels; A, B, C by default.
    points : int
        Log-spaced I_eq times from a half cycle to the last sample, 2-10 000 [-].
    i2t_half_cycles : int
        Width of the I²t window, 1-20 half cycles; 1 by default (the first lobe) [-].

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
    (:func:`core.waveform.equivalent_rms`); relay rms(t) = √((E(t) − E(t − T))/T), the window
    of a full-cycle numerical relay (common practice), zero current before t = 0; half-cycle
    rms alike with T/2; window I²t = max over t of E(t) − E(t − n·T/2). The peak is the largest
    |i| sample refined by a parabola through it and its neighbours.

    References
    ----------
    I_eq and sub-cycle I²t against device curves: common practice (design.md §4); Joule
    integral: IEC 60269-1:2006 (from memory).
    """
    t = _arr(time_s, "time_s", (1,))
    i = _arr(current_a, "current_a", (1, 2))
    i = i.reshape(1, -1) if i.ndim == 1 else i
    f = _num(frequency_hz, "frequency_hz", "in [1, 1000] Hz", lambda x: 1.0 <= x <= 1000.0)
    n_pts = _count(points, "points", 2, 10_000)
    n_half = _count(i2t_half_cycles, "i2t_half_cycles", 1, 20)
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
        peak=Extreme(np.maximum(vertex, a[rows, k]), t[k]),
        half_cycle_rms=extreme(np.sqrt(_window(t, energy, 0.5 * period) / (0.5 * period))),
        window_i2t=extreme(_window(t, energy, n_half * 0.5 * period)),
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
        Line labels.
    peak_a, half_cycle_rms_a, window_i2t_a2s : array_like or None
        Per-line largest |i| [A], half-cycle rms [A] and window I²t [A²s] if known; without
        them the breaker instantaneous and fuse I²t checks are skipped with a warning.

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
    Common practice (design.md §4).
    """
    t = _arr(time_s, "time_s", (1,))
    eq = _arr(eq_current_a, "eq_current_a", (1, 2), 0.0)
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
        return Extreme(np.broadcast_to(_arr(value, name, (0, 1), 0.0), (n,)), np.full(n, np.nan))

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


@dataclass(frozen=True)
class Relay:
    """An inverse-time overcurrent relay, IEEE C37.112 or IEC 60255-151, optional instantaneous.

    ``time_dial`` is TD (IEEE) or TMS (IEC) [-]; pickups are rms primary amperes [A].
    ``reset``: "curve" is the C37.112 induction-disk reset on IEEE curves and holds θ on IEC
    curves (no reset equation there; holding trips earliest); "hold" holds θ below pickup;
    "instantaneous" resets it at once.
    """

    name: str
    standard: Standard
    curve: str
    pickup_a: float
    time_dial: float
    instantaneous_pickup_a: float | None = None
    reset: Reset = "curve"

    def __post_init__(self) -> None:
        tables = {"ieee_c37_112": curves.IEEE_C37_112, "iec_60255_151": curves.IEC_60255_151}
        if self.standard not in tables:
            raise ParameterError("standard", self.standard, "ieee_c37_112 or iec_60255_151")
        if self.curve not in tables[self.standard]:
            raise ParameterError("curve", self.curve, ", ".join(tables[self.standard]))
        _pos(self.pickup_a, "pickup_a")
        _pos(self.time_dial, "time_dial")
        if self.instantaneous_pickup_a is not None:
            _pos(self.instantaneous_pickup_a, "instantaneous_pickup_a")
        if self.reset not in ("curve", "hold", "instantaneous"):
            raise ParameterError("reset", self.reset, "curve, hold or instantaneous")


@dataclass(frozen=True)
class Fuse:
    """A fuse by its tabulated curves [A, s] and, if current-limiting, minimum melting I²t [A²s].

    Derated minimum melt t'(I) = k_t·t_mm(I/k_i), with ``melt_current_factor`` k_i (None:
    :data:`DEFAULT_MELT_CURRENT_FACTOR`) and ``melt_time_factor`` k_t (None: 1); the melting
    I²t is multiplied by k_i² (consistent with the current factor; modelling choice).
    """

    name: str
    minimum_melt: curves.TabulatedCurve
    total_clearing: curves.TabulatedCurve | None = None
    minimum_melting_i2t_a2s: float | None = None
    melt_current_factor: float | None = None
    melt_time_factor: float | None = None

    def __post_init__(self) -> None:
        for name in ("melt_current_factor", "melt_time_factor"):
            if getattr(self, name) is not None:
                _num(getattr(self, name), name, "in (0, 1]", lambda x: 0.0 < x <= 1.0)
        if self.minimum_melting_i2t_a2s is not None:
            _pos(self.minimum_melting_i2t_a2s, "minimum_melting_i2t_a2s")


@dataclass(frozen=True)
class Breaker:
    """A low-voltage breaker by its trip unit; ``peak_factor`` is the instantaneous value that
    picks up as a multiple of the rms pickup (None: :data:`DEFAULT_PEAK_FACTOR`) [-]."""

    name: str
    trip_unit: curves.LowVoltageBreaker
    peak_factor: float | None = None

    def __post_init__(self) -> None:
        if self.peak_factor is not None:
            _num(self.peak_factor, "peak_factor", "in [1, 3]", lambda x: 1.0 <= x <= 3.0)


Device = Relay | Fuse | Breaker


def _kind(device: Device) -> str:
    return type(device).__name__.lower()  # "relay", "fuse" or "breaker"


def _relay_fns(relay: Relay, time_dial: float) -> tuple[TimeFn, TimeFn | None]:
    p = relay.pickup_a
    zero: TimeFn = lambda i: np.zeros(i.shape)  # noqa: E731
    if relay.standard == "iec_60255_151":
        iec = cast(curves.IecCurve, relay.curve)
        reset = zero if relay.reset == "instantaneous" else None  # IEC curves: no reset curve
        return lambda i: curves.iec_60255_151_trip_time(i / p, iec, time_dial), reset
    ieee = cast(curves.IeeeCurve, relay.curve)

    def disk(i: FloatArray) -> FloatArray:
        return curves.ieee_c37_112_reset_time(i / p, ieee, time_dial)

    resets: dict[str, TimeFn | None] = {"curve": disk, "hold": None, "instantaneous": zero}
    return lambda i: curves.ieee_c37_112_trip_time(i / p, ieee, time_dial), resets[relay.reset]


def _melt_factor(fuse: Fuse) -> float:
    return fuse.melt_current_factor or DEFAULT_MELT_CURRENT_FACTOR


def _melt_time(fuse: Fuse, i: FloatArray) -> FloatArray:
    return (fuse.melt_time_factor or 1.0) * fuse.minimum_melt.trip_time(i / _melt_factor(fuse))


def device_times(
    device: Device, current_a: npt.ArrayLike, *, opening_time_s: float | None = None
) -> curves.TripBand:
    """A device's two curves at given currents: what must not operate, and what clears.

    Parameters
    ----------
    device : Relay, Fuse or Breaker
        The device.
    current_a : array_like
        rms current [A].
    opening_time_s : float or None
        Breaker opening time added to a relay's; None: :data:`DEFAULT_OPENING_TIME_S` [s].

    Returns
    -------
    core.curves.TripBand
        ``minimum_time``: relay curve (0 s above an instantaneous pickup), derated minimum melt
        or breaker minimum band; ``maximum_time``: relay curve + opening time, total clearing
        (NaN if the fuse has none) or breaker maximum band [s]; +inf where it does not operate.

    Raises
    ------
    ParameterError
        On negative or non-finite currents or opening time.

    References
    ----------
    IEEE Std C37.112, IEC 60255-151, via :mod:`core.curves`; common practice for the rest.
    """
    i = _arr(current_a, "current_a", (0, 1, 2), 0.0)
    t_open = DEFAULT_OPENING_TIME_S if opening_time_s is None else opening_time_s
    t_open = _num(t_open, "opening_time_s", "a finite number >= 0", lambda x: x >= 0.0)
    if isinstance(device, Relay):
        low = _relay_fns(device, device.time_dial)[0](i)
        if device.instantaneous_pickup_a is not None:
            low = np.where(i > device.instantaneous_pickup_a, 0.0, low)
        return curves.TripBand(low, low + t_open)
    if isinstance(device, Fuse):
        tc = device.total_clearing
        high = np.full(i.shape, np.nan) if tc is None else tc.trip_time(i)
        return curves.TripBand(_melt_time(device, i), high)
    return curves.lv_breaker_trip_band(i, device.trip_unit)


# --------------------------------------------------------------------------------- ride-through


@dataclass(frozen=True)
class RideThrough:
    """A device against the inrush; ratios > 1 ride through (see the module docstring)."""

    device: str
    kind: str  #: "relay", "fuse" or "breaker"
    compared_current: str  #: what the governing (tightest) check compares
    trips: bool  #: any element operates on the inrush
    trip_time_s: float | None  #: earliest operation; None: none, or unknown (table input) [s]
    margin_ratio: float  #: the smallest of the ratios below [-]
    margin_time_s: float | None  #: where it is tightest; None: unknown or never near [s]
    line: str  #: line of the tightest margin
    time_margin_ratio: float  #: timed element (relay curve, melt, band) [-]
    instantaneous_margin_ratio: float | None  #: threshold over compared current [-]
    i2t_margin_ratio: float | None  #: derated melting I²t over window I²t [-]
    warnings: tuple[tuple[str, str], ...] = ()


@dataclass(frozen=True)
class _Check:
    ratio: float
    time: float  # NaN: unknown
    line: int
    trip: float  # inf: none
    what: str
    at_end: bool = False


def _curve_checks(times: FloatArray, rows: FloatArray, fn: TimeFn) -> list[_Check]:
    out = []
    for j, row in enumerate(rows):
        with np.errstate(divide="ignore", invalid="ignore"):
            ratio = fn(row) / times
        k, hit, trip = int(np.argmin(ratio)), np.flatnonzero(ratio <= 1.0), math.inf
        if hit.size:  # crossing interpolated log-log between grid times
            m = int(hit[0])
            trip = float(times[m])
            if m > 0 and np.isfinite(ratio[m - 1]) and ratio[m] > 0.0:
                r0, r1 = math.log(ratio[m - 1]), math.log(ratio[m])
                trip = float(times[m - 1] * (times[m] / times[m - 1]) ** (r0 / (r0 - r1)))
        out.append(_Check(float(ratio[k]), float(times[k]), j, trip, _EQ, k == times.size - 1))
    return out


def _pickup_checks(ext: Extreme | None, threshold: float, what: str) -> list[_Check]:
    if ext is None:
        return []
    out = []
    for j, (v, w) in enumerate(zip(ext.value, ext.time_s, strict=True)):
        ratio = math.inf if v <= 0.0 else threshold / float(v)
        out.append(_Check(ratio, float(w), j, float(w) if ratio <= 1.0 else math.inf, what))
    return out


def _result(
    device: Device,
    inrush: InrushCurves,
    timed: list[_Check],
    inst: list[_Check] | None = None,
    i2t: list[_Check] | None = None,
    warnings: tuple[tuple[str, str], ...] = (),
) -> RideThrough:
    lows = [min(c, key=lambda x: x.ratio) if c else None for c in (timed, inst, i2t)]
    worst = min((c for c in lows if c is not None), key=lambda x: x.ratio)
    trips = [c.trip for c in timed + (inst or []) + (i2t or []) if c.ratio <= 1.0]
    trip = math.nan if any(map(math.isnan, trips)) else min(trips, default=math.inf)
    if worst.at_end and math.isfinite(worst.ratio):
        warnings += (("margin_at_record_end", "tightest at the end of the record: extend it"),)
    known = math.isfinite(worst.ratio) and math.isfinite(worst.time)
    ratio = [None if c is None else c.ratio for c in lows]
    return RideThrough(
        device.name,
        _kind(device),
        worst.what,
        worst.ratio <= 1.0,
        trip if math.isfinite(trip) else None,  # None: no trip, or its time is unknown
        worst.ratio,
        worst.time if known else None,
        inrush.lines[worst.line],
        math.inf if ratio[0] is None else ratio[0],
        ratio[1],
        ratio[2],
        warnings,
    )


def relay_ride_through(relay: Relay, inrush: InrushCurves) -> RideThrough:
    """Integrate a relay over the relay-measured rms of the inrush; check its instantaneous.

    Parameters
    ----------
    relay : Relay
        Relay settings.
    inrush : InrushCurves
        From :func:`inrush_from_waveform` or :func:`inrush_from_table`.

    Returns
    -------
    RideThrough
        ``time_margin_ratio`` = 1/max θ, the factor by which TD (TMS) could be divided before
        the element operates within the record (after a trip, θ's rise per record interval is
        capped at 2 by :func:`core.curves.cumulative_trip`, so a ratio < 1 is then exact only
        while intervals stay under half the operating time); instantaneous ratio = pickup /
        largest rms.

    Notes
    -----
    θ(t) by :func:`core.curves.cumulative_trip`: dθ/dt = 1/t(I), or −1/t_r(I) below pickup.
    Both t(I) and t_r(I) are proportional to TD, so θ is proportional to 1/TD.

    References
    ----------
    IEEE Std C37.112-1996 (and -2018), integral form and reset (clause from memory).
    """
    trip_fn, reset_fn = _relay_fns(relay, relay.time_dial)
    t, rms = inrush.rms_time_s, inrush.rms_current_a
    timed = []
    for j, row in enumerate(rms):
        res = curves.cumulative_trip(t, row, trip_fn, reset_fn)
        k = int(np.argmax(res.theta))
        ratio = math.inf if res.theta[k] <= 0.0 else 1.0 / float(res.theta[k])
        timed.append(_Check(ratio, float(t[k]), j, res.trip_time, _RMS, k == t.size - 1))
    if relay.instantaneous_pickup_a is None:
        return _result(relay, inrush, timed)
    p = relay.instantaneous_pickup_a
    when = t[np.where(np.any(rms > p, axis=1), np.argmax(rms > p, axis=1), np.argmax(rms, 1))]
    inst = _pickup_checks(Extreme(rms.max(axis=1), when), p, "largest sliding one-cycle rms")
    return _result(relay, inrush, timed, inst)


def fuse_ride_through(fuse: Fuse, inrush: InrushCurves) -> RideThrough:
    """Compare I_eq(t) with a fuse's derated minimum melt, and the window I²t with its melting I²t.

    Parameters
    ----------
    fuse : Fuse
        Fuse curves and derating.
    inrush : InrushCurves
        The inrush.

    Returns
    -------
    RideThrough
        ``time_margin_ratio`` = min over t of t'_mm(I_eq(t))/t; ``i2t_margin_ratio`` =
        k_i²·I²t_melt / window I²t (None without a melting I²t or an inrush I²t).

    Notes
    -----
    The fuse melts where t'_mm(I_eq(t)) <= t (time interpolated log-log between grid times).
    The I²t check holds where melting is adiabatic, below about 10 ms (common practice).

    References
    ----------
    Common practice (I_eq against minimum melt; derating 0.75-0.9); IEC 60269-1:2006,
    pre-arcing I²t (from memory).
    """
    timed = _curve_checks(inrush.eq_time_s, inrush.eq_current_a, lambda i: _melt_time(fuse, i))
    if fuse.minimum_melting_i2t_a2s is None:
        return _result(fuse, inrush, timed)
    if inrush.window_i2t is None:
        return _result(fuse, inrush, timed, warnings=(("i2t_not_checked", "no inrush I²t"),))
    limit = fuse.minimum_melting_i2t_a2s * _melt_factor(fuse) ** 2
    return _result(fuse, inrush, timed, None, _pickup_checks(inrush.window_i2t, limit, "I²t"))


def breaker_ride_through(breaker: Breaker, inrush: InrushCurves) -> RideThrough:
    """Check a breaker's instantaneous against peak and half-cycle rms, its band against I_eq.

    Parameters
    ----------
    breaker : Breaker
        Trip unit and peak factor.
    inrush : InrushCurves
        The inrush.

    Returns
    -------
    RideThrough
        ``time_margin_ratio`` = min over t of t_min,band(I_eq(t))/t (long and short time);
        instantaneous ratio = min(peak_factor·(1 − tol)·P/peak, (1 − tol)·P/half-cycle rms).

    Notes
    -----
    (1 − tol)·P is the band's lower edge (:func:`core.curves.lv_breaker_trip_band`); the timed
    band is evaluated with the instantaneous element off.

    References
    ----------
    Common practice (peak and half-cycle rms against the instantaneous lower edge).
    """
    unit = breaker.trip_unit
    timed_unit = replace(unit, instantaneous_pickup=None)

    def band(i: FloatArray) -> FloatArray:
        return curves.lv_breaker_trip_band(i, timed_unit).minimum_time

    timed = _curve_checks(inrush.eq_time_s, inrush.eq_current_a, band)
    if unit.instantaneous_pickup is None:
        return _result(breaker, inrush, timed)
    lo = (1.0 - unit.instantaneous_tolerance) * unit.instantaneous_pickup
    pf = breaker.peak_factor or DEFAULT_PEAK_FACTOR
    inst = _pickup_checks(inrush.peak, pf * lo, "largest |i| (first peak)")
    inst += _pickup_checks(inrush.half_cycle_rms, lo, "largest half-cycle rms")
    note = () if inst else (("instantaneous_not_checked", "no inrush peak or half-cycle rms"),)
    return _result(breaker, inrush, timed, inst, None, note)


def _ride_through(device: Device, inrush: InrushCurves) -> RideThrough:
    if isinstance(device, Relay):
        return relay_ride_through(device, inrush)
    if isinstance(device, Fuse):
        return fuse_ride_through(device, inrush)
    return breaker_ride_through(device, inrush)


@dataclass(frozen=True)
class PointCheck:
    """A common-practice inrush point against the device's ``minimum_time`` (no-operate) curve."""

    multiple_x_rated: float  #: [x rated]
    current_a: float  #: [A]
    time_s: float  #: [s]
    device_time_s: float  #: device minimum time at ``current_a``; +inf: no operation [s]
    ratio: float  #: device_time_s / time_s [-]
    above: bool  #: ratio > 1: the curve lies above the point


def _point_checks(
    device: Device, i_r: float, points: Sequence[tuple[float, float]]
) -> tuple[PointCheck, ...]:
    out = []
    for m, t in points:
        m_ok, t_ok = _pos(m, "inrush_points.multiple"), _pos(t, "inrush_points.time")
        td = float(device_times(device, m_ok * i_r).minimum_time)
        out.append(PointCheck(m_ok, m_ok * i_r, t_ok, td, td / t_ok, td / t_ok > 1.0))
    return tuple(out)


# ----------------------------------------------------------------------------------- protection


@dataclass(frozen=True)
class Protection:
    """A device's clearing curve against the damage curve; ratios > 1 protect."""

    device: str
    clearing_curve: str  #: which curve of the device clears
    status: Status  #: below the damage curve everywhere, somewhere or nowhere
    protects: bool  #: status == "protects"
    margin_ratio: float  #: min over current of t_damage/t_clear [-]
    margin_current_a: float  #: where it is tightest [A]
    unprotected_from_a: float | None  #: lowest checked current not cleared in time [A]
    unprotected_to_a: float | None  #: highest such current [A]


def _damage_time(current: FloatArray, time: FloatArray, i: FloatArray) -> FloatArray:
    """Log-log interpolation piece by piece; at a vertical step, the lower time."""
    starts = [0, *(np.flatnonzero(np.diff(current) == 0.0) + 1).tolist(), current.size]
    out = np.full(i.shape, np.nan)
    for s, e in zip(starts[:-1], starts[1:], strict=True):  # noqa: RUF007
        sel = (i >= current[s]) & (i <= current[e - 1])
        out[sel] = np.exp(np.interp(np.log(i[sel]), np.log(current[s:e]), np.log(time[s:e])))
    return out


def protection_check(
    device: Device,
    damage: DamageCurve,
    *,
    opening_time_s: float | None = None,
    damage_current_factor: float | None = None,
    points: int = 400,
) -> Protection:
    """Does the device clear before the through-fault damage limit, at every current up to I_sc?

    Parameters
    ----------
    device : Relay, Fuse or Breaker
        The device; a fuse needs its total-clearing curve.
    damage : core.damage.DamageCurve
        Damage curve, in the amperes the device sees.
    opening_time_s : float or None
        Breaker opening time added to a relay; None: :data:`DEFAULT_OPENING_TIME_S` [s].
    damage_current_factor : float or None
        Multiplies the damage curve's currents, in (0, 1]; None: 1. Common practice uses 0.58
        for a delta-wye unit and a secondary line-to-ground fault [-].
    points : int
        Log-spaced currents checked besides the curve's own points, 2-10 000 [-].

    Returns
    -------
    Protection
        "protects" where t_damage/t_clear > 1 at every checked current, "does_not_protect"
        where it is <= 1 at every one, else "partial".

    Raises
    ------
    ParameterError
        On a fuse without a total-clearing curve, or out-of-range values.

    Notes
    -----
    t_clear: total clearing (fuse), maximum band (breaker), relay curve + opening time. The
    damage curve is t ∝ 1/I² piecewise, so log-log interpolation between its points is exact.

    References
    ----------
    IEEE Std C57.109-1993 clause 4 (from memory); IEEE Std C37.91-2008 (from memory).
    """
    if isinstance(device, Fuse) and device.total_clearing is None:
        raise ParameterError("total_clearing", None, "a total-clearing curve")
    f = 1.0 if damage_current_factor is None else damage_current_factor
    f = _num(f, "damage_current_factor", "in (0, 1]", lambda x: 0.0 < x <= 1.0)
    ci = _arr(damage.current, "damage.current", (1,), 1e-300) * f
    ti = _arr(damage.time, "damage.time", (1,), 1e-300)
    if ci.size < 2 or ti.shape != ci.shape or np.any(np.diff(ci) < 0.0):
        raise ParameterError("damage", ci.size, "a curve of increasing currents, one time each")
    grid = np.union1d(np.geomspace(ci[0], ci[-1], _count(points, "points", 2, 10_000)), ci)
    t_clr = device_times(device, grid, opening_time_s=opening_time_s).maximum_time
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(t_clr == 0.0, np.inf, _damage_time(ci, ti, grid) / t_clr)
    ok, k = ratio > 1.0, int(np.argmin(ratio))
    status: Status = "protects" if ok.all() else "partial" if ok.any() else "does_not_protect"
    bad = grid[~ok]
    clearing = {"relay": "relay curve + opening time", "fuse": "total clearing"}
    return Protection(
        device.name,
        clearing.get(_kind(device), "maximum band"),
        status,
        status == "protects",
        float(ratio[k]),
        float(grid[k]),
        float(bad[0]) if bad.size else None,
        float(bad[-1]) if bad.size else None,
    )


# -------------------------------------------------------------------------- evaluation, window


@dataclass(frozen=True)
class DeviceEvaluation:
    """One candidate: ride-through, protection (None without damage curve), inrush points."""

    device: str
    kind: str
    ride_through: RideThrough
    protection: Protection | None
    points: tuple[PointCheck, ...]  #: empty when no rated current is known
    suitable: bool  #: rides through and protects
    margin_ratio: float | None  #: min of the two margins when both are known [-]


@dataclass(frozen=True)
class Evaluation:
    """Result of :func:`evaluate`; ``ranking`` names suitable devices, largest margin first."""

    devices: tuple[DeviceEvaluation, ...]
    ranking: tuple[str, ...]
    assumptions: tuple[Assumption, ...]  #: every default used, with its source
    warnings: tuple[tuple[str, str], ...]  #: (code, message)


def _note(name: str, value: float | None, default: float, unit: str, source: str) -> Assumption:
    if value is None:
        return Assumption(name, default, unit, source)
    return Assumption(name, value, unit, "given")


def evaluate(
    inrush: InrushCurves,
    devices: Sequence[Device],
    damage: DamageCurve | None = None,
    *,
    opening_time_s: float | None = None,
    damage_current_factor: float | None = None,
    inrush_points: Sequence[tuple[float, float]] = INRUSH_POINTS,
) -> Evaluation:
    """Evaluate candidate devices against the inrush and the damage curve, and rank them.

    Parameters
    ----------
    inrush : InrushCurves
        The inrush.
    devices : sequence of Relay, Fuse or Breaker
        Candidates, with distinct names.
    damage : core.damage.DamageCurve or None
        Damage curve in the devices' amperes; None skips the protection side.
    opening_time_s, damage_current_factor : float or None
        As :func:`protection_check` [s], [-].
    inrush_points : sequence of (float, float)
        (multiple of rated current [x rated], duration [s]) checked against each device's
        minimum curve; :data:`INRUSH_POINTS` by default, skipped without a rated current.

    Returns
    -------
    Evaluation
        Per-device results; ranking of the devices that ride through and protect by the
        smaller of their two margins, largest first (ties by name).

    Raises
    ------
    ParameterError
        On no devices, repeated names or out-of-range values.

    References
    ----------
    See :func:`relay_ride_through`, :func:`fuse_ride_through`, :func:`breaker_ride_through`,
    :func:`protection_check`; inrush points: common practice (design.md §4).
    """
    names = [d.name for d in devices]
    if not names or len(set(names)) != len(names):
        raise ParameterError("devices", names, "at least one device, names distinct")
    o, f, i_r = opening_time_s, damage_current_factor, inrush.rated_current_a
    notes, warnings = [], []
    if damage is not None:
        notes.append(_note("opening_time_s", o, DEFAULT_OPENING_TIME_S, "s", OPENING_SOURCE))
        notes.append(_note("damage_current_factor", f, 1.0, "-", "default 1 (curve as given)"))
    if i_r is None:
        warnings.append(("inrush_points_skipped", "no rated current: inrush points not checked"))
    else:
        pts = tuple(v for p in inrush_points for v in p)
        notes.append(Assumption("inrush_points", pts, "x rated, s", "common practice"))
    out = []
    for d in devices:
        if isinstance(d, Fuse):
            k, dk = d.melt_current_factor, DEFAULT_MELT_CURRENT_FACTOR
            notes.append(_note(f"{d.name}.melt_current_factor", k, dk, "-", MELT_SOURCE))
        elif isinstance(d, Breaker):
            k, dk = d.peak_factor, DEFAULT_PEAK_FACTOR
            notes.append(_note(f"{d.name}.peak_factor", k, dk, "-", PEAK_SOURCE))
        else:
            notes.append(Assumption(f"{d.name}.measured_current", _RMS, "-", "common practice"))
            notes.append(Assumption(f"{d.name}.reset", d.reset, "-", RESET_SOURCE))
        rt = _ride_through(d, inrush)
        warnings += [(c, f"{d.name}: {m}") for c, m in rt.warnings]
        prot = None
        if damage is not None and isinstance(d, Fuse) and d.total_clearing is None:
            warnings.append(("protection_not_checked", f"{d.name}: no total-clearing curve"))
        elif damage is not None:
            prot = protection_check(d, damage, opening_time_s=o, damage_current_factor=f)
        pts_out = () if i_r is None else _point_checks(d, i_r, inrush_points)
        ok = not rt.trips and prot is not None and prot.protects
        margin = None if prot is None else min(rt.margin_ratio, prot.margin_ratio)
        out.append(DeviceEvaluation(d.name, _kind(d), rt, prot, pts_out, ok, margin))
    ranked = sorted(
        (e for e in out if e.suitable), key=lambda e: (-(e.margin_ratio or 0), e.device)
    )
    return Evaluation(tuple(out), tuple(e.device for e in ranked), tuple(notes), tuple(warnings))


@dataclass(frozen=True)
class CoordinationWindow:
    """Time dials (TMS) of an inverse-time relay that ride through and protect."""

    device: str
    setting_range: tuple[float, float]  #: range searched [-]
    lowest_riding_through: float | None  #: smallest TD that rides through; None: none [-]
    highest_protecting: float | None  #: largest TD that protects; None: none [-]
    exists: bool  #: both found and lowest <= highest
    statement: str  #: the answer in words


def coordination_window(
    relay: Relay,
    inrush: InrushCurves,
    damage: DamageCurve,
    *,
    opening_time_s: float | None = None,
    damage_current_factor: float | None = None,
    setting_range: tuple[float, float] | None = None,
    rtol: float = 1e-4,
) -> CoordinationWindow:
    """The time dials, at the relay's pickup, that both ride through the inrush and protect.

    Parameters
    ----------
    relay : Relay
        Relay; its ``time_dial`` is varied.
    inrush : InrushCurves
        The inrush.
    damage : core.damage.DamageCurve
        Damage curve in the relay's amperes.
    opening_time_s, damage_current_factor : float or None
        As :func:`protection_check` [s], [-].
    setting_range : (float, float) or None
        TD or TMS range; None: :data:`TIME_DIAL_RANGE` for the relay's standard [-].
    rtol : float
        Relative bracket width at which bisection stops, 1e-9 to 0.1 [-].

    Returns
    -------
    CoordinationWindow
        Each limit is the bracket end that passes (rides through, or protects).

    Raises
    ------
    ParameterError
        On a bad range or tolerance.

    Notes
    -----
    Riding through is monotone in TD (θ ∝ 1/TD; the instantaneous element does not depend on
    TD), protecting monotone the other way (t_clear = TD·f(M) + t_open), so each limit is found
    by bisection (geometric midpoint) over the range.

    References
    ----------
    IEEE Std C37.112 (curves); IEEE Std C37.91-2008 (relay set between inrush and damage
    curve; from memory).
    """
    lo, hi = TIME_DIAL_RANGE[relay.standard] if setting_range is None else setting_range
    lo, hi = _pos(lo, "setting_range.low"), _pos(hi, "setting_range.high")
    if hi <= lo:
        raise ParameterError("setting_range", (lo, hi), "low < high")
    tol = _num(rtol, "rtol", "in [1e-9, 0.1]", lambda x: 1e-9 <= x <= 0.1)

    def rides(td: float) -> bool:
        return not relay_ride_through(replace(relay, time_dial=td), inrush).trips

    def protects(td: float) -> bool:
        trial = replace(relay, time_dial=td)
        o, f = opening_time_s, damage_current_factor
        return protection_check(trial, damage, opening_time_s=o, damage_current_factor=f).protects

    def bisect(passes: Callable[[float], bool], fail: float, good: float) -> float | None:
        # ``fail`` is the end expected to fail, ``good`` the end expected to pass
        if passes(fail):
            return fail
        if not passes(good):
            return None
        while abs(good - fail) > tol * max(fail, good):
            m = math.sqrt(fail * good)
            fail, good = (fail, m) if passes(m) else (m, good)
        return good

    low, high = bisect(rides, lo, hi), bisect(protects, hi, lo)
    exists = low is not None and high is not None and low <= high
    word = "TMS" if relay.standard == "iec_60255_151" else "time dial"
    if low is not None and high is not None:
        text = f"{word} {low:.4g} to {high:.4g} rides through the inrush and protects"
        if not exists:
            text = f"no window: riding through needs >= {low:.4g}, protecting <= {high:.4g}"
    else:
        why = "rides through the inrush" if low is None else "protects against through-faults"
        text = f"no {word} in {lo:g}-{hi:g} {why}"
    return CoordinationWindow(relay.name, (lo, hi), low, high, exists, text)
