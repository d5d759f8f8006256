"""Tests of core.mitigation.pre_insertion: sizing a pre-insertion resistor and the energy it
absorbs."""

from __future__ import annotations

import math

import numpy as np
import pytest

from core.errors import ParameterError
from core.mitigation import pre_insertion


def test_smallest_resistance_inverts_a_known_metric() -> None:
    # metric 1/R (a current limited by the resistance alone): the smallest R with 1/R <= 0.05
    # is 20; the scan steps by 10^(1/2) and 9 bisections of log R leave a bracket of
    # 10^(1/2/2^9) - 1 = 0.22 %
    sized = pre_insertion.smallest_resistance(lambda r: 1.0 / r, 0.05, 1.0)
    assert sized.status == "found"
    assert sized.resistance_ohm == pytest.approx(20.0, rel=2.3e-3)
    assert sized.resistance_ohm >= 20.0  # the returned end meets the limit
    assert sized.metric <= 0.05
    assert sized.evaluations == pre_insertion.SCAN.size + pre_insertion.BISECTIONS


def test_smallest_resistance_edges() -> None:
    below = pre_insertion.smallest_resistance(lambda r: 1.0 / r, 1e3, 1.0)
    assert below.status == "below_range"
    assert below.resistance_ohm == pytest.approx(0.01)
    never = pre_insertion.smallest_resistance(lambda r: 1.0 + 1.0 / r, 0.5, 1.0)
    assert never.status == "not_reached"
    assert never.resistance_ohm == pytest.approx(100.0)  # the lowest metric scanned
    for kwargs, name in (
        ({"limit": math.nan}, "limit"),
        ({"scale_ohm": 0.0}, "scale_ohm"),
        ({"scan": [1.0]}, "scan"),
        ({"bisections": -1}, "bisections"),
    ):
        args = {"metric": lambda r: r, "limit": 1.0, "scale_ohm": 1.0, **kwargs}
        with pytest.raises(ParameterError) as info:
            pre_insertion.smallest_resistance(**args)  # type: ignore[arg-type]
        assert info.value.parameter == name


def test_energy_of_a_constant_current() -> None:
    # Joule's law: R * I^2 * t per line
    t = np.linspace(0.0, 0.1, 1001)
    i = np.full((3, t.size), 10.0)
    e = pre_insertion.insertion_energy_j(t, i, 2.0, 0.05)
    assert float(e) == pytest.approx(3 * 2.0 * 100.0 * 0.05, rel=1e-12)
    # an insertion ending between samples is interpolated into the last interval
    e2 = pre_insertion.insertion_energy_j(t, i, 2.0, 0.05005)
    assert float(e2) == pytest.approx(3 * 2.0 * 100.0 * 0.05005, rel=1e-12)


def test_energy_of_a_sinusoid_over_whole_cycles() -> None:
    # R * I_pk^2 / 2 * t over whole cycles; trapezoid of sin^2 on a uniform grid over whole
    # periods is exact to rounding
    f = 60.0
    t = np.arange(0, 129 * 4) / (128 * f)
    i = 100.0 * np.sin(2 * np.pi * f * t)
    e = pre_insertion.insertion_energy_j(t, i[None, :], 0.5, 3 / f)
    assert float(e) == pytest.approx(0.5 * 100.0**2 / 2 * 3 / f, rel=1e-12)


def test_energy_record_and_shape() -> None:
    t = np.linspace(0.0, 0.01, 11)
    # a batch of two cases, two lines each
    i = np.ones((2, 2, t.size))
    e = pre_insertion.insertion_energy_j(t, i, 1.0, 1.0)  # beyond the record: the whole record
    np.testing.assert_allclose(e, [0.02, 0.02])
    assert float(pre_insertion.insertion_energy_j(t, i[0], 1.0, 0.0)) == 0.0
    with pytest.raises(ParameterError):
        pre_insertion.insertion_energy_j(t[:5], i, 1.0, 0.01)
