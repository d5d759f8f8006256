"""The generator that keeps the dip within a limit: sweep over rating, smallest passing rating.

Energising a transformer from a generator dips its terminal voltage less the larger the machine.
This module keeps a machine's per-unit data (reactances, time constants, regulator) and its
voltage and frequency, changes only its rating, and simulates the energisation with the coupled
model of :mod:`core.supply.dip` at each rating: :func:`dip_sweep` gives the dip at a list of ratings
in one vectorised run, :func:`smallest_generator` the smallest rating whose dip is within a limit
(an ISO 8528-5 class or the caller's own), with the recovery time judged at that rating. On the demo
case (the 1250 kVA Northgate set energising the 2500 kVA unit, tests/core/supply/test_sources.py) it
finds 13,747 kVA for class G2 (20 %), dip 20.0 %, recovery 0.48 s (``dip_duration_s`` 0.5 s).

Limits:

* Every approximation of :func:`core.supply.dip.energize_from_source` holds at each rating (see
  :data:`core.supply.dip.APPROXIMATIONS`).
* The per-unit data stay constant as the rating changes; a real range of machines does not keep
  them constant, so the answer is the size of a machine like the given one, not of any
  catalogue machine: check the chosen machine's own data with
  :func:`core.supply.dip.energize_from_source`. The "unknown" regulator's defaults are per unit too
  and scale with it.
* The search assumes the dip falls as the rating rises across the bounds (the tests check it on
  the demo case); were it not monotonic, Brent's method would return a crossing of the limit,
  not necessarily the smallest.
* The rating is sized for the dip alone, found to the relative tolerance ``rtol`` and reported
  on the passing side of the crossing. The recovery time is then simulated at that rating only
  (the limit's recovery time plus 1 s, a ±3 % band about the pre-event voltage, the default of
  :func:`core.supply.dip.energize_from_source`) and judged, not searched: a rating whose dip passes
  and whose recovery fails is reported as such.
* Each dip is read from ``dip_duration_s`` of simulated time (2 s by default); a lowest voltage
  later than that is missed. :func:`smallest_generator` sizes at rated pre-event voltage and the
  minimum number of steps per cycle.
* A pre-insertion resistor and the pole closing instants are the same (in ohms and seconds) at
  every rating; the largest resistor the fixed step can take depends on the rating and is
  checked at every rating simulated.

References
----------
R. P. Brent, "Algorithms for Minimization without Derivatives", Prentice-Hall, 1973, ch. 4
(the root finder, as scipy.optimize.brentq) -- from memory.
ISO 8528-5 (generating-set performance classes G1-G4) -- limits from memory, see
:data:`core.supply.dip_limits.ISO_8528_5_CLASSES`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np
import scipy.optimize
from numpy.typing import ArrayLike, NDArray

from core import checks
from core.energization.switching_event import SwitchingEvent
from core.errors import ParameterError
from core.supply import dip, dip_cases
from core.supply.dip_limits import DipLimit, iso_8528_5_class
from core.supply.sources import (
    BusLoad,
    ExcitationSpec,
    Generator,
)
from core.transformer.circuit_model import EquivalentCircuit

FloatArray = NDArray[np.float64]

__all__ = ["Sizing", "dip_sweep", "smallest_generator"]


def dip_sweep(
    generator: Generator,
    circuit: EquivalentCircuit,
    ratings_va: ArrayLike,
    event: SwitchingEvent,
    *,
    excitation: ExcitationSpec = "unknown",
    bus_load: BusLoad | None = None,
    pre_event_voltage_pu: float = 1.0,
    duration_s: float = 2.0,
    steps_per_cycle: int = dip_cases.MIN_STEPS_PER_CYCLE,
    voltage_measure: dip.Measure = "worst",
) -> FloatArray:
    """Dip for the same per-unit generator data at several ratings, in one vectorised run.

    Parameters
    ----------
    generator : Generator
        Per-unit data, voltage and frequency kept; the rating is replaced [-].
    circuit : EquivalentCircuit
        As for :func:`core.supply.dip.energize_from_source` [-].
    ratings_va : array_like, shape (n,)
        Generator ratings [VA].
    event : SwitchingEvent
        The energisation, the same at every rating (its resistor in ohms, its pole instants in
        seconds), as for :func:`core.supply.dip.energize_from_source` [-].
    excitation, bus_load, pre_event_voltage_pu
        As for :func:`core.supply.dip.energize_from_source`. [-] [-]
    duration_s : float
        Simulated time; the lowest voltage normally falls within the first second [s].
    steps_per_cycle, voltage_measure
        As for :func:`core.supply.dip.energize_from_source` [-], [-].

    Returns
    -------
    ndarray, shape (n,)
        Dip [% of the pre-event voltage].

    Raises
    ------
    ParameterError
        As for :func:`core.supply.dip.energize_from_source`.
    """
    ratings = np.atleast_1d(np.asarray(ratings_va, dtype=float))
    gens = [replace(generator, rating_va=float(s)) for s in ratings]
    v0 = float(pre_event_voltage_pu)
    dip.check_measure(voltage_measure)
    _, raw, _ = dip.run_on_sources(
        gens,
        circuit,
        event,
        excitation=excitation,
        bus_load=bus_load,
        pre_event_voltage_pu=v0,
        duration_s=duration_s,
        steps_per_cycle=steps_per_cycle,
        waveform_points=0,
    )
    ph = raw.v_rms_pu.min(axis=(1, 2))
    ln = raw.v_line_rms_pu.min(axis=(1, 2))
    low = {"worst": np.minimum(ph, ln), "line": ln, "phase": ph}[voltage_measure]
    out: FloatArray = 100.0 * (v0 - low) / v0
    return out


@dataclass(frozen=True)
class Sizing:
    """Result of :func:`smallest_generator`.

    Attributes
    ----------
    limit : DipLimit
        The limit sized for.
    status : str
        ``"found"``, ``"smallest_bound_passes"`` or ``"largest_bound_fails"``.
    rating_va : float or None
        Smallest passing rating; the lower bound when it already passes; None when even the
        upper bound fails [VA].
    dip_percent : float
        Dip at ``rating_va`` (at the upper bound when it fails) [%].
    recovery_time_s : float
        Recovery time at ``rating_va`` (nan when not computed or not recovered) [s].
    recovery_ok : bool or None
        Whether that recovery meets the limit's recovery time; None when not judged (not
        simulated, or the regulator poorly damped at that rating).
    bounds_va : tuple of float
        Search bounds [VA].
    evaluations : int
        Simulations run [-].
    statement : str
        The answer in one plain sentence.
    """

    limit: DipLimit
    status: str
    rating_va: float | None
    dip_percent: float
    recovery_time_s: float
    recovery_ok: bool | None
    bounds_va: tuple[float, float]
    evaluations: int
    statement: str


def smallest_generator(
    generator: Generator,
    circuit: EquivalentCircuit,
    event: SwitchingEvent,
    limit: DipLimit | str = "G2",
    *,
    excitation: ExcitationSpec = "unknown",
    bus_load: BusLoad | None = None,
    bounds_va: tuple[float, float] | None = None,
    dip_duration_s: float = 2.0,
    rtol: float = 1e-3,
    check_recovery: bool = True,
    voltage_measure: dip.Measure = "worst",
) -> Sizing:
    """Smallest rating, same per-unit data, that keeps the dip within a limit.

    Parameters
    ----------
    generator : Generator
        Machine data; its rating is only the starting point [-].
    circuit : EquivalentCircuit
        Transformer circuit, as for :func:`core.supply.dip.energize_from_source` [-].
    event : SwitchingEvent
        The energisation, the same at every rating (its resistor in ohms, its pole instants in
        seconds, each in [0, dip_duration_s)), as for
        :func:`core.supply.dip.energize_from_source` [-].
    limit : DipLimit or str
        A limit, or an ISO 8528-5 class name ``"G1"``-``"G3"`` (values from memory) [-].
    excitation, bus_load
        As for :func:`core.supply.dip.energize_from_source`. [-] [-]
    bounds_va : tuple of float or None
        Search range; default 0.1-20 x the given rating [VA].
    dip_duration_s : float
        Simulated time for each dip evaluation [s].
    rtol : float
        Relative tolerance on the rating [-].
    check_recovery : bool
        Also simulate the found rating for the limit's recovery time plus 1 s and judge it [-].
    voltage_measure : str
        As for :func:`core.supply.dip.energize_from_source` [-].

    Returns
    -------
    Sizing

    Raises
    ------
    ParameterError
        On a limit without a dip value (G4: by agreement), invalid bounds, or a resistor the
        fixed step cannot take at the largest rating searched.

    Notes
    -----
    The dip falls as the rating rises (checked by the tests); the root of
    dip(S) - limit in u = ln S is bracketed by the bounds and found by Brent's method
    (scipy.optimize.brentq; R. P. Brent, "Algorithms for Minimization without Derivatives",
    1973).
    """
    lim = limit if isinstance(limit, DipLimit) else iso_8528_5_class(limit)
    if lim.max_dip_percent is None:
        raise ParameterError("limit", lim.name, "a limit with a dip value (G4 is by agreement)")
    lo, hi = (
        bounds_va
        if bounds_va is not None
        else (0.1 * generator.rating_va, 20.0 * generator.rating_va)
    )
    checks.in_range("bounds_va", lo, 0.0, 1e10)
    checks.in_range("bounds_va", hi, lo, 1e10)
    checks.in_range("rtol", rtol, 0.0, 0.1)
    dip_cases.check_insertion(event.insertion_resistance_ohm, event.insertion_time_s)
    dip_cases.check_poles(event.pole_delay_s, dip_duration_s)
    target = lim.max_dip_percent

    def dips(ratings: list[float]) -> FloatArray:
        return dip_sweep(
            generator,
            circuit,
            ratings,
            event,
            excitation=excitation,
            bus_load=bus_load,
            duration_s=dip_duration_s,
            voltage_measure=voltage_measure,
        )

    ends = dips([lo, hi])
    count = 2
    tag = f"{lim.name} ({target:g} %)"
    if ends[0] <= target:
        rating: float | None = lo
        dip_pct, status = float(ends[0]), "smallest_bound_passes"
        text = (
            f"Even the smallest rating searched, {lo / 1e3:,.0f} kVA, keeps the dip within "
            f"{tag} at {dip_pct:.1f} %: the answer is at or below it; lower the bound."
        )
    elif ends[1] > target:
        rating, dip_pct, status = None, float(ends[1]), "largest_bound_fails"
        text = (
            f"Even the largest rating searched, {hi / 1e3:,.0f} kVA, dips {dip_pct:.1f} %, "
            f"beyond {tag}: no rating in the range passes."
        )
    else:

        def g(u: float) -> float:
            nonlocal count
            count += 1
            return float(dips([math.exp(u)])[0]) - target

        xtol = math.log1p(rtol)
        u = scipy.optimize.brentq(g, math.log(lo), math.log(hi), xtol=xtol)
        found = hi
        for _ in range(4):  # report a rating on the passing side of the root
            found = min(math.exp(u + xtol), hi)
            dip_pct = float(dips([found])[0])
            count += 1
            if dip_pct <= target:
                break
            u += xtol
        rating, status = found, "found"
        text = (
            f"The smallest rating with the same per-unit data that keeps the dip within "
            f"{tag} is {found / 1e3:,.0f} kVA (dip {dip_pct:.1f} %)."
        )
    rec, rec_ok = math.nan, None
    if check_recovery and rating is not None and lim.max_recovery_s is not None:
        study = dip.energize_from_source(
            replace(generator, rating_va=rating),
            circuit,
            event,
            excitation=excitation,
            bus_load=bus_load,
            duration_s=lim.max_recovery_s + 1.0,
            voltage_measure=voltage_measure,
            exact_peaks=False,
        )
        count += 1
        rec = study.recovery_time_s
        if not study.recovery_reliable:
            text += (
                " Its recovery is not judged: the regulator is poorly damped at that rating "
                "(warning regulator_poorly_damped)."
            )
        else:
            rec_ok = bool(math.isfinite(rec) and rec <= lim.max_recovery_s)
            text += (
                f" Its recovery time is {rec:.2f} s, "
                if math.isfinite(rec)
                else " It does not recover within the band in the time simulated, "
            )
            text += ("within" if rec_ok else "beyond") + f" the {lim.max_recovery_s:g} s limit."
    return Sizing(lim, status, rating, dip_pct, rec, rec_ok, (lo, hi), count, text)
