"""Statistics of a network's energisation: Monte Carlo over the closing instant, the pole scatter
and the residual flux of every unit being energised on one bus.

:func:`network_peak_distribution` draws the events the way
:func:`core.statistics.monte_carlo.peak_distribution` draws them for one unit (closing angle
uniform over a cycle, normal pole scatter, residual flux fixed or uniform per winding),
simulates them as cases of :func:`core.network.simulate_network` in chunks without a record
(each case's first peaks at the source and in every unit being energised kept while it runs,
each case stopped after its window), the reading of :func:`core.network.analysis.first_peaks` --
the one the single network operation gives, so a sample replayed through it gives the same peak.
:func:`network_device_odds` judges the feeder's devices on the first events of the sample, each
simulated over the whole record, as the single operation judges one event
(:func:`core.protection.coordination.evaluate` on the source current, the only current those
simulations record), and gives how often each operates with its binomial interval.

Limits: the network solver's approximations apply (reported with every result, see
:mod:`core.network.solver`); percentiles are empirical (P99 with a distribution-free interval
and a convergence table); the device probabilities' intervals are the sampling uncertainty only.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import NDArray

from core import checks
from core.errors import ParameterError
from core.network import BusLoad, Source, Unit, analysis, simulate_network, step_plan
from core.protection import coordination, device_operation
from core.statistics import event_outcomes, monte_carlo
from core.statistics.event_outcomes import DeviceOdds

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]

__all__ = [
    "CHUNK_BYTES",
    "NetworkPeakDistribution",
    "PeakStatistics",
    "chunk_cases",
    "network_device_odds",
    "network_peak_distribution",
    "replay_values",
]

# Memory of one chunk's record (every output array of simulate_network for its cases) [bytes]:
# 64 MB keeps a request's peak memory well under the service's per-worker share.
CHUNK_BYTES = 64_000_000
# Output samples per cycle of every simulation here: those of the single network operation, so
# that a replayed event reads the same first peak.
SAMPLES_PER_CYCLE = 128
# Cases per solver call of the Monte Carlo: without a record a case holds a few hundred bytes,
# so this bounds only how long a call runs between two checkpoints (the request's deadline).
PEAK_CHUNK_CASES = 1000
_MAX_SAMPLES = 10_000_000
_MAX_EVENTS = 100_000
_LINES = ("A", "B", "C")


@dataclass(frozen=True)
class PeakStatistics:
    """The first peak of one current over the sample.

    Attributes
    ----------
    percentiles : Percentiles
        P50, P95, P99, max and the P99 interval [A].
    mean_a : float
        Sample mean [A].
    worst_sample : int
        Index (0-based, in the order drawn) of the sample with the largest first peak [-].
    convergence : Convergence
        P99 against the number of samples [A].
    """

    percentiles: monte_carlo.Percentiles
    mean_a: float
    worst_sample: int
    convergence: monte_carlo.Convergence


@dataclass(frozen=True)
class NetworkPeakDistribution:
    """Result of :func:`network_peak_distribution`.

    Attributes
    ----------
    source : PeakStatistics
        First peak of the current out of the source (largest line).
    units : tuple of PeakStatistics or None
        Each unit's first peak (largest line); None for a unit in service.
    source_peaks_a : ndarray, shape (samples,)
        The source's first peak in every sample [A].
    unit_peaks_a : ndarray, shape (samples, n_units)
        Each unit's first peak in every sample; nan for a unit in service [A].
    closing_angle_deg : ndarray, shape (samples,)
        Angle of the phase-A source EMF at t = 0 (the reference closing) [deg].
    residual_flux_pu : ndarray, shape (samples, n_units, 3)
        Residual flux of every winding; nan for a unit in service [pu of lambda_N].
    pole_closing_s : ndarray, shape (samples, n_units, 3)
        Closing instant of every pole after t = 0, before rounding to the step; nan for a unit
        in service [s].
    pole_scatter_ms : float
        Standard deviation of the pole scatter drawn [ms].
    confidence_level : float
        Two-sided level of the intervals [-].
    approximations : tuple of str
        What the solver approximates.
    """

    source: PeakStatistics
    units: tuple[PeakStatistics | None, ...]
    source_peaks_a: FloatArray
    unit_peaks_a: FloatArray
    closing_angle_deg: FloatArray
    residual_flux_pu: FloatArray
    pole_closing_s: FloatArray
    pole_scatter_ms: float
    confidence_level: float
    approximations: tuple[str, ...]


def chunk_cases(n_units: int, n_samples: int, max_bytes: float = CHUNK_BYTES) -> int:
    """Cases per :func:`core.network.simulate_network` call whose record fits a memory bound.

    Parameters
    ----------
    n_units : int
        Units on the bus, >= 1 [-].
    n_samples : int
        Output samples of each case's record, >= 1 [-].
    max_bytes : float
        Memory allowed for one call's record, > 0 [bytes].

    Returns
    -------
    int
        floor(max_bytes / per_case), at least 1 [-].

    Notes
    -----
    per_case = 8 x n_samples x (3 x 3 + 3 x 3 x n_units): the source current, bus voltage and
    load current (three phases each), and each unit's line current, winding current and flux
    linkage (three each), in float64.

    References
    ----------
    The shapes of :class:`core.network.NetworkResult`.
    """
    n_u = checks.integer("n_units", n_units, 1, 10_000)
    n_s = checks.integer("n_samples", n_samples, 1, 10**12)
    limit = checks.positive("max_bytes", max_bytes)
    per_case = 8.0 * n_s * (9.0 + 9.0 * n_u)
    return max(1, int(limit // per_case))


def _statistics(peaks: FloatArray) -> PeakStatistics:
    return PeakStatistics(
        percentiles=monte_carlo.percentiles_of(peaks),
        mean_a=float(np.mean(peaks)),
        worst_sample=int(np.argmax(peaks)),
        convergence=monte_carlo.convergence_of(peaks),
    )


def _given_closing(unit: Unit, k: int) -> FloatArray:
    t = np.asarray(unit.breaker.closing_time_s, dtype=float)
    try:
        out: FloatArray = np.broadcast_to(t, (3,)).astype(float)
    except ValueError as exc:
        raise ParameterError(f"units[{k}].breaker.closing_time_s", t.shape, "(3,)") from exc
    return out


def _given_residual(unit: Unit, k: int) -> FloatArray:
    r = np.asarray(unit.residual_flux_pu, dtype=float)
    try:
        out: FloatArray = np.broadcast_to(r, (3,)).astype(float)
    except ValueError as exc:
        raise ParameterError(f"units[{k}].residual_flux_pu", r.shape, "(3,)") from exc
    return out


def _case_units(
    units: Sequence[Unit], part: slice, residual: FloatArray, closing: FloatArray
) -> list[Unit]:
    """The units with each energised one's sampled residual flux and pole instants."""
    out = []
    for k, u in enumerate(units):
        if u.in_service:
            out.append(u)
            continue
        brk = replace(u.breaker, closing_time_s=closing[part, k])
        out.append(replace(u, breaker=brk, residual_flux_pu=residual[part, k]))
    return out


