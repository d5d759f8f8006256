"""Fixtures shared by the core tests: one distribution unit, three phase and one phase of it."""

from __future__ import annotations

import math

import pytest

from core import transformer

# 2.5 MVA, 480 V, 60 Hz distribution unit (typical nameplate values, common practice)
THREE_PHASE = transformer.Nameplate(
    rating_va=2.5e6,
    phases=3,
    frequency_hz=60,
    line_voltage_v=480,
    connection="wye_grounded",
    position="inner",
    impedance_percent=5.75,
    x_over_r=7,
    no_load_current_percent=0.8,
)
# one phase of the same unit
SINGLE_PHASE = transformer.Nameplate(
    rating_va=2.5e6 / 3,
    phases=1,
    frequency_hz=60,
    line_voltage_v=480 / math.sqrt(3),
    position="inner",
    impedance_percent=5.75,
    x_over_r=7,
    no_load_current_percent=0.8,
)


@pytest.fixture(scope="module")
def three_phase() -> transformer.EquivalentCircuit:
    return transformer.equivalent_circuit(THREE_PHASE)


@pytest.fixture(scope="module")
def single_phase() -> transformer.EquivalentCircuit:
    return transformer.equivalent_circuit(SINGLE_PHASE)
