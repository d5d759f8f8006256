"""Time-domain energisation of one transformer, many cases: the single-unit entry the studies call.

Each case is one unit alone behind its breaker on a Thevenin source (the circuit's R_s and L_s),
simulated by the network solver (:func:`core.network.run_single_unit`, the equations, states and
references in :mod:`core.network.solver`). Each energised winding obeys

    e(t) = R*i + L_s*di/dt + d(lambda)/dt,    i = f(lambda),

with e the source EMF, f the magnetising curve (:mod:`core.transformer.magnetizing`) and the
winding fluxes continuous, so that a residual flux is an initial condition. The mapping of a
case onto the network:

* grounded wye, floating wye, delta -- the unit with that connection; its winding resistance
  plus ``extra_resistance_ohm``; the EMF sqrt(2)*V_LL/sqrt(3) at alpha, alpha - 120 deg,
  alpha + 120 deg;
* single phase -- the grounded-wye unit with the winding on phase a at the winding's EMF
  sqrt(2)*V_w at alpha, whose poles b and c never close: those windings carry no current and
  their lines none, so phase a is the single-phase loop exactly;
* pole instants, residual flux and closing angle per case; the pre-insertion resistor in each
  line (between the source and the terminals) until all poles short it together; the
  reduced-voltage source as the source's EMF ramp g(t): g = g_0 until t_hold, a linear rise to 1
  over t_rise, then 1 (phases unchanged).

Cases that share a circuit, added resistance, resistor with its bypass and ramp form one
network and one kernel call; each case has its own source impedance, phases, pole instants and
fluxes there.

Approximations, reported with every result: phases are magnetically independent (a bank of
single-phase cores; the coupling of a three-limb or five-limb core is not modelled, which is
usually conservative for the peak phase); no hysteresis or core loss; a floating wye carries
current once two of its poles are closed, a delta all three windings once two poles are closed
(the two windings on the open terminal then carry one current in series); pole closing instants
are rounded to the internal step. A pre-insertion resistor is an ideal linear resistance, shorted
by all poles at once (no bypass scatter, arc or contact resistance); the reduced-voltage source
scales only the EMF, behind an unchanged source impedance and at a fixed phase; the bypass, the
end of the hold and the end of the rise are rounded to the internal step, so that no step
straddles a jump of R or a corner of g, and g is evaluated at every Runge-Kutta stage on the
piece its step lies on.

Step plan (:mod:`core.energization.energize_plan`): the network solver's rule
(:func:`core.network.step_rule`: at least 128 steps per cycle, at most a quarter of the
shortest saturated time constant (L_air + L_s)/(R_w + 2*R_s + R_extra) over the batch, so that
a case gives the same result in any batch of one step). While a case's resistor is in, its
loop is faster, (L_air + L_s)/(R + k*R_ins), k = 3 for a delta (the line resistance enters its
windings' loops through M = [[2,-1,-1],[-1,2,-1],[-1,-1,2]], whose non-zero eigenvalue is 3),
1 otherwise: the step stays the one planned without the resistor, and until the bypass each
step of that case is split into the fewest equal sub-steps that keep four of them within that
time constant (one when the step already does), so that a large resistor costs sub-steps only
while it is in and only for its own case. ``max_steps`` counts winding-steps (cases x windings
x steps, a split step counting its sub-steps; :mod:`core.cost`).

Accuracy (tests/references/test_solver_vs_scipy.py), as the worst of the first ten per-cycle
peaks relative to the first peak, read from the default 128 samples per cycle, against scipy's
Radau at rtol 1e-9 (for the floating neutral DOP853 at rtol 1e-10 on a system that holds the
current sum exactly): single phase and grounded wye at most 3.2e-5; delta 2.3e-6 on a 250 MVA
source, 2.6e-4 on 50 MVA and 2.6e-4 on 20 MVA; ungrounded wye 2.3e-3 on an ideal source, 1.7e-3
on 250 MVA and 1.6e-3 on 20 MVA. Most of the floating-neutral figure is the reading of a peak
from 128 samples per cycle (a parabola through the three around the largest), which its current,
with a corner wherever a phase crosses the knee, defeats most; more samples per cycle reduce it
(2.3e-3 becomes 1.2e-4 at 2048). The studies read their peaks exactly instead
(:mod:`core.energization.peaks`: within 6.3e-6 of the first peak against a piecewise-exact
reference, tests/references/test_piecewise_reference.py). With the mitigation, against the
same references integrated interval by interval between the bypass and the ramp's corners, as
the worst of the ten peaks relative to the largest: resistor and ramp within 2.8e-3 (floating
wye with a resistor, the peak reading again), a large resistor (5 and 50 times the saturated
loop's reactance, in for the first cycle) within 7.2e-3, most of it the peak of the clipped
current read from 128 samples per cycle (within 7.9e-5 from 512); the figures per case are in
the reference tests. These were measured on the single-unit kernels this module ran before; the
network solver gives the same waveforms to 1e-11 of the largest current (measured over the
three connections and curve kinds, with resistor and ramp) except (a) a grounded wye on a
smooth-knee curve behind a source, where the earlier kernel integrated lambda itself and this
solver a loop flux (2.6e-3 of the largest current apart on a 50 MVA source; against a 2048-step
solution the network solver is within 4.5e-7, tests/core/network/), (b) a delta with staggered
poles, whose windings now carry the series path while one pole is open, and (c) a floating wye
with staggered poles (1.3e-3 apart while two poles are closed); both network figures are
checked against an independent scipy reference (tests/references/test_network_vs_scipy.py).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from core.energization import energize_plan
from core.errors import LimitError, ParameterError
from core.network.solver import run_single_unit
from core.transformer.circuit_model import EquivalentCircuit

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]

__all__ = [
    "APPROXIMATIONS",
    "Simulation",
    "WorstCase",
    "refined_abs_peak",
    "simulate",
    "worst_closing_angle",
]

TOPOLOGY = {"single_phase": 0, "wye_grounded": 0, "wye": 1, "delta": 2}
APPROXIMATIONS = {
    "single_phase": (
        "no hysteresis or core loss: residual flux is an initial condition on a single-valued "
        "curve",
    ),
    "wye_grounded": (
        "phases magnetically independent (bank of single-phase cores); three-limb core "
        "coupling not modelled (usually conservative for the peak phase)",
        "source zero-sequence impedance taken equal to its positive-sequence impedance",
        "no hysteresis or core loss: residual flux is an initial condition on a single-valued "
        "curve",
    ),
    "wye": (
        "phases magnetically independent (bank of single-phase cores); three-limb core "
        "coupling not modelled (usually conservative for the peak phase)",
        "floating neutral: currents flow only once two poles are closed",
        "no hysteresis or core loss: residual flux is an initial condition on a single-valued "
        "curve",
    ),
    "delta": (
        "phases magnetically independent (bank of single-phase cores); three-limb core "
        "coupling not modelled (usually conservative for the peak phase)",
        "delta: with one pole open the two windings on its terminal carry one current in "
        "series; all three are energised once two poles are closed",
        "no hysteresis or core loss: residual flux is an initial condition on a single-valued "
        "curve",
    ),
}
_PHASE_SHIFT = np.array([0.0, -2.0 * math.pi / 3.0, 2.0 * math.pi / 3.0])


@dataclass(frozen=True)
class Simulation:
    """Result of :func:`simulate`.

    Attributes
    ----------
    time_s : ndarray, shape (n_samples,)
        Sample instants from the closing command, t = 0 [s].
    winding_current_a : ndarray, shape (n_cases, n_windings, n_samples)
        Current in each energised winding [A].
    line_current_a : ndarray, shape (n_cases, n_phases, n_samples)
        Line currents [A]: the winding currents for wye and single-phase, their differences for
        delta.
    samples_per_cycle : int
        Output samples per cycle.
    steps_per_cycle : int
        Internal integration steps per cycle.
    pole_delay_s : ndarray, shape (n_cases, n_phases)
        Pole closing instants actually used, after rounding to the internal step [s].
    insertion_time_s : ndarray, shape (n_cases,)
        Bypass instants of the pre-insertion resistor actually used, after rounding to the
        internal step [s].
    insertion_substeps : ndarray of int, shape (n_cases,)
        Equal sub-steps each internal step is split into while the pre-insertion resistor is in
        (1 without one, when it is bypassed at the first step, or when the step is already
        short enough) [-].
    voltage_ramp_s : ndarray, shape (n_cases, 2)
        End of the reduced-voltage hold and end of the rise actually used, after rounding to
        the internal step [s].
    approximations : tuple of str
        What the model approximates for this connection.
    """

    time_s: FloatArray
    winding_current_a: FloatArray
    line_current_a: FloatArray
    samples_per_cycle: int
    steps_per_cycle: int
    pole_delay_s: FloatArray
    insertion_time_s: FloatArray
    insertion_substeps: NDArray[np.int64]
    voltage_ramp_s: FloatArray
    approximations: tuple[str, ...]


def simulate(
    circuits: EquivalentCircuit | Sequence[EquivalentCircuit],
    closing_angle_deg: ArrayLike,
    residual_flux_pu: ArrayLike,
    pole_delay_s: ArrayLike = 0.0,
    *,
    duration_s: float,
    samples_per_cycle: int = 128,
    extra_resistance_ohm: ArrayLike = 0.0,
    insertion_resistance_ohm: ArrayLike = 0.0,
    insertion_time_s: ArrayLike = 0.0,
    voltage_start_pu: ArrayLike = 1.0,
    voltage_hold_s: ArrayLike = 0.0,
    voltage_rise_s: ArrayLike = 0.0,
    max_steps: int | None = None,
) -> Simulation:
    """Simulate the energisation of many cases at once.

    Parameters
    ----------
    circuits : EquivalentCircuit or sequence of them
        One circuit shared by every case, or one per case (all with the same number of phases,
        connection and frequency) [-].
    closing_angle_deg : array_like, shape (n_cases,) or scalar
        Angle of the phase-A source voltage e_a = sqrt(2)*V*sin(omega*t + alpha) at t = 0, the
        closing command [deg].
    residual_flux_pu : array_like, shape (n_cases, n_windings), (n_windings,) or scalar
        Flux linkage of each winding at t = 0 [pu of lambda_N].
    pole_delay_s : array_like, shape (n_cases, n_phases), (n_phases,) or scalar
        Closing instant of each pole after t = 0, >= 0 [s].
    duration_s : float
        Simulated time [s].
    samples_per_cycle : int
        Output samples per cycle [-].
    extra_resistance_ohm : array_like, shape (n_cases,) or scalar
        Resistance added in series with every winding for the whole record, >= 0 [ohm].
    insertion_resistance_ohm : array_like, shape (n_cases,) or scalar
        Pre-insertion resistor in series with each line (each breaker pole), between the source
        and the transformer terminals, from t = 0 until ``insertion_time_s``, >= 0 [ohm].
    insertion_time_s : array_like, shape (n_cases,) or scalar
        Instant, from the closing command t = 0, at which all poles short the pre-insertion
        resistor together, >= 0; beyond ``duration_s`` it stays in for the whole record [s].
    voltage_start_pu : array_like, shape (n_cases,) or scalar
        Source EMF amplitude while the reduced voltage is held, in [0, 1] [pu of the rated
        source EMF].
    voltage_hold_s : array_like, shape (n_cases,) or scalar
        How long the EMF stays at ``voltage_start_pu`` from t = 0, >= 0 [s].
    voltage_rise_s : array_like, shape (n_cases,) or scalar
        Duration of the linear rise from ``voltage_start_pu`` to 1 after the hold, >= 0; 0 gives
        a step at the end of the hold [s].
    max_steps : int or None
        Compute limit: most integration steps (cases x windings x steps) allowed, a step split
        into sub-steps while a pre-insertion resistor is in counting each of them [-].

    Returns
    -------
    Simulation

    Raises
    ------
    ParameterError
        On inconsistent shapes or values out of range, naming the parameter; also when the
        circuit's saturated loop, with the pre-insertion resistor in, is too fast for
        MAX_STEPS_PER_CYCLE steps per cycle, sub-steps counted (``insertion_resistance_ohm``,
        with the largest resistor the circuit allows).
    LimitError
        When the work exceeds ``max_steps``.

    Notes
    -----
    See the module docstring for the equations. Phase B and C source voltages lag and lead
    phase A by 120 degrees (ABC sequence).

    Each case runs on the network solver as one unit on its circuit's Thevenin source (module
    docstring). Pre-insertion resistor: while it is in, R_ins is in series with every line,
    between the bus and the terminals (for a delta it therefore couples the windings through
    M = [[2,-1,-1],[-1,2,-1],[-1,-1,2]], as R_s does). The bypass instant is rounded to the
    internal step, so that no step straddles it.
    The step is planned for the circuits without the resistor; while a case's resistor is in,
    each of its steps is split into m equal sub-steps, m = ceil(4/(f*tau_ins)/steps per cycle)
    (reported as ``insertion_substeps``), tau_ins = (L_air + L_s)/(R + k*R_ins) the saturated
    loop's time constant with it in, k = 3 for a delta (M's non-zero eigenvalue) and 1
    otherwise; m depends on the case alone, so a case gives the same result in any batch. The
    outputs stay at the sample instants. An ideal resistor shorted by ideal contacts: the flux
    and the current are continuous at the bypass, only their rates change.

    Reduced-voltage source: e_a = g(t)*sqrt(2)*V*sin(omega*t + alpha), phases B and C alike,
    with g = start for t < t_hold, start + (1 - start)*(t - t_hold)/t_rise for
    t_hold <= t < t_hold + t_rise, and 1 afterwards. The end of the hold and of the rise are
    rounded to the internal step (a rise shorter than half a step becomes a step) and g is
    evaluated at every Runge-Kutta stage on the piece its step lies on. Only the EMF is scaled:
    the source impedance is unchanged and the phase of the EMF fixed, an idealisation of a
    soft-starting source or a ramped generator excitation.

    With all these at their defaults (no resistor, g = 1) every case is computed exactly as
    without them: the resistance added is 0.0 and the EMF multiplied by 1.0.

    References
    ----------
    Circuit equation: e.g. Y. Wang, S. G. Abdulsalam, W. Xu, IEEE Trans. Power Delivery 23(2),
    2008 (from memory); the network formulation: H. W. Dommel, IEEE Trans. PAS-88(4), 1969 (from
    memory); integrator: classical Runge-Kutta (Kutta 1901). Pre-insertion resistors
    and reduced-voltage (soft) energisation as inrush mitigation: common practice.
    """
    cases = energize_plan.check_cases(
        circuits,
        closing_angle_deg,
        residual_flux_pu,
        pole_delay_s,
        extra_resistance_ohm,
        (
            insertion_resistance_ohm,
            insertion_time_s,
            voltage_start_pu,
            voltage_hold_s,
            voltage_rise_s,
        ),
        duration_s,
    )
    circ_list = cases.circuits
    first = circ_list[0]
    n, m = cases.residual_flux_pu.shape
    extra, delay = cases.extra_resistance_ohm, cases.pole_delay_s
    topo = TOPOLOGY[first.connection]
    plan = energize_plan.plan_steps(cases, topo, duration_s, samples_per_cycle)
    spc, decimate, n_steps, h = plan.steps_per_cycle, plan.decimate, plan.n_steps, plan.step_s
    grid = energize_plan.on_step_grid(cases, plan)
    mit_i = grid.mit_i
    # every step of the record, a step split while the resistor is in counting its sub-steps
    work = n * m * n_steps + m * int(np.sum((mit_i[:, 3] - 1) * np.minimum(mit_i[:, 0], n_steps)))
    if max_steps is not None and work > max_steps:
        raise LimitError("integration steps (cases x windings x steps)", work, max_steps)

    n_samples = n_steps // decimate + 1
    winding = np.zeros((n, m, n_samples))
    line = np.zeros((n, m, n_samples))
    for idx in _groups(circ_list, extra, grid):
        _run_group(idx, cases, grid, plan, winding, line)
    if not (np.all(np.isfinite(winding)) and np.all(np.isfinite(line))):
        raise ParameterError(
            "circuit", "non-finite current", "a circuit whose simulated current stays finite"
        )
    time: FloatArray = np.arange(n_samples, dtype=float) * (h * decimate)
    delays_used: FloatArray = grid.pole_step.astype(float) * h
    step_ms = f"{h * 1e3:.4g} ms"
    return Simulation(
        time_s=time,
        winding_current_a=winding,
        line_current_a=line,
        samples_per_cycle=samples_per_cycle,
        steps_per_cycle=spc,
        pole_delay_s=delays_used,
        insertion_time_s=grid.insertion_time_s,
        insertion_substeps=mit_i[:, 3].copy(),
        voltage_ramp_s=grid.voltage_ramp_s,
        approximations=_approximations(first.connection, delay, plan, grid, step_ms),
    )


def _groups(
    circ_list: Sequence[EquivalentCircuit], extra: FloatArray, grid: energize_plan.Grid
) -> list[IntArray]:
    """Indices of the cases that share a network: circuit, added resistance, pre-insertion
    resistor and its bypass step, and the ramp (each group is one kernel call)."""
    ids: dict[int, int] = {}
    circ_idx = np.array([ids.setdefault(id(c), len(ids)) for c in circ_list], dtype=float)
    key = np.column_stack((circ_idx, extra, grid.mit_f, grid.mit_i[:, :3].astype(float)))
    if np.all(key == key[0]):
        return [np.arange(len(circ_list))]
    _, inverse = np.unique(key, axis=0, return_inverse=True)
    inverse = inverse.ravel()
    return [np.flatnonzero(inverse == g) for g in range(int(inverse.max()) + 1)]


def _run_group(
    idx: IntArray,
    cases: energize_plan.Cases,
    grid: energize_plan.Grid,
    plan: energize_plan.Plan,
    winding: FloatArray,
    line: FloatArray,
) -> None:
    """Simulate the cases ``idx`` (one network) into ``winding`` and ``line`` [A].

    Each case is one unit alone on its circuit's Thevenin source (:func:`core.network.
    run_single_unit`): the circuit's R_s and L_s, its winding resistance plus the added one,
    the pre-insertion resistor in each line, the EMF ramp. A single-phase circuit is the
    grounded-wye unit with its winding on phase a, at the winding's EMF, whose poles b and c
    never close: those windings carry no current and their lines none, so phase a is the
    single-phase loop e = (R_s + R_w)*i + L_s*di/dt + d(lambda)/dt exactly.
    """
    first = int(idx[0])
    c = cases.circuits[first]
    n_g = idx.size
    m = cases.residual_flux_pu.shape[1]
    phase = np.deg2rad(cases.closing_angle_deg[idx])[:, None] + _PHASE_SHIFT[None, :]
    close = np.full((n_g, 3), plan.n_steps + 1, dtype=np.int64)
    close[:, :m] = grid.pole_step[idx]
    lam0 = np.zeros((n_g, 3))
    lam0[:, :m] = cases.residual_flux_pu[idx] * c.nominal_flux_wb
    if m == 1:
        connection, emf = "wye_grounded", math.sqrt(2.0) * c.winding_voltage_v
    else:
        connection, emf = c.connection, math.sqrt(2.0) * c.line_voltage_v / math.sqrt(3.0)
    r_s = np.array([cases.circuits[i].source_resistance_ohm for i in idx])
    l_s = np.array([cases.circuits[i].source_inductance_h for i in idx])
    mit_f, mit_i = grid.mit_f[first], grid.mit_i[first]
    i_line, i_wind = run_single_unit(
        c,
        connection,
        emf_peak_v=emf,
        winding_resistance_ohm=c.winding_resistance_ohm + float(cases.extra_resistance_ohm[first]),
        source_resistance_ohm=r_s,
        source_inductance_h=l_s,
        phase_rad=phase,
        close_step=close,
        flux_wb=lam0,
        insertion_resistance_ohm=float(mit_f[0]),
        bypass_step=int(mit_i[0]),
        substeps=grid.mit_i[idx, 3],
        ramp=(float(mit_f[1]), float(mit_f[2]), int(mit_i[1]), int(mit_i[2])),
        n_steps=plan.n_steps,
        decimate=plan.decimate,
        step_s=plan.step_s,
    )
    line[idx] = i_line[:, :m]
    winding[idx] = i_wind[:, :m]


def _approximations(
    connection: str,
    delay: FloatArray,
    plan: energize_plan.Plan,
    grid: energize_plan.Grid,
    step_ms: str,
) -> tuple[str, ...]:
    """The approximations a simulation reports: its connection's, and those of the pole
    instants, the resistor and the ramp when present (rounded to the step ``step_ms``)."""
    return (
        APPROXIMATIONS[connection]
        + (
            (f"pole closing instants rounded to the internal step of {step_ms}",)
            if np.any(delay > 0.0)
            else ()
        )
        + (
            (
                "pre-insertion resistor: a constant linear resistance in each line, shorted by "
                "all poles together (no scatter or arc at the bypass); the bypass instant "
                f"rounded to the internal step of {step_ms}",
            )
            if plan.with_resistor
            else ()
        )
        + (
            (
                "reduced-voltage source: only the EMF amplitude is ramped, at fixed phase, "
                "behind the unchanged source impedance; the end of the hold and of the rise "
                f"rounded to the internal step of {step_ms}",
            )
            if grid.any_ramp
            else ()
        )
    )


def refined_abs_peak(y: FloatArray) -> FloatArray:
    """Largest |y| along the last axis with a parabola through the three samples around it.

    Parameters
    ----------
    y : ndarray, shape (..., n)
        Samples; the largest |y| is refined along the last axis [their unit].
    """
    a = np.abs(y)
    k = np.argmax(a, axis=-1)
    n = a.shape[-1]
    km = np.clip(k, 1, n - 2)
    y0 = np.take_along_axis(a, (km - 1)[..., None], -1)[..., 0]
    y1 = np.take_along_axis(a, km[..., None], -1)[..., 0]
    y2 = np.take_along_axis(a, (km + 1)[..., None], -1)[..., 0]
    den = y0 - 2.0 * y1 + y2
    with np.errstate(divide="ignore", invalid="ignore"):
        off = np.where(den < 0.0, 0.5 * (y0 - y2) / den, 0.0)
    peak: FloatArray = np.where(
        (k == km) & (den < 0.0), y1 - 0.25 * (y0 - y2) * off, np.max(a, axis=-1)
    )
    out: FloatArray = np.maximum(peak, np.max(a, axis=-1))
    return out


@dataclass(frozen=True)
class WorstCase:
    """Result of :func:`worst_closing_angle`."""

    closing_angle_deg: float
    peak_a: float
    phase_index: int
    peaks_by_phase_a: FloatArray


def worst_closing_angle(
    circuit: EquivalentCircuit,
    residual_flux_pu: ArrayLike,
    pole_delay_s: ArrayLike = 0.0,
    *,
    cycles: float = 2.0,
    max_steps: int | None = None,
) -> WorstCase:
    """Closing angle that gives the largest first-cycles inrush peak on any line.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The circuit [-].
    residual_flux_pu : array_like
        Residual flux per winding [pu of lambda_N].
    pole_delay_s : array_like
        Pole closing delays [s].
    cycles : float
        Window searched for the peak after t = 0 [cycles].
    max_steps : int or None
        Compute limit per simulation call, see :func:`simulate` [-].

    Returns
    -------
    WorstCase
        Angle of phase-A voltage at t = 0 [deg], the peak [A], the line that carries it, and
        every line's peak at that angle [A].

    Notes
    -----
    A scan over 0-360 degrees in 2.5-degree steps, then two local refinements (0.25 and 0.025
    degrees), each a single vectorised :func:`simulate` call
    (:func:`core.energization.energize_plan.search_offsets`). The angle is returned rounded to
    1e-6 degrees (the grid's accumulated rounding, ~1e-13 degrees, is noise) and wrapped into
    [0, 360), and the peaks are those simulated at exactly that angle.
    """
    duration = cycles / circuit.frequency_hz
    center = 180.0
    for offsets in energize_plan.search_offsets():
        angles = center + offsets
        sim = simulate(
            circuit,
            angles,
            residual_flux_pu,
            pole_delay_s,
            duration_s=duration,
            max_steps=max_steps,
        )
        peaks = refined_abs_peak(sim.line_current_a)
        worst = np.max(peaks, axis=1)
        center = float(angles[int(np.argmax(worst))])
    angle = round(float(np.mod(round(center, 6), 360.0)), 6)
    if angle >= 360.0:  # a tiny negative angle wraps to 360 - 1e-14, which rounds to 360
        angle -= 360.0
    sim = simulate(circuit, angle, residual_flux_pu, pole_delay_s, duration_s=duration)
    peaks = refined_abs_peak(sim.line_current_a)[0]
    ph = int(np.argmax(peaks))
    return WorstCase(angle, float(peaks[ph]), ph, peaks)
