"""How often a random energisation trips a device or dips the supply beyond a limit.

The Monte Carlo of :func:`core.statistics.monte_carlo.peak_distribution` draws switching events
(closing instant, pole scatter, residual flux); the first-peak statistics need only the first cycles
of each. Whether a fuse melts, a relay trips or a generator's voltage dips beyond a limit needs the
whole event: a record of seconds judged against each device's curves
(:func:`core.protection.coordination.evaluate`), or the machine simulated with the transformer
(:func:`core.supply.dip.energize_from_source`). These are orders of magnitude dearer per event, so
they are judged on the first n events of the same sample -- themselves an independent random sample
of the same distribution -- and each probability comes with its binomial confidence interval
(:func:`core.statistics.monte_carlo.exceedance_probability`, Clopper-Pearson), which states how much
n buys.

Limits: those of the solver, of the device evaluation and of the dip model apply to each event
(reported); the interval is the sampling uncertainty only, not the model's.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from core import checks
from core.energization import energize
from core.energization.inrush_study import line_names
from core.protection import coordination, device_operation
from core.statistics import monte_carlo
from core.supply import dip
from core.supply.sources import BusLoad, ExcitationSpec, Generator
from core.transformer.circuit_model import EquivalentCircuit

FloatArray = NDArray[np.float64]

__all__ = ["DeviceOdds", "DipOdds", "device_odds", "device_operation_odds", "dip_exceedance_odds"]

_MAX_EVENTS = 100_000
_POLES_STATED = "poles close at a "
_POLES_GENERAL = (
    "each event's pole closing instants rounded to the internal step; a winding carries no "
    "current and keeps its residual flux until its pole (delta: the later of its two) closes"
)


@dataclass(frozen=True)
class DeviceOdds:
    """How often one device operates on the inrush.

    Attributes
    ----------
    device : str
        Its name.
    operates : Exceedance
        Share of the events on which it operates, with its confidence interval.
    smallest_margin : float
        The tightest ride-through margin over the events judged (<= 1: it operated) [-].
    """

    device: str
    operates: monte_carlo.Exceedance
    smallest_margin: float


@dataclass(frozen=True)
class DipOdds:
    """How often the dip exceeds a limit.

    Attributes
    ----------
    limit_percent : float
        The limit [% of the pre-event voltage].
    exceeds : Exceedance
        Share of the events whose dip is above the limit, with its confidence interval.
    dips_percent : ndarray, shape (n,)
        The dip of each event judged [%].
    approximations : tuple of str
        What the dip model approximates.
    """

    limit_percent: float
    exceeds: monte_carlo.Exceedance
    dips_percent: FloatArray
    approximations: tuple[str, ...]


def _events(dist: monte_carlo.PeakDistribution, n: int) -> int:
    return checks.integer("events", n, 1, min(_MAX_EVENTS, dist.peaks_a.shape[0]))


def device_operation_odds(
    circuit: EquivalentCircuit,
    dist: monte_carlo.PeakDistribution,
    devices: Sequence[device_operation.Device],
    *,
    events: int = 200,
    duration_s: float = 2.0,
    max_steps: int | None = None,
    batch: int = 50,
    checkpoint: Callable[[], None] | None = None,
) -> tuple[DeviceOdds, ...]:
    """Probability that each device operates on a random energisation.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The circuit the distribution was drawn for [-].
    dist : PeakDistribution
        The Monte Carlo sample; its first ``events`` events are judged [-].
    devices : sequence of Relay, Fuse or Breaker
        On the energised side, distinct names [-].
    events : int
        Events judged, in [1, samples] [-].
    duration_s : float
        Record of each event, in [0.1, 10] [s].
    max_steps : int or None
        Compute limit per solver call [-].
    batch : int
        Events simulated per solver call, in [1, 10000] (memory: batch x lines x samples) [-].
    checkpoint : callable or None
        Called with no argument before each solver call; it may raise to stop the work (the
        caller's deadline) [-].

    Returns
    -------
    tuple of DeviceOdds
        In the order of ``devices``.

    Notes
    -----
    Each event is simulated for ``duration_s`` and judged as
    :func:`core.protection.protection_study.clearance_study` judges the worst case (ride-through
    side only); "operates" is
    :attr:`core.protection.device_operation.RideThrough.trips`.
    """
    n = _events(dist, events)
    span = checks.in_range("duration_s", duration_s, 0.1, 10.0, open_low=False)
    size = checks.integer("batch", batch, 1, 10_000)
    names = line_names(circuit)
    trips = np.zeros((len(devices), n))
    margins = np.full((len(devices), n), math.inf)
    for start in range(0, n, size):
        if checkpoint is not None:
            checkpoint()
        part = slice(start, min(start + size, n))
        sim = energize.simulate(
            circuit,
            dist.closing_angle_deg[part],
            dist.residual_flux_pu[part],
            dist.pole_delay_s[part],
            duration_s=span + float(dist.pole_delay_s[part].max()),
            max_steps=max_steps,
        )
        for k in range(sim.line_current_a.shape[0]):
            seen = device_operation.inrush_from_waveform(
                sim.time_s,
                sim.line_current_a[k],
                circuit.frequency_hz,
                rated_current_a=circuit.rated_line_current_a,
                lines=names,
            )
            ev = coordination.evaluate(seen, devices)
            for j, d in enumerate(ev.devices):
                trips[j, start + k] = float(d.ride_through.trips)
                margins[j, start + k] = d.ride_through.margin_ratio
    return device_odds(devices, trips, margins)


def device_odds(
    devices: Sequence[device_operation.Device], trips: FloatArray, margins: FloatArray
) -> tuple[DeviceOdds, ...]:
    """Each device's share of operations over the events judged, with its interval.

    Parameters
    ----------
    devices : sequence of Relay, Fuse or Breaker
        The devices judged [-].
    trips : ndarray, shape (n_devices, n_events)
        1 where the device operated on the event, else 0 [-].
    margins : ndarray, shape (n_devices, n_events)
        Its ride-through margin on each event [-].

    Returns
    -------
    tuple of DeviceOdds
        In the order of ``devices``.

    Notes
    -----
    k/n operations with the Clopper-Pearson interval
    (:func:`core.statistics.monte_carlo.exceedance_probability` above 0.5); the smallest
    margin over the events.

    References
    ----------
    C. J. Clopper, E. S. Pearson, Biometrika 26(4), 1934 (from memory).
    """
    return tuple(
        DeviceOdds(
            d.name,
            monte_carlo.exceedance_probability(trips[j], 0.5),
            float(margins[j].min()),
        )
        for j, d in enumerate(devices)
    )


def dip_exceedance_odds(
    gen: Generator,
    circuit: EquivalentCircuit,
    dist: monte_carlo.PeakDistribution,
    limit_percent: float,
    *,
    events: int = 200,
    excitation: ExcitationSpec = "unknown",
    bus_load: BusLoad | None = None,
    duration_s: float = 0.5,
    checkpoint: Callable[[], None] | None = None,
) -> DipOdds:
    """Probability that a random energisation from a generator dips beyond a limit.

    Parameters
    ----------
    gen : Generator
        The machine [-].
    circuit : EquivalentCircuit
        The transformer built with an ideal source (the machine replaces it) [-].
    dist : PeakDistribution
        The Monte Carlo sample; its first ``events`` events are simulated with the machine [-].
    limit_percent : float
        Dip limit, in (0, 100] [% of the pre-event voltage].
    events : int
        Events judged, in [1, samples] [-].
    excitation : Excitation, "unknown" or "constant_field"
        Regulator model [-].
    bus_load : BusLoad or None
        Load already on the bus [-].
    duration_s : float
        Simulated time of each event, in [0.1, 30]: the dip falls in the first cycles, so a
        fraction of a second suffices (recovery is not judged here) [s].
    checkpoint : callable or None
        Called with no argument before each solver call; it may raise to stop the work (the
        caller's deadline) [-].

    Returns
    -------
    DipOdds
    """
    n = _events(dist, events)
    limit = checks.in_range("limit_percent", limit_percent, 0.0, 100.0, open_low=False)
    span = checks.in_range("duration_s", duration_s, 0.1, 30.0, open_low=False)
    dips = np.empty(n)
    approximations: tuple[str, ...] = ()
    for k, event in enumerate(dist.events(circuit, n)):
        if checkpoint is not None:
            checkpoint()
        study = dip.energize_from_source(
            gen, circuit, event, excitation=excitation, bus_load=bus_load, duration_s=span,
            exact_peaks=False,
        )  # fmt: skip
        dips[k] = study.dip_percent
        # each event states its own pole instants: say it once, in general
        own = tuple(a for a in study.approximations if not a.startswith(_POLES_STATED))
        if len(own) < len(study.approximations):
            own += (_POLES_GENERAL,)
        approximations = tuple(dict.fromkeys(approximations + own))
    return DipOdds(limit, monte_carlo.exceedance_probability(dips, limit), dips, approximations)
