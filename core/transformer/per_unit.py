"""Per-unit bases of the energised winding.

For a winding of a unit rated S [VA] with m windings on the energised side (1 for a
single-phase unit, 3 for a three-phase unit) and rms voltage V_w across each winding:

* rated winding current I_w = S/(m*V_w) [A];
* base impedance Z_b = V_w^2/(S/m) [ohm];
* nominal peak flux linkage lambda_N = sqrt(2)*V_w/omega [Wb-turn], the crest of the
  steady-state flux at rated voltage (the flux base of every ``*_pu`` flux).

The line current base of a three-phase unit is I_r = S/(sqrt(3)*V_LL) whatever the connection.
These are the ordinary per-unit definitions (common practice; e.g. IEEE Std C57.12.00 uses the
same rated current).
"""

from __future__ import annotations

import math

__all__ = [
    "base_impedance_ohm",
    "nominal_flux_linkage_wb",
    "rated_line_current_a",
    "rated_winding_current_a",
    "winding_voltage_v",
]


def winding_voltage_v(line_voltage_v: float, phases: int, connection: str) -> float:
    """Rms voltage across one energised winding [V].

    Parameters
    ----------
    line_voltage_v : float
        Rated line-to-line rms voltage of the energised side; for a single-phase unit the
        winding voltage itself [V].
    phases : int
        1 or 3 [-].
    connection : str
        ``"wye_grounded"``, ``"wye"`` or ``"delta"`` (ignored for one phase) [-].

    Returns
    -------
    float
        V_LL for delta, V_LL/sqrt(3) for wye, the given voltage for one phase [V].
    """
    if phases == 1 or connection == "delta":
        return line_voltage_v
    return line_voltage_v / math.sqrt(3.0)


def rated_winding_current_a(rating_va: float, phases: int, winding_v: float) -> float:
    """Rated rms current of one winding, S/(m*V_w) [A] for rating [VA] and winding voltage [V].

    Parameters
    ----------
    rating_va : float
        Rated power of the unit [VA].
    phases : int
        1 or 3 [-].
    winding_v : float
        Rated rms voltage across the winding [V].
    """
    return rating_va / (phases * winding_v)


def rated_line_current_a(rating_va: float, phases: int, line_voltage_v: float) -> float:
    """Rated rms line current [A]: S/V for one phase, S/(sqrt(3)*V_LL) for three [VA, V].

    Parameters
    ----------
    rating_va : float
        Rated power of the unit [VA].
    phases : int
        1 or 3 [-].
    line_voltage_v : float
        Rated line-to-line rms voltage; for one phase the winding voltage [V].
    """
    if phases == 1:
        return rating_va / line_voltage_v
    return rating_va / (math.sqrt(3.0) * line_voltage_v)


def base_impedance_ohm(rating_va: float, phases: int, winding_v: float) -> float:
    """Base impedance of one winding, V_w^2/(S/m) [ohm] for rating [VA] and voltage [V].

    Parameters
    ----------
    rating_va : float
        Rated power of the unit [VA].
    phases : int
        1 or 3 [-].
    winding_v : float
        Rated rms voltage across the winding [V].
    """
    return winding_v * winding_v / (rating_va / phases)


def nominal_flux_linkage_wb(winding_v: float, frequency_hz: float) -> float:
    """Crest of the steady-state flux linkage at rated voltage, sqrt(2)*V/omega [Wb-turn].

    Parameters
    ----------
    winding_v : float
        Rated rms voltage across the winding [V].
    frequency_hz : float
        Power frequency [Hz].
    """
    return math.sqrt(2.0) * winding_v / (2.0 * math.pi * frequency_hz)
