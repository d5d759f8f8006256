"""A three-phase energisation circuit given directly in SI units.

The unit is three identical windings, each a resistance in series with a saturating
magnetising branch whose flux linkage [Wb-turn] against current [A] is the caller's curve,
connected grounded wye, floating wye or delta, behind a source of resistance and inductance per
phase. Nothing is derived from a nameplate: the numbers are those a general-purpose circuit
simulator would be given, so that a case can be rebuilt there and compared.

The winding's rated rms voltage sets the nominal flux linkage lambda_N = sqrt(2)*V_w/omega and
the source EMF (the line voltage is sqrt(3)*V_w for a wye, V_w for a delta); the rated line
current, when given, is only the base of the x-rated values.

Limits: the three windings share one curve (a symmetrical bank) and are magnetically
independent, as for the nameplate circuit (:mod:`core.transformer.circuit_model`).
"""

from __future__ import annotations

import math

from core import checks
from core.errors import ParameterError
from core.transformer import per_unit
from core.transformer.circuit_model import (
    CONNECTIONS,
    Assumption,
    EquivalentCircuit,
    check_saturated_loop,
)
from core.transformer.magnetizing import MagnetizingCurve, PiecewiseLinearCurve, SmoothKneeCurve

__all__ = ["circuit_three_phase_from_si", "curve_key_values"]


def curve_key_values(curve: MagnetizingCurve) -> tuple[float, float, float]:
    """Unsaturated and saturated slopes and the knee flux linkage of a magnetising curve.

    Parameters
    ----------
    curve : PiecewiseLinearCurve or SmoothKneeCurve
        The winding's magnetising curve [-].

    Returns
    -------
    tuple of float
        (L_m [H], L_air [H], lambda_knee [Wb-turn]).

    Raises
    ------
    ParameterError
        When ``curve`` is not one of the two curve classes.

    Notes
    -----
    A piecewise-linear curve (two-slope or table): L_m the first segment's slope
    lambda_1/i_1, L_air the slope beyond the last point, lambda_knee the last point's flux. A
    smooth curve: its asymptotes' slopes and their intersection.

    References
    ----------
    Definitions of :mod:`core.transformer.magnetizing`.
    """
    if isinstance(curve, PiecewiseLinearCurve):
        return curve.unsaturated_inductance_h, curve.final_inductance_h, float(curve.flux_wb[-1])
    if isinstance(curve, SmoothKneeCurve):
        return curve.unsaturated_inductance_h, curve.saturated_inductance_h, curve.knee_flux_wb
    raise ParameterError("magnetizing", type(curve).__name__, "a two-slope, smooth or table curve")


