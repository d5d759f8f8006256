"""Tests of the pole closing instants (``pole_delay_s``) in core.supply.dip, dip_sizing and
dip_study.

References beside each check: the code's own results without the keyword (bit for bit, the
behaviour the poles must not change when they all close at t = 0); the same event seen from a
later command (closing every pole d after t = 0 is closing them at t = 0 with the phase-A angle
advanced by 360*f*d, shifted by d: the equations are time-invariant, and before the poles
close the machine and the bus load sit in the pre-event steady state); and the circuit's
structure (an open winding carries no current; on a utility source each grounded-wye phase is
an independent loop). The comparison with scipy's Radau integrator is in
tests/references/test_generator_references.py.

Demo data as in tests/core/supply/test_sources.py: the "Northgate" 1250 kVA 480 V standby generator
(X''_d 0.15, X'_d 0.25 pu from the demo scenario, service/examples.py; X_d 2.0 pu,
T''_d 0.03 s, T'_d 0.8 s invented demo values) and the 2500 kVA unit's 480 V inner winding.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable
from typing import Any

import numpy as np
import pytest

from core.energization.switching_event import switching_event
from core.errors import ParameterError
from core.supply import dip, dip_limits, dip_study, generator_sizing, sources
from core.transformer import circuit_model

F_HZ = 60.0
T = 1.0 / F_HZ
V_LL = 480.0
S_GEN = 1.25e6
RESIDUAL = (0.8, -0.4, -0.4)
LOAD = sources.BusLoad(400e3, 300e3)
SPC = 128  # the default steps per cycle, which these circuits do not raise
H = T / SPC


def _northgate() -> sources.Generator:
    # X''_d, X'_d from the demo scenario; X_d, T''_d, T'_d invented demo values
    return sources.Generator(S_GEN, V_LL, F_HZ, 0.15, 0.25, 2.0, 0.03, t_d1_s=0.8)


def _unit(connection: str = "wye_grounded") -> circuit_model.EquivalentCircuit:
    return circuit_model.equivalent_circuit(
        circuit_model.Nameplate(
            rating_va=2.5e6,
            phases=3,
            frequency_hz=60,
            line_voltage_v=480,
            connection=connection,
            position="inner",
            impedance_percent=5.75,
            x_over_r=7,
            no_load_current_percent=0.8,
        )
    )


# ------------------------------------------------------------ all at t = 0: the code unchanged


@pytest.mark.parametrize("connection", ["wye_grounded", "wye", "delta"])
@pytest.mark.parametrize("zero", [0.0, (0.0, 0.0, 0.0), np.zeros(3)])
def test_poles_at_zero_are_bit_identical(
    connection: str, zero: Any, assert_identical: Callable[[Any, Any], None]
) -> None:
    # Reference: the same study without the keyword (the behaviour before it was added), with a
    # bus load and a pre-insertion resistor so that every path of the kernel runs.
    kw: dict[str, Any] = {
        "bus_load": LOAD,
        "duration_s": 0.2,
        "waveform_points": 200,
    }
    ins: dict[str, Any] = {"insertion_resistance_ohm": 0.3, "insertion_time_s": 0.01}
    plain = dip.energize_from_source(
        _northgate(),
        _unit(connection),
        switching_event(_unit(connection), 20.0, RESIDUAL, **ins),
        **kw,
    )
    zeros = dip.energize_from_source(
        _northgate(),
        _unit(connection),
        switching_event(_unit(connection), 20.0, RESIDUAL, pole_delay_s=zero, **ins),
        **kw,
    )
    assert_identical(plain, zeros)
    assert any("all poles close together at t = 0" in a for a in plain.approximations)
    assert np.array_equal(plain.pole_delay_s, np.zeros(3))


def test_sweep_sizing_and_study_with_poles_at_zero_are_bit_identical(
    assert_identical: Callable[[Any, Any], None],
) -> None:
    # Reference: the same calls without the keyword.
    gen, circ = _northgate(), _unit("delta")
    ratings = [1e6, 3e6]
    plain = generator_sizing.dip_sweep(
        gen, circ, ratings, switching_event(circ, 0.0, RESIDUAL), duration_s=0.2
    )
    zeros = generator_sizing.dip_sweep(
        gen, circ, ratings, switching_event(circ, 0.0, RESIDUAL, pole_delay_s=0.0), duration_s=0.2
    )
    assert np.array_equal(plain, zeros)
    kw: dict[str, Any] = {"size_for": dip_limits.iso_8528_5_class("G2"), "duration_s": 0.5}
    a = dip_study.dip_study(gen, circ, switching_event(circ, 0.0, RESIDUAL), **kw)
    b = dip_study.dip_study(
        gen, circ, switching_event(circ, 0.0, RESIDUAL, pole_delay_s=(0, 0, 0)), **kw
    )
    assert_identical(a, b)


def test_delays_under_half_a_step_round_to_together(
    assert_identical: Callable[[Any, Any], None],
) -> None:
    # Reference: the study without the keyword. Instants under half a step (0.065 ms) round to
    # the first step: every number is unchanged; only the approximations say so.
    kw: dict[str, Any] = {"bus_load": LOAD, "duration_s": 0.2}
    plain = dip.energize_from_source(
        _northgate(), _unit(), switching_event(_unit(), 0.0, RESIDUAL), **kw
    )
    tiny = dip.energize_from_source(
        _northgate(),
        _unit(),
        switching_event(_unit(), 0.0, RESIDUAL, pole_delay_s=(0.0, 0.2 * H, 0.49 * H)),
        **kw,
    )
    assert not any("all poles close together" in a for a in tiny.approximations)
    assert any("poles close at a 0 ms, b 0 ms, c 0 ms" in a for a in tiny.approximations)
    assert_identical(plain, dataclasses.replace(tiny, approximations=plain.approximations))


# ------------------------------------------------------------ the same event, commanded earlier


def _study(connection: str, alpha: float, delay: float, load: bool, **kw: Any) -> dip.DipStudy:
    return dip.energize_from_source(
        _northgate(),
        _unit(connection),
        switching_event(_unit(connection), alpha, RESIDUAL, pole_delay_s=delay),
        bus_load=LOAD if load else None,
        **kw,
    )


@pytest.mark.parametrize("connection", ["wye_grounded", "delta"])
@pytest.mark.parametrize("load", [True, False])
def test_equal_delays_of_whole_cycles_shift_the_cycles(connection: str, load: bool) -> None:
    # Reference: the default study (all poles at t = 0). Every pole d = 2 cycles later is the
    # same event (the angle advances by 360*f*d = 720 deg, i.e. not at all), two cycles later:
    # cycles 2.. reproduce cycles 0..; before them the bus sits at its pre-event voltage and
    # the transformer carries nothing. Measured when written with the bus load: 1.3e-9 pu on
    # the voltages, 1.3e-9 of the first peak on the currents, the bus 3.0e-9 pu off its
    # pre-event voltage (the load loop integrated for two cycles by the fixed step, whose error
    # per cycle is of order (omega*h)^5); without it 7e-15. Tolerance 1e-7.
    m, n = 2, 20
    base = _study(connection, 10.0, 0.0, load, duration_s=n * T)
    late = _study(connection, 10.0, m * T, load, duration_s=(n + m) * T)
    assert np.array_equal(late.pole_delay_s, np.full(3, m * T))
    peak = base.inrush_peak_a
    for name in ("voltage_rms_pu", "voltage_line_rms_pu", "emf_pu", "field_voltage_pu"):
        a, b = getattr(base, name), getattr(late, name)
        np.testing.assert_allclose(b[..., m:], a, rtol=0.0, atol=1e-7, err_msg=name)
    np.testing.assert_allclose(
        late.cycle_peak_current_a[:, m:], base.cycle_peak_current_a, rtol=0.0, atol=1e-7 * peak
    )
    np.testing.assert_allclose(late.voltage_rms_pu[:, :m], 1.0, rtol=0.0, atol=1e-7)
    assert np.all(late.cycle_peak_current_a[:, :m] == 0.0)
    assert late.dip_percent == pytest.approx(base.dip_percent, abs=1e-5)
    assert late.min_voltage_time_s == pytest.approx(base.min_voltage_time_s + m * T, abs=1e-12)
    # the hand method closes all poles together at t = 0 whatever the poles do
    assert late.hand_method_load_va == base.hand_method_load_va


@pytest.mark.parametrize("connection", ["wye_grounded", "delta"])
def test_equal_delays_shift_the_waveforms_and_advance_the_angle(connection: str) -> None:
    # Reference: the default study with the closing angle advanced by 360*f*d. Every pole
    # d = 37 steps (4.82 ms, 104.1 deg, on the step grid) after the command with angle alpha is
    # that event, d later: every step's terminal voltage and transformer current (one sample per
    # step) reproduce it shifted by 37 samples. Measured when written: 4.6e-9 of the voltage
    # crest, 4.4e-9 of the first peak (the bus load's loop, as above); tolerance 1e-7.
    steps, n, alpha = 37, 6, 25.0
    d = steps * H
    kw: dict[str, Any] = {"duration_s": n * T, "waveform_points": n * SPC + 1}
    base = _study(connection, alpha + 360.0 * F_HZ * d, 0.0, True, **kw)
    kw["waveform_points"] = (n + 1) * SPC + 1
    late = _study(connection, alpha, d, True, **{**kw, "duration_s": (n + 1) * T})
    assert late.waveform_time_s[1] == pytest.approx(H, rel=1e-12)  # one sample per step
    assert late.pole_delay_s == pytest.approx(np.full(3, d), rel=1e-12)
    k = base.waveform_time_s.size
    crest = math.sqrt(2.0) * V_LL / math.sqrt(3.0)
    v_err = np.abs(late.waveform_voltage_v[:, steps : steps + k] - base.waveform_voltage_v)
    i_err = np.abs(late.waveform_current_a[:, steps : steps + k] - base.waveform_current_a)
    assert float(v_err.max()) < 1e-7 * crest
    assert float(i_err.max()) < 1e-7 * base.inrush_peak_a
    assert np.all(late.waveform_current_a[:, :steps] == 0.0)


# ------------------------------------------------------------ the circuit's structure


def test_grounded_wye_phases_on_a_utility_source_close_independently() -> None:
    # Reference: on a utility source (a constant EMF behind its impedance, no machine dynamics)
    # without a bus load each grounded-wye phase is its own loop, so phase k closed at t_k
    # behaves as phase k of a simultaneous closing at the angle alpha + 360*f*t_k, shifted by
    # t_k; before t_k it carries no current (its flux kept, as the later match shows).
    # Measured when written: 4e-15 of the first peak (rounding: the angle enters through
    # omega*t at different t); tolerance 1e-12.
    util = sources.UtilitySource(20e6, 8.0, V_LL, F_HZ)
    circ = _unit()
    # b and c close near the voltage zero that drives their residual -0.4 pu deeper (b at
    # 107 steps, 300.9 deg of phase A, c at 21 steps, 59.1 deg): both saturate
    delays = np.array([0.0, 107.0, 21.0]) * H
    n = 6
    kw: dict[str, Any] = {"duration_s": n * T, "waveform_points": n * SPC + 1}
    staggered = dip.energize_from_source(
        util, circ, switching_event(circ, 0.0, RESIDUAL, pole_delay_s=delays), **kw
    )
    assert np.array_equal(staggered.pole_delay_s, delays)
    for k in (1, 2):
        s = round(delays[k] / H)
        alone = dip.energize_from_source(
            util, circ, switching_event(circ, 360.0 * F_HZ * delays[k], RESIDUAL), **kw
        )
        assert np.all(staggered.waveform_current_a[k, :s] == 0.0)
        got = staggered.waveform_current_a[k, s:]
        want = alone.waveform_current_a[k, : got.size]
        peak = float(np.abs(want).max())
        assert peak > 3.0 * circ.rated_line_current_a  # the phase saturates
        assert float(np.abs(got - want).max()) < 1e-12 * peak, k


def test_delta_windings_on_the_open_terminal_carry_one_current_until_it_closes() -> None:
    # Reference: i_a = c_ab - c_ca, i_b = c_bc - c_ab, i_c = c_ca - c_bc. With pole c late,
    # windings bc and ca are in series between terminals b and a (Kirchhoff's current law at
    # the open terminal c): c_bc - c_ca is the constant held from the second closing (the
    # magnetising current of their residual fluxes), so line c carries exactly nothing and
    # i_a + i_b is that constant. Afterwards all three lines carry current.
    t_c = 3 * T
    study = dip.energize_from_source(
        _northgate(),
        _unit("delta"),
        switching_event(_unit("delta"), 0.0, RESIDUAL, pole_delay_s=(0.0, 0.0, t_c)),
        bus_load=LOAD,
        duration_s=6 * T,
        waveform_points=6 * SPC + 1,
    )
    s = round(t_c / H)
    i = study.waveform_current_a
    assert np.all(i[2, :s] == 0.0)
    peak = float(np.abs(i[0, :s]).max())
    assert peak > 1.0 * _unit("delta").rated_line_current_a
    assert np.ptp(i[0, 1:s] + i[1, 1:s]) < 1e-9 * peak
    assert np.all(np.abs(i[:, s + SPC // 4 :]).max(axis=1) > 0.1)
    texts = " ".join(study.approximations)
    assert "the second pole" in texts
    assert "in series until the third closes" in texts
    assert "all poles close together" not in texts


def test_pre_insertion_resistor_bypassed_before_the_poles_close_does_nothing() -> None:
    # Reference: the same study without the resistor. The resistor stays timed from t = 0: if
    # it is bypassed (at 1 cycle) before the poles close (at 2 cycles) no current ever flows
    # through it, it absorbs exactly nothing and the result is unchanged; only the bus-load
    # loop is integrated in sub-steps while it is in, which changes its fixed-step error
    # (measured 3.0e-9 pu, 4.3e-10 of the first peak; tolerance 1e-7).
    kw: dict[str, Any] = {
        "duration_s": 12 * T,
    }
    without = _study("wye_grounded", 0.0, 2 * T, True, duration_s=12 * T)
    bypassed = dip.energize_from_source(
        _northgate(),
        _unit(),
        switching_event(
            _unit(),
            0.0,
            RESIDUAL,
            insertion_resistance_ohm=5.0,
            insertion_time_s=T,
            pole_delay_s=2 * T,
        ),
        bus_load=LOAD,
        **kw,
    )
    assert bypassed.insertion_energy_j == 0.0
    np.testing.assert_allclose(bypassed.voltage_rms_pu, without.voltage_rms_pu, atol=1e-7)
    np.testing.assert_allclose(
        bypassed.cycle_peak_current_a,
        without.cycle_peak_current_a,
        atol=1e-7 * without.inrush_peak_a,
    )


def test_staggered_poles_are_reported_and_used_everywhere(
    assert_identical: Callable[[Any, Any], None],
) -> None:
    # Reference: energize_from_source with the same poles. The sweep at one rating and the
    # study pass the poles on (vector equals scalar); the approximations name the instants
    # used and no longer say the poles close together.
    gen, circ = _northgate(), _unit("delta")
    poles = (0.0, 2.1e-3, 4.7e-3)
    single = dip.energize_from_source(
        gen, circ, switching_event(circ, 0.0, RESIDUAL, pole_delay_s=poles), duration_s=0.3
    )
    swept = generator_sizing.dip_sweep(
        gen, circ, [S_GEN], switching_event(circ, 0.0, RESIDUAL, pole_delay_s=poles), duration_s=0.3
    )
    assert swept[0] == pytest.approx(single.dip_percent, rel=1e-12)
    report = dip_study.dip_study(
        gen,
        circ,
        switching_event(circ, 0.0, RESIDUAL, pole_delay_s=poles),
        duration_s=0.3,
        size_for=dip_limits.iso_8528_5_class("G2"),
    )
    assert_identical(report.study, single)
    assert report.sizing is not None
    assert report.sizing.rating_va is not None
    sized = generator_sizing.dip_sweep(
        gen,
        circ,
        [report.sizing.rating_va],
        switching_event(circ, 0.0, RESIDUAL, pole_delay_s=poles),
    )  # the sizing's own 2 s dip simulation
    assert report.sizing.dip_percent == pytest.approx(float(sized[0]), rel=1e-12)
    texts = " ".join(single.approximations)
    assert "all poles close together" not in texts
    assert "poles close at a 0 ms, b 2.083 ms, c 4.688 ms after t = 0" in texts
    assert "rounded to the nearest internal step" in texts
    np.testing.assert_allclose(single.pole_delay_s, np.array([0.0, 16.0, 36.0]) * H, rtol=1e-12)


# ------------------------------------------------------------ validation


@pytest.mark.parametrize(
    "bad",
    [-1e-3, math.nan, math.inf, (0.0, 1e-3), (0.0, -1e-3, 0.0), 0.2, 0.25, "soon", [[0.0] * 3]],
)
def test_invalid_pole_delays_name_the_parameter(bad: Any) -> None:
    # Each in [0, duration_s): 0.2 s is the end of a 0.2 s simulation, not before it.
    gen, circ = _northgate(), _unit()
    calls: list[Callable[[], object]] = [
        lambda: dip.energize_from_source(
            gen, circ, switching_event(circ, 0.0, RESIDUAL, pole_delay_s=bad), duration_s=0.2
        ),
        lambda: generator_sizing.dip_sweep(
            gen,
            circ,
            [S_GEN],
            switching_event(circ, 0.0, RESIDUAL, pole_delay_s=bad),
            duration_s=0.2,
        ),
        lambda: generator_sizing.smallest_generator(
            gen,
            circ,
            switching_event(circ, 0.0, RESIDUAL, pole_delay_s=bad),
            "G2",
            dip_duration_s=0.2,
        ),
        lambda: dip_study.dip_study(
            gen, circ, switching_event(circ, 0.0, RESIDUAL, pole_delay_s=bad), duration_s=0.2
        ),
    ]
    for call in calls:
        with pytest.raises(ParameterError) as err:
            call()
        assert err.value.parameter == "pole_delay_s"
        assert err.value.allowed


def test_pole_closing_after_the_whole_cycles_simulated_is_refused() -> None:
    # 0.11 s at 60 Hz simulates 6 whole cycles, 0.1 s: a pole at 0.105 s is before the
    # requested duration but after the simulated time; one within half a step of its end
    # rounds onto it. Both are refused naming the parameter and the simulated time.
    gen, circ = _northgate(), _unit()
    for duration, delay in ((0.11, 0.105), (0.1, 0.1 - 0.4 * H)):
        with pytest.raises(ParameterError) as err:
            dip.energize_from_source(
                gen,
                circ,
                switching_event(circ, 0.0, RESIDUAL, pole_delay_s=(0.0, 0.0, delay)),
                duration_s=duration,
            )
        assert err.value.parameter == "pole_delay_s"
        assert "0.1 s" in err.value.allowed
