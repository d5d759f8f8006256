"""The mitigation options a study can weigh, and what each needs; inputs of
:mod:`core.mitigation.mitigation_study`.

Each option is a frozen dataclass with the values that define it; every value left as None is
chosen by the study and reported with its provenance. Defaults that are practice rather than
physics say so.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

from core.errors import ParameterError
from core.protection import damage_curves
from core.protection.device_operation import Device
from core.supply import dip_limits, sources
from core.supply.dip_limits import DipLimit
from core.supply.sources import BusLoad, ExcitationSpec
from core.transformer.circuit_model import Source

__all__ = [
    "DEFAULT_CLOSING_ERROR_MS",
    "DEFAULT_PRESET_MAX_PU",
    "DEFAULT_TAP_PERCENT",
    "KINDS",
    "ControlledClosing",
    "CoreMaterial",
    "Demagnetize",
    "DeviceCheck",
    "GeneratorSupply",
    "Option",
    "OtherWinding",
    "PreInsertionResistor",
    "PreMagnetize",
    "Ramp",
    "Rating",
    "Retap",
    "default_options",
]

#: Half-width of a controlled closing's timing error band [ms]. Common practice: controlled
#: switching of transformers is specified to about +-1 ms of closing-time scatter (from memory).
DEFAULT_CLOSING_ERROR_MS = 1.0
#: Largest flux a pre-magnetising circuit is taken to leave [pu of lambda_N]: the upper end of
#: the typical residual-flux range (0.2-0.8 pu, from memory), a modelling choice.
DEFAULT_PRESET_MAX_PU = 0.8
#: Tap what-if: 5 % more turns on the energised winding. Common practice: off-circuit taps of
#: +-2 x 2.5 %.
DEFAULT_TAP_PERCENT = 5.0
#: Ramp what-if: from zero to rated in 0.5 s, as a generator's soft start does (modelling choice).
DEFAULT_RAMP_RISE_S = 0.5


_G2 = dip_limits.iso_8528_5_class("G2")


def _in(name: str, value: float | None, low: float, high: float) -> None:
    if value is not None and not (math.isfinite(value) and low <= value <= high):
        raise ParameterError(name, value, f"in [{low:g}, {high:g}]")


@dataclass(frozen=True)
class ControlledClosing:
    """Point-on-wave closing aimed at the residual flux (see :mod:`core.mitigation.point_on_wave`).

    Attributes
    ----------
    strategy : str or None
        ``"simultaneous"``, ``"first_phase_then_quarter_cycle"`` or ``"independent"``; None for
        independent poles (simultaneous for a delta winding, whose windings need two poles).
    closing_error_ms : float
        Half-width of the closing-time error band, in [0, 5] [ms].
    """

    kind: ClassVar[str] = "controlled_closing"
    strategy: str | None = None
    closing_error_ms: float = DEFAULT_CLOSING_ERROR_MS

    def __post_init__(self) -> None:
        _in("closing_error_ms", self.closing_error_ms, 0.0, 5.0)


@dataclass(frozen=True)
class PreInsertionResistor:
    """A resistor in each breaker pole, bypassed after the insertion time.

    Attributes
    ----------
    resistance_ohm : float or None
        Per pole, in (0, 1e5]; None to size it (for the dip limit with a generator supply, else
        for the peak target, else the saturated-loop reactance) [ohm].
    insertion_time_s : float or None
        From closing to bypass, in (0, 1]; None for one cycle (modelling choice) [s].
    """

    kind: ClassVar[str] = "pre_insertion_resistor"
    resistance_ohm: float | None = None
    insertion_time_s: float | None = None

    def __post_init__(self) -> None:
        _in("resistance_ohm", self.resistance_ohm, 1e-9, 1e5)
        _in("insertion_time_s", self.insertion_time_s, 1e-4, 1.0)


@dataclass(frozen=True)
class Demagnetize:
    """The residual flux reduced before energising (e.g. by a decaying AC or DC sweep).

    Attributes
    ----------
    residual_fraction : float
        Share of the residual flux that remains, in [0, 1]; 0 is a fully demagnetised core [-].
    """

    kind: ClassVar[str] = "demagnetize"
    residual_fraction: float = 0.0

    def __post_init__(self) -> None:
        _in("residual_fraction", self.residual_fraction, 0.0, 1.0)


@dataclass(frozen=True)
class PreMagnetize:
    """The core pre-set to the flux that a simultaneous closing at a known instant matches.

    Attributes
    ----------
    max_flux_pu : float
        Largest flux the pre-magnetising circuit can leave, in (0, 1.2] [pu of lambda_N].
    closing_angle_deg : float or None
        Phase-A voltage angle of the closing; None to choose it (see
        :func:`core.mitigation.mitigation_study.preset_flux`) [deg].
    closing_error_ms : float
        Half-width of the closing-time error band, in [0, 5] [ms].
    """

    kind: ClassVar[str] = "pre_magnetize"
    max_flux_pu: float = DEFAULT_PRESET_MAX_PU
    closing_angle_deg: float | None = None
    closing_error_ms: float = DEFAULT_CLOSING_ERROR_MS

    def __post_init__(self) -> None:
        _in("max_flux_pu", self.max_flux_pu, 1e-3, 1.2)
        _in("closing_angle_deg", self.closing_angle_deg, -360.0, 360.0)
        _in("closing_error_ms", self.closing_error_ms, 0.0, 5.0)


@dataclass(frozen=True)
class Ramp:
    """The source voltage raised from a reduced level (a soft start or a reduced-voltage start).

    Attributes
    ----------
    start_pu : float
        Voltage at closing, in [0, 1) [pu of rated].
    hold_s : float
        Time held at ``start_pu``, in [0, 2] [s].
    rise_s : float
        Linear rise to rated after the hold, in [0, 2]; 0 is a step [s].
    """

    kind: ClassVar[str] = "ramp"
    start_pu: float = 0.0
    hold_s: float = 0.0
    rise_s: float = DEFAULT_RAMP_RISE_S

    def __post_init__(self) -> None:
        _in("start_pu", self.start_pu, 0.0, 0.999)
        _in("hold_s", self.hold_s, 0.0, 2.0)
        _in("rise_s", self.rise_s, 0.0, 2.0)


@dataclass(frozen=True)
class Retap:
    """Another tap on the energised winding (see :func:`core.transformer.variants.retap`).

    Attributes
    ----------
    turns_percent : float
        Change of the energised winding's turns, in [-20, 20] [%].
    """

    kind: ClassVar[str] = "tap"
    turns_percent: float = DEFAULT_TAP_PERCENT

    def __post_init__(self) -> None:
        _in("turns_percent", self.turns_percent, -20.0, 20.0)


@dataclass(frozen=True)
class CoreMaterial:
    """Another core material (see :func:`core.transformer.variants.with_material`).

    Attributes
    ----------
    material : str or None
        ``"grain_oriented"``, ``"amorphous"`` or ``"custom"``; None for the other class.
    nominal_flux_density_t, saturation_flux_density_t : float or None
        B_N and B_S [T].
    """

    kind: ClassVar[str] = "core_material"
    material: str | None = None
    nominal_flux_density_t: float | None = None
    saturation_flux_density_t: float | None = None


@dataclass(frozen=True)
class Rating:
    """Another rating with the same per-unit data (see
    :func:`core.transformer.variants.with_rating`).

    Attributes
    ----------
    rating_va : float or None
        In (0, 1e10]; None for the next standard rating above the present one [VA].
    """

    kind: ClassVar[str] = "rating"
    rating_va: float | None = None

    def __post_init__(self) -> None:
        _in("rating_va", self.rating_va, 1.0, 1e10)


@dataclass(frozen=True)
class OtherWinding:
    """The unit energised from its other winding (see
    :func:`core.transformer.variants.from_other_winding`).

    Attributes
    ----------
    line_voltage_v : float
        Rated line-to-line voltage of the other winding [V].
    connection : str
        Its connection.
    position : str or None
        Its position; None for the other position than the energised winding's.
    source : Source or None
        Supply at its terminals; None for an ideal source.
    """

    kind: ClassVar[str] = "other_winding"
    line_voltage_v: float
    connection: str
    position: str | None = None
    source: Source | None = None


Option = (
    ControlledClosing
    | PreInsertionResistor
    | Demagnetize
    | PreMagnetize
    | Ramp
    | Retap
    | CoreMaterial
    | Rating
    | OtherWinding
)
KINDS = tuple(
    c.kind
    for c in (
        ControlledClosing,
        PreInsertionResistor,
        Demagnetize,
        PreMagnetize,
        Ramp,
        Retap,
        CoreMaterial,
        Rating,
        OtherWinding,
    )
)


@dataclass(frozen=True)
class GeneratorSupply:
    """A generator energising the unit: its dip is judged for every option.

    Attributes
    ----------
    generator : Generator
        The machine (its X''_d and R_a are the source of the peak searches).
    limit : DipLimit
        The limit the dip is judged against; ISO 8528-5 G2 by default (from memory).
    excitation : Excitation, "unknown" or "constant_field"
        Regulator model.
    bus_load : BusLoad or None
        Load already on the bus.
    duration_s : float
        Simulated time of each dip, in [0.5, 30] [s].
    """

    generator: sources.Generator
    limit: DipLimit = _G2
    excitation: ExcitationSpec = "unknown"
    bus_load: BusLoad | None = None
    duration_s: float = 5.0

    def __post_init__(self) -> None:
        _in("duration_s", self.duration_s, 0.5, 30.0)


@dataclass(frozen=True)
class DeviceCheck:
    """The caller's protective devices, judged against every option's inrush.

    Attributes
    ----------
    devices : tuple of Relay, Fuse or Breaker
        On the energised side.
    duration_s : float
        Inrush record the devices are judged on, in [0.1, 5] [s].
    frequent_faults, insulation, opening_time_s, damage_current_factor
        As :func:`core.protection.protection_study.clearance_study`.
    """

    devices: tuple[Device, ...]
    duration_s: float = 2.0
    frequent_faults: bool = False
    insulation: damage_curves.Insulation = "liquid"
    opening_time_s: float | None = None
    damage_current_factor: float | None = None

    def __post_init__(self) -> None:
        if not self.devices:
            raise ParameterError("devices", 0, "at least one device")
        _in("duration_s", self.duration_s, 0.1, 5.0)


def default_options() -> tuple[Option, ...]:
    """Every option that needs no further data, with its defaults.

    Returns
    -------
    tuple of options
        Controlled closing, a pre-insertion resistor, demagnetising, pre-magnetising, a ramp,
        a 5 % tap, the other core material class and the next standard rating. Energising from
        the other winding needs that winding's data and is added by the caller.
    """
    return (
        ControlledClosing(),
        PreInsertionResistor(),
        Demagnetize(),
        PreMagnetize(),
        Ramp(),
        Retap(),
        CoreMaterial(),
        Rating(),
    )
