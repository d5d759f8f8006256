"""core.protection.protection_study: the study /v1/clearance makes, end to end on one unit.

References beside each check: the per-unit system (a source of short-circuit power S_sc is
S/S_sc per unit on a base of S; Grainger & Stevenson, Power System Analysis, ch. 2, from
memory); the instantaneous element's rule (it operates when the current it compares exceeds its
setting: the ratio setting/current is the margin, DEVELOPERS.md glossary); the inrush's first
peak from Holcomb's closed form written out here (the saturated air-core inductance limits it:
i ~ (2 + b_R - b_S) lambda_N / L_air on a stiff source; Holcomb, IEEE Trans. Power Delivery
1996, from memory).
"""

from __future__ import annotations

import math

import pytest

from core.energization.switching_event import switching_event
from core.errors import ParameterError
from core.protection import device_operation
from core.protection.protection_study import clearance_study, source_impedance_pu
from core.transformer import circuit_model

NAMEPLATE = circuit_model.Nameplate(
    rating_va=2.5e6,
    phases=3,
    frequency_hz=60,
    line_voltage_v=13.8e3,
    connection="wye_grounded",
    impedance_percent=5.75,
    x_over_r=7,
)
SOURCE = circuit_model.Source("fault_level", fault_va=50e6, x_over_r=10.0)


@pytest.fixture(scope="module")
def circuit() -> circuit_model.EquivalentCircuit:
    return circuit_model.equivalent_circuit(NAMEPLATE, SOURCE)


def test_source_impedance_is_rating_over_fault_level(
    circuit: circuit_model.EquivalentCircuit,
) -> None:
    # per-unit system: |Z_s| = S / S_sc on the transformer's base = 2.5 / 50
    assert source_impedance_pu(circuit, 2.5e6) == pytest.approx(2.5 / 50.0, rel=1e-9)


def test_an_instantaneous_setting_above_the_peak_rides_through_one_below_operates(
    circuit: circuit_model.EquivalentCircuit,
) -> None:
    rated = 2.5e6 / (math.sqrt(3.0) * 13.8e3)
    # a bound on the first peak from the air-core inductance alone (no resistance, no source:
    # the highest it can be), residual 0.8 pu and a knee at 1.2 pu
    lam_n = math.sqrt(2.0) * 13.8e3 / math.sqrt(3.0) / (2.0 * math.pi * 60.0)
    bound = (2.0 + 0.8 - 1.0) * lam_n / circuit.air_core_inductance_h
    # above the bound nothing can operate; at 2 x rated an instantaneous element operates on any
    # inrush (first peaks of 8-12 x rated are typical, common practice)
    high = device_operation.Relay(
        "H", "ieee_c37_112", "very_inverse", 3.0 * bound, 1.0, 3.0 * bound
    )
    low = device_operation.Relay("L", "ieee_c37_112", "very_inverse", 2.0 * rated, 0.5, 2.0 * rated)
    study = clearance_study(
        circuit,
        switching_event(circuit, 0.0, [0.8, -0.4, -0.4], 0.0),
        [high, low],
        rating_va=2.5e6,
        impedance_percent=5.75,
        duration_s=0.5,
        windows=False,
    )
    by_name = {d.device: d for d in study.evaluation.devices}
    assert not by_name["H"].ride_through.trips
    assert by_name["H"].ride_through.margin_ratio > 1.0
    assert by_name["L"].ride_through.trips
    assert by_name["L"].ride_through.margin_ratio < 1.0
    assert study.rated_current_a == pytest.approx(rated, rel=1e-12)
    assert study.damage is not None


def test_the_study_refuses_an_event_it_does_not_simulate(
    circuit: circuit_model.EquivalentCircuit,
) -> None:
    # a pre-insertion resistor is the mitigation study's to simulate; "closing" is given or worst
    relay = device_operation.Relay("R", "ieee_c37_112", "very_inverse", 200.0, 1.0, 2000.0)
    kw = {"rating_va": 2.5e6, "impedance_percent": 5.75, "duration_s": 0.5, "windows": False}
    resistor = switching_event(circuit, insertion_resistance_ohm=5.0, insertion_time_s=0.01)
    with pytest.raises(ParameterError) as err:
        clearance_study(circuit, resistor, [relay], **kw)  # type: ignore[arg-type]
    assert err.value.parameter == "event"
    with pytest.raises(ParameterError) as err:
        clearance_study(circuit, switching_event(circuit), [relay], closing="best", **kw)  # type: ignore[arg-type]
    assert err.value.parameter == "closing"
