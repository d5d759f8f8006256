"""core.network.run_single_unit: the kernel of decoupled phases against the general kernel.

A grounded-wye unit alone on a Thevenin source (which also carries the single-phase circuits)
runs on core.network.kernel.integrate_lone, where each phase's Kirchhoff current law is the
scalar psi = lambda + L_s*f(lambda); the general kernel solves the same network by Newton's
method on the bus fluxes. Same model, states, stages and step, so the two agree to rounding
and the Newton tolerances: within 1e-12 of the largest current here. This is a consistency
check between two paths of our solver; the independent references (scipy's LSODA written from
Kirchhoff's laws) are in tests/references/test_network_vs_scipy.py and
tests/references/test_solver_vs_scipy.py.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from numpy.typing import NDArray

from core import transformer
from core.network import kernel, run_single_unit, solver

Array = NDArray[np.float64]
F = 50.0
V_LL = 11_000.0
SPC = 128
CURVES: dict[str, dict[str, object]] = {
    "two_slope": {},
    "smooth": {"curve": "smooth", "knee_width_pu": 0.02},
    "table": {
        "open_circuit_voltage_percent": (80.0, 100.0, 110.0),
        "open_circuit_current_percent": (0.4, 1.0, 2.5),
    },
}


def _circuit(curve: str, phases: int = 3) -> transformer.EquivalentCircuit:
    # 11 kV 1 MVA distribution unit (or one phase of it), nameplate defaults of
    # core.transformer (common practice), behind a 40 MVA, X/R 9 source
    npl = transformer.Nameplate(
        rating_va=1e6 if phases == 3 else 1e6 / 3.0,
        phases=phases,
        frequency_hz=F,
        line_voltage_v=V_LL if phases == 3 else V_LL / math.sqrt(3.0),
        connection="wye_grounded",
        **CURVES[curve],  # type: ignore[arg-type]
    )
    return transformer.equivalent_circuit(
        npl, transformer.Source("fault_level", fault_va=40e6, x_over_r=9.0)
    )


def _run(
    c: transformer.EquivalentCircuit,
    *,
    general: bool,
    ideal: bool = False,
    stagger: bool = False,
    single_phase: bool = False,
    resistor: bool = False,
    ramp: bool = False,
    extra_ohm: float = 0.0,
    cases: int = 5,
    cycles: int = 5,
) -> Array:
    n_steps = SPC * cycles
    angles = np.deg2rad(np.linspace(0.0, 330.0, cases))
    phase = angles[:, None] + np.array([0.0, -2.0 * math.pi / 3.0, 2.0 * math.pi / 3.0])
    close = np.zeros((cases, 3), dtype=np.int64)
    if stagger:
        close[:, 1] = 9
        close[:, 2] = 37 + np.arange(cases)
    residual = np.array([0.8, -0.4, -0.4])
    emf = math.sqrt(2.0) * V_LL / math.sqrt(3.0)
    if single_phase:
        close[:, 1:] = n_steps + 1  # poles b and c never close
        residual = np.array([-0.7, 0.0, 0.0])
        emf = math.sqrt(2.0) * c.winding_voltage_v
    flux = np.tile(residual * c.nominal_flux_wb, (cases, 1))
    l_s = 0.0 if ideal else c.source_inductance_h
    line, wind = run_single_unit(
        c,
        "wye_grounded",
        emf_peak_v=emf,
        winding_resistance_ohm=c.winding_resistance_ohm + extra_ohm,
        source_resistance_ohm=np.full(cases, 0.0 if ideal else c.source_resistance_ohm),
        source_inductance_h=np.full(cases, l_s),
        phase_rad=phase,
        close_step=close,
        flux_wb=flux,
        insertion_resistance_ohm=40.0 if resistor else 0.0,
        bypass_step=int(2.5 * SPC) if resistor else 0,
        substeps=np.full(cases, 3 if resistor else 1, dtype=np.int64),
        ramp=(0.4, 0.6 / (2 * SPC), SPC, 3 * SPC) if ramp else (1.0, 0.0, 0, 0),
        n_steps=n_steps,
        decimate=2,
        step_s=1.0 / (F * SPC),
        _general=general,
    )
    # a grounded wye: each line current is its winding's current
    np.testing.assert_array_equal(line, wind)
    return line


VARIANTS: dict[str, dict[str, object]] = {
    "plain": {},
    "ideal_source": {"ideal": True},
    "staggered_poles": {"stagger": True},
    "single_phase": {"single_phase": True},
    "resistor_with_bypass": {"resistor": True},
    "emf_ramp": {"ramp": True},
    "extra_resistance": {"extra_ohm": 4.0},
    "all_together": {"stagger": True, "resistor": True, "ramp": True, "extra_ohm": 2.0},
}


@pytest.mark.parametrize("variant", list(VARIANTS))
@pytest.mark.parametrize("curve", list(CURVES))
def test_decoupled_kernel_equals_the_general_one(
    monkeypatch: pytest.MonkeyPatch, curve: str, variant: str
) -> None:
    kw = VARIANTS[variant]
    c = _circuit(curve, phases=1 if kw.get("single_phase") else 3)
    lone = _run(c, general=False, **kw)  # type: ignore[arg-type]
    # the general kernel stops its Newton iteration on the bus fluxes when the next step is
    # below the tolerance, without taking it: on the smooth knee that leaves it up to 2.4e-12
    # of the largest current off at the default 1e-12 pu (measured, all_together); at 1e-14 pu
    # it is within 3e-14 of the decoupled kernel at its default
    monkeypatch.setattr(solver, "NEWTON_TOLERANCE_PU", 1e-14)
    general = _run(c, general=True, **kw)  # type: ignore[arg-type]
    scale = np.max(np.abs(general))
    assert scale > 2.0 * c.rated_line_current_a  # an inrush, not a magnetising current
    assert np.max(np.abs(lone - general)) <= 1e-12 * scale
    if kw.get("single_phase"):
        assert not np.any(lone[:, 1:])
    if kw.get("stagger"):
        assert not np.any(lone[:, 2, :18])  # pole c still open over the first 36 steps


@pytest.mark.parametrize("curve", list(CURVES))
def test_parallel_build_is_bit_identical_to_the_serial_one(
    monkeypatch: pytest.MonkeyPatch, curve: str
) -> None:
    c = _circuit(curve)
    kw = {"stagger": True, "resistor": True, "cases": 30, "cycles": 3}
    monkeypatch.setattr(kernel, "PARALLEL_MIN_ELEMENTS", 10**9)
    serial = _run(c, general=False, **kw)  # type: ignore[arg-type]
    monkeypatch.setattr(kernel, "PARALLEL_MIN_ELEMENTS", 1)
    parallel = _run(c, general=False, **kw)  # type: ignore[arg-type]
    np.testing.assert_array_equal(parallel, serial)
    # and each case as when run alone
    alone = _run(c, general=False, **{**kw, "cases": 1})  # type: ignore[arg-type]
    np.testing.assert_array_equal(alone[0], serial[0])
