"""Case building, step planning and validation behind :mod:`core.supply.dip`.

:func:`build_case` reduces a source and a transformer circuit to the packed arrays of
:mod:`core.supply.dip_kernel` together with the pre-event steady state; :func:`run` chooses the step
(at least 128 per cycle, short enough for every time constant, with sub-steps while a
pre-insertion resistor is in), puts the breaker poles' closing instants on the step grid,
calls the compiled kernel :func:`core.supply.dip_kernel.integrate` on every case and returns
per-cycle results. The equations the kernel integrates are in :mod:`core.supply.dip_kernel`; the
physics, its simplifications and references in :mod:`core.supply.dip` and
:mod:`core.supply.sources`.
"""

from __future__ import annotations

import cmath
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Protocol

import numpy as np
from numpy.typing import ArrayLike, NDArray

from core import checks
from core.energization.switching_event import SwitchingEvent
from core.errors import ParameterError
from core.supply.dip_kernel import (
    AMP,
    AVR,
    BETA,
    C0,
    DYN,
    EB,
    EMAX,
    EMIN,
    HLD,
    HTR,
    IB,
    KA,
    LAM0,
    LL,
    LPH,
    LS,
    NCP,
    NLP,
    PHS,
    RA,
    RL,
    RPH,
    RS,
    RW,
    T1O,
    T2O,
    TA,
    TR,
    VREF,
    X1,
    X2,
    XD,
    Case,
    integrate,
    pack_curve,
)
from core.transformer.circuit_model import EquivalentCircuit
from core.transformer.magnetizing import PiecewiseLinearCurve

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]


class SourceLike(Protocol):
    """Anything with a rated line voltage [V] and frequency [Hz]."""

    @property
    def line_voltage_v(self) -> float: ...
    @property
    def frequency_hz(self) -> float: ...


__all__ = [
    "Case",
    "Raw",
    "SourceParameters",
    "build_case",
    "check_inputs",
    "check_insertion",
    "check_poles",
    "cycle_steps",
    "run",
]

# steps per cycle floor: common practice of this project (core.energization.energize uses the same
# floor); the ceiling bounds the work.
MIN_STEPS_PER_CYCLE = 128
MAX_STEPS_PER_CYCLE = 16384


@dataclass(frozen=True)
class SourceParameters:
    """A source reduced to numbers for :func:`build_case`.

    Attributes
    ----------
    line_voltage_v : float
        Rated line-to-line voltage, the voltage base [V].
    resistance_ohm, inductance_h : float
        Per-phase source impedance [ohm], [H].
    base_va : float
        Power base of the per-unit currents [VA].
    machine : tuple of float or None
        (X''_d, X'_d, X_d [pu], T''_do, T'_do [s], R_a [pu]) for a machine; None for a constant
        EMF.
    regulator : tuple of float or None
        (K_A [pu], T_A [s], ceiling, floor [pu], T_R [s]); None for a constant field.
    """

    line_voltage_v: float
    resistance_ohm: float
    inductance_h: float
    base_va: float
    machine: tuple[float, float, float, float, float, float] | None = None
    regulator: tuple[float, float, float, float, float] | None = None


