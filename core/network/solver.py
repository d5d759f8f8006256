"""One three-phase network in the time domain: a source, a bus with its load, many transformers.

The network, per phase k = a, b, c (ABC sequence):

* source -- EMF e_k = g(t)*sqrt(2)*V/sqrt(3)*sin(omega*t + alpha + theta_k), theta = (0, -120,
  +120) degrees, behind R_s and L_s (wye-equivalent, neutral grounded: zero-sequence impedance
  equal to the positive-sequence one); g is the optional ramp of the EMF (reduced-voltage start);
  or a synchronous machine (:mod:`core.network.machine`): its EMF behind R_a + jX''_d evolving
  with its d-axis fluxes and regulator, the machine states integrated with the same
  Runge-Kutta stages as the loop fluxes, its parameters (and so R_s, L_s) per case;
* bus -- node voltages v_k = e_k - R_s*i_sk - L_s*di_sk/dt, with an optional constant-impedance
  load R_L, L_L per phase, wye-grounded;
* units -- each transformer behind its own breaker: line k of unit u runs from the bus through
  pole k (closing at its own instant) and an optional pre-insertion resistor R_ins (in all lines
  until the bypass) to terminal k. Windings (one magnetising curve f each, resistance R_w):
  grounded wye (winding k from terminal k to ground), floating wye (to a common neutral) or
  delta (winding ab from terminal a to b, bc, ca); each obeys v_w = R_w*c_w + d(lambda_w)/dt,
  c_w = f(lambda_w). Line currents l_k = c_k for a wye, l_a = c_ab - c_ca, ... for a delta.
  KCL at the bus: i_s = sum_u S_u*l_u + i_L, S_u the closed poles.

States (one per inductive loop, so that their derivatives are continuous even at a sharp knee
of the curve, where d(lambda)/dt itself jumps with L_s > 0):

* each energised winding's loop flux, psi_w = lambda_w + (C^T S Phi)_w - a_w*sigma, with
  Phi = L_s*i_s the source-inductor fluxes, C the winding-to-line incidence (identity for a wye,
  A = [[1,0,-1],[-1,1,0],[0,-1,1]] for a delta), and sigma the flux of a floating node (the
  neutral of a floating wye, the terminal of a delta whose pole is still open), a its incidence.
  By KVL around the loop source-bus-line-winding,
  d(psi_w)/dt = (C^T u)_w - R_w*c_w, u_k = e_k - R_s*i_sk - R_ins*l_k for a closed pole, 0 for
  an open one;
* each load phase's loop flux, psi_Lk = Phi_k + L_L*i_Lk, d(psi_Lk)/dt = e_k - R_s*i_sk - R_L*i_Lk.

At every stage the algebra recovers the currents from the states: Phi solves
R(Phi) = Phi/L_s - sum_u S_u*l_u(Phi) - (psi_L - Phi)/L_L = 0, three equations for the whole
network. Newton's method on it needs J = I/L_s + sum_u G_u + I/L_L, G_u = S C D~ C^T S with
D~ = D - (D a)(D a)^T/(a^T D a) (D = diag f'; D~ = D without a floating node): the units meet
only through this 3x3 sum (a Schur complement of the network's Jacobian on the bus), so a
stage costs O(n_units) -- each unit evaluates its curve for the trial Phi and, with a floating
node, solves the monotone scalar equation sum_w a_w*f(x_w + a_w*sigma) = q for sigma (Newton's
method kept in a bracket). The floating node's constraint holds the current into it at the
value it had when the unit's poles last switched (zero but for the magnetising current of the
residual flux), which is Kirchhoff's current law there. With L_s = 0 the source flux is zero and
no solve is needed. The bus voltage is v = e - R_s*i_s - dPhi/dt with
J*dPhi/dt = sum_u S C D~ psi_u' + psi_L'/L_L (the derivative of R(Phi) = 0).

Switching: pole closings and the resistor's bypass are rounded to the step; a winding is
energised once its path closes (a grounded-wye winding with its pole; a floating wye's windings
once two of its poles are closed; all three of a delta's once two of its poles are closed --
with one pole open the two windings on that terminal carry the same current in series). At a
switching the winding fluxes and the load currents are continuous, the source current takes the
new sum of the line currents (the newly energised windings carrying f(lambda_r), their
magnetising current at the residual flux, from that instant) and the loop fluxes are rebuilt
from them. A unit in service at t = 0 starts at the phasor steady state of the network with its
windings at the secant inductance of their steady peak flux (exact for a curve linear up to that
peak, e.g. a two-slope curve below its knee); its residual flux is not used.

Numerics: classical fourth-order Runge-Kutta (Kutta 1901) at a fixed step, the step chosen by
:func:`step_rule` (at least 128 per cycle, at most a quarter of the fastest saturated loop's
time constant), compiled with numba and looped over cases; a batch with enough work is split
into contiguous chunks of cases run on threads (:func:`case_chunks`; each case is integrated
alone, so its result is the same bit for bit whatever the chunking). This is the project's one
time-domain solver: :func:`core.energization.energize.simulate`, behind every single-unit
operation (peak, envelope, batch, sheet, statistics, clearance, mitigation, the exact peak
reading), runs each of its cases as one unit on a Thevenin source through
:func:`run_single_unit`; :func:`simulate_network` runs networks and the generator dip. One
model, one set of states; where the network's structure decouples the phases -- a lone
grounded-wye unit on a Thevenin source without bus load (and so the single-phase circuits, a
grounded wye whose poles b and c never close) -- :func:`run_single_unit` runs it on a kernel of
its own (:func:`core.network.kernel.integrate_lone`): KCL at the bus is Phi_k = L_s*f(lambda_k)
per phase, so each closed phase's loop flux psi_k = lambda_k + L_s*f(lambda_k) is one scalar
equation, solved in closed form on each piece of a piecewise-linear curve (its breakpoints
mapped to psi, the table searched from the previous piece) and by scalar Newton's method in
lambda for the smooth knee, one element per phase and case, spread over the cores (numba's
prange) from 64 elements; the same stages, step, sub-steps and EMF as the general kernel, with
which it agrees to 3e-14 of the largest current (tests/core/network/test_lone_unit.py; the
general kernel at a Newton tolerance of 1e-14 pu, 2.4e-12 at its default on the smooth knee).
Several grounded-wye units on a Thevenin source, with or without a bus load, decouple the
phases too: where only the first peaks or the source current are kept (the statistics' Monte
Carlo and device events; :func:`phases_decoupled`), :func:`core.network.kernel.
integrate_decoupled` solves each phase's KCL, Phi_k/L_s = sum_u f_u(psi_uk - Phi_k) +
(psi_Lk - Phi_k)/L_L, a scalar equation increasing in Phi_k, by Newton's method in a bracket
(from the held pieces' affine root where the curves are piecewise linear, as below), one element
per phase and case; it agrees with the general kernel within 1e-15 of the largest current on
piecewise-linear curves and 2e-12 on the smooth knee (tests/core/network/
test_decoupled_phases.py), and with the reference below within 1.5e-5
(tests/references/test_network_vs_scipy.py). The
stage algebra starts from the accepted point of the previous stage: where every curve is piecewise
linear, R(Phi) is affine in Phi and in the loop fluxes on the pieces held there, so the Newton
step from that point with the new loop fluxes, Phi = Phi_a - J^-1*(R_a - sum S C D~ dpsi -
dpsi_L/L_L), and each floating node's sigma likewise, need no curve evaluation; one evaluation
per winding at that Phi confirms that no winding left its piece (then KCL holds exactly, to
rounding), and otherwise Newton's method runs from the accepted point as before. The EMF's sine
and cosine at the stage instants are shared by the cases (by rotation through omega*h/2, exact
every 64 half steps).

Accuracy, measured over the first ten cycles at 128 samples per cycle against an independent
reference written from Kirchhoff's laws (winding fluxes and load currents from one dense
system per call, scipy's LSODA at rtol 1e-10 stopped at every knee crossing;
tests/references/test_network_vs_scipy.py), as the worst per-cycle peak deviation relative to
that signal's largest peak: a unit energised beside an identical one in service 6.1e-6 (the
one in service 1.6e-5), a delta beside a floating wye in service 3.5e-6 (4.3e-5), four mixed
units with a bus load 1.1e-5 (3.0e-4 for the delta whose pre-insertion resistor is bypassed
after 2.5 cycles), staggered poles on a delta 1.9e-5, on a grounded wye 6.9e-6, on a floating
wye 1.1e-5; source currents within 2e-5, bus voltages within 8e-6 of their amplitude. One unit
on a Thevenin source agreed with the single-unit kernels this project had before within 1e-11
of the largest current for the three connections and the three curve kinds, but for a grounded
wye on the smooth knee, where those integrated lambda itself (2.8e-4 apart; against a 2048-step
solution this solver is within 4.5e-7, they 2.8e-4), and for staggered poles on a delta or a
floating wye (a delta's series path with one pole open, which they neglected; 1.3e-3 for the
floating wye while two poles are closed). The source current is recovered as Phi/L_s, so its
error is the Newton tolerance on Phi over L_s: negligible for a physical source, 5e-4 of the
peak at L_s = 1e-12 H (an ideal source, L_s = 0, takes no solve).

Approximations: phases magnetically independent (bank of single-phase cores); no hysteresis or
core loss; a source of equal zero- and positive-sequence impedance; an ideal breaker and
pre-insertion resistor; the pole instants, the bypass and the ramp's corners rounded to the
step.

References
----------
Loop fluxes as states of a network with inductor cut-sets and the nodal reduction: H. W. Dommel,
"Digital computer solution of electromagnetic transients in single- and multiphase networks,"
IEEE Trans. PAS-88(4), 1969 (from memory), for the nodal formulation of multiphase networks;
Kirchhoff's laws otherwise. Integrator: classical Runge-Kutta (Kutta 1901).
"""

