"""Reference values worked by hand from the standards' own equations and constants.

Each expected value is written twice: as the arithmetic on the standard's constants and as the
rounded result, so a reader can redo it on paper. The constants themselves were recalled from
memory, not read from the documents in this session; each block says so. Tolerances: 1e-12
relative against the arithmetic (same formula, float rounding only), and half a unit in the last
printed digit against the rounded literal.
"""

from __future__ import annotations

import numpy as np
import pytest

from core.protection import damage_curves, relay_curves

# --------------------------------------------------------------------------------------------
# IEEE Std C37.112-1996 (and -2018), Table 1: t = TD·(A/(M^p − 1) + B); t_r = TD·tr/(1 − M²).
# Constants MI 0.0515/0.1140/0.02/4.85, VI 19.61/0.491/2/21.6, EI 28.2/0.1217/2/29.1
# (from memory; the document was not at hand).
# --------------------------------------------------------------------------------------------
IEEE_C37_112_TABLE_1_CASES = [
    # (curve, time dial, M, arithmetic, rounded literal [s])
    ("very_inverse", 1.0, 10.0, 19.61 / (10.0**2 - 1.0) + 0.491, 0.6891),
    ("very_inverse", 2.0, 5.0, 2.0 * (19.61 / (5.0**2 - 1.0) + 0.491), 2.6162),
    ("very_inverse", 1.0, 2.0, 19.61 / 3.0 + 0.491, 7.0277),
    ("moderately_inverse", 1.0, 10.0, 0.0515 / (10.0**0.02 - 1.0) + 0.1140, 1.2068),
    ("moderately_inverse", 1.0, 2.0, 0.0515 / (2.0**0.02 - 1.0) + 0.1140, 3.8032),
    ("extremely_inverse", 1.0, 10.0, 28.2 / 99.0 + 0.1217, 0.4065),
    ("extremely_inverse", 1.0, 2.0, 28.2 / 3.0 + 0.1217, 9.5217),
]


@pytest.mark.parametrize(("curve", "td", "m", "arithmetic", "literal"), IEEE_C37_112_TABLE_1_CASES)
def test_ieee_c37_112_table_1_trip_times(
    curve: relay_curves.IeeeCurve, td: float, m: float, arithmetic: float, literal: float
) -> None:
    t = float(relay_curves.ieee_c37_112_trip_time(m, curve, td))
    assert t == pytest.approx(arithmetic, rel=1e-12)
    assert t == pytest.approx(literal, abs=5e-5)


IEEE_C37_112_RESET_CASES = [
    # (curve, time dial, M, arithmetic, rounded literal [s]); constants from memory (see above)
    ("very_inverse", 1.0, 0.0, 21.6 / (1.0 - 0.0), 21.6),
    ("very_inverse", 1.0, 0.5, 21.6 / (1.0 - 0.25), 28.8),
    ("moderately_inverse", 1.0, 0.5, 4.85 / 0.75, 6.4667),
    ("extremely_inverse", 2.0, 0.9, 2.0 * 29.1 / (1.0 - 0.81), 306.3158),
]


@pytest.mark.parametrize(("curve", "td", "m", "arithmetic", "literal"), IEEE_C37_112_RESET_CASES)
def test_ieee_c37_112_table_1_reset_times(
    curve: relay_curves.IeeeCurve, td: float, m: float, arithmetic: float, literal: float
) -> None:
    t = float(relay_curves.ieee_c37_112_reset_time(m, curve, td))
    assert t == pytest.approx(arithmetic, rel=1e-12)
    assert t == pytest.approx(literal, abs=5e-5)


# --------------------------------------------------------------------------------------------
# IEC 60255-151:2009, Table 1, curves A-C: t = TMS·k/(M^α − 1), SI 0.14/0.02, VI 13.5/1,
# EI 80/2 (from memory). Long-time inverse 120/1: BS 142 practice.
# --------------------------------------------------------------------------------------------
IEC_60255_151_TABLE_1_CASES = [
    # (curve, TMS, M, arithmetic, rounded literal [s])
    ("standard_inverse", 1.0, 10.0, 0.14 / (10.0**0.02 - 1.0), 2.9706),
    ("standard_inverse", 0.1, 2.0, 0.1 * 0.14 / (2.0**0.02 - 1.0), 1.0029),
    ("very_inverse", 1.0, 10.0, 13.5 / (10.0 - 1.0), 1.5),
    ("extremely_inverse", 1.0, 10.0, 80.0 / (100.0 - 1.0), 0.8081),
    ("long_time_inverse", 1.0, 10.0, 120.0 / (10.0 - 1.0), 13.3333),
]


@pytest.mark.parametrize(
    ("curve", "tms", "m", "arithmetic", "literal"), IEC_60255_151_TABLE_1_CASES
)
def test_iec_60255_151_table_1_trip_times(
    curve: relay_curves.IecCurve, tms: float, m: float, arithmetic: float, literal: float
) -> None:
    t = float(relay_curves.iec_60255_151_trip_time(m, curve, tms))
    assert t == pytest.approx(arithmetic, rel=1e-12)
    assert t == pytest.approx(literal, abs=5e-5)