def build_case(
    src: SourceParameters,
    circuit: EquivalentCircuit,
    event: SwitchingEvent,
    load_w_var: tuple[float, float] | None,
    v0_pu: float,
) -> Case:
    """Pack one case and its pre-event steady state.

    Parameters
    ----------
    src : SourceParameters
        The source [-].
    circuit : EquivalentCircuit
        Three-phase transformer circuit (its own source impedance is ignored) [-].
    event : SwitchingEvent
        The energisation, checked by :func:`check_inputs`: its closing angle (phase-A terminal
        voltage angle at t = 0), residual flux per winding and pre-insertion resistor in each
        line to the transformer are packed here; whether and how long the resistor is in, and
        the pole instants, are decided by :func:`run` [-].
    load_w_var : tuple of float or None
        Bus load (P, Q) at rated voltage, constant impedance; None for none [W, var].
    v0_pu : float
        Pre-event terminal voltage [pu].

    Returns
    -------
    Case

    Notes
    -----
    Steady state before closing, phasors in the sine convention: V = V_0∠alpha,
    I_L = V/Z_L, E'' = V + (R + jX)*I_L; in E'''s frame I_q - j*I_d = I_L*e^(-j*beta)/I_b;
    E'_q = E''_q + (X'_d - X''_d)*I_d, E_fd = E'_q + (X_d - X'_d)*I_d (the d-axis equations at
    rest), V_ref = V_0 + E_fd/K_A.

    With the resistor R in, a transformer loop's resistance is R_w + k*R + R_s,loop (k = 1 for
    wye, 2 for a delta winding loop, which closes through two lines) and its shortest time
    constant (L_air + L_loop)/(R_w + k*R + R_s,loop), L_loop the source inductance the loop
    sees (in parallel with the bus load's for wye). The largest R for which that time constant
    stays at or above 4 steps of the finest allowed step, 4/(f*MAX_STEPS_PER_CYCLE), is
    ``insertion_limit_ohm``.

    References
    ----------
    Steady state and d-axis equations: P. Kundur, "Power System Stability and Control",
    McGraw-Hill, 1994, ch. 4-5 -- from memory; the loops as in :mod:`core.supply.dip_kernel`.
    """
    omega = 2.0 * math.pi * circuit.frequency_hz
    bus = _bus_before_closing(src, event.closing_angle_deg, load_w_var, v0_pu, omega)
    cp, (e2, e1, efd), tau = _source_columns(src, bus, v0_pu, omega)
    loops = _transformer_loops(src, circuit, event, bus, load_w_var, tau)
    r_ins = float(event.insertion_resistance_ohm)
    y0 = loops.y0
    y0[2 * loops.nl :] = (e2, e1, efd, v0_pu)
    lpar = loops.lpar
    lpar_ins = lpar.copy()
    lpar_ins[lpar[:, HTR] > 0.0, RW] = circuit.winding_resistance_ohm + loops.k_ins * r_ins
    y0_open = y0.copy()
    for q, value in loops.opened:
        y0_open[q] = value
    return Case(
        cp,
        lpar,
        loops.cvs,
        loops.tx,
        loops.ti,
        loops.inc,
        y0,
        min(tau),
        efd,
        lpar_ins,
        min(tau + loops.tau_ins),
        r_ins,
        loops.r_limit,
        y0_open,
        loops.poles,
    )


@dataclass(frozen=True)
class _Bus:
    """The bus before closing: phase voltage and its phasor [V]; the load's R [ohm], L [H] and
    current phasor [A] (zero without a load)."""

    v_ph: float
    v_bus: complex
    r_l: float
    l_l: float
    i_l: complex


def _bus_before_closing(
    src: SourceParameters,
    closing_angle_deg: float,
    load_w_var: tuple[float, float] | None,
    v0_pu: float,
    omega: float,
) -> _Bus:
    """The bus voltage V_0∠alpha and the constant-impedance load's current V/Z_L."""
    v_ph = src.line_voltage_v / math.sqrt(3.0)
    v_bus = cmath.rect(v0_pu * v_ph, math.radians(closing_angle_deg))
    r_l = l_l = 0.0
    i_l = 0j
    if load_w_var is not None:
        z_l = v_ph * v_ph / (complex(*load_w_var) / 3.0).conjugate()
        r_l, l_l = z_l.real, z_l.imag / omega
        i_l = v_bus / z_l
    return _Bus(v_ph, v_bus, r_l, l_l, i_l)


