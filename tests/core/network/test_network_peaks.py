"""core.network.peaks: the network's exact peak reading.

- A lone unit on a Thevenin source: the network reading equals core.energization.peaks' reading
  of the same event within 1e-9 (the two solvers integrate the same loop fluxes, and both
  readings re-integrate the same windows at the same steps; a consistency check between two of
  our solvers, whose independent references are tests/references/test_network_vs_scipy.py and
  tests/references/test_piecewise_reference.py).
- A restart from a recorded sample continues the recorded trajectory (the state of the network
  at a sample is what the restart takes): a machine source with its regulator, a bus load, a
  unit in service, staggered poles and a pre-insertion resistor, restarted at the same step.
- The exact peak against a dense record of the same network (the peak as the supremum of |i|,
  read sample by sample from a run at 16384 samples a cycle), within the accuracy of the
  128-a-cycle run whose states the reading starts from, and never below that run's samples.
"""

from __future__ import annotations

import numpy as np
import pytest

from core import transformer
from core.energization import energize
from core.energization import peaks as unit_peaks
from core.network import Breaker, BusLoad, Machine, Regulator, Source, Unit, simulate_network
from core.network import peaks as network_peaks
from core.network.solver import simulate_windows

F = 50.0
V_LL = 11_000.0
CURVES = {
    "two_slope": {},
    "table": {
        "open_circuit_voltage_percent": (80.0, 100.0, 110.0),
        "open_circuit_current_percent": (0.4, 1.0, 2.5),
    },
    "smooth": {"curve": "smooth", "knee_width_pu": 0.02},
}


def _circuit(connection: str, **extra: object) -> transformer.EquivalentCircuit:
    # 11 kV distribution unit, nameplate defaults of core.transformer (common practice)
    npl = transformer.Nameplate(
        rating_va=1e6,
        phases=3,
        frequency_hz=F,
        line_voltage_v=V_LL,
        connection=connection,
        **extra,  # type: ignore[arg-type]
    )
    return transformer.equivalent_circuit(
        npl, transformer.Source("fault_level", fault_va=30e6, x_over_r=8.0)
    )


CASES = [
    (conn, curve)
    for conn in ("wye_grounded", "delta", "wye")
    for curve in CURVES
    # a grounded wye on the smooth knee: the single-unit solver integrates lambda itself there,
    # 2.8e-4 from this one (core/network/solver.py docstring), so not the same event to 1e-9
    if not (conn == "wye_grounded" and curve == "smooth")
]


@pytest.mark.parametrize(("connection", "curve"), CASES)
def test_lone_unit_reads_as_the_single_unit_solver(connection: str, curve: str) -> None:
    c = _circuit(connection, **CURVES[curve])
    angles = np.array([0.0, 47.0, 90.0])
    res = np.array([[0.8, -0.4, -0.4], [-0.6, 0.0, 0.6], [0.0, 0.0, 0.0]])
    old = energize.simulate(c, angles, res, duration_s=0.1)
    want_first = unit_peaks.first_peaks([c] * 3, angles, res, old).peak_a.max(axis=1)
    want_cycles = unit_peaks.cycle_peaks([c] * 3, angles, res, old).max(axis=1)
    src = Source(V_LL, F, c.source_resistance_ohm, c.source_inductance_h)
    units = [Unit(c, residual_flux_pu=res)]
    run = simulate_network(src, units, closing_angle_deg=angles, duration_s=0.1)
    got = network_peaks.signal_peaks(
        src, units, None, run, [0, network_peaks.SOURCE], np.full(3, 0.1)
    )
    assert got.first_peak_a[:, 0] == pytest.approx(want_first, rel=1e-9)
    assert got.cycle_peaks_a[:, 0] == pytest.approx(want_cycles, rel=1e-9)
    # one unit on the bus: the source current is its line current (Kirchhoff's current law)
    assert got.cycle_peaks_a[:, 1] == pytest.approx(got.cycle_peaks_a[:, 0], rel=1e-9)
    # per line, as the dip reads them
    lines = network_peaks.line_cycle_peaks(src, units, None, run, 0, 5)
    per_line = unit_peaks.cycle_peaks([c] * 3, angles, res, old)
    assert lines == pytest.approx(per_line, rel=1e-9)


