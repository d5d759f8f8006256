"""Protective-device time-current characteristics (TCCs) and their time-integrated response.

Models operating time against current: the IEEE C37.112 and IEC 60255-151 inverse-time relay
equations (with the C37.112 induction-disk reset), definite-time and instantaneous elements, a
caller-given tabulated curve (a fuse's minimum-melt or total-clearing curve), the band of a
low-voltage breaker trip unit, the sub-cycle I²t of a current-limiting fuse, and the accumulation
of a time-varying rms current against any curve (trip when ∫dt/t(I) reaches 1).

Limits: currents are rms [A] or multiples of pickup; the device's own minimum operating time, CT
saturation, DC offset and harmonic response are not modelled; an inverse equation far above its
published range (beyond about 20-30 × pickup) is an extrapolation, not the device.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Literal

import numpy as np
import numpy.typing as npt
from scipy.integrate import cumulative_trapezoid

from core.errors import ParameterError

FloatArray = npt.NDArray[np.float64]
IeeeCurve = Literal["moderately_inverse", "very_inverse", "extremely_inverse"]
IecCurve = Literal["standard_inverse", "very_inverse", "extremely_inverse", "long_time_inverse"]


@dataclass(frozen=True)
class IeeeConstants:
    """Constants of one IEEE C37.112 inverse-time curve: t = TD·(A/(M^p − 1) + B)."""

    a: float  #: A [s]
    b: float  #: B [s]
    p: float  #: exponent p [-]
    tr: float  #: reset constant tr [s]


@dataclass(frozen=True)
class IecConstants:
    """Constants of one IEC 60255-151 inverse-time curve: t = TMS·k/(M^α − 1)."""

    k: float  #: k [s]
    alpha: float  #: exponent α [-]


#: IEEE Std C37.112-1996 (reaffirmed in C37.112-2018), Table 1 (table number from memory); also
#: IEC 60255-151:2009 Table 1, curves D, E, F. Values as in design.md §4 and from memory: the
#: document was not at hand.
IEEE_C37_112: Mapping[str, IeeeConstants] = MappingProxyType(
    {
        "moderately_inverse": IeeeConstants(a=0.0515, b=0.1140, p=0.02, tr=4.85),
        "very_inverse": IeeeConstants(a=19.61, b=0.491, p=2.0, tr=21.6),
        "extremely_inverse": IeeeConstants(a=28.2, b=0.1217, p=2.0, tr=29.1),
    }
)

#: IEC 60255-151:2009 Table 1, curves A, B, C (from memory, document not at hand). The long-time
#: inverse curve (k = 120, α = 1) is not in IEC 60255-151: it is BS 142 (IEC 60255-3) practice.
IEC_60255_151: Mapping[str, IecConstants] = MappingProxyType(
    {
        "standard_inverse": IecConstants(k=0.14, alpha=0.02),
        "very_inverse": IecConstants(k=13.5, alpha=1.0),
        "extremely_inverse": IecConstants(k=80.0, alpha=2.0),
        "long_time_inverse": IecConstants(k=120.0, alpha=1.0),
    }
)


def _scalar(value: object, name: str, allowed: str, ok: Callable[[float], bool]) -> float:
    try:
        out = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        out = float("nan")
    if not (np.isfinite(out) and ok(out)):
        raise ParameterError(name, value, allowed)
    return out


def _positive(value: object, name: str) -> float:
    return _scalar(value, name, "a finite number > 0", lambda x: x > 0.0)


def _nonnegative(value: object, name: str) -> float:
    return _scalar(value, name, "a finite number >= 0", lambda x: x >= 0.0)


def _fraction(value: object, name: str) -> float:
    return _scalar(value, name, "a fraction 0 <= x < 1", lambda x: 0.0 <= x < 1.0)


def _array(value: npt.ArrayLike, name: str, *, nonnegative: bool = True) -> FloatArray:
    allowed = "finite numbers >= 0" if nonnegative else "finite numbers"
    try:
        arr = np.array(value, dtype=np.float64)
    except (TypeError, ValueError):
        raise ParameterError(name, value, allowed) from None
    if not np.all(np.isfinite(arr)) or (nonnegative and np.any(arr < 0.0)):
        raise ParameterError(name, value, allowed)
    return arr


def _choice(value: object, name: str, table: Mapping[str, object]) -> None:
    if not isinstance(value, str) or value not in table:
        raise ParameterError(name, value, "one of " + ", ".join(sorted(table)))


def _inverse(m: FloatArray, multiplier: float, a: float, p: float, b: float) -> FloatArray:
    """multiplier·(a/(M^p − 1) + b) for M > 1, +inf elsewhere; M^p − 1 as expm1(p·ln M), accurate
    as M → 1+ (large but finite); overflow for huge M gives the limit, multiplier·b."""
    out = np.full(m.shape, np.inf)
    on = m > 1.0
    with np.errstate(over="ignore"):
        out[on] = multiplier * (a / np.expm1(p * np.log(m[on])) + b)
    return out


def ieee_c37_112_trip_time(
    multiple: npt.ArrayLike, curve: IeeeCurve, time_dial: float
) -> FloatArray:
    """Operating time of an IEEE C37.112 inverse-time overcurrent element.

    Parameters
    ----------
    multiple : array_like
        Current as a multiple of pickup, M = I/I_pickup [pu of pickup].
    curve : str
        "moderately_inverse", "very_inverse" or "extremely_inverse".
    time_dial : float
        Time dial TD, a multiplier of the curve [-].

    Returns
    -------
    numpy.ndarray
        Operating time, same shape as ``multiple`` [s]; +inf where M <= 1 (no operation).

    Raises
    ------
    ParameterError
        If ``multiple`` is negative or not finite, ``curve`` unknown or ``time_dial`` <= 0.

    Notes
    -----
    t = TD·(A/(M^p − 1) + B) for M > 1, constants in :data:`IEEE_C37_112`. M^p − 1 is evaluated
    as expm1(p·ln M), so t grows without bound but stays finite as M → 1+.

    References
    ----------
    IEEE Std C37.112-1996 (and -2018), clause 3 and Table 1 (clause, table numbers from memory).
    """
    _choice(curve, "curve", IEEE_C37_112)
    c = IEEE_C37_112[curve]
    td = _positive(time_dial, "time_dial")
    m = _array(multiple, "multiple")
    return _inverse(m, td, c.a, c.p, c.b)


def ieee_c37_112_reset_time(
    multiple: npt.ArrayLike, curve: IeeeCurve, time_dial: float
) -> FloatArray:
    """Reset time of an IEEE C37.112 element that emulates an induction disk.

    Parameters
    ----------
    multiple : array_like
        Current as a multiple of pickup, M = I/I_pickup [pu of pickup].
    curve : str
        "moderately_inverse", "very_inverse" or "extremely_inverse".
    time_dial : float
        Time dial TD [-].

    Returns
    -------
    numpy.ndarray
        Time to reset from full travel, same shape as ``multiple`` [s]; +inf where M >= 1.

    Raises
    ------
    ParameterError
        If ``multiple`` is negative or not finite, ``curve`` unknown or ``time_dial`` <= 0.

    Notes
    -----
    t_r = TD·tr/(1 − M²) for M < 1 (t_r = TD·tr at zero current), tr in :data:`IEEE_C37_112`.
    The disk travels back at the rate dθ/dt = −1/t_r(M); see :func:`cumulative_trip`.

    References
    ----------
    IEEE Std C37.112-1996 (and -2018), clause 3 (reset equation) and Table 1 (from memory).
    """
    _choice(curve, "curve", IEEE_C37_112)
    c = IEEE_C37_112[curve]
    td = _positive(time_dial, "time_dial")
    m = _array(multiple, "multiple")
    out = np.full(m.shape, np.inf)
    on = m < 1.0
    out[on] = td * c.tr / (1.0 - m[on] ** 2)
    return out


def iec_60255_151_trip_time(multiple: npt.ArrayLike, curve: IecCurve, tms: float) -> FloatArray:
    """Operating time of an IEC 60255-151 inverse-time overcurrent element.

    Parameters
    ----------
    multiple : array_like
        Current as a multiple of the setting, M = I/I_s [pu of setting].
    curve : str
        "standard_inverse", "very_inverse", "extremely_inverse" or "long_time_inverse".
    tms : float
        Time multiplier setting TMS [-].

    Returns
    -------
    numpy.ndarray
        Operating time, same shape as ``multiple`` [s]; +inf where M <= 1 (no operation).

    Raises
    ------
    ParameterError
        If ``multiple`` is negative or not finite, ``curve`` unknown or ``tms`` <= 0.

    Notes
    -----
    t = TMS·k/(M^α − 1) for M > 1, constants in :data:`IEC_60255_151` (the standard's general
    form has an added constant c, zero for these curves).

    References
    ----------
    IEC 60255-151:2009, Table 1, curves A-C (from memory); long-time inverse: BS 142 practice.
    """
    _choice(curve, "curve", IEC_60255_151)
    c = IEC_60255_151[curve]
    multiplier = _positive(tms, "tms")
    m = _array(multiple, "multiple")
    return _inverse(m, multiplier, c.k, c.alpha, 0.0)


def definite_time_trip_time(current: npt.ArrayLike, pickup: float, delay: float) -> FloatArray:
    """Operating time of a definite-time (or, with zero delay, instantaneous) element.

    Parameters
    ----------
    current : array_like
        rms current [A].
    pickup : float
        Pickup current [A].
    delay : float
        Intentional delay; 0 models an instantaneous element [s].

    Returns
    -------
    numpy.ndarray
        ``delay`` where current > pickup, +inf elsewhere, same shape as ``current`` [s].

    Raises
    ------
    ParameterError
        If ``current`` is negative or not finite, ``pickup`` <= 0 or ``delay`` < 0.

    Notes
    -----
    t = delay for I > I_pickup. The device's own operating time is not added.

    References
    ----------
    IEC 60255-151:2009, definite-time characteristic (clause from memory); common practice.
    """
    i = _array(current, "current")
    p = _positive(pickup, "pickup")
    d = _nonnegative(delay, "delay")
    return np.where(i > p, d, np.inf)


@dataclass(frozen=True, eq=False)
class TabulatedCurve:
    """A time-current curve given as points, interpolated linearly in log-log space.

    Parameters
    ----------
    current : array_like
        Table currents, strictly increasing, finite and > 0 [A].
    time : array_like
        Table times, non-increasing (flat steps allowed, rises not), finite and > 0 [s].

    Notes
    -----
    Between points, log t is linear in log I; the curve is exact at the table points. Below the
    first current the device does not operate (+inf); above the last current the time stays at the
    last value (flat), since a table says nothing faster than its last point. Common practice for
    reading published minimum-melt and total-clearing curves.
    """

    current: FloatArray
    time: FloatArray

    def __post_init__(self) -> None:
        i = np.array(self.current, dtype=np.float64, ndmin=1)
        t = np.array(self.time, dtype=np.float64, ndmin=1)
        for name, arr in (("current", i), ("time", t)):
            if arr.ndim != 1 or arr.size < 2:
                raise ParameterError(name, arr.tolist(), "a 1-D table of at least 2 points")
            if not (np.all(np.isfinite(arr)) and np.all(arr > 0.0)):
                raise ParameterError(name, arr.tolist(), "finite values > 0")
        if i.size != t.size:
            raise ParameterError("time", t.tolist(), f"{i.size} values, one per current")
        if np.any(np.diff(i) <= 0.0):
            raise ParameterError("current", i.tolist(), "strictly increasing")
        if np.any(np.diff(t) > 0.0):
            raise ParameterError("time", t.tolist(), "non-increasing with current")
        i.setflags(write=False)
        t.setflags(write=False)
        object.__setattr__(self, "current", i)
        object.__setattr__(self, "time", t)

    def trip_time(self, current: npt.ArrayLike) -> FloatArray:
        """Time of the curve at a current.

        Parameters
        ----------
        current : array_like
            rms current [A].

        Returns
        -------
        numpy.ndarray
            Time, same shape as ``current`` [s]: +inf below the first table current, the last
            table time above the last table current.

        Raises
        ------
        ParameterError
            If ``current`` is negative or not finite.

        Notes
        -----
        log t = log t_j + (log I − log I_j)·(log t_{j+1} − log t_j)/(log I_{j+1} − log I_j).

        References
        ----------
        Common practice (log-log reading of a published TCC).
        """
        i = _array(current, "current")
        li, lt = np.log(self.current), np.log(self.time)
        out = np.full(i.shape, np.inf)
        on = i >= self.current[0]
        out[on] = np.exp(np.interp(np.log(i[on]), li, lt))
        j = np.searchsorted(self.current, i)
        hit = (j < self.current.size) & (self.current[np.minimum(j, self.current.size - 1)] == i)
        out[hit] = self.time[j[hit]]
        return out

    def current_for_time(self, time: npt.ArrayLike) -> FloatArray:
        """Smallest current at which the curve's time is at most ``time``.

        Parameters
        ----------
        time : array_like
            Time [s].

        Returns
        -------
        numpy.ndarray
            Current, same shape as ``time`` [A]: the first table current where ``time`` is at
            or above the first table time, +inf where ``time`` is below the last table time.

        Raises
        ------
        ParameterError
            If ``time`` is negative or not finite.

        Notes
        -----
        The inverse of :meth:`trip_time` on its strictly decreasing segments (log-log linear);
        on a flat segment it returns the segment's lowest current.

        References
        ----------
        Common practice.
        """
        t = _array(time, "time")
        n = self.time.size
        j = np.searchsorted(-self.time, -t, side="left")  # first j with time[j] <= t
        out = np.full(t.shape, np.inf)
        out[j == 0] = self.current[0]
        mid = (j > 0) & (j < n)
        k = j[mid]
        t0, t1 = self.time[k - 1], self.time[k]
        i0, i1 = self.current[k - 1], self.current[k]
        f = (np.log(t[mid]) - np.log(t0)) / (np.log(t1) - np.log(t0))  # 0 < f <= 1
        out[mid] = np.where(f >= 1.0, i1, np.exp(np.log(i0) + f * (np.log(i1) - np.log(i0))))
        return out


@dataclass(frozen=True)
class LowVoltageBreaker:
    """Settings of a low-voltage breaker trip unit (long-time, short-time, instantaneous).

    Parameters
    ----------
    long_time_pickup : float
        Long-time pickup [A].
    long_time_delay : float
        Long-time delay: the band's time at 6 × long-time pickup [s].
    short_time_pickup : float or None
        Short-time pickup; None disables the element [A].
    short_time_delay : float
        Short-time definite delay [s]. Ignored when short-time is off.
    short_time_i2t : bool
        True for the I²t-on ramp below ``short_time_i2t_reference``.
    short_time_i2t_reference : float or None
        Current where the I²t ramp meets the definite delay; None takes 10 × long-time pickup
        (common practice; maker-dependent, some use 8 ×) [A].
    instantaneous_pickup : float or None
        Instantaneous pickup; None disables the element [A].
    pickup_tolerance : float
        ± fraction on long-time and short-time pickup; 0.10 is common practice [-].
    time_tolerance : float
        ± fraction on long-time and short-time times; 0.20 is common practice [-].
    instantaneous_tolerance : float
        ± fraction on instantaneous pickup; 0.10 is common practice for electronic trip units
        (thermal-magnetic units are often ±20 %) [-].
    instantaneous_clearing_time : float
        Upper edge of the instantaneous band; 0.05 s (3 cycles at 60 Hz) is common practice for
        low-voltage power circuit breakers [s].
    """

    long_time_pickup: float
    long_time_delay: float
    short_time_pickup: float | None = None
    short_time_delay: float = 0.0
    short_time_i2t: bool = False
    short_time_i2t_reference: float | None = None
    instantaneous_pickup: float | None = None
    pickup_tolerance: float = 0.10
    time_tolerance: float = 0.20
    instantaneous_tolerance: float = 0.10
    instantaneous_clearing_time: float = 0.05

    def __post_init__(self) -> None:
        _positive(self.long_time_pickup, "long_time_pickup")
        _positive(self.long_time_delay, "long_time_delay")
        if self.short_time_pickup is not None:
            _positive(self.short_time_pickup, "short_time_pickup")
            _nonnegative(self.short_time_delay, "short_time_delay")
        if self.short_time_i2t_reference is not None:
            _positive(self.short_time_i2t_reference, "short_time_i2t_reference")
        if self.instantaneous_pickup is not None:
            _positive(self.instantaneous_pickup, "instantaneous_pickup")
        for name in ("pickup_tolerance", "time_tolerance", "instantaneous_tolerance"):
            _fraction(getattr(self, name), name)
        _nonnegative(self.instantaneous_clearing_time, "instantaneous_clearing_time")


@dataclass(frozen=True)
class TripBand:
    """Lower and upper edge of a device's operating band at each current."""

    minimum_time: FloatArray  #: earliest the device may trip [s] (+inf: cannot trip)
    maximum_time: FloatArray  #: latest by which it is sure to have tripped [s] (+inf: may not)


