"""Protective devices against a computed inrush, and against the transformer's damage limit.

Ride-through: does a relay, fuse or low-voltage breaker operate on the energisation current?
Protection: does it clear a through-fault before the IEEE C57.109 limit
(:mod:`core.protection.damage_curves`)? Each answer is a margin ratio, > 1 passing, with the point
where it is tightest; candidates are ranked, and an inverse-time relay gets its time-dial window.

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
  (:func:`core.protection.relay_curves.cumulative_trip`); relay instantaneous: the largest sliding
  one-cycle rms;
* breaker instantaneous: the quantity its trip unit senses (``Breaker.sensing``): the largest
  |i| (the first peak) against ``peak_factor`` × the rms setting (default √2), or the largest
  sliding half-cycle or one-cycle rms against the setting itself;
* current-limiting fuse melting I²t: the largest ∫i² over a window of half cycles.

Limits: results hold for the record given (a tightest point at its end raises a warning); relay
pickup tolerance, CT saturation and harmonic filtering are not modelled (true rms is at least
the fundamental: conservative for a filtering relay); each line is compared on its own.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import Any, ClassVar, Literal, cast

import numpy as np
import numpy.typing as npt

from core import checks
from core.errors import ParameterError
from core.protection import differential, fuse_breaker_curves, relay_curves
from core.protection.differential import Differential
from core.protection.inrush_curves import (
    Extreme,
    InrushCurves,
    inrush_from_table,
    inrush_from_waveform,
)
from core.transformer.circuit_model import Assumption

# The inrush curves are re-exported: callers may take everything device-side from here.
__all__ = [
    "INRUSH_POINTS",
    "RELAY_RMS_WORDS",
    "Breaker",
    "Device",
    "Differential",
    "Extreme",
    "Fuse",
    "InrushCurves",
    "Relay",
    "RideThrough",
    "breaker_ride_through",
    "default_note",
    "device_kind",
    "device_times",
    "differential_ride_through",
    "fuse_ride_through",
    "inrush_from_table",
    "inrush_from_waveform",
    "relay_ride_through",
    "ride_through",
]

FloatArray = npt.NDArray[np.float64]
TimeFn = Callable[[FloatArray], FloatArray]
Standard = Literal["ieee_c37_112", "iec_60255_151"]
Reset = Literal["curve", "hold", "instantaneous"]
Status = Literal["protects", "partial", "does_not_protect"]
Sensing = Literal["peak", "half_cycle_rms", "one_cycle_rms"]

#: Breaker opening time added to a relay's operating time: 5 cycles at 60 Hz. Common practice for
#: a medium-voltage breaker (rated interrupting times of 3-5 cycles, from memory).
DEFAULT_OPENING_TIME_S = 5.0 / 60.0
OPENING_SOURCE = "default 5 cycles at 60 Hz (common practice; 3-5 cycle breakers, from memory)"

#: Minimum-melt current factor for preload, ambient and ageing: common practice is 0.75-0.9 on
#: the melt current; 0.8 is this module's choice within that range (modelling choice).
DEFAULT_MELT_CURRENT_FACTOR = 0.8
MELT_SOURCE = "default 0.8 (common practice 0.75-0.9 on melt current; 0.8 a modelling choice)"

#: What a breaker's instantaneous element senses, by default: the instantaneous current's peak.
#: Common practice: electronic trip units detect the peak for their instantaneous element and
#: compare it with √2 × the setting, which is stated in symmetrical rms amperes; a
#: thermal-magnetic unit's magnetic element pulls on the instantaneous current, so it too
#: responds to the asymmetrical peak (from memory; armature inertia, which lets a short peak
#: through, is not credited: conservative). Units sensing the rms over a window are chosen with
#: ``sensing``.
DEFAULT_SENSING: Sensing = "peak"
SENSING_SOURCE = (
    "default peak: electronic trip units and magnetic elements respond to the instantaneous "
    "peak (common practice, from memory)"
)

#: Peak factor of a peak-sensing instantaneous: the peak that picks up, as a multiple of the rms
#: setting. √2 is the crest of a symmetrical sine at the setting, the calibration the setting is
#: stated in (common practice, from memory).
DEFAULT_PEAK_FACTOR = math.sqrt(2.0)
PEAK_SOURCE = "default sqrt(2): setting in symmetrical rms, peak of a sine at it (common practice)"

#: Words for each sensed quantity, used in ``RideThrough.compared_current`` and the figure.
SENSED_WORDS = {
    "peak": "largest |i| (first peak)",
    "half_cycle_rms": "largest sliding half-cycle rms",
    "one_cycle_rms": "largest sliding one-cycle rms",
}

#: Common-practice inrush points (multiple of rated rms current, duration [s]): 12 × for 0.1 s
#: (8 × for some large units) and 25 × for 0.01 s. Common practice (no published source).
INRUSH_POINTS: tuple[tuple[float, float], ...] = ((12.0, 0.1), (25.0, 0.01))

#: Ranges searched for the coordination window: TD 0.5-15 (IEEE), TMS 0.05-1.5 (IEC); common
#: practice for numerical relays (from memory; a given relay's range may differ).
TIME_DIAL_RANGE = {"ieee_c37_112": (0.5, 15.0), "iec_60255_151": (0.05, 1.5)}

RESET_SOURCE = "setting; default 'curve': C37.112 disk reset on IEEE curves, θ held on IEC ones"
_EQ = "equivalent rms I_eq(t) = sqrt((1/t)·∫i² dt)"
#: What a relay compares, in the words of the answers.
RELAY_RMS_WORDS = "sliding one-cycle true rms, integrated as ∫dt/t(I)"


def default_note(
    name: str, value: float | None, default: float, unit: str, source: str
) -> Assumption:
    """The assumption a setting stands for: the value given, or the default with its source.

    Parameters
    ----------
    name : str
        The setting's name in the answers [-].
    value : float or None
        The value given; None: the default was used [``unit``].
    default : float
        The default used when nothing was given [``unit``].
    unit : str
        The setting's unit, as the answers write it [-].
    source : str
        Where the default comes from [-].

    Returns
    -------
    core.transformer.circuit_model.Assumption
        (name, value, unit, "given"), or (name, default, unit, source) without a value.

    Notes
    -----
    No formula: the value is reported as it was given, or the default as it was used.

    References
    ----------
    This project's reporting of assumptions.
    """
    if value is None:
        return Assumption(name, default, unit, source)
    return Assumption(name, value, unit, "given")


def _band_inputs(
    current_a: npt.ArrayLike, opening_time_s: float | None
) -> tuple[FloatArray, float]:
    """The checked currents and opening time of a trip band (the default opening time if None)."""
    i = checks.finite_array("current_a", current_a, (0, 1, 2), 0.0)
    t_open = DEFAULT_OPENING_TIME_S if opening_time_s is None else opening_time_s
    t_open = checks.number("opening_time_s", t_open, "a finite number >= 0", lambda x: x >= 0.0)
    return i, t_open


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
        tables = {
            "ieee_c37_112": relay_curves.IEEE_C37_112,
            "iec_60255_151": relay_curves.IEC_60255_151,
        }
        if self.standard not in tables:
            raise ParameterError("standard", self.standard, "ieee_c37_112 or iec_60255_151")
        if self.curve not in tables[self.standard]:
            raise ParameterError("curve", self.curve, ", ".join(tables[self.standard]))
        checks.positive("pickup_a", self.pickup_a)
        checks.positive("time_dial", self.time_dial)
        if self.instantaneous_pickup_a is not None:
            checks.positive("instantaneous_pickup_a", self.instantaneous_pickup_a)
        if self.reset not in ("curve", "hold", "instantaneous"):
            raise ParameterError("reset", self.reset, "curve, hold or instantaneous")

    #: The device's kind as the answers name it.
    kind: ClassVar[str] = "relay"
    #: True: a relay has a time-current curve [-].
    has_curve: ClassVar[bool] = True

    @property
    def clearing_curve(self) -> str | None:
        """The curve that clears a through-fault: the relay curve plus the opening time [-]."""
        return "relay curve + opening time"

    def trip_band(
        self, current_a: npt.ArrayLike, opening_time_s: float | None = None
    ) -> fuse_breaker_curves.TripBand:
        """The relay curve, and the curve plus the breaker's opening time, at given currents.

        Parameters
        ----------
        current_a : array_like
            rms current [A].
        opening_time_s : float or None
            Breaker opening time added to the relay's; None: :data:`DEFAULT_OPENING_TIME_S` [s].

        Returns
        -------
        core.protection.fuse_breaker_curves.TripBand
            ``minimum_time``: the relay curve, 0 s above an instantaneous pickup;
            ``maximum_time``: that plus the opening time; +inf below pickup [s].

        Raises
        ------
        ParameterError
            On negative or non-finite currents or opening time.

        Notes
        -----
        t_min(I) = t(I/I_p; TD), or 0 for I > I_inst; t_max(I) = t_min(I) + t_open.

        References
        ----------
        IEEE Std C37.112, IEC 60255-151, via :mod:`core.protection.relay_curves`.
        """
        i, t_open = _band_inputs(current_a, opening_time_s)
        low = _relay_fns(self, self.time_dial)[0](i)
        if self.instantaneous_pickup_a is not None:
            low = np.where(i > self.instantaneous_pickup_a, 0.0, low)
        return fuse_breaker_curves.TripBand(low, low + t_open)

    def assumption_notes(self) -> tuple[Assumption, ...]:
        """What the relay's judgement assumes: the current it measures and its reset.

        Returns
        -------
        tuple of core.transformer.circuit_model.Assumption
            The measured current (common practice) and the reset (setting or default).

        Notes
        -----
        No formula: the words of :data:`RELAY_RMS_WORDS` and :data:`RESET_SOURCE`.

        References
        ----------
        IEEE Std C37.112 (reset; from memory); common practice (measured rms).
        """
        return (
            Assumption(f"{self.name}.measured_current", RELAY_RMS_WORDS, "-", "common practice"),
            Assumption(f"{self.name}.reset", self.reset, "-", RESET_SOURCE),
        )


@dataclass(frozen=True)
class Fuse:
    """A fuse by its tabulated curves [A, s] and, if current-limiting, minimum melting I²t [A²s].

    Derated minimum melt t'(I) = k_t·t_mm(I/k_i), with ``melt_current_factor`` k_i (None:
    :data:`DEFAULT_MELT_CURRENT_FACTOR`) and ``melt_time_factor`` k_t (None: 1); the melting
    I²t is multiplied by k_i² (consistent with the current factor; modelling choice).
    """

    name: str
    minimum_melt: fuse_breaker_curves.TabulatedCurve
    total_clearing: fuse_breaker_curves.TabulatedCurve | None = None
    minimum_melting_i2t_a2s: float | None = None
    melt_current_factor: float | None = None
    melt_time_factor: float | None = None

    def __post_init__(self) -> None:
        for name in ("melt_current_factor", "melt_time_factor"):
            if getattr(self, name) is not None:
                checks.number(name, getattr(self, name), "in (0, 1]", lambda x: 0.0 < x <= 1.0)
        if self.minimum_melting_i2t_a2s is not None:
            checks.positive("minimum_melting_i2t_a2s", self.minimum_melting_i2t_a2s)

    #: The device's kind as the answers name it.
    kind: ClassVar[str] = "fuse"
    #: True: a fuse has time-current curves [-].
    has_curve: ClassVar[bool] = True

    @property
    def clearing_curve(self) -> str | None:
        """The curve that clears a through-fault: total clearing; None without that curve [-]."""
        return None if self.total_clearing is None else "total clearing"

    def trip_band(
        self, current_a: npt.ArrayLike, opening_time_s: float | None = None
    ) -> fuse_breaker_curves.TripBand:
        """The derated minimum melt and the total clearing at given currents.

        Parameters
        ----------
        current_a : array_like
            rms current [A].
        opening_time_s : float or None
            Checked like a relay's, not used: a fuse clears by itself [s].

        Returns
        -------
        core.protection.fuse_breaker_curves.TripBand
            ``minimum_time``: derated minimum melt; ``maximum_time``: total clearing (NaN
            without that curve); +inf where it does not operate [s].

        Raises
        ------
        ParameterError
            On negative or non-finite currents or opening time.

        Notes
        -----
        Derated minimum melt t'(I) = k_t·t_mm(I/k_i) (see the class docstring).

        References
        ----------
        Common practice (:mod:`core.protection.fuse_breaker_curves`; derating 0.75-0.9).
        """
        i = _band_inputs(current_a, opening_time_s)[0]
        tc = self.total_clearing
        high = np.full(i.shape, np.nan) if tc is None else tc.trip_time(i)
        return fuse_breaker_curves.TripBand(_melt_time(self, i), high)

    def assumption_notes(self) -> tuple[Assumption, ...]:
        """What the fuse's judgement assumes: its melt current factor.

        Returns
        -------
        tuple of core.transformer.circuit_model.Assumption
            The melt current factor, given or :data:`DEFAULT_MELT_CURRENT_FACTOR`.

        Notes
        -----
        No formula: the factor k_i of t'(I) = k_t·t_mm(I/k_i) as used.

        References
        ----------
        Common practice (derating 0.75-0.9 on the melt current).
        """
        k, dk = self.melt_current_factor, DEFAULT_MELT_CURRENT_FACTOR
        return (default_note(f"{self.name}.melt_current_factor", k, dk, "-", MELT_SOURCE),)


@dataclass(frozen=True)
class Breaker:
    """A low-voltage breaker by its trip unit and what its instantaneous element senses.

    ``sensing``: "peak" (the largest |i|, picked up at ``peak_factor`` × the rms setting;
    None: :data:`DEFAULT_PEAK_FACTOR`), "half_cycle_rms" or "one_cycle_rms" (the largest
    sliding rms over that window, against the setting itself); None: :data:`DEFAULT_SENSING`.
    """

    name: str
    trip_unit: fuse_breaker_curves.LowVoltageBreaker
    peak_factor: float | None = None
    sensing: Sensing | None = None

    def __post_init__(self) -> None:
        if self.peak_factor is not None:
            checks.number("peak_factor", self.peak_factor, "in [1, 3]", lambda x: 1.0 <= x <= 3.0)
        if self.sensing is not None and self.sensing not in SENSED_WORDS:
            raise ParameterError("sensing", self.sensing, ", ".join(SENSED_WORDS))

    #: The device's kind as the answers name it.
    kind: ClassVar[str] = "breaker"
    #: True: a breaker has a time-current band [-].
    has_curve: ClassVar[bool] = True

    @property
    def clearing_curve(self) -> str | None:
        """The curve that clears a through-fault: the band's maximum [-]."""
        return "maximum band"

    def trip_band(
        self, current_a: npt.ArrayLike, opening_time_s: float | None = None
    ) -> fuse_breaker_curves.TripBand:
        """The trip unit's minimum and maximum band at given currents.

        Parameters
        ----------
        current_a : array_like
            rms current [A].
        opening_time_s : float or None
            Checked like a relay's, not used: the band includes the breaker's clearing [s].

        Returns
        -------
        core.protection.fuse_breaker_curves.TripBand
            The band of :func:`core.protection.fuse_breaker_curves.lv_breaker_trip_band`;
            +inf where it does not operate [s].

        Raises
        ------
        ParameterError
            On negative or non-finite currents or opening time.

        Notes
        -----
        Long time, short time and instantaneous with their tolerances (see
        :func:`core.protection.fuse_breaker_curves.lv_breaker_trip_band`).

        References
        ----------
        Common practice (:mod:`core.protection.fuse_breaker_curves`).
        """
        i = _band_inputs(current_a, opening_time_s)[0]
        return fuse_breaker_curves.lv_breaker_trip_band(i, self.trip_unit)

    def assumption_notes(self) -> tuple[Assumption, ...]:
        """What the breaker's judgement assumes: what its instantaneous senses, its peak factor.

        Returns
        -------
        tuple of core.transformer.circuit_model.Assumption
            The sensed quantity (given or :data:`DEFAULT_SENSING`) and, for a peak-sensing
            unit, the peak factor (given or :data:`DEFAULT_PEAK_FACTOR`).

        Notes
        -----
        No formula: the sensing and the factor k of the check k·(1 − tol)·P as used.

        References
        ----------
        Common practice (peak-sensing trip units against √2 × the rms setting), from memory.
        """
        sense = self.sensing or DEFAULT_SENSING
        src = "given" if self.sensing is not None else SENSING_SOURCE
        notes: tuple[Assumption, ...] = (
            Assumption(f"{self.name}.instantaneous_sensing", sense, "-", src),
        )
        if sense == "peak":
            k, dk = self.peak_factor, DEFAULT_PEAK_FACTOR
            notes += (default_note(f"{self.name}.peak_factor", k, dk, "-", PEAK_SOURCE),)
        return notes


