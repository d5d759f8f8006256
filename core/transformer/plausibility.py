"""Plausibility of a nameplate and its supply: the checks an engineer makes by eye.

Two rules, both on the energised side of the unit:

* **Source strength** (an error). A Thevenin source of short-circuit power S_sc delivers at most
  S_sc/2 into any unity-power-factor load, so a source with S_sc below twice the unit's rating
  cannot carry the unit's rated load at any voltage. Such a "source" is a description error
  (typically MVA typed as kVA), and the energisation model, built for a unit on a supply that
  can carry it, does not apply (its flux solves stop converging near S_sc = S_r).
* **Rating and voltage** (a warning). Transformers built to IEEE C57.12.00 / IEC 60076 practice
  have rated line currents from a fraction of an ampere (the smallest distribution units at the
  highest distribution voltages) to tens of kiloamperes (generator step-up and furnace
  low-voltage windings); a current outside 0.1 A to 100 kA almost always means a unit error,
  most often volts typed as kilovolts (480 for 0.48 kV). A larger unit typed that way can keep
  a current inside the range (2500 kVA at "480 kV" draws 3 A), so a voltage that equals a
  nominal low-voltage level in volts and no high-voltage level in kilovolts (480, 208, ...) is
  flagged as well.
"""

from __future__ import annotations

import math

from core.errors import ParameterError
from core.transformer.per_unit import rated_line_current_a

__all__ = [
    "HIGHEST_RATED_CURRENT_A",
    "LOWEST_RATED_CURRENT_A",
    "LOW_VOLTAGE_LEVELS_V",
    "SOURCE_STRENGTH_FACTOR",
    "check_source_strength",
    "rating_voltage_warnings",
    "short_circuit_power_va",
]

#: Smallest short-circuit power of a supply, as a multiple of the unit's rating: twice, the
#: maximum-power-transfer bound (see :func:`check_source_strength`) [-].
SOURCE_STRENGTH_FACTOR = 2.0
#: Rated line current below which a nameplate is flagged [A]: the smallest distribution units
#: (5 kVA single-phase, 34.5 kV class, IEEE C57.12.20 ratings; from memory) draw about 0.15 A.
LOWEST_RATED_CURRENT_A = 0.1
#: Rated line current above which a nameplate is flagged [A]: the largest windings in service
#: (generator step-up and arc-furnace low-voltage windings) carry up to about 100 kA (from
#: memory).
HIGHEST_RATED_CURRENT_A = 100_000.0
#: Nominal low-voltage system levels in volts (ANSI C84.1 and IEC 60038 low-voltage tables, from
#: memory) that are not high-voltage levels in kilovolts (400 V is left out: 400 kV is a
#: transmission level). A voltage of that many kilovolts is most likely volts typed as kilovolts.
LOW_VOLTAGE_LEVELS_V = (120.0, 208.0, 240.0, 277.0, 347.0, 415.0, 480.0, 600.0, 690.0)


def short_circuit_power_va(
    line_voltage_v: float, resistance_ohm: float, reactance_ohm: float
) -> float:
    """Short-circuit power of a source given by its per-phase impedance [VA].

    Parameters
    ----------
    line_voltage_v : float
        Line-to-line rms voltage (the winding voltage for a single-phase unit) [V].
    resistance_ohm : float
        Source resistance per phase, wye-equivalent [ohm].
    reactance_ohm : float
        Source reactance per phase, wye-equivalent [ohm].

    Returns
    -------
    float
        S_sc = V_LL^2/|Z_s|, infinite for a zero impedance [VA].

    Notes
    -----
    The inverse of the fault-level conversion |Z_s| = V_LL^2/S_sc (common practice).

    References
    ----------
    IEC 60909-0, the short-circuit power S_k'' = sqrt(3)*U_n*I_k'' with
    I_k'' = U_n/(sqrt(3)*|Z_k|) (from memory; voltage factor c taken as 1).
    """
    z = math.hypot(resistance_ohm, reactance_ohm)
    return math.inf if z == 0.0 else line_voltage_v * line_voltage_v / z


