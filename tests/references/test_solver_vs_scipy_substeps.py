"""A large pre-insertion resistor (the solver's sub-steps) against scipy's general-purpose
integrators.

The references and the circuits are those of test_solver_vs_scipy.py (its module docstring:
right-hand sides written from the circuit equations, not imported from core; scipy's solve_ivp
with dense output); they are imported from there, and these tests sit in a file of their own so
that pytest-xdist's two workers share the long scipy solves (a file's tests run on one worker).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable

import numpy as np
import pytest
from test_solver_vs_scipy import (
    F_HZ,
    N_CYCLES,
    OMEGA,
    PERIOD_S,
    SINGLE_PHASE_CASES,
    SPC,
    Array,
    Curve,
    _coupled_reference,
    _curve_of,
    _cycle_max,
    _fine_grid,
    _Mitigation,
    _piecewise_single,
    _single_phase_setup,
    _three_phase_emf,
    _used,
    _worst_mitigated,
)

from core import waveform
from core.energization import energize
from core.transformer import circuit_model

# ----------------------------------------------------------------- a large resistor: sub-steps

# While a large pre-insertion resistor is in, the saturated loop's time constant
# (L_air + L_s)/(R + k*R_ins) can be shorter than four steps of the plan made for the circuit
# without it; the kernels then split each of those steps into m equal sub-steps until the
# bypass, the outputs staying on the step. The resistor is 5 or 50 x the saturated loop's
# reactance omega*(L_air + L_s) (a third of that for a delta, as above), in for the first of
# ten cycles: m = 1 or 2 at 5 x (the step just meets the rule by itself for three of the four
# circuits) and 10 at 50 x. While it is in, the winding saturates with its current clipped to
# about V/R_ins (2 to 150 times the knee current here) and the resistor drains the flux offset,
# so that inrush, the first cycle's, is the largest.
# Measured, as the worst of the ten peaks relative to the largest, and in brackets the
# integrator's share (against the reference sampled at the core's 128 output instants per cycle):
#                      5 x                    50 x
#   single phase       1.4e-5 (3.6e-6)        1.8e-3 (9.8e-7)
#   grounded wye       1.8e-4 (1.8e-4)        1.2e-4 (9.1e-8)
#   delta 50 MVA       2.9e-5 (2.3e-5)        7.2e-3 (3.3e-6)
#   wye 250 MVA        1.8e-4 (1.8e-4)        2.7e-3 (1.5e-6)
# The integrator's share is at most 1.8e-4 where the step meets a quarter of the inserted time
# constant by itself (m = 1) and a few 1e-6 with sub-steps; forced to m = 1, the 50 x cases were
# off by 2.1e-2 to 1.2e-1 (a step of 2.5 inserted time constants). LARGE_R_SHARE_TOL, 5e-4, is
# about three times the former and forty times below the latter. The rest of the error is the
# peak read from 128 samples per cycle: the clipped current's crest is narrow (with 512 output
# samples per cycle every case above is within 7.9e-5 of the fine reference);
# LARGE_R_PEAK_TOL, 1e-2, bounds that reading at 1.4 x the worst measured.
LARGE_R_OF_LOOP_X = (5.0, 50.0)
LARGE_R_SHARE_TOL = 5e-4
LARGE_R_PEAK_TOL = 1e-2


def _large_resistor_circuit(
    connection: str,
) -> tuple[circuit_model.EquivalentCircuit, float, Array]:
    """(circuit, closing angle [deg], pole closing instants [s]) of each connection tested."""
    if connection == "single_phase":  # the weak-source case (L_s = 3.5 L_air, R/X 0.15)
        case = SINGLE_PHASE_CASES[4]
        return _single_phase_setup(case)[0], case.angle_deg, np.zeros(1)
    if connection == "wye_grounded":  # the generator back-feed, with its pole scatter
        z_gen = 480.0**2 / 1.25e6
        source = circuit_model.Source(
            "impedance", resistance_ohm=0.15 * z_gen / 20.0, reactance_ohm=0.15 * z_gen
        )
        npl = circuit_model.Nameplate(
            2500e3, 3, F_HZ, 480.0, connection="wye_grounded", position="inner",
            no_load_current_percent=0.8,
        )  # fmt: skip
        circuit = circuit_model.equivalent_circuit(npl, source)
        return circuit, 15.0, np.array([0.0, 1.3e-3, 2.9e-3])
    # the 13.8 kV winding: delta through a 50 MVA feeder, floating wye on 250 MVA
    npl = circuit_model.Nameplate(
        2500e3, 3, F_HZ, 13.8e3, connection=connection, no_load_current_percent=0.8
    )
    fault_va = 50e6 if connection == "delta" else 250e6
    source = circuit_model.Source("fault_level", fault_va=fault_va, x_over_r=12.0)
    return circuit_model.equivalent_circuit(npl, source), 0.0, np.zeros(3)


def _independent_reference(
    circuit: circuit_model.EquivalentCircuit,
    f: Curve,
    alpha: float,
    residual: Array,
    closes: Array,
    mit: _Mitigation,
) -> tuple[Array, Array]:
    """Per-cycle peaks of independent windings, as _coupled_reference returns them.

    Each winding is its own loop, d(lambda)/dt = (g*e - (R + r_extra)*i)/(1 + L_s*f'),
    integrated interval by interval (_piecewise_single) by Radau at rtol 1e-9.
    """
    r = circuit.winding_resistance_ohm + circuit.source_resistance_ohm
    ls = circuit.source_inductance_h
    lam_n = circuit.nominal_flux_wb
    n = closes.size
    tt = _fine_grid()
    ts = np.arange(N_CYCLES * SPC + 1) * (PERIOD_S / SPC)
    fine = np.zeros((n, N_CYCLES))
    sampled = np.zeros((n, ts.size))
    for k in range(n):

        def emf(t: float, k: int = k) -> float:
            if n == 1:
                return (
                    math.sqrt(2.0)
                    * circuit.winding_voltage_v
                    * math.sin(OMEGA * t + math.radians(alpha))
                )
            return float(_three_phase_emf(circuit, alpha, t)[k])

        def rhs_for(
            t_mid: float,
            r_extra: float,
            g: Callable[[float], float],
            emf: Callable[[float], float] = emf,
        ) -> Callable[[float, Array], Array]:
            def rhs(t: float, y: Array) -> Array:
                i, d = f(y)
                return (g(t) * emf(t) - (r + r_extra) * i) / (1.0 + ls * d)

            return rhs

        lam = _piecewise_single(rhs_for, residual[k] * lam_n, closes[k], mit, 1e-9 * lam_n, "Radau")
        fine[k] = _cycle_max(np.where(tt >= closes[k], np.abs(f(lam(tt))[0]), 0.0))
        sampled[k] = np.where(ts >= closes[k], f(lam(ts))[0], 0.0)
    return fine, waveform.cycle_peaks(sampled, SPC)


@pytest.mark.slow
@pytest.mark.parametrize("r_of_x", LARGE_R_OF_LOOP_X, ids=lambda v: f"{v:g}x")
@pytest.mark.parametrize("connection", ["single_phase", "wye_grounded", "delta", "wye"])
def test_a_large_resistor_matches_solve_ivp(connection: str, r_of_x: float) -> None:
    circuit, alpha, poles = _large_resistor_circuit(connection)
    residual = np.array([0.7]) if connection == "single_phase" else np.array([0.8, -0.4, -0.4])
    if connection == "wye_grounded":
        residual = np.array([0.7, -0.2, -0.5])
    x_loop = OMEGA * (circuit.air_core_inductance_h + circuit.source_inductance_h)
    r_ins = r_of_x * x_loop / (3.0 if connection == "delta" else 1.0)
    sim = energize.simulate(
        circuit, alpha, residual, poles if poles.any() else 0.0,
        duration_s=N_CYCLES * PERIOD_S, insertion_resistance_ohm=r_ins,
        insertion_time_s=PERIOD_S,
    )  # fmt: skip
    # the plan of the circuit without the resistor, and the rule for the sub-steps: the fewest
    # that keep each at or below a quarter of (L_air + L_s)/(R_w + 2 R_s + k R_ins)
    assert sim.steps_per_cycle == SPC
    r_loop = circuit.winding_resistance_ohm + 2.0 * circuit.source_resistance_ohm
    k = 3.0 if connection == "delta" else 1.0
    tau_ins = (circuit.air_core_inductance_h + circuit.source_inductance_h) / (r_loop + k * r_ins)
    assert sim.insertion_substeps[0] == max(1, math.ceil(4.0 / (F_HZ * tau_ins) / SPC))
    got = waveform.cycle_peaks(sim.line_current_a, SPC)[0]
    mit = dataclasses.replace(_used(sim), r_ins=r_ins, t_hold=0.0, t_end=0.0)
    if connection in ("single_phase", "wye_grounded"):
        fine, sampled = _independent_reference(
            circuit, _curve_of(circuit), alpha, residual, sim.pole_delay_s[0], mit
        )
    else:
        fine, sampled = _coupled_reference(circuit, residual, alpha, mit=mit)
    # the winding saturates while the resistor is in (the current it then allows, ~V/R_ins, is
    # 2 to 150 times the knee current here); the inrush is the inserted cycle's
    knee_a = circuit.knee_flux_wb / circuit.magnetizing_inductance_h
    assert fine[:, 0].max() > 1.5 * knee_a
    assert fine[:, 0].max() == fine.max()
    err = _worst_mitigated(got, fine)
    share = _worst_mitigated(got, sampled)
    assert err < LARGE_R_PEAK_TOL, f"{connection}, {r_of_x:g} x: worst peak error {err:.3e}"
    assert share < LARGE_R_SHARE_TOL, f"{connection}, {r_of_x:g} x: integrator's share {share:.3e}"


@pytest.mark.slow
@pytest.mark.parametrize("connection", ["wye_grounded", "delta", "wye"])
def test_a_large_resistor_during_a_ramp_matches_solve_ivp(connection: str) -> None:
    # The 50 x resistor of the test above, in for 1.5 cycles, while the EMF rises from 0.3 pu
    # (held a quarter cycle) over two cycles: the sub-steps see g at their own stage times.
    # The flux the resistor leaves at the bypass, with the EMF still rising, sets an inrush of
    # 25 to 150 times the knee current in the third cycle. Measured: grounded wye 1.6e-4
    # (1.6e-4, the same with 4 x the sub-steps: the step after the bypass), delta 4.9e-4
    # (1.8e-5), floating wye 5.1e-5 (5.2e-5); with the sub-steps' offsets in g counted in
    # whole steps instead of h/m, 3.5e-2 to 1.2e-1 (1.0e-2 for single phase, which stays below
    # its knee here and is left out). Tolerances as above.
    circuit, alpha, poles = _large_resistor_circuit(connection)
    residual = np.array([0.7, -0.2, -0.5] if connection == "wye_grounded" else [0.8, -0.4, -0.4])
    x_loop = OMEGA * (circuit.air_core_inductance_h + circuit.source_inductance_h)
    r_ins = 50.0 * x_loop / (3.0 if connection == "delta" else 1.0)
    ramp = {
        "voltage_start_pu": 0.3, "voltage_hold_s": 0.25 * PERIOD_S,
        "voltage_rise_s": 2.0 * PERIOD_S,
    }  # fmt: skip
    sim = energize.simulate(
        circuit, alpha, residual, poles if poles.any() else 0.0,
        duration_s=N_CYCLES * PERIOD_S, insertion_resistance_ohm=r_ins,
        insertion_time_s=1.5 * PERIOD_S, **ramp,
    )  # fmt: skip
    assert sim.insertion_substeps[0] > 1
    got = waveform.cycle_peaks(sim.line_current_a, SPC)[0]
    mit = dataclasses.replace(_used(sim), r_ins=r_ins, start=ramp["voltage_start_pu"])
    assert mit.t_hold < mit.t_bypass < mit.t_end  # the rise spans the bypass
    if connection == "wye_grounded":
        fine, sampled = _independent_reference(
            circuit, _curve_of(circuit), alpha, residual, sim.pole_delay_s[0], mit
        )
    else:
        fine, sampled = _coupled_reference(circuit, residual, alpha, mit=mit)
    knee_a = circuit.knee_flux_wb / circuit.magnetizing_inductance_h
    assert fine.max() > 20.0 * knee_a
    err = _worst_mitigated(got, fine)
    share = _worst_mitigated(got, sampled)
    assert err < LARGE_R_PEAK_TOL, f"{connection}, ramp: worst peak error {err:.3e}"
    assert share < LARGE_R_SHARE_TOL, f"{connection}, ramp: integrator's share {share:.3e}"