def circuit_three_phase_from_si(
    connection: str,
    frequency_hz: float,
    winding_voltage_v: float,
    winding_resistance_ohm: float,
    curve: MagnetizingCurve,
    rated_current_a: float | None = None,
    source_resistance_ohm: float = 0.0,
    source_inductance_h: float = 0.0,
) -> EquivalentCircuit:
    """Three-phase energisation circuit of one winding per phase, given in SI units.

    Parameters
    ----------
    connection : str
        ``"wye_grounded"``, ``"wye"`` (floating neutral) or ``"delta"`` [-].
    frequency_hz : float
        Source frequency, in [1, 1000] [Hz].
    winding_voltage_v : float
        Rated rms voltage across one winding (line-to-neutral for a wye, line-to-line for a
        delta), in (0, 2e6] [V].
    winding_resistance_ohm : float
        Resistance of one winding, in [0, 1e9] [ohm].
    curve : PiecewiseLinearCurve or SmoothKneeCurve
        Flux linkage of one winding against its current [-].
    rated_current_a : float or None
        Rated rms line current, the base of the x-rated values; None when not known [A].
    source_resistance_ohm : float
        Source resistance per phase, wye-equivalent, in [0, 1e9] [ohm].
    source_inductance_h : float
        Source inductance per phase, wye-equivalent, in [0, 1e6] [H].

    Returns
    -------
    EquivalentCircuit
        Three phases; the given numbers, each recorded as an assumption "given".

    Raises
    ------
    ParameterError
        Naming the parameter (``magnetizing`` for the curve) when a value is out of range;
        naming ``winding_resistance_ohm`` (or ``source_resistance_ohm``) when the saturated
        loop is too fast to simulate (:func:`core.transformer.circuit_model.check_saturated_loop`).

    Notes
    -----
    lambda_N = sqrt(2)*V_w/omega; V_LL = sqrt(3)*V_w for a wye, V_w for a delta; the rated
    winding current is I_r/sqrt(3) for a delta, I_r for a wye (circuit laws). The knee and the
    slopes are read from the curve (:func:`curve_key_values`). A knee at or below lambda_N
    (the winding saturates in its rated steady state) is accepted and warned about.

    References
    ----------
    Per-unit bases: IEEE Std C57.12.00 (rated current; from memory); Kirchhoff's laws.
    """
    if connection not in CONNECTIONS:
        raise ParameterError("connection", connection, "one of " + ", ".join(CONNECTIONS))
    f = checks.in_range("frequency_hz", frequency_hz, 1.0, 1000.0, open_low=False)
    v_w = checks.in_range("winding_voltage_v", winding_voltage_v, 0.0, 2e6)
    r_w = checks.in_range(
        "winding_resistance_ohm", winding_resistance_ohm, 0.0, 1e9, open_low=False
    )
    r_s = checks.in_range("source_resistance_ohm", source_resistance_ohm, 0.0, 1e9, open_low=False)
    l_s = checks.in_range("source_inductance_h", source_inductance_h, 0.0, 1e6, open_low=False)
    l_m, l_air, knee = curve_key_values(curve)
    check_saturated_loop(f, l_air + l_s, r_w, r_s, resistance_field="winding_resistance_ohm")
    delta = connection == "delta"
    v_ll = v_w if delta else math.sqrt(3.0) * v_w
    i_line = math.nan
    if rated_current_a is not None:
        i_line = checks.in_range("rated_current_a", rated_current_a, 0.0, 1e9)
    i_w = i_line / math.sqrt(3.0) if delta else i_line
    lam_n = per_unit.nominal_flux_linkage_wb(v_w, f)
    kind = "smooth" if isinstance(curve, SmoothKneeCurve) else "piecewise_linear"
    given = "given"
    assumptions = (
        Assumption("connection", connection, "-", given),
        Assumption("frequency_hz", f, "Hz", given),
        Assumption("winding_voltage_v", v_w, "V", given),
        Assumption(
            "line_voltage_v", v_ll, "V", "from winding_voltage_v (x sqrt(3) for a wye, x 1 delta)"
        ),
        Assumption("winding_resistance_ohm", r_w, "ohm", given),
        Assumption("magnetizing_curve", kind, "-", given),
        Assumption("unsaturated_inductance_h", l_m, "H", given),
        Assumption("saturated_inductance_h", l_air, "H", given),
        Assumption(
            "rated_current_a",
            i_line if rated_current_a is not None else "not given",
            "A" if rated_current_a is not None else "-",
            given if rated_current_a is not None else "not given: no x-rated values",
        ),
        Assumption("source_resistance_ohm", r_s, "ohm", given),
        Assumption("source_inductance_h", l_s, "H", given),
    )
    warnings: tuple[tuple[str, str], ...] = ()
    if knee <= lam_n:
        warnings = (
            (
                "knee_below_nominal_flux",
                f"the magnetising curve's knee ({knee:.6g} Wb-turn) is at or below the "
                f"winding's nominal peak flux linkage ({lam_n:.6g} Wb-turn): the winding "
                "saturates in its rated steady state; check winding_voltage_v and the curve",
            ),
        )
    return EquivalentCircuit(
        phases=3,
        connection=connection,
        frequency_hz=f,
        line_voltage_v=v_ll,
        winding_voltage_v=v_w,
        rated_line_current_a=i_line,
        rated_winding_current_a=i_w,
        nominal_flux_wb=lam_n,
        winding_resistance_ohm=r_w,
        source_resistance_ohm=r_s,
        source_inductance_h=l_s,
        curve=curve,
        air_core_inductance_h=l_air,
        magnetizing_inductance_h=l_m,
        knee_flux_wb=knee,
        assumptions=assumptions,
        warnings=warnings,
    )