Device = Relay | Fuse | Breaker | Differential
#: Devices with a time-current curve (a differential has none: it is judged on the waveform).
CURVED = (Relay, Fuse, Breaker)


def device_kind(device: Device) -> str:
    """The device's kind as the answers name it.

    Parameters
    ----------
    device : Relay, Fuse, Breaker or Differential
        The device [-].

    Returns
    -------
    str
        ``"relay"``, ``"fuse"``, ``"breaker"`` or ``"differential"``.

    Notes
    -----
    Each device class names its own kind (its ``kind`` property).

    References
    ----------
    This project's naming.
    """
    return device.kind


def _relay_fns(relay: Relay, time_dial: float) -> tuple[TimeFn, TimeFn | None]:
    p = relay.pickup_a
    zero: TimeFn = lambda i: np.zeros(i.shape)  # noqa: E731
    if relay.standard == "iec_60255_151":
        iec = cast(relay_curves.IecCurve, relay.curve)
        reset = zero if relay.reset == "instantaneous" else None  # IEC curves: no reset curve
        return lambda i: relay_curves.iec_60255_151_trip_time(i / p, iec, time_dial), reset
    ieee = cast(relay_curves.IeeeCurve, relay.curve)

    def trip(i: FloatArray) -> FloatArray:
        return relay_curves.ieee_c37_112_trip_time(i / p, ieee, time_dial)

    def disk(i: FloatArray) -> FloatArray:
        return relay_curves.ieee_c37_112_reset_time(i / p, ieee, time_dial)

    resets: dict[str, TimeFn | None] = {"curve": disk, "hold": None, "instantaneous": zero}
    return trip, resets[relay.reset]