def lv_breaker_trip_band(current: npt.ArrayLike, breaker: LowVoltageBreaker) -> TripBand:
    """Minimum and maximum trip time of a low-voltage breaker trip unit at a current.

    Parameters
    ----------
    current : array_like
        rms current [A].
    breaker : LowVoltageBreaker
        Trip-unit settings.

    Returns
    -------
    TripBand
        Lower and upper edges, each the same shape as ``current`` [s].

    Raises
    ------
    ParameterError
        If ``current`` is negative or not finite.

    Notes
    -----
    With pickup tolerance p, time tolerance τ and element pickup P, each element's lower edge
    applies above (1 − p)·P scaled by (1 − τ), its upper edge above (1 + p)·P scaled by (1 + τ):
    long time t = d_LT·36·(P_LT/I)² (I²t shape through d_LT at 6 × P_LT); short time t = d_ST,
    or with I²t on t = max(d_ST, d_ST·(I_ref/I)²); instantaneous lower edge 0 s, upper edge the
    clearing time. The band is the minimum over elements of each edge (the fastest element wins).

    References
    ----------
    Common practice for electronic trip units (the I²t-shaped long-time band, the 6 × reference,
    the tolerances). IEEE Std 242-2001 describes these trip-unit elements (from memory; chapter
    not at hand).
    """
    i = _array(current, "current")
    b = breaker
    p, tau = b.pickup_tolerance, b.time_tolerance
    lo = np.full(i.shape, np.inf)
    hi = np.full(i.shape, np.inf)
    # NaN from 0·inf (zero current) only arises below pickup, where np.where discards it
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        lt = (6.0 * b.long_time_pickup / i) ** 2 * b.long_time_delay
        lo = np.where(i > (1 - p) * b.long_time_pickup, np.minimum(lo, (1 - tau) * lt), lo)
        hi = np.where(i > (1 + p) * b.long_time_pickup, np.minimum(hi, (1 + tau) * lt), hi)
        if b.short_time_pickup is not None:
            st = np.full(i.shape, b.short_time_delay)
            if b.short_time_i2t:
                ref = b.short_time_i2t_reference
                if ref is None:
                    ref = 10.0 * b.long_time_pickup  # common practice, maker-dependent
                st = np.maximum(st, b.short_time_delay * (ref / i) ** 2)
            lo = np.where(i > (1 - p) * b.short_time_pickup, np.minimum(lo, (1 - tau) * st), lo)
            hi = np.where(i > (1 + p) * b.short_time_pickup, np.minimum(hi, (1 + tau) * st), hi)
    if b.instantaneous_pickup is not None:
        q = b.instantaneous_tolerance
        lo = np.where(i > (1 - q) * b.instantaneous_pickup, 0.0, lo)
        clear = np.minimum(hi, b.instantaneous_clearing_time)
        hi = np.where(i > (1 + q) * b.instantaneous_pickup, clear, hi)
    return TripBand(minimum_time=lo, maximum_time=hi)


