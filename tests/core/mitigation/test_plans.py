"""core.mitigation.plans: each option reduced to the events it leaves possible.

References beside each check: flux continuity at closing (a winding closed at voltage angle
alpha onto sqrt(2)·V·sin(omega·t + alpha) has the steady flux -lambda_N·cos(omega·t + alpha); a
residual flux equal to -cos(alpha) pu leaves no offset; any transients text, e.g. A. Greenwood,
Electrical Transients in Power Systems, 2nd ed., ch. 6, from memory); the three-phase identity
cos(a) + cos(a - 120°) + cos(a + 120°) = 0.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from core.energization.switching_event import switching_event
from core.errors import ParameterError
from core.mitigation.mitigation_options import Demagnetize
from core.mitigation.plans import Context, plan_for, preset_flux
from core.transformer import circuit_model


@pytest.mark.parametrize(("angle_deg", "expected_pu"), [(90.0, 0.0), (60.0, -0.5), (180.0, 0.8)])
def test_preset_flux_matches_the_steady_flux_at_the_closing_instant(
    single_phase: circuit_model.EquivalentCircuit, angle_deg: float, expected_pu: float
) -> None:
    # -cos(alpha), clipped to what the pre-magnetising circuit can leave (0.8 pu here):
    # cos(90°) = 0, -cos(60°) = -0.5, -cos(180°) = 1 -> clipped to 0.8
    alpha, flux = preset_flux(single_phase, 0.8, closing_angle_deg=angle_deg)
    assert alpha == angle_deg
    assert flux[0] == pytest.approx(expected_pu, abs=1e-12)


def test_chosen_angle_leaves_no_offset_and_three_fluxes_sum_to_zero(
    three_phase: circuit_model.EquivalentCircuit,
) -> None:
    alpha, flux = preset_flux(three_phase, 1.2)
    # wye windings at alpha, alpha - 120°, alpha + 120° (phase sequence A, B, C)
    angles = np.radians(alpha + np.array([0.0, -120.0, 120.0]))
    # |cos| <= 1 < 1.2: nothing is clipped
    assert flux == pytest.approx(-np.cos(angles), abs=1e-12)
    assert math.fsum(flux) == pytest.approx(0.0, abs=1e-12)
    with pytest.raises(ParameterError) as err:
        preset_flux(three_phase, 1.5)
    assert err.value.parameter == "max_flux_pu"


def test_demagnetising_scales_the_residual_flux(
    three_phase: circuit_model.EquivalentCircuit,
) -> None:
    nameplate = circuit_model.Nameplate(
        rating_va=2.5e6, phases=3, frequency_hz=60, line_voltage_v=480, impedance_percent=5.75
    )
    residual = np.array([0.8, -0.4, -0.4])
    ctx = Context(
        nameplate,
        None,
        three_phase,
        None,
        switching_event(three_phase, 0.0, residual),
        None,
        None,
        None,
    )
    warnings: list[tuple[str, str]] = []
    plan = plan_for(Demagnetize(0.25), ctx, warnings)
    # what remains of the flux is the given share of it (the option's definition)
    assert plan.residual.tolist() == pytest.approx([0.2, -0.1, -0.1], abs=1e-15)
    assert plan.kind == "demagnetize"
    assert plan.circuit is three_phase
    assert not warnings
