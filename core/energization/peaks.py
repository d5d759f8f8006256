"""Inrush peaks read exactly: the largest |i| near each candidate sample, by local re-integration.

A peak read from output samples (a parabola through the largest sample and its neighbours)
errs where the current has a corner rather than a rounded top -- the line current of a
floating-neutral wye or of a delta changes slope wherever another winding crosses its knee --
by up to 1.7 % of a small later peak (0.4 % of the first) at 128 samples per cycle. Here the
solver itself is asked: from the state at the sample before each candidate the circuit is
integrated again over the two sample intervals around it with a step 16 times finer, and then
once more around the largest of those samples, finer again (at most 100 000 steps per cycle in
all), and the peak is read from that dense record (with the parabola on its last three samples
around the largest, which is then within the integration error for a rounded top and within
2*pi/98304 of the current's amplitude at a corner). The state at a sample is recovered from
the winding currents, the magnetising curves being strictly increasing: lambda = f^-1(i) for an
energised winding, its residual flux before it is energised.

Limits: cases without a pre-insertion resistor or a reduced-voltage ramp (the studies that use
this have none); a pole that closes after a window is closed at the window's last instant (the
solver takes no closing beyond its record), which can move that one sample of the other lines
of a floating wye or a delta; the re-integration uses
:func:`core.energization.energize.simulate` itself, so its accuracy is that of the solver at the
finer step.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from core.energization import energize
from core.transformer.circuit_model import EquivalentCircuit
from core.transformer.magnetizing import MagnetizingCurve, PiecewiseLinearCurve
from core.waveform import (
    MAX_SAMPLES_PER_CYCLE,
    finer_samples_per_cycle,
    refinement_stages,
    window_peak,
)

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]

__all__ = [
    "MAX_SAMPLES_PER_CYCLE",
    "ExactPeaks",
    "cycle_peaks",
    "first_peaks",
    "flux_of_current",
    "refinement_stages",
]

# residual flux the solver accepts (core.energization.energize_plan.check_cases) [pu of lambda_N]
_MAX_FLUX_PU = 5.0


@dataclass(frozen=True)
class ExactPeaks:
    """Peaks of |line current| and their instants, one per (case, line, window)."""

    peak_a: FloatArray
    time_s: FloatArray


def flux_of_current(curve: MagnetizingCurve, current_a: FloatArray) -> FloatArray:
    """Flux linkage of a winding carrying a magnetising current: the curve's inverse.

    Parameters
    ----------
    curve : PiecewiseLinearCurve or SmoothKneeCurve
        The winding's magnetising curve (odd, strictly increasing) [-].
    current_a : ndarray
        Current [A].

    Returns
    -------
    ndarray
        lambda with f(lambda) = i [Wb-turn].

    Notes
    -----
    Piecewise linear: linear interpolation of the breakpoints with current and flux swapped,
    beyond the last one lambda_k + (|i| - i_k)*L_final. Smooth knee: Newton's method on
    f(lambda) - |i|, f convex-then-linear and increasing, from the unsaturated estimate clipped
    into a bracket and bisected whenever a step leaves it, to double precision.

    References
    ----------
    The curves' definitions in :mod:`core.transformer.magnetizing`; Newton's method with bisection
    safeguard (common practice).
    """
    i = np.asarray(current_a, dtype=float)
    x = np.abs(i)
    if isinstance(curve, PiecewiseLinearCurve):
        inside = np.interp(x, curve.current_a, curve.flux_wb)
        beyond = curve.flux_wb[-1] + (x - curve.current_a[-1]) * curve.final_inductance_h
        lam = np.where(x > curve.current_a[-1], beyond, inside)
    else:
        lo = np.minimum(x * curve.saturated_inductance_h, x * curve.unsaturated_inductance_h)
        hi = np.maximum(x * curve.saturated_inductance_h, x * curve.unsaturated_inductance_h)
        hi = np.maximum(hi, curve.knee_flux_wb + x * curve.saturated_inductance_h)
        lam = np.clip(x * curve.unsaturated_inductance_h, lo, hi)
        for _ in range(100):
            g = curve.current(lam) - x
            lo = np.where(g < 0.0, lam, lo)
            hi = np.where(g > 0.0, lam, hi)
            new = lam - g / curve.slope(lam)
            new = np.where((new > lo) & (new < hi), new, 0.5 * (lo + hi))
            if np.all(np.abs(new - lam) <= 1e-15 * np.maximum(np.abs(lam), 1e-300)):
                lam = new
                break
            lam = new
    out: FloatArray = np.sign(i) * lam
    return out


def _line(topology: str, winding: FloatArray) -> FloatArray:
    # delta: i_a = c_ab - c_ca, i_b = c_bc - c_ab, i_c = c_ca - c_bc (winding axis -2)
    if topology == "delta":
        out: FloatArray = winding - np.roll(winding, 1, axis=-2)
        return out
    return winding


def _refine(
    circuits: Sequence[EquivalentCircuit],
    closing_angle_deg: FloatArray,
    residual_flux_pu: FloatArray,
    pole_delay_s: FloatArray,
    winding_current_a: FloatArray,
    sample_s: float,
    case: IntArray,
    line: IntArray,
    start: IntArray,
    t_lo: FloatArray,
    t_hi: FloatArray,
    samples_per_cycle: int,
) -> tuple[FloatArray, FloatArray, FloatArray, IntArray, int]:
    """One stage: re-integrate each window [start, start + 2] samples at a finer step.

    Returns the largest |line current| of each window within [t_lo, t_hi) and its instant,
    read from the fine samples with the parabola through the three around it; the fine winding
    currents, the fine sample where the next stage's window starts, and the fine samples per
    cycle.
    """
    first = circuits[0]
    f = first.frequency_hz
    fine = finer_samples_per_cycle(samples_per_cycle)
    factor = fine // samples_per_cycle
    t0 = start * sample_s
    circ = [circuits[c] for c in case]
    lam_n = np.array([c.nominal_flux_wb for c in circ])
    cur0 = winding_current_a[case, :, start]
    poles = pole_delay_s[case]
    closes = np.maximum(poles, np.roll(poles, -1, axis=1)) if first.connection == "delta" else poles
    energised = closes <= t0[:, None] + 1e-9 * sample_s
    lam0 = np.empty_like(cur0)
    owner = np.array([id(c) for c in circ])
    for key in np.unique(owner):  # one inverse per circuit, over all its windows
        rows = owner == key
        lam0[rows] = flux_of_current(circ[int(np.argmax(rows))].curve, cur0[rows])
    res = np.where(energised, lam0 / lam_n[:, None], residual_flux_pu[case])
    sim = energize.simulate(
        circ,
        closing_angle_deg[case] + 360.0 * f * t0,
        res,
        np.clip(poles - t0[:, None], 0.0, 2.0 * sample_s),
        duration_s=2.0 * sample_s,
        samples_per_cycle=fine,
    )
    lines = _line(first.connection, sim.winding_current_a)
    y = np.abs(lines[np.arange(case.size), line])  # (n_windows, 2*factor + 1)
    t = t0[:, None] + np.arange(y.shape[1]) * (sample_s / factor)
    peak, when, k = window_peak(y, t, t_lo, t_hi, sample_s / factor, 1e-9 * sample_s)
    # the window starting one fine sample before the fine maximum, for the next stage
    nxt = np.clip(k - 1, 0, y.shape[1] - 3)
    return peak, when, sim.winding_current_a, nxt.astype(np.int64), fine


def _exact(
    circuits: Sequence[EquivalentCircuit],
    closing_angle_deg: FloatArray,
    residual_flux_pu: FloatArray,
    sim: energize.Simulation,
    case: IntArray,
    line: IntArray,
    center: IntArray,
    t_lo: FloatArray,
    t_hi: FloatArray,
) -> ExactPeaks:
    spc = sim.samples_per_cycle
    f = circuits[0].frequency_hz
    sample_s = 1.0 / (f * spc)
    n_samples = sim.time_s.size
    start = np.clip(center - 1, 0, n_samples - 3).astype(np.int64)
    cur = sim.winding_current_a
    poles = sim.pole_delay_s
    lam_n = np.array([c.nominal_flux_wb for c in circuits])
    # a flux the solver would not accept as an initial condition: keep the sampled reading
    flux = np.stack([flux_of_current(c.curve, cur[k]) for k, c in enumerate(circuits)])
    ok_case = np.all(np.abs(flux) <= _MAX_FLUX_PU * lam_n[:, None, None], axis=(1, 2))
    y = np.abs(_line(circuits[0].connection, cur))
    sampled = y[case, line, center]
    peak = sampled.copy()
    when = sim.time_s[center].copy()
    sel = np.flatnonzero(ok_case[case])
    if sel.size == 0:
        return ExactPeaks(peak, when)
    stage = (case[sel], line[sel], start[sel])
    pk, tm, wc, nxt, fine = _refine(
        circuits, closing_angle_deg, residual_flux_pu, poles, cur, sample_s,
        *stage, t_lo[sel], t_hi[sel], spc,
    )  # fmt: skip
    if MAX_SAMPLES_PER_CYCLE // fine >= 2:
        # the second stage runs on the first stage's windows as its "cases"
        sub_circ = [circuits[c] for c in stage[0]]
        t0 = stage[2] * sample_s
        sub_sample = 1.0 / (f * fine)
        shifted = np.maximum(poles[stage[0]] - t0[:, None], 0.0)
        angle = closing_angle_deg[stage[0]] + 360.0 * f * t0
        t_lo2 = np.maximum(t_lo[sel] - t0, 0.0)
        t_hi2 = t_hi[sel] - t0
        pk2, tm2, *_ = _refine(
            sub_circ, angle, residual_flux_pu[stage[0]], shifted, wc, sub_sample,
            np.arange(sel.size), stage[1], nxt.astype(np.int64), t_lo2, t_hi2, fine,
        )  # fmt: skip
        pk, tm = pk2, tm2 + t0
    peak[sel] = np.maximum(pk, sampled[sel])
    when[sel] = np.where(pk >= sampled[sel], tm, when[sel])
    return ExactPeaks(peak, when)


def first_peaks(
    circuits: Sequence[EquivalentCircuit],
    closing_angle_deg: FloatArray,
    residual_flux_pu: FloatArray,
    sim: energize.Simulation,
) -> ExactPeaks:
    """Largest |i| of each line over the whole record, read exactly.

    Parameters
    ----------
    circuits : sequence of EquivalentCircuit
        The circuit of each case, as given to :func:`core.energization.energize.simulate` [-].
    closing_angle_deg : ndarray, shape (n_cases,)
        Phase-A voltage angle at t = 0 of each case [deg].
    residual_flux_pu : ndarray, shape (n_cases, n_windings)
        Residual flux of each winding [pu of lambda_N].
    sim : Simulation
        The simulation of these cases (no pre-insertion resistor, no voltage ramp) [-].

    Returns
    -------
    ExactPeaks
        Arrays of shape (n_cases, n_lines): the peak [A] and its instant [s].

    Notes
    -----
    The candidate is the largest sample of each line; the peak is then read from the dense
    re-integration of the two sample intervals around it (module docstring), with the vertex
    y1 + (y0 - y2)^2/(8*(2*y1 - y0 - y2)) of the parabola through the last three samples.

    References
    ----------
    Integrator: classical Runge-Kutta (Kutta 1901) through
    :func:`core.energization.energize.simulate`; accuracy against a piecewise-exact reference in
    tests/references/test_piecewise_reference.py.
    """
    lines = sim.line_current_a
    n, m, _ = lines.shape
    k = np.argmax(np.abs(lines), axis=-1)
    case = np.repeat(np.arange(n), m)
    line = np.tile(np.arange(m), n)
    t_end = float(sim.time_s[-1])
    lo = np.zeros(n * m)
    hi = np.full(n * m, t_end * (1.0 + 1e-12) + 1.0 / (circuits[0].frequency_hz * 1e6))
    out = _exact(circuits, closing_angle_deg, residual_flux_pu, sim, case, line, k.ravel(), lo, hi)
    return ExactPeaks(out.peak_a.reshape(n, m), out.time_s.reshape(n, m))


def cycle_peaks(
    circuits: Sequence[EquivalentCircuit],
    closing_angle_deg: FloatArray,
    residual_flux_pu: FloatArray,
    sim: energize.Simulation,
) -> FloatArray:
    """Largest |i| of each line in each whole cycle [n*T, (n+1)*T), read exactly.

    Parameters
    ----------
    circuits, closing_angle_deg, residual_flux_pu, sim
        As for :func:`first_peaks`. [-] [-]

    Returns
    -------
    ndarray, shape (n_cases, n_lines, n_cycles)
        Per-cycle peaks [A].

    Notes
    -----
    The candidate of each cycle is its largest sample; the dense re-integration around it is
    confined to the cycle, so that a peak just past its end counts in the next one, as with
    samples (module docstring).

    References
    ----------
    As :func:`first_peaks`.
    """
    lines = sim.line_current_a
    n, m, n_samples = lines.shape
    spc = sim.samples_per_cycle
    n_cycles = (n_samples - 1) // spc
    body = np.abs(lines[..., : n_cycles * spc]).reshape(n, m, n_cycles, spc)
    k = np.argmax(body, axis=-1) + np.arange(n_cycles) * spc
    period = 1.0 / circuits[0].frequency_hz
    case = np.repeat(np.arange(n), m * n_cycles)
    line = np.tile(np.repeat(np.arange(m), n_cycles), n)
    cyc = np.tile(np.arange(n_cycles), n * m).astype(float)
    out = _exact(
        circuits, closing_angle_deg, residual_flux_pu, sim, case, line, k.ravel(),
        cyc * period, (cyc + 1.0) * period,
    )  # fmt: skip
    result: FloatArray = out.peak_a.reshape(n, m, n_cycles)
    return result
