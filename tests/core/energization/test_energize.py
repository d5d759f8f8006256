"""Tests of core.energization.energize: analytic limiting cases, connection identities and
properties.

The comparison with scipy's integrators is in tests/references/test_solver_vs_scipy.py.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from core import waveform
from core.energization import closed_form, energize
from core.errors import LimitError, ParameterError
from core.network import solver
from core.transformer import circuit_model, magnetizing

F_HZ = 60.0
OMEGA = 2.0 * math.pi * F_HZ
V_RMS = 7967.4  # a 13.8 kV wye winding [V]
LAMBDA_N = math.sqrt(2.0) * V_RMS / OMEGA
L_AIR = 20.0 / OMEGA  # 20 ohm saturated reactance [H]
L_M = 600.0 * L_AIR  # [H]
SPC = 128


def _lossless(knee_pu: float) -> circuit_model.EquivalentCircuit:
    """R = 0, L_s = 0, two-slope curve with the knee at knee_pu * lambda_N."""
    curve = magnetizing.two_slope(L_M, knee_pu * LAMBDA_N, L_AIR)
    return circuit_model.circuit_from_si(V_RMS, F_HZ, 0.0, 0.0, curve)


def _first_cycle_peak(sim: energize.Simulation) -> float:
    return float(waveform.cycle_peaks(sim.line_current_a, sim.samples_per_cycle)[0, :, 0].max())


def _single_phase_unit() -> circuit_model.EquivalentCircuit:
    # a 167 kVA single-phase unit, 13.8 kV/sqrt(3) winding, defaults otherwise
    npl = circuit_model.Nameplate(167e3, 1, F_HZ, V_RMS, no_load_current_percent=1.0)
    return circuit_model.equivalent_circuit(npl)


# ------------------------------------------------------------------ limiting cases


@pytest.mark.parametrize("residual", [0.0, 0.5, 0.8])
@pytest.mark.parametrize("knee", [1.15, 1.4])
def test_lossless_first_peak_is_wang_plus_knee_current(residual: float, knee: float) -> None:
    # Limiting case R = 0, L_s = 0, closing at a voltage zero (alpha = 0): the flux rises from
    # b_r to b_r + 2 exactly, so i_pk = lambda_S/L_m + (b_r + 2 - b_s)*lambda_N/L_air, which is
    # Wang's closed form plus the knee current it neglects. The peak falls on a sample (half a
    # cycle), so only the integrator's error remains: RK4 on d(lambda)/dt = v(t) is Simpson's
    # rule, ~1e-9 relative at 128 steps per cycle; 1e-6 leaves margin.
    sim = energize.simulate(_lossless(knee), 0.0, residual, duration_s=1.0 / F_HZ)
    wang = float(closed_form.first_peak_wang(V_RMS, F_HZ, L_AIR, 0.0, residual, knee))
    expected = wang + knee * LAMBDA_N / L_M
    assert _first_cycle_peak(sim) == pytest.approx(expected, rel=1e-6)


def test_closing_at_voltage_peak_without_residual_draws_only_magnetising_current() -> None:
    # Limiting case: alpha = 90 deg and b_r = 0 gives lambda = lambda_N*sin(omega*t), the
    # steady state from the first instant; the knee (B_S/B_N ~ 1.19) is never reached, so the
    # current is the no-load current, crest sqrt(2)*I_0.
    circuit = _single_phase_unit()
    i0 = 0.01 * circuit.rated_winding_current_a  # 1 % no-load current [A rms]
    sim = energize.simulate(circuit, 90.0, 0.0, duration_s=3.0 / F_HZ)
    peak = float(np.abs(sim.line_current_a).max())
    assert peak < 2.0 * math.sqrt(2.0) * i0
    # and it is the magnetising current, not nothing (1 % for the winding resistance's drop)
    assert peak == pytest.approx(math.sqrt(2.0) * i0, rel=1e-2)


def test_below_the_knee_the_current_is_the_linear_rl_transient() -> None:
    # Limiting case: knee at 4 pu, so b_r + 2 = 2.8 pu never reaches it; the circuit is then
    # linear, (L_m + L_s) di/dt + R i = V_pk sin(omega t + alpha), i(0) = lambda_r/L_m, whose
    # closed form (the standard RL switching transient) is
    #   i = (V_pk/Z) sin(omega t + alpha - phi) + [i0 - (V_pk/Z) sin(alpha - phi)] e^(-R t/L).
    # Tolerance 1e-6 of the peak: RK4's error on this smooth linear ODE is ~1e-9.
    ls, r, b_r, alpha = 0.2 * L_AIR, 2.0, 0.8, math.radians(0.0)
    curve = magnetizing.two_slope(L_M, 4.0 * LAMBDA_N, L_AIR)
    circuit = circuit_model.circuit_from_si(V_RMS, F_HZ, r, ls, curve)
    sim = energize.simulate(circuit, 0.0, b_r, duration_s=5.0 / F_HZ)
    t = sim.time_s
    big_l = L_M + ls
    z = math.hypot(r, OMEGA * big_l)
    phi = math.atan2(OMEGA * big_l, r)
    vpk = math.sqrt(2.0) * V_RMS
    i0 = b_r * LAMBDA_N / L_M
    expected = vpk / z * np.sin(OMEGA * t + alpha - phi) + (
        i0 - vpk / z * math.sin(alpha - phi)
    ) * np.exp(-r * t / big_l)
    got = sim.line_current_a[0, 0]
    assert np.max(np.abs(got - expected)) < 1e-6 * np.max(np.abs(expected))
    # the flux stayed on the unsaturated line: |i| * L_m never exceeds the knee
    assert np.max(np.abs(got)) * L_M < 4.0 * LAMBDA_N


@pytest.mark.parametrize("residual", [-0.7, 0.3, 0.6, 0.85])
def test_controlled_closing_gives_magnetising_level_current(residual: float) -> None:
    # Limiting case (Brunke & Froehlich 2001, from memory): closing at cos(alpha) = -b_r puts the
    # prospective flux equal to the residual flux with the same slope, so the flux swings
    # symmetrically, -1..1 pu, and never reaches the knee.
    circuit = _single_phase_unit()
    i0 = 0.01 * circuit.rated_winding_current_a
    alpha = math.degrees(math.acos(-residual))
    controlled = energize.simulate(circuit, alpha, residual, duration_s=3.0 / F_HZ)
    assert float(np.abs(controlled.line_current_a).max()) < 2.0 * math.sqrt(2.0) * i0
    # the control case: closing at the worst instant instead draws real inrush
    worst_alpha = 0.0 if residual > 0 else 180.0
    uncontrolled = energize.simulate(circuit, worst_alpha, residual, duration_s=3.0 / F_HZ)
    assert float(np.abs(uncontrolled.line_current_a).max()) > 50.0 * i0


# ------------------------------------------------------------------ three phase, connections


def _demo_unit(connection: str, voltage: float, position: str) -> circuit_model.EquivalentCircuit:
    npl = circuit_model.Nameplate(
        2500e3,
        3,
        F_HZ,
        voltage,
        connection=connection,
        position=position,
        no_load_current_percent=0.8,
    )
    return circuit_model.equivalent_circuit(npl)


def test_pole_delay_keeps_a_phase_at_zero_until_it_closes() -> None:
    circuit = _demo_unit("wye_grounded", 480.0, "inner")
    delays = np.array([0.0, 4.0e-3, 7.3e-3])
    sim = energize.simulate(circuit, 0.0, (0.7, -0.35, -0.35), delays, duration_s=3.0 / F_HZ)
    h = 1.0 / (F_HZ * sim.steps_per_cycle)
    used = sim.pole_delay_s[0]
    assert np.all(np.abs(used - delays) <= 0.5 * h + 1e-15)  # rounded to the internal step
    for k in range(3):
        before = sim.time_s < used[k] - 1e-12
        assert np.all(sim.line_current_a[0, k, before] == 0.0)
        # from the closing instant on, the phase carries its magnetising (or inrush) current
        after = sim.time_s > used[k] + 1e-12
        assert np.all(np.abs(sim.line_current_a[0, k, after][:5]) > 0.0)


def test_delta_with_one_pole_open_carries_the_series_path() -> None:
    # pole b late: terminal b floats, so by Kirchhoff's current law there (line b carries
    # nothing) windings ab and bc carry one current in series across lines c-a, beside ca
    circuit = _demo_unit("delta", 13.8e3, "outer")
    sim = energize.simulate(circuit, 0.0, 0.0, (0.0, 5e-3, 0.0), duration_s=2.0 / F_HZ)
    t_b = sim.pole_delay_s[0, 1]
    early = sim.time_s < t_b - 1e-12
    ab, bc, ca = sim.winding_current_a[0]
    np.testing.assert_allclose(ab[early], bc[early], rtol=0.0, atol=1e-9 * np.abs(ca).max())
    assert np.any(ab[early] != 0.0)
    assert np.any(ca[early] != 0.0)  # poles c and a closed at t = 0
    assert np.all(sim.line_current_a[0, 1, early] == 0.0)  # line b: open pole, no current


def test_delta_on_ideal_source_line_current_is_difference_of_winding_currents() -> None:
    circuit = _demo_unit("delta", 13.8e3, "outer")
    residual = np.array([0.8, -0.5, -0.3])
    alpha = 20.0
    sim = energize.simulate(circuit, alpha, residual, duration_s=4.0 / F_HZ)
    ab, bc, ca = sim.winding_current_a[0]
    # Kirchhoff's current law at the delta corners: i_a = c_ab - c_ca, i_b = c_bc - c_ab, ...
    np.testing.assert_array_equal(sim.line_current_a[0], np.stack([ab - ca, bc - ab, ca - bc]))
    # On an ideal source each winding is an independent single-phase circuit on the
    # line-to-line voltage, which leads the phase voltage by 30 deg: e_ab = sqrt(3) V_ph
    # sin(wt + alpha + 30). rtol 1e-9: only the voltage's rounding differs.
    for k, shift in enumerate((0.0, -120.0, 120.0)):
        single = circuit_model.circuit_from_si(
            circuit.line_voltage_v, F_HZ, circuit.winding_resistance_ohm, 0.0, circuit.curve
        )
        one = energize.simulate(single, alpha + shift + 30.0, residual[k], duration_s=4.0 / F_HZ)
        np.testing.assert_allclose(
            sim.winding_current_a[0, k], one.line_current_a[0, 0], rtol=1e-9, atol=1e-9
        )


def test_grounded_wye_phases_are_independent_single_phase_circuits() -> None:
    circuit = _demo_unit("wye_grounded", 480.0, "inner")
    residual = np.array([0.6, 0.1, -0.7])
    sim = energize.simulate(circuit, 45.0, residual, duration_s=3.0 / F_HZ)
    for k, shift in enumerate((0.0, -120.0, 120.0)):  # ABC sequence: B lags, C leads
        single = circuit_model.circuit_from_si(
            circuit.winding_voltage_v, F_HZ, circuit.winding_resistance_ohm, 0.0, circuit.curve
        )
        one = energize.simulate(single, 45.0 + shift, residual[k], duration_s=3.0 / F_HZ)
        np.testing.assert_allclose(
            sim.line_current_a[0, k], one.line_current_a[0, 0], rtol=1e-9, atol=1e-9
        )


@pytest.mark.parametrize(
    ("connection", "r_source_ohm"),
    [("delta", 0.1), ("delta", 0.0), ("wye", 0.1)],
    ids=["delta-resistive-source", "delta-ideal-source", "wye"],
)
def test_a_vanishing_source_inductance_is_the_limit_of_a_small_one(
    connection: str, r_source_ohm: float
) -> None:
    # Limiting case L_s -> 0: the loop-flux states (lambda plus the source-inductor flux)
    # become lambda and the bus solve disappears, so L_s = 1e-9 H must give what L_s = 0 gives
    # but for the physical difference, ~L_s/L_air ~ 2e-8 of the current; measured 5.2e-7 of
    # the peak at most (delta, staggered poles), so 2e-6 of the peak. (Much smaller L_s is
    # outside what the bus solve resolves: it recovers the source current as Phi/L_s, whose
    # error is its tolerance on Phi over L_s, 5e-4 of the peak at 1e-12 H.)
    circuit = _demo_unit(connection, 13.8e3, "outer")
    residual = np.array([0.8, -0.4, -0.4])
    sims = [
        energize.simulate(
            dataclasses.replace(
                circuit, source_resistance_ohm=r_source_ohm, source_inductance_h=ls
            ),
            (0.0, 100.0),
            residual,
            (0.0, 1.3e-3, 2.9e-3),
            duration_s=3.0 / F_HZ,
        )
        for ls in (0.0, 1e-9)
    ]
    exact, tiny = (s.line_current_a for s in sims)
    assert np.max(np.abs(exact)) > 2.0 * circuit.rated_line_current_a  # real inrush
    np.testing.assert_allclose(tiny, exact, rtol=0.0, atol=2e-6 * np.max(np.abs(exact)))


# ------------------------------------------------------------------ properties


def test_a_batch_gives_the_same_as_one_case_at_a_time() -> None:
    # vector-equals-scalar: cases are integrated independently, so bitwise equal
    base = _single_phase_unit()
    circuits = [
        base,
        circuit_model.circuit_from_si(V_RMS, F_HZ, 1.0, 0.1 * L_AIR, base.curve),
        circuit_model.circuit_from_si(
            V_RMS,
            F_HZ,
            0.5,
            0.0,
            magnetizing.smooth_knee(L_M, 1.2 * LAMBDA_N, L_AIR, 0.05 * LAMBDA_N),
        ),
        circuit_model.circuit_from_si(
            V_RMS,
            F_HZ,
            0.8,
            0.3 * L_AIR,
            magnetizing.from_table(
                [0.9 * LAMBDA_N, 1.1 * LAMBDA_N, 1.3 * LAMBDA_N], [0.5, 5.0, 100.0], L_AIR
            ),
        ),
    ]
    angles = np.array([0.0, 33.0, 200.0, 290.0])
    residual = np.array([[0.8], [-0.4], [0.1], [0.6]])
    batch = energize.simulate(circuits, angles, residual, duration_s=3.0 / F_HZ)
    for n, circuit in enumerate(circuits):
        one = energize.simulate(circuit, angles[n], residual[n], duration_s=3.0 / F_HZ)
        assert one.steps_per_cycle == batch.steps_per_cycle
        np.testing.assert_array_equal(batch.line_current_a[n], one.line_current_a[0])


def test_a_three_phase_batch_gives_the_same_as_one_case_at_a_time() -> None:
    for connection, voltage in (("delta", 13.8e3), ("wye", 480.0)):
        circuit = circuit_model.equivalent_circuit(
            circuit_model.Nameplate(2500e3, 3, F_HZ, voltage, connection=connection),
            circuit_model.Source("fault_level", fault_va=250e6, x_over_r=12.0),
        )
        angles = np.array([0.0, 100.0, 250.0])
        residual = np.array([[0.8, -0.4, -0.4], [0.0, 0.5, -0.5], [-0.2, 0.7, -0.5]])
        delays = np.array([[0.0, 1e-3, 2e-3], [0.0, 0.0, 0.0], [3e-3, 0.0, 1e-3]])
        batch = energize.simulate(circuit, angles, residual, delays, duration_s=2.0 / F_HZ)
        for n in range(3):
            one = energize.simulate(
                circuit, angles[n], residual[n], delays[n], duration_s=2.0 / F_HZ
            )
            np.testing.assert_array_equal(batch.line_current_a[n], one.line_current_a[0])


@settings(max_examples=15, deadline=None, database=None)
@given(
    st.floats(-0.9, 0.9, allow_nan=False),
    st.floats(-0.9, 0.9, allow_nan=False),
)
def test_higher_residual_flux_gives_a_higher_first_peak(b1: float, b2: float) -> None:
    # monotone property: closing at alpha = 0 the flux swing peaks at b_r + 2; a larger b_r
    # reaches further up the (monotone) curve
    lo, hi = sorted((b1, b2))
    circuit = _single_phase_unit()
    sim = energize.simulate(circuit, 0.0, np.array([[lo], [hi]]), duration_s=1.0 / F_HZ)
    peaks = waveform.cycle_peaks(sim.line_current_a, SPC)[:, 0, 0]
    assert peaks[1] >= peaks[0] * (1.0 - 1e-12)


def test_a_pre_insertion_resistor_lowers_the_first_peak() -> None:
    circuit = _single_phase_unit()
    extra = np.array([0.0, 5.0, 50.0, 500.0])
    sim = energize.simulate(circuit, 0.0, 0.8, duration_s=1.0 / F_HZ, extra_resistance_ohm=extra)
    peaks = waveform.cycle_peaks(sim.line_current_a, SPC)[:, 0, 0]
    assert np.all(np.diff(peaks) < 0.0)


def test_worst_closing_angle_single_phase_is_the_voltage_zero() -> None:
    # With b_r > 0 the flux swing centre b_r + cos(alpha) is largest at alpha = 0 (a voltage
    # zero); the resistance moves the optimum by a fraction of a degree at most.
    circuit = _single_phase_unit()
    worst = energize.worst_closing_angle(circuit, 0.7)
    off = (worst.closing_angle_deg + 180.0) % 360.0 - 180.0
    assert abs(off) < 1.0
    # and no angle of an independent 1-degree scan gives more
    angles = np.arange(0.0, 360.0, 1.0)
    sim = energize.simulate(circuit, angles, 0.7, duration_s=2.0 / F_HZ)
    scanned = energize.refined_abs_peak(sim.line_current_a)[:, 0]
    assert worst.peak_a >= scanned.max() * (1.0 - 1e-12)
    assert worst.phase_index == 0
    assert worst.peaks_by_phase_a.shape == (1,)


def test_worst_closing_angle_is_rounded_and_wrapped_into_a_turn() -> None:
    # The search grid is built from floating-point steps centred on 180 deg, so the best angle
    # near a voltage zero came out as -1e-14 and was reported as 359.99999999999997 deg; the
    # angle is rounded to 1e-6 deg and wrapped into [0, 360).
    circuit = _single_phase_unit()
    for residual in (0.7, -0.7, 0.0):
        worst = energize.worst_closing_angle(circuit, residual)
        assert 0.0 <= worst.closing_angle_deg < 360.0
        assert worst.closing_angle_deg == round(worst.closing_angle_deg, 6)
    # b_r > 0: the worst instant is a rising voltage zero, alpha = 0 exactly on this grid
    assert energize.worst_closing_angle(circuit, 0.7).closing_angle_deg == 0.0
    # and the peak reported is the one simulated at the angle reported
    worst = energize.worst_closing_angle(_demo_unit("delta", 13.8e3, "outer"), 0.3)
    sim = energize.simulate(
        _demo_unit("delta", 13.8e3, "outer"), worst.closing_angle_deg, 0.3, duration_s=2.0 / F_HZ
    )
    np.testing.assert_array_equal(
        energize.refined_abs_peak(sim.line_current_a)[0], worst.peaks_by_phase_a
    )


# ------------------------------------------------------------------ pre-insertion resistor, ramp


def _mitigation_circuits() -> list[tuple[str, circuit_model.EquivalentCircuit]]:
    """One circuit per kernel path: independent windings, delta on an ideal source, coupled."""
    src = circuit_model.Source("fault_level", fault_va=50e6, x_over_r=12.0)
    three = [
        (f"{conn}-{'source' if s else 'ideal'}", circuit_model.equivalent_circuit(
            circuit_model.Nameplate(
                2500e3, 3, F_HZ, 13.8e3, connection=conn, no_load_current_percent=0.8
            ),
            s,
        ))
        for conn, s in (("wye_grounded", src), ("delta", None), ("delta", src), ("wye", src))
    ]  # fmt: skip
    return [("single_phase", _single_phase_unit()), *three]


MITIGATION_CIRCUITS = _mitigation_circuits()
MITIGATION_IDS = [name for name, _ in MITIGATION_CIRCUITS]
RESIDUAL = (0.8, -0.4, -0.4)


def _run(circuit: circuit_model.EquivalentCircuit, **kwargs: Any) -> energize.Simulation:
    residual = RESIDUAL[: circuit.phases]
    return energize.simulate(
        circuit, (0.0, 100.0), residual, (0.0, 1.3e-3, 2.9e-3)[: circuit.phases],
        duration_s=3.0 / F_HZ, **kwargs,
    )  # fmt: skip


def _assert_identical(a: energize.Simulation, b: energize.Simulation) -> None:
    np.testing.assert_array_equal(a.line_current_a, b.line_current_a)
    np.testing.assert_array_equal(a.winding_current_a, b.winding_current_a)
    assert a.steps_per_cycle == b.steps_per_cycle
    assert a.approximations == b.approximations


@pytest.mark.parametrize(("name", "circuit"), MITIGATION_CIRCUITS, ids=MITIGATION_IDS)
def test_a_zero_resistor_is_the_default_bit_for_bit(
    name: str, circuit: circuit_model.EquivalentCircuit
) -> None:
    # Limiting case R_ins = 0: the kernels add exactly 0.0 to each line's resistance
    default = _run(circuit)
    assert np.max(np.abs(default.line_current_a)) > 2.0 * circuit.rated_line_current_a
    _assert_identical(
        _run(circuit, insertion_resistance_ohm=0.0, insertion_time_s=2.0 / F_HZ), default
    )


@pytest.mark.parametrize(("name", "circuit"), MITIGATION_CIRCUITS, ids=MITIGATION_IDS)
def test_a_resistor_bypassed_at_closing_is_none_bit_for_bit(
    name: str, circuit: circuit_model.EquivalentCircuit
) -> None:
    # Limiting case t_ins = 0: shorted from the first instant, the resistor never carries
    # current; the step plan and the kernel (a delta on an ideal source stays on the
    # independent-winding kernel) are those of no resistor at all
    _assert_identical(
        _run(circuit, insertion_resistance_ohm=500.0, insertion_time_s=0.0), _run(circuit)
    )


@pytest.mark.parametrize(("name", "circuit"), MITIGATION_CIRCUITS, ids=MITIGATION_IDS)
def test_a_ramp_from_full_voltage_is_the_default_bit_for_bit(
    name: str, circuit: circuit_model.EquivalentCircuit
) -> None:
    # Limiting case start = 1: g = 1 + 0*(t - t_hold)/t_rise is exactly 1 throughout, and the
    # EMF multiplied by exactly 1.0 is the EMF
    ramp = _run(circuit, voltage_start_pu=1.0, voltage_hold_s=0.5 / F_HZ, voltage_rise_s=2.0 / F_HZ)
    _assert_identical(ramp, _run(circuit))


@pytest.mark.parametrize(("name", "circuit"), MITIGATION_CIRCUITS, ids=MITIGATION_IDS)
def test_more_insertion_resistance_gives_a_lower_first_peak(
    name: str, circuit: circuit_model.EquivalentCircuit
) -> None:
    # monotone property: a larger series resistance, in for the whole first cycle, leaves less
    # of the source voltage across the winding while it saturates; the first peak falls
    # strictly. Values from nothing to many times the saturated reactance (X_air ~ 65 ohm for
    # the 167 kVA single-phase unit; 13 ohm (wye) and 39 ohm (delta) for the 2500 kVA unit's
    # 13.8 kV winding).
    values = np.array([0.0, 3.0, 30.0, 300.0, 3000.0])
    peaks = [
        float(
            waveform.cycle_peaks(
                _run(
                    circuit, insertion_resistance_ohm=r, insertion_time_s=2.0 / F_HZ
                ).line_current_a,
                SPC,
            )[:, :, 0].max()
        )
        for r in values
    ]
    assert np.all(np.diff(peaks) < 0.0), peaks


@settings(max_examples=15, deadline=None, database=None)
@given(st.floats(0.0, 2000.0, allow_nan=False), st.floats(0.0, 2000.0, allow_nan=False))
def test_more_insertion_resistance_never_raises_the_first_peak(r1: float, r2: float) -> None:
    # the same monotone property on random pairs, single phase (one kernel call each)
    lo, hi = sorted((r1, r2))
    sim = energize.simulate(
        _single_phase_unit(), 0.0, 0.8, duration_s=1.0 / F_HZ,
        insertion_resistance_ohm=np.array([lo, hi]), insertion_time_s=1.0 / F_HZ,
    )  # fmt: skip
    peaks = waveform.cycle_peaks(sim.line_current_a, SPC)[:, 0, 0]
    assert peaks[1] <= peaks[0] * (1.0 + 1e-12)


def _rl_closed_form(
    t: np.ndarray,
    big_l: float,
    vpk: float,
    beta: np.ndarray,
    i0: np.ndarray,
    pieces: list[tuple[float, float, float, float]],
) -> np.ndarray:
    """i(t) of big_l di/dt + R i = (a + b t) V_pk sin(omega t + beta), R, a, b piecewise.

    ``pieces`` are (t_start [s], R [ohm], a [-], b [1/s]) in time order from t = 0, each holding
    until the next; i is continuous, i(0) = i0. One value or row per beta (windings).
    Closed form: with Z = R + j omega L, the particular solution is
    Im[V_pk (c0 + c1 t) e^(j(omega t + beta))], c1 = b/Z, c0 = (a - L c1)/Z (substitute:
    L c1 + Z c0 + Z c1 t = a + b t), plus [i(t0) - i_p(t0)] e^(-R (t - t0)/L) on each piece;
    with b = 0, a = 1 it is the standard RL switching transient.
    """
    beta = np.atleast_1d(beta)[:, None]
    out = np.zeros((beta.shape[0], t.size))
    i_start = np.atleast_1d(i0).astype(float)
    for k, (t0, res, a, b) in enumerate(pieces):
        t1 = pieces[k + 1][0] if k + 1 < len(pieces) else math.inf
        z = complex(res, OMEGA * big_l)
        c1 = b / z
        c0 = (a - big_l * c1) / z

        def particular(tt: np.ndarray, c0: complex = c0, c1: complex = c1) -> np.ndarray:
            return vpk * np.imag((c0 + c1 * tt) * np.exp(1j * (OMEGA * tt + beta)))

        free = i_start - particular(np.array([t0]))[:, 0]
        sel = (t >= t0) & (t < t1)
        out[:, sel] = particular(t[sel]) + free[:, None] * np.exp(-res * (t[sel] - t0) / big_l)
        if t1 < math.inf:
            i_start = particular(np.array([t1]))[:, 0] + free * math.exp(-res * (t1 - t0) / big_l)
    return out


def _pieces(
    r_in: float, r_out: float, t_b: float, start: float, t_hold: float, t_end: float
) -> list[tuple[float, float, float, float]]:
    """(t_start, R, a, b) of a resistor bypassed at t_b and g = start, a rise, then 1."""
    slope = (1.0 - start) / (t_end - t_hold) if t_end > t_hold else 0.0
    edges = sorted({0.0, t_b, t_hold, t_end})
    out = []
    for t0 in edges:
        if t0 < t_hold:
            a, b = start, 0.0
        elif t0 < t_end:
            a, b = start - slope * t_hold, slope
        else:
            a, b = 1.0, 0.0
        out.append((t0, r_in if t0 < t_b else r_out, a, b))
    return out


RAMP_ACROSS_BYPASS = {"voltage_start_pu": 0.3, "voltage_hold_s": 0.6 / F_HZ,
                      "voltage_rise_s": 2.0 / F_HZ}  # fmt: skip


@pytest.mark.parametrize("ramp", [False, True], ids=["full-voltage", "ramp"])
def test_below_the_knee_a_bypassed_resistor_gives_two_rl_transients(ramp: bool) -> None:
    # Limiting case: the knee at 4 pu is never reached, so the circuit is linear,
    # (L_m + L_s) di/dt + R(t) i = g(t) V_pk sin(omega t), R = R + R_ins before the bypass
    # instant t_b and R after; i is continuous at t_b. Each piece is the RL transient of
    # _rl_closed_form (the standard RL switching transient at full voltage; with the ramp, g
    # rising from 0.3 across the bypass, g linear on each piece). R_ins = 3000 ohm needs ~25
    # sub-steps per step while it is in (its loop's saturated time constant being short), which
    # this checks on the independent-winding kernel, with g at each sub-step's own stages.
    # Tolerance 1e-6 of the peak (RK4's error on this smooth linear ODE is ~1e-9, measured
    # 1.4e-9 and 2.3e-9); a bypass one step late changes the current by ~R_ins h/L ~ 1e-3 of
    # it, and g evaluated at the whole step's stage times in every sub-step by 1.2e-5
    # (measured; 9.8e-6 for the delta below).
    ls, r, r_ins, b_r = 0.2 * L_AIR, 2.0, 3000.0, 0.8
    circuit = circuit_model.circuit_from_si(
        V_RMS, F_HZ, r, ls, magnetizing.two_slope(L_M, 4.0 * LAMBDA_N, L_AIR)
    )
    sim = energize.simulate(
        circuit, 0.0, b_r, duration_s=5.0 / F_HZ, insertion_resistance_ohm=r_ins,
        insertion_time_s=1.7 / F_HZ, **(RAMP_ACROSS_BYPASS if ramp else {}),
    )  # fmt: skip
    t_b = float(sim.insertion_time_s[0])
    h = 1.0 / (F_HZ * sim.steps_per_cycle)
    assert abs(t_b - 1.7 / F_HZ) <= 0.5 * h  # rounded to the internal step
    assert round(t_b / h) * h == t_b
    assert sim.insertion_substeps[0] > 1
    t_hold, t_end = sim.voltage_ramp_s[0] if ramp else (0.0, 0.0)
    if ramp:
        assert t_hold < t_b < t_end
    pieces = _pieces(r + r_ins, r, t_b, 0.3 if ramp else 1.0, t_hold, t_end)
    expected = _rl_closed_form(
        sim.time_s, L_M + ls, math.sqrt(2.0) * V_RMS, np.zeros(1),
        np.array([b_r * LAMBDA_N / L_M]), pieces,
    )[0]  # fmt: skip
    got = sim.line_current_a[0, 0]
    assert np.max(np.abs(got - expected)) < 1e-6 * np.max(np.abs(expected))


@pytest.mark.parametrize("rise_cycles", [0.0, 2.5], ids=["step", "ramp"])
def test_lossless_linear_flux_under_a_ramp_is_the_integral_of_the_emf(rise_cycles: float) -> None:
    # Limiting case R = 0, L_s = 0, knee at 4 pu: d(lambda)/dt = g(t) V_pk sin(omega t + alpha)
    # exactly, so lambda = lambda_r + integral of g*e, in closed form for a g that is constant
    # or linear, a + b*t, on each piece:
    #   integral of (a + b t) sin(w t + alpha) = -(a + b t) cos(w t + alpha)/w
    #                                            + b sin(w t + alpha)/w^2,
    # and i = lambda/L_m. RK4 on a quadrature is Simpson's rule, exact for this integrand to
    # ~1e-9 per cycle when g is evaluated at every stage, so 1e-6 of the peak; g held over each
    # step instead is off by ~(1 - start)/rise*h/2 of the EMF (~1e-3).
    start, alpha = 0.3, math.radians(40.0)
    circuit = circuit_model.circuit_from_si(
        V_RMS, F_HZ, 0.0, 0.0, magnetizing.two_slope(L_M, 4.0 * LAMBDA_N, L_AIR)
    )
    sim = energize.simulate(
        circuit, 40.0, 0.5, duration_s=6.0 / F_HZ, voltage_start_pu=start,
        voltage_hold_s=1.3 / F_HZ, voltage_rise_s=rise_cycles / F_HZ,
    )  # fmt: skip
    t_hold, t_end = sim.voltage_ramp_s[0]
    h = 1.0 / (F_HZ * sim.steps_per_cycle)
    assert abs(t_hold - 1.3 / F_HZ) <= 0.5 * h  # rounded to the internal step
    vpk = math.sqrt(2.0) * V_RMS

    def primitive(t: np.ndarray, a: float, b: float) -> np.ndarray:
        ph = OMEGA * t + alpha
        return vpk * (-(a + b * t) * np.cos(ph) / OMEGA + b * np.sin(ph) / OMEGA**2)

    slope = (1.0 - start) / (t_end - t_hold) if t_end > t_hold else 0.0
    pieces = [(0.0, t_hold, start, 0.0), (t_hold, t_end, start - slope * t_hold, slope)]
    pieces.append((t_end, math.inf, 1.0, 0.0))
    t = sim.time_s
    lam = np.full_like(t, 0.5 * LAMBDA_N)
    for lo, hi, a, b in pieces:
        if hi <= lo:
            continue
        upper = np.clip(t, lo, hi)
        lam += np.where(t > lo, primitive(upper, a, b) - primitive(np.array(lo), a, b), 0.0)
    expected = lam / L_M
    got = sim.line_current_a[0, 0]
    assert np.max(np.abs(got - expected)) < 1e-6 * np.max(np.abs(expected))


@pytest.mark.parametrize("start", [0.3, 0.6])
def test_lossless_first_peak_at_a_held_reduced_voltage(start: float) -> None:
    # Limiting case R = 0, L_s = 0, closing at a voltage zero, the EMF held at start*V for the
    # whole record: the flux rises from b_r to b_r + 2*start exactly (the Wang et al. swing at
    # a reduced voltage), so i_pk = lambda_S/L_m + ((b_r + 2 start) lambda_N - lambda_S)/L_air;
    # as in the full-voltage case the peak falls on a sample and RK4 is Simpson's rule here.
    knee, b_r = 1.15, 0.8
    sim = energize.simulate(
        _lossless(knee), 0.0, b_r, duration_s=1.0 / F_HZ, voltage_start_pu=start,
        voltage_hold_s=2.0 / F_HZ,
    )  # fmt: skip
    expected = knee * LAMBDA_N / L_M + ((b_r + 2.0 * start) - knee) * LAMBDA_N / L_AIR
    assert _first_cycle_peak(sim) == pytest.approx(expected, rel=1e-6)


def test_a_slow_ramp_from_zero_keeps_the_current_at_magnetising_level() -> None:
    # Soft energisation: with the EMF rising from 0 over 20 cycles and no residual flux, the flux
    # follows g(t)*lambda_N*(-cos) with no offset (g(0) = 0 leaves none to start with; the
    # rise's own contribution is g'/omega = 1/(40 pi) ~ 0.8 % of lambda_N), so it never reaches
    # the knee (B_S/B_N ~ 1.19) and the largest current is the steady crest sqrt(2)*I_0 of the
    # 1 % no-load current; 2 % for that and the winding resistance. Closing at the same instant
    # without the ramp draws real inrush (the control case).
    circuit = _single_phase_unit()
    crest = math.sqrt(2.0) * 0.01 * circuit.rated_winding_current_a
    soft = energize.simulate(
        circuit, 0.0, 0.0, duration_s=24.0 / F_HZ, voltage_start_pu=0.0,
        voltage_rise_s=20.0 / F_HZ,
    )  # fmt: skip
    peak = float(np.abs(soft.line_current_a).max())
    assert peak == pytest.approx(crest, rel=2e-2)
    hard = energize.simulate(circuit, 0.0, 0.0, duration_s=24.0 / F_HZ)
    assert float(np.abs(hard.line_current_a).max()) > 50.0 * peak


def test_a_batch_with_mitigation_gives_the_same_as_one_case_at_a_time() -> None:
    # vector-equals-scalar for the per-case resistor and ramp, on both kernels. The step plan is
    # the circuit's without the resistor, and a case whose resistor needs a finer step takes
    # sub-steps of its own while it is in (3000 ohm here: ~45 x the saturated reactance of the
    # 167 kVA unit, ~75 x the delta's), so batching it changes nothing for the others and
    # nothing for itself
    for circuit in (_single_phase_unit(), _demo_unit("delta", 13.8e3, "outer")):
        kwargs = {
            "insertion_resistance_ohm": np.array([0.0, 20.0, 60.0, 0.0, 3000.0]),
            "insertion_time_s": np.array([0.0, 0.02, 0.01, 0.0, 0.02]),
            "voltage_start_pu": np.array([1.0, 1.0, 0.5, 0.2, 0.6]),
            "voltage_hold_s": np.array([0.0, 0.0, 0.005, 0.01, 0.004]),
            "voltage_rise_s": np.array([0.0, 0.0, 0.0, 0.02, 0.02]),
        }
        angles = np.array([0.0, 30.0, 200.0, 300.0, 90.0])
        batch = energize.simulate(circuit, angles, 0.6, duration_s=3.0 / F_HZ, **kwargs)
        np.testing.assert_array_equal(batch.insertion_substeps[:4], 1)
        assert batch.insertion_substeps[4] > 1
        for n in range(5):
            one = energize.simulate(
                circuit, angles[n], 0.6, duration_s=3.0 / F_HZ,
                **{k: float(v[n]) for k, v in kwargs.items()},
            )  # fmt: skip
            assert one.steps_per_cycle == batch.steps_per_cycle == SPC
            assert one.insertion_substeps[0] == batch.insertion_substeps[n]
            if circuit.connection != "delta" or kwargs["insertion_resistance_ohm"][n] > 0.0:
                # the delta batch takes the coupled kernel (a case has a resistor in); alone,
                # a case without one takes the independent kernel, equal to ~1e-12, not bitwise
                np.testing.assert_array_equal(batch.line_current_a[n], one.line_current_a[0])
            else:
                np.testing.assert_allclose(
                    batch.line_current_a[n], one.line_current_a[0], rtol=0.0,
                    atol=1e-9 * np.max(np.abs(one.line_current_a)),
                )  # fmt: skip


def test_a_large_resistor_takes_sub_steps_only_while_it_is_in() -> None:
    # The plan is the circuit's own (128 steps per cycle) and the split is per case: a resistor
    # whose inserted time constant (L_air + L_s)/(R + R_ins) already spans four steps takes none
    # (m = 1); a large one takes m = ceil(4/(f*tau_ins)/128), the fewest sub-steps that keep each
    # at or below a quarter of it. Bypassed at closing (t_ins = 0), or absent, no split.
    circuit = _single_phase_unit()
    l_loop = circuit.air_core_inductance_h + circuit.source_inductance_h
    r_loop = circuit.winding_resistance_ohm + 2.0 * circuit.source_resistance_ohm
    r_ins = np.array([0.0, 1.0, 3000.0, 3000.0, 30000.0])
    t_ins = np.array([0.0, 0.02, 0.02, 0.0, 0.02])
    sim = energize.simulate(
        circuit, 0.0, 0.6, duration_s=2.0 / F_HZ, insertion_resistance_ohm=r_ins,
        insertion_time_s=t_ins,
    )  # fmt: skip
    assert sim.steps_per_cycle == SPC
    expected = [
        max(1, math.ceil(4.0 * (r_loop + r) / (F_HZ * l_loop) / SPC)) if t > 0.0 else 1
        for r, t in zip(r_ins, t_ins, strict=True)
    ]
    np.testing.assert_array_equal(sim.insertion_substeps, expected)
    assert expected[1] == 1
    assert 1 < expected[2] < expected[4]


def test_the_work_limit_counts_the_sub_steps() -> None:
    # max_steps bounds cases x windings x steps, a step split into m sub-steps while the
    # resistor is in counting m: one case, 3 windings, 3 cycles of 128 steps, the resistor in
    # for the first of them
    wye = _demo_unit("wye_grounded", 480.0, "inner")
    x_loop = OMEGA * (wye.air_core_inductance_h + wye.source_inductance_h)
    kwargs: dict[str, Any] = {
        "duration_s": 3.0 / F_HZ, "insertion_resistance_ohm": 50.0 * x_loop,
        "insertion_time_s": 1.0 / F_HZ,
    }  # fmt: skip
    sim = energize.simulate(wye, 0.0, 0.5, **kwargs)
    m = int(sim.insertion_substeps[0])
    assert m > 1
    work = 3 * (3 * SPC + (m - 1) * SPC)
    energize.simulate(wye, 0.0, 0.5, max_steps=work, **kwargs)
    with pytest.raises(LimitError) as info:
        energize.simulate(wye, 0.0, 0.5, max_steps=work - 1, **kwargs)
    assert info.value.value == work


@pytest.mark.parametrize("ramp", [False, True], ids=["full-voltage", "ramp"])
def test_below_the_knee_a_delta_behind_a_resistor_is_two_modal_rl_transients(ramp: bool) -> None:
    # Limiting case: a delta on an ideal source (L_s = R_s = 0) with a pre-insertion resistor,
    # its knee at 4 pu so that every winding stays linear, L_m dc/dt = g e_LL - R_w c - R_ins M c
    # with M = [[2,-1,-1],[-1,2,-1],[-1,-1,2]] (the coupled kernel while the resistor is in).
    # M's eigenvalues are 0 (the circulating current c_0 = mean(c)) and 3 (the rest, driven by
    # g e_LL, whose sum is zero), so
    #   c_0 decays as exp(-R_w t/L_m) throughout, and
    #   c - c_0 is, per winding, the RL transient of _rl_closed_form with R_w + 3 R_ins until
    #   the bypass and R_w after, on its line-to-line EMF (phase alpha + 30 deg, -120, +120).
    # R_ins = 150 x the saturated reactance makes the inserted loop L_air/(R_w + 3 R_ins) need
    # sub-steps, which this checks on the coupled kernel (with the ramp, g rising from 0.3
    # across the bypass, at each sub-step's own stages). Tolerance 1e-6 of the peak as for the
    # single-phase case above.
    base = _demo_unit("delta", 13.8e3, "outer")
    l_m = base.magnetizing_inductance_h
    lam_n = base.nominal_flux_wb
    curve = magnetizing.two_slope(l_m, 4.0 * lam_n, base.air_core_inductance_h)
    circuit = dataclasses.replace(base, curve=curve)
    r_w = circuit.winding_resistance_ohm
    r_ins = 150.0 * OMEGA * circuit.air_core_inductance_h
    residual = np.array([0.7, -0.2, -0.5])
    alpha = 20.0
    sim = energize.simulate(
        circuit, alpha, residual, duration_s=4.0 / F_HZ, insertion_resistance_ohm=r_ins,
        insertion_time_s=1.3 / F_HZ, **(RAMP_ACROSS_BYPASS if ramp else {}),
    )  # fmt: skip
    assert circuit.source_inductance_h == circuit.source_resistance_ohm == 0.0
    assert sim.insertion_substeps[0] > 1
    t_b = float(sim.insertion_time_s[0])
    t_hold, t_end = sim.voltage_ramp_s[0] if ramp else (0.0, 0.0)
    if ramp:
        assert t_hold < t_b < t_end
    t = sim.time_s
    c_init = residual * lam_n / l_m
    c0 = c_init.mean() * np.exp(-r_w * t / l_m)
    diff = _rl_closed_form(
        t, l_m, math.sqrt(2.0) * circuit.line_voltage_v,
        np.radians(alpha + 30.0 + np.array([0.0, -120.0, 120.0])), c_init - c_init.mean(),
        _pieces(r_w + 3.0 * r_ins, r_w, t_b, 0.3 if ramp else 1.0, t_hold, t_end),
    )  # fmt: skip
    expected = c0[None, :] + diff
    got = sim.winding_current_a[0]
    assert np.max(np.abs(got - expected)) < 1e-6 * np.max(np.abs(expected))


def test_mitigation_is_reported_with_its_rounding() -> None:
    circuit = _single_phase_unit()
    sim = energize.simulate(
        circuit, 0.0, 0.5, duration_s=2.0 / F_HZ, insertion_resistance_ohm=50.0,
        insertion_time_s=0.0123, voltage_start_pu=0.5, voltage_hold_s=0.0041,
        voltage_rise_s=0.0077,
    )  # fmt: skip
    h = 1.0 / (F_HZ * sim.steps_per_cycle)
    assert sim.insertion_time_s.shape == (1,)
    assert sim.voltage_ramp_s.shape == (1, 2)
    for used, asked in ((sim.insertion_time_s[0], 0.0123), (sim.voltage_ramp_s[0, 0], 0.0041),
                        (sim.voltage_ramp_s[0, 1], 0.0041 + 0.0077)):  # fmt: skip
        assert abs(used - asked) <= 0.5 * h + 1e-15
    assert any("pre-insertion resistor" in a and "rounded" in a for a in sim.approximations)
    assert any("reduced-voltage source" in a and "rounded" in a for a in sim.approximations)
    default = energize.simulate(circuit, 0.0, 0.5, duration_s=2.0 / F_HZ)
    assert not any("pre-insertion" in a or "reduced-voltage" in a for a in default.approximations)


def test_instants_far_beyond_the_record_neither_overflow_nor_hang() -> None:
    # a bypass or a hold after the record keeps the resistor or the reduced voltage for all of
    # it, however far after (the step index is clipped, the slope of a rise kept)
    circuit = _single_phase_unit()
    duration = 2.0 / F_HZ
    base = {"duration_s": duration, "insertion_resistance_ohm": 50.0}
    far = energize.simulate(circuit, 0.0, 0.5, insertion_time_s=1e300, **base)
    near = energize.simulate(circuit, 0.0, 0.5, insertion_time_s=2.0 * duration, **base)
    np.testing.assert_array_equal(far.line_current_a, near.line_current_a)
    held = {"duration_s": duration, "voltage_start_pu": 0.4}
    far = energize.simulate(circuit, 0.0, 0.5, voltage_hold_s=1e300, voltage_rise_s=1e300, **held)
    near = energize.simulate(circuit, 0.0, 0.5, voltage_hold_s=2.0 * duration, **held)
    np.testing.assert_array_equal(far.line_current_a, near.line_current_a)
    # a rise far longer than the record: g stays at start to within 1e-300
    slow = energize.simulate(circuit, 0.0, 0.5, voltage_rise_s=1e300, **held)
    np.testing.assert_array_equal(slow.line_current_a, near.line_current_a)


def test_a_resistor_too_large_to_integrate_is_named() -> None:
    # 1e6 ohm in the loop of a 480 V winding (L_air ~ 0.1 mH) is a time constant of ~1e-10 s:
    # beyond MAX_STEPS_PER_CYCLE, so refused, naming the resistor and the largest it allows;
    # 1e300 ohm (and the products it overflows to) likewise, without a warning
    wye = _demo_unit("wye_grounded", 480.0, "inner")
    for r_ins in (1e6, 1e300, 1.7e308):
        with pytest.raises(ParameterError) as info:
            energize.simulate(
                wye, 0.0, 0.5, duration_s=0.05, insertion_resistance_ohm=r_ins,
                insertion_time_s=0.01,
            )  # fmt: skip
        assert info.value.parameter == "insertion_resistance_ohm"
        assert info.value.value == r_ins
    limit = float(str(info.value.allowed).split()[2])
    # just below the limit: the step stays the circuit's own, split into as many sub-steps as
    # MAX_STEPS_PER_CYCLE allows while the resistor is in; just above, refused
    ok = energize.simulate(
        wye, 0.0, 0.5, duration_s=0.05, insertion_resistance_ohm=0.99 * limit,
        insertion_time_s=0.01,
    )  # fmt: skip
    assert ok.steps_per_cycle == SPC
    assert 1 < ok.insertion_substeps[0] * ok.steps_per_cycle <= solver.MAX_STEPS_PER_CYCLE
    with pytest.raises(ParameterError) as info:
        energize.simulate(
            wye, 0.0, 0.5, duration_s=0.05, insertion_resistance_ohm=1.01 * limit,
            insertion_time_s=0.01,
        )  # fmt: skip
    assert info.value.parameter == "insertion_resistance_ohm"


# ------------------------------------------------------------------ shapes and validation


def test_simulation_shapes_and_time_axis() -> None:
    circuit = _demo_unit("wye_grounded", 480.0, "inner")
    sim = energize.simulate(circuit, [0.0, 90.0], 0.5, duration_s=2.0 / F_HZ, samples_per_cycle=32)
    assert sim.line_current_a.shape == (2, 3, 2 * 32 + 1)
    assert sim.winding_current_a.shape == (2, 3, 2 * 32 + 1)
    np.testing.assert_allclose(np.diff(sim.time_s), 1.0 / (F_HZ * 32), rtol=1e-12)
    assert sim.steps_per_cycle >= solver.MIN_STEPS_PER_CYCLE
    assert any("independent" in a for a in sim.approximations)


@pytest.mark.parametrize(
    ("kwargs", "parameter"),
    [
        ({"residual_flux_pu": 6.0}, "residual_flux_pu"),
        ({"residual_flux_pu": math.nan}, "residual_flux_pu"),
        ({"closing_angle_deg": math.inf}, "closing_angle_deg"),
        ({"pole_delay_s": -1e-3}, "pole_delay_s"),
        ({"pole_delay_s": 1.0}, "pole_delay_s"),  # after the end of the simulation
        ({"extra_resistance_ohm": -1.0}, "extra_resistance_ohm"),
        ({"insertion_resistance_ohm": -1.0}, "insertion_resistance_ohm"),
        ({"insertion_resistance_ohm": math.nan}, "insertion_resistance_ohm"),
        (
            {"closing_angle_deg": [0.0, 90.0, 180.0], "insertion_resistance_ohm": [1.0, 2.0]},
            "insertion_resistance_ohm",
        ),
        ({"insertion_time_s": -1e-3}, "insertion_time_s"),
        ({"insertion_time_s": math.inf}, "insertion_time_s"),
        ({"voltage_start_pu": 1.01}, "voltage_start_pu"),
        ({"voltage_start_pu": -0.1}, "voltage_start_pu"),
        ({"voltage_start_pu": math.nan}, "voltage_start_pu"),
        ({"voltage_hold_s": -1e-3}, "voltage_hold_s"),
        ({"voltage_rise_s": -1e-3}, "voltage_rise_s"),
        ({"voltage_rise_s": math.inf}, "voltage_rise_s"),
        ({"voltage_hold_s": [[0.0, 0.1]]}, "voltage_hold_s"),
        ({"samples_per_cycle": 3}, "samples_per_cycle"),
        ({"duration_s": 0.0}, "duration_s"),
    ],
)
def test_invalid_simulation_inputs_name_the_parameter(kwargs: dict, parameter: str) -> None:
    args = {
        "closing_angle_deg": 0.0,
        "residual_flux_pu": 0.5,
        "pole_delay_s": 0.0,
        "duration_s": 0.05,
        "samples_per_cycle": 64,
    }
    args.update(kwargs)
    with pytest.raises(ParameterError) as info:
        energize.simulate(_single_phase_unit(), **args)
    assert info.value.parameter == parameter


def test_mixed_connections_and_work_limit_are_refused() -> None:
    wye = _demo_unit("wye_grounded", 480.0, "inner")
    delta = _demo_unit("delta", 13.8e3, "outer")
    with pytest.raises(ParameterError) as info:
        energize.simulate([wye, delta], 0.0, 0.0, duration_s=0.05)
    assert info.value.parameter == "circuits"
    with pytest.raises(LimitError):
        energize.simulate(wye, np.zeros(10), 0.0, duration_s=1.0, max_steps=1000)