from __future__ import annotations

import math
import queue
from collections.abc import Sequence
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field, replace

import numba
import numpy as np
from numpy.typing import ArrayLike, NDArray

from core.errors import LimitError, ParameterError
from core.network import analysis, kernel
from core.network import machine as _machine
from core.network.machine import Machine
from core.transformer import EquivalentCircuit, source_impedance
from core.transformer import Source as _NameplateSource
from core.transformer.magnetizing import PiecewiseLinearCurve, SmoothKneeCurve
from core.waveform import MAX_STEPS_PER_CYCLE, MIN_STEPS_PER_CYCLE, shortest_time_constant

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]

__all__ = [
    "MAX_STEPS_PER_CYCLE",
    "MIN_STEPS_PER_CYCLE",
    "NEWTON_TOLERANCE_PU",
    "PARALLEL_MIN_CHUNK_STEPS",
    "Breaker",
    "BusLoad",
    "NetworkResult",
    "Source",
    "StepGrid",
    "Unit",
    "WindowRecord",
    "case_chunks",
    "insertion_substeps",
    "phases_decoupled",
    "run_single_unit",
    "simulate_network",
    "simulate_windows",
    "step_plan",
    "step_rule",
]

# Step bounds per cycle of step_rule: core.waveform's (MIN_ and MAX_STEPS_PER_CYCLE, imported).
# Newton tolerance on Phi and on a floating node's flux [pu of the unit's lambda_N]
NEWTON_TOLERANCE_PU = 1e-12
# Least work (unit-steps) of one chunk of cases run on its own thread: starting the threads and
# dispatching the kernel costs about what a few hundred unit-steps do (measured), so a batch is
# split only where every chunk far outweighs that.
PARALLEL_MIN_CHUNK_STEPS = 20_000
CONNECTION_CODE = {
    "wye_grounded": kernel.GROUNDED_WYE,
    "wye": kernel.FLOATING_WYE,
    "delta": kernel.DELTA,
}
_PHASE_SHIFT = np.array([0.0, -2.0 * math.pi / 3.0, 2.0 * math.pi / 3.0])


def _finite(name: str, value: float, low: float, *, low_open: bool = False) -> float:
    v = float(value)
    ok = math.isfinite(v) and (v > low if low_open else v >= low)
    if not ok:
        raise ParameterError(name, value, f"a finite number {'>' if low_open else '>='} {low:g}")
    return v


@dataclass(frozen=True)
class Source:
    """Three-phase source: ideal EMFs behind a Thevenin impedance, with an optional EMF ramp.

    Attributes
    ----------
    line_voltage_v : float
        Rms line-to-line EMF at full voltage [V].
    frequency_hz : float
        [Hz].
    resistance_ohm : float
        Source resistance per phase, wye-equivalent [ohm].
    inductance_h : float
        Source inductance per phase, wye-equivalent [H].
    voltage_start_pu : float
        EMF amplitude from t = 0 until the end of the hold, in (0, 1] [pu of full voltage].
    voltage_hold_s : float
        Duration of the reduced EMF [s].
    voltage_rise_s : float
        Duration of the linear rise to full voltage after the hold; 0 gives a step [s].
    """

    line_voltage_v: float
    frequency_hz: float
    resistance_ohm: float = 0.0
    inductance_h: float = 0.0
    voltage_start_pu: float = 1.0
    voltage_hold_s: float = 0.0
    voltage_rise_s: float = 0.0

    @classmethod
    def from_fault_level(
        cls, line_voltage_v: float, frequency_hz: float, fault_va: float, x_over_r: float
    ) -> Source:
        """Thevenin source from its three-phase short-circuit power and X/R.

        Parameters
        ----------
        line_voltage_v : float
            Rms line-to-line voltage [V].
        frequency_hz : float
            [Hz].
        fault_va : float
            Three-phase short-circuit power at the bus [VA].
        x_over_r : float
            Ratio of source reactance to resistance [-].

        Returns
        -------
        Source

        Notes
        -----
        Z_s = V_LL^2/S_sc, R_s = Z_s/sqrt(1 + (X/R)^2), L_s = R_s*(X/R)/omega (common
        practice), as :func:`core.transformer.source_impedance`.
        """
        f = _finite("frequency_hz", frequency_hz, 0.0, low_open=True)
        r, x = source_impedance(
            _NameplateSource("fault_level", fault_va=fault_va, x_over_r=x_over_r),
            line_voltage_v,
            3,
        )
        return cls(line_voltage_v, f, r, x / (2.0 * math.pi * f))


@dataclass(frozen=True)
class BusLoad:
    """Constant-impedance load at the bus, per phase, wye-grounded.

    Attributes
    ----------
    resistance_ohm : float
        Series resistance per phase, >= 0 [ohm].
    inductance_h : float
        Series inductance per phase, > 0 (a purely resistive load is outside this model) [H].
    """

    resistance_ohm: float
    inductance_h: float

    @classmethod
    def from_power(
        cls, line_voltage_v: float, frequency_hz: float, active_w: float, reactive_var: float
    ) -> BusLoad:
        """Series R-L load that draws the given power at the given voltage.

        Parameters
        ----------
        line_voltage_v : float
            Rms line-to-line voltage at which the power is drawn [V].
        frequency_hz : float
            [Hz].
        active_w : float
            Three-phase active power, >= 0 [W].
        reactive_var : float
            Three-phase reactive power, > 0 (inductive) [var].

        Returns
        -------
        BusLoad

        Notes
        -----
        Z = V_LL^2/S* per phase: R = V^2*P/(P^2 + Q^2), X = V^2*Q/(P^2 + Q^2) (circuit laws).
        """
        v = _finite("line_voltage_v", line_voltage_v, 0.0, low_open=True)
        f = _finite("frequency_hz", frequency_hz, 0.0, low_open=True)
        p = _finite("active_w", active_w, 0.0)
        q = _finite("reactive_var", reactive_var, 0.0, low_open=True)
        s2 = p * p + q * q
        return cls(v * v * p / s2, v * v * q / s2 / (2.0 * math.pi * f))


@dataclass(frozen=True)
class Breaker:
    """The breaker in front of one unit.

    Attributes
    ----------
    closing_time_s : array_like
        Closing instant of each pole after t = 0: a scalar, one per pole (3,), or one per case
        and pole (n_cases, 3) [s].
    insertion_resistance_ohm : float
        Pre-insertion resistor in each line from t = 0 until the bypass, >= 0 [ohm].
    bypass_time_s : float
        Instant at which all poles short the resistor together [s].
    """

    closing_time_s: ArrayLike = 0.0
    insertion_resistance_ohm: float = 0.0
    bypass_time_s: float = 0.0


@dataclass(frozen=True)
class Unit:
    """One transformer on the bus, behind its own breaker.

    Attributes
    ----------
    circuit : EquivalentCircuit
        Its energised winding (three-phase): winding resistance, magnetising curve, lambda_N;
        the circuit's own source fields are not used (the network's source is).
    breaker : Breaker
        Its breaker.
    in_service : bool
        True: connected before t = 0 and in its periodic steady state then (the breaker is
        ignored and must be left at its defaults).
    residual_flux_pu : array_like
        Flux of each winding at t = 0 for a unit not in service: scalar, (3,) or
        (n_cases, 3) [pu of lambda_N].
    connection : str or None
        ``"wye_grounded"``, ``"wye"`` (floating neutral) or ``"delta"``; None takes the
        circuit's.
    """

    circuit: EquivalentCircuit
    breaker: Breaker = field(default_factory=Breaker)
    in_service: bool = False
    residual_flux_pu: ArrayLike = 0.0
    connection: str | None = None