def _source_columns(
    src: SourceParameters, bus: _Bus, v0_pu: float, omega: float
) -> tuple[FloatArray, tuple[float, float, float], list[float]]:
    """The source's packed parameters, its pre-event (E''_q, E'_q, E_fd) and time constants."""
    v_ph, r_ph, l_ph = bus.v_ph, src.resistance_ohm, src.inductance_h
    i_base = src.base_va / (math.sqrt(3.0) * src.line_voltage_v)
    emf = bus.v_bus + complex(r_ph, omega * l_ph) * bus.i_l
    beta = cmath.phase(emf)
    i_d0 = -(bus.i_l * cmath.rect(1.0, -beta) / i_base).imag
    e2 = abs(emf) / v_ph
    e1 = efd = e2
    cp = np.zeros(NCP)
    cp[T2O] = cp[T1O] = cp[TA] = 1.0
    cp[[BETA, EB, IB, RPH, LPH]] = (beta, math.sqrt(2.0) * v_ph, i_base, r_ph, l_ph)
    tau = [math.inf]
    if src.machine is not None:
        x2, x1, xd, t2o, t1o, ra = src.machine
        e1 = e2 + (x1 - x2) * i_d0
        efd = e1 + (xd - x1) * i_d0
        cp[[DYN, X2, X1, XD, T2O, T1O, RA]] = (1.0, x2, x1, xd, t2o, t1o, ra)
        tau.append(t2o)
        if src.regulator is not None:
            ka, ta, emax, emin, tr = src.regulator
            if not emin <= efd <= emax:
                raise ParameterError(
                    "excitation.ceiling_pu",
                    emax,
                    f"at least the pre-event field voltage {efd:.4g} pu that the bus load needs",
                )
            cp[[AVR, KA, TA, EMAX, EMIN, TR]] = (1.0, ka, ta, emax, emin, tr)
            cp[VREF] = v0_pu + efd / ka
            tau += [ta] + ([tr] if tr > 0.0 else [])
    return cp, (e2, e1, efd), tau


@dataclass
class _Loops:
    """The transformer's (and bus load's) loops being packed, one row per loop; ``opened``
    lists (state, value) with the transformer branch open."""

    nl: int
    k_ins: float
    lpar: FloatArray
    inc: FloatArray
    y0: FloatArray
    poles: IntArray
    cvs: FloatArray
    tx: FloatArray
    ti: FloatArray
    opened: list[tuple[int, float]] = field(default_factory=list)
    tau_ins: list[float] = field(default_factory=list)
    r_limit: float = math.inf


def _transformer_loops(
    src: SourceParameters,
    circuit: EquivalentCircuit,
    event: SwitchingEvent,
    bus: _Bus,
    load_w_var: tuple[float, float] | None,
    tau: list[float],
) -> _Loops:
    """Every winding's loop (and the bus load's) packed; appends their time constants to tau."""
    delta = circuit.connection == "delta"
    nl = 6 if delta else 3
    width = circuit.curve.flux_wb.size if isinstance(circuit.curve, PiecewiseLinearCurve) else 2
    cvs = np.zeros((nl, 7))
    cvs[:, 1] = 2.0
    loops = _Loops(
        nl=nl,
        k_ins=2.0 if delta else 1.0,  # delta: the winding loop closes through two line resistors
        lpar=np.zeros((nl, NLP)),
        inc=np.zeros((2, 3, nl)),
        y0=np.zeros(2 * nl + 4),
        poles=np.full((nl, 2), -1, dtype=np.int64),
        cvs=cvs,
        tx=np.zeros((nl, width)),
        ti=np.zeros((nl, width)),
    )
    r_ins = float(event.insertion_resistance_ohm)
    for k in range(3):
        shift = -2.0 * math.pi * k / 3.0
        i_l0 = math.sqrt(2.0) * abs(bus.i_l) * math.sin(cmath.phase(bus.i_l) + shift)
        lam0 = float(event.residual_flux_pu[k]) * circuit.nominal_flux_wb
        c0 = float(circuit.curve.current(lam0))
        jt, jl = _place_winding(loops, k, delta, src, circuit)
        loops.lpar[jt, [LAM0, C0]] = (lam0, c0)
        loops.opened.append((jt, lam0))
        ls_t = loops.lpar[jt, LS]
        lp = ls_t
        if load_w_var is not None:
            lp = _place_load(loops, (jt, jl), delta, bus, load_w_var, circuit, (i_l0, c0), tau)
        i_shared = 0.0 if delta else i_l0
        loops.y0[jt] = lam0 + ls_t * (c0 + i_shared)
        _pack_winding(loops, jt, circuit, lp, r_ins, tau)
    return loops


