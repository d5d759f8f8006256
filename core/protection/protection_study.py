"""Clearance study: candidate protective devices against a computed inrush and the damage limit.

One call for the ``/v1/clearance`` operation: simulate the energisation (at the worst closing
angle for the given residual flux, or at the given angle), derive the curves devices are compared
with (:func:`core.protection.device_operation.inrush_from_waveform`, its first peaks read
exactly by :func:`core.energization.peaks.first_peaks` as the peak operation reads them), build
the through-fault damage curve of the transformer (:mod:`core.protection.damage_curves`),
evaluate every device on both sides (:func:`core.protection.coordination.evaluate`), search the
coordination window of each inverse-time relay (:func:`core.protection.coordination.
coordination_window`), and tabulate each device's curves for the TCC figure. The devices are
taken to sit on the energised side, seeing its line currents.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace
from typing import Any, Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from core.energization import energize, peaks
from core.energization.switching_event import SwitchingEvent, plain_event_arrays
from core.errors import ParameterError
from core.protection import coordination, damage_curves, device_operation, fuse_breaker_curves
from core.transformer.circuit_model import EquivalentCircuit

FloatArray = NDArray[np.float64]

__all__ = [
    "ClearanceStudy",
    "DeviceCurves",
    "clearance_study",
    "device_curves",
    "source_impedance_pu",
]


@dataclass(frozen=True)
class DeviceCurves:
    """A device's curves tabulated for plotting."""

    name: str
    current_a: FloatArray  #: [A]
    minimum_time_s: FloatArray  #: must-not-operate curve; inf: no operation, nan: no data [s]
    maximum_time_s: FloatArray  #: clearing curve; nan where not defined [s]
    minimum_label: str = ""  #: what the minimum curve is (says "derated" where it is)
    maximum_label: str = ""  #: what the maximum curve is
    #: vertical edges (current [A], lower time [s], upper time [s]); a lower time of 0 runs to
    #: the bottom of the axes, an upper time of +inf to the top
    verticals: tuple[tuple[float, float, float], ...] = ()


@dataclass(frozen=True)
class ClearanceStudy:
    """Result of :func:`clearance_study`."""

    closing_angle_deg: float
    closing_angle_source: str
    duration_s: float
    rated_current_a: float
    inrush: device_operation.InrushCurves
    damage: damage_curves.DamageCurve | None
    evaluation: coordination.Evaluation
    windows: tuple[coordination.CoordinationWindow, ...]
    curves: tuple[DeviceCurves, ...]  #: devices with a time-current curve only
    approximations: tuple[str, ...]
    warnings: tuple[tuple[str, str], ...]


def source_impedance_pu(circuit: EquivalentCircuit, rating_va: float) -> float:
    """Source impedance magnitude on the transformer's own base.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The energisation circuit (its source resistance and inductance, wye-equivalent) [-].
    rating_va : float
        Transformer rating [VA].

    Returns
    -------
    float
        |Z_s| / Z_base with Z_base = V_LL^2 / S (the wye-equivalent base; V^2/S for one phase)
        [pu of transformer base].
    """
    z_base = circuit.line_voltage_v**2 / rating_va
    x = 2.0 * math.pi * circuit.frequency_hz * circuit.source_inductance_h
    return math.hypot(circuit.source_resistance_ohm, x) / z_base


def device_curves(
    device: device_operation.Device, grid: ArrayLike, opening_time_s: float | None = None
) -> DeviceCurves:
    """A device's two curves over a current grid, each only where it has data, for plotting.

    Parameters
    ----------
    device : Relay, Fuse or Breaker
        The device [-].
    grid : array_like
        Currents to tabulate at; the device's own points and pickups are added [A].
    opening_time_s : float or None
        Breaker opening time added to a relay's curve [s].

    Returns
    -------
    DeviceCurves
        A fuse's derated minimum melt is NaN outside its table's currents (scaled by the
        current factor), its total clearing outside its own table: a table says nothing beyond
        its points. A breaker's and a relay's instantaneous pickups carry vertical edges.

    Raises
    ------
    ParameterError
        On a differential (no time-current curve), or currents or opening time out of range.

    Notes
    -----
    Each device class has its own tabulation (a table keyed by class). Derated minimum melt
    t'(I) = k_t·t_mm(I/k_i) (see :class:`core.protection.device_operation.Fuse`).
    """
    g = np.asarray(grid, dtype=float)
    return _TABULATORS[type(device)](device, g, opening_time_s)


def _tabulated(
    device: device_operation.Device,
    g: FloatArray,
    opening_time_s: float | None,
    labels: tuple[str, str] = ("minimum curve", "clearing curve"),
    verticals: tuple[tuple[float, float, float], ...] = (),
) -> DeviceCurves:
    """The device's band at every current of ``g`` (a differential raises: it has no band)."""
    band = device_operation.device_times(device, g, opening_time_s=opening_time_s)
    return DeviceCurves(
        device.name,
        g,
        np.asarray(band.minimum_time, dtype=float),
        np.asarray(band.maximum_time, dtype=float),
        labels[0],
        labels[1],
        verticals,
    )