def network_peak_distribution(
    source: Source,
    units: Sequence[Unit],
    *,
    samples: int,
    random_state: int | None,
    closing_angle_deg: float | None = None,
    residual: monte_carlo.UniformResidual | None = None,
    pole_scatter_ms: float = monte_carlo.DEFAULT_THREE_PHASE_POLE_SCATTER_MS,
    load: BusLoad | None = None,
    cycles: float = analysis.FIRST_PEAK_CYCLES,
    max_steps: int | None = None,
    chunk_bytes: float = CHUNK_BYTES,
    checkpoint: Callable[[], None] | None = None,
) -> NetworkPeakDistribution:
    """Monte Carlo distribution of the first peaks of a network's energisation.

    Parameters
    ----------
    source : Source
        The source [-].
    units : sequence of Unit
        The units on the bus; each one being energised carries its pole instants (3,) and its
        residual flux (3,), used as given when not drawn [-].
    samples : int
        Events drawn, in [1, 1e7] [-].
    random_state : int or None
        State of ``numpy.random.default_rng``; an integer makes the result reproducible [-].
    closing_angle_deg : float or None
        Angle of the phase-A EMF at t = 0 in every event; None draws it uniform in [0, 360)
        [deg].
    residual : UniformResidual or None
        Distribution of every winding's residual flux, drawn independently for each unit
        being energised; None keeps each unit's own [pu of lambda_N].
    pole_scatter_ms : float
        Standard deviation of a normal scatter of each pole's closing instant, in [0, 20]
        [ms].
    load : BusLoad or None
        The bus load [-].
    cycles : float
        Window searched for the first peak after the last pole of the energised units closes,
        in (0, 60] [cycles].
    max_steps : int or None
        Compute limit per solver call (cases x units x steps) [-].
    chunk_bytes : float
        Memory of one solver call's cases (no record is kept: each case's first peaks are kept
        as running maxima while it is integrated; at most PEAK_CHUNK_CASES cases a call)
        [bytes].
    checkpoint : callable or None
        Called with no argument before each solver call; it may raise to stop the work [-].

    Returns
    -------
    NetworkPeakDistribution

    Raises
    ------
    ParameterError
        On a value out of range, or when no unit is energised.
    LimitError
        When a solver call exceeds ``max_steps``.

    Notes
    -----
    Every event is drawn first, from one generator, in this order: the angle (when drawn),
    uniform in [0, 360) deg; each energised unit's residual flux in turn
    (:func:`core.statistics.monte_carlo.sample_residual`); the pole scatter r ~ N(0, sigma^2) of
    every pole of every energised unit at once, shape (samples, units, 3). Pole k of unit u
    closes at t_uk = t0_uk + r_uk - min_{u,k} r_uk (t0 the given instants), so the earliest
    scattered pole keeps its given instant when all are given at 0: with one unit this is
    :func:`core.statistics.monte_carlo.peak_distribution`'s convention and its draws, in the
    same order. Every event is simulated up to the sample after t_end = max_{u,k} t_uk (rounded
    to the step) + cycles/f, within a plan over cycles/f + max t_uk over the sample + two
    samples, and its first peaks read up to t_end without a record
    (``simulate_network(record="first_peaks")``: the reading of
    :func:`core.network.analysis.first_peaks`, the same numbers as from the whole record). The
    result does not depend on the chunking.

    References
    ----------
    Percentile intervals: :func:`core.statistics.monte_carlo.order_statistic_interval`. Monte
    Carlo treatment of the random closing instant: common practice in statistical switching
    studies.
    """
    n = checks.integer("samples", samples, 1, _MAX_SAMPLES)
    window = checks.in_range("cycles", cycles, 0.0, 60.0)
    sigma_ms = checks.in_range("pole_scatter_ms", pole_scatter_ms, 0.0, 20.0, open_low=False)
    if random_state is not None:
        checks.integer("random_state", random_state, 0, 2**63 - 1)
    units = list(units)
    if not units:
        raise ParameterError("units", 0, "at least one unit")
    energized = [not u.in_service for u in units]
    idx = [k for k, e in enumerate(energized) if e]
    if not idx:
        raise ParameterError("units", "all in service", "at least one unit being energised")
    f = checks.positive("source.frequency_hz", source.frequency_hz)

    rng = np.random.default_rng(random_state)
    if closing_angle_deg is None:
        angles: FloatArray = rng.uniform(0.0, 360.0, size=n)
    else:
        a = checks.in_range("closing_angle_deg", closing_angle_deg, -360.0, 360.0, open_low=False)
        angles = np.full(n, a)
    n_u = len(units)
    res = np.full((n, n_u, 3), np.nan)
    for k in idx:
        if residual is None:
            res[:, k] = _given_residual(units[k], k)
        else:
            res[:, k] = monte_carlo.sample_residual(residual, 3, n, rng)
    raw: FloatArray = rng.normal(0.0, sigma_ms * 1e-3, size=(n, len(idx), 3))
    scatter = raw - raw.min(axis=(1, 2), keepdims=True)
    closing = np.full((n, n_u, 3), np.nan)
    for j, k in enumerate(idx):
        closing[:, k] = _given_closing(units[k], k)[None, :] + scatter[:, j]
    sim_units = units
    spc_out = SAMPLES_PER_CYCLE
    duration = window / f + float(np.nanmax(closing)) + 2.0 / (f * spc_out)
    _, _, n_steps = step_plan(source, sim_units, duration, load, spc_out)
    # per case: the kernel's maxima (1 + units) x 3 x 4 and its inputs, about 36 floats a unit
    per_case = 8.0 * (12.0 * (n_u + 1) + 36.0 * n_u)
    size = max(
        1, min(PEAK_CHUNK_CASES, int(checks.positive("chunk_bytes", chunk_bytes) // per_case))
    )
    if max_steps is not None:
        size = max(1, min(size, max_steps // max(1, n_u * n_steps)))

    src_peaks = np.empty(n)
    unit_peaks = np.full((n, n_u), np.nan)
    approximations: tuple[str, ...] = ()
    for start in range(0, n, size):
        if checkpoint is not None:
            checkpoint()
        part = slice(start, min(start + size, n))
        case_units = _case_units(sim_units, part, res, closing)
        sim = simulate_network(
            source,
            case_units,
            closing_angle_deg=angles[part],
            duration_s=duration,
            load=load,
            samples_per_cycle=spc_out,
            max_steps=max_steps,
            record="first_peaks",
            first_peak_cycles=window,
        )
        src_peaks[part] = sim.first_peak_a[:, 0]
        for k in idx:
            unit_peaks[part, k] = sim.first_peak_a[:, 1 + k]
        approximations = tuple(dict.fromkeys(approximations + sim.approximations))
    return NetworkPeakDistribution(
        source=_statistics(src_peaks),
        units=tuple(_statistics(unit_peaks[:, k]) if energized[k] else None for k in range(n_u)),
        source_peaks_a=src_peaks,
        unit_peaks_a=unit_peaks,
        closing_angle_deg=angles,
        residual_flux_pu=res,
        pole_closing_s=closing,
        pole_scatter_ms=sigma_ms,
        confidence_level=monte_carlo.CONFIDENCE_LEVEL,
        approximations=approximations,
    )


def network_device_odds(
    source: Source,
    units: Sequence[Unit],
    dist: NetworkPeakDistribution,
    devices: Sequence[device_operation.Device],
    rated_current_a: float,
    *,
    events: int,
    duration_s: float,
    load: BusLoad | None = None,
    max_steps: int | None = None,
    chunk_bytes: float = CHUNK_BYTES,
    checkpoint: Callable[[], None] | None = None,
) -> tuple[DeviceOdds, ...]:
    """Probability that each feeder device operates on a random energisation of the network.

    Parameters
    ----------
    source : Source
        The source the distribution was drawn for [-].
    units : sequence of Unit
        The units it was drawn for [-].
    dist : NetworkPeakDistribution
        The Monte Carlo sample; its first ``events`` events are judged [-].
    devices : sequence of Relay, Fuse or Breaker
        The feeder's devices, against the current out of the source, distinct names [-].
    rated_current_a : float
        Rated current the devices' common-practice points are multiples of (the energised
        units' summed rated line current), > 0 [A].
    events : int
        Events judged, in [1, samples] [-].
    duration_s : float
        Record of each event from t = 0, covering every sampled pole instant [s].
    load : BusLoad or None
        The bus load [-].
    max_steps : int or None
        Compute limit per solver call [-].
    chunk_bytes : float
        Memory of one solver call's record [bytes].
    checkpoint : callable or None
        Called with no argument before each solver call; it may raise to stop the work [-].

    Returns
    -------
    tuple of DeviceOdds
        In the order of ``devices``.

    Raises
    ------
    ParameterError
        On a value out of range, or a record shorter than a sampled pole instant.

    Notes
    -----
    Each event is simulated for ``duration_s`` and its source current judged as the single
    network operation judges it: :func:`core.protection.inrush_curves.inrush_from_waveform`,
    then :func:`core.protection.coordination.evaluate`; "operates" is
    :attr:`core.protection.device_operation.RideThrough.trips`. The probability is k/n with its
    Clopper-Pearson interval (:func:`core.statistics.monte_carlo.exceedance_probability`).

    References
    ----------
    C. J. Clopper, E. S. Pearson, Biometrika 26(4), 1934 (from memory).
    """
    n_total = dist.source_peaks_a.size
    n = checks.integer("events", events, 1, min(_MAX_EVENTS, n_total))
    span = checks.positive("duration_s", duration_s)
    rated = checks.positive("rated_current_a", rated_current_a)
    latest = float(np.nanmax(dist.pole_closing_s[:n]))
    if latest > span:
        raise ParameterError("duration_s", span, f"at least {latest:.6g} s, the latest pole")
    units = list(units)
    f = checks.positive("source.frequency_hz", source.frequency_hz)
    sim_units = units
    decimate, _, n_steps = step_plan(source, sim_units, span, load, SAMPLES_PER_CYCLE)
    size = chunk_cases(len(units), n_steps // decimate + 1, chunk_bytes)
    if max_steps is not None:
        size = max(1, min(size, max_steps // max(1, len(units) * n_steps)))
    trips = np.zeros((len(devices), n))
    margins = np.full((len(devices), n), math.inf)
    for start in range(0, n, size):
        if checkpoint is not None:
            checkpoint()
        part = slice(start, min(start + size, n))
        sim = simulate_network(
            source,
            _case_units(sim_units, part, dist.residual_flux_pu, dist.pole_closing_s),
            closing_angle_deg=dist.closing_angle_deg[part],
            duration_s=span,
            load=load,
            samples_per_cycle=SAMPLES_PER_CYCLE,
            max_steps=max_steps,
            record="source",
        )
        for c in range(sim.source_current_a.shape[0]):
            seen = device_operation.inrush_from_waveform(
                sim.time_s, sim.source_current_a[c], f, rated_current_a=rated, lines=_LINES
            )
            ev = coordination.evaluate(seen, list(devices), None)
            for j, d in enumerate(ev.devices):
                trips[j, start + c] = float(d.ride_through.trips)
                margins[j, start + c] = d.ride_through.margin_ratio
    return event_outcomes.device_odds(devices, trips, margins)


def replay_values(
    dist: NetworkPeakDistribution, sample: int
) -> tuple[float, FloatArray, FloatArray]:
    """The event of one sample, as the single network operation takes it.

    Parameters
    ----------
    dist : NetworkPeakDistribution
        The sample [-].
    sample : int
        Index of the event (0-based) [-].

    Returns
    -------
    closing_angle_deg : float
        Angle of the phase-A EMF at t = 0 [deg].
    residual_flux_pu : ndarray, shape (n_units, 3)
        Residual flux of each winding; nan for a unit in service [pu of lambda_N].
    pole_closing_s : ndarray, shape (n_units, 3)
        Pole instants after t = 0; nan for a unit in service [s].

    Notes
    -----
    The values drawn for that sample, unchanged: simulated with them, the network gives the
    sample's first peaks (the step and the rounding of the pole instants are the same).

    References
    ----------
    This module's sampling (see :func:`network_peak_distribution`).
    """
    k = checks.integer("sample", sample, 0, dist.source_peaks_a.size - 1)
    return (
        float(dist.closing_angle_deg[k]),
        dist.residual_flux_pu[k].copy(),
        dist.pole_closing_s[k].copy(),
    )