def _melt_factor(fuse: Fuse) -> float:
    return fuse.melt_current_factor or DEFAULT_MELT_CURRENT_FACTOR


def _melt_time(fuse: Fuse, i: FloatArray) -> FloatArray:
    return (fuse.melt_time_factor or 1.0) * fuse.minimum_melt.trip_time(i / _melt_factor(fuse))


def device_times(
    device: Device, current_a: npt.ArrayLike, *, opening_time_s: float | None = None
) -> fuse_breaker_curves.TripBand:
    """A device's two curves at given currents: what must not operate, and what clears.

    Parameters
    ----------
    device : Relay, Fuse or Breaker
        The device [-].
    current_a : array_like
        rms current [A].
    opening_time_s : float or None
        Breaker opening time added to a relay's; None: :data:`DEFAULT_OPENING_TIME_S` [s].

    Returns
    -------
    core.protection.fuse_breaker_curves.TripBand
        ``minimum_time``: relay curve (0 s above an instantaneous pickup), derated minimum melt
        or breaker minimum band; ``maximum_time``: relay curve + opening time, total clearing
        (NaN if the fuse has none) or breaker maximum band [s]; +inf where it does not operate.

    Raises
    ------
    ParameterError
        On negative or non-finite currents or opening time, or a differential (no curve).

    Notes
    -----
    Each device class computes its own band (its ``trip_band`` method).

    References
    ----------
    IEEE Std C37.112, IEC 60255-151, via :mod:`core.protection.relay_curves`; common practice for
    the rest (:mod:`core.protection.fuse_breaker_curves`).
    """
    return device.trip_band(current_a, opening_time_s)


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
    sensed: Sensed | None = None  #: breaker instantaneous: what it compared, for the figure
    #: a differential: its per-cycle table and the verdict under each harmonic logic
    differential: differential.DifferentialResult | None = None


