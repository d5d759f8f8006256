"""Peaks of a network record read exactly: the network integrated again around each candidate.

The reading of :mod:`core.energization.peaks` on the network solver. A peak read from the
output samples (a parabola through the largest sample and its neighbours) errs where the current
has a corner rather than a rounded top (a line of a floating wye or a delta changes slope where
another winding crosses its knee; the source current where any unit's winding does), by up to
about 2 % of a small later peak at 128 samples per cycle. Here the solver itself is asked: from
the state of the whole network at the sample before each candidate (every unit's winding fluxes
lambda, the load currents, the machine's four states, and which poles are closed and resistors
in), the network is integrated again over the two sample intervals around it with a step 16
times finer (:func:`core.network.solver.simulate_windows`), then once more around the largest of
those samples, finer again -- the stages of :func:`core.waveform.refinement_stages`
on the run's internal step, so for a run whose step is its sample (the usual 128 a cycle) both
solvers read a peak through the same instants and step sizes -- and the peak is read from that
dense record with the parabola on its last three samples around the largest.

Cost and what is shared: a candidate is the largest sample of one line of one current (a
unit's line or the source's) in one cycle (or in the first peak's window). One window is run per
case and starting sample, whatever the number of lines and currents whose candidates fall on it
(the record of a window holds every current of the network), and one second-stage window per
case and fine starting sample. A line whose largest sample in the cycle is below
:data:`CANDIDATE_FRACTION` of the largest line's of the same current is not read again: the
readings taken here are the largest line's (per current, per cycle), and a line that far below
cannot become the largest: the exact peak exceeds the largest sample by at most 2.5 % of it
over the families measured (the three connections and three curve kinds on 5 and 30 MVA
sources, and eight mixed units with a load; the largest, a delta's two-slope curve on 5 MVA, is
kept below 5 % by tests/core/network/test_network_peaks.py), against the 10 % margin.
The remaining cost grows with the number of units twice (candidates, and units integrated per
window); :func:`reading_steps` counts it for the work estimate.

Limits: the record must carry its step grid (:attr:`core.network.NetworkResult.grid`, as every
:func:`core.network.simulate_network` result does).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from core.errors import ParameterError
from core.network.machine import Machine
from core.network.solver import (
    BusLoad,
    NetworkResult,
    Source,
    StepGrid,
    Unit,
    WindowRecord,
    simulate_windows,
)
from core.waveform import refinement_stages, window_peak

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]

__all__ = [
    "CANDIDATE_FRACTION",
    "LINES_PER_READING",
    "SOURCE",
    "SignalPeaks",
    "distinct_units",
    "line_cycle_peaks",
    "read_peaks",
    "reading_steps",
    "signal_peaks",
]

# The current of the source (every other signal index is a unit's line currents).
SOURCE = -1
# A line is read again when its largest sample is at least this fraction of the largest line's
# of the same current (module docstring).
CANDIDATE_FRACTION = 0.9
# Lines read per reading that the work estimate counts: the largest, and mostly one more within
# CANDIDATE_FRACTION of it (a delta's two lines sharing a winding; measured about two per
# reading at most over the networks of tests/core/network/test_network_peaks.py).
LINES_PER_READING = 2


@dataclass(frozen=True)
class SignalPeaks:
    """Exact readings of every requested current, per case.

    Attributes
    ----------
    first_peak_a : ndarray, shape (n_cases, n_signals)
        Largest |i| of the three lines up to the first-peak window's end [A].
    first_peak_line : ndarray of int, shape (n_cases, n_signals)
        The line carrying it [-].
    cycle_peaks_a : ndarray, shape (n_cases, n_signals, n_cycles)
        Largest |i| of the three lines in each whole cycle [A].
    cycle_peak_line : ndarray of int, shape (n_cases, n_signals, n_cycles)
        The line carrying it [-].
    """

    first_peak_a: FloatArray
    first_peak_line: IntArray
    cycle_peaks_a: FloatArray
    cycle_peak_line: IntArray


def _signal(record: NetworkResult | WindowRecord, case: IntArray, signal: IntArray) -> FloatArray:
    """Line currents (n, 3, n_samples) of each (case, signal) pair."""
    src = record.source_current_a[case]
    units = record.line_current_a[case, np.maximum(signal, 0)]
    out: FloatArray = np.where((signal == SOURCE)[:, None, None], src, units)
    return out


def _stages(grid: StepGrid, frequency_hz: float) -> list[int]:
    """Scale factor of each stage on the run's internal step [-]."""
    spc = round(1.0 / (grid.step_s * frequency_hz))
    return [fine // before for before, fine in refinement_stages(spc)]


def read_peaks(
    source: Source | Machine,
    units: Sequence[Unit],
    load: BusLoad | None,
    result: NetworkResult,
    case: IntArray,
    signal: IntArray,
    line: IntArray,
    center: IntArray,
    t_lo: FloatArray,
    t_hi: FloatArray,
) -> tuple[FloatArray, FloatArray]:
    """Largest |i| of each requested line near its candidate sample, read exactly.

    Parameters
    ----------
    source, units, load
        The network, as given to :func:`core.network.simulate_network` [-].
    result : NetworkResult
        Its record [-].
    case, signal, line : ndarray of int, shape (n,)
        Case, current (:data:`SOURCE` or a unit's index) and line of each request [-].
    center : ndarray of int, shape (n,)
        The candidate sample of each request [-].
    t_lo, t_hi : ndarray, shape (n,)
        The peak is sought in [t_lo, t_hi) [s].

    Returns
    -------
    tuple of ndarray, shape (n,)
        The peak [A] and its instant [s].

    Notes
    -----
    Stage 1: from the state at sample s0 = clip(center - 1, 0, n_samples - 3), 2*d steps of the
    run (d steps a sample) at h/F1; stage 2: from the stage-1 sample before its largest, two
    stage-1 steps at h/(F1*F2); F1, F2 those of :func:`core.waveform.
    refinement_stages` at the run's steps per cycle. Each stage's largest |i| within
    [t_lo, t_hi) is refined by the parabola on the three samples around it; the result is never
    below the candidate sample.

    References
    ----------
    :mod:`core.energization.peaks` (the same reading on the single-unit solver); classical
    Runge-Kutta (Kutta 1901) through :func:`core.network.solver.simulate_windows`.
    """
    grid = result.grid
    if grid is None:
        raise ParameterError(
            "result", "a record without its step grid", "a simulate_network result"
        )
    f = float(source.frequency_hz)
    n_samples = result.time_s.size
    d = grid.decimate
    h = grid.step_s
    sampled = np.abs(
        np.where(
            signal == SOURCE,
            result.source_current_a[case, line, center],
            result.line_current_a[case, np.maximum(signal, 0), line, center],
        )
    )
    peak = sampled.copy()
    when = result.time_s[center].copy()
    if case.size == 0 or n_samples < 3:
        return peak, when
    s0 = np.clip(center - 1, 0, n_samples - 3).astype(np.int64)
    # stage positions in steps of h/scale from t = 0, and the states there
    scale = 1
    pos = s0 * d
    key_case, key_pos = case, pos
    state: NetworkResult | WindowRecord = result
    state_case, state_index = case, s0
    length = 2 * d
    mach = grid.machine_state_pu
    for factor in _stages(grid, f):
        # one window per (case, start) shared by every request starting there
        keys = np.stack([key_case, key_pos * factor])
        uniq, first, inverse = np.unique(keys, axis=1, return_index=True, return_inverse=True)
        inverse = inverse.ravel()
        scale *= factor
        n_steps = length * factor
        rec = simulate_windows(
            source, units, load, grid, uniq[0], uniq[1], scale, n_steps,
            state.flux_linkage_wb[state_case[first], :, :, state_index[first]],
            state.load_current_a[state_case[first], :, state_index[first]],
            mach[state_case[first], :, state_index[first]],
        )  # fmt: skip
        dt = h / scale
        t0 = uniq[1][inverse] * dt
        y = np.abs(
            np.where(
                (signal == SOURCE)[:, None],
                rec.source_current_a[inverse, line],
                rec.line_current_a[inverse, np.maximum(signal, 0), line],
            )
        )
        t = t0[:, None] + rec.time_s[None, :]
        pk, tm, kmax = window_peak(y, t, t_lo, t_hi, dt, 1e-9 * dt)
        peak, when = pk, tm
        # the next stage: two of this stage's steps from the sample before the largest
        nxt = np.clip(kmax - 1, 0, n_steps - 2).astype(np.int64)
        key_case, key_pos = case, uniq[1][inverse] + nxt
        state, state_case, state_index = rec, inverse, nxt
        mach = rec.machine_state_pu
        length = 2
    better = peak >= sampled
    out_peak: FloatArray = np.where(better, peak, sampled)
    out_when: FloatArray = np.where(better, when, result.time_s[center])
    return out_peak, out_when


def _candidates(
    a: FloatArray, lo: IntArray, hi: IntArray
) -> tuple[FloatArray, IntArray, NDArray[np.bool_]]:
    """Per (row, line): the largest sample in [lo, hi), its index, and whether to read it again.

    a has shape (n_rows, 3, n_samples); lo, hi (n_rows,) sample bounds (hi exclusive).
    """
    idx = np.arange(a.shape[-1])
    inside = (idx[None, :] >= lo[:, None]) & (idx[None, :] < hi[:, None])
    y = np.where(inside[:, None, :], a, -1.0)
    k = np.argmax(y, axis=-1)
    best = np.take_along_axis(y, k[..., None], -1)[..., 0]
    keep = best >= CANDIDATE_FRACTION * best.max(axis=1, keepdims=True)
    return best, k.astype(np.int64), keep


def _requests(
    result: NetworkResult, signals: Sequence[int], window_end_s: FloatArray, cycles: bool
) -> tuple[IntArray, IntArray, IntArray, IntArray, FloatArray, FloatArray, IntArray]:
    """Every (case, signal, line) to read again, with its candidate, bounds and slot.

    The slot indexes a reading: [0, n_sig) the first peak of signal s, then n_sig + s*n_cyc + m
    the cycle-m peak of signal s (per case).
    """
    n = result.source_current_a.shape[0]
    n_samples = result.time_s.size
    t = result.time_s
    dt = float(t[1] - t[0])
    f_spc = result.steps_per_cycle // (result.grid.decimate if result.grid else 1)
    n_cyc = (n_samples - 1) // f_spc if cycles else 0
    sig = np.asarray(list(signals), dtype=np.int64)
    n_sig = sig.size
    rows_case = np.repeat(np.arange(n), n_sig)
    rows_sig = np.tile(sig, n)
    a = np.abs(_signal(result, rows_case, rows_sig))  # (n*n_sig, 3, n_samples)
    end = np.asarray(window_end_s, dtype=float)
    last = np.searchsorted(t, end * (1.0 + 1e-12), side="right")  # samples t <= end
    out: list[tuple[IntArray, ...]] = []
    bounds: list[tuple[FloatArray, FloatArray]] = []
    # first peaks: [0, end]
    lo = np.zeros(n * n_sig, dtype=np.int64)
    hi = np.repeat(last, n_sig).astype(np.int64)
    _, k, keep = _candidates(a, lo, hi)
    r, ln = np.nonzero(keep)
    slot = np.tile(np.arange(n_sig), n)[r]
    out.append((rows_case[r], rows_sig[r], ln, k[r, ln], slot))
    t_hi = np.repeat(end * (1.0 + 1e-12) + 1e-9 * dt, n_sig)[r]
    bounds.append((np.zeros(r.size), t_hi))
    for m in range(n_cyc):
        lo = np.full(n * n_sig, m * f_spc, dtype=np.int64)
        hi = lo + f_spc
        _, k, keep = _candidates(a, lo, hi)
        r, ln = np.nonzero(keep)
        slot = n_sig + np.tile(np.arange(n_sig), n)[r] * n_cyc + m
        out.append((rows_case[r], rows_sig[r], ln, k[r, ln], slot))
        bounds.append((np.full(r.size, m * f_spc * dt), np.full(r.size, (m + 1) * f_spc * dt)))
    cat = [np.concatenate([o[j] for o in out]).astype(np.int64) for j in range(5)]
    lo_t = np.concatenate([b[0] for b in bounds])
    hi_t = np.concatenate([b[1] for b in bounds])
    return cat[0], cat[1], cat[2], cat[3], lo_t, hi_t, cat[4]


def signal_peaks(
    source: Source | Machine,
    units: Sequence[Unit],
    load: BusLoad | None,
    result: NetworkResult,
    signals: Sequence[int],
    window_end_s: FloatArray,
    cycles: bool = True,
) -> SignalPeaks:
    """First peak and per-cycle peaks of each requested current, read exactly.

    Parameters
    ----------
    source, units, load
        The network, as given to :func:`core.network.simulate_network` [-].
    result : NetworkResult
        Its record [-].
    signals : sequence of int
        Currents to read: :data:`SOURCE` or a unit's index [-].
    window_end_s : ndarray, shape (n_cases,)
        End of each case's first-peak window (inclusive, to 1e-12 relative,
        :func:`core.network.analysis.first_peak_window_end`) [s].
    cycles : bool
        Read the per-cycle peaks too (False leaves them empty) [-].

    Returns
    -------
    SignalPeaks

    Notes
    -----
    First peak of a current: the largest over its lines of the exact peak in [0, t_end], each
    line's candidate its largest sample there. Per-cycle peak: the same over [n*T, (n+1)*T),
    each line's candidate its largest sample in the cycle (a peak just past the cycle's end
    counts in the next one). Lines whose candidate is below :data:`CANDIDATE_FRACTION` of the
    largest line's keep their sampled value (module docstring); each reading by
    :func:`read_peaks`.

    References
    ----------
    As :func:`read_peaks`.
    """
    n = result.source_current_a.shape[0]
    n_samples = result.time_s.size
    f_spc = result.steps_per_cycle // (result.grid.decimate if result.grid else 1)
    n_cyc = (n_samples - 1) // f_spc if cycles else 0
    n_sig = len(list(signals))
    case, sig, line, center, lo, hi, slot = _requests(result, signals, window_end_s, cycles)
    peak, _ = read_peaks(source, units, load, result, case, sig, line, center, lo, hi)
    n_slots = n_sig * (1 + n_cyc)
    best = np.full((n, n_slots), -1.0)
    np.maximum.at(best, (case, slot), peak)
    # the line carrying it; equal values keep the first line
    best_line = np.full((n, n_slots), 3, dtype=np.int64)
    np.minimum.at(best_line, (case, slot), np.where(peak == best[case, slot], line, 3))
    return SignalPeaks(
        first_peak_a=best[:, :n_sig],
        first_peak_line=best_line[:, :n_sig],
        cycle_peaks_a=best[:, n_sig:].reshape(n, n_sig, n_cyc),
        cycle_peak_line=best_line[:, n_sig:].reshape(n, n_sig, n_cyc),
    )


def line_cycle_peaks(
    source: Source | Machine,
    units: Sequence[Unit],
    load: BusLoad | None,
    result: NetworkResult,
    signal: int,
    n_cycles: int,
) -> FloatArray:
    """Largest |i| of every line of one current in each whole cycle, read exactly.

    Parameters
    ----------
    source, units, load
        The network, as given to :func:`core.network.simulate_network` [-].
    result : NetworkResult
        Its record [-].
    signal : int
        :data:`SOURCE` or a unit's index [-].
    n_cycles : int
        Whole cycles read from t = 0, at most those of the record [-].

    Returns
    -------
    ndarray, shape (n_cases, 3, n_cycles)
        Per-cycle peaks [A].

    Notes
    -----
    The candidate of each line and cycle is its largest sample in [n*T, (n+1)*T); every line
    is read (no line is left out, unlike :func:`signal_peaks`), each by :func:`read_peaks`
    confined to its cycle.

    References
    ----------
    As :func:`read_peaks`.
    """
    n = result.source_current_a.shape[0]
    f_spc = result.steps_per_cycle // (result.grid.decimate if result.grid else 1)
    n_cyc = int(n_cycles)
    if not 0 <= n_cyc <= (result.time_s.size - 1) // f_spc:
        raise ParameterError("n_cycles", n_cycles, "whole cycles of the record")
    sig = np.full(n, signal, dtype=np.int64)
    a = np.abs(_signal(result, np.arange(n), sig))[..., : n_cyc * f_spc]
    k = np.argmax(a.reshape(n, 3, n_cyc, f_spc), axis=-1) + np.arange(n_cyc) * f_spc
    case = np.repeat(np.arange(n), 3 * n_cyc)
    line = np.tile(np.repeat(np.arange(3), n_cyc), n)
    cyc = np.tile(np.arange(n_cyc), 3 * n).astype(float)
    period = f_spc * float(result.time_s[1] - result.time_s[0])
    peak, _ = read_peaks(
        source, units, load, result, case, np.full(case.size, signal, dtype=np.int64), line,
        k.ravel().astype(np.int64), cyc * period, (cyc + 1.0) * period,
    )  # fmt: skip
    out: FloatArray = peak.reshape(n, 3, n_cyc)
    return out


# Fields that describe how a circuit was derived, not what the solver computes with.
_DESCRIPTIVE = frozenset({"assumptions", "warnings"})


def _fingerprint(value: object) -> object:
    """A hashable image of a unit's inputs: dataclasses field by field (their descriptive
    fields left out), arrays by their bytes."""
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return (
            type(value).__name__,
            tuple(
                _fingerprint(getattr(value, f.name))
                for f in dataclasses.fields(value)
                if f.name not in _DESCRIPTIVE
            ),
        )
    if isinstance(value, (list, tuple)):
        return tuple(_fingerprint(v) for v in value)
    if isinstance(value, (np.ndarray, float, int, np.floating)):
        a = np.asarray(value, dtype=float)
        return (a.shape, a.tobytes())
    return repr(value)


def distinct_units(units: Sequence[Unit]) -> int:
    """How many of the units differ in any input (an estimate's count of distinct currents).

    Parameters
    ----------
    units : sequence of Unit
        The units on one bus [-].

    Returns
    -------
    int
        The number of classes of units equal in every input: circuit (every number and array of
        its curve; not its assumptions and warnings, which only describe it), connection,
        breaker, residual flux and state [-].

    Notes
    -----
    Units equal in every input on one bus carry equal currents at every step (the solver treats
    each unit by the same arithmetic from the same bus voltage), so their peaks fall on the same
    samples and :func:`signal_peaks` runs one window for them all: the work estimate counts the
    readings of distinct units only. A residual flux given as one number and the same as three
    equal numbers count as different (a safe overcount).

    References
    ----------
    This module's reading (windows shared per case and starting sample).
    """
    return len({_fingerprint(u) for u in units})


def reading_steps(
    units: int,
    readings: int,
    samples: int,
    steps_per_cycle: int,
    decimate: int = 1,
    lines_per_reading: int = LINES_PER_READING,
) -> int:
    """Unit-steps of the exact reading of ``readings`` peaks (an estimate for a work budget).

    Parameters
    ----------
    units : int
        Units on the bus [-].
    readings : int
        Peaks read (currents x (cycles + first peak) for :func:`signal_peaks`, lines x cycles
        for :func:`line_cycle_peaks`) [-].
    samples : int
        Output samples of the record [-].
    steps_per_cycle : int
        Internal steps per cycle of the run [-].
    decimate : int
        Internal steps per output sample [-].
    lines_per_reading : int
        Lines read per reading, k: :data:`LINES_PER_READING` for :func:`signal_peaks`, 1 for
        :func:`line_cycle_peaks` (whose readings are lines) [-].

    Returns
    -------
    int
        units * (min(k*readings, samples)*2*d*F1 + k*readings*2*F2) [-].

    Notes
    -----
    One window per line read in each stage, at most one first-stage window per sample (windows
    are shared per case and start); stage 1 integrates 2*d*F1 steps, stage 2 2*F2
    (:func:`read_peaks`), each over every unit. Sharing among readings only lowers it.

    References
    ----------
    This module's reading.
    """
    stages = [fine // before for before, fine in refinement_stages(steps_per_cycle)]
    lines = int(lines_per_reading) * int(readings)
    first = min(lines, int(samples)) * 2 * int(decimate) * stages[0]
    second = lines * sum(2 * f for f in stages[1:])
    return int(units) * (first + second)
