"""core.network.simulate_network on grounded-wye units: the kernel of decoupled phases.

Where every unit is a grounded wye and the source a Thevenin EMF, KCL at the bus is one scalar
equation per phase and ``record="first_peaks"`` or ``"source"`` runs on
core.network.kernel.integrate_decoupled; the general kernel solves the same network by Newton's
method on the three bus fluxes. Same model, states, stages and step, so the two agree to
rounding and the Newton tolerances: within 1e-12 of the largest current here where the curves
are piecewise linear (measured about 1e-15: the solve there is exact), 1e-11 with a smooth knee
(both stop anywhere within the Newton tolerance of 1e-12 pu of lambda_N on Phi; measured
1.9e-12). This is a consistency check between two paths of our solver; the independent reference
(scipy's LSODA written from Kirchhoff's laws) for this kernel is
tests/references/test_network_vs_scipy.py::test_grounded_wye_feeder_phase_by_phase.
Circuits: 11 kV distribution units with the nameplate defaults of core.transformer (common
practice), each magnetising-curve kind, behind a 30 MVA, X/R 8 source or an ideal one.
"""

from __future__ import annotations

import numpy as np
import pytest
from numpy.typing import NDArray

from core import transformer
from core.network import (
    Breaker,
    BusLoad,
    Machine,
    NetworkResult,
    Source,
    Unit,
    phases_decoupled,
    simulate_network,
    solver,
)

Array = NDArray[np.float64]
F = 50.0
V_LL = 11_000.0
SOURCE = Source.from_fault_level(V_LL, F, 30e6, 8.0)
LOAD = BusLoad.from_power(V_LL, F, 1e6, 5e5)
CURVES: dict[str, dict[str, object]] = {
    "two_slope": {},
    "smooth": {"curve": "smooth", "knee_width_pu": 0.02},
    "table": {
        "open_circuit_voltage_percent": (80.0, 100.0, 110.0),
        "open_circuit_current_percent": (0.4, 1.0, 2.5),
    },
}


def _circuit(
    rating_va: float, curve: str = "two_slope", connection: str = "wye_grounded"
) -> transformer.EquivalentCircuit:
    npl = transformer.Nameplate(
        rating_va=rating_va,
        phases=3,
        frequency_hz=F,
        line_voltage_v=V_LL,
        connection=connection,
        **CURVES[curve],  # type: ignore[arg-type]
    )
    return transformer.equivalent_circuit(npl, None)


def _units(n: int, curves: tuple[str, str, str, str]) -> list[Unit]:
    # staggered poles (one unit's pole c closing late, at 90 ms), a pre-insertion resistor
    # bypassed after 1.5 cycles, a unit in service, one closed at t = 0
    rng = np.random.default_rng(11)
    closing = rng.uniform(0.0, 0.008, size=(n, 2, 3))
    closing[:, 1, 2] = 0.09
    residual = rng.uniform(-0.8, 0.8, size=(n, 3, 3))
    return [
        Unit(
            _circuit(1e6, curves[0]),
            breaker=Breaker(closing[:, 0]),
            residual_flux_pu=residual[:, 0],
        ),
        Unit(
            _circuit(5e5, curves[1]),
            breaker=Breaker(closing[:, 1], insertion_resistance_ohm=80.0, bypass_time_s=0.03),
            residual_flux_pu=residual[:, 1],
        ),
        Unit(_circuit(1.5e6, curves[2]), in_service=True),
        Unit(_circuit(7.5e5, curves[3]), residual_flux_pu=residual[:, 2]),
    ]


def _both(
    monkeypatch: pytest.MonkeyPatch, source: Source, units: list[Unit], **kw: object
) -> tuple[NetworkResult, NetworkResult]:
    """The same simulation on the decoupled kernel and, routed there, on the general one."""
    fast = simulate_network(source, units, **kw)  # type: ignore[arg-type]
    with monkeypatch.context() as m:
        m.setattr(solver, "phases_decoupled", lambda *a: False)
        general = simulate_network(source, units, **kw)  # type: ignore[arg-type]
    return fast, general


def _rel(a: Array, b: Array) -> float:
    return float(np.max(np.abs(a - b)) / np.max(np.abs(b)))