def _fuse_curves(
    device: device_operation.Fuse, g: FloatArray, opening_time_s: float | None
) -> DeviceCurves:
    """Each of a fuse's curves only over its own table's currents (the melt's scaled by k_i)."""
    k = device.melt_current_factor or device_operation.DEFAULT_MELT_CURRENT_FACTOR
    kt = device.melt_time_factor or 1.0
    melt = device.minimum_melt.current * k
    tc = device.total_clearing
    g = np.union1d(g, np.concatenate((melt, tc.current if tc is not None else [])))
    band = device_operation.device_times(device, g, opening_time_s=opening_time_s)
    low = np.where((g >= melt[0]) & (g <= melt[-1]), band.minimum_time, np.nan)
    high = np.asarray(band.maximum_time, dtype=float)
    if tc is not None:
        high = np.where((g >= tc.current[0]) & (g <= tc.current[-1]), high, np.nan)
    low_label = f"minimum melt derated (current x {k:g}" + (
        f", time x {kt:g})" if kt != 1.0 else ")"
    )
    return DeviceCurves(device.name, g, low, high, low_label, "total clearing")


def _breaker_curves(
    device: device_operation.Breaker, g: FloatArray, opening_time_s: float | None
) -> DeviceCurves:
    """A breaker's band with its pickups' tolerance edges and the instantaneous's verticals."""
    verticals: list[tuple[float, float, float]] = []
    unit = device.trip_unit
    edges = [unit.long_time_pickup, unit.short_time_pickup, unit.instantaneous_pickup]
    tol = [unit.pickup_tolerance, unit.pickup_tolerance, unit.instantaneous_tolerance]
    extra = [p * (1 + s * q) for p, q in zip(edges, tol, strict=True) if p for s in (-1, 1)]
    g = np.union1d(g, extra)
    p = unit.instantaneous_pickup
    if p is not None:
        q = unit.instantaneous_tolerance
        timed = replace(unit, instantaneous_pickup=None)
        below = fuse_breaker_curves.lv_breaker_trip_band(np.array([(1 - q) * p]), timed)
        above = fuse_breaker_curves.lv_breaker_trip_band(np.array([(1 + q) * p]), timed)
        t_lo, t_hi = float(below.minimum_time[0]), float(above.maximum_time[0])
        verticals.append(((1 - q) * p, 0.0, t_lo))
        clear = unit.instantaneous_clearing_time
        if t_hi > clear:
            verticals.append(((1 + q) * p, clear, t_hi))
    labels = ("minimum band", "maximum band")
    return _tabulated(device, g, opening_time_s, labels, tuple(verticals))


def _relay_curves(
    device: device_operation.Relay, g: FloatArray, opening_time_s: float | None
) -> DeviceCurves:
    """A relay's curve, with a vertical edge at its instantaneous pickup."""
    verticals: list[tuple[float, float, float]] = []
    p_inst = device.instantaneous_pickup_a
    if p_inst is not None:
        g = np.union1d(g, [p_inst])
        t_at = device_operation.device_times(replace(device, instantaneous_pickup_a=None), p_inst)
        verticals.append((p_inst, 0.0, float(t_at.minimum_time)))
    labels = ("relay curve", "relay curve + opening time")
    return _tabulated(device, g, opening_time_s, labels, tuple(verticals))


#: Each device class's tabulation for the TCC: :func:`device_curves` looks the class up here. A
#: differential has no curve: :func:`_tabulated` raises the device error for it.
_TABULATORS: dict[type, Callable[[Any, FloatArray, float | None], DeviceCurves]] = {
    device_operation.Relay: _relay_curves,
    device_operation.Fuse: _fuse_curves,
    device_operation.Breaker: _breaker_curves,
    device_operation.Differential: _tabulated,
}