def _busy_network() -> tuple[Machine, list[Unit], BusLoad]:
    gen = Machine(
        line_voltage_v=V_LL,
        frequency_hz=F,
        rating_va=5e6,
        x_d2_pu=0.15,
        x_d1_pu=0.25,
        x_d_pu=1.8,
        t_d2o_s=0.03,
        t_d1o_s=4.0,
        armature_resistance_pu=0.005,
        regulator=Regulator(
            gain_pu=200.0,
            time_constant_s=0.05,
            ceiling_pu=5.0,
            floor_pu=-2.0,
            sensing_time_constant_s=0.01,
        ),
    )
    units = [
        Unit(_circuit("wye_grounded"), in_service=True),
        Unit(
            _circuit("delta"),
            breaker=Breaker(
                np.array([20, 33, 43]) / 6400.0,
                insertion_resistance_ohm=40.0,
                bypass_time_s=134 / 6400.0,
            ),
            residual_flux_pu=[0.7, -0.2, -0.5],
        ),
        Unit(_circuit("wye"), breaker=Breaker(70 / 6400.0), residual_flux_pu=[-0.5, 0.6, -0.1]),
    ]
    return gen, units, BusLoad.from_power(V_LL, F, 1e6, 0.5e6)


def test_restart_from_a_sample_continues_the_run() -> None:
    gen, units, load = _busy_network()
    run = simulate_network(gen, units, closing_angle_deg=[10.0, 100.0], duration_s=0.06, load=load)
    assert run.grid is not None
    d = run.grid.decimate
    # restarts before, across and after the closings and the bypass, on the run's own step
    case = np.array([0, 1, 0, 1, 0])
    start = np.array([10, 38, 70, 130, 300])
    span = 40
    rec = simulate_windows(
        gen, units, load, run.grid, case, start * d, 1, span * d,
        run.flux_linkage_wb[case, :, :, start], run.load_current_a[case, :, start],
        run.grid.machine_state_pu[case, :, start],
    )  # fmt: skip
    scale = np.max(np.abs(run.line_current_a))
    for w in range(case.size):
        want = run.line_current_a[case[w], :, :, start[w] : start[w] + span + 1]
        got = rec.line_current_a[w][..., ::d]
        assert np.max(np.abs(got - want)) <= 1e-9 * scale
        v = run.emf_pu[case[w], start[w] : start[w] + span + 1]
        assert rec.machine_state_pu[w, 0, ::d] == pytest.approx(v, rel=1e-10)


def test_exact_peak_against_a_dense_record() -> None:
    gen, units, load = _busy_network()
    angles = [10.0, 100.0]
    run = simulate_network(gen, units, closing_angle_deg=angles, duration_s=0.06, load=load)
    end = np.full(2, 0.06)
    got = network_peaks.signal_peaks(gen, units, load, run, [1, 2, network_peaks.SOURCE], end)
    dense = simulate_network(
        gen, units, closing_angle_deg=angles, duration_s=0.06, load=load,
        samples_per_cycle=16384,
    )  # fmt: skip
    spc = 16384
    n_cyc = got.cycle_peaks_a.shape[-1]
    i_run = {
        sig: np.abs(
            run.source_current_a if sig == network_peaks.SOURCE else run.line_current_a[:, sig]
        )[..., : n_cyc * 128]
        .reshape(2, 3, n_cyc, 128)
        .max(axis=(1, -1))
        for sig in (1, 2, network_peaks.SOURCE)
    }
    for j, sig in enumerate((1, 2, network_peaks.SOURCE)):
        i = dense.source_current_a if sig == network_peaks.SOURCE else dense.line_current_a[:, sig]
        body = np.abs(i[..., : n_cyc * spc]).reshape(2, 3, n_cyc, spc).max(axis=(1, -1))
        exact = got.cycle_peaks_a[:, j]
        # the states the reading starts from are the 128-a-cycle run's, whose own accuracy is
        # a few 1e-4 of a peak with a resistor bypassed (core/network/solver.py docstring);
        # the dense record's sampling error is below (pi/16384)^2/2 = 1.8e-8
        assert exact == pytest.approx(body, rel=6e-4)
        # and never below the samples of the run it reads
        coarse = i_run[sig]
        assert np.all(exact >= coarse)


@pytest.mark.parametrize("connection", ["delta", "wye"])
def test_lines_left_out_cannot_be_the_largest(connection: str) -> None:
    # a weak source (5 MVA) and sharp corners: the largest exact-over-sample gap measured
    # (2.5 %, a delta's two-slope curve); a line is left out below 90 % of the largest line's
    # sample, so the gap must stay well under 10 % for the reading to be the full one
    npl = transformer.Nameplate(
        rating_va=1e6, phases=3, frequency_hz=F, line_voltage_v=V_LL, connection=connection
    )
    c = transformer.equivalent_circuit(
        npl, transformer.Source("fault_level", fault_va=5e6, x_over_r=8.0)
    )
    rng = np.random.default_rng(1)
    res = rng.uniform(-0.8, 0.8, (6, 3))
    angles = rng.uniform(0.0, 360.0, 6)
    src = Source(V_LL, F, c.source_resistance_ohm, c.source_inductance_h)
    units = [Unit(c, residual_flux_pu=res)]
    run = simulate_network(src, units, closing_angle_deg=angles, duration_s=0.2)
    end = np.full(6, 0.2)
    got = network_peaks.signal_peaks(src, units, None, run, [0], end)
    every = network_peaks.line_cycle_peaks(src, units, None, run, 0, 10)
    assert got.cycle_peaks_a[:, 0] == pytest.approx(every.max(axis=1), rel=1e-12)
    samples = np.abs(run.line_current_a[:, 0, :, :1280]).reshape(6, 3, 10, 128).max(axis=-1)
    gap = np.max(every / samples - 1.0)
    assert 0.0 <= gap <= 0.05