def _place_winding(
    loops: _Loops, k: int, delta: bool, src: SourceParameters, circuit: EquivalentCircuit
) -> tuple[int, int]:
    """Winding k's loop: its EMF, source path, poles and line incidence; (its row, its load's)."""
    r_ph, l_ph = src.resistance_ohm, src.inductance_h
    lpar, inc = loops.lpar, loops.inc
    shift = -2.0 * math.pi * k / 3.0
    jt, jl = (k, 3 + k) if delta else (k, k)
    m = 2.0 if delta else 1.0  # delta: loop on the line-to-line EMF behind 2 x Z_s
    lpar[jt, [AMP, PHS, RS, LS, HTR, RW]] = (
        math.sqrt(3.0) if delta else 1.0,
        shift + (math.pi / 6.0 if delta else 0.0),
        m * r_ph,
        m * l_ph,
        1.0,
        circuit.winding_resistance_ohm,
    )
    if delta:
        lpar[jl, [AMP, PHS, RS, LS]] = (1.0, shift, r_ph, l_ph)
        loops.poles[jt] = (k, (k + 1) % 3)  # winding ab closes with poles a and b, ...
        inc[0, k, k] += 1.0  # i_a = c_ab - c_ca, ...
        inc[0, k, (k + 2) % 3] -= 1.0
    else:
        loops.poles[jt] = (k, k)
        inc[0, k, k] = 1.0
    inc[1, k, jl] = 1.0
    return jt, jl


def _place_load(
    loops: _Loops,
    rows: tuple[int, int],
    delta: bool,
    bus: _Bus,
    load_w_var: tuple[float, float],
    circuit: EquivalentCircuit,
    initial: tuple[float, float],
    tau: list[float],
) -> float:
    """The bus load's loop beside a winding's (rows: winding, load; initial: the load's and
    the winding's currents); returns the inductance in series with the winding."""
    jt, jl = rows
    i_l0, c0 = initial
    f = circuit.frequency_hz
    lpar, y0, nl = loops.lpar, loops.y0, loops.nl
    r_l, l_l = bus.r_l, bus.l_l
    ls_t = lpar[jt, LS]
    c_shared = 0.0 if delta else c0
    lpar[jl, [HLD, RL, LL]] = (1.0, r_l, l_l)
    den = l_l + lpar[jl, LS]
    y0[nl + jl] = l_l * i_l0 + lpar[jl, LS] * (i_l0 + c_shared)
    if not delta:  # the loop shares the winding's source path
        loops.opened.append((nl + jl, l_l * i_l0 + lpar[jl, LS] * i_l0))
    r_loop = r_l + lpar[jl, RS]
    tau_l = den / r_loop if r_loop > 0.0 else math.inf
    if tau_l * f * MAX_STEPS_PER_CYCLE < 4.0:
        raise ParameterError(
            "bus_load.reactive_power_var",
            load_w_var[1],
            "enough reactive power that the load loop's time constant "
            f"(L_L + L_s)/(R_L + R_s) = {tau_l:.3g} s reaches "
            f"{4.0 / (f * MAX_STEPS_PER_CYCLE):.3g} s (a nearly resistive load on the "
            "source inductance is too stiff for the fixed step)",
        )
    tau.append(tau_l)
    lp: float = ls_t if delta else ls_t * l_l / den
    return lp


def _pack_winding(
    loops: _Loops,
    jt: int,
    circuit: EquivalentCircuit,
    lp: float,
    r_ins: float,
    tau: list[float],
) -> None:
    """Winding jt's curve in its loop variable, its time constants with and without R in."""
    f = circuit.frequency_hz
    ls_t = loops.lpar[jt, LS]
    loops.cvs[jt], cx, ci = pack_curve(circuit, lp)
    loops.tx[jt, : cx.size], loops.ti[jt, : ci.size] = cx, ci
    r_loop = circuit.winding_resistance_ohm + loops.lpar[jt, RS]
    if r_loop > 0.0:
        tau.append((circuit.air_core_inductance_h + ls_t) / r_loop)
    l_loop = circuit.air_core_inductance_h + lp
    r_loop_ins = r_loop + loops.k_ins * r_ins
    if r_loop_ins > 0.0:
        loops.tau_ins.append(l_loop / r_loop_ins)
    loops.r_limit = min(
        loops.r_limit, (l_loop * f * MAX_STEPS_PER_CYCLE / 4.0 - r_loop) / loops.k_ins
    )