def i2t(current_samples: npt.ArrayLike, dt: float) -> FloatArray:
    """Cumulative Joule integral ∫i² dt of a sampled instantaneous current.

    Parameters
    ----------
    current_samples : array_like
        Instantaneous current at uniform spacing, 1-D, at least 2 samples [A].
    dt : float
        Sample spacing [s].

    Returns
    -------
    numpy.ndarray
        Cumulative I²t at each sample, starting at 0 [A²s].

    Raises
    ------
    ParameterError
        If the samples are not finite, fewer than 2 or not 1-D, or ``dt`` <= 0.

    Notes
    -----
    I²t(t_k) = Σ_{j<k} dt·(i_j² + i_{j+1}²)/2 (trapezoid rule).

    References
    ----------
    IEC 60269-1:2006, definition of the Joule integral I²t (from memory; clause not at hand).
    """
    i = _array(current_samples, "current_samples", nonnegative=False)
    if i.ndim != 1 or i.size < 2:
        raise ParameterError("current_samples", i.shape, "a 1-D array of at least 2 samples")
    step = _positive(dt, "dt")
    with np.errstate(over="ignore"):
        return np.asarray(cumulative_trapezoid(i * i, dx=step, initial=0.0), dtype=np.float64)


@dataclass(frozen=True)
class MeltingI2tCheck:
    """A sampled current's I²t against a fuse's minimum melting I²t."""

    let_through_i2t: float  #: total I²t of the samples [A²s]
    minimum_melting_i2t: float  #: the fuse's minimum melting I²t [A²s]
    ratio: float  #: let_through_i2t / minimum_melting_i2t [-]
    melts: bool  #: True when the total reaches the minimum melting I²t
    time_to_melt: float  #: first time the cumulative I²t reaches it, +inf if never [s]