@dataclass(frozen=True)
class NetworkResult:
    """Result of :func:`simulate_network`.

    Attributes
    ----------
    time_s : ndarray, shape (n_samples,)
        Sample instants from t = 0 [s].
    source_current_a : ndarray, shape (n_cases, 3, n_samples)
        Current out of the source per phase [A].
    bus_voltage_v : ndarray, shape (n_cases, 3, n_samples)
        Bus voltage per phase to ground [V].
    line_current_a : ndarray, shape (n_cases, n_units, 3, n_samples)
        Current in each line of each unit (0 while its pole is open) [A].
    winding_current_a : ndarray, shape (n_cases, n_units, 3, n_samples)
        Current in each winding (ab, bc, ca for a delta) [A].
    flux_linkage_wb : ndarray, shape (n_cases, n_units, 3, n_samples)
        Flux linkage of each winding [Wb-turn].
    load_current_a : ndarray, shape (n_cases, 3, n_samples)
        Current into the bus load [A] (zeros without one).
    steps_per_cycle : int
        Internal steps per cycle [-].
    closing_time_s : ndarray, shape (n_cases, n_units, 3)
        Pole instants used, rounded to the step (0 for units in service) [s].
    approximations : tuple of str
        What the model approximates.
    emf_pu : ndarray, shape (n_cases, n_samples)
        The machine's E''_q; 1 for a :class:`Source` (its ramp not included) [pu].
    field_voltage_pu : ndarray, shape (n_cases, n_samples)
        The machine's E_fd; 1 for a :class:`Source` [pu].
    insertion_energy_j : ndarray, shape (n_cases, n_units)
        Energy each unit's pre-insertion resistor absorbs until its bypass,
        R_ins * sum over lines of the integral of l_k^2 (the Runge-Kutta quadrature) [J].
    first_peak_a : ndarray, shape (n_cases, 1 + n_units)
        With ``record="first_peaks"``: the first peak of the source current, then of each
        unit's line currents (:func:`core.network.analysis.first_peaks` over the window);
        empty otherwise [A].
    """

    time_s: FloatArray
    source_current_a: FloatArray
    bus_voltage_v: FloatArray
    line_current_a: FloatArray
    winding_current_a: FloatArray
    flux_linkage_wb: FloatArray
    load_current_a: FloatArray
    steps_per_cycle: int
    closing_time_s: FloatArray
    approximations: tuple[str, ...]
    emf_pu: FloatArray = field(default_factory=lambda: np.ones((0, 0)))
    field_voltage_pu: FloatArray = field(default_factory=lambda: np.ones((0, 0)))
    insertion_energy_j: FloatArray = field(default_factory=lambda: np.zeros((0, 0)))
    first_peak_a: FloatArray = field(default_factory=lambda: np.zeros((0, 0)))
    grid: StepGrid | None = None


@dataclass(frozen=True)
class StepGrid:
    """What a restart of a run from one of its samples needs beside the recorded states.

    Attributes
    ----------
    step_s : float
        Internal step h [s].
    decimate : int
        Internal steps per output sample [-].
    phase_rad : ndarray, shape (n_cases, 3)
        Angle of each phase's EMF at t = 0 [rad].
    source_columns : ndarray, shape (n_cases, kernel.NSRC)
        The source's per-case parameters as the kernel takes them [-].
    close_step : ndarray of int, shape (n_cases, n_units, 3)
        Pole closings [steps] (<= 0: closed at t = 0).
    bypass_step : ndarray of int, shape (n_units,)
        Resistor bypass of each unit [steps] (0: none).
    ramp : tuple of (float, float, int, int)
        The EMF ramp: start [pu], slope [pu per step], end of the hold and of the rise [steps].
    insertion_steps : int
        Steps split into sub-steps while a resistor is in [steps].
    substeps : ndarray of int, shape (n_cases,)
        Sub-steps per such step [-].
    machine_state_pu : ndarray, shape (n_cases, 4, n_samples)
        The machine's E''_q, E_fd, E'_q and V_s at every sample (1 for a :class:`Source`) [pu].
    """

    step_s: float
    decimate: int
    phase_rad: FloatArray
    source_columns: FloatArray
    close_step: IntArray
    bypass_step: IntArray
    ramp: tuple[float, float, int, int]
    insertion_steps: int
    substeps: IntArray
    machine_state_pu: FloatArray


APPROXIMATIONS = (
    "phases magnetically independent (bank of single-phase cores); three-limb core coupling "
    "not modelled",
    "no hysteresis or core loss: residual flux is an initial condition on a single-valued curve",
    "source zero-sequence impedance taken equal to its positive-sequence impedance",
    "ideal breaker poles and pre-insertion resistor; switching instants rounded to the step",
    "units in service start at the phasor steady state with each winding at the secant "
    "inductance of its steady peak flux",
)


def _curve_arrays(
    circuits: Sequence[EquivalentCircuit],
) -> tuple[IntArray, FloatArray, FloatArray, FloatArray, IntArray]:
    """Curve parameters per unit for the kernel (see :func:`core.network.kernel._curve_seg_s`)."""
    n = len(circuits)
    width = max(
        (c.curve.flux_wb.size if isinstance(c.curve, PiecewiseLinearCurve) else 2) for c in circuits
    )
    kind = np.zeros(n, dtype=np.int64)
    par = np.zeros((n, 5))
    flux = np.zeros((n, width))
    cur = np.zeros((n, width))
    npts = np.full(n, 2, dtype=np.int64)
    for idx, circuit in enumerate(circuits):
        cv = circuit.curve
        if isinstance(cv, PiecewiseLinearCurve):
            p = cv.flux_wb.size
            flux[idx, :p] = cv.flux_wb
            cur[idx, :p] = cv.current_a
            flux[idx, p:] = cv.flux_wb[-1]
            cur[idx, p:] = cv.current_a[-1]
            npts[idx] = p
            if p == 2:
                par[idx] = (
                    cv.current_a[1] / cv.flux_wb[1],
                    cv.flux_wb[1],
                    1.0 / cv.final_inductance_h,
                    cv.current_a[1],
                    0.0,
                )
            else:
                kind[idx] = 2
                par[idx, 0] = 1.0 / cv.final_inductance_h
        else:
            kind[idx] = 1
            a = 1.0 / cv.unsaturated_inductance_h
            e = cv.knee_width_wb
            g0 = 0.5 * (-cv.knee_flux_wb + math.hypot(cv.knee_flux_wb, e))
            par[idx] = (a, 1.0 / cv.saturated_inductance_h - a, cv.knee_flux_wb, e, g0)
    return kind, par, flux, cur, npts


def _secant_inductance(curve: PiecewiseLinearCurve | SmoothKneeCurve, peak_wb: float) -> float:
    """lambda/f(lambda) at a flux peak: the inductance of the steady state's linear model [H]."""
    i = float(curve.current(peak_wb))
    return peak_wb / i if i > 0.0 else math.inf


def _steady_state(
    e_ph: float,
    z_s: complex,
    w: float,
    load: BusLoad | None,
    units: Sequence[Unit],
    connections: Sequence[str],
    phase: FloatArray,
) -> tuple[FloatArray, FloatArray, complex]:
    """Winding fluxes of the units in service and the load currents at t = 0.

    e_ph is the rms phase EMF [V], z_s the source impedance [ohm], w the angular frequency
    [rad/s]. Returns (lambda0 [Wb-turn], shape (n_cases, n_units, 3), i_L0 [A], shape
    (n_cases, 3), the bus-voltage phasor of phase a relative to its EMF [V rms]).
    Phasor steady state of the balanced network (positive sequence: the floating neutral
    carries no voltage), sine convention x(t) = Im(sqrt(2)*X*exp(j*omega*t)), with each winding
    at its secant inductance L = lambda_pk/f(lambda_pk), found by fixed-point iteration.
    """
    n = phase.shape[0]
    y_l = 0.0j if load is None else 1.0 / (load.resistance_ohm + 1j * w * load.inductance_h)
    in_service = [k for k, u in enumerate(units) if u.in_service]
    l_eff = {}
    for k in in_service:
        c = units[k].circuit
        l_eff[k] = (
            c.curve.unsaturated_inductance_h
            if isinstance(c.curve, SmoothKneeCurve)
            else float(c.curve.flux_wb[1] / c.curve.current_a[1])
        )
    v_bus = e_ph + 0.0j
    for _ in range(50):
        y = y_l
        for k in in_service:
            z_w = units[k].circuit.winding_resistance_ohm + 1j * w * l_eff[k]
            y += (3.0 if connections[k] == "delta" else 1.0) / z_w
        v_bus = e_ph / (1.0 + z_s * y)
        change = 0.0
        for k in in_service:
            c = units[k].circuit
            z_w = c.winding_resistance_ohm + 1j * w * l_eff[k]
            v_w = v_bus * (math.sqrt(3.0) if connections[k] == "delta" else 1.0)
            peak = math.sqrt(2.0) * abs(v_w / z_w) * l_eff[k]
            new = _secant_inductance(c.curve, peak)
            change = max(change, abs(new - l_eff[k]) / l_eff[k])
            l_eff[k] = new
        if change < 1e-14:
            break
    lam0 = np.zeros((n, len(units), 3))
    for k in in_service:
        c = units[k].circuit
        z_w = c.winding_resistance_ohm + 1j * w * l_eff[k]
        if connections[k] == "delta":
            v_w = v_bus * math.sqrt(3.0) * np.exp(1j * math.pi / 6.0)
        else:
            v_w = v_bus
        lam_ph = l_eff[k] * v_w / z_w
        lam0[:, k, :] = math.sqrt(2.0) * np.imag(lam_ph * np.exp(1j * phase))
    il0 = math.sqrt(2.0) * np.imag(y_l * v_bus * np.exp(1j * phase))
    return lam0, il0, complex(v_bus)