def clearance_study(
    circuit: EquivalentCircuit,
    event: SwitchingEvent,
    devices: Sequence[device_operation.Device],
    *,
    closing: Literal["given", "worst"] = "given",
    rating_va: float,
    impedance_percent: float,
    duration_s: float = 2.0,
    frequent_faults: bool = False,
    insulation: damage_curves.Insulation = "liquid",
    opening_time_s: float | None = None,
    damage_current_factor: float | None = None,
    check_from_current: float | None = None,
    overload_by_secondary_device: bool = True,
    windows: bool = True,
    samples_per_cycle: int = 128,
    max_steps: int | None = None,
) -> ClearanceStudy:
    """Evaluate devices against this transformer's inrush and through-fault damage limit.

    Parameters
    ----------
    circuit : EquivalentCircuit
        Energisation circuit (nameplate mode) [-].
    event : SwitchingEvent
        The energisation (:func:`core.energization.switching_event.switching_event` for this
        circuit, a plain closing: no resistor, no ramp): closing angle, residual flux per
        winding, pole closing delays [-].
    devices : sequence of Relay, Fuse, Breaker or Differential
        Candidates (distinct names), in amperes on the energised side; a differential is judged
        on the sampled line currents and has no tabulated curve [-].
    closing : str
        ``"given"``: the event's closing angle; ``"worst"``: the worst closing angle for its
        residual flux and pole delays (found by
        :func:`core.energization.energize.worst_closing_angle`) [-].
    rating_va : float
        Transformer rating, for the damage category [VA].
    impedance_percent : float
        Transformer impedance, for the through-fault current [%].
    duration_s : float
        Simulated inrush duration [s].
    frequent_faults : bool
        Use the frequent-fault damage curve (IEEE C57.109 categories II-IV) [-].
    insulation : str
        ``"liquid"`` or ``"dry"`` [-].
    opening_time_s : float or None
        Breaker opening time added to relay curves; None for the default of
        :mod:`core.protection.device_operation` [s].
    damage_current_factor : float or None
        Damage-curve current multiplier for the winding-to-line relation (e.g. 0.58 for a
        delta-wye unit and a secondary line-to-ground fault, common practice) [-].
    check_from_current : float or None
        Lowest current of the protection check; None: the default of
        :func:`core.protection.coordination.evaluate` [A].
    overload_by_secondary_device : bool
        A secondary-side device carries the overload range below the check's start [-].
    windows : bool
        Search the coordination window of each inverse-time relay [-].
    samples_per_cycle : int
        Output samples per cycle of the simulation [-].
    max_steps : int or None
        Compute limit per simulation call [-].

    Returns
    -------
    ClearanceStudy

    Raises
    ------
    ParameterError
        On an inconsistent request (e.g. a rating outside the C57.109 categories).
    """
    if not devices:
        raise ParameterError("devices", 0, "at least one device")
    if closing not in ("given", "worst"):
        raise ParameterError("closing", closing, "given or worst")
    residual_flux_pu, pole_delay_s = plain_event_arrays(circuit, event)
    f = circuit.frequency_hz
    warnings: list[tuple[str, str]] = list(circuit.warnings)
    if closing == "worst":
        worst = energize.worst_closing_angle(
            circuit, residual_flux_pu, pole_delay_s, max_steps=max_steps
        )
        angle = worst.closing_angle_deg
        angle_source = "worst closing angle for the given residual flux (simulated search)"
    else:
        angle = float(event.closing_angle_deg)
        angle_source = "given"
    sim = energize.simulate(
        circuit,
        angle,
        residual_flux_pu,
        pole_delay_s,
        duration_s=duration_s,
        samples_per_cycle=samples_per_cycle,
        max_steps=max_steps,
    )
    lines = ("A",) if circuit.phases == 1 else ("A", "B", "C")
    # the first peak of each line read exactly, as the peak and envelope operations read it
    exact = peaks.first_peaks(
        [circuit], np.array([angle]), np.asarray(residual_flux_pu, dtype=float)[None, :], sim
    )
    inrush = device_operation.inrush_from_waveform(
        sim.time_s,
        sim.line_current_a[0],
        f,
        rated_current_a=circuit.rated_line_current_a,
        lines=lines,
        peak=device_operation.Extreme(exact.peak_a[0], exact.time_s[0]),
    )
    z_pu = impedance_percent / 100.0
    curve = damage_curves.through_fault_damage_curve(
        rating_va / 1e3,
        circuit.phases,
        circuit.rated_line_current_a,
        z_pu,
        source_impedance_pu(circuit, rating_va),
        frequent=frequent_faults,
        insulation=insulation,
    )
    evaluation = coordination.evaluate(
        inrush,
        devices,
        curve,
        opening_time_s=opening_time_s,
        damage_current_factor=damage_current_factor,
        check_from_current=check_from_current,
        overload_by_secondary_device=overload_by_secondary_device,
    )
    found: list[coordination.CoordinationWindow] = []
    start = coordination.check_start(curve, check_from_current, overload_by_secondary_device)[0]
    if windows:
        for dev in devices:
            if isinstance(dev, device_operation.Relay):
                found.append(
                    coordination.coordination_window(
                        dev,
                        inrush,
                        curve,
                        opening_time_s=opening_time_s,
                        damage_current_factor=damage_current_factor,
                        check_from_current=start,
                    )
                )
    i_r = circuit.rated_line_current_a
    grid = np.geomspace(0.5 * i_r, 1.5 * curve.short_circuit_current, 240)
    curved = [dev for dev in devices if dev.has_curve]
    tabulated = [device_curves(dev, grid, opening_time_s) for dev in curved]
    if duration_s * f < 30:
        warnings.append(
            (
                "short_inrush_record",
                f"only {duration_s:g} s of inrush simulated: margins of slow devices are "
                "judged on that record; the evaluation warns when the tightest point is its end",
            )
        )
    return ClearanceStudy(
        closing_angle_deg=angle,
        closing_angle_source=angle_source,
        duration_s=float(sim.time_s[-1]),
        rated_current_a=i_r,
        inrush=inrush,
        damage=curve,
        evaluation=evaluation,
        windows=tuple(found),
        curves=tuple(tabulated),
        approximations=(
            *sim.approximations,
            "protective devices assumed on the energised side, seeing its line currents",
        ),
        warnings=tuple(warnings) + evaluation.warnings,
    )
