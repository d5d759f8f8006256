"""Tests of core.supply.dip_limits: the ISO 8528-5 classes as recalled, and the verdicts against
them.

The class values are from memory, not checked against the standard; the tests
check the table as recalled and the judging logic, including the undecided cases.
"""

from __future__ import annotations

import math

from core.supply import dip_limits


def test_iso_8528_5_classes_from_memory() -> None:
    # ISO 8528-5 performance classes as recalled (from memory, not checked
    # against the standard): G1 -25 %/10 s, G2 -20 %/6 s, G3 -15 %/4 s, G4 by agreement.
    got = {c.name: (c.max_dip_percent, c.max_recovery_s) for c in dip_limits.ISO_8528_5_CLASSES}
    assert got == {"G1": (25.0, 10.0), "G2": (20.0, 6.0), "G3": (15.0, 4.0), "G4": (None, None)}
    assert all("from memory" in c.source for c in dip_limits.ISO_8528_5_CLASSES)


def test_verdicts() -> None:
    v = {x.limit.name: x for x in dip_limits.verdicts(18.0, 5.0, simulated_s=10.0)}
    assert (v["G1"].passed, v["G2"].passed, v["G3"].passed, v["G4"].passed) == (
        True,
        True,
        False,
        None,
    )
    assert v["G3"].dip_ok is False
    assert v["G3"].recovery_ok is False
    not_recovered = {x.limit.name: x for x in dip_limits.verdicts(10.0, math.nan, simulated_s=5.0)}
    assert not_recovered["G3"].passed is False  # 5 s simulated covers the 4 s limit
    assert not_recovered["G1"].passed is None  # 5 s cannot judge the 10 s limit
    own = dip_limits.verdicts(4.0, 0.5, (dip_limits.DipLimit("site", 5.0, 1.0),))
    assert own[0].passed is True