def _count_windows(monkeypatch: pytest.MonkeyPatch) -> list[int]:
    """Unit-steps of every window the reading runs (windows x steps), appended per call."""
    windows: list[int] = []
    run_windows = network_peaks.simulate_windows

    def counted(*a: object, **k: object) -> object:
        windows.append(int(np.asarray(a[4]).size) * int(a[7]))  # type: ignore[call-overload]
        return run_windows(*a, **k)  # type: ignore[arg-type]

    monkeypatch.setattr(network_peaks, "simulate_windows", counted)
    return windows


def test_reading_estimate_covers_the_windows_run(monkeypatch: pytest.MonkeyPatch) -> None:
    # the work estimate (core.cost.network_work) counts one window per reading and stage; the
    # windows run, shared per case and start, must not exceed it
    windows = _count_windows(monkeypatch)
    gen, units, load = _busy_network()
    run = simulate_network(gen, units, closing_angle_deg=10.0, duration_s=0.1, load=load)
    assert run.grid is not None
    signals = [0, 1, 2, network_peaks.SOURCE]
    network_peaks.signal_peaks(gen, units, load, run, signals, np.array([0.1]))
    n_cyc = (run.time_s.size - 1) // 128
    estimate = network_peaks.reading_steps(
        3, 4 * (n_cyc + 1), run.time_s.size, run.steps_per_cycle, run.grid.decimate
    )
    assert 3 * sum(windows) <= estimate


def test_units_equal_in_every_input_count_once() -> None:
    # two circuits built apart from one nameplate are equal; any input that differs (residual
    # flux, state, breaker, rating) makes another class
    a, b = _circuit("wye_grounded"), _circuit("wye_grounded")
    assert a is not b
    same = [
        Unit(a, residual_flux_pu=[0.8, -0.4, -0.4]),
        Unit(b, residual_flux_pu=[0.8, -0.4, -0.4]),
    ]
    assert network_peaks.distinct_units(same) == 1
    assert network_peaks.distinct_units([*same, Unit(a, residual_flux_pu=[0.7, -0.4, -0.4])]) == 2
    assert network_peaks.distinct_units([*same, Unit(a, in_service=True)]) == 2
    assert network_peaks.distinct_units([*same, Unit(a, breaker=Breaker([0.0, 0.001, 0.0]))]) == 2
    assert (
        network_peaks.distinct_units([*same, Unit(_circuit("wye_grounded", impedance_percent=6.0))])
        == 2
    )


def test_reading_estimate_with_equal_units_covers_the_windows_run(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    # five units on one source, four equal in every input: their currents are equal at every
    # step, their peaks fall on the same samples and share one window; the estimate counts the
    # readings of the two distinct units (and the source) and must still cover what is run
    windows = _count_windows(monkeypatch)
    src = Source.from_fault_level(V_LL, F, 50e6, 10.0)
    units = [Unit(_circuit("wye_grounded"), residual_flux_pu=[0.8, -0.4, -0.4]) for _ in range(4)]
    units.append(Unit(_circuit("delta"), residual_flux_pu=[-0.5, 0.6, -0.1]))
    assert network_peaks.distinct_units(units) == 2
    run = simulate_network(src, units, closing_angle_deg=10.0, duration_s=0.1)
    assert run.grid is not None
    # the four equal units carry equal currents, bit for bit
    for k in (1, 2, 3):
        assert np.array_equal(run.line_current_a[:, k], run.line_current_a[:, 0])
    signals = [0, 1, 2, 3, 4, network_peaks.SOURCE]
    got = network_peaks.signal_peaks(src, units, None, run, signals, np.array([0.1]))
    for k in (1, 2, 3):
        assert np.array_equal(got.cycle_peaks_a[:, k], got.cycle_peaks_a[:, 0])
    n_cyc = (run.time_s.size - 1) // 128
    estimate = network_peaks.reading_steps(
        5, (2 + 1) * (n_cyc + 1), run.time_s.size, run.steps_per_cycle, run.grid.decimate
    )
    assert 3 * sum(windows) <= estimate
