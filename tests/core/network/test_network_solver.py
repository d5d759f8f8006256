"""core.network.simulate_network: one unit against core.energize, circuit laws, physics, inputs.

Single unit on a Thevenin source: core.energize.simulate runs each case as one unit on this
solver (a grounded wye on its kernel of decoupled phases, the others on the general kernel),
so the two agree to rounding and the Newton tolerances (measured: at most 1e-12 of the largest
current, all connections and curve kinds). That is a consistency check between two of our
solvers; the independent references are in tests/references/test_network_vs_scipy.py.
"""

from __future__ import annotations

import numpy as np
import pytest
from numpy.typing import NDArray

from core import transformer
from core.energization import energize
from core.errors import LimitError, ParameterError
from core.network import Breaker, BusLoad, Source, Unit, simulate_network

Array = NDArray[np.float64]
F = 50.0
V_LL = 11_000.0


def _circuit(
    connection: str, rating_va: float = 1e6, **extra: object
) -> transformer.EquivalentCircuit:
    # 11 kV distribution unit, nameplate defaults of core.transformer (common practice)
    npl = transformer.Nameplate(
        rating_va=rating_va,
        phases=3,
        frequency_hz=F,
        line_voltage_v=V_LL,
        connection=connection,
        **extra,  # type: ignore[arg-type]
    )
    return transformer.equivalent_circuit(
        npl, transformer.Source("fault_level", fault_va=30e6, x_over_r=8.0)
    )


def _thevenin(c: transformer.EquivalentCircuit, **ramp: float) -> Source:
    return Source(V_LL, F, c.source_resistance_ohm, c.source_inductance_h, **ramp)


CURVES = {
    "two_slope": {},
    "smooth": {"curve": "smooth", "knee_width_pu": 0.02},
    "table": {
        "open_circuit_voltage_percent": (80.0, 100.0, 110.0),
        "open_circuit_current_percent": (0.4, 1.0, 2.5),
    },
}


def _peaks(x: Array, spc: int) -> Array:
    n = x.shape[-1] // spc
    out: Array = np.abs(x[..., : n * spc]).reshape(*x.shape[:-1], n, spc).max(-1)
    return out


@pytest.mark.parametrize("curve", list(CURVES))
@pytest.mark.parametrize("connection", ["wye_grounded", "delta", "wye"])
def test_single_unit_matches_core_energize(connection: str, curve: str) -> None:
    c = _circuit(connection, **CURVES[curve])
    angles = np.array([0.0, 47.0, 90.0])
    res = np.array([[0.8, -0.4, -0.4], [-0.6, 0.0, 0.6], [0.0, 0.0, 0.0]])
    old = energize.simulate(c, angles, res, duration_s=0.1)
    new = simulate_network(
        _thevenin(c), [Unit(c, residual_flux_pu=res)], closing_angle_deg=angles, duration_s=0.1
    )
    assert new.steps_per_cycle == old.steps_per_cycle
    scale = np.max(np.abs(old.line_current_a))
    # the same discretisation: 1e-9 of the largest current (a grounded wye runs on the kernel
    # of decoupled phases in core.energize, on the general kernel here: the same loop fluxes)
    tol = 1e-9
    assert np.max(np.abs(new.line_current_a[:, 0] - old.line_current_a)) < tol * scale
    assert np.max(np.abs(new.winding_current_a[:, 0] - old.winding_current_a)) < tol * scale
    dp = np.abs(_peaks(new.line_current_a[:, 0], 128) - _peaks(old.line_current_a, 128))
    assert np.max(dp) < tol * scale
    # KCL at the bus without a load: the source current is the unit's line current
    assert np.max(np.abs(new.source_current_a - new.line_current_a[:, 0])) < 1e-8 * scale


@pytest.mark.parametrize("connection", ["wye_grounded", "delta"])
def test_resistor_and_ramp_match_core_energize(connection: str) -> None:
    # a small pre-insertion resistor (no sub-steps in core.energize) bypassed at 2.3 cycles,
    # and a ramp from 0.4 pu held one cycle, rising over two
    c = _circuit(connection)
    kw = {"voltage_start_pu": 0.4, "voltage_hold_s": 1 / F, "voltage_rise_s": 2 / F}
    old = energize.simulate(
        c, 30.0, [0.7, -0.35, -0.35], duration_s=0.12,
        insertion_resistance_ohm=5.0, insertion_time_s=2.3 / F, **kw,
    )  # fmt: skip
    unit = Unit(
        c,
        breaker=Breaker(insertion_resistance_ohm=5.0, bypass_time_s=2.3 / F),
        residual_flux_pu=[0.7, -0.35, -0.35],
    )
    new = simulate_network(_thevenin(c, **kw), [unit], closing_angle_deg=30.0, duration_s=0.12)
    assert old.insertion_substeps[0] == 1
    scale = np.max(np.abs(old.line_current_a))
    assert np.max(np.abs(new.line_current_a[:, 0] - old.line_current_a)) < 1e-9 * scale