def check_source_strength(
    rating_va: float, line_voltage_v: float, resistance_ohm: float, reactance_ohm: float
) -> None:
    """Raise when the source cannot carry the unit's rated load at any voltage.

    Parameters
    ----------
    rating_va : float
        Rated power of the unit [VA].
    line_voltage_v : float
        Line-to-line rms voltage at the energised terminals (the winding voltage for a
        single-phase unit) [V].
    resistance_ohm : float
        Source resistance per phase, wye-equivalent [ohm].
    reactance_ohm : float
        Source reactance per phase, wye-equivalent [ohm].

    Raises
    ------
    ParameterError
        ``source.short_circuit_power_va`` when S_sc < 2*S_r, with the smallest short-circuit
        power and the largest source impedance the rule allows.

    Notes
    -----
    A voltage V behind Z_s = R_s + jX_s delivers P = V^2*R_L/((R_s + R_L)^2 + X_s^2) into a load
    resistance R_L; the maximum, at R_L = |Z_s|, is P_max = V^2/(2*(|Z_s| + R_s)) <= V^2/(2*|Z_s|)
    = S_sc/2 per phase and in total. A unit rated S_r on a source with S_sc < 2*S_r can therefore
    not be loaded to its rating at unity power factor, at any voltage.

    References
    ----------
    Maximum power transfer into a resistive load from a source with complex internal impedance:
    a consequence of Ohm's and Kirchhoff's laws (e.g. any circuit-analysis textbook's
    Thevenin-equivalent chapter).
    """
    s_sc = short_circuit_power_va(line_voltage_v, resistance_ohm, reactance_ohm)
    need = SOURCE_STRENGTH_FACTOR * rating_va
    if s_sc < need * (1.0 - 1e-9):  # the bound itself passes despite the fault-level round trip
        z_max = line_voltage_v * line_voltage_v / need
        raise ParameterError(
            "source.short_circuit_power_va",
            s_sc,
            f"at least {need:.6g} VA, twice the unit's rating (a source impedance of at most "
            f"{z_max:.6g} ohm): a weaker source cannot carry the unit's rated load at any "
            "voltage (maximum power transfer, S_sc/2)",
        )


def rating_voltage_warnings(
    rating_va: float, phases: int, line_voltage_v: float
) -> tuple[tuple[str, str], ...]:
    """Warnings (code, message) on a rating and voltage that do not belong together.

    Parameters
    ----------
    rating_va : float
        Rated power [VA].
    phases : int
        1 or 3 [-].
    line_voltage_v : float
        Rated line-to-line voltage of the energised winding (the winding voltage for a
        single-phase unit) [V].

    Returns
    -------
    tuple of (str, str)
        ``("implausible_rating_voltage", message)`` when the rated line current lies outside
        [LOWEST_RATED_CURRENT_A, HIGHEST_RATED_CURRENT_A]; ``("voltage_looks_like_volts",
        message)`` when the voltage in kilovolts is one of LOW_VOLTAGE_LEVELS_V; empty
        otherwise.

    Notes
    -----
    I_r = S/(sqrt(3)*V_LL) for three phases, S/V for one (IEEE C57.12.00 rated current). The
    bounds are common practice from the standard rating and voltage tables (from memory): the
    smallest distribution units at the highest distribution voltages draw about 0.15 A, the
    largest low-voltage windings up to about 100 kA.

    References
    ----------
    IEEE Std C57.12.00 (rated current, voltage classes); IEEE Std C57.12.20 and IEC 60076-1
    (rating ranges) -- the ranges from memory.
    """
    i_r = rated_line_current_a(rating_va, phases, line_voltage_v)
    kv = line_voltage_v / 1e3
    pair = f"{rating_va / 1e3:.6g} kVA at {kv:.6g} kV"
    out: list[tuple[str, str]] = []
    if kv in LOW_VOLTAGE_LEVELS_V:
        out.append(
            (
                "voltage_looks_like_volts",
                f"{kv:g} kV is not a high-voltage system level but {kv:g} V is a low-voltage one "
                f"(ANSI C84.1 / IEC 60038, from memory): if the winding is rated {kv:g} V, the "
                f"voltage is {kv / 1e3:g} kV",
            )
        )
    if i_r < LOWEST_RATED_CURRENT_A:
        out.append(
            (
                "implausible_rating_voltage",
                f"rated line current {i_r:.3g} A ({pair}) is below {LOWEST_RATED_CURRENT_A:g} A, "
                "less than the smallest distribution transformers draw (about 0.15 A, from "
                "memory): check that the voltage is in kilovolts (480 V is 0.48 kV) and the "
                "rating in kVA",
            )
        )
    if i_r > HIGHEST_RATED_CURRENT_A:
        out.append(
            (
                "implausible_rating_voltage",
                f"rated line current {i_r:.3g} A ({pair}) is above {HIGHEST_RATED_CURRENT_A:g} "
                "A, more than the largest low-voltage windings carry (about 100 kA, from "
                "memory): check that the rating is in kVA (not VA) and the voltage in kilovolts",
            )
        )
    return tuple(out)
