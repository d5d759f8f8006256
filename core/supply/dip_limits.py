"""Limits on a generating set's transient voltage dip and recovery, and verdicts against them.

Models the ISO 8528-5 performance classes G1-G4 (the largest transient voltage deviation on a
load increase and the voltage recovery time), a caller's own limit, and the judgement of a
computed dip and recovery against each: passed, failed, or undecided where a limit is set by
agreement or the simulated time is too short to judge a recovery limit.

Limits: the class values are from memory, not read from the standard; verify
them against ISO 8528-5. The standard states them for specified load steps at rated voltage;
applying them to a transformer inrush is the usual practice, not the standard's own case. The dip
and recovery judged here are computed elsewhere (:mod:`core.supply.dip`, or the hand method of
:mod:`core.supply.sources`), and how they are measured is defined there.

References
----------
ISO 8528-5, generating sets driven by reciprocating internal combustion engines, performance
classes G1-G4 (transient voltage deviation, recovery time) -- values from memory.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from core import checks
from core.errors import ParameterError

__all__ = [
    "ISO_8528_5_CLASSES",
    "DipLimit",
    "Verdict",
    "iso_8528_5_class",
    "verdicts",
]


@dataclass(frozen=True)
class DipLimit:
    """A limit on the transient voltage dip and its recovery.

    Attributes
    ----------
    name : str
        E.g. ``"G2"`` or a caller's name.
    max_dip_percent : float or None
        Largest dip [% of the pre-event voltage]; None when set by agreement.
    max_recovery_s : float or None
        Longest recovery time [s]; None when not limited or set by agreement.
    source : str
        Where the limit comes from.
    """

    name: str
    max_dip_percent: float | None
    max_recovery_s: float | None
    source: str = "given"

    def __post_init__(self) -> None:
        if self.max_dip_percent is not None:
            checks.in_range("limit.max_dip_percent", self.max_dip_percent, 0.0, 100.0)
        if self.max_recovery_s is not None:
            checks.in_range("limit.max_recovery_s", self.max_recovery_s, 0.0, 600.0)


_ISO = (
    "ISO 8528-5, performance class {c}: transient voltage deviation on load increase and "
    "voltage recovery time (values from memory, verify against the standard)"
)
# ISO 8528-5 performance classes, from memory: G1 -25 %/10 s, G2 -20 %/6 s,
# G3 -15 %/4 s, G4 by agreement. The standard states them for specified load steps at rated
# voltage; applying them to an inrush is the usual practice, not the standard's own case.
ISO_8528_5_CLASSES: tuple[DipLimit, ...] = (
    DipLimit("G1", 25.0, 10.0, _ISO.format(c="G1")),
    DipLimit("G2", 20.0, 6.0, _ISO.format(c="G2")),
    DipLimit("G3", 15.0, 4.0, _ISO.format(c="G3")),
    DipLimit(
        "G4",
        None,
        None,
        "ISO 8528-5, class G4: by agreement between manufacturer and customer (from memory)",
    ),
)


@dataclass(frozen=True)
class Verdict:
    """Whether a dip and recovery meet a limit; None where it cannot be judged."""

    limit: DipLimit
    dip_ok: bool | None
    recovery_ok: bool | None
    passed: bool | None
    note: str


def iso_8528_5_class(name: str) -> DipLimit:
    """The ISO 8528-5 class limit named ``"G1"`` .. ``"G4"`` (values from memory).

    Parameters
    ----------
    name : str
        Performance class G1, G2 or G3 [-].
    """
    for lim in ISO_8528_5_CLASSES:
        if lim.name == name:
            return lim
    raise ParameterError("limit", name, "G1, G2, G3, G4 or a DipLimit")


def verdicts(
    dip_percent: float,
    recovery_time_s: float,
    limits: tuple[DipLimit, ...] = ISO_8528_5_CLASSES,
    simulated_s: float = math.inf,
    recovery_reliable: bool = True,
) -> tuple[Verdict, ...]:
    """Judge a dip and its recovery against limits.

    Parameters
    ----------
    dip_percent : float
        Dip [% of the pre-event voltage].
    recovery_time_s : float
        Recovery time, nan when not recovered within the simulated time [s].
    limits : tuple of DipLimit
        Default: the ISO 8528-5 classes (from memory) [-].
    simulated_s : float
        Simulated time: an unrecovered voltage fails a recovery limit only if this covers it [s].
    recovery_reliable : bool
        False when the recovery time measures an oscillation of a poorly damped regulator
        (:attr:`core.supply.dip.DipStudy.recovery_reliable`): recovery limits are then not judged.
        [-]

    Returns
    -------
    tuple of Verdict
        One per limit; ``passed`` is None for a limit set by agreement or not decidable.
    """
    out = []
    for lim in limits:
        dip_ok = None if lim.max_dip_percent is None else dip_percent <= lim.max_dip_percent
        rec_ok: bool | None = None
        note = ""
        if lim.max_recovery_s is not None:
            if not recovery_reliable:
                note = (
                    "recovery not judged: the regulator is poorly damped, so the recovery time "
                    "is not reliable (warning regulator_poorly_damped)"
                )
            elif math.isfinite(recovery_time_s):
                rec_ok = recovery_time_s <= lim.max_recovery_s
            elif simulated_s >= lim.max_recovery_s:
                rec_ok = False
            else:
                note = "simulation shorter than the recovery limit; recovery undetermined"
        if dip_ok is None and rec_ok is None:
            passed = None
            note = note or "limits by agreement: no verdict"
        elif dip_ok is False or rec_ok is False:
            passed = False
        elif dip_ok and (rec_ok or lim.max_recovery_s is None):
            passed = True
        else:
            passed = None
        out.append(Verdict(lim, dip_ok, rec_ok, passed, note))
    return tuple(out)