def _start(
    source: Source | Machine,
    n: int,
    load: BusLoad | None,
    units: Sequence[Unit],
    connections: Sequence[str],
    phase: FloatArray,
) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray]:
    """The steady state at t = 0 and the source's kernel columns.

    Returns (lambda0 [Wb-turn], (n, n_units, 3); i_L0 [A], (n, 3); src, (n, kernel.NSRC);
    m0, (n, 4) [pu]): for a :class:`Source` one phasor solution for all cases, for a
    :class:`core.network.machine.Machine` one per case (E''_q, R, L may differ), from which
    the machine's d-axis current and bus voltage at rest set its initial states.
    """
    w = 2.0 * math.pi * source.frequency_hz
    v_ph = source.line_voltage_v / math.sqrt(3.0)
    if isinstance(source, Source):
        z_s = source.resistance_ohm + 1j * w * source.inductance_h
        lam0, il0, _ = _steady_state(
            source.voltage_start_pu * v_ph, z_s, w, load, units, connections, phase
        )
        src, m0 = _machine.thevenin_pack(
            np.full(n, source.resistance_ohm), np.full(n, source.inductance_h)
        )
        return lam0, il0, src, m0
    r, ind = _machine.impedance(source, n)
    emf = np.broadcast_to(np.asarray(source.emf_pu, dtype=float).ravel(), (n,))
    lam0 = np.zeros((n, len(units), 3))
    il0 = np.zeros((n, 3))
    i_d0 = np.zeros(n)
    v0 = np.zeros(n)
    for c in range(n):
        z_s = complex(r[c], w * ind[c])
        e_ph = float(emf[c]) * v_ph
        lam0[c : c + 1], il0[c : c + 1], v_bus = _steady_state(
            e_ph, z_s, w, load, units, connections, phase[c : c + 1]
        )
        i_d0[c] = -((e_ph - v_bus) / z_s).imag if source.dynamic else 0.0
        v0[c] = abs(v_bus) / v_ph
    src, m0 = _machine.pack(source, n, i_d0, v0)
    return lam0, il0, src, m0


def _broadcast(name: str, value: ArrayLike, n: int) -> FloatArray:
    arr = np.asarray(value, dtype=float)
    try:
        out = np.broadcast_to(arr if arr.ndim == 2 else np.broadcast_to(arr, (3,)), (n, 3))
    except ValueError as exc:
        raise ParameterError(name, f"shape {arr.shape}", f"a scalar, (3,) or ({n}, 3)") from exc
    if not np.all(np.isfinite(out)):
        raise ParameterError(name, "non-finite", "finite numbers")
    return np.ascontiguousarray(out)


def _check_unit(k: int, unit: Unit, source: Source | Machine) -> str:
    c = unit.circuit
    where = f"units[{k}]"
    if not isinstance(c, EquivalentCircuit):
        raise ParameterError(f"{where}.circuit", type(c).__name__, "an EquivalentCircuit")
    if c.phases != 3:
        raise ParameterError(f"{where}.circuit.phases", c.phases, "3")
    conn = unit.connection or c.connection
    if conn not in CONNECTION_CODE:
        raise ParameterError(f"{where}.connection", conn, "wye_grounded, wye or delta")
    if abs(c.frequency_hz - source.frequency_hz) > 1e-9 * source.frequency_hz:
        raise ParameterError(
            f"{where}.circuit.frequency_hz", c.frequency_hz, f"{source.frequency_hz:g} Hz"
        )
    b = unit.breaker
    _finite(f"{where}.breaker.insertion_resistance_ohm", b.insertion_resistance_ohm, 0.0)
    _finite(f"{where}.breaker.bypass_time_s", b.bypass_time_s, 0.0)
    if unit.in_service and (
        np.any(np.asarray(b.closing_time_s, dtype=float) != 0.0)
        or b.insertion_resistance_ohm != 0.0
    ):
        raise ParameterError(
            f"{where}.breaker", "a closing or resistor", "the defaults for a unit in service"
        )
    return conn


def phases_decoupled(source: Source | Machine, units: Sequence[Unit], record: str) -> bool:
    """Whether :func:`simulate_network` runs this network phase by phase.

    Parameters
    ----------
    source : Source or Machine
        The source [-].
    units : sequence of Unit
        The transformers on the bus [-].
    record : {"all", "source", "first_peaks"}
        What the simulation keeps [-].

    Returns
    -------
    bool
        True when every unit is a grounded wye, the source a :class:`Source` (a Thevenin EMF,
        not a machine) and the record the first peaks or the source current: the kernel of
        decoupled phases (:func:`core.network.kernel.integrate_decoupled`) runs it; False for
        the general kernel (:func:`core.network.kernel.integrate`).

    Notes
    -----
    Phase k's windings of grounded-wye units, its source branch and its bus-load branch meet
    only at bus node k and ground, so KCL at the bus is one scalar equation per phase. A
    machine's EMF depends on all three source currents (its d-axis current), and a floating
    wye or a delta joins the phases.

    References
    ----------
    Kirchhoff's laws.
    """
    return (
        isinstance(source, Source)
        and record in ("source", "first_peaks")
        and all((u.connection or u.circuit.connection) == "wye_grounded" for u in units)
    )


def step_plan(
    source: Source | Machine,
    units: Sequence[Unit],
    duration_s: float,
    load: BusLoad | None = None,
    samples_per_cycle: int = 128,
    *,
    substep_insertion: bool = False,
) -> tuple[int, int, int]:
    """The internal step of :func:`simulate_network`: decimation, steps per cycle, step count.

    Parameters
    ----------
    source : Source or Machine
        The source [-].
    units : sequence of Unit
        The transformers on the bus [-].
    duration_s : float
        Simulated time from t = 0 [s].
    load : BusLoad or None
        The bus load, None for none [-].
    samples_per_cycle : int
        Output samples per cycle [-].
    substep_insertion : bool
        True leaves the pre-insertion resistors out of the step (the steps while one is in
        are split into sub-steps, :func:`insertion_substeps`) [-].

    Returns
    -------
    tuple of int
        (internal steps per output sample, internal steps per cycle, internal steps) [-].

    Raises
    ------
    ParameterError
        When the fastest saturated loop would need more than MAX_STEPS_PER_CYCLE steps a cycle.

    Notes
    -----
    spc = samples_per_cycle*ceil(need/samples_per_cycle), need = max(128, 4/(f*tau_min)),
    tau_min the shortest of (L_air + L_s)/(R_w + 2*R_s + k*R_ins) over the units (k = 3 for a
    delta, 1 otherwise) and (L_L + L_s)/(R_L + R_s) for the load, over every case of a
    machine source (and its T''_do, T_A and T_R when they evolve); steps =
    round(duration*f*samples_per_cycle)*decimation (at least one sample): :func:`step_rule`
    over every loop of the network; the work estimate (:mod:`core.cost`) counts with it.

    References
    ----------
    This project's step rule (RK4 error small on the smooth stretches, four steps per saturated
    time constant).
    """
    f = float(source.frequency_hz)
    if isinstance(source, Machine):
        r_s, l_s = _machine.impedance(source, _machine.case_count(source))
    else:
        r_s, l_s = np.array([source.resistance_ohm]), np.array([source.inductance_h])
    taus = [math.inf, *_machine_time_constants(source)]
    for u in units:
        c = u.circuit
        conn = u.connection or c.connection
        k_line = 0.0 if substep_insertion else (3.0 if conn == "delta" else 1.0)
        r = c.winding_resistance_ohm + 2.0 * r_s + k_line * u.breaker.insertion_resistance_ohm
        taus.append(float(np.min((c.air_core_inductance_h + l_s) / np.maximum(r, 1e-300))))
    if load is not None:
        t_load = (load.inductance_h + l_s) / np.maximum(load.resistance_ohm + r_s, 1e-300)
        taus.append(float(np.min(t_load)))
    spc, decimate, n_steps = step_rule(f, duration_s, samples_per_cycle, min(taus))
    return decimate, spc, n_steps


def step_rule(
    frequency_hz: float,
    duration_s: float,
    samples_per_cycle: int,
    min_time_constant_s: float = math.inf,
) -> tuple[int, int, int]:
    """The fixed Runge-Kutta step from the fastest loop's time constant: the one rule.

    :func:`step_plan` applies it to every loop of a network, :func:`core.energization.energize.
    simulate` to its cases' saturated loops, and :mod:`core.cost` counts with it.

    Parameters
    ----------
    frequency_hz : float
        Source frequency [Hz].
    duration_s : float
        Simulated time [s].
    samples_per_cycle : int
        Output samples per cycle, in [4, 100000] [-].
    min_time_constant_s : float
        Shortest time constant L/R of the loops; the step is kept at or below a quarter of it
        (accuracy and stability of the explicit integrator) [s].

    Returns
    -------
    tuple of int
        (steps per cycle, steps per output sample, number of steps) [-].

    Raises
    ------
    ParameterError
        Naming ``samples_per_cycle`` or ``duration_s`` out of range; naming
        ``saturated_time_constant_s`` when the time constant would need more than
        MAX_STEPS_PER_CYCLE steps per cycle.

    Notes
    -----
    need = max(MIN_STEPS_PER_CYCLE, 4/(f*tau_min)); decimation = ceil(need/samples_per_cycle);
    spc = samples_per_cycle*decimation; steps = round(duration*f*samples_per_cycle)*decimation,
    at least one sample.

    References
    ----------
    This project's choice: RK4's error small on the smooth stretches at 128 steps per cycle;
    four steps per time constant of the fastest loop (stability of classical Runge-Kutta on a
    decaying mode needs h/tau < 2.78, Butcher, Numerical Methods for ODEs, 2008, from memory).
    """
    if not (isinstance(samples_per_cycle, int) and 4 <= samples_per_cycle <= 100_000):
        raise ParameterError("samples_per_cycle", samples_per_cycle, "an integer in [4, 100000]")
    if not (math.isfinite(duration_s) and duration_s > 0.0):
        raise ParameterError("duration_s", duration_s, "a finite number > 0")
    f = float(frequency_hz)
    need = float(MIN_STEPS_PER_CYCLE)
    if min_time_constant_s < math.inf:
        need = max(need, 4.0 / (f * min_time_constant_s))
    if need > MAX_STEPS_PER_CYCLE:
        # the circuits given in SI are refused where they are built, naming their resistance
        # (core.transformer); this guards what remains (a bus load, a machine's own loops)
        raise ParameterError(
            "saturated_time_constant_s",
            min_time_constant_s,
            f"at least {shortest_time_constant(f):.3g} s (the fastest loop's L/R; more "
            f"resistance or less inductance in it needs over {MAX_STEPS_PER_CYCLE} steps a "
            f"cycle): the loop is almost purely resistive",
        )
    decimate = max(1, math.ceil(need / samples_per_cycle))
    spc = samples_per_cycle * decimate
    n_steps = max(decimate, round(duration_s * f * samples_per_cycle) * decimate)
    return spc, decimate, n_steps