def melting_i2t_check(
    current_samples: npt.ArrayLike, dt: float, minimum_melting_i2t: float
) -> MeltingI2tCheck:
    """Compare the sub-cycle I²t of a current with a current-limiting fuse's minimum melting I²t.

    Parameters
    ----------
    current_samples : array_like
        Instantaneous current at uniform spacing from t = 0, 1-D [A].
    dt : float
        Sample spacing [s].
    minimum_melting_i2t : float
        The fuse's minimum melting I²t [A²s].

    Returns
    -------
    MeltingI2tCheck
        Totals, ratio and the time the minimum melting I²t is first reached.

    Raises
    ------
    ParameterError
        As :func:`i2t`, or if ``minimum_melting_i2t`` <= 0.

    Notes
    -----
    Valid in the adiabatic region (durations below about 10 ms, common practice), where melting
    depends on I²t alone. The crossing time is linearly interpolated between samples.

    References
    ----------
    IEC 60269-1:2006, pre-arcing I²t (from memory; clause not at hand); common practice.
    """
    melt = _positive(minimum_melting_i2t, "minimum_melting_i2t")
    cum = i2t(current_samples, dt)
    total = float(cum[-1])
    k = int(np.argmax(cum >= melt))
    if cum[k] < melt:  # never reached (cum[0] = 0 < melt, so a crossing has k >= 1)
        t_melt = np.inf
    else:
        t_melt = float(dt * (k - 1 + (melt - cum[k - 1]) / (cum[k] - cum[k - 1])))
    return MeltingI2tCheck(total, melt, total / melt, total >= melt, t_melt)