@pytest.mark.parametrize(
    "curves",
    [
        ("two_slope", "two_slope", "two_slope", "two_slope"),
        ("smooth", "two_slope", "table", "smooth"),
        ("table", "table", "two_slope", "table"),
    ],
)
@pytest.mark.parametrize("load", [None, LOAD])
def test_first_peaks_and_source_current_equal_the_general_kernels(
    monkeypatch: pytest.MonkeyPatch, curves: tuple[str, str, str, str], load: BusLoad | None
) -> None:
    n = 12
    units = _units(n, curves)
    tol = 1e-11 if "smooth" in curves else 1e-12
    kw = {
        "closing_angle_deg": np.linspace(0.0, 360.0, n, endpoint=False),
        "duration_s": 0.1,
        "load": load,
    }
    fast, general = _both(monkeypatch, SOURCE, units, record="first_peaks", **kw)
    assert fast.first_peak_a.shape == (n, 5)
    assert _rel(fast.first_peak_a, general.first_peak_a) < tol
    assert _rel(fast.insertion_energy_j, general.insertion_energy_j) < tol
    assert np.all(fast.insertion_energy_j[:, 1] > 0.0)
    fast, general = _both(monkeypatch, SOURCE, units, record="source", **kw)
    assert _rel(fast.source_current_a, general.source_current_a) < tol


@pytest.mark.parametrize(
    "source",
    [
        Source(V_LL, F, 0.0, 0.0),  # ideal: no solve
        Source(V_LL, F, 0.4, 0.012, voltage_start_pu=0.4, voltage_hold_s=0.01, voltage_rise_s=0.02),
    ],
    ids=["ideal", "ramp"],
)
def test_an_ideal_source_and_a_ramp_equal_the_general_kernels(
    monkeypatch: pytest.MonkeyPatch, source: Source
) -> None:
    n = 6
    units = _units(n, ("two_slope", "smooth", "two_slope", "table"))
    kw = {"closing_angle_deg": np.linspace(10.0, 300.0, n), "duration_s": 0.1, "load": LOAD}
    fast, general = _both(monkeypatch, source, units, record="first_peaks", **kw)
    assert _rel(fast.first_peak_a, general.first_peak_a) < 1e-11  # a smooth knee among them
    fast, general = _both(monkeypatch, source, units, record="source", **kw)
    assert _rel(fast.source_current_a, general.source_current_a) < 1e-11


def test_pre_insertion_substeps_equal_the_general_kernels(monkeypatch: pytest.MonkeyPatch) -> None:
    # a resistor whose loop needs sub-steps while it is in (substep_insertion)
    units = [
        Unit(
            _circuit(1e6),
            breaker=Breaker(insertion_resistance_ohm=4000.0, bypass_time_s=0.01),
            residual_flux_pu=[0.8, -0.4, -0.4],
        ),
        Unit(_circuit(1e6), residual_flux_pu=[-0.6, 0.3, 0.3]),
    ]
    kw = {"closing_angle_deg": [0.0, 90.0], "duration_s": 0.06, "substep_insertion": True}
    fast, general = _both(monkeypatch, SOURCE, units, record="first_peaks", **kw)
    assert _rel(fast.first_peak_a, general.first_peak_a) < 1e-12


def test_which_networks_run_phase_by_phase() -> None:
    wye = Unit(_circuit(1e6))
    delta = Unit(_circuit(1e6, connection="delta"))
    assert phases_decoupled(SOURCE, [wye, wye], "first_peaks")
    assert phases_decoupled(SOURCE, [wye], "source")
    # the whole record (bus voltage, winding fluxes) stays on the general kernel
    assert not phases_decoupled(SOURCE, [wye, wye], "all")
    # a delta or a floating wye joins the phases; a unit's own connection overrides its circuit's
    assert not phases_decoupled(SOURCE, [wye, delta], "first_peaks")
    assert not phases_decoupled(SOURCE, [Unit(_circuit(1e6), connection="wye")], "first_peaks")
    assert phases_decoupled(SOURCE, [Unit(delta.circuit, connection="wye_grounded")], "source")
    # a machine's EMF depends on all three source currents (even a frozen one stays general)
    machine = Machine(V_LL, F, 1.25e6, 0.15, 0.006, dynamic=False)
    assert not phases_decoupled(machine, [wye], "first_peaks")