def insertion_substeps(
    source: Source | Machine, units: Sequence[Unit], steps_per_cycle: int
) -> IntArray:
    """Runge-Kutta sub-steps per step while the pre-insertion resistors are in.

    Parameters
    ----------
    source : Source or Machine
        The source [-].
    units : sequence of Unit
        The transformers on the bus [-].
    steps_per_cycle : int
        Internal steps per cycle of :func:`step_plan` (with ``substep_insertion``) [-].

    Returns
    -------
    ndarray of int, shape (n_cases,)
        ceil(need/spc), at least 1, per case of a machine source (one value for a Source) [-].

    Raises
    ------
    ParameterError
        Naming ``units[k].breaker.insertion_resistance_ohm`` when the inserted loop would need
        more than MAX_STEPS_PER_CYCLE steps a cycle.

    Notes
    -----
    need = 4/(f*tau_ins), tau_ins the shortest (L_air + L_s)/(R_w + 2*R_s + k*R_ins) over the
    units with a resistor (k = 3 for a delta, 1 otherwise), per case: the step rule of
    :func:`step_plan` applied to the loops while the resistor is in.

    References
    ----------
    This project's step rule (four steps per saturated time constant).
    """
    f = float(source.frequency_hz)
    if isinstance(source, Machine):
        r_s, l_s = _machine.impedance(source, _machine.case_count(source))
    else:
        r_s, l_s = np.array([source.resistance_ohm]), np.array([source.inductance_h])
    sub = np.ones(r_s.size, dtype=np.int64)
    for k, u in enumerate(units):
        r_ins = u.breaker.insertion_resistance_ohm
        if r_ins <= 0.0:
            continue
        c = u.circuit
        k_line = 3.0 if (u.connection or c.connection) == "delta" else 1.0
        r = c.winding_resistance_ohm + 2.0 * r_s + k_line * r_ins
        need = 4.0 * r / (f * (c.air_core_inductance_h + l_s))
        if np.any(need > MAX_STEPS_PER_CYCLE):
            raise ParameterError(
                f"units[{k}].breaker.insertion_resistance_ohm",
                r_ins,
                f"a resistor giving an inserted-loop time constant of at least "
                f"{4.0 / (f * MAX_STEPS_PER_CYCLE):.3g} s",
            )
        sub = np.maximum(sub, np.ceil(need / steps_per_cycle).astype(np.int64))
    return sub


def _machine_time_constants(source: Source | Machine) -> list[float]:
    """T''_do, T_A and T_R (those > 0) of a machine whose states evolve [s]; none otherwise."""
    if not (isinstance(source, Machine) and source.dynamic):
        return []
    reg = source.regulator
    values = [source.t_d2o_s]
    if reg is not None:
        values += [reg.time_constant_s, reg.sensing_time_constant_s]
    out = [float(np.min(np.asarray(v, dtype=float))) for v in values]
    return [t for t in out if t > 0.0 and math.isfinite(t)]


def simulate_network(
    source: Source | Machine,
    units: Sequence[Unit],
    *,
    closing_angle_deg: ArrayLike,
    duration_s: float,
    load: BusLoad | None = None,
    samples_per_cycle: int = 128,
    max_steps: int | None = None,
    substep_insertion: bool = False,
    record: str = "all",
    first_peak_cycles: float = analysis.FIRST_PEAK_CYCLES,
) -> NetworkResult:
    """Simulate the energisation of transformers on one bus, for many cases at once.

    Parameters
    ----------
    source : Source or Machine
        The source and its EMF ramp, or a synchronous machine
        (:class:`core.network.machine.Machine`, per-case parameters) [-].
    units : sequence of Unit
        The transformers on the bus, each behind its breaker (at least one) [-].
    closing_angle_deg : array_like, shape (n_cases,) or scalar
        Angle of the phase-A EMF e_a = sqrt(2)*V/sqrt(3)*sin(omega*t + alpha) at t = 0 (of the
        machine's rotating flux, E''_q's axis, for a machine) [deg].
    duration_s : float
        Simulated time from t = 0 [s].
    load : BusLoad or None
        Constant-impedance load at the bus, in service throughout (at its steady state at
        t = 0); None for none [-].
    samples_per_cycle : int
        Output samples per cycle, in [4, 100000] [-].
    max_steps : int or None
        Compute limit: most unit-steps (cases x units x internal steps) allowed [-].
    substep_insertion : bool
        False: the step is short enough for every loop with its pre-insertion resistor in,
        throughout. True: the step ignores the resistors and the steps before the last bypass
        are split into :func:`insertion_substeps` equal sub-steps (a long run with a short
        insertion) [-].
    record : {"all", "source", "first_peaks"}
        What is kept: the whole record; only the source current (the other record arrays
        have no samples, the bus voltage is not computed); or no record, only each current's
        first peak (``first_peak_a``; every record array has no samples), each case integrated
        to the sample after its window only [-].
    first_peak_cycles : float
        With ``record="first_peaks"``: the window after the last pole of the units being
        energised (:func:`core.network.analysis.first_peak_window_end`), > 0 [cycles].

    Returns
    -------
    NetworkResult

    Raises
    ------
    ParameterError
        Naming the parameter, on a value out of range or an inconsistent shape; also when an
        algebraic solve does not converge or a current is not finite.
    LimitError
        When the work exceeds ``max_steps``.

    Notes
    -----
    The equations are in the module docstring. The step is h = 1/(f*spc) with
    spc = samples_per_cycle*ceil(need/samples_per_cycle), need = max(128, 4/(f*tau_min)),
    tau_min the shortest of (L_air + L_s)/(R_w + 2*R_s + k*R_ins) over the units (k = 3 for a
    delta, 1 otherwise) and (L_L + L_s)/(R_L + R_s) for the load; the record holds
    round(duration*f*samples_per_cycle) + 1 samples from t = 0. Pole instants, the bypass and
    the ramp's corners are rounded to the step. A machine source's EMF and states follow
    :mod:`core.network.machine`; its R_a and X''_d are the Thevenin R_s and L_s of each case.

    References
    ----------
    H. W. Dommel, IEEE Trans. PAS-88(4), 1969 (multiphase network formulation; from memory);
    classical Runge-Kutta (Kutta 1901).
    """
    modes = {
        "all": kernel.RECORD_ALL,
        "source": kernel.RECORD_SOURCE,
        "first_peaks": kernel.RECORD_FIRST_PEAKS,
    }
    if record not in modes:
        raise ParameterError("record", record, "'all', 'source' or 'first_peaks'")
    mode = modes[record]
    if not isinstance(source, Source | Machine):
        raise ParameterError("source", type(source).__name__, "a Source or a Machine")
    f = _finite("source.frequency_hz", source.frequency_hz, 0.0, low_open=True)
    _finite("source.line_voltage_v", source.line_voltage_v, 0.0, low_open=True)
    g0, t_hold, t_rise = _ramp(source)
    if not (math.isfinite(duration_s) and duration_s > 0.0):
        raise ParameterError("duration_s", duration_s, "a finite number > 0")
    if not (isinstance(samples_per_cycle, int) and 4 <= samples_per_cycle <= 100_000):
        raise ParameterError("samples_per_cycle", samples_per_cycle, "an integer in [4, 100000]")
    units = list(units)
    if not units:
        raise ParameterError("units", 0, "at least one unit")
    connections = [_check_unit(k, u, source) for k, u in enumerate(units)]
    if load is not None:
        _finite("load.resistance_ohm", load.resistance_ohm, 0.0)
        _finite("load.inductance_h", load.inductance_h, 0.0, low_open=True)
    alpha = np.atleast_1d(np.asarray(closing_angle_deg, dtype=float))
    if alpha.ndim != 1 or not np.all(np.isfinite(alpha)):
        raise ParameterError("closing_angle_deg", "shape or value", "finite, scalar or 1-D")
    n_from = [alpha.size]
    if isinstance(source, Machine):
        n_from.append(_machine.case_count(source))
    for u in units:
        for v in (u.breaker.closing_time_s, u.residual_flux_pu):
            a = np.asarray(v)
            if a.ndim == 2:
                n_from.append(a.shape[0])
    n = max(n_from)
    alpha = np.broadcast_to(alpha, (n,)) if alpha.size in (1, n) else alpha
    if alpha.shape != (n,):
        raise ParameterError("closing_angle_deg", alpha.size, f"1 or {n} values")
    n_units = len(units)
    closing = np.zeros((n, n_units, 3))
    residual = np.zeros((n, n_units, 3))
    for k, u in enumerate(units):
        name = f"units[{k}].breaker.closing_time_s"
        closing[:, k] = _broadcast(name, u.breaker.closing_time_s, n)
        if np.any(closing[:, k] < 0.0) or np.any(closing[:, k] > duration_s):
            bad = closing[:, k][(closing[:, k] < 0.0) | (closing[:, k] > duration_s)]
            raise ParameterError(name, float(bad[0]), f"in [0, {duration_s:g}] s")
        name = f"units[{k}].residual_flux_pu"
        residual[:, k] = _broadcast(name, u.residual_flux_pu, n)
        if np.any(np.abs(residual[:, k]) > 5.0):
            raise ParameterError(name, float(np.abs(residual[:, k]).max()), "in [-5, 5]")

    decimate, spc, n_steps = step_plan(
        source, units, duration_s, load, samples_per_cycle, substep_insertion=substep_insertion
    )
    h = 1.0 / (f * spc)
    work = n * n_units * n_steps
    if max_steps is not None and work > max_steps:
        raise LimitError("integration steps (cases x units x steps)", work, max_steps)

    close_step = np.rint(closing / h).astype(np.int64)
    for k, u in enumerate(units):
        if u.in_service:
            close_step[:, k] = 0
    bypass = np.array(
        [
            min(round(u.breaker.bypass_time_s / h), n_steps + 1)
            if u.breaker.insertion_resistance_ohm > 0.0
            else 0
            for u in units
        ],
        dtype=np.int64,
    )
    kh_raw = round(t_hold / h)
    ke_raw = round((t_hold + t_rise) / h)
    slope = (1.0 - g0) / (ke_raw - kh_raw) if ke_raw > kh_raw else 0.0
    kh = min(kh_raw, n_steps + 1)
    ke = min(ke_raw, n_steps + 1)
    if g0 == 1.0:
        kh = ke = 0
    phase = np.deg2rad(alpha)[:, None] + _PHASE_SHIFT[None, :]
    lam_ss, il0, src, m0 = _start(source, n, load, units, connections, phase)
    lam_n = np.array([u.circuit.nominal_flux_wb for u in units])
    lam0 = np.where(
        np.array([u.in_service for u in units])[None, :, None],
        lam_ss,
        residual * lam_n[None, :, None],
    )
    if load is None:
        il0 = np.zeros((n, 3))
    sub = np.ascontiguousarray(
        np.broadcast_to(insertion_substeps(source, units, spc), (n,))
        if substep_insertion
        else np.ones(n, dtype=np.int64)
    )
    grid = StepGrid(
        step_s=h,
        decimate=decimate,
        phase_rad=np.ascontiguousarray(phase),
        source_columns=np.ascontiguousarray(src),
        close_step=np.ascontiguousarray(close_step),
        bypass_step=bypass,
        ramp=(g0, slope, kh, ke),
        insertion_steps=int(bypass.max()) if substep_insertion else 0,
        substeps=sub,
        machine_state_pu=np.zeros((n, 4, 0)),
    )
    return _run(
        source,
        units,
        connections,
        load,
        grid,
        n_steps,
        lam0,
        il0,
        m0,
        spc,
        mode=mode,
        first_peak_cycles=first_peak_cycles,
    )[0]