@dataclass(frozen=True)
class Raw:
    """Kernel output: per-cycle values, shapes (n_cases, 3, n_cycles) or (n_cases, n_cycles).

    ``insertion_energy_j`` (n_cases,) is the energy each case's pre-insertion resistor absorbs
    [J]; ``bypass_time_s`` the instant it is bypassed, on the step grid (0 when it is never in,
    past the simulated time when it is never bypassed) [s]; ``insertion_substeps`` (n_cases,)
    the sub-steps per step while it is in [-]; ``pole_close_s`` (3,) the closing instant of
    each pole on the step grid [s].
    """

    steps_per_cycle: int
    v_rms_pu: FloatArray
    v_line_rms_pu: FloatArray
    i_rms_a: FloatArray
    peaks_a: FloatArray
    emf_pu: FloatArray
    field_pu: FloatArray
    wave_t_s: FloatArray
    wave_v: FloatArray
    wave_i: FloatArray
    insertion_energy_j: FloatArray = field(default_factory=lambda: np.zeros(0))
    bypass_time_s: float = 0.0
    insertion_substeps: IntArray = field(default_factory=lambda: np.ones(0, dtype=np.int64))
    pole_close_s: FloatArray = field(default_factory=lambda: np.zeros(3))


def cycle_steps(frequency_hz: float, duration_s: float, steps_per_cycle: int) -> int:
    """Steps of a dip run: the whole cycles up to ``duration_s``, each of the given steps.

    Parameters
    ----------
    frequency_hz : float
        Frequency [Hz].
    duration_s : float
        Simulated time [s].
    steps_per_cycle : int
        Steps per cycle [-].

    Returns
    -------
    int
        floor(T*f) x steps per cycle (0 when T is shorter than a cycle) [-].

    Notes
    -----
    n = floor(T*f + 1e-9)*spc: :func:`run` simulates whole cycles only (the 1e-9 keeps a
    duration of exactly k cycles at k despite rounding).

    References
    ----------
    This project's dip solver (:func:`run`).
    """
    return math.floor(duration_s * frequency_hz + 1e-9) * steps_per_cycle