def test_pole_scatter_on_a_wye_matches_core_energize() -> None:
    # grounded wye: each winding is energised by its own pole in both solvers
    c = _circuit("wye_grounded")
    delay = [0.0, 2.1e-3, 4.7e-3]
    old = energize.simulate(c, 10.0, [0.5, 0.0, -0.5], delay, duration_s=0.08)
    new = simulate_network(
        _thevenin(c),
        [Unit(c, breaker=Breaker(closing_time_s=delay), residual_flux_pu=[0.5, 0.0, -0.5])],
        closing_angle_deg=10.0,
        duration_s=0.08,
    )
    np.testing.assert_allclose(new.closing_time_s[0, 0], old.pole_delay_s[0])
    scale = np.max(np.abs(old.line_current_a))
    assert np.max(np.abs(new.line_current_a[:, 0] - old.line_current_a)) < 1e-9 * scale


def test_cases_are_independent_of_the_batch() -> None:
    # vector equals scalar: each case of a batch as when simulated alone
    c = _circuit("delta")
    src = _thevenin(c)
    units = [
        Unit(c, in_service=True),
        Unit(c, residual_flux_pu=[[0.5, -0.5, 0.0], [0.0, 0.3, -0.3]]),
    ]
    both = simulate_network(src, units, closing_angle_deg=[20.0, 200.0], duration_s=0.06)
    for k, (a, r) in enumerate(((20.0, [0.5, -0.5, 0.0]), (200.0, [0.0, 0.3, -0.3]))):
        one = simulate_network(
            src, [units[0], Unit(c, residual_flux_pu=r)], closing_angle_deg=a, duration_s=0.06
        )
        np.testing.assert_array_equal(one.source_current_a[0], both.source_current_a[k])


def test_kcl_at_the_bus_with_a_load() -> None:
    # i_s = sum of the line currents + load current, and the load current is the one the bus
    # voltage drives through R_L + L_L (checked by the load's own KVL, differenced)
    c = _circuit("wye")
    load = BusLoad.from_power(V_LL, F, 1.5e6, 0.8e6)
    sim = simulate_network(
        _thevenin(c),
        [Unit(c, residual_flux_pu=[0.6, -0.3, -0.3]), Unit(_circuit("delta"), in_service=True)],
        closing_angle_deg=0.0,
        duration_s=0.04,
        load=load,
        samples_per_cycle=2048,
    )
    il = sim.load_current_a[0]
    v = sim.bus_voltage_v[0]
    h = sim.time_s[1]
    didt = (il[:, 2:] - il[:, :-2]) / (2.0 * h)
    kvl = v[:, 1:-1] - load.resistance_ohm * il[:, 1:-1] - load.inductance_h * didt
    # central difference error ~ (omega*h)^2/6 of the amplitude, plus the bus voltage's jumps
    # at knee crossings, where the difference is one-sided: compare in the median
    assert np.median(np.abs(kvl)) < 1e-4 * np.max(np.abs(v))


def test_in_service_units_start_in_steady_state() -> None:
    # nothing switches: every current is periodic from the first cycle
    c = _circuit("delta")
    load = BusLoad.from_power(V_LL, F, 1e6, 0.5e6)
    sim = simulate_network(
        _thevenin(c),
        [Unit(c, in_service=True), Unit(_circuit("wye"), in_service=True)],
        closing_angle_deg=33.0,
        duration_s=0.1,
        load=load,
    )
    spc = 128
    for x in (sim.source_current_a[0], sim.winding_current_a[0, 0], sim.flux_linkage_wb[0, 1]):
        first = x[..., :spc]
        last = x[..., 4 * spc : 5 * spc]
        assert np.max(np.abs(last - first)) < 1e-6 * np.max(np.abs(first))


