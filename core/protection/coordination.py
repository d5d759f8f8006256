"""Protection side, evaluation and ranking of candidate devices, and relay coordination windows.

Protection: does a device clear a through-fault before the IEEE C57.109 limit
(:mod:`core.protection.damage_curves`)? margin min over current of t_damage/t_clear.
:func:`evaluate` runs the ride-through (:mod:`core.protection.device_operation`) and protection
checks and the common-practice inrush points for every candidate and ranks those that pass both;
:func:`coordination_window` finds the time dials of an inverse-time relay that ride through and
still protect.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace

import numpy as np
import numpy.typing as npt

from core import checks
from core.errors import ParameterError
from core.protection.damage_curves import DamageCurve
from core.protection.device_operation import (
    DEFAULT_OPENING_TIME_S,
    INRUSH_POINTS,
    OPENING_SOURCE,
    TIME_DIAL_RANGE,
    Device,
    Relay,
    RideThrough,
    Status,
    default_note,
    device_times,
    relay_ride_through,
    ride_through,
)
from core.protection.inrush_curves import InrushCurves
from core.transformer.circuit_model import Assumption

FloatArray = npt.NDArray[np.float64]


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
        m_ok, t_ok = (
            checks.positive("inrush_points.multiple", m),
            checks.positive("inrush_points.time", t),
        )
        td = float(device_times(device, m_ok * i_r).minimum_time)
        out.append(PointCheck(m_ok, m_ok * i_r, t_ok, td, td / t_ok, td / t_ok > 1.0))
    return tuple(out)


# ----------------------------------------------------------------------------------- protection


#: Where the protection check starts when a secondary-side device carries the overload range
#: [multiple of rated current]. Common practice: the secondary main (at most 125 % of rated, NEC
#: 450.3(B), from memory) and the loading guide govern overloads and low-level faults; a primary
#: fuse (NEC 450.3(A) allows up to 300 % of rated above 1000 V, from memory; 150-300 % is common
#: practice) is judged on the through-fault range above. 6 × is this module's choice: a fuse of
#: 1.5-2 × rated whose minimum melt meets the E-rating definition (melting in 300 s at 200-240 %
#: of its rating, ANSI C37.46, from memory) clears inside the C57.109 table from there.
DEFAULT_CHECK_FROM_X_RATED = 6.0
CHECK_FROM_SOURCE = (
    "default 6 x rated: a secondary-side device carries the overload range below it (common "
    "practice; primary fuses of 1.5-3 x rated, NEC 450.3 limits from memory)"
)


@dataclass(frozen=True)
class Portion:
    """A stretch of the damage curve and whether the protection check covers it."""

    name: str  #: which part of the curve
    from_current_a: float  #: [A]
    to_current_a: float  #: [A]
    checked: bool  #: inside the checked range
    reason: str  #: why it is (not) checked


def curve_portions(
    damage: DamageCurve, check_from_a: float, check_to_a: float, below_reason: str
) -> tuple[Portion, ...]:
    """Split the damage curve into its thermal and mechanical parts and the checked range.

    Parameters
    ----------
    damage : core.protection.damage_curves.DamageCurve
        The curve [-].
    check_from_a, check_to_a : float
        The checked range [A].
    below_reason : str
        Why currents below ``check_from_a`` are not checked [-].

    Returns
    -------
    tuple of Portion
        In increasing current: each part of the curve, cut at the ends of the checked range.

    Notes
    -----
    Parts (liquid): thermal from the C57.109 table up to 25 × rated, thermal t = 1250/I² above,
    mechanical I²t = K from its starting current; dry-type: thermal t = 1250/I², mechanical.

    References
    ----------
    IEEE Std C57.109-1993 clause 4 (from memory); see :mod:`core.protection.damage_curves`.
    """
    i_r, lo, hi = damage.rated_current, float(damage.current[0]), float(damage.current[-1])
    edges = [lo]
    names = []
    mech = damage.mechanical_from_current
    top_thermal = hi if mech is None else min(mech, hi)
    if damage.insulation == "liquid" and top_thermal > 25.0 * i_r * (1 + 1e-12):
        names += ["thermal (C57.109 table, log-log between its points)", "thermal (1250/I^2)"]
        edges += [25.0 * i_r, top_thermal]
    elif damage.insulation == "liquid":
        names.append("thermal (C57.109 table, log-log between its points)")
        edges.append(top_thermal)
    else:
        names.append("thermal (1250/I^2)")
        edges.append(top_thermal)
    if mech is not None and mech < hi:
        names.append("mechanical (I^2 t = K)")
        edges.append(hi)
    out = []
    for name, a, b in zip(names, edges[:-1], edges[1:], strict=True):
        cuts = sorted({a, b, *(c for c in (check_from_a, check_to_a) if a < c < b)})
        for c0, c1 in itertools.pairwise(cuts):
            if c1 <= check_from_a * (1 + 1e-12):
                out.append(Portion(name, c0, c1, False, below_reason))
            elif c0 >= check_to_a * (1 - 1e-12):
                why = "above the largest through-fault current the source allows, 1/(Z_T + Z_S)"
                out.append(Portion(name, c0, c1, False, why))
            else:
                out.append(Portion(name, c0, c1, True, "checked"))
    return tuple(out)


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
    checked_from_a: float = math.nan  #: lowest current checked [A]
    checked_to_a: float = math.nan  #: highest current checked [A]


def _factor(value: float | None) -> float:
    f = 1.0 if value is None else value
    return checks.number("damage_current_factor", f, "in (0, 1]", lambda x: 0.0 < x <= 1.0)


def _range(current: FloatArray, fault: float, start: float | None) -> tuple[float, float]:
    """Checked range: from ``start`` (or the curve's start) to the fault current (or its end)."""
    top = float(current[-1]) if not math.isfinite(fault) else min(float(current[-1]), fault)
    low = float(current[0]) if start is None else checks.positive("check_from_current", start)
    return min(max(low, float(current[0])), top), top


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
    check_from_current: float | None = None,
    points: int = 400,
) -> Protection:
    """Does the device clear before the through-fault damage limit over the checked range?

    Parameters
    ----------
    device : Relay, Fuse or Breaker
        The device; a fuse needs its total-clearing curve [-].
    damage : core.protection.damage_curves.DamageCurve
        Damage curve, in the amperes the device sees [-].
    opening_time_s : float or None
        Breaker opening time added to a relay; None: :data:`DEFAULT_OPENING_TIME_S` [s].
    damage_current_factor : float or None
        Multiplies the damage curve's currents, in (0, 1]; None: 1. Common practice uses 0.58
        for a delta-wye unit and a secondary line-to-ground fault [-].
    check_from_current : float or None
        Lowest current checked, on the curve as scaled; None: the curve's lowest current [A].
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
        On a fuse without a total-clearing curve, a differential (no curve), or out-of-range
        values.

    Notes
    -----
    t_clear: total clearing (fuse), maximum band (breaker), relay curve + opening time. The
    damage curve is log-log linear between its points, so interpolation there is exact. The
    range checked runs from ``check_from_current`` (or the curve's start) to the largest current
    the source allows, ``damage.fault_current`` (or the curve's end), both scaled by the factor;
    if that range is empty, the one current at its upper end is checked.

    References
    ----------
    IEEE Std C57.109-1993 clause 4 (from memory); IEEE Std C37.91-2008 (from memory).
    """
    clearing = device.clearing_curve  # a differential has none: its error is raised here
    if clearing is None:
        raise ParameterError("total_clearing", None, "a total-clearing curve")
    f = _factor(damage_current_factor)
    ci = checks.finite_array("damage.current", damage.current, (1,), 1e-300) * f
    ti = checks.finite_array("damage.time", damage.time, (1,), 1e-300)
    if ci.size < 2 or ti.shape != ci.shape or np.any(np.diff(ci) < 0.0):
        raise ParameterError("damage", ci.size, "a curve of increasing currents, one time each")
    n = checks.integer("points", points, 2, 10_000)
    low, top = _range(ci, damage.fault_current * f, check_from_current)
    inside = ci[(ci >= low) & (ci <= top)]
    grid = np.union1d(np.geomspace(low, top, n), np.concatenate(([low, top], inside)))
    t_clr = device_times(device, grid, opening_time_s=opening_time_s).maximum_time
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(t_clr == 0.0, np.inf, _damage_time(ci, ti, grid) / t_clr)
    ok, k = ratio > 1.0, int(np.argmin(ratio))
    status: Status = "protects" if ok.all() else "partial" if ok.any() else "does_not_protect"
    bad = grid[~ok]
    return Protection(
        device.name,
        clearing,
        status,
        status == "protects",
        float(ratio[k]),
        float(grid[k]),
        float(bad[0]) if bad.size else None,
        float(bad[-1]) if bad.size else None,
        float(low),
        float(top),
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
    #: rides through and protects; a differential: rides through (its protection of internal
    #: faults is not judged here, and it is left out of the ranking)
    suitable: bool
    margin_ratio: float | None  #: min of the two margins when both are known [-]


@dataclass(frozen=True)
class Evaluation:
    """Result of :func:`evaluate`; ``ranking`` names suitable devices, largest margin first."""

    devices: tuple[DeviceEvaluation, ...]
    ranking: tuple[str, ...]
    assumptions: tuple[Assumption, ...]  #: every default used, with its source
    warnings: tuple[tuple[str, str], ...]  #: (code, message)
    portions: tuple[Portion, ...] = ()  #: the damage curve's parts, checked or not and why


def evaluate(
    inrush: InrushCurves,
    devices: Sequence[Device],
    damage: DamageCurve | None = None,
    *,
    opening_time_s: float | None = None,
    damage_current_factor: float | None = None,
    inrush_points: Sequence[tuple[float, float]] = INRUSH_POINTS,
    check_from_current: float | None = None,
    overload_by_secondary_device: bool = True,
) -> Evaluation:
    """Evaluate candidate devices against the inrush and the damage curve, and rank them.

    Parameters
    ----------
    inrush : InrushCurves
        The inrush [-].
    devices : sequence of Relay, Fuse, Breaker or Differential
        Candidates, with distinct names; each adds its own assumption notes, in order [-].
    damage : core.protection.damage_curves.DamageCurve or None
        Damage curve in the devices' amperes; None skips the protection side [-].
    opening_time_s, damage_current_factor : float or None
        As :func:`protection_check` [s], [-].
    inrush_points : sequence of (float, float)
        (multiple of rated current, duration) checked against each device's minimum curve;
        :data:`INRUSH_POINTS` by default, skipped without a rated current [x rated, s].
    check_from_current : float or None
        Lowest current of the protection check; None: :data:`DEFAULT_CHECK_FROM_X_RATED` × the
        damage curve's rated current when ``overload_by_secondary_device``, else the curve's
        lowest current [A].
    overload_by_secondary_device : bool
        A secondary-side device carries the overload range (below the check's start) [-].

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
    :func:`protection_check`; inrush points: common practice.
    """
    names = [d.name for d in devices]
    if not names or len(set(names)) != len(names):
        raise ParameterError("devices", names, "at least one device, names distinct")
    o, f, i_r = opening_time_s, damage_current_factor, inrush.rated_current_a
    notes, warnings = [], []
    start: float | None = None
    portions: tuple[Portion, ...] = ()
    if damage is not None:
        notes.append(default_note("opening_time_s", o, DEFAULT_OPENING_TIME_S, "s", OPENING_SOURCE))
        notes.append(
            default_note("damage_current_factor", f, 1.0, "-", "default 1 (curve as given)")
        )
        start, why = check_start(damage, check_from_current, overload_by_secondary_device)
        notes.append(Assumption("damage_check_from_a", start, "A", why))
        scale = _factor(f)
        low, top = _range(damage.current * scale, damage.fault_current * scale, start)
        below = (
            "a secondary-side device carries the overload range"
            if overload_by_secondary_device and check_from_current is None
            else "below the check's given start"
        )
        scaled = replace(damage, current=damage.current * scale)
        portions = curve_portions(scaled, low, top, below)
    if i_r is None:
        warnings.append(("inrush_points_skipped", "no rated current: inrush points not checked"))
    else:
        pts = tuple(v for p in inrush_points for v in p)
        notes.append(Assumption("inrush_points", pts, "x rated, s", "common practice"))
    out = []
    for d in devices:
        notes.extend(d.assumption_notes())
        rt = ride_through(d, inrush)
        if not d.has_curve:  # a differential: its ride-through is its verdict
            rides = not rt.trips
            out.append(DeviceEvaluation(d.name, d.kind, rt, None, (), rides, None))
            continue
        warnings += [(c, f"{d.name}: {m}") for c, m in rt.warnings]
        prot = None
        if damage is not None and d.clearing_curve is None:
            warnings.append(("protection_not_checked", f"{d.name}: no total-clearing curve"))
        elif damage is not None:
            prot = protection_check(
                d, damage, opening_time_s=o, damage_current_factor=f, check_from_current=start
            )
        pts_out = () if i_r is None else _point_checks(d, i_r, inrush_points)
        ok = not rt.trips and prot is not None and prot.protects
        margin = None if prot is None else min(rt.margin_ratio, prot.margin_ratio)
        out.append(DeviceEvaluation(d.name, d.kind, rt, prot, pts_out, ok, margin))
    ranked = sorted(
        (e for e in out if e.suitable and e.kind != "differential"),
        key=lambda e: (-(e.margin_ratio or 0), e.device),
    )
    return Evaluation(
        tuple(out), tuple(e.device for e in ranked), tuple(notes), tuple(warnings), portions
    )


def check_start(
    damage: DamageCurve, given: float | None = None, secondary: bool = True
) -> tuple[float, str]:
    """Where the protection check starts, and why.

    Parameters
    ----------
    damage : core.protection.damage_curves.DamageCurve
        The damage curve (its rated current and lowest current) [-].
    given : float or None
        The caller's start; None for the default [A].
    secondary : bool
        A secondary-side device carries the overload range [-].

    Returns
    -------
    (float, str)
        The start [A] and its provenance: given; :data:`DEFAULT_CHECK_FROM_X_RATED` × rated
        current with a secondary-side device; else the curve's lowest current.

    Raises
    ------
    ParameterError
        If ``given`` is not a finite number > 0 or ``secondary`` not a bool.

    References
    ----------
    Common practice; NEC 450.3 (from memory) for primary fuse ratings.
    """
    if given is not None:
        return checks.positive("check_from_current", given), "given"
    if not isinstance(secondary, bool):
        raise ParameterError("overload_by_secondary_device", secondary, "True or False")
    if secondary:
        return DEFAULT_CHECK_FROM_X_RATED * damage.rated_current, CHECK_FROM_SOURCE
    first = float(damage.current[0])
    return first, "the damage curve's lowest current (no secondary-side device for overloads)"


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
    check_from_current: float | None = None,
) -> CoordinationWindow:
    """The time dials, at the relay's pickup, that both ride through the inrush and protect.

    Parameters
    ----------
    relay : Relay
        Relay; its ``time_dial`` is varied [-].
    inrush : InrushCurves
        The inrush [-].
    damage : core.protection.damage_curves.DamageCurve
        Damage curve in the relay's amperes [-].
    opening_time_s, damage_current_factor : float or None
        As :func:`protection_check` [s], [-].
    setting_range : (float, float) or None
        TD or TMS range; None: :data:`TIME_DIAL_RANGE` for the relay's standard [-].
    rtol : float
        Relative bracket width at which bisection stops, 1e-9 to 0.1 [-].
    check_from_current : float or None
        Lowest current of the protection check, as :func:`protection_check` [A].

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
    lo, hi = checks.positive("setting_range.low", lo), checks.positive("setting_range.high", hi)
    if hi <= lo:
        raise ParameterError("setting_range", (lo, hi), "low < high")
    tol = checks.number("rtol", rtol, "in [1e-9, 0.1]", lambda x: 1e-9 <= x <= 0.1)
    start = check_from_current

    def rides(td: float) -> bool:
        return not relay_ride_through(replace(relay, time_dial=td), inrush).trips

    def protects(td: float) -> bool:
        trial = replace(relay, time_dial=td)
        o, f = opening_time_s, damage_current_factor
        return protection_check(
            trial, damage, opening_time_s=o, damage_current_factor=f, check_from_current=start
        ).protects

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