def _run(
    source: Source | Machine,
    units: Sequence[Unit],
    connections: Sequence[str],
    load: BusLoad | None,
    grid: StepGrid,
    n_steps: int,
    lam0: FloatArray,
    il0: FloatArray,
    m0: FloatArray,
    spc: int,
    *,
    mode: int = kernel.RECORD_ALL,
    first_peak_cycles: float = 0.0,
) -> tuple[NetworkResult, FloatArray]:
    """The kernel from the given states at t = 0 on the given grid, the cases in chunks on
    threads (:func:`case_chunks`); the record ``mode`` asks for and, with the whole record, the
    machine's four states at every sample."""
    f = float(source.frequency_hz)
    n = grid.phase_rad.shape[0]
    n_units = len(units)
    h, decimate = grid.step_s, grid.decimate
    g0, slope, kh, ke = grid.ramp
    bypass = grid.bypass_step
    lam_n = np.array([u.circuit.nominal_flux_wb for u in units])
    if load is not None:
        r_l, l_l = load.resistance_ohm, load.inductance_h
    else:
        r_l, l_l = 0.0, 1.0
        il0 = np.zeros((n, 3))
    kind, par, flux, cur, npts = _curve_arrays([u.circuit for u in units])
    n_samples = n_steps // decimate + 1
    kept = n_samples if mode == kernel.RECORD_ALL else 0
    out_src = np.zeros((n, 3, n_samples if mode != kernel.RECORD_FIRST_PEAKS else 0))
    out_bus = np.zeros((n, 3, kept))
    out_line = np.zeros((n, n_units, 3, kept))
    out_wind = np.zeros((n, n_units, 3, kept))
    out_flux = np.zeros((n, n_units, 3, kept))
    out_mach = np.zeros((n, 4, kept))
    peak_last, out_peak = _first_peak_window(
        mode, units, grid.close_step.astype(float) * h, f, first_peak_cycles, n_samples,
        h * decimate,
    )  # fmt: skip
    out_energy = np.zeros((n, n_units))
    # the per-case inputs (first axis the case; the outputs above too), then the shared ones
    phase_c = np.ascontiguousarray(grid.phase_rad)
    src_c = np.ascontiguousarray(grid.source_columns)
    m0_c = np.ascontiguousarray(m0)
    close_c = np.ascontiguousarray(grid.close_step)
    lam0_c = np.ascontiguousarray(lam0)
    il0_c = np.ascontiguousarray(il0, dtype=float)
    sub_c: IntArray = np.ascontiguousarray(grid.substeps)
    ramp = np.array([g0, slope])
    ramp_steps = np.array([kh, ke], dtype=np.int64)
    conn_code = np.array([CONNECTION_CODE[c] for c in connections], dtype=np.int64)
    r_w = np.array([u.circuit.winding_resistance_ohm for u in units])
    r_ins = np.array([u.breaker.insertion_resistance_ohm for u in units])
    tol_u = NEWTON_TOLERANCE_PU * lam_n
    tol_phi = NEWTON_TOLERANCE_PU * float(lam_n.min())
    n_in = grid.insertion_steps
    vpk = math.sqrt(2.0) * source.line_voltage_v / math.sqrt(3.0)

    records = {kernel.RECORD_SOURCE: "source", kernel.RECORD_FIRST_PEAKS: "first_peaks"}
    decoupled = phases_decoupled(source, units, records.get(mode, "all"))

    def run(lo: int, hi: int) -> int:
        s = slice(lo, hi)
        if decoupled:
            return int(
                kernel.integrate_decoupled(
                    n_steps, decimate, h, 2.0 * math.pi * f, vpk, phase_c[s], ramp, ramp_steps,
                    src_c[s], r_l, l_l, load is not None, r_w, r_ins, bypass, kind, par, flux,
                    cur, npts, close_c[s], lam0_c[s], il0_c[s], tol_phi, n_in, sub_c[s], mode,
                    peak_last[s] if peak_last.size else peak_last,
                    out_src[s], out_peak[s] if out_peak.size else out_peak, out_energy[s],
                )
            )  # fmt: skip
        failed: int = kernel.integrate(
            n_steps, decimate, h, 2.0 * math.pi * f, vpk, phase_c[s], ramp, ramp_steps,
            src_c[s], m0_c[s], r_l, l_l, load is not None, conn_code, r_w, r_ins, bypass, kind,
            par, flux, cur, npts, close_c[s], lam0_c[s], il0_c[s], tol_u, tol_phi, out_src[s],
            out_bus[s], out_line[s], out_wind[s], out_flux[s], out_mach[s], out_energy[s], n_in,
            sub_c[s], mode, peak_last[s] if peak_last.size else peak_last,
            out_peak[s] if out_peak.size else out_peak,
        )  # fmt: skip
        return failed

    bounds = case_chunks(n, n * n_units * n_steps)
    if len(bounds) == 1:
        failed = run(0, n)
    else:
        with ThreadPoolExecutor(max_workers=len(bounds)) as pool:
            failed = sum(pool.map(lambda b: run(*b), bounds))
    if failed:
        raise ParameterError(
            "units",
            f"{failed} algebraic solves without convergence",
            f"a network on which Newton's method converges in {kernel.MAX_ITERATIONS} iterations",
        )
    if not (np.all(np.isfinite(out_src)) and np.all(np.isfinite(out_peak[:, :1, :, 0]))):
        raise ParameterError("units", "non-finite current", "a network whose currents stay finite")
    time: FloatArray = np.arange(n_samples, dtype=float) * (h * decimate)
    i_load = out_src - np.sum(out_line, axis=1) if kept else np.zeros((n, 3, kept))
    return NetworkResult(
        time_s=time,
        source_current_a=out_src,
        bus_voltage_v=out_bus,
        line_current_a=out_line,
        winding_current_a=out_wind,
        flux_linkage_wb=out_flux,
        load_current_a=i_load if load is not None else np.zeros((n, 3, kept)),
        steps_per_cycle=spc,
        closing_time_s=grid.close_step.astype(float) * h,
        approximations=APPROXIMATIONS,
        emf_pu=out_mach[:, 0],
        field_voltage_pu=out_mach[:, 1],
        insertion_energy_j=out_energy
        * np.array([u.breaker.insertion_resistance_ohm for u in units]),
        first_peak_a=analysis.first_peaks_of_maxima(out_peak, n_samples)[0]
        if mode == kernel.RECORD_FIRST_PEAKS
        else np.zeros((0, 0)),
        grid=replace(grid, machine_state_pu=out_mach),
    ), out_mach


