"""core.energization.switching_event: one event built and checked once, its defaults, its warning.

References beside each check: Faraday's law for the Wb-turn to per-unit conversion (the crest
flux linkage of a sinusoidal winding voltage, sqrt(2)*V/omega, any circuits text); the default
residual fluxes summing to zero as a three-limb core's do (common practice).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from core.energization import inrush_study
from core.energization.switching_event import (
    RESIDUAL_FLUX_HIGH_PU,
    default_residual_flux_pu,
    residual_flux_pu_from_wb,
    residual_flux_warnings,
    switching_event,
    switching_events,
)
from core.errors import ParameterError
from core.supply import dip_cases
from core.supply.sources import UtilitySource
from core.transformer import circuit_model


def test_residual_flux_from_wb_is_per_unit_of_the_crest_flux(
    three_phase: circuit_model.EquivalentCircuit,
) -> None:
    # Faraday: a winding at V rms, omega = 2*pi*60, carries a crest flux linkage sqrt(2)*V/omega;
    # the 480 V wye unit's winding sees 480/sqrt(3) V
    crest = math.sqrt(2.0) * (480.0 / math.sqrt(3.0)) / (2.0 * math.pi * 60.0)
    got = residual_flux_pu_from_wb([0.5 * crest, -0.25 * crest, 0.0], three_phase)
    assert got == pytest.approx([0.5, -0.25, 0.0], rel=1e-12)


def test_default_residual_flux_sums_to_zero_on_three_phases() -> None:
    # common practice: the three limb fluxes of a three-limb core sum to zero; 0.8 pu is the upper
    # end of the usual 0.2-0.8 pu range (from memory)
    three = default_residual_flux_pu(3)
    assert three.tolist() == [0.8, -0.4, -0.4]
    assert math.fsum(three) == pytest.approx(0.0, abs=1e-15)
    assert default_residual_flux_pu(1).tolist() == [0.8]
    with pytest.raises(ParameterError) as err:
        default_residual_flux_pu(2)
    assert err.value.parameter == "phases"


def test_event_broadcasts_per_winding_and_per_pole(
    three_phase: circuit_model.EquivalentCircuit,
) -> None:
    event = switching_event(three_phase, 30.0, 0.5, 0.002)
    assert event.residual_flux_pu.tolist() == [0.5, 0.5, 0.5]
    assert event.pole_delay_s.tolist() == [0.002, 0.002, 0.002]
    assert event.plain
    assert switching_event(three_phase).residual_flux_pu.tolist() == [0.8, -0.4, -0.4]
    assert not switching_event(three_phase, insertion_resistance_ohm=5.0).plain


@pytest.mark.parametrize(
    ("kwargs", "parameter"),
    [
        ({"closing_angle_deg": math.nan}, "closing_angle_deg"),
        ({"residual_flux_pu": [0.1, 0.2]}, "residual_flux_pu"),
        ({"residual_flux_pu": [0.1, math.inf, 0.0]}, "residual_flux_pu"),
        ({"pole_delay_s": [0.0, 0.001]}, "pole_delay_s"),
        ({"insertion_resistance_ohm": -1.0}, "insertion_resistance_ohm"),
        ({"voltage_start_pu": 1.5}, "voltage_start_pu"),
        ({"voltage_rise_s": math.nan}, "voltage_rise_s"),
        ({"insertion_time_s": None}, "insertion_time_s"),
        ({"pole_delay_s": "soon"}, "pole_delay_s"),
    ],
)
def test_event_names_the_bad_input(
    three_phase: circuit_model.EquivalentCircuit, kwargs: dict[str, object], parameter: str
) -> None:
    with pytest.raises(ParameterError) as err:
        switching_event(three_phase, **kwargs)  # type: ignore[arg-type]
    assert err.value.parameter == parameter


def test_high_residual_flux_has_one_wording_everywhere(
    three_phase: circuit_model.EquivalentCircuit,
) -> None:
    res = np.array([0.95, -0.5, -0.45])
    assert residual_flux_warnings(np.array([RESIDUAL_FLUX_HIGH_PU, 0.0, 0.0])) == []
    (code, message), *rest = residual_flux_warnings(res)
    assert not rest
    assert code == "residual_flux_high"
    assert message.startswith("residual flux up to 0.95 pu")
    # the event, the inrush study and the dip study all state the same words
    event = switching_event(three_phase, 0.0, res)
    assert event.warnings == ((code, message),)
    study = inrush_study.peak_study(three_phase, event, method="analytic")
    assert (code, message) in study.warnings
    ideal = circuit_model.equivalent_circuit(
        circuit_model.Nameplate(2.5e6, 3, 60, 480, impedance_percent=5.75, x_over_r=7)
    )
    dip_warnings = dip_cases.check_inputs(
        UtilitySource(50e6, 10.0, 480.0, 60.0), ideal, switching_event(ideal, 0.0, res), 1.0, 0.5
    )
    assert (code, message) in dip_warnings


def test_study_refuses_an_event_it_does_not_model(
    three_phase: circuit_model.EquivalentCircuit,
    single_phase: circuit_model.EquivalentCircuit,
) -> None:
    # a resistor or ramp is the mitigation study's to simulate; an event of another circuit's
    # phase count cannot be read winding by winding
    with pytest.raises(ParameterError):
        inrush_study.peak_study(
            three_phase, switching_event(three_phase, voltage_start_pu=0.5), method="analytic"
        )
    with pytest.raises(ParameterError):
        inrush_study.peak_study(three_phase, switching_event(single_phase), method="analytic")


def test_closed_at_once_keeps_the_angle_and_flux_and_drops_the_timing(
    three_phase: circuit_model.EquivalentCircuit,
) -> None:
    # the hand methods close all poles together onto the rated source: only the angle and the
    # residual flux of the event remain
    event = switching_event(
        three_phase,
        40.0,
        (0.7, -0.3, -0.4),
        (0.0, 0.001, 0.002),
        insertion_resistance_ohm=2.0,
        insertion_time_s=0.01,
        voltage_start_pu=0.5,
        voltage_rise_s=0.1,
    )
    together = event.closed_at_once()
    assert together.plain
    assert together.closing_angle_deg == 40.0
    assert together.residual_flux_pu.tolist() == [0.7, -0.3, -0.4]
    assert together.pole_delay_s.tolist() == [0.0, 0.0, 0.0]
    assert together.warnings == event.warnings
    assert event.pole_delay_s.tolist() == [0.0, 0.001, 0.002]  # the event itself is unchanged


def test_events_equal_the_event_built_one_by_one(
    three_phase: circuit_model.EquivalentCircuit,
) -> None:
    # vector equals scalar: event k of the batch is the event switching_event builds from the
    # k-th values, warnings included
    angles = np.array([0.0, 90.0, 271.5])
    res = np.array([[0.8, -0.4, -0.4], [0.95, 0.0, -0.95], [0.1, 0.2, -0.3]])
    delays = np.array([[0.0, 0.001, 0.002], [0.0, 0.0, 0.0], [0.003, 0.0, 0.001]])
    batch = switching_events(three_phase, angles, res, delays)
    assert len(batch) == 3
    for k, got in enumerate(batch):
        one = switching_event(three_phase, float(angles[k]), res[k], delays[k])
        assert got.closing_angle_deg == one.closing_angle_deg
        assert np.array_equal(got.residual_flux_pu, one.residual_flux_pu)
        assert np.array_equal(got.pole_delay_s, one.pole_delay_s)
        assert got.warnings == one.warnings
        assert got.plain
    assert batch[1].warnings[0][0] == "residual_flux_high"
    # a scalar broadcasts to every event and winding
    assert switching_events(three_phase, [0.0, 1.0], 0.5)[1].residual_flux_pu.tolist() == [0.5] * 3


@pytest.mark.parametrize(
    ("angles", "res", "delays", "parameter"),
    [
        ([0.0, math.nan], 0.0, 0.0, "closing_angle_deg"),
        ([0.0, 1.0], [[0.1, 0.2]], 0.0, "residual_flux_pu"),
        ([0.0, 1.0], [[0.1, 0.2, math.inf]], 0.0, "residual_flux_pu"),
        ([0.0, 1.0], 0.0, [0.0, 0.0, 0.0, 0.0], "pole_delay_s"),
        ([0.0, 1.0], 0.0, "soon", "pole_delay_s"),
    ],
)
def test_events_name_the_bad_input(
    three_phase: circuit_model.EquivalentCircuit,
    angles: object,
    res: object,
    delays: object,
    parameter: str,
) -> None:
    with pytest.raises(ParameterError) as err:
        switching_events(three_phase, angles, res, delays)  # type: ignore[arg-type]
    assert err.value.parameter == parameter