def run(
    cases: Sequence[Case],
    frequency_hz: float,
    voltage_base_v: float,
    duration_s: float,
    steps_per_cycle: int,
    wave_points: int,
    *,
    event: SwitchingEvent | None = None,
) -> Raw:
    """Integrate every case over whole cycles.

    Parameters
    ----------
    cases : sequence of Case
        Same connection for all [-].
    frequency_hz : float
        [Hz].
    voltage_base_v : float
        Rated phase voltage of the per-unit outputs [V].
    duration_s : float
        Whole cycles up to this time are simulated [s].
    steps_per_cycle : int
        At least 128; raised so that the step stays below a quarter of the shortest time
        constant (accuracy and stability of the explicit method) [-].
    wave_points : int
        About this many waveform samples returned (0: none) [-].
    event : SwitchingEvent or None
        The energisation the cases were built for; its timing is used here, the same for every
        case: each case's pre-insertion resistor (:func:`build_case`) is in from t = 0 to
        ``event.insertion_time_s`` rounded to the nearest step, then bypassed (nothing changes
        when that is 0 or every case's resistor is 0); poles a, b and c close at
        ``event.pole_delay_s``, each in [0, duration_s) (see :func:`check_poles`), rounded to
        the nearest step. None for all poles at t = 0 and no resistor [-].

    Returns
    -------
    Raw

    Raises
    ------
    ParameterError
        When a time constant needs more than MAX_STEPS_PER_CYCLE steps per cycle: naming
        ``time_constants``, or ``insertion_resistance_ohm`` with the largest resistor the
        circuit allows; naming ``pole_delay_s`` when a pole would close at or after the end of
        the whole cycles simulated.

    Notes
    -----
    While the resistor is in, each step of each case is split into the fewest equal sub-steps
    that keep the sub-step at or below a quarter of that case's shortest time constant with it
    in (the same rule as the step), the outputs staying on the step grid; unlike the step,
    which all cases share, a case's sub-steps do not depend on the other cases run with it.

    A loop's transformer branch closes when the later of its two poles (``Case.loop_poles``)
    closes: a wye winding with its own pole, a delta winding ab with poles a and b. Until then
    it carries no current and keeps its residual flux; the bus load is on the source side of
    the breaker and sees no pole. The pre-insertion resistor is timed from t = 0 whatever the
    poles do. With every pole at 0 the kernel runs exactly as without poles.

    References
    ----------
    Classical Runge-Kutta with a step of at most a quarter of the shortest time constant:
    common practice for explicit integration of stiff-ish circuits (this project's rule).
    """
    delays = check_poles(0.0 if event is None else event.pole_delay_s, duration_s)
    f = frequency_hz
    spc, n_steps = _step_plan(cases, f, duration_s, steps_per_cycle)
    n_cyc = n_steps // spc
    h = 1.0 / (f * spc)
    n = len(cases)
    t_ins = 0.0 if event is None else event.insertion_time_s
    n_in, sub = _insertion_plan(cases, f, spc, t_ins)
    lpar = np.ascontiguousarray(np.stack([c.lpar for c in cases]))
    lpar_in = lpar
    if n_in > 0:
        lpar_in = np.ascontiguousarray(
            np.stack([c.lpar if c.lpar_inserted is None else c.lpar_inserted for c in cases])
        )
    energy = np.zeros(n)
    pole_step, close, y0 = _closing_plan(cases, delays, f, spc, n_steps)
    width = max(c.tx.shape[1] for c in cases)

    def pad(a: FloatArray) -> FloatArray:
        # repeat the last breakpoint: the search never goes past npts
        return np.concatenate([a, np.repeat(a[:, -1:], width - a.shape[1], axis=1)], axis=1)

    stride = max(1, math.ceil((n_steps + 1) / wave_points)) if wave_points > 0 else 0
    nw = n_steps // stride + 1 if stride else 1
    out = np.zeros((n, 4, 3, n_cyc))
    means = np.zeros((n, 2, n_cyc))
    wave = np.zeros((n, 2, 3, nw))

    def stack(get: Callable[[Case], FloatArray]) -> FloatArray:
        return np.ascontiguousarray(np.stack([get(c) for c in cases]))

    integrate(
        n_steps,
        spc,
        h,
        2.0 * math.pi * f,
        stack(lambda c: c.cp),
        lpar,
        stack(lambda c: c.cv),
        stack(lambda c: pad(c.tx)),
        stack(lambda c: pad(c.ti)),
        np.ascontiguousarray(cases[0].inc),
        y0,
        stride,
        out,
        means,
        wave,
        n_in,
        sub,
        lpar_in,
        energy,
        close,
    )
    if not np.all(np.isfinite(out)):
        raise ParameterError("circuit", "non-finite result", "a circuit that stays finite")
    t_wave: FloatArray = np.arange(nw, dtype=np.float64) * (h * stride) if stride else np.zeros(0)
    return Raw(
        steps_per_cycle=spc,
        v_rms_pu=np.sqrt(out[:, 0] / spc) / voltage_base_v,
        v_line_rms_pu=np.sqrt(out[:, 1] / spc) / (math.sqrt(3.0) * voltage_base_v),
        i_rms_a=np.sqrt(out[:, 2] / spc),
        peaks_a=out[:, 3],
        emf_pu=means[:, 0] / spc,
        field_pu=means[:, 1] / spc,
        wave_t_s=t_wave,
        wave_v=wave[:, 0] if stride else np.zeros((n, 3, 0)),
        wave_i=wave[:, 1] if stride else np.zeros((n, 3, 0)),
        insertion_energy_j=np.array([c.insertion_resistance_ohm for c in cases]) * energy,
        bypass_time_s=n_in * h,
        insertion_substeps=sub,
        pole_close_s=pole_step.astype(np.float64) * h,
    )


def _step_plan(
    cases: Sequence[Case], f: float, duration_s: float, steps_per_cycle: int
) -> tuple[int, int]:
    """Steps per cycle (raised to a quarter of the shortest time constant) and steps in all."""
    if not (isinstance(steps_per_cycle, int) and steps_per_cycle >= MIN_STEPS_PER_CYCLE):
        raise ParameterError("steps_per_cycle", steps_per_cycle, "an integer >= 128")
    tau_min = min(c.tau_min_s for c in cases)
    spc = max(steps_per_cycle, math.ceil(4.0 / (f * tau_min)) if tau_min < math.inf else 0)
    if spc > MAX_STEPS_PER_CYCLE:
        raise ParameterError(
            "time_constants",
            tau_min,
            f"a shortest time constant of at least {4.0 / (f * MAX_STEPS_PER_CYCLE):.3g} s",
        )
    n_steps = cycle_steps(f, duration_s, spc)
    if n_steps < 1:
        raise ParameterError("duration_s", duration_s, f">= one cycle ({1.0 / f:g} s)")
    return spc, n_steps