@dataclass(frozen=True)
class CumulativeTripResult:
    """Result of integrating a time-varying current against a time-current curve."""

    trip_time: float  #: time θ first reaches 1, +inf if it never does [s]
    theta: FloatArray  #: travel θ at each sample time, 0 = reset, 1 = operate [-]


def _curve_values(
    fn: Callable[[FloatArray], npt.ArrayLike], i: FloatArray, name: str
) -> FloatArray:
    try:
        values = np.broadcast_to(np.asarray(fn(i), dtype=np.float64), i.shape)
    except (TypeError, ValueError):
        raise ParameterError(name, "returned no array of times", f"shape {i.shape}") from None
    if np.any(np.isnan(values)) or np.any(values < 0.0):
        raise ParameterError(name, "returned NaN or negative times", "times >= 0 or +inf")
    return values


def cumulative_trip(
    times: npt.ArrayLike,
    current_rms: npt.ArrayLike,
    trip_time_fn: Callable[[FloatArray], npt.ArrayLike],
    reset_time_fn: Callable[[FloatArray], npt.ArrayLike] | None = None,
) -> CumulativeTripResult:
    """Integrate a time-varying rms current against a curve: the device trips when θ reaches 1.

    Parameters
    ----------
    times : array_like
        Sample times, strictly increasing, at least 2 [s].
    current_rms : array_like
        rms current at each sample time [A].
    trip_time_fn : callable
        Maps current [A] to operating time [s], +inf where the device does not operate (e.g.
        ``lambda i: ieee_c37_112_trip_time(i / pickup, "very_inverse", 2.0)``).
    reset_time_fn : callable, optional
        Maps current [A] to reset time [s] where the device is not operating: +inf holds θ,
        0 resets it at once. None (default) holds θ below pickup, which trips earliest.

    Returns
    -------
    CumulativeTripResult
        The trip time and θ at each sample (θ keeps integrating after a trip; one interval adds
        at most 2).

    Raises
    ------
    ParameterError
        If the samples are not finite, of unequal shape, or times not strictly increasing, or a
        callable returns NaN or negative times.

    Notes
    -----
    dθ/dt = 1/t(I) where t(I) is finite, else −1/t_r(I); θ(0) = 0 and θ >= 0. The current is held
    at its left sample over each interval (zero-order hold), as a numerical relay does, and θ is
    integrated exactly for that staircase, so a constant current trips at exactly t(I); for a
    smoothly varying current the error is first order in the sample spacing. The last sample's
    current is not used (it would apply after the last time).

    References
    ----------
    IEEE Std C37.112-1996 (and -2018), clause 4, the integral form ∫dt/t(I) = 1 and the
    induction-disk reset (clause number from memory).
    """
    t = _array(times, "times", nonnegative=False)
    i = _array(current_rms, "current_rms")
    if t.ndim != 1 or t.size < 2 or np.any(np.diff(t) <= 0.0):
        raise ParameterError("times", t.shape, "1-D, at least 2 samples, strictly increasing")
    if i.shape != t.shape:
        raise ParameterError("current_rms", i.shape, f"the shape of times, {t.shape}")
    dt = np.diff(t)
    i_left = i[:-1]
    t_op = _curve_values(trip_time_fn, i_left, "trip_time_fn")
    with np.errstate(divide="ignore", over="ignore"):
        rate = 1.0 / t_op  # +inf for an instantaneous element, 0 where it does not operate
        # one interval's travel is capped at 2: any step >= 1 operates, and sums stay finite
        step = np.minimum(rate * dt, 2.0)
    if reset_time_fn is not None:
        idle = np.isinf(t_op)
        t_r = _curve_values(reset_time_fn, i_left, "reset_time_fn")
        with np.errstate(divide="ignore", over="ignore"):
            back = dt / t_r  # +inf for an instantaneous reset (t_r = 0)
        # a drop at least the whole positive travel is as good as an instantaneous reset
        back = np.minimum(back, float(np.sum(step)) + 1.0)
        step = np.where(idle, -back, step)
    s = np.concatenate(([0.0], np.cumsum(step)))
    theta = s - np.minimum.accumulate(np.minimum(s, 0.0))  # θ_{k+1} = max(0, θ_k + step_k)
    crossed = np.flatnonzero(theta[1:] >= 1.0)
    if crossed.size == 0:
        return CumulativeTripResult(np.inf, theta)
    k = int(crossed[0])
    return CumulativeTripResult(float(t[k] + (1.0 - theta[k]) / rate[k]), theta)
