"""core.energization.inrush_study: the peak study, end to end on one phase of a distribution unit.

References beside each check: the worst closing instant is the rising voltage zero with the
residual flux in the direction the flux then swings (the flux reaches 2 + b_R pu half a cycle
later; L. F. Blume et al., Transformer magnetizing inrush currents, AIEE Trans. 70, 1951, from
memory); the first peak is bounded by the saturated (air-core) inductance alone,
i <= (2 + b_R - b_S)·lambda_N/L_air (Holcomb's two-slope argument, IEEE Trans. Power Delivery
11(3), 1996, from memory), with lambda_N = sqrt(2)·V/omega written out here (Faraday's law).
"""

from __future__ import annotations

import math

from core.energization.inrush_study import line_names, peak_study, winding_names
from core.energization.switching_event import switching_event
from core.transformer import circuit_model


def test_worst_closing_is_the_voltage_zero_that_drives_the_flux_up(
    single_phase: circuit_model.EquivalentCircuit,
) -> None:
    study = peak_study(single_phase, switching_event(single_phase, 0.0, 0.8), method="simulated")
    assert study.simulated_worst_angle_deg is not None
    # within a few degrees of 0 (mod 360): the resistance moves it slightly
    off = (study.simulated_worst_angle_deg + 180.0) % 360.0 - 180.0
    assert abs(off) < 10.0


def test_first_peak_is_below_the_air_core_bound(
    single_phase: circuit_model.EquivalentCircuit,
) -> None:
    v = 480.0 / math.sqrt(3.0)
    lam_n = math.sqrt(2.0) * v / (2.0 * math.pi * 60.0)
    study = peak_study(single_phase, switching_event(single_phase, 0.0, 0.8), method="both")
    b_s = study.saturation_flux_pu
    bound = (2.0 + 0.8 - b_s) * lam_n / single_phase.air_core_inductance_h
    assert study.simulated is not None
    assert study.analytic_worst_a is not None
    assert 0.0 < study.simulated[0].first_peak_a <= bound
    # and it is an inrush: well above rated (first peaks of 8-12 x rated are typical of
    # distribution units, common practice)
    assert study.simulated[0].first_peak_a > 5.0 * study.rated_current_a
    # closing at the voltage crest with no residual flux leaves no offset: no inrush
    calm = peak_study(single_phase, switching_event(single_phase, 90.0, 0.0), method="simulated")
    assert calm.simulated is not None
    assert calm.simulated[0].first_peak_a < study.rated_current_a


def test_windings_and_lines_are_named_by_connection(
    three_phase: circuit_model.EquivalentCircuit, single_phase: circuit_model.EquivalentCircuit
) -> None:
    assert winding_names(three_phase) == ("A", "B", "C")
    assert line_names(three_phase) == ("A", "B", "C")
    assert winding_names(single_phase) == ("A",)