@dataclass(frozen=True)
class Sensed:
    """A breaker instantaneous check in the setting's terms (rms amperes), worst line."""

    sensing: str  #: "peak", "half_cycle_rms" or "one_cycle_rms"
    sensed_a: float  #: the sensed value: a peak [A] or a sliding rms [A]
    compared_a: float  #: in the setting's rms terms: peak/peak_factor, or the rms itself [A]
    pickup_a: float  #: the band's lower edge (1 − tolerance)·setting [A]
    time_s: float  #: when it occurs; NaN unknown [s]
    text: str  #: the comparison in words


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
        device_kind(device),
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
        Relay settings [-].
    inrush : InrushCurves
        From :func:`inrush_from_waveform` or :func:`inrush_from_table` [-].

    Returns
    -------
    RideThrough
        ``time_margin_ratio`` = 1/max θ, the factor by which TD (TMS) could be divided before
        the element operates within the record (after a trip, θ's rise per record interval is
        capped at 2 by :func:`core.protection.relay_curves.cumulative_trip`, so a ratio < 1 is then
        exact only while intervals stay under half the operating time); instantaneous ratio = pickup
        / largest rms.

    Notes
    -----
    θ(t) by :func:`core.protection.relay_curves.cumulative_trip`: dθ/dt = 1/t(I), or −1/t_r(I) below
    pickup. Both t(I) and t_r(I) are proportional to TD, so θ is proportional to 1/TD.

    References
    ----------
    IEEE Std C37.112-1996 (and -2018), integral form and reset (clause from memory).
    """
    trip_fn, reset_fn = _relay_fns(relay, relay.time_dial)
    t, rms = inrush.rms_time_s, inrush.rms_current_a
    timed = []
    for j, row in enumerate(rms):
        res = relay_curves.cumulative_trip(t, row, trip_fn, reset_fn)
        k = int(np.argmax(res.theta))
        ratio = math.inf if res.theta[k] <= 0.0 else 1.0 / float(res.theta[k])
        timed.append(_Check(ratio, float(t[k]), j, res.trip_time, RELAY_RMS_WORDS, k == t.size - 1))
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
        Fuse curves and derating [-].
    inrush : InrushCurves
        The inrush [-].

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
    """Check a breaker's instantaneous against what it senses, its band against I_eq.

    Parameters
    ----------
    breaker : Breaker
        Trip unit, what its instantaneous senses, and the peak factor [-].
    inrush : InrushCurves
        The inrush [-].

    Returns
    -------
    RideThrough
        ``time_margin_ratio`` = min over t of t_min,band(I_eq(t))/t (long and short time);
        instantaneous ratio = k·(1 − tol)·P / sensed value, with k the peak factor for a
        peak-sensing unit and 1 for an rms-sensing one; ``sensed`` holds the comparison.

    Notes
    -----
    (1 − tol)·P is the band's lower edge
    (:func:`core.protection.fuse_breaker_curves.lv_breaker_trip_band`), in symmetrical rms amperes.
    Like is compared with like: a peak-sensing unit's first peak î against k·(1 − tol)·P (for a sine
    at the setting, î = √2·P), i.e. î/k against the band on a TCC; an rms-sensing unit's largest
    sliding rms over its window against (1 − tol)·P. The timed band is evaluated with the
    instantaneous element off.

    References
    ----------
    Common practice (peak-sensing electronic trip units compared with √2 × the rms setting;
    magnetic elements responding to the asymmetrical current), from memory.
    """
    unit = breaker.trip_unit
    timed_unit = replace(unit, instantaneous_pickup=None)

    def band(i: FloatArray) -> FloatArray:
        return fuse_breaker_curves.lv_breaker_trip_band(i, timed_unit).minimum_time

    timed = _curve_checks(inrush.eq_time_s, inrush.eq_current_a, band)
    if unit.instantaneous_pickup is None:
        return _result(breaker, inrush, timed)
    lo = (1.0 - unit.instantaneous_tolerance) * unit.instantaneous_pickup
    sense = breaker.sensing or DEFAULT_SENSING
    k = (breaker.peak_factor or DEFAULT_PEAK_FACTOR) if sense == "peak" else 1.0
    ext = {"peak": inrush.peak, "half_cycle_rms": inrush.half_cycle_rms}.get(sense)
    if sense == "one_cycle_rms":
        rms, t = inrush.rms_current_a, inrush.rms_time_s
        ext = Extreme(rms.max(axis=1), t[np.argmax(rms, axis=1)])
    words = SENSED_WORDS[sense]
    if ext is None:
        note = (("instantaneous_not_checked", f"no inrush {words.removeprefix('largest ')}"),)
        return _result(breaker, inrush, timed, None, None, note)
    inst = _pickup_checks(ext, k * lo, words)
    j = min(range(len(inst)), key=lambda n: inst[n].ratio)
    value = float(ext.value[j])
    if sense == "peak":
        text = (
            f"{words} {value:.4g} A / {k:.4g} = {value / k:.4g} A rms-equivalent, against the "
            f"instantaneous lower edge {lo:.4g} A (peak-sensing: {k:.4g} × the rms setting)"
        )
    else:
        text = f"{words} {value:.4g} A, against the instantaneous lower edge {lo:.4g} A"
    inst[j] = replace(inst[j], what=text)
    sensed = Sensed(sense, value, value / k, lo, float(ext.time_s[j]), text)
    return replace(_result(breaker, inrush, timed, inst), sensed=sensed)


def differential_ride_through(device: Differential, inrush: InrushCurves) -> RideThrough:
    """Whether a transformer differential operates on its own unit's energisation.

    Parameters
    ----------
    device : Differential
        The element's settings [-].
    inrush : InrushCurves
        The inrush with its sampled line currents (:func:`inrush_from_waveform`) [-].

    Returns
    -------
    RideThrough
        ``trips``: the element operates under its chosen harmonic logic; ``margin_ratio``: min
        over windows of max(I_thr/I_op, ratio/level) (:func:`core.protection.differential.
        differential_response`); ``instantaneous_margin_ratio`` the same; no timed element
        (``time_margin_ratio`` +inf); ``differential`` the full answer.

    Raises
    ------
    ParameterError
        On an inrush from a table (no samples) or a record that is not three lines.

    Notes
    -----
    The far side of the unit carries no current while it is energised unloaded, so the
    differential current is the energised side's line currents after compensation.

    References
    ----------
    IEEE Std C37.91-2008 (from memory), via :mod:`core.protection.differential`.
    """
    i, f = inrush.sampled_current_a, inrush.frequency_hz
    if i is None or f is None:
        raise ParameterError("inrush", "a table", "sampled line currents (a simulated inrush)")
    if i.shape[0] != 3:
        raise ParameterError("inrush.lines", i.shape[0], "three lines for a differential")
    rated = inrush.rated_current_a if inrush.rated_current_a is not None else math.nan
    t = inrush.rms_time_s
    res = differential.differential_response(device, t, i, f, rated)
    v = res.verdict
    words = (
        f"harmonic ratios of the compensated differential current ({res.filter_words}); "
        f"logic {v.logic}: {differential.LOGIC_WORDS[v.logic]}"
    )
    return RideThrough(
        device.name,
        "differential",
        words,
        v.operates,
        v.time_s,
        v.margin_ratio,
        v.margin_ratio_time_s if math.isfinite(v.margin_ratio) else None,
        v.margin_ratio_phase,
        math.inf,
        v.margin_ratio,
        None,
        differential=res,
    )


#: Each device class's judge: :func:`ride_through` looks the device's class up here.
_JUDGES: dict[type, Callable[[Any, InrushCurves], RideThrough]] = {
    Relay: relay_ride_through,
    Fuse: fuse_ride_through,
    Breaker: breaker_ride_through,
    Differential: differential_ride_through,
}


def ride_through(device: Device, inrush: InrushCurves) -> RideThrough:
    """Whether a relay, fuse, breaker or differential operates on the inrush, and its margin.

    Parameters
    ----------
    device : Relay, Fuse, Breaker or Differential
        The device [-].
    inrush : InrushCurves
        The inrush as devices see it [-].

    Returns
    -------
    RideThrough
        The judgement of the device's own kind (:func:`relay_ride_through`,
        :func:`fuse_ride_through`, :func:`breaker_ride_through` or
        :func:`differential_ride_through`).

    Notes
    -----
    Dispatch on the device's class; the rule of each margin is in the module docstring.

    References
    ----------
    As for the four functions it dispatches to.
    """
    return _JUDGES[type(device)](device, inrush)
