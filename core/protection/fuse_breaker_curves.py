"""Fuse and low-voltage breaker time-current characteristics, and the Joule integral I²t.

Models a caller-given tabulated curve (a fuse's minimum-melt or total-clearing curve, read
log-log), the operating band of a low-voltage breaker trip unit (long-time, short-time and
instantaneous elements with their pickup and time tolerances), and the sub-cycle I²t of a
sampled current against a current-limiting fuse's minimum melting I²t.

Limits: curve currents are rms [A] (the I²t functions take instantaneous samples); a table says
nothing below its first current or faster than its last time; the trip-unit band is the
common-practice shape of electronic trip units, not a maker's curve; the I²t comparison holds
only where melting is adiabatic (below about 10 ms, common practice); the device's own DC offset
and harmonic response are not modelled.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
from scipy.integrate import cumulative_trapezoid

from core import checks as checks
from core.errors import ParameterError

FloatArray = npt.NDArray[np.float64]


def _fraction(value: object, name: str) -> float:
    return checks.number(name, value, "a fraction 0 <= x < 1", lambda x: 0.0 <= x < 1.0)


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
        i = checks.array("current", current)
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
        t = checks.array("time", time)
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
        checks.positive("long_time_pickup", self.long_time_pickup)
        checks.positive("long_time_delay", self.long_time_delay)
        if self.short_time_pickup is not None:
            checks.positive("short_time_pickup", self.short_time_pickup)
            checks.nonnegative("short_time_delay", self.short_time_delay)
        if self.short_time_i2t_reference is not None:
            checks.positive("short_time_i2t_reference", self.short_time_i2t_reference)
        if self.instantaneous_pickup is not None:
            checks.positive("instantaneous_pickup", self.instantaneous_pickup)
        for name in ("pickup_tolerance", "time_tolerance", "instantaneous_tolerance"):
            _fraction(getattr(self, name), name)
        checks.nonnegative("instantaneous_clearing_time", self.instantaneous_clearing_time)


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
        Trip-unit settings [-].

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
    i = checks.array("current", current)
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
    i = checks.array("current_samples", current_samples, nonnegative=False)
    if i.ndim != 1 or i.size < 2:
        raise ParameterError("current_samples", i.shape, "a 1-D array of at least 2 samples")
    step = checks.positive("dt", dt)
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
    melt = checks.positive("minimum_melting_i2t", minimum_melting_i2t)
    cum = i2t(current_samples, dt)
    total = float(cum[-1])
    k = int(np.argmax(cum >= melt))
    if cum[k] < melt:  # never reached (cum[0] = 0 < melt, so a crossing has k >= 1)
        t_melt = np.inf
    else:
        t_melt = float(dt * (k - 1 + (melt - cum[k - 1]) / (cum[k] - cum[k - 1])))
    return MeltingI2tCheck(total, melt, total / melt, total >= melt, t_melt)