def test_ideal_source_bus_voltage_is_the_emf() -> None:
    c = _circuit("wye_grounded")
    sim = simulate_network(
        Source(V_LL, F), [Unit(c, residual_flux_pu=0.8)], closing_angle_deg=0.0, duration_s=0.02
    )
    t = sim.time_s
    emf = np.sqrt(2.0 / 3.0) * V_LL * np.sin(2 * np.pi * F * t)
    np.testing.assert_allclose(sim.bus_voltage_v[0, 0], emf, atol=1e-9 * V_LL)


def test_sympathetic_inrush_physics() -> None:
    # Sympathetic inrush (common practice; e.g. H. S. Bronzeado, J. C. Yacamini, IEE Proc.
    # Gener. Transm. Distrib. 142(4), 1995 -- from memory): energising a unit beside one in
    # service on a resistive source makes the DC part of the energised unit's inrush drop a
    # voltage across the shared source resistance that drives the in-service unit's flux the
    # other way, so its current grows over several cycles with the opposite polarity, and it
    # decays more slowly than the energised unit's.
    src = Source.from_fault_level(V_LL, F, 15e6, 3.0)
    c = _circuit("wye_grounded")
    sim = simulate_network(
        src,
        [Unit(c, in_service=True), Unit(c, residual_flux_pu=[0.8, -0.4, -0.4])],
        closing_angle_deg=0.0,
        duration_s=1.5,
    )
    spc = 128
    old = sim.line_current_a[0, 0, 0]
    new = sim.line_current_a[0, 1, 0]
    cyc_old = old[: 75 * spc].reshape(75, spc)
    cyc_new = new[: 75 * spc].reshape(75, spc)
    # polarity of the energised unit's inrush: the sign of its largest excursion
    pol_new = np.sign(new[np.argmax(np.abs(new[: 2 * spc]))])
    # the in-service unit's excursions of the opposite polarity grow over several cycles
    opp = np.max(-pol_new * cyc_old, axis=1)
    k_max = int(np.argmax(opp))
    # measured: 36.8 A in the first cycle, 170 A at the sixth (k_max = 6); same polarity 0.3 A
    assert k_max >= 4, k_max
    assert opp[k_max] > 3.0 * opp[0]
    # ... and much larger than its excursions of the energised unit's polarity
    assert opp[k_max] > 3.0 * np.max(pol_new * cyc_old[k_max])
    # decay: the energised unit's peak falls faster; the in-service unit's peak decays slower
    # from its maximum than the energised unit's did over the same number of cycles
    env_new = np.max(np.abs(cyc_new), axis=1)
    env_old = np.max(np.abs(cyc_old), axis=1)
    # measured: 446 A -> 132 A over 20 cycles (0.30) for the energised unit, 170 A -> 122 A
    # (0.72) for the unit in service from its maximum
    span = 20
    assert env_old[k_max + span] / env_old[k_max] > env_new[span] / env_new[0]


def test_cost_grows_with_units_not_faster() -> None:
    # every unit adds its own work only: doubling the units of identical data roughly doubles
    # the steps counted against max_steps, and a limit below that raises
    c = _circuit("wye_grounded")
    units = [Unit(c, residual_flux_pu=0.5)] * 4
    with pytest.raises(LimitError):
        simulate_network(
            Source(V_LL, F), units, closing_angle_deg=0.0, duration_s=0.02, max_steps=4 * 128 - 1
        )
    simulate_network(
        Source(V_LL, F), units, closing_angle_deg=0.0, duration_s=0.02, max_steps=4 * 128
    )


