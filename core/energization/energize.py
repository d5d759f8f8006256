"""Time-domain energisation of a transformer: the saturating circuit solved over many cases.

Each energised winding obeys

    e(t) = R*i + L_s*di/dt + d(lambda)/dt,    i = f(lambda),

i.e. d(lambda)/dt = (e - R*f(lambda)) / (1 + L_s*f'(lambda)), with e the source voltage, R the
series resistance (winding plus source), L_s the source inductance and f the magnetising curve
(:mod:`core.transformer.magnetizing`). The state is the flux linkage, so a residual flux is an
initial condition.

Connections (``topology``):

* single phase and grounded wye -- each winding is an independent circuit (a grounded-wye
  source of equal zero- and positive-sequence impedance is assumed);
* ungrounded wye -- the neutral voltage is whatever keeps the sum of the currents constant:
  v_n = sum(w_k*(e_k - R*i_k))/sum(w_k) with w_k = f'_k/(1 + L_s*f'_k); a phase with its pole
  still open carries no current and keeps its flux;
* delta -- winding currents c_ab, c_bc, c_ca; line currents are their differences
  (i_a = c_ab - c_ca, ...). Through the source impedance the three windings are coupled:
  (I + L_s*M*D) lambda' = e_LL - R_s*M*c - R_w*c with M = [[2,-1,-1],[-1,2,-1],[-1,-1,2]] and
  D = diag(f'), solved as a 3x3 system at every stage.

Mitigation, per case (:func:`simulate`):

* pre-insertion resistor -- R_ins in series with each line (breaker pole), between the source and
  the terminals, from t = 0 until all poles short it together at t_ins: it adds to the source
  resistance of every line, i.e. to each winding's R for single phase and wye and to R_s (which
  couples the windings through M) for a delta; a delta on an ideal source with the resistor in
  is therefore solved by the coupled kernel;
* reduced-voltage source -- the EMF amplitude times g(t): g = g_0 until t_hold, a linear rise to
  1 over t_rise, then 1 (e_a = g*sqrt(2)*V*sin(omega*t + alpha), phases unchanged).

Approximations, reported with every result: phases are magnetically independent (a bank of
single-phase cores; the coupling of a three-limb or five-limb core is not modelled, which is
usually conservative for the peak phase); no hysteresis or core loss; while only one of a delta
winding's two poles is closed, that winding is taken as unenergised (the series path through the
other two windings is neglected); pole closing instants are rounded to the internal step. A
pre-insertion resistor is an ideal linear resistance, shorted by all poles at once (no bypass
scatter, arc or contact resistance); the reduced-voltage source scales only the EMF, behind an
unchanged source impedance and at a fixed phase; the bypass, the end of the hold and the end of
the rise are rounded to the internal step, so that no step straddles a jump of R or a corner of
g, and g is evaluated at every Runge-Kutta stage on the piece its step lies on.

Numerics: classical fourth-order Runge-Kutta at a fixed step of at least 128 steps per cycle,
compiled with numba and looped over cases; the equation is not stiff (its fastest time
constant, (L_air + L_s)/R, is at least four steps long). With a pre-insertion resistor in, that
loop is faster, (L_air + L_s)/(R + k*R_ins), k = 3 for a delta, whose windings see the line
resistance through M, 1 otherwise: the step stays the one planned without the resistor, and
until the bypass each step of that case is split into the fewest equal sub-steps that keep four
of them within that time constant (one when the step already does), so that a large resistor
costs sub-steps only while it is in and only for its own case. Without the mitigation the
resistance added is exactly 0.0, the EMF is multiplied by exactly 1.0 and no step is split, so
the results are bit for bit those of the solver before it had the features. With L_s > 0 and
a sharp (two-slope or table) knee d(lambda)/dt jumps at the knee, where a fixed step loses its
order (when the coupled connections integrated lambda, their peaks were off by 0.1 % of the
first peak for a delta on a 250 MVA source up to 13 % for a floating neutral on 20 MVA). Each
connection therefore integrates a state whose derivative is continuous there and recovers
lambda from it:

* independent windings: the loop flux psi = lambda + L_s*i, psi' = e - R*i, through the curve
  re-expressed against psi (no solve needed);
* delta: the loop-flux vector psi = lambda + L_s*M*c, psi' = e_LL - R_s*M*c - R_w*c; at every
  stage lambda solves lambda + L_s*M*f(lambda) = psi by Newton's method (Jacobian
  I + L_s*M*D, 3x3 by Cramer's rule) from the previous stage's lambda, halving any step that
  does not reduce the residual;
* ungrounded wye: loop fluxes per phase, psi_k = lambda_k + L_s*i_k, are not enough, since
  psi_k' = e_k - v_n - R*i_k and the neutral voltage v_n itself jumps when a phase crosses the
  knee (the constraint on the currents holds that phase near the knee and shifts the voltage
  onto the neutral); the per-phase state was measured as inaccurate as lambda. The jump is
  common to all phases, so the state is y with y_k' = x_k - mean(x), x_k = e_k - R*i_k, which
  is continuous; psi_k = y_k + s, and the common shift s is fixed by sum(i_k) = const, an
  increasing scalar equation solved by Newton's method with bisection whenever a step leaves
  the bracket, each phase's lambda coming from its psi_k by a bracketed scalar Newton.

An unenergised winding keeps its lambda and carries no current; when a pole closes the state
is re-initialised from lambda, which is continuous. The solves stop at 1e-12 pu of lambda_N; one
that does not converge raises :class:`core.errors.ParameterError` rather than return a wrong
current.

Accuracy (tests/references/test_solver_vs_scipy.py), as the worst of the first ten per-cycle
peaks relative to the first peak, read from the default 128 samples per cycle, against scipy's
Radau at rtol 1e-9 (for the floating neutral DOP853 at rtol 1e-10 on a system that holds the
current sum exactly, Radau's own error being larger there): single phase and grounded wye at
most 3.2e-5; delta 2.3e-6 on a 250 MVA source, 2.6e-4 on 50 MVA and 2.6e-4 on 20 MVA; ungrounded
wye 2.3e-3 on an ideal source, 1.7e-3 on 250 MVA and 1.6e-3 on 20 MVA. Against the same
references sampled at the output instants the coupled kernel is within 4.2e-5 (delta, most of it
Radau's own error: against DOP853 at rtol 1e-12 the samples agree to 6e-6) and 8e-6 (wye). The
rest is the reading of a peak from 128 samples per cycle (a parabola through the three around the
largest), which the floating-neutral current, with a corner wherever a phase crosses the knee,
defeats most; more samples per cycle reduce it (2.3e-3 becomes 1.2e-4 at 2048). The studies
read their peaks exactly instead (:mod:`core.energization.peaks`: within 6.3e-6 of the first peak
against a piecewise-exact reference, tests/references/test_piecewise_reference.py). With the
mitigation, against the same references integrated interval by interval between the bypass and
the ramp's corners (a resistor of 0.3 of the saturated loop reactance, a third of that for a
delta, bypassed at 4.3 cycles; a ramp from 0.3 pu held one cycle, then rising over three), as
the worst of the ten peaks relative to the largest, and in brackets against the reference sampled
at the output instants: resistor, single phase 2.0e-5, grounded wye 4.9e-5, delta on 50 MVA
9.4e-6 (9.9e-6), delta on an ideal source 1.8e-5 (1.8e-5), ungrounded wye on 250 MVA 2.8e-3
(1.6e-5); ramp, single phase 3.6e-5, delta on 50 MVA 5.7e-4 (5.3e-6), delta on an ideal source
3.6e-6 (3.6e-6). A large resistor, 5 and 50 times the saturated loop's reactance (a third of
that for a delta) in for the first cycle (1 or 2 sub-steps per step at 5 times, 10 at 50):
single phase 1.4e-5 (3.6e-6) and 1.8e-3 (9.8e-7); grounded wye 1.8e-4 (1.8e-4) and 1.2e-4
(9.1e-8); delta on 50 MVA 2.9e-5 (2.3e-5) and 7.2e-3 (3.3e-6); ungrounded wye on 250 MVA 1.8e-4
(1.8e-4) and 2.7e-3 (1.5e-6). The integrator's share is largest where the step meets the
inserted time constant without sub-steps; the rest, up to 7.2e-3, is the peak of the current
clipped by the resistor read from 128 samples per cycle (within 7.9e-5 from 512). Without
the sub-steps the 50-times cases were off by 2.1e-2 to 1.2e-1. The same resistor in for 1.5
cycles while a ramp from 0.3 pu rises over two: at most 4.9e-4 (1.6e-4).

Implementation: :mod:`core.energization.energize_plan` checks the inputs, chooses the step and puts
the switching instants on it; :mod:`core.energization.kernel_independent` and
:mod:`core.energization.kernel_coupled` hold the compiled kernels (independent windings; windings
coupled through the source).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from core.energization import energize_plan, kernel_coupled, kernel_independent
from core.energization.energize_plan import MAX_STEPS_PER_CYCLE, MIN_STEPS_PER_CYCLE, step_plan
from core.energization.kernel_coupled import NEWTON_MAX_ITERATIONS, NEWTON_TOLERANCE_PU
from core.energization.kernel_independent import PARALLEL_MIN_ELEMENTS
from core.errors import LimitError, ParameterError
from core.transformer.circuit_model import EquivalentCircuit
from core.transformer.magnetizing import PiecewiseLinearCurve

FloatArray = NDArray[np.float64]

__all__ = [
    "APPROXIMATIONS",
    "MAX_STEPS_PER_CYCLE",
    "MIN_STEPS_PER_CYCLE",
    "NEWTON_MAX_ITERATIONS",
    "NEWTON_TOLERANCE_PU",
    "PARALLEL_MIN_ELEMENTS",
    "Simulation",
    "WorstCase",
    "refined_abs_peak",
    "simulate",
    "step_plan",
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
        "a delta winding is energised when the later of its two poles closes; the series path "
        "through the other two windings before that is neglected",
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

    Pre-insertion resistor: while it is in, R_ins adds to the source resistance of every line.
    For single-phase and wye windings each line is a winding's loop, so it adds to that loop's
    R; for a delta it adds to R_s, the resistance that couples the windings through
    M = [[2,-1,-1],[-1,2,-1],[-1,-1,2]], and a delta on an ideal source is then solved by the
    coupled kernel (a batch takes one kernel; any case with a resistor in sends a delta batch
    there). The bypass instant is rounded to the internal step, so that no step straddles it.
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
    2008 (from memory); integrator: classical Runge-Kutta (Kutta 1901). Pre-insertion resistors
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
    alpha, res, extra = cases.closing_angle_deg, cases.residual_flux_pu, cases.extra_resistance_ohm
    delay = cases.pole_delay_s
    f = first.frequency_hz
    omega = 2.0 * math.pi * f
    topo = TOPOLOGY[first.connection]
    plan = energize_plan.plan_steps(cases, topo, duration_s, samples_per_cycle)
    spc, decimate, n_steps, h = plan.steps_per_cycle, plan.decimate, plan.n_steps, plan.step_s
    grid = energize_plan.on_step_grid(cases, topo, plan)
    mit_i = grid.mit_i
    # every step of the record, a step split while the resistor is in counting its sub-steps
    work = n * m * n_steps + m * int(np.sum((mit_i[:, 3] - 1) * np.minimum(mit_i[:, 0], n_steps)))
    if max_steps is not None and work > max_steps:
        raise LimitError("integration steps (cases x windings x steps)", work, max_steps)

    vpk, phase = _source_emf(circ_list, alpha, m)
    r_w = np.array([c.winding_resistance_ohm for c in circ_list]) + extra
    r_s = np.array([c.source_resistance_ohm for c in circ_list])
    l_s = np.array([c.source_inductance_h for c in circ_list])
    r_el = np.repeat((r_w if topo == 2 else r_w + r_s)[:, None], m, axis=1)
    lam0 = res * np.array([c.nominal_flux_wb for c in circ_list])[:, None]
    n_samples = n_steps // decimate + 1
    out = np.zeros((n, m, n_samples))
    independent = topo == 0 or (
        topo == 2 and not np.any(l_s) and not np.any(r_s) and not grid.any_inserted
    )
    if independent:
        _run_independent(circ_list, topo, plan, grid, omega, vpk, phase, r_el, l_s, lam0, out)
    else:
        _run_coupled(circ_list, topo, plan, grid, omega, vpk, phase, r_el, r_s, l_s, lam0, out)
    if not np.all(np.isfinite(out)):
        raise ParameterError(
            "circuit", "non-finite current", "a circuit whose simulated current stays finite"
        )
    # delta: i_a = c_ab - c_ca, i_b = c_bc - c_ab, i_c = c_ca - c_bc
    line = out - np.roll(out, 1, axis=1) if topo == 2 else out
    time: FloatArray = np.arange(n_samples, dtype=float) * (h * decimate)
    delays_used: FloatArray = grid.pole_step.astype(float) * h
    step_ms = f"{h * 1e3:.4g} ms"
    return Simulation(
        time_s=time,
        winding_current_a=out,
        line_current_a=line,
        samples_per_cycle=samples_per_cycle,
        steps_per_cycle=spc,
        pole_delay_s=delays_used,
        insertion_time_s=grid.insertion_time_s,
        insertion_substeps=mit_i[:, 3].copy(),
        voltage_ramp_s=grid.voltage_ramp_s,
        approximations=_approximations(first.connection, delay, plan, grid, step_ms),
    )


def _source_emf(
    circ_list: Sequence[EquivalentCircuit], alpha: FloatArray, m: int
) -> tuple[FloatArray, FloatArray]:
    """Peak EMF of each winding's circuit [V] and its phase at t = 0 [rad], shape (cases, m).

    Single phase: the winding voltage at the closing angle alpha; three phase: the phase
    voltage V_LL/sqrt(3) at alpha, alpha - 120 deg, alpha + 120 deg (Notes of :func:`simulate`).
    """
    alpha_rad = np.deg2rad(alpha)
    if m == 1:
        vpk = np.array([math.sqrt(2.0) * c.winding_voltage_v for c in circ_list])[:, None]
        phase = alpha_rad[:, None]
    else:
        vpk = np.repeat(
            np.array([math.sqrt(2.0) * c.line_voltage_v / math.sqrt(3.0) for c in circ_list])[
                :, None
            ],
            3,
            axis=1,
        )
        phase = alpha_rad[:, None] + _PHASE_SHIFT[None, :]
    return vpk, phase


def _run_independent(
    circ_list: Sequence[EquivalentCircuit],
    topo: int,
    plan: energize_plan.Plan,
    grid: energize_plan.Grid,
    omega: float,
    vpk: FloatArray,
    phase: FloatArray,
    r_el: FloatArray,
    l_s: FloatArray,
    lam0: FloatArray,
    out: FloatArray,
) -> None:
    """Integrate windings that are independent circuits into ``out`` [A] (kernel_independent)."""
    n, m = lam0.shape
    n_steps, decimate, h = plan.n_steps, plan.decimate, plan.step_s
    n_samples = out.shape[2]
    close_step, mit_f, mit_i = grid.close_step, grid.mit_f, grid.mit_i
    if topo == 2:  # delta on an ideal source: each winding sees a line-to-line voltage
        vpk = vpk * math.sqrt(3.0)
        phase = phase + math.pi / 6.0
    kind_e, par_e, flux_e, cur_e, npts_e = energize_plan.element_curves(circ_list)
    # piecewise-linear curves: integrate the loop flux psi = lambda + L_s*i (see
    # energize_plan.element_curves), so the kernel sees no source inductance and starts
    # from psi_0
    pwl = np.array([isinstance(c.curve, PiecewiseLinearCurve) for c in circ_list])
    l_el = np.where(pwl, 0.0, l_s)
    state0 = lam0.copy()
    for idx, c in enumerate(circ_list):
        if pwl[idx] and l_s[idx] > 0.0:
            state0[idx] = lam0[idx] + l_s[idx] * c.curve.current(lam0[idx])
    rep = lambda a: np.ascontiguousarray(np.repeat(a, m, axis=0))  # noqa: E731
    kernel = (
        kernel_independent.integrate_parallel
        if n * m >= PARALLEL_MIN_ELEMENTS
        else kernel_independent.integrate
    )
    kernel(
        n_steps, decimate, h, omega,
        np.ascontiguousarray(vpk, dtype=float).ravel(),
        np.ascontiguousarray(phase, dtype=float).ravel(),
        np.ascontiguousarray(r_el).ravel(), np.repeat(l_el, m),
        np.ascontiguousarray(close_step).ravel(), np.ascontiguousarray(state0).ravel(),
        rep(kind_e), rep(par_e), rep(flux_e), rep(cur_e), rep(npts_e),
        rep(mit_f), rep(mit_i),
        out.reshape(n * m, n_samples),
    )  # fmt: skip


def _run_coupled(
    circ_list: Sequence[EquivalentCircuit],
    topo: int,
    plan: energize_plan.Plan,
    grid: energize_plan.Grid,
    omega: float,
    vpk: FloatArray,
    phase: FloatArray,
    r_el: FloatArray,
    r_s: FloatArray,
    l_s: FloatArray,
    lam0: FloatArray,
    out: FloatArray,
) -> None:
    """Integrate windings coupled through the source (floating wye, delta) into ``out`` [A]."""
    n_steps, decimate, h = plan.n_steps, plan.decimate, plan.step_s
    close_step, mit_f, mit_i = grid.close_step, grid.mit_f, grid.mit_i
    kind_c, par_c, flux_c, cur_c, npts_c = energize_plan.element_curves(circ_list, loop_flux=False)
    tol = NEWTON_TOLERANCE_PU * np.array([c.nominal_flux_wb for c in circ_list])
    failed = kernel_coupled.integrate(
        topo, n_steps, decimate, h, omega,
        np.ascontiguousarray(vpk, dtype=float), np.ascontiguousarray(phase, dtype=float),
        np.ascontiguousarray(r_el), r_s, l_s, np.ascontiguousarray(close_step),
        np.ascontiguousarray(lam0), tol, kind_c, par_c, flux_c, cur_c, npts_c,
        mit_f, mit_i, out,
    )  # fmt: skip
    if failed:
        raise ParameterError(
            "circuit",
            f"{failed} flux solves without convergence",
            f"a circuit on which Newton's method converges in {NEWTON_MAX_ITERATIONS} iterations",
        )


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
