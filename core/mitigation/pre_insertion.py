"""Pre-insertion resistors: the smallest resistance that meets a criterion, and the energy it takes.

A pre-insertion resistor sits in each breaker pole for the first part of the energisation and is
then bypassed (:func:`core.energization.energize.simulate` models it in the line). It damps the
inrush in two ways: it adds to the resistance of the saturated loop, so the first peak is lower
(I ~ sqrt(2)*V*(2 + b_R - b_S)/|R + jX|, Wang et al.), and it drains the flux offset faster while
inserted, so less is left when it is bypassed. More resistance lowers the peak; the insertion time
must be long enough that the offset left at the bypass does not bring the inrush back.

This module finds the smallest resistance that keeps a metric (the design-basis peak, or the
generator dip) within a limit, by a logarithmic scan and bisection, and integrates the energy the
resistor absorbs. It takes the metric as a function, so it knows nothing of generators.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from core.energization import energize
from core.energization.switching_event import SwitchingEvent
from core.errors import ParameterError
from core.transformer.circuit_model import EquivalentCircuit

FloatArray = NDArray[np.float64]

__all__ = [
    "NEUTRAL_EXTRAS",
    "ResistorSizing",
    "insertion_energy_j",
    "largest_insertion_energy_j",
    "smallest_resistance",
]

#: Values of :func:`core.energization.energize.simulate`'s mitigation arguments that change nothing.
NEUTRAL_EXTRAS: dict[str, float] = {
    "insertion_resistance_ohm": 0.0,
    "insertion_time_s": 0.0,
    "voltage_start_pu": 1.0,
    "voltage_hold_s": 0.0,
    "voltage_rise_s": 0.0,
}
#: Scan of the resistance as multiples of the scale given (the saturated-loop reactance):
#: 1e-2 to 1e2 in 9 logarithmic steps (a factor sqrt(10) apart), then this many bisections of
#: log R in the bracket, which leaves it 10^(1/2/2^9) - 1 = 0.22 % wide [-].
SCAN = np.geomspace(1e-2, 1e2, 9)
BISECTIONS = 9


@dataclass(frozen=True)
class ResistorSizing:
    """Result of :func:`smallest_resistance`.

    Attributes
    ----------
    resistance_ohm : float
        The resistance chosen [ohm].
    status : str
        ``"found"`` (the smallest meeting the limit, to the bisection's resolution),
        ``"below_range"`` (the smallest scanned value already meets it; a smaller one may too) or
        ``"not_reached"`` (none scanned meets it; the one with the lowest metric is returned).
    metric : float
        The metric at that resistance [its unit].
    evaluations : int
        Resistances evaluated [-].
    """

    resistance_ohm: float
    status: str
    metric: float
    evaluations: int


def smallest_resistance(
    metric: Callable[[FloatArray], FloatArray],
    limit: float,
    scale_ohm: float,
    *,
    scan: ArrayLike = SCAN,
    bisections: int = BISECTIONS,
) -> ResistorSizing:
    """The smallest resistance whose metric is at or below a limit.

    Parameters
    ----------
    metric : callable
        Maps resistances, shape (k,) [ohm], to the metric for each, shape (k,) (a peak [A], a
        dip [%]); expected to fall as the resistance grows [-].
    limit : float
        Largest acceptable metric [its unit].
    scale_ohm : float
        Resistance scale; the scan covers ``scan`` times it, > 0 [ohm].
    scan : array_like
        Increasing multiples of the scale evaluated in one call [-].
    bisections : int
        Bisections of the bracket found, on a logarithmic scale, in [0, 60] [-].

    Returns
    -------
    ResistorSizing

    Raises
    ------
    ParameterError
        On a non-finite limit, a non-positive scale or a bad scan.

    Notes
    -----
    The scan brackets the first crossing; bisection of log R narrows it to a factor of
    (scan step)^(1/2^bisections) and returns the end that meets the limit. A metric that is not
    monotone can hide a smaller passing value between scan points.
    """
    if not math.isfinite(limit):
        raise ParameterError("limit", limit, "a finite number")
    if not (math.isfinite(scale_ohm) and scale_ohm > 0.0):
        raise ParameterError("scale_ohm", scale_ohm, "a finite number > 0")
    grid = np.asarray(scan, dtype=float) * scale_ohm
    if grid.ndim != 1 or grid.size < 2 or np.any(np.diff(grid) <= 0.0):
        raise ParameterError("scan", grid.size, "at least two increasing multiples")
    if not (isinstance(bisections, int) and 0 <= bisections <= 60):
        raise ParameterError("bisections", bisections, "an integer in [0, 60]")
    values = np.asarray(metric(grid), dtype=float)
    count = grid.size
    ok = values <= limit
    if not ok.any():
        k = int(np.argmin(values))
        return ResistorSizing(float(grid[k]), "not_reached", float(values[k]), count)
    first = int(np.argmax(ok))
    if first == 0:
        return ResistorSizing(float(grid[0]), "below_range", float(values[0]), count)
    lo, hi, at_hi = float(grid[first - 1]), float(grid[first]), float(values[first])
    for _ in range(bisections):
        mid = math.sqrt(lo * hi)
        v = float(np.asarray(metric(np.array([mid])), dtype=float)[0])
        count += 1
        if v <= limit:
            hi, at_hi = mid, v
        else:
            lo = mid
    return ResistorSizing(hi, "found", at_hi, count)


def insertion_energy_j(
    time_s: ArrayLike, line_current_a: ArrayLike, resistance_ohm: float, insertion_time_s: float
) -> FloatArray:
    """Energy a pre-insertion resistor absorbs: R * sum over lines of the integral of i^2.

    Parameters
    ----------
    time_s : array_like, shape (n,)
        Uniform sample times from 0 [s].
    line_current_a : array_like, shape (..., n_lines, n)
        Line currents, one resistor in each line [A].
    resistance_ohm : float
        Resistance per line [ohm].
    insertion_time_s : float
        Bypass instant; the integral runs from 0 to it (within the record) [s].

    Returns
    -------
    ndarray, shape (...)
        Energy [J].

    Notes
    -----
    Trapezoid rule on the samples, with i^2 interpolated linearly into the last partial
    interval (Joule's law, E = integral of R*i^2 dt).
    """
    t = np.asarray(time_s, dtype=float)
    i2 = np.asarray(line_current_a, dtype=float) ** 2
    if t.ndim != 1 or t.size < 2 or i2.shape[-1] != t.size:
        raise ParameterError("time_s", t.shape, "a record matching the currents' last axis")
    end = min(max(float(insertion_time_s), 0.0), float(t[-1]))
    dt = float(t[1] - t[0])
    k = min(int(end // dt), t.size - 1)
    whole = np.trapezoid(i2[..., : k + 1], dx=dt, axis=-1) if k > 0 else np.zeros(i2.shape[:-1])
    part = end - k * dt
    if part > 0.0 and k + 1 < t.size:
        a, b = i2[..., k], i2[..., k + 1]
        whole = whole + part * (a + 0.5 * (b - a) * part / dt)
    out: FloatArray = resistance_ohm * whole.sum(axis=-1)
    return out


def largest_insertion_energy_j(
    circuit: EquivalentCircuit,
    event: SwitchingEvent,
    *,
    step_deg: float = 5.0,
    max_steps: int | None = None,
) -> tuple[float, float]:
    """The largest resistor energy over the closing angle, and the angle that gives it.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The circuit [-].
    event : SwitchingEvent
        The energisation with its pre-insertion resistor: its residual flux per winding, pole
        closing instants, resistor and insertion time are kept; its closing angle is replaced
        by each angle of the grid [-].
    step_deg : float
        Angle grid over 0-360, in [0.5, 30] [deg].
    max_steps : int or None
        Compute limit of the solver call [-].

    Returns
    -------
    tuple of float
        (energy [J], phase-A closing angle [deg]).

    Notes
    -----
    E(alpha) = R * sum over lines of the integral of i^2 while the resistor is in
    (:func:`insertion_energy_j`), simulated for alpha = 0, step, 2*step, ... < 360 deg; the
    largest is returned.

    References
    ----------
    Joule's law; the angle grid is this project's (common practice for a worst-case scan).
    """
    if not (math.isfinite(step_deg) and 0.5 <= step_deg <= 30.0):
        raise ParameterError("step_deg", step_deg, "in [0.5, 30]")
    angles = np.arange(0.0, 360.0, step_deg)
    delay = event.pole_delay_s
    resistance_ohm, insertion_time_s = event.insertion_resistance_ohm, event.insertion_time_s
    sim = energize.simulate(
        circuit,
        angles,
        event.residual_flux_pu,
        delay,
        duration_s=insertion_time_s + float(np.max(delay)) + 1.0 / circuit.frequency_hz,
        insertion_resistance_ohm=resistance_ohm,
        insertion_time_s=insertion_time_s,
        max_steps=max_steps,
    )
    # the solver bypasses at the instant rounded to its step
    used = float(sim.insertion_time_s[0])
    energy = insertion_energy_j(sim.time_s, sim.line_current_a, resistance_ohm, used)
    k = int(np.argmax(energy))
    return float(energy[k]), float(angles[k])