@pytest.mark.parametrize("threads", [2, 3])
def test_chunked_cases_are_bit_identical(monkeypatch: pytest.MonkeyPatch, threads: int) -> None:
    # a batch split over threads gives every case exactly what it gives alone: the cases are
    # integrated independently, so chunking must not move a single bit (this module's
    # requirement of core.network.solver.case_chunks)
    import numba

    from core.network import solver

    monkeypatch.setattr(solver, "PARALLEL_MIN_CHUNK_STEPS", 1)
    monkeypatch.setattr(numba.config, "NUMBA_NUM_THREADS", threads)
    src = _thevenin(_circuit("delta"))
    angles = np.array([0.0, 40.0, 95.0, 170.0, 250.0])
    poles = np.array([[0.0, 0.002, 0.004], [0.001, 0.0, 0.0], [0.0] * 3, [0.003] * 3, [0.0] * 3])
    units = [
        Unit(_circuit("wye"), breaker=Breaker(poles), residual_flux_pu=[0.7, -0.3, -0.4]),
        Unit(_circuit("delta", 0.5e6), residual_flux_pu=[-0.5, 0.6, -0.1]),
        Unit(_circuit("wye_grounded", 0.5e6), in_service=True),
    ]
    load = BusLoad.from_power(V_LL, F, 1e6, 0.5e6)
    assert len(solver.case_chunks(angles.size, 10**6)) == threads
    batch = simulate_network(src, units, closing_angle_deg=angles, duration_s=0.04, load=load)
    for k, angle in enumerate(angles):
        alone_units = [
            Unit(units[0].circuit, breaker=Breaker(poles[k]), residual_flux_pu=[0.7, -0.3, -0.4]),
            units[1],
            units[2],
        ]
        alone = simulate_network(
            src, alone_units, closing_angle_deg=angle, duration_s=0.04, load=load
        )
        for name in ("source_current_a", "bus_voltage_v", "line_current_a", "flux_linkage_wb"):
            assert np.array_equal(getattr(batch, name)[k], getattr(alone, name)[0]), name


@pytest.mark.parametrize(
    ("kwargs", "name"),
    [
        ({"units": []}, "units"),
        ({"closing_angle_deg": [np.nan]}, "closing_angle_deg"),
        ({"duration_s": 0.0}, "duration_s"),
        ({"samples_per_cycle": 3}, "samples_per_cycle"),
        ({"load": BusLoad(1.0, 0.0)}, "load.inductance_h"),
        ({"source": Source(V_LL, F, resistance_ohm=-1.0)}, "source.resistance_ohm"),
        ({"source": Source(V_LL, F, voltage_start_pu=1.5)}, "source.voltage_start_pu"),
        ({"source": Source(V_LL, 60.0)}, "units[0].circuit.frequency_hz"),
    ],
)
def test_invalid_inputs_name_the_parameter(kwargs: dict[str, object], name: str) -> None:
    c = _circuit("wye_grounded")
    args: dict[str, object] = {
        "source": Source(V_LL, F),
        "units": [Unit(c)],
        "closing_angle_deg": 0.0,
        "duration_s": 0.02,
    }
    args.update(kwargs)
    with pytest.raises(ParameterError) as exc:
        simulate_network(**args)  # type: ignore[arg-type]
    assert exc.value.parameter == name


@pytest.mark.parametrize(
    ("unit", "name"),
    [
        (Unit(_circuit("delta"), connection="zigzag"), "units[0].connection"),
        (Unit(_circuit("delta"), in_service=True, breaker=Breaker(0.01)), "units[0].breaker"),
        (Unit(_circuit("delta"), breaker=Breaker([0.0, 0.0])), "units[0].breaker.closing_time_s"),
        (Unit(_circuit("delta"), breaker=Breaker(-1.0)), "units[0].breaker.closing_time_s"),
        (Unit(_circuit("delta"), residual_flux_pu=9.0), "units[0].residual_flux_pu"),
        (
            Unit(_circuit("delta"), breaker=Breaker(0.0, -2.0)),
            "units[0].breaker.insertion_resistance_ohm",
        ),
    ],
)
def test_invalid_units_name_the_parameter(unit: Unit, name: str) -> None:
    with pytest.raises(ParameterError) as exc:
        simulate_network(Source(V_LL, F), [unit], closing_angle_deg=0.0, duration_s=0.02)
    assert exc.value.parameter == name


def test_network_package_is_pure() -> None:
    # the layering rule of core/ (tests/core/test_purity.py reads core/*.py only): no web
    # framework, validation models, service layer, logging or printing in core/network
    import ast
    from pathlib import Path

    forbidden = {"fastapi", "pydantic", "pydantic_settings", "starlette", "service", "logging"}
    files = sorted((Path(__file__).resolve().parents[3] / "core" / "network").glob("*.py"))
    assert len(files) >= 3
    for path in files:
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.Import):
                roots = {a.name.split(".")[0] for a in node.names}
            elif isinstance(node, ast.ImportFrom) and node.module:
                roots = {node.module.split(".")[0]}
            else:
                roots = set()
            assert not roots & forbidden, path.name
            if isinstance(node, ast.Call) and isinstance(node.func, ast.Name):
                assert node.func.id != "print", path.name