def _insertion_plan(
    cases: Sequence[Case], f: float, spc: int, insertion_time_s: float
) -> tuple[int, IntArray]:
    """Steps the resistors are in (0: none) and each case's sub-steps per step meanwhile."""
    n_in = 0
    sub = np.ones(len(cases), dtype=np.int64)
    if any(c.insertion_resistance_ohm > 0.0 for c in cases):
        n_in = math.floor(check_insertion(0.0, insertion_time_s)[1] * f * spc + 0.5)
    if n_in > 0:
        worst = min(cases, key=lambda c: c.insertion_limit_ohm - c.insertion_resistance_ohm)
        if worst.insertion_resistance_ohm > worst.insertion_limit_ohm:
            raise ParameterError(
                "insertion_resistance_ohm",
                worst.insertion_resistance_ohm,
                f"[0, {max(worst.insertion_limit_ohm, 0.0):.4g}] ohm for this circuit and "
                "source: a larger resistor makes the transformer loop's time constant while it "
                f"is in shorter than {4.0 / (f * MAX_STEPS_PER_CYCLE):.3g} s, too short for "
                f"the fixed step ({MAX_STEPS_PER_CYCLE} steps per cycle at most)",
            )
        for i, c in enumerate(cases):
            if c.tau_inserted_s < math.inf:
                sub[i] = max(1, -(-math.ceil(4.0 / (f * c.tau_inserted_s)) // spc))
    return n_in, sub


def _closing_plan(
    cases: Sequence[Case], delays: FloatArray, f: float, spc: int, n_steps: int
) -> tuple[IntArray, IntArray, FloatArray]:
    """Each pole's closing step, each loop's, and the initial states that go with them."""
    y0 = np.ascontiguousarray(np.stack([c.y0 for c in cases]))
    pole_step = np.floor(delays * f * spc + 0.5).astype(np.int64)
    close = np.zeros((len(cases), cases[0].lpar.shape[0]), dtype=np.int64)
    if np.any(pole_step > 0):
        if pole_step.max() >= n_steps:
            h = 1.0 / (f * spc)
            raise ParameterError(
                "pole_delay_s",
                float(delays.max()),
                f"before the end of the whole cycles simulated, {n_steps // spc / f:g} s, by at "
                f"least half an internal step ({0.5 * h:.3g} s)",
            )
        for i, c in enumerate(cases):
            close[i], y0[i] = c.closing(pole_step)
    return pole_step, close, y0


def check_insertion(resistance_ohm: float, time_s: float) -> tuple[float, float]:
    """Validate a pre-insertion resistor [ohm] and its insertion time [s]; return both as floats.

    The resistance must be finite and >= 0 (the largest a circuit allows is checked by
    :func:`run`, which knows the step); the time in [0, 600] s, the longest simulated duration.

    Parameters
    ----------
    resistance_ohm : float
        Pre-insertion resistor per pole, >= 0 [ohm].
    time_s : float
        Its time in circuit from closing, >= 0 [s].
    """
    try:
        r = float(resistance_ohm)
    except (TypeError, ValueError):
        r = math.nan
    if not (math.isfinite(r) and r >= 0.0):
        raise ParameterError("insertion_resistance_ohm", resistance_ohm, "finite and >= 0")
    try:
        t = float(time_s)
    except (TypeError, ValueError):
        t = math.nan
    if not (math.isfinite(t) and 0.0 <= t <= 600.0):
        raise ParameterError("insertion_time_s", time_s, "in [0, 600]")
    return r, t


def check_poles(pole_delay_s: ArrayLike, duration_s: float) -> FloatArray:
    """Validate pole closing instants [s], one or one per pole (a, b, c), in [0, duration_s).

    Returns them as an array of shape (3,); raises :class:`ParameterError` naming
    ``pole_delay_s``.

    Parameters
    ----------
    pole_delay_s : array_like
        A scalar or one closing instant per pole [s].
    duration_s : float
        Simulated time every pole must close within [s].
    """
    try:
        d = np.broadcast_to(np.asarray(pole_delay_s, dtype=float), (3,)).astype(float)
    except (TypeError, ValueError) as exc:
        raise ParameterError(
            "pole_delay_s", repr(pole_delay_s), "a scalar or 3 values (poles a, b, c)"
        ) from exc
    if not (np.all(np.isfinite(d)) and np.all(d >= 0.0) and np.all(d < duration_s)):
        raise ParameterError("pole_delay_s", d.tolist(), f"each in [0, {duration_s:g}) s")
    return d


def check_inputs(
    source: SourceLike,
    circuit: EquivalentCircuit,
    event: SwitchingEvent,
    pre_event_voltage_pu: float,
    duration_s: float,
) -> list[tuple[str, str]]:
    """Validate the inputs every dip simulation shares; return its (code, message) warnings.

    Raises :class:`ParameterError` naming the offending input.

    Parameters
    ----------
    source : Generator or UtilitySource
        The source; it needs line_voltage_v [V] and frequency_hz [Hz] [-].
    circuit : EquivalentCircuit
        Three-phase circuit built on an ideal source [-].
    event : SwitchingEvent
        The energisation, built for a three-phase circuit: residual flux in [-5, 5]
        [pu of lambda_N], the resistor's insertion time in [0, 600] [s] (:func:`check_insertion`),
        each pole within ``duration_s`` (:func:`check_poles`), no ramped source [-].
    pre_event_voltage_pu : float
        Terminal voltage before closing, in [0.5, 1.5] [pu].
    duration_s : float
        Simulated time, in (0, 600] [s].

    Returns
    -------
    list of (str, str)
        ``voltage_mismatch`` when the transformer's rated voltage is more than 10 % off the
        source's, then the event's own warnings.

    Notes
    -----
    The event itself was checked once when it was built
    (:func:`core.energization.switching_event.switching_event`); here only what the dip model
    adds: the bounds that depend on the simulated time, and what it does not model (a ramp).

    References
    ----------
    This project's input rules.
    """
    if not (hasattr(source, "line_voltage_v") and hasattr(source, "frequency_hz")):
        raise ParameterError("source", type(source).__name__, "a Generator or UtilitySource")
    if circuit.phases != 3:
        raise ParameterError("circuit.phases", circuit.phases, "3 (a three-phase unit)")
    if circuit.source_inductance_h != 0.0 or circuit.source_resistance_ohm != 0.0:
        raise ParameterError(
            "circuit.source_inductance_h",
            circuit.source_inductance_h,
            "0: build the circuit with an ideal source; the generator or utility model is the "
            "source impedance",
        )
    if abs(circuit.frequency_hz - source.frequency_hz) > 1e-9 * source.frequency_hz:
        raise ParameterError(
            "circuit.frequency_hz",
            circuit.frequency_hz,
            f"the source frequency {source.frequency_hz:g} Hz",
        )
    checks.in_range("pre_event_voltage_pu", pre_event_voltage_pu, 0.5, 1.5, open_low=False)
    checks.in_range("duration_s", duration_s, 0.0, 600.0)
    res = event.residual_flux_pu
    if res.shape != (3,) or event.pole_delay_s.shape != (3,):
        raise ParameterError("event", f"{res.size} windings", "an event built for 3 phases")
    if np.any(np.abs(res) > 5.0):
        raise ParameterError("residual_flux_pu", res.tolist(), "finite values in [-5, 5]")
    if not (
        event.voltage_start_pu == 1.0
        and event.voltage_hold_s == 0.0
        and event.voltage_rise_s == 0.0
    ):
        raise ParameterError("event", "a ramped source", "a closing onto the source as it is")
    check_insertion(event.insertion_resistance_ohm, event.insertion_time_s)
    check_poles(event.pole_delay_s, duration_s)
    warnings: list[tuple[str, str]] = []
    ratio = circuit.line_voltage_v / source.line_voltage_v
    if abs(ratio - 1.0) > 0.1:
        warnings.append(
            (
                "voltage_mismatch",
                f"transformer rated voltage is {ratio:.3g} x the "
                "source's: the unit is energised off its rated flux",
            )
        )
    warnings += event.warnings
    return warnings