# --------------------------------------------------------------------------------------------
# IEEE Std C57.12.00 short-circuit categories as used by IEEE Std C57.109-1993 clause 4:
# single-phase I 5-500, II 501-1667, III 1668-10 000, IV above; three-phase I 15-500,
# II 501-5000, III 5001-30 000, IV above (kVA; from memory).
# --------------------------------------------------------------------------------------------
C57_12_00_CATEGORY_BOUNDARIES = [
    (1, 5.0, "I"),
    (1, 500.0, "I"),
    (1, 501.0, "II"),
    (1, 1667.0, "II"),
    (1, 1668.0, "III"),
    (1, 10_000.0, "III"),
    (1, 10_001.0, "IV"),
    (3, 15.0, "I"),
    (3, 500.0, "I"),
    (3, 501.0, "II"),
    (3, 5000.0, "II"),
    (3, 5001.0, "III"),
    (3, 30_000.0, "III"),
    (3, 30_001.0, "IV"),
]


@pytest.mark.parametrize(("phases", "kva", "expected"), C57_12_00_CATEGORY_BOUNDARIES)
def test_c57_12_00_category_boundaries(phases: int, kva: float, expected: str) -> None:
    assert damage_curves.through_fault_category(kva, phases) == expected


# IEEE Std C57.109-1993 through-fault duration table for liquid-immersed units (values from
# memory; the table's origin in ANSI C57.92-1962 and its republication in C57.109-1993 read in
# Patterson & Price, "Transformer Overcurrent Protection Coordination", Table 2):
C57_109_TABLE = [(25.0, 2.0), (11.3, 10.0), (6.3, 30.0), (4.75, 60.0), (3.0, 300.0), (2.0, 1800.0)]


@pytest.mark.parametrize(("x", "seconds"), C57_109_TABLE)
def test_c57_109_thermal_table_points(x: float, seconds: float) -> None:
    # A Category I unit with Z = 4 % reaches 1/0.04 = 25 pu, so its curve spans the whole table
    i_r = 100.0
    t = damage_curves.through_fault_damage_time(x * i_r, 300.0, 3, i_r, 0.04)
    assert float(t) == pytest.approx(seconds, rel=1e-12)


def test_c57_109_thermal_end_is_not_1250_over_i_squared() -> None:
    # 1250/I² holds at the high-current end only (C57.109 clause 4, from memory): 2 s at 25 pu
    # and, for a low-impedance Category I unit (Z = 2.5 %, I_sc = 40 pu), 1250/30² = 1.3889 s at
    # 30 pu; at 2 pu the table's 1800 s, not 1250/4 = 312.5 s
    i_r = 100.0
    t = damage_curves.through_fault_damage_time(np.array([30.0, 2.0]) * i_r, 300.0, 3, i_r, 0.025)
    np.testing.assert_allclose(t, [1250.0 / 900.0, 1800.0], rtol=1e-12)
    assert float(t[1]) > 5.0 * 1250.0 / 4.0


def test_c57_109_category_ii_uses_the_transformer_impedance_alone() -> None:
    # Invented demo unit (service/examples.py): 2500 kVA three-phase, Z_T = 5.75 %, source
    # 250 MVA, so Z_S = 2.5/250 = 0.01 pu. Category II (C57.109, from memory):
    # I_sc = 1/Z_T = 17.391 pu, K = 2·I_sc² = 604.91 pu²·s from 0.7·I_sc = 12.174 pu. At 14 pu
    # (frequent faults): 604.91/196 = 3.0863 s; at 12 pu, below the 70 % start, the table
    # between 11.3 × (10 s) and 25 × (2 s): 10·(12/11.3)^(ln 0.2/ln(25/11.3)) = 8.853 s.
    i_r = 2500e3 / (np.sqrt(3.0) * 480.0)  # 3007 A on the 480 V winding
    i_sc = 1.0 / 0.0575
    k = 2.0 * i_sc**2
    assert i_sc == pytest.approx(17.3913, abs=5e-5)
    assert k == pytest.approx(604.915, abs=5e-3)
    args = (2500.0, 3, i_r, 0.0575, 0.01)
    t = damage_curves.through_fault_damage_time(np.array([14.0, 12.0]) * i_r, *args, frequent=True)
    np.testing.assert_allclose(t, [3.0863, 8.853], atol=5e-4)
    curve = damage_curves.through_fault_damage_curve(*args, frequent=True)
    assert curve.short_circuit_current == pytest.approx(i_sc * i_r, rel=1e-12)
    assert curve.mechanical_from_current == pytest.approx(0.7 * i_sc * i_r, rel=1e-12)
    # what the source lets flow, 1/(Z_T + Z_S) = 14.815 pu, bounds the protection check
    assert curve.fault_current == pytest.approx(i_r / 0.0675, rel=1e-12)


def test_c57_109_category_iii_uses_transformer_plus_source() -> None:
    # The same impedances on a 10 000 kVA (Category III) unit: I_sc = 1/(Z_T + Z_S) = 14.815 pu,
    # K = 2·I_sc² = 438.96 pu²·s from 0.5·I_sc = 7.407 pu (C57.109, from memory). At 12 pu:
    # 438.96/144 = 3.0483 s; infrequent faults: the table, 8.853 s.
    i_r = 10_000e3 / (np.sqrt(3.0) * 13_800.0)
    i_sc = 1.0 / (0.0575 + 0.01)
    k = 2.0 * i_sc**2
    assert i_sc == pytest.approx(14.8148, abs=5e-5)
    assert k == pytest.approx(438.957, abs=5e-4)
    args = (10_000.0, 3, i_r, 0.0575, 0.01)
    t = damage_curves.through_fault_damage_time(12.0 * i_r, *args, frequent=True)
    assert float(t) == pytest.approx(k / 144.0, rel=1e-12)
    assert float(t) == pytest.approx(3.0483, abs=5e-5)
    t_inf = damage_curves.through_fault_damage_time(12.0 * i_r, *args)
    assert float(t_inf) == pytest.approx(8.853, abs=5e-4)
