"""core.network.step_plan and core.cost.network_work against the steps the solver takes.

Reference: the solver's returned record, never the plan itself: internal steps =
(samples - 1) x (steps per cycle / samples per cycle), read off what
:func:`core.network.simulate_network` returns. Circuits: 11 kV distribution units with the
nameplate defaults of core.transformer (common practice), a 30 MVA source, X/R 8.
"""

from __future__ import annotations

import dataclasses
from typing import Any

import numpy as np
import pytest

from core import cost, transformer
from core.network import (
    Breaker,
    BusLoad,
    NetworkResult,
    Source,
    Unit,
    simulate_network,
    step_plan,
)
from core.protection import device_operation

F = 50.0
V_LL = 11_000.0


def _unit(connection: str, rating_va: float, **unit: object) -> Unit:
    npl = transformer.Nameplate(
        rating_va=rating_va, phases=3, frequency_hz=F, line_voltage_v=V_LL, connection=connection
    )
    return Unit(transformer.equivalent_circuit(npl, None), **unit)  # type: ignore[arg-type]


SOURCE = Source.from_fault_level(V_LL, F, 30e6, 8.0)
CASES = {
    "one wye": ([_unit("wye_grounded", 1e6)], None),
    "delta beside wye in service, load": (
        [_unit("delta", 2e6), _unit("wye", 5e5, in_service=True)],
        BusLoad.from_power(V_LL, F, 1e6, 5e5),
    ),
    "resistor": (
        [_unit("wye_grounded", 1e6, breaker=Breaker(0.0, 0.05, 0.02)), _unit("delta", 1e6)],
        None,
    ),
}


