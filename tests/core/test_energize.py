"""Tests of core.energize: analytic limiting cases, connection identities and properties.

The comparison with scipy's integrators is in tests/references/test_solver_vs_scipy.py.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from core import analytic, energize, magnetizing, transformer, waveform
from core.errors import LimitError, ParameterError

F_HZ = 60.0
OMEGA = 2.0 * math.pi * F_HZ
V_RMS = 7967.4  # a 13.8 kV wye winding [V]
LAMBDA_N = math.sqrt(2.0) * V_RMS / OMEGA
L_AIR = 20.0 / OMEGA  # 20 ohm saturated reactance [H]
L_M = 600.0 * L_AIR  # [H]
SPC = 128


def _lossless(knee_pu: float) -> transformer.EquivalentCircuit:
    """R = 0, L_s = 0, two-slope curve with the knee at knee_pu * lambda_N."""
    curve = magnetizing.two_slope(L_M, knee_pu * LAMBDA_N, L_AIR)
    return transformer.circuit_from_si(V_RMS, F_HZ, 0.0, 0.0, curve)


def _first_cycle_peak(sim: energize.Simulation) -> float:
    return float(waveform.cycle_peaks(sim.line_current_a, sim.samples_per_cycle)[0, :, 0].max())


def _single_phase_unit() -> transformer.EquivalentCircuit:
    # a 167 kVA single-phase unit, 13.8 kV/sqrt(3) winding, defaults otherwise
    npl = transformer.Nameplate(167e3, 1, F_HZ, V_RMS, no_load_current_percent=1.0)
    return transformer.equivalent_circuit(npl)


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
    wang = float(analytic.first_peak_wang(V_RMS, F_HZ, L_AIR, 0.0, residual, knee))
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
    circuit = transformer.circuit_from_si(V_RMS, F_HZ, r, ls, curve)
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


def _demo_unit(connection: str, voltage: float, position: str) -> transformer.EquivalentCircuit:
    npl = transformer.Nameplate(
        2500e3,
        3,
        F_HZ,
        voltage,
        connection=connection,
        position=position,
        no_load_current_percent=0.8,
    )
    return transformer.equivalent_circuit(npl)


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


def test_delta_winding_waits_for_both_of_its_poles() -> None:
    # winding ab is energised by poles a and b: with b late, ab carries no current until then
    circuit = _demo_unit("delta", 13.8e3, "outer")
    sim = energize.simulate(circuit, 0.0, 0.0, (0.0, 5e-3, 0.0), duration_s=2.0 / F_HZ)
    t_b = sim.pole_delay_s[0, 1]
    early = sim.time_s < t_b - 1e-12
    ab, bc, ca = sim.winding_current_a[0]
    assert np.all(ab[early] == 0.0)
    assert np.all(bc[early] == 0.0)
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
        single = transformer.circuit_from_si(
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
        single = transformer.circuit_from_si(
            circuit.winding_voltage_v, F_HZ, circuit.winding_resistance_ohm, 0.0, circuit.curve
        )
        one = energize.simulate(single, 45.0 + shift, residual[k], duration_s=3.0 / F_HZ)
        np.testing.assert_allclose(
            sim.line_current_a[0, k], one.line_current_a[0, 0], rtol=1e-9, atol=1e-9
        )


@pytest.mark.parametrize(
    ("connection", "r_source_ohm"),
    [("delta", 0.1), ("delta", 0.0), ("wye", 0.1)],
    ids=["delta-coupled-kernel", "delta-ideal-source-kernel", "wye"],
)
def test_a_vanishing_source_inductance_is_the_limit_of_a_small_one(
    connection: str, r_source_ohm: float
) -> None:
    # Limiting case L_s -> 0: the loop-flux state psi = lambda + L_s*M*c (delta; wye:
    # lambda_k + L_s*i_k) becomes lambda and the flux solve becomes the identity, so
    # L_s = 1e-12 H must give what L_s = 0 gives. For the delta with R_s = 0 the L_s = 0 case
    # takes the independent-winding kernel (each winding on its line-to-line voltage) and the
    # 1e-12 H case the coupled one, so this also ties the two kernels together. The physical
    # difference is ~L_s/L_air ~ 1e-11 of the current and the flux solve stops at 1e-12 pu;
    # measured 2.8e-11 of the peak at most, so 1e-9 of the peak leaves ample margin.
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
        for ls in (0.0, 1e-12)
    ]
    exact, tiny = (s.line_current_a for s in sims)
    assert np.max(np.abs(exact)) > 2.0 * circuit.rated_line_current_a  # real inrush
    np.testing.assert_allclose(tiny, exact, rtol=0.0, atol=1e-9 * np.max(np.abs(exact)))


# ------------------------------------------------------------------ properties


def test_a_batch_gives_the_same_as_one_case_at_a_time() -> None:
    # vector-equals-scalar: cases are integrated independently, so bitwise equal
    base = _single_phase_unit()
    circuits = [
        base,
        transformer.circuit_from_si(V_RMS, F_HZ, 1.0, 0.1 * L_AIR, base.curve),
        transformer.circuit_from_si(
            V_RMS,
            F_HZ,
            0.5,
            0.0,
            magnetizing.smooth_knee(L_M, 1.2 * LAMBDA_N, L_AIR, 0.05 * LAMBDA_N),
        ),
        transformer.circuit_from_si(
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
        circuit = transformer.equivalent_circuit(
            transformer.Nameplate(2500e3, 3, F_HZ, voltage, connection=connection),
            transformer.Source("fault_level", fault_va=250e6, x_over_r=12.0),
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


# ------------------------------------------------------------------ shapes and validation


def test_simulation_shapes_and_time_axis() -> None:
    circuit = _demo_unit("wye_grounded", 480.0, "inner")
    sim = energize.simulate(circuit, [0.0, 90.0], 0.5, duration_s=2.0 / F_HZ, samples_per_cycle=32)
    assert sim.line_current_a.shape == (2, 3, 2 * 32 + 1)
    assert sim.winding_current_a.shape == (2, 3, 2 * 32 + 1)
    np.testing.assert_allclose(np.diff(sim.time_s), 1.0 / (F_HZ * 32), rtol=1e-12)
    assert sim.steps_per_cycle >= energize.MIN_STEPS_PER_CYCLE
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
