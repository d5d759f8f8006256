"""core.network.Machine: the synchronous machine as the network's source.

(a) With its EMF frozen (``dynamic`` False: no flux decay, no regulator) the machine is a
constant EMF behind R_a + jX''_d, so it must give exactly what the impedance
:class:`core.network.Source` with R = R_a*Z_b, L = X''_d*Z_b/omega gives, on the same solver
and step (Thevenin's theorem); measured: identical to rounding (relative difference 0 on every
current, tolerance 1e-12). The machine's own dynamics are checked against an independent scipy
reference in tests/references/test_machine_vs_scipy.py.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from numpy.typing import NDArray

from core import transformer
from core.errors import ParameterError
from core.network import (
    Breaker,
    BusLoad,
    Machine,
    Regulator,
    Source,
    Unit,
    insertion_substeps,
    simulate_network,
)

F = 60.0
V_LL = 480.0
S_GEN = 1.25e6
X_D2, R_A = 0.15, 0.006  # pu on the machine rating (invented demo values)


def _circuit(connection: str, rating_va: float = 1e6) -> transformer.EquivalentCircuit:
    # 480 V distribution unit, nameplate defaults of core.transformer (common practice)
    return transformer.equivalent_circuit(
        transformer.Nameplate(
            rating_va=rating_va, phases=3, frequency_hz=F, line_voltage_v=V_LL,
            connection=connection, position="inner",
        )
    )  # fmt: skip


def _units() -> list[Unit]:
    return [
        Unit(_circuit("wye_grounded", 0.5e6), in_service=True),
        Unit(
            _circuit("delta"),
            breaker=Breaker(
                [0.0, 2.1e-3, 4.7e-3], insertion_resistance_ohm=0.05, bypass_time_s=1.5 / F
            ),
            residual_flux_pu=[0.8, -0.8, 0.0],
        ),
        Unit(_circuit("wye", 0.75e6), residual_flux_pu=[0.7, -0.35, -0.35]),
        Unit(_circuit("wye_grounded"), breaker=Breaker(1.3e-3), residual_flux_pu=0.6),
    ]


@pytest.mark.parametrize("with_load", [False, True])
def test_frozen_machine_is_its_thevenin_source(with_load: bool) -> None:
    zb = V_LL**2 / S_GEN
    omega = 2.0 * math.pi * F
    thevenin = Source(V_LL, F, R_A * zb, X_D2 * zb / omega)
    frozen = Machine(V_LL, F, S_GEN, X_D2, R_A, dynamic=False)
    load = BusLoad.from_power(V_LL, F, 3e5, 1e5) if with_load else None
    alpha = np.array([0.0, 47.0, 300.95])
    kw = {"closing_angle_deg": alpha, "duration_s": 4 / F, "load": load}
    a = simulate_network(thevenin, _units(), **kw)  # type: ignore[arg-type]
    b = simulate_network(frozen, _units(), **kw)  # type: ignore[arg-type]
    assert a.steps_per_cycle == b.steps_per_cycle
    for name in ("source_current_a", "line_current_a", "winding_current_a", "load_current_a"):
        x, y = getattr(a, name), getattr(b, name)
        scale = max(np.max(np.abs(x)), 1e-300)
        assert np.max(np.abs(x - y)) <= 1e-12 * scale, name
    v = np.max(np.abs(a.bus_voltage_v))
    assert np.max(np.abs(a.bus_voltage_v - b.bus_voltage_v)) <= 1e-12 * v
    assert np.all(b.emf_pu == 1.0)
    e = np.max(np.abs(a.insertion_energy_j))
    assert e > 0.0
    assert np.max(np.abs(a.insertion_energy_j - b.insertion_energy_j)) <= 1e-12 * e


def _regulated(**change: object) -> Machine:
    # demo-like machine data (invented values): X''d 0.15, X'd 0.25, Xd 2.0 pu, T''do 0.04 s,
    # T'do 5 s; first-order regulator
    args: dict[str, object] = {
        "line_voltage_v": V_LL, "frequency_hz": F, "rating_va": S_GEN, "x_d2_pu": X_D2,
        "armature_resistance_pu": R_A, "x_d1_pu": 0.25, "x_d_pu": 2.0, "t_d2o_s": 0.04,
        "t_d1o_s": 5.0, "regulator": Regulator(40.0, 0.05, 4.0, -2.0, 0.01),
    }  # fmt: skip
    args.update(change)
    return Machine(**args)  # type: ignore[arg-type]


def test_machine_at_rest_on_a_load_stays_at_rest() -> None:
    # Only the load on the bus, no transformer pole closing within the run: the d-axis and
    # regulator equations start at their equilibrium, so E''_q, E_fd and the bus voltage hold
    # (the steady state is written from the d-axis equations with zero derivatives); what
    # moves is RK4's truncation of the load's sinusoidal steady state, measured 2.7e-9 pu.
    load = BusLoad.from_power(V_LL, F, 8e5, 5e5)
    late = Breaker(3.9 / F)
    sim = simulate_network(
        _regulated(), [Unit(_circuit("delta"), breaker=late)], closing_angle_deg=20.0,
        duration_s=4 / F, load=load,
    )  # fmt: skip
    before = slice(0, 3 * 128)
    assert np.ptp(sim.emf_pu[0, before]) < 1e-7
    assert np.ptp(sim.field_voltage_pu[0, before]) < 1e-7
    assert sim.field_voltage_pu[0, 0] > 1.0  # the lagging load needs more field
    v = sim.bus_voltage_v[0, 0, before]
    assert np.ptp(np.abs(v)) > 0.0


def test_per_case_machine_ratings_match_single_runs() -> None:
    # The per-case parameters: a sweep over ratings in one call equals each rating alone.
    ratings = np.array([1.0e6, 2.0e6, 4.0e6])
    units = [Unit(_circuit("wye_grounded"), residual_flux_pu=[0.8, -0.4, -0.4])]
    kw = {"closing_angle_deg": 0.0, "duration_s": 3 / F}
    both = simulate_network(_regulated(rating_va=ratings), units, **kw)  # type: ignore[arg-type]
    for k, s in enumerate(ratings):
        one = simulate_network(_regulated(rating_va=s), units, **kw)  # type: ignore[arg-type]
        assert one.steps_per_cycle == both.steps_per_cycle
        np.testing.assert_array_equal(one.line_current_a[0], both.line_current_a[k])
    # a larger machine sags less: its E''_q decays less and the first peak is higher
    peaks = np.abs(both.line_current_a[:, 0]).max(axis=(1, 2))
    assert peaks[0] < peaks[1] < peaks[2]


@pytest.mark.parametrize(
    ("change", "name"),
    [
        ({"x_d1_pu": 0.1}, "source.x_d1_pu"),
        ({"t_d2o_s": 0.0}, "source.t_d2o_s"),
        ({"rating_va": [1e6, 2e6, -1.0]}, "source.rating_va"),
        ({"regulator": Regulator(40.0, 0.05, 0.5, -2.0)}, "source.regulator.ceiling_pu"),
        ({"regulator": Regulator(40.0, 0.05, 4.0, 5.0)}, "source.regulator.floor_pu"),
    ],
)
def test_machine_inputs_name_the_field(change: dict[str, object], name: str) -> None:
    load = BusLoad.from_power(V_LL, F, 8e5, 5e5)
    with pytest.raises(ParameterError) as err:
        simulate_network(
            _regulated(**change), [Unit(_circuit("delta"))], closing_angle_deg=0.0,
            duration_s=1 / F, load=load,
        )  # fmt: skip
    assert err.value.parameter == name


@pytest.mark.parametrize("connection", ["wye_grounded", "delta"])
def test_sub_steps_while_the_resistor_is_in_match_the_fine_step(connection: str) -> None:
    # A 2 ohm pre-insertion resistor on the 480 V unit needs many more steps per cycle than
    # 128 while it is in; sub-stepping only those steps must give what the fine step
    # throughout gives (both are RK4 converged to well below the tolerance: per-cycle peaks
    # within 1e-4 of the first peak; measured 1.2e-10 and 2.5e-10 (9 and 14 sub-steps against
    # 1152 and 1792 steps per cycle throughout), the energies within 1e-15).
    unit = Unit(
        _circuit(connection), breaker=Breaker(0.0, 2.0, 1.5 / F), residual_flux_pu=[0.8, -0.8, 0.0]
    )
    machine = _regulated()
    fine = simulate_network(machine, [unit], closing_angle_deg=10.0, duration_s=5 / F)
    sub = simulate_network(
        machine, [unit], closing_angle_deg=10.0, duration_s=5 / F, substep_insertion=True
    )
    assert fine.steps_per_cycle > 128
    assert sub.steps_per_cycle == 128
    assert insertion_substeps(machine, [unit], 128)[0] > 1

    def peaks(x: NDArray[np.float64]) -> NDArray[np.float64]:
        out: NDArray[np.float64] = np.abs(x[..., : 5 * 128]).reshape(3, 5, 128).max(-1)
        return out

    a, b = peaks(fine.line_current_a[0, 0]), peaks(sub.line_current_a[0, 0])
    dev = float(np.max(np.abs(a - b)) / np.max(a))
    assert dev < 1e-4, dev
    e_fine, e_sub = fine.insertion_energy_j[0, 0], sub.insertion_energy_j[0, 0]
    assert e_sub == pytest.approx(e_fine, rel=1e-4)