@pytest.mark.parametrize("name", sorted(CASES))
@pytest.mark.parametrize("samples_per_cycle", [32, 128])
def test_plan_and_work_count_the_solvers_steps(name: str, samples_per_cycle: int) -> None:
    units, load = CASES[name]
    res = simulate_network(
        SOURCE,
        units,
        closing_angle_deg=[0.0],
        duration_s=0.1,
        load=load,
        samples_per_cycle=samples_per_cycle,
    )
    steps = (res.time_s.size - 1) * (res.steps_per_cycle // samples_per_cycle)
    decimate, spc, n_steps = step_plan(SOURCE, units, 0.1, load, samples_per_cycle)
    assert (spc, n_steps, decimate) == (
        res.steps_per_cycle,
        steps,
        res.steps_per_cycle // samples_per_cycle,
    )
    work = cost.network_work(SOURCE, units, 0.1, load, samples_per_cycle=samples_per_cycle)
    parts = dict(work.parts)
    assert parts["network simulation"] == pytest.approx(
        cost.NETWORK_STEP_WEIGHT * len(units) * 3 * steps
    )
    samples = 3 * res.time_s.size * (len(units) + 1)
    assert parts["currents read"] == pytest.approx(cost.ENVELOPE_SAMPLE_WEIGHT * samples)
    assert "devices judged" not in parts
    with_devices = cost.network_work(SOURCE, units, 0.1, load, devices=2)
    assert with_devices.steps > cost.network_work(SOURCE, units, 0.1, load).steps
    assert np.isfinite(work.steps)


@pytest.mark.parametrize(
    ("name", "decoupled"),
    [("delta beside wye in service, load", False), ("grounded wyes, load", True)],
)
def test_statistics_work_counts_the_steps_the_statistics_take(
    monkeypatch: pytest.MonkeyPatch, name: str, decoupled: bool
) -> None:
    # every simulate_network call of the Monte Carlo and of the device events, counted from
    # what it returns: cases x units x 3 windings x internal steps, at the weights of the
    # kernel that runs it (grounded wyes on a Thevenin source: phase by phase); a Monte Carlo
    # case (no record) is integrated to the sample after its own first-peak window, read off
    # its returned pole instants
    from core.network import analysis, phases_decoupled
    from core.statistics import monte_carlo
    from core.statistics import network_statistics as ns

    if decoupled:
        units = [_unit("wye_grounded", 1e6), _unit("wye_grounded", 5e5, in_service=True)]
        load = BusLoad.from_power(V_LL, F, 1e6, 5e5)
        peak_weight = cost.NETWORK_DECOUPLED_PEAK_STEP_WEIGHT
        source_weight = cost.NETWORK_DECOUPLED_SOURCE_STEP_WEIGHT
    else:
        units, load = CASES[name]
        peak_weight, source_weight = cost.NETWORK_PEAK_STEP_WEIGHT, cost.NETWORK_SOURCE_STEP_WEIGHT
    assert phases_decoupled(SOURCE, units, "first_peaks") is decoupled
    units = [
        dataclasses.replace(u, breaker=Breaker(np.zeros(3)), residual_flux_pu=np.zeros(3))
        if not u.in_service
        else u
        for u in units
    ]
    taken: list[float] = []

    def counted(*args: Any, **kw: Any) -> NetworkResult:
        res = simulate_network(*args, **kw)
        cases, n_units = res.line_current_a.shape[:2]
        decimate = res.steps_per_cycle // 128
        if kw.get("record") == "first_peaks":
            energized = [not u.in_service for u in args[1]]
            end = analysis.first_peak_window_end(res.closing_time_s, energized, F)
            last = np.searchsorted(res.time_s, end * (1 + 1e-12), side="right") - 1
            samples = np.minimum(last + 1, res.time_s.size - 1)
            taken.append(peak_weight * n_units * 3 * decimate * samples.sum())
            return res
        assert kw.get("record") == "source"  # the device events: the source current only
        steps = (res.time_s.size - 1) * decimate
        taken.append(source_weight * cases * n_units * 3 * steps)
        return res

    monkeypatch.setattr(ns, "simulate_network", counted)
    dist = ns.network_peak_distribution(
        SOURCE, units, samples=9, random_state=1, load=load, pole_scatter_ms=0.0,
        residual=monte_carlo.UniformResidual(), chunk_bytes=1e3,
    )  # fmt: skip
    assert len(taken) > 1  # chunked
    relay = device_operation.Relay("r", "ieee_c37_112", "very_inverse", 400.0, 2.0)
    ns.network_device_odds(SOURCE, units, dist, [relay], 100.0, events=4, duration_s=0.3, load=load)
    work = cost.network_statistics_work(
        SOURCE, units, load, samples=9, pole_closing_max_s=0.0, pole_scatter_ms=0.0, events=4,
        devices=1, duration_s=0.3,
    )  # fmt: skip
    parts = dict(work.parts)
    assert parts["Monte Carlo events"] == pytest.approx(sum(taken[:-1]))
    assert parts["device events simulated"] == pytest.approx(taken[-1])
    # a scatter widens the window the estimate counts by the expected range of the poles
    wider = cost.network_statistics_work(
        SOURCE, units, load, samples=9, pole_closing_max_s=0.0, pole_scatter_ms=1.0
    )
    assert dict(wider.parts)["Monte Carlo events"] > parts["Monte Carlo events"]


@pytest.mark.parametrize("name", sorted(CASES))
def test_figure_work_counts_the_same_simulation_and_one_curve_per_current(name: str) -> None:
    units, load = CASES[name]
    res = simulate_network(SOURCE, units, closing_angle_deg=[0.0], duration_s=0.1, load=load)
    fig = dict(cost.network_figure_work(SOURCE, units, 0.1, load).parts)
    # the same simulation as the JSON operation's estimate (the solver's own step plan)
    assert (
        fig["network simulation"]
        == dict(cost.network_work(SOURCE, units, 0.1, load).parts)["network simulation"]
    )
    # the source and each unit drawn once, every sample of the record
    curves = len(units) + 1
    assert fig["figure"] == pytest.approx(
        cost.NETWORK_FIGURE_WEIGHT
        + curves * (cost.NETWORK_FIGURE_CURVE_WEIGHT + cost.FIGURE_SAMPLE_WEIGHT * res.time_s.size)
    )
    longer = cost.network_figure_work(SOURCE, units, 0.2, load)
    assert longer.steps > cost.network_figure_work(SOURCE, units, 0.1, load).steps
