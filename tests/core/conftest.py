"""Fixtures shared by the core tests: one distribution unit, three phase and one phase of it."""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable
from typing import Any

import numpy as np
import pytest

from core.transformer import circuit_model

# 2.5 MVA, 480 V, 60 Hz distribution unit (typical nameplate values, common practice)
THREE_PHASE = circuit_model.Nameplate(
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
SINGLE_PHASE = circuit_model.Nameplate(
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
def three_phase() -> circuit_model.EquivalentCircuit:
    return circuit_model.equivalent_circuit(THREE_PHASE)


@pytest.fixture(scope="module")
def single_phase() -> circuit_model.EquivalentCircuit:
    return circuit_model.equivalent_circuit(SINGLE_PHASE)


def _identical(a: Any, b: Any, path: str = "") -> None:
    """Every field equal bit for bit (arrays by np.array_equal, nan equal to nan)."""
    if dataclasses.is_dataclass(a) and not isinstance(a, type):
        assert type(a) is type(b), path
        for f in dataclasses.fields(a):
            _identical(getattr(a, f.name), getattr(b, f.name), f"{path}.{f.name}")
    elif isinstance(a, np.ndarray):
        assert a.shape == b.shape, path
        assert np.array_equal(a, b, equal_nan=True), path
    elif isinstance(a, tuple):
        assert len(a) == len(b), path
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            _identical(x, y, f"{path}[{i}]")
    elif isinstance(a, float) and math.isnan(a):
        assert isinstance(b, float), path
        assert math.isnan(b), path
    else:
        assert a == b, f"{path}: {a!r} != {b!r}"


@pytest.fixture
def assert_identical() -> Callable[[Any, Any], None]:
    """Checks two results (dataclasses, arrays, tuples, numbers) are equal bit for bit."""
    return _identical
