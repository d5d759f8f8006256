"""Transformer through-fault damage limits: the "damage curve" protection must clear under.

Models the through-fault current-duration limits of IEEE Std C57.109 (liquid-immersed) and IEEE
Std C57.12.59 (dry-type): the short-circuit category from the rating, the thermal limit and, for
Categories II-IV where faults are frequent, the mechanical portion I²t = K fixed by the
through-fault current.

Thermal limit (liquid-immersed): the standard's table of durations against multiples of rated
current (2 s at 25 ×, 10 s at 11.3 ×, 30 s at 6.3 ×, 60 s at 4.75 ×, 300 s at 3 ×, 1800 s at
2 ×), read log-log between its points, and t = 1250/I² above 25 × (low-impedance Category I
units). The table goes back to the loading guide ANSI C57.92-1962 and was republished in
C57.109-1993 (a secondary source says so; the values themselves are from memory). Below 5 × it
lies well above 1250/I² (1800 s rather than 312 s at 2 ×).

Through-fault current of the mechanical portion: Categories I and II from the transformer
impedance alone, I_sc = 1/Z_T; Categories III and IV from the transformer and source,
I_sc = 1/(Z_T + Z_S) (C57.109-1993 clause 4 and Figures 1-4, from memory). The source still
limits the current that can actually flow, 1/(Z_T + Z_S): :class:`DamageCurve` carries both.

Limits, and what is recalled rather than read: the standards were not at hand. The category
limits, the table, the 1250 pu²·s constant, the 2 pu lower end, K = I_sc²·2 s and the 70 %/50 %
starting points are from memory (each constant below says so), and should be checked against
the standard before a result is relied on. Of the dry-type guide, only its clause text was read
in a secondary copy (25 pu and 2 s ceiling; Category I limited by transformer impedance alone;
Categories II and III from transformer plus system impedance; durations over 100 s for
Categories II and III deferred to the loading guide); its figures were not seen, so dry-type
units keep t = 1250/I² over their range (at or below the liquid table: conservative). Overload
(below 2 pu) is the loading guides' subject, not modelled.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Literal

import numpy as np
import numpy.typing as npt

from core import checks
from core.errors import ParameterError

FloatArray = npt.NDArray[np.float64]
Insulation = Literal["liquid", "dry"]
Category = Literal["I", "II", "III", "IV"]

#: Minimum nameplate kVA of Category I and the upper kVA of Categories I, II and III, by number of
#: phases (Category IV above the last). IEEE Std C57.12.00, short-circuit categories table (from
#: memory; table number not at hand), repeated in IEEE Std C57.109-1993 clause 4 (from memory).
#: Dry-type units are taken to use the same limits (from memory, IEEE Std C57.12.01).
CATEGORY_LIMITS_KVA: Mapping[int, tuple[float, float, float, float]] = MappingProxyType(
    {1: (5.0, 500.0, 1667.0, 10_000.0), 3: (15.0, 500.0, 5000.0, 30_000.0)}
)

#: Thermal limit I²t = 1250 pu²·s (t = 1250/I²), 2 s at 25 pu; the high-current end of the thermal
#: curve (above :data:`THERMAL_TABLE`'s 25 ×). IEEE Std C57.109-1993 clause 4 and C57.12.00
#: (Category I short-circuit duration) (from memory).
THERMAL_I2T_PU = 1250.0

#: Thermal (long-duration) limit of liquid-immersed units: (multiple of rated current [pu],
#: duration [s]), read log-log between points. IEEE Std C57.109-1993, table of through-fault
#: current duration beside Figure 1 (values from memory; the table's origin in ANSI C57.92-1962 and
#: its republication in C57.109-1993 read in a secondary source, Patterson & Price, "Transformer
#: Overcurrent Protection Coordination", Table 2).
THERMAL_TABLE: tuple[tuple[float, float], ...] = (
    (2.0, 1800.0),
    (3.0, 300.0),
    (4.75, 60.0),
    (6.3, 30.0),
    (11.3, 10.0),
    (25.0, 2.0),
)

#: Lowest current of the curves [pu of rated current]; below it is overload (loading guides).
#: IEEE Std C57.109-1993 figures (from memory).
MINIMUM_CURRENT_PU = 2.0

#: Duration at the maximum through-fault current that fixes K = I_sc²·t [s]. IEEE Std C57.109-1993
#: clause 4 (from memory, with K = 2·I_sc²).
MECHANICAL_DURATION_S = 2.0

#: Fraction of I_sc from which the mechanical I²t = K portion applies, by (category, frequent
#: faults); None where the curve is the thermal one alone. IEEE Std C57.109-1993 clause 4 and
#: Figures 2-4 (from memory: Category IV's single curve is taken for both cases).
MECHANICAL_FROM_FRACTION: Mapping[tuple[str, bool], float | None] = MappingProxyType(
    {
        ("I", False): None,
        ("I", True): None,
        ("II", False): None,
        ("II", True): 0.7,
        ("III", False): None,
        ("III", True): 0.5,
        ("IV", False): 0.5,
        ("IV", True): 0.5,
    }
)

#: Dry-type ceiling: curves based on at most 25 × base current for 2 s. IEEE Std C57.12.59-2015,
#: clause 4 (clause text read in a secondary copy; figures not seen).
DRY_MAXIMUM_CURRENT_PU = 25.0

#: Dry-type Categories II and III: durations beyond 100 s are left to IEEE Std C57.96 (loading),
#: so the curve starts at √(1250/100) ≈ 3.54 pu. IEEE Std C57.12.59-2015, clause 4, note (as above).
DRY_MAXIMUM_DURATION_S = 100.0


def through_fault_category(
    rating_kva: float, phases: int, insulation: Insulation = "liquid"
) -> Category:
    """Short-circuit category of a transformer from its rating.

    Parameters
    ----------
    rating_kva : float
        Minimum nameplate (self-cooled) rating [kVA].
    phases : int
        1 or 3 [-].
    insulation : str
        "liquid" (IEEE C57.109) or "dry" (IEEE C57.12.59, Categories I-III only) [-].

    Returns
    -------
    str
        "I", "II", "III" or "IV".

    Raises
    ------
    ParameterError
        If ``rating_kva`` is below Category I, not finite, or (dry-type) above Category III;
        if ``phases`` is not 1 or 3 or ``insulation`` unknown.

    Notes
    -----
    Single-phase: I 5-500, II 501-1667, III 1668-10 000, IV above 10 000 kVA. Three-phase: I 15-500,
    II 501-5000, III 5001-30 000, IV above 30 000 kVA. A rating above a limit (500.5 kVA, say)
    falls in the next category.

    References
    ----------
    IEEE Std C57.12.00, short-circuit categories (from memory); IEEE Std C57.109-1993 clause 4;
    IEEE Std C57.12.59-2015 (dry-type, Categories I-III).
    """
    if phases not in CATEGORY_LIMITS_KVA:
        raise ParameterError("phases", phases, "1 or 3")
    if insulation not in ("liquid", "dry"):
        raise ParameterError("insulation", insulation, "'liquid' or 'dry'")
    s = checks.positive("rating_kva", rating_kva)
    lowest, top_i, top_ii, top_iii = CATEGORY_LIMITS_KVA[phases]
    if s < lowest:
        raise ParameterError("rating_kva", rating_kva, f">= {lowest:g} kVA for {phases} phase(s)")
    if s <= top_i:
        return "I"
    if s <= top_ii:
        return "II"
    if s <= top_iii:
        return "III"
    if insulation == "dry":
        raise ParameterError("rating_kva", rating_kva, f"<= {top_iii:g} kVA for a dry-type unit")
    return "IV"


def thermal_time_pu(x: npt.ArrayLike, insulation: Insulation = "liquid") -> FloatArray:
    """Thermal through-fault duration at a multiple of rated current.

    Parameters
    ----------
    x : array_like
        Current, > 0 [pu of rated current].
    insulation : str
        "liquid" (the C57.109 table) or "dry" (t = 1250/x² throughout) [-].

    Returns
    -------
    numpy.ndarray
        Duration, same shape as ``x`` [s]; below the table's 2 pu the first segment is extended
        (callers restrict the range).

    Notes
    -----
    Liquid: log t = log t_j + (log x − log x_j)·(log t_{j+1} − log t_j)/(log x_{j+1} − log x_j)
    between the points of :data:`THERMAL_TABLE`, t = 1250/x² above 25 pu (the table's last point
    lies on that line). Dry: t = 1250/x².

    References
    ----------
    IEEE Std C57.109-1993 clause 4 and its through-fault duration table (from memory); IEEE Std
    C57.12.59-2015 clause 4 (dry-type, 25 pu for 2 s; read in a secondary copy).
    """
    xa = np.asarray(x, dtype=np.float64)
    with np.errstate(divide="ignore", over="ignore"):
        hyperbola = THERMAL_I2T_PU / (xa * xa)
    if insulation == "dry":
        return np.asarray(hyperbola, dtype=np.float64)
    tx = np.log([p[0] for p in THERMAL_TABLE])
    tt = np.log([p[1] for p in THERMAL_TABLE])
    with np.errstate(divide="ignore"):
        lx = np.log(xa)
    slope = (tt[1] - tt[0]) / (tx[1] - tx[0])
    table = np.exp(np.where(lx < tx[0], tt[0] + slope * (lx - tx[0]), np.interp(lx, tx, tt)))
    return np.asarray(np.where(xa > THERMAL_TABLE[-1][0], hyperbola, table), dtype=np.float64)


def short_circuit_current_pu(z_transformer_pu: float, z_source_pu: float = 0.0) -> float:
    """Maximum symmetrical through-fault current in per unit of rated current.

    Parameters
    ----------
    z_transformer_pu : float
        Transformer impedance, 0 < Z_T < 1 (5.75 % is 0.0575) [pu of transformer base].
    z_source_pu : float
        Source impedance on the transformer base, 0 for an infinite bus [pu of transformer base].

    Returns
    -------
    float
        I_sc [pu of rated current].

    Raises
    ------
    ParameterError
        If Z_T is outside (0, 1) or Z_S is negative or not finite.

    Notes
    -----
    I_sc = 1/(Z_T + Z_S), impedances added as magnitudes (a conservative, common-practice
    simplification of the complex sum).

    References
    ----------
    IEEE Std C57.109-1993 clause 4 (from memory).
    """
    z_t = checks.positive("z_transformer_pu", z_transformer_pu, upper=1.0)
    try:
        z_s = float(z_source_pu)
    except (TypeError, ValueError):
        z_s = float("nan")
    if not (np.isfinite(z_s) and z_s >= 0.0):
        raise ParameterError("z_source_pu", z_source_pu, "a finite number >= 0")
    return 1.0 / (z_t + z_s)


@dataclass(frozen=True)
class _Limits:
    category: Category
    insulation: Insulation
    i_sc: float  # of the category rule [pu]
    i_fault: float  # 1/(Z_T + Z_S), what can flow [pu]
    x_min: float  # [pu]
    x_max: float  # [pu]
    mech_from: float | None  # [pu]
    k: float  # mechanical I²t [pu²·s]


def _limits(
    rating_kva: float,
    phases: int,
    z_transformer_pu: float,
    z_source_pu: float,
    frequent: bool,
    insulation: Insulation,
) -> _Limits:
    cat = through_fault_category(rating_kva, phases, insulation)
    if not isinstance(frequent, bool | np.bool_):
        raise ParameterError("frequent", frequent, "True or False")
    # Liquid: Categories I and II from the transformer impedance alone, III and IV from
    # transformer plus source (C57.109-1993 clause 4 and figure notes, from memory). Dry-type:
    # Category I alone, II and III with the system impedance (C57.12.59-2015 clause 4, read).
    alone = ("I",) if insulation == "dry" else ("I", "II")
    i_fault = short_circuit_current_pu(z_transformer_pu, z_source_pu)
    i_sc = short_circuit_current_pu(z_transformer_pu, 0.0 if cat in alone else z_source_pu)
    x_min, x_max = MINIMUM_CURRENT_PU, i_sc
    if insulation == "dry":
        x_max = min(i_sc, DRY_MAXIMUM_CURRENT_PU)
        if cat != "I":
            x_min = float(np.sqrt(THERMAL_I2T_PU / DRY_MAXIMUM_DURATION_S))
    if min(x_max, i_fault) <= x_min:
        raise ParameterError(
            "z_transformer_pu + z_source_pu",
            1.0 / i_fault,
            f"< {1.0 / x_min:.4g} pu, so that the through-fault current exceeds the curve's "
            f"lowest {x_min:.3g} pu",
        )
    f = MECHANICAL_FROM_FRACTION[(cat, bool(frequent))]
    mech_from = None if f is None else f * i_sc
    k = MECHANICAL_DURATION_S * i_sc**2
    return _Limits(cat, insulation, i_sc, min(i_fault, x_max), x_min, x_max, mech_from, k)


def _time_pu(x: FloatArray, lim: _Limits) -> FloatArray:
    t = thermal_time_pu(x, lim.insulation)
    with np.errstate(divide="ignore", over="ignore"):
        if lim.mech_from is not None:
            t = np.where(x >= lim.mech_from, np.minimum(t, lim.k / (x * x)), t)
    # ends widened by 1e-12 so an end current given in amperes (x·I_r) is not lost to rounding
    inside = (x >= lim.x_min * (1.0 - 1e-12)) & (x <= lim.x_max * (1.0 + 1e-12))
    return np.where(inside, t, np.nan)


def through_fault_damage_time(
    current: npt.ArrayLike,
    rating_kva: float,
    phases: int,
    rated_current: float,
    z_transformer_pu: float,
    z_source_pu: float = 0.0,
    frequent: bool = False,
    insulation: Insulation = "liquid",
) -> FloatArray:
    """Through-fault duration a transformer withstands at each current (its damage curve).

    Parameters
    ----------
    current : array_like
        Symmetrical rms through-fault current in the winding [A].
    rating_kva : float
        Minimum nameplate rating [kVA].
    phases : int
        1 or 3 [-].
    rated_current : float
        Rated current of the winding ``current`` flows in [A].
    z_transformer_pu : float
        Transformer impedance, 0 < Z_T < 1 [pu of transformer base].
    z_source_pu : float
        Source impedance; not used for Category I [pu of transformer base].
    frequent : bool
        True for the frequent-fault curve (Categories II and III; more than about 10 (II) or 5
        (III) faults in the unit's life, from memory); Categories I and IV have one curve [-].
    insulation : str
        "liquid" (C57.109) or "dry" (C57.12.59) [-].

    Returns
    -------
    numpy.ndarray
        Permitted duration, same shape as ``current`` [s]; NaN outside the curve (below its lowest
        current, where loading guides apply, or above the category's through-fault current
        I_sc).

    Raises
    ------
    ParameterError
        If ``current`` is negative or not finite, or a rating parameter is out of range (see
        :func:`through_fault_category`, :func:`short_circuit_current_pu`), or I_sc does not exceed
        the curve's lowest current.

    Notes
    -----
    With x = I/I_r and I_sc = 1/Z_T (Categories I and II; dry-type Category I only) or
    1/(Z_T + Z_S) (the others): thermal t_th(x) from :func:`thermal_time_pu` for
    2 <= x <= I_sc. Where the mechanical portion applies (II frequent from 0.7·I_sc; III frequent
    and IV from 0.5·I_sc), t = min(t_th, K/x²) with K = 2·I_sc², so the curve drops vertically at
    the starting current. Dry-type: x <= 25 and, for II and III, t <= 100 s. All constants are
    from memory; see the module docstring.

    References
    ----------
    IEEE Std C57.109-1993 (R2008; revised as C57.109-2018), clause 4 and Figures 1-4 (from
    memory); IEEE Std C57.12.59-2015 clause 4; IEEE Std C37.91-2008 Annex A (frequent faults).
    """
    lim = _limits(rating_kva, phases, z_transformer_pu, z_source_pu, frequent, insulation)
    i_r = checks.positive("rated_current", rated_current)
    try:
        i = np.array(current, dtype=np.float64)
    except (TypeError, ValueError):
        raise ParameterError("current", current, "finite numbers >= 0") from None
    if not np.all(np.isfinite(i)) or np.any(i < 0.0):
        raise ParameterError("current", current, "finite numbers >= 0")
    with np.errstate(over="ignore"):
        x = i / i_r
    return _time_pu(x, lim)


@dataclass(frozen=True)
class DamageCurve:
    """A through-fault damage curve as arrays for plotting, with the values that shape it."""

    current: FloatArray  #: current, increasing (repeated at a vertical step) [A]
    time: FloatArray  #: permitted duration [s]
    category: Category  #: short-circuit category
    insulation: Insulation  #: "liquid" or "dry"
    frequent: bool  #: frequent-fault curve requested
    rated_current: float  #: I_r [A]
    short_circuit_current: float  #: I_sc of the category rule, where the curve ends [A]
    thermal_i2t: float  #: 1250·I_r², the thermal curve above its table [A²s]
    mechanical_from_current: float | None  #: where the I²t = K portion starts [A]
    mechanical_i2t: float | None  #: K·I_r² [A²s]
    fault_current: float = math.nan  #: 1/(Z_T + Z_S)·I_r, the most that can flow (<= end) [A]


def through_fault_damage_curve(
    rating_kva: float,
    phases: int,
    rated_current: float,
    z_transformer_pu: float,
    z_source_pu: float = 0.0,
    frequent: bool = False,
    insulation: Insulation = "liquid",
    points: int = 64,
) -> DamageCurve:
    """The through-fault damage curve from its lowest current up to I_sc, for plotting.

    Parameters
    ----------
    rating_kva, phases, rated_current, z_transformer_pu, z_source_pu, frequent, insulation
        As :func:`through_fault_damage_time` ([kVA], -, [A], [pu], [pu], -, -). [-] [-] [-]
    points : int
        Number of log-spaced currents, 2-10 000; the vertical step adds two [-].

    Returns
    -------
    DamageCurve
        Arrays of current [A] and time [s] and the quantities that define them.

    Raises
    ------
    ParameterError
        As :func:`through_fault_damage_time`, or if ``points`` is out of range.

    Notes
    -----
    Currents are geometrically spaced from the lowest current to I_sc (dry-type: to 25 pu at
    most), with the thermal table's points and the fault current 1/(Z_T + Z_S) added, so that
    log-log interpolation between the returned points is exact; at the mechanical starting
    current the curve holds two points, the thermal time then the mechanical one (the vertical
    drop of the published figures).

    References
    ----------
    IEEE Std C57.109-1993, Figures 1-4 (from memory); IEEE Std C57.12.59-2015, Figures 1-3.
    """
    if (
        isinstance(points, bool)
        or not isinstance(points, int | np.integer)
        or not (2 <= points <= 10_000)
    ):
        raise ParameterError("points", points, "an integer from 2 to 10000")
    lim = _limits(rating_kva, phases, z_transformer_pu, z_source_pu, frequent, insulation)
    i_r = checks.positive("rated_current", rated_current)
    x = np.geomspace(lim.x_min, lim.x_max, int(points))
    if insulation == "liquid":
        x = np.union1d(x, [p[0] for p in THERMAL_TABLE if lim.x_min < p[0] < lim.x_max])
    x = np.union1d(x, [lim.i_fault] if lim.x_min < lim.i_fault < lim.x_max else [])
    t = _time_pu(x, lim)
    xm = lim.mech_from
    if xm is not None and lim.x_min < xm <= lim.x_max:
        t_thermal = float(thermal_time_pu(xm, insulation))
        if lim.k / xm**2 < t_thermal:
            # vertical step at xm: thermal time, then the (lower) mechanical time
            x = np.concatenate((x[x < xm], [xm, xm], x[x > xm]))
            t = _time_pu(x, lim)
            t[int(np.searchsorted(x, xm))] = t_thermal
    k = None if lim.mech_from is None else lim.k * i_r**2
    return DamageCurve(
        current=x * i_r,
        time=t,
        category=lim.category,
        insulation=insulation,
        frequent=bool(frequent),
        rated_current=i_r,
        short_circuit_current=lim.i_sc * i_r,
        thermal_i2t=THERMAL_I2T_PU * i_r**2,
        mechanical_from_current=None if lim.mech_from is None else lim.mech_from * i_r,
        mechanical_i2t=k,
        fault_current=lim.i_fault * i_r,
    )