@dataclass(frozen=True)
class WindowRecord:
    """Records of :func:`simulate_windows`, one case per window, every step a sample.

    Attributes
    ----------
    time_s : ndarray, shape (n_samples,)
        Instants from each window's start [s].
    source_current_a, load_current_a : ndarray, shape (n_windows, 3, n_samples)
        As in :class:`NetworkResult` [A].
    line_current_a, flux_linkage_wb : ndarray, shape (n_windows, n_units, 3, n_samples)
        As in :class:`NetworkResult` [A] [Wb-turn].
    machine_state_pu : ndarray, shape (n_windows, 4, n_samples)
        As in :class:`StepGrid` [pu].
    """

    time_s: FloatArray
    source_current_a: FloatArray
    load_current_a: FloatArray
    line_current_a: FloatArray
    flux_linkage_wb: FloatArray
    machine_state_pu: FloatArray


def _clamp(step: int, length: int) -> int:
    # a switching instant relative to a window: before its start as at it, after its end as
    # just after it (the window cannot tell them apart)
    return min(max(step, 0), length + 1)


def simulate_windows(
    source: Source | Machine,
    units: Sequence[Unit],
    load: BusLoad | None,
    grid: StepGrid,
    case: IntArray,
    start: IntArray,
    scale: int,
    n_steps: int,
    flux_linkage_wb: FloatArray,
    load_current_a: FloatArray,
    machine_state_pu: FloatArray,
) -> WindowRecord:
    """Integrate the network again over short windows of a run, from given states, finer.

    Parameters
    ----------
    source, units, load
        The network of the run, as given to :func:`simulate_network` [-].
    grid : StepGrid
        The run's step grid (:attr:`NetworkResult.grid`) [-].
    case : ndarray of int, shape (n_windows,)
        The run's case of each window [-].
    start : ndarray of int, shape (n_windows,)
        Start of each window in steps of h/scale from the run's t = 0 [-].
    scale : int
        Steps of the windows per step of the run, >= 1 [-].
    n_steps : int
        Steps of each window (each a sample) [-].
    flux_linkage_wb : ndarray, shape (n_windows, n_units, 3)
        Winding fluxes at each window's start [Wb-turn].
    load_current_a : ndarray, shape (n_windows, 3)
        Load currents there [A].
    machine_state_pu : ndarray, shape (n_windows, 4)
        The machine's E''_q, E_fd, E'_q and V_s there (as :attr:`StepGrid.machine_state_pu`)
        [pu].

    Returns
    -------
    WindowRecord

    Notes
    -----
    The state of the run at an instant is the winding fluxes lambda, the load currents, the
    machine's four states and which poles are closed and resistors in: a restart from them
    with the pole closings, the bypass, the EMF's phase and its ramp moved to the window's
    start (t_k - t_0, on the finer step h/scale exactly, the run's instants being on its own
    step) continues the same trajectory; the floating nodes' held currents are rebuilt from
    lambda, which is Kirchhoff's current law there. Windows sharing the instants that matter to
    them (a bypass, a ramp corner or the sub-stepping's end inside the window) run as the cases
    of one kernel call.

    References
    ----------
    The equations of this module's docstring; classical Runge-Kutta (Kutta 1901).
    """
    m = int(scale)
    if m < 1:
        raise ParameterError("scale", scale, "an integer >= 1")
    connections = [u.connection or u.circuit.connection for u in units]
    omega = 2.0 * math.pi * float(source.frequency_hz)
    h = grid.step_s / m
    g0, slope, kh, ke = grid.ramp
    length = int(n_steps)
    w_all = case.size
    keys: dict[tuple[int, ...], list[int]] = {}
    for w in range(w_all):
        p0 = int(start[w])
        byp = tuple(0 if b == 0 else _clamp(int(b) * m - p0, length) for b in grid.bypass_step)
        if g0 == 1.0:
            rk: tuple[int, int] = (0, 0)
        else:
            a, b = int(kh) * m - p0, int(ke) * m - p0
            rk = (0, 0) if b <= 0 else ((length + 1, length + 1) if a > length else (a, b))
        n_in = _clamp(grid.insertion_steps * m - p0, length) if grid.insertion_steps else 0
        keys.setdefault((*byp, *rk, n_in), []).append(w)
    n_samples = length + 1
    n_units = len(units)
    out = WindowRecord(
        time_s=np.arange(n_samples, dtype=float) * h,
        source_current_a=np.zeros((w_all, 3, n_samples)),
        load_current_a=np.zeros((w_all, 3, n_samples)),
        line_current_a=np.zeros((w_all, n_units, 3, n_samples)),
        flux_linkage_wb=np.zeros((w_all, n_units, 3, n_samples)),
        machine_state_pu=np.zeros((w_all, 4, n_samples)),
    )
    for key, members in keys.items():
        idx = np.array(members, dtype=np.int64)
        c = case[idx]
        pos = start[idx].astype(np.int64)
        bypass_w = np.array(key[:n_units], dtype=np.int64)
        kh_w, ke_w, n_in_w = key[n_units], key[n_units + 1], key[n_units + 2]
        sub = np.maximum(1, -(-grid.substeps[c] // m)).astype(np.int64)
        g = StepGrid(
            step_s=h,
            decimate=1,
            phase_rad=np.ascontiguousarray(grid.phase_rad[c] + (omega * h * pos)[:, None]),
            source_columns=np.ascontiguousarray(grid.source_columns[c]),
            close_step=np.ascontiguousarray(grid.close_step[c] * m - pos[:, None, None]),
            bypass_step=bypass_w,
            ramp=(g0, slope / m, kh_w, ke_w),
            insertion_steps=n_in_w,
            substeps=np.ascontiguousarray(sub),
            machine_state_pu=np.zeros((idx.size, 4, 0)),
        )
        m0 = machine_state_pu[idx][:, [0, 2, 1, 3]]
        res, mach = _run(
            source, units, connections, load, g, length, flux_linkage_wb[idx],
            load_current_a[idx], m0, 0,
        )  # fmt: skip
        out.source_current_a[idx] = res.source_current_a
        out.load_current_a[idx] = res.load_current_a
        out.line_current_a[idx] = res.line_current_a
        out.flux_linkage_wb[idx] = res.flux_linkage_wb
        out.machine_state_pu[idx] = mach
    return out


def _first_peak_window(
    mode: int,
    units: Sequence[Unit],
    closing_time_s: FloatArray,
    frequency_hz: float,
    cycles: float,
    n_samples: int,
    sample_s: float,
) -> tuple[IntArray, FloatArray]:
    """The kernel's first-peak arguments: each case's last window sample and the maxima.

    Empty arrays unless ``mode`` is RECORD_FIRST_PEAKS. The last sample is the largest j with
    j*sample_s <= t_end*(1 + 1e-12), t_end from :func:`core.network.analysis.
    first_peak_window_end`: the samples :func:`core.network.analysis.first_peaks` reads.
    """
    if mode != kernel.RECORD_FIRST_PEAKS:
        return np.zeros(0, dtype=np.int64), np.zeros((0, 0, 3, kernel.NPEAK))
    energized = [not u.in_service for u in units]
    end = analysis.first_peak_window_end(closing_time_s, energized, frequency_hz, cycles)
    t = np.arange(n_samples, dtype=float) * sample_s
    last = np.searchsorted(t, end + 1e-12 * end, side="right").astype(np.int64) - 1
    out = np.full((end.size, len(units) + 1, 3, kernel.NPEAK), -1.0)
    return np.ascontiguousarray(last), out


def case_chunks(n_cases: int, work: int) -> list[tuple[int, int]]:
    """Contiguous chunks of the cases, one per thread, for :func:`simulate_network`.

    Parameters
    ----------
    n_cases : int
        Cases in the batch [-].
    work : int
        Unit-steps of the whole batch (cases x units x internal steps) [-].

    Returns
    -------
    list of tuple of int
        (first case, one past the last case) of each chunk, in order, covering every case [-].

    Notes
    -----
    chunks = min(threads, n_cases, work // PARALLEL_MIN_CHUNK_STEPS), at least one, threads
    numba's thread count (NUMBA_NUM_THREADS, the cores by default); the cases are split as
    evenly as the count allows. Each case is integrated alone, so a case's result is the same
    bit for bit whatever the chunking.

    References
    ----------
    This project's choice (the kernel releases the GIL; cases are independent).
    """
    threads = int(numba.config.NUMBA_NUM_THREADS)  # type: ignore[attr-defined]
    chunks = max(1, min(threads, n_cases, work // PARALLEL_MIN_CHUNK_STEPS))
    edges = [n_cases * k // chunks for k in range(chunks + 1)]
    return [(edges[k], edges[k + 1]) for k in range(chunks)]


def _ramp(source: Source | Machine) -> tuple[float, float, float]:
    """The EMF ramp (start [pu], hold [s], rise [s]) after checks; none for a machine."""
    if isinstance(source, Machine):
        return 1.0, 0.0, 0.0
    _finite("source.resistance_ohm", source.resistance_ohm, 0.0)
    _finite("source.inductance_h", source.inductance_h, 0.0)
    g0 = _finite("source.voltage_start_pu", source.voltage_start_pu, 0.0, low_open=True)
    if g0 > 1.0:
        raise ParameterError("source.voltage_start_pu", g0, "in (0, 1]")
    t_hold = _finite("source.voltage_hold_s", source.voltage_hold_s, 0.0)
    t_rise = _finite("source.voltage_rise_s", source.voltage_rise_s, 0.0)
    return g0, t_hold, t_rise


# Cases per kernel call of run_single_unit: bounds the scratch records (source current, bus
# voltage, fluxes, machine states) it does not return to a few of these cases' worth
_SINGLE_UNIT_CHUNK = 256


def run_single_unit(
    circuit: EquivalentCircuit,
    connection: str,
    *,
    emf_peak_v: float,
    winding_resistance_ohm: float,
    source_resistance_ohm: FloatArray,
    source_inductance_h: FloatArray,
    phase_rad: FloatArray,
    close_step: IntArray,
    flux_wb: FloatArray,
    insertion_resistance_ohm: float,
    bypass_step: int,
    substeps: IntArray,
    ramp: tuple[float, float, int, int],
    n_steps: int,
    decimate: int,
    step_s: float,
    _general: bool = False,
) -> tuple[FloatArray, FloatArray]:
    """One unit alone on a Thevenin source, many cases, on a step already planned.

    The entry below :func:`simulate_network` for a caller that has checked its inputs and put
    its instants on the step (:func:`core.energization.energize.simulate`): the network of one
    unit, no bus load, each case with its own source impedance, EMF phases, pole steps and
    initial fluxes.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The unit: its magnetising curve and lambda_N (its own resistance and source are not
        used) [-].
    connection : str
        ``"wye_grounded"``, ``"wye"`` or ``"delta"`` [-].
    emf_peak_v : float
        Crest of the source EMF of each phase, sqrt(2)*V_LL/sqrt(3) for a three-phase unit [V].
    winding_resistance_ohm : float
        Resistance in series with each winding [ohm].
    source_resistance_ohm : ndarray, shape (n_cases,)
        Source resistance per phase, per case [ohm].
    source_inductance_h : ndarray, shape (n_cases,)
        Source inductance per phase, per case [H].
    phase_rad : ndarray, shape (n_cases, 3)
        Phase of each EMF at t = 0, e_k = g*emf_peak_v*sin(omega*t + phase_k) [rad].
    close_step : ndarray of int, shape (n_cases, 3)
        Step at which each pole closes; beyond ``n_steps`` it never closes [-].
    flux_wb : ndarray, shape (n_cases, 3)
        Flux linkage of each winding at t = 0 [Wb-turn].
    insertion_resistance_ohm : float
        Pre-insertion resistor in each line until ``bypass_step`` [ohm].
    bypass_step : int
        Step at which the resistor is shorted (0: never in) [-].
    substeps : ndarray of int, shape (n_cases,)
        Equal sub-steps of each step before ``bypass_step`` [-].
    ramp : tuple
        EMF factor g: start [pu], slope per step [pu], end of the hold and of the rise [steps].
    n_steps : int
        Steps of the record [-].
    decimate : int
        Steps per output sample [-].
    step_s : float
        The step [s].
    _general : bool
        Run a grounded wye on the general kernel too (for the tests that compare the two) [-].

    Returns
    -------
    tuple of ndarray
        Line currents and winding currents, each shape (n_cases, 3, n_samples) [A].

    Raises
    ------
    ParameterError
        Naming ``circuit`` when an algebraic solve does not converge.

    Notes
    -----
    The equations of the module docstring with one unit and no load. A grounded wye runs on
    the kernel of decoupled phases (:func:`core.network.kernel.integrate_lone`): KCL at the bus
    is Phi_k = L_s*f(lambda_k), so each closed phase's loop flux psi_k = lambda_k +
    L_s*f(lambda_k) is one scalar equation, solved in closed form on each piece of a
    piecewise-linear curve and by Newton's method for the smooth knee; the cases' phases are
    spread over the cores (numba's prange) from kernel.PARALLEL_MIN_ELEMENTS of them. The other
    connections run on the general kernel in chunks of cases spread over threads
    (:func:`case_chunks`), at most 256 cases of scratch in all, so that the records not returned
    stay small.

    References
    ----------
    Kirchhoff's laws; classical Runge-Kutta (Kutta 1901).
    """
    n = phase_rad.shape[0]
    n_samples = n_steps // decimate + 1
    kind, par, flux, cur, npts = _curve_arrays([circuit])
    g0, slope, kh, ke = ramp
    if connection == "wye_grounded" and not _general:
        out = np.zeros((n, 3, n_samples))
        lone = (
            kernel.integrate_lone_parallel
            if 3 * n >= kernel.PARALLEL_MIN_ELEMENTS
            else kernel.integrate_lone
        )
        failed = lone(
            n_steps, decimate, step_s, 2.0 * math.pi * circuit.frequency_hz, emf_peak_v,
            np.ascontiguousarray(phase_rad, dtype=float), np.array([g0, slope]),
            np.array([kh, ke], dtype=np.int64),
            np.ascontiguousarray(source_resistance_ohm, dtype=float),
            np.ascontiguousarray(source_inductance_h, dtype=float), float(winding_resistance_ohm),
            float(insertion_resistance_ohm), int(bypass_step), int(kind[0]), par[0], flux[:1],
            cur[:1], int(npts[0]), np.ascontiguousarray(close_step, dtype=np.int64),
            np.ascontiguousarray(flux_wb, dtype=float),
            NEWTON_TOLERANCE_PU * circuit.nominal_flux_wb, int(bypass_step),
            np.ascontiguousarray(substeps, dtype=np.int64), out,
        )  # fmt: skip
        _raise_unconverged(failed)
        # a grounded wye: each line current is its winding's current
        return out, out.copy()
    line = np.zeros((n, 1, 3, n_samples))
    wind = np.zeros((n, 1, 3, n_samples))
    lam_n = circuit.nominal_flux_wb
    # the cases' chunks on threads (the kernel releases the GIL), each thread with its own
    # scratch for the records not returned; the scratch in all stays at _SINGLE_UNIT_CHUNK cases
    threads = len(case_chunks(n, n * n_steps))
    chunk = max(1, min(n, _SINGLE_UNIT_CHUNK // threads))
    pool: queue.SimpleQueue[list[FloatArray]] = queue.SimpleQueue()
    for _ in range(threads):
        pool.put(
            [
                np.zeros((chunk, 3, n_samples)),
                np.zeros((chunk, 3, n_samples)),
                np.zeros((chunk, 1, 3, n_samples)),
                np.zeros((chunk, 2, n_samples)),
            ]
        )

    def run(lo: int) -> int:
        hi = min(n, lo + chunk)
        m = hi - lo
        src, m0 = _machine.thevenin_pack(
            np.ascontiguousarray(source_resistance_ohm[lo:hi], dtype=float),
            np.ascontiguousarray(source_inductance_h[lo:hi], dtype=float),
        )
        scratch = pool.get()
        try:
            failed: int = kernel.integrate(
                n_steps, decimate, step_s, 2.0 * math.pi * circuit.frequency_hz, emf_peak_v,
                np.ascontiguousarray(phase_rad[lo:hi], dtype=float), np.array([g0, slope]),
                np.array([kh, ke], dtype=np.int64), src, m0, 0.0, 1.0, False,
                np.array([CONNECTION_CODE[connection]], dtype=np.int64),
                np.array([winding_resistance_ohm]), np.array([insertion_resistance_ohm]),
                np.array([bypass_step], dtype=np.int64), kind, par, flux, cur, npts,
                np.ascontiguousarray(close_step[lo:hi, None, :], dtype=np.int64),
                np.ascontiguousarray(flux_wb[lo:hi, None, :], dtype=float), np.zeros((m, 3)),
                np.array([NEWTON_TOLERANCE_PU * lam_n]), NEWTON_TOLERANCE_PU * lam_n,
                scratch[0][:m], scratch[1][:m], line[lo:hi], wind[lo:hi], scratch[2][:m],
                scratch[3][:m], np.zeros((m, 1)), bypass_step,
                np.ascontiguousarray(substeps[lo:hi], dtype=np.int64),
                kernel.RECORD_ALL, np.zeros(0, dtype=np.int64), np.zeros((0, 0, 3, kernel.NPEAK)),
            )  # fmt: skip
        finally:
            pool.put(scratch)
        return failed

    starts = range(0, n, chunk)
    if threads == 1 or len(starts) == 1:
        failed = sum(run(lo) for lo in starts)
    else:
        with ThreadPoolExecutor(max_workers=threads) as ex:
            failed = sum(ex.map(run, starts))
    _raise_unconverged(failed)
    return line[:, 0], wind[:, 0]


def _raise_unconverged(failed: int) -> None:
    """:func:`run_single_unit`'s error when ``failed`` algebraic solves did not converge."""
    if failed:
        raise ParameterError(
            "circuit",
            f"{failed} flux solves without convergence",
            f"a circuit on which Newton's method converges in {kernel.MAX_ITERATIONS} iterations",
        )
