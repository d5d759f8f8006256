"""Relay time-current characteristics and the time-integrated response to a varying current.

Models the operating time of an overcurrent relay element against current: the IEEE C37.112 and
IEC 60255-151 inverse-time equations (with the C37.112 induction-disk reset), definite-time and
instantaneous elements, and the accumulation of a time-varying rms current against a curve (trip
when ∫dt/t(I) reaches 1). The integration takes any time-current function, so a tabulated fuse
curve or a breaker band (:mod:`core.protection.fuse_breaker_curves`) is integrated the same way.

Limits: currents are rms [A] or multiples of pickup; the relay's own minimum operating time, CT
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

from core import checks as checks
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
#: IEC 60255-151:2009 Table 1, curves D, E, F. Values from memory: the document was not at
#: hand.
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
        "moderately_inverse", "very_inverse" or "extremely_inverse" [-].
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
    td = checks.positive("time_dial", time_dial)
    m = checks.array("multiple", multiple)
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
        "moderately_inverse", "very_inverse" or "extremely_inverse" [-].
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
    td = checks.positive("time_dial", time_dial)
    m = checks.array("multiple", multiple)
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
        "standard_inverse", "very_inverse", "extremely_inverse" or "long_time_inverse" [-].
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
    multiplier = checks.positive("tms", tms)
    m = checks.array("multiple", multiple)
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
    i = checks.array("current", current)
    p = checks.positive("pickup", pickup)
    d = checks.nonnegative("delay", delay)
    return np.where(i > p, d, np.inf)


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
        ``lambda i: ieee_c37_112_trip_time(i / pickup, "very_inverse", 2.0)``) [-].
    reset_time_fn : callable, optional
        Maps current [A] to reset time [s] where the device is not operating: +inf holds θ,
        0 resets it at once. None (default) holds θ below pickup, which trips earliest [-].

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
    t = checks.array("times", times, nonnegative=False)
    i = checks.array("current_rms", current_rms)
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
