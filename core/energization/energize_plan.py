"""Input checks and step plan behind :func:`core.energization.energize.simulate`.

:func:`check_cases` broadcasts and validates the per-case inputs (closing angle, residual flux,
pole instants, added resistance, pre-insertion resistor, reduced-voltage ramp);
:func:`plan_steps` chooses the fixed Runge-Kutta step (:func:`core.network.step_rule`, the
network solver's rule: at least MIN_STEPS_PER_CYCLE per cycle and at most a quarter of the
shortest saturated time constant); :func:`on_step_grid` puts the pole closings, the resistor's
bypass and the ramp's corners on that step, as the network solver's kernel takes them. The
equations and their approximations are in the module docstring of
:mod:`core.energization.energize`.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from core.errors import ParameterError
from core.network.solver import MAX_STEPS_PER_CYCLE, step_rule
from core.transformer.circuit_model import EquivalentCircuit

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]

__all__ = [
    "MITIGATION_PARAMETERS",
    "Cases",
    "Grid",
    "Plan",
    "check_cases",
    "on_step_grid",
    "plan_steps",
    "saturated_time_constant",
    "search_offsets",
]

# simulate's per-case mitigation parameters, their defaults (no resistor, full voltage) and
# ranges, one row each
MITIGATION_PARAMETERS = (
    "insertion_resistance_ohm",
    "insertion_time_s",
    "voltage_start_pu",
    "voltage_hold_s",
    "voltage_rise_s",
)
_MITIGATION_DEFAULT = np.array([[0.0], [0.0], [1.0], [0.0], [0.0]])
_MITIGATION_LOW = np.zeros((5, 1))
_MITIGATION_HIGH = np.array([[math.inf], [math.inf], [1.0], [math.inf], [math.inf]])


@dataclass(frozen=True)
class Cases:
    """The inputs of :func:`core.energization.energize.simulate`, checked and broadcast to n cases.

    ``mitigation`` has one row per name of MITIGATION_PARAMETERS and one column per case, or a
    single column of defaults when ``mitigation_off`` (no resistor, full voltage) [SI units].
    """

    circuits: list[EquivalentCircuit]
    closing_angle_deg: FloatArray
    residual_flux_pu: FloatArray
    pole_delay_s: FloatArray
    extra_resistance_ohm: FloatArray
    mitigation: FloatArray
    mitigation_off: bool


@dataclass(frozen=True)
class Plan:
    """The fixed step of a batch and each case's sub-steps per step while its resistor is in.

    See :func:`plan_steps`; ``step_s`` [s], ``substeps`` shape (n_cases,) [-].
    """

    steps_per_cycle: int
    decimate: int
    n_steps: int
    step_s: float
    with_resistor: bool
    substeps: IntArray


@dataclass(frozen=True)
class Grid:
    """Instants on the step grid, per case: see :func:`on_step_grid`."""

    pole_step: IntArray
    mit_f: FloatArray
    mit_i: IntArray
    insertion_time_s: FloatArray
    voltage_ramp_s: FloatArray
    any_ramp: bool


def search_offsets() -> tuple[FloatArray, ...]:
    """Trial angles of each stage of the worst-closing-angle search, about its centre.

    Returns
    -------
    tuple of ndarray
        One array per stage, offsets from the stage's centre (180 at the first stage, then the
        best angle so far) [deg].

    Notes
    -----
    A scan over +-180 degrees in 2.5-degree steps (145 trials), then two local refinements
    about the best angle, each over +-one previous step in a tenth of it (21 trials each): a
    grid search refined by decades, this project's choice. :func:`core.energization.inrush_study.
    worst_closing_angles` and :func:`core.energization.energize.worst_closing_angle` run it;
    :mod:`core.cost` counts its trials.

    References
    ----------
    Grid search with successive refinement: common practice.
    """
    out = []
    span, step = 180.0, 2.5
    for _ in range(3):
        out.append(np.arange(-span, span + 0.5 * step, step))
        span, step = step, step / 10.0
    return tuple(out)


def saturated_time_constant(circuit: EquivalentCircuit, extra_resistance_ohm: float = 0.0) -> float:
    """Time constant of a winding's saturated loop without a pre-insertion resistor.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The winding and its source [-].
    extra_resistance_ohm : float
        Resistance added in series with the winding [ohm].

    Returns
    -------
    float
        (L_air + L_s)/R with R = R_w + 2*R_s + R_extra, the time constant :func:`plan_steps`
        keeps the step below a quarter of [s].

    Notes
    -----
    tau = (L_air + L_s)/(R_w + 2*R_s + R_extra); the factor 2 on R_s is the bound this solver
    has always planned with (a delta's winding loop closes through two source lines).

    References
    ----------
    First-order RL loop time constant L/R (any circuits textbook).
    """
    c = circuit
    r = c.winding_resistance_ohm + 2.0 * c.source_resistance_ohm + extra_resistance_ohm
    return (c.air_core_inductance_h + c.source_inductance_h) / max(r, 1e-300)


def check_cases(
    circuits: EquivalentCircuit | Sequence[EquivalentCircuit],
    closing_angle_deg: ArrayLike,
    residual_flux_pu: ArrayLike,
    pole_delay_s: ArrayLike,
    extra_resistance_ohm: ArrayLike,
    mitigation: tuple[ArrayLike, ...],
    duration_s: float,
) -> Cases:
    """Broadcast the per-case inputs of :func:`core.energization.energize.simulate`; check them.

    ``mitigation`` holds the values of MITIGATION_PARAMETERS in that order. Raises
    :class:`ParameterError` naming the parameter on an inconsistent shape or a value out of
    range (see :func:`core.energization.energize.simulate`).

    Parameters
    ----------
    circuits : EquivalentCircuit or sequence of them
        One shared circuit or one per case [-].
    closing_angle_deg : array_like
        Phase-A voltage angle at t = 0, per case or scalar [deg].
    residual_flux_pu : array_like
        Per case and winding, per winding or scalar [pu of lambda_N].
    pole_delay_s : array_like
        Per case and pole, per pole or scalar [s].
    extra_resistance_ohm : array_like
        Series resistance added to every winding, per case or scalar [ohm].
    mitigation : tuple of array_like
        Values of MITIGATION_PARAMETERS in that order, each per case or scalar [ohm, s, pu, s, s].
    duration_s : float
        Simulated time, the bound of the pole delays [s].
    """
    circ_list = [circuits] if isinstance(circuits, EquivalentCircuit) else list(circuits)
    if not circ_list:
        raise ParameterError("circuits", 0, "at least one circuit")
    first = circ_list[0]
    for c in circ_list[1:]:
        if (c.phases, c.connection, c.frequency_hz) != (
            first.phases,
            first.connection,
            first.frequency_hz,
        ):
            raise ParameterError("circuits", c.connection, "the same phases, connection, frequency")
    m = first.phases
    alpha = np.atleast_1d(np.asarray(closing_angle_deg, dtype=float))
    res = np.asarray(residual_flux_pu, dtype=float)
    delay = np.asarray(pole_delay_s, dtype=float)
    extra = np.atleast_1d(np.asarray(extra_resistance_ohm, dtype=float))
    # all at their defaults (no resistor, g = 1), the usual call, told from plain numbers
    # without building arrays; the kernel then gets the arrays the general path would compute
    mit_off = all(
        isinstance(v, int | float) and v == d
        for v, d in zip(mitigation, _MITIGATION_DEFAULT[:, 0], strict=True)
    )
    mit_in = [] if mit_off else [np.asarray(v, dtype=float) for v in mitigation]
    # mit_in is empty when all are off
    for name, arr in zip(MITIGATION_PARAMETERS, mit_in, strict=False):
        if arr.ndim > 1:
            raise ParameterError(name, f"shape {arr.shape}", "a scalar or one value per case")
    n = max(
        alpha.shape[0],
        len(circ_list),
        extra.shape[0],
        res.shape[0] if res.ndim == 2 else 1,
        delay.shape[0] if delay.ndim == 2 else 1,
        *(arr.size for arr in mit_in),
    )
    # one row per mitigation parameter, one column per case
    mit = _MITIGATION_DEFAULT if mit_off else np.empty((len(mit_in), n))
    for k, (name, arr) in enumerate(zip(MITIGATION_PARAMETERS, mit_in, strict=False)):
        try:
            mit[k] = arr
        except ValueError as exc:
            raise ParameterError(name, f"{arr.size} values", f"a scalar or {n} values") from exc
    try:
        alpha = np.broadcast_to(alpha, (n,))
        res = np.broadcast_to(res if res.ndim == 2 else np.broadcast_to(res, (m,)), (n, m))
        delay = np.broadcast_to(delay if delay.ndim == 2 else np.broadcast_to(delay, (m,)), (n, m))
        extra = np.broadcast_to(extra, (n,))
    except ValueError as exc:
        raise ParameterError("cases", n, f"arrays broadcastable to {n} cases x {m} phases") from exc
    if len(circ_list) == 1:
        circ_list = circ_list * n
    elif len(circ_list) != n:
        raise ParameterError("circuits", len(circ_list), f"1 or {n} circuits")
    for name, arr in (
        ("closing_angle_deg", alpha),
        ("residual_flux_pu", res),
        ("pole_delay_s", delay),
        ("extra_resistance_ohm", extra),
    ):
        if not np.all(np.isfinite(arr)):
            raise ParameterError(name, "non-finite", "finite numbers")
    if np.any(np.abs(res) > 5.0):
        raise ParameterError("residual_flux_pu", float(np.abs(res).max()), "in [-5, 5]")
    if np.any(delay < 0.0) or np.any(delay > duration_s):
        raise ParameterError("pole_delay_s", float(delay.max()), f"in [0, {duration_s:g}] s")
    if np.any(extra < 0.0):
        raise ParameterError("extra_resistance_ohm", float(extra.min()), ">= 0")
    if not mit_off:
        finite = np.isfinite(mit)
        if not finite.all():
            k = int(np.flatnonzero(~finite.all(axis=1))[0])
            raise ParameterError(MITIGATION_PARAMETERS[k], "non-finite", "finite numbers")
        bad = (mit < _MITIGATION_LOW) | (mit > _MITIGATION_HIGH)
        if bad.any():
            k = int(np.flatnonzero(bad.any(axis=1))[0])
            allowed = "in [0, 1] pu of the rated EMF" if _MITIGATION_HIGH[k, 0] == 1.0 else ">= 0"
            raise ParameterError(MITIGATION_PARAMETERS[k], float(mit[k][bad[k]][0]), allowed)
        mit_off = bool((mit == _MITIGATION_DEFAULT).all())  # defaults given as arrays
    return Cases(circ_list, alpha, res, delay, extra, mit, mit_off)


def plan_steps(cases: Cases, topology: int, duration_s: float, samples_per_cycle: int) -> Plan:
    """The fixed step of a batch, and each case's sub-steps while its resistor is in.

    The step is :func:`core.network.step_rule`'s for the batch's shortest saturated time constant
    without a pre-insertion resistor, (L_air + L_s)/R over the cases, R = R_w + 2*R_s + R_extra.
    While a case's resistor is in, its loop is faster, tau_ins = (L_air + L_s)/(R + k*R_ins), with k
    = 3 for a delta (``topology`` 2: the line resistance enters its windings' loops through M, whose
    non-zero eigenvalue is 3) and 1 for a winding in its own line; each of that case's steps is then
    split into m equal sub-steps, the fewest that keep the sub-step at or below a quarter of tau_ins
    (the rule of the step itself): m = ceil(4/(f*tau_ins)/spc), spc the steps per cycle, which is 1
    whenever the step already meets it. m depends on the case alone, so a case gives the same result
    in any batch.

    Parameters
    ----------
    cases : Cases
        The checked cases of one batch [-].
    topology : int
        Kernel topology code (2: delta) [-].
    duration_s : float
        Simulated time [s].
    samples_per_cycle : int
        Output samples per cycle [-].

    Raises
    ------
    ParameterError
        Naming ``insertion_resistance_ohm``, with the largest resistor the circuit allows, when
        m*spc would exceed MAX_STEPS_PER_CYCLE; naming ``resistance_ohm``
        (:func:`core.network.step_rule`) when the loop without the resistor would need more.
    """
    circ_list = cases.circuits
    extra = cases.extra_resistance_ohm
    r_ins, t_ins = cases.mitigation[0], cases.mitigation[1]
    f = circ_list[0].frequency_hz
    tau = min(saturated_time_constant(c, float(ex)) for c, ex in zip(circ_list, extra, strict=True))
    spc, decimate, n_steps = step_rule(f, duration_s, samples_per_cycle, tau)
    k_line = 3.0 if topology == 2 else 1.0
    with_resistor = (
        [] if cases.mitigation_off else np.flatnonzero((r_ins > 0.0) & (t_ins > 0.0)).tolist()
    )
    loop = [  # (L_air + L_s, R, R_ins) of each case with a resistor
        (
            circ_list[i].air_core_inductance_h + circ_list[i].source_inductance_h,
            circ_list[i].winding_resistance_ohm
            + 2.0 * circ_list[i].source_resistance_ohm
            + float(extra[i]),
            float(r_ins[i]),
        )
        for i in with_resistor
    ]
    # most sub-steps per step (a plan already finer than the guard, for many samples per cycle,
    # takes none)
    m_max = max(1, MAX_STEPS_PER_CYCLE // spc)
    substeps = np.ones(len(circ_list), dtype=np.int64)
    too_fast = []  # R_ins of the cases that would need more
    for i, (ll, rr, ri) in zip(with_resistor, loop, strict=True):
        tau_ins = ll / max(rr + k_line * ri, 1e-300)
        need = 4.0 / (f * max(tau_ins, 1e-300))  # steps per cycle the inserted loop needs
        if need > m_max * spc:
            too_fast.append(ri)
        else:
            substeps[i] = max(1, math.ceil(need / spc))
    if too_fast:
        r_max = min((ll * f * (m_max * spc) / 4.0 - rr) / k_line for ll, rr, _ in loop)
        raise ParameterError(
            "insertion_resistance_ohm",
            max(too_fast),
            f"at most {max(r_max, 0.0):.4g} ohm for this circuit: with more, its saturated loop "
            f"while the resistor is in needs over {m_max * spc} steps per cycle ({m_max} "
            f"sub-steps of each of {spc}; {MAX_STEPS_PER_CYCLE} per cycle at most)",
        )
    return Plan(spc, decimate, n_steps, 1.0 / (f * spc), bool(with_resistor), substeps)


def on_step_grid(cases: Cases, plan: Plan) -> Grid:
    """Pole closings, the resistor's bypass and the ramp's corners on the step grid, per case.

    Each instant is rounded to the nearest step; an instant after the record (or too large to
    count in steps) is clipped to just after it, while the slope of the rise keeps its unclipped
    length. For the network kernel (:func:`core.network.run_single_unit`): mit_f =
    (R_ins [ohm], g_0 [pu], slope of g per step [pu]), mit_i = (bypass step, end of hold, end of
    rise, sub-steps per step while the resistor is in); the instants used are returned in
    seconds.

    Parameters
    ----------
    cases : Cases
        The checked cases of one batch [-].
    plan : Plan
        The batch's step plan from :func:`plan_steps` [-].
    """
    n = len(cases.circuits)
    h = plan.step_s
    pole_step = np.rint(cases.pole_delay_s / h).astype(np.int64)
    mit_f = np.zeros((n, 3))
    mit_f[:, 1] = 1.0
    mit_i = np.zeros((n, 4), dtype=np.int64)
    mit_i[:, 3] = 1
    ins_used: FloatArray = np.zeros(n)
    ramp_used: FloatArray = np.zeros((n, 2))
    any_ramp = False
    if not cases.mitigation_off:
        r_ins, t_ins, g_start, t_hold, t_rise = cases.mitigation
        with np.errstate(over="ignore", invalid="ignore"):
            ins_f = np.rint(t_ins / h)
            hold_f = np.rint(t_hold / h)
            end_f = np.rint((t_hold + t_rise) / h)
            span = end_f - hold_f
            last = float(plan.n_steps + 1)
            mit_i[:, 0] = np.minimum(ins_f, last)
            mit_i[:, 1] = np.minimum(hold_f, last)
            mit_i[:, 2] = np.minimum(end_f, last)
            mit_i[:, 3] = np.where(mit_i[:, 0] > 0, plan.substeps, 1)  # none if never in
            mit_f[:, 0] = r_ins
            mit_f[:, 1] = g_start
            mit_f[:, 2] = np.where(
                mit_i[:, 2] > mit_i[:, 1], (1.0 - g_start) / np.where(span > 0.0, span, 1.0), 0.0
            )
            ins_used = np.where(np.isfinite(ins_f), ins_f * h, t_ins)
            ramp_used[:, 0] = np.where(np.isfinite(hold_f), hold_f * h, t_hold)
            ramp_used[:, 1] = np.where(np.isfinite(end_f), end_f * h, t_hold + t_rise)
        any_ramp = bool(np.any((g_start < 1.0) & (mit_i[:, 2] > 0)))
    return Grid(pole_step, mit_f, mit_i, ins_used, ramp_used, any_ramp)
