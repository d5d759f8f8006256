"""core.supply.dip_cases: a dip case's pre-event steady state, and a run that holds it.

Reference: the phasor solution of the source behind its impedance feeding a constant-impedance
load, written out here from Kirchhoff's laws (V_bus = 1 pu; I_L = V_bus/Z_L with
Z_L = V_ph²/(S/3)*; E = V_bus + (R + jX)·I_L). Integrated from that state with the
transformer's poles still open, nothing switches, so the bus stays at 1 pu and the EMF at |E|.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pytest

from core.energization.switching_event import switching_event
from core.errors import ParameterError
from core.supply.dip_cases import SourceParameters, build_case, check_inputs, cycle_steps, run
from core.supply.sources import UtilitySource
from core.transformer import circuit_model

F_HZ = 60.0
V_LL = 480.0
# the demo's 1250 kVA, 480 V machine behind its X''d = 0.15 pu (0.02765 ohm) and R_a, in ohm
R_OHM, X_OHM = 0.00138, 0.02765
LOAD = (1.0e6, 0.3e6)  # W, var at rated voltage


def test_open_poles_keep_the_bus_at_its_pre_event_voltage() -> None:
    circuit = circuit_model.equivalent_circuit(
        circuit_model.Nameplate(2.5e6, 3, F_HZ, V_LL, impedance_percent=5.75, x_over_r=7)
    )
    src = SourceParameters(V_LL, R_OHM, X_OHM / (2.0 * math.pi * F_HZ), 1.25e6)
    duration = 0.1
    # every pole closes in the last cycle: the transformer takes no part before it
    late = duration - 1.0 / (2.0 * F_HZ)  # in the last cycle
    event = switching_event(circuit, 0.0, np.zeros(3), late)
    case = build_case(src, circuit, event, LOAD, 1.0)
    raw = run([case], F_HZ, V_LL / math.sqrt(3.0), duration, 128, 0, event=event)
    cycles = raw.v_rms_pu.shape[-1]
    assert cycles == round(duration * F_HZ)
    early = raw.v_rms_pu[0, :, : cycles - 1]
    assert early == pytest.approx(1.0, abs=1e-6)
    # Kirchhoff, by hand: the EMF behind the source impedance
    v_ph = V_LL / math.sqrt(3.0)
    s_ph = complex(*LOAD) / 3.0
    z_load = v_ph**2 / s_ph.conjugate()
    i_load = v_ph / z_load
    emf = abs(v_ph + complex(R_OHM, X_OHM) * i_load) / v_ph
    assert raw.emf_pu[0, : cycles - 1] == pytest.approx(emf, rel=1e-6)


def test_cycle_steps_counts_whole_cycles() -> None:
    # whole cycles up to the duration (rounded to the nearest whole cycle), each of the steps
    assert cycle_steps(60.0, 0.5, 128) == 30 * 128
    assert cycle_steps(50.0, 0.5, 200) == 25 * 200


@pytest.mark.parametrize(
    ("kwargs", "parameter"),
    [
        ({"residual_flux_pu": 5.5}, "residual_flux_pu"),
        ({"voltage_start_pu": 0.5, "voltage_rise_s": 0.1}, "event"),
        ({"insertion_resistance_ohm": 1.0, "insertion_time_s": 601.0}, "insertion_time_s"),
        ({"pole_delay_s": 0.5}, "pole_delay_s"),
    ],
)
def test_inputs_refuse_what_the_dip_model_does_not_take(
    kwargs: dict[str, Any], parameter: str
) -> None:
    # an event is checked once when built; the dip adds its own bounds: |b_R| <= 5 pu, no ramp
    # (not modelled), a bypass within 600 s, every pole within the 0.5 s simulated
    circuit = circuit_model.equivalent_circuit(
        circuit_model.Nameplate(2.5e6, 3, F_HZ, V_LL, impedance_percent=5.75, x_over_r=7)
    )
    source = UtilitySource(50e6, 10.0, V_LL, F_HZ)
    event = switching_event(circuit, **kwargs)
    with pytest.raises(ParameterError) as err:
        check_inputs(source, circuit, event, 1.0, 0.5)
    assert err.value.parameter == parameter


def test_inputs_refuse_an_event_of_another_phase_count() -> None:
    circuit = circuit_model.equivalent_circuit(
        circuit_model.Nameplate(2.5e6, 3, F_HZ, V_LL, impedance_percent=5.75, x_over_r=7)
    )
    single = circuit_model.equivalent_circuit(
        circuit_model.Nameplate(50e3, 1, F_HZ, 240, impedance_percent=2.0, x_over_r=3)
    )
    with pytest.raises(ParameterError) as err:
        check_inputs(
            UtilitySource(50e6, 10.0, V_LL, F_HZ), circuit, switching_event(single), 1.0, 0.5
        )
    assert err.value.parameter == "event"
