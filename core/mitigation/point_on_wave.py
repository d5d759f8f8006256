"""Controlled (point-on-wave) closing: the instant that matches the residual flux; its tolerance.

How much current a closing aimed at the residual flux leaves, and how large a closing-time error
it tolerates (:func:`controlled_closing`, :func:`tolerance_window`), computed with the
time-domain solver (:func:`core.energization.energize.simulate`).

Limits: the solver's approximations apply (reported with every result); in particular the phases
of a three-phase unit are magnetically independent, so the flux coupling between limbs, on which
some three-phase closing strategies rely, is not modelled. A delta winding needs two poles, so
only the simultaneous strategy applies to it.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from core import checks
from core.energization import closed_form, energize
from core.energization.inrush_study import winding_angles
from core.errors import ParameterError
from core.transformer.circuit_model import EquivalentCircuit

FloatArray = NDArray[np.float64]

__all__ = [
    "STRATEGIES",
    "ControlledClosing",
    "ToleranceWindow",
    "controlled_closing",
    "tolerance_window",
]

STRATEGIES = ("simultaneous", "first_phase_then_quarter_cycle", "independent")
_PHASE_SHIFT_DEG = np.array([0.0, -120.0, 120.0])


@dataclass(frozen=True)
class ControlledClosing:
    """Result of :func:`controlled_closing`.

    Attributes
    ----------
    optimal_angle_deg : ndarray, shape (n_windings,)
        Angle alpha of each winding's voltage v = sin(omega*t + alpha) at which its prospective
        flux equals its residual flux, arccos(-b_r) in [0, 180] [deg].
    strategy : str
        Pole timing used.
    closing_angle_deg : float
        Phase-A voltage angle when the first pole closes, with no error [deg].
    pole_delay_s : ndarray, shape (n_phases,)
        Pole closing instants after the first pole [s].
    flux_offset_pu : ndarray, shape (n_windings,)
        Centre of each winding's flux swing with no error, b_r + cos(angle at closing); 0 is a
        perfect closing [pu of lambda_N].
    errors_ms : ndarray, shape (n_errors,)
        Closing-time errors, common to every pole (positive: late) [ms].
    peaks_a : ndarray, shape (n_errors, n_lines)
        First peak of each line for each error [A].
    worst_peak_a : ndarray, shape (n_errors,)
        Largest line peak for each error [A].
    approximations : tuple of str
        What the solver approximates.
    """

    optimal_angle_deg: FloatArray
    strategy: str
    closing_angle_deg: float
    pole_delay_s: FloatArray
    flux_offset_pu: FloatArray
    errors_ms: FloatArray
    peaks_a: FloatArray
    worst_peak_a: FloatArray
    approximations: tuple[str, ...]


@dataclass(frozen=True)
class ToleranceWindow:
    """Result of :func:`tolerance_window`.

    Attributes
    ----------
    half_width_ms : float
        Largest w such that every error in [-w, w] keeps the peak below the target; 0 when even
        the exact instant does not [ms].
    early_limit_ms, late_limit_ms : float
        Where the peak first reaches the target on each side (negative: early) [ms].
    bounded : bool
        False when the peak stays below the target over the whole searched range, so the window
        is at least ``half_width_ms``.
    target_a : float
        Target peak [A].
    peak_at_optimum_a : float
        Largest line peak with no error [A].
    """

    half_width_ms: float
    early_limit_ms: float
    late_limit_ms: float
    bounded: bool
    target_a: float
    peak_at_optimum_a: float


def _residual_vector(circuit: EquivalentCircuit, residual_flux_pu: ArrayLike) -> FloatArray:
    res = np.asarray(residual_flux_pu, dtype=float)
    res = np.broadcast_to(res, (circuit.phases,)).copy() if res.ndim == 0 else res
    if res.shape != (circuit.phases,):
        raise ParameterError("residual_flux_pu", res.tolist(), f"{circuit.phases} values")
    if not np.all(np.isfinite(res)) or np.any(np.abs(res) > 1.0):
        raise ParameterError("residual_flux_pu", res.tolist(), "finite values in [-1, 1]")
    return res


def _closing_plan(
    circuit: EquivalentCircuit, res: FloatArray, strategy: str
) -> tuple[FloatArray, float, FloatArray]:
    """Optimal angles per winding, phase-A angle at the first pole, and the pole delays [s]."""
    if strategy not in STRATEGIES:
        raise ParameterError("strategy", strategy, " or ".join(STRATEGIES))
    delta = circuit.connection == "delta"
    if delta and strategy != "simultaneous":
        raise ParameterError(
            "strategy", strategy, "simultaneous for a delta winding (each needs two poles)"
        )
    optimal: FloatArray = np.degrees(np.arccos(-res))
    period = 1.0 / circuit.frequency_hz
    m = circuit.phases
    shift = _PHASE_SHIFT_DEG[:m]
    ref = int(np.argmax(np.abs(res)))  # the winding whose residual matters most
    # phase-A angle at which the reference winding's voltage is at its optimal angle (a delta
    # winding's line-to-line voltage leads its first phase by 30 degrees)
    alpha_a = float(optimal[ref] - shift[ref] - (30.0 if delta else 0.0))
    if strategy == "simultaneous" or m == 1:
        delays = np.zeros(m)
    elif strategy == "first_phase_then_quarter_cycle":
        delays = np.full(m, 0.25 * period)
        delays[ref] = 0.0
    else:  # independent: each pole at the first instant its winding is at its optimum
        phase_a_at = optimal - shift  # phase-A angle at which winding k should close [deg]
        delays = np.mod(phase_a_at - alpha_a, 360.0) / 360.0 * period
        first = int(np.argmin(delays))
        alpha_a = float(phase_a_at[first])
        delays = np.mod(phase_a_at - alpha_a, 360.0) / 360.0 * period
    return optimal, float(np.mod(alpha_a, 360.0)), delays


def controlled_closing(
    circuit: EquivalentCircuit,
    residual_flux_pu: ArrayLike,
    *,
    errors_ms: ArrayLike | None = None,
    strategy: str = "simultaneous",
    cycles: float = 2.0,
    max_steps: int | None = None,
) -> ControlledClosing:
    """Peak after a controlled closing aimed at the residual flux, against the closing-time error.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The transformer and its source (single phase, grounded or ungrounded wye, or delta
        with the simultaneous strategy) [-].
    residual_flux_pu : array_like, shape (n_windings,) or scalar
        Residual flux of each winding, in [-1, 1] [pu of lambda_N].
    errors_ms : array_like or None
        Closing-time errors common to every pole, each within +-1 cycle (positive: late); None
        for 81 values over +-1/4 cycle [ms].
    strategy : str
        ``"simultaneous"``: every pole at the optimal instant of the winding with the largest
        |residual|; ``"first_phase_then_quarter_cycle"``: that pole at its optimum, the others a
        quarter cycle later; ``"independent"``: each pole at its own winding's optimum (the
        first opportunity within one cycle) [-].
    cycles : float
        Window searched for the first peak after the last pole closes, in (0, 60] [cycles].
    max_steps : int or None
        Compute limit of the solver call, see :func:`core.energization.energize.simulate` [-].

    Returns
    -------
    ControlledClosing

    Raises
    ------
    ParameterError
        On a value out of range, or a pole-by-pole strategy for a delta winding.

    Notes
    -----
    With v = sqrt(2)*V*sin(omega*t + alpha) the prospective steady-state flux is
    -lambda_N*cos(omega*t + alpha); closing where it equals the residual flux b_r,
    alpha = arccos(-b_r), leaves no flux offset
    (:func:`core.energization.closed_form.flux_offset_pu` is 0), so only magnetising current flows.
    For b_r = 0 this is the voltage peak, alpha = 90 deg. Of the two solutions +-arccos(-b_r) the
    one in [0, 180] deg (closing while the voltage is positive) is used. A closing-time error e
    shifts every winding's closing angle by 360*f*e deg. The quarter-cycle strategy is meant for
    cores whose limbs share flux; with the solver's magnetically independent phases its later poles
    are not flux-matched (reported in ``flux_offset_pu``).

    References
    ----------
    J. H. Brunke, K. J. Froehlich, "Elimination of transformer inrush currents by controlled
    switching," IEEE Trans. Power Delivery 16(2), 2001, parts I and II (from memory).
    """
    res = _residual_vector(circuit, residual_flux_pu)
    window = checks.in_range("cycles", cycles, 0.0, 60.0, open_low=False)
    if window <= 0.0:
        raise ParameterError("cycles", cycles, "a number in (0, 60]")
    f = circuit.frequency_hz
    cycle_ms = 1e3 / f
    if errors_ms is None:
        err: FloatArray = np.linspace(-0.25 * cycle_ms, 0.25 * cycle_ms, 81)
    else:
        err = np.atleast_1d(np.asarray(errors_ms, dtype=float))
        if err.ndim != 1 or not np.all(np.isfinite(err)) or np.any(np.abs(err) > cycle_ms):
            raise ParameterError(
                "errors_ms", err.tolist(), f"finite values within +-{cycle_ms:.4g} ms"
            )
    optimal, alpha_a, delays = _closing_plan(circuit, res, strategy)
    winding_angle = winding_angles(circuit, alpha_a, delays)
    offset = closed_form.flux_offset_pu(res, winding_angle)
    sim = energize.simulate(
        circuit,
        alpha_a + 360.0 * f * err * 1e-3,
        res,
        delays,
        duration_s=window / f + float(delays.max()),
        max_steps=max_steps,
    )
    peaks = energize.refined_abs_peak(sim.line_current_a)
    return ControlledClosing(
        optimal_angle_deg=optimal,
        strategy=strategy,
        closing_angle_deg=alpha_a,
        pole_delay_s=delays,
        flux_offset_pu=offset,
        errors_ms=err,
        peaks_a=peaks,
        worst_peak_a=peaks.max(axis=1),
        approximations=sim.approximations,
    )


def _worst_peak(
    circuit: EquivalentCircuit,
    res: FloatArray,
    errors_ms: Sequence[float] | FloatArray,
    strategy: str,
    cycles: float,
    max_steps: int | None,
) -> FloatArray:
    out = controlled_closing(
        circuit, res, errors_ms=errors_ms, strategy=strategy, cycles=cycles, max_steps=max_steps
    )
    return out.worst_peak_a


def tolerance_window(
    circuit: EquivalentCircuit,
    residual_flux_pu: ArrayLike,
    target_a: float,
    *,
    strategy: str = "simultaneous",
    max_error_ms: float | None = None,
    grid_points: int = 201,
    resolution_ms: float = 1e-3,
    cycles: float = 2.0,
    max_steps: int | None = None,
) -> ToleranceWindow:
    """Largest symmetric closing-time error band that keeps the peak below a target.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The transformer and its source, see :func:`controlled_closing` [-].
    residual_flux_pu : array_like
        Residual flux per winding, in [-1, 1] [pu of lambda_N].
    target_a : float
        Largest acceptable line peak, > 0 [A].
    strategy : str
        Pole timing, see :func:`controlled_closing` [-].
    max_error_ms : float or None
        Searched range +-max_error_ms, in (0, 1 cycle]; None for a quarter cycle [ms].
    grid_points : int
        Points of the error grid over +-max_error_ms, odd, in [11, 100001] [-].
    resolution_ms : float
        Bisection stops when the bracket is this narrow, in [1e-6, 1] [ms].
    cycles : float
        Window searched for the first peak, see :func:`controlled_closing` [cycles].
    max_steps : int or None
        Compute limit per solver call [-].

    Returns
    -------
    ToleranceWindow

    Raises
    ------
    ParameterError
        On a value out of range.

    Notes
    -----
    The peak is simulated on a uniform error grid (including 0); on each side the first grid
    point at or above the target brackets the limit with its inner neighbour, and bisection
    narrows the bracket to ``resolution_ms``, keeping the inner (safe) end. The half width is the
    smaller of the two limits. An excursion narrower than the grid step can be missed.
    """
    res = _residual_vector(circuit, residual_flux_pu)
    target = checks.in_range("target_a", target_a, 0.0, math.inf, open_low=False)
    if target <= 0.0:
        raise ParameterError("target_a", target_a, "a number > 0")
    cycle_ms = 1e3 / circuit.frequency_hz
    span = (
        0.25 * cycle_ms
        if max_error_ms is None
        else checks.in_range("max_error_ms", max_error_ms, 0.0, cycle_ms, open_low=False)
    )
    if span <= 0.0:
        raise ParameterError("max_error_ms", max_error_ms, f"a number in (0, {cycle_ms:.4g}]")
    points = checks.integer("grid_points", grid_points, 11, 100_001)
    if points % 2 == 0:
        raise ParameterError("grid_points", grid_points, "an odd integer")
    tol = checks.in_range("resolution_ms", resolution_ms, 1e-6, 1.0, open_low=False)
    grid: FloatArray = np.linspace(-span, span, points)
    worst = _worst_peak(circuit, res, grid, strategy, cycles, max_steps)
    mid = points // 2
    at_optimum = float(worst[mid])
    if at_optimum >= target:
        return ToleranceWindow(0.0, 0.0, 0.0, True, target, at_optimum)

    limits: list[float] = []
    bounded = False
    for direction in (-1, 1):
        idx = np.arange(mid, points) if direction > 0 else np.arange(mid, -1, -1)
        fail = np.nonzero(worst[idx] >= target)[0]
        if fail.size == 0:
            limits.append(direction * span)
            continue
        bounded = True
        inner, outer = float(grid[idx[fail[0] - 1]]), float(grid[idx[fail[0]]])
        while abs(outer - inner) > tol:
            trial = 0.5 * (inner + outer)
            if float(_worst_peak(circuit, res, [trial], strategy, cycles, max_steps)[0]) >= target:
                outer = trial
            else:
                inner = trial
        limits.append(inner)
    early, late = limits
    return ToleranceWindow(min(-early, late), early, late, bounded, target, at_optimum)
