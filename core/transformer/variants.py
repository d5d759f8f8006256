"""The same transformer changed: another tap, core material, rating or energised winding.

Each function returns the energisation circuit of a variant of the unit, so that the inrush of
the variant can be computed exactly as the original's and compared with it. The variants are the
design-side mitigations of energisation inrush:

* :func:`retap` -- more (or fewer) turns on the energised winding at the same applied voltage,
  i.e. fewer volts per turn: the core works at a lower flux density and the knee moves away;
* :func:`with_material` -- another core material class (B_N, B_S);
* :func:`with_rating` -- another rating with the same per-unit data (oversizing or right-sizing);
* :func:`from_other_winding` -- the unit energised from its other winding.

Limits: the variants keep everything not named the same in per unit (impedance, X/R, no-load
current), which is how a what-if on a nameplate is usually posed; a caller with the variant's own
test data should model it directly. Open-circuit test points and winding geometry describe the
present unit and are dropped from rating, material and winding variants (the class defaults are
used instead; :func:`variant_notes` says so).
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from core.errors import ParameterError
from core.transformer import circuit_model
from core.transformer.circuit_model import Assumption, EquivalentCircuit, Nameplate, Source
from core.transformer.magnetizing import MagnetizingCurve, PiecewiseLinearCurve, SmoothKneeCurve

__all__ = [
    "STANDARD_RATINGS_KVA",
    "from_other_winding",
    "next_standard_rating_kva",
    "retap",
    "variant_notes",
    "with_material",
    "with_rating",
]

#: Preferred continuous ratings [kVA] of liquid-immersed distribution and power transformers
#: (IEEE Std C57.12.00 lists of standard kVA ratings; values from memory), by phase count.
STANDARD_RATINGS_KVA: dict[int, tuple[float, ...]] = {
    1: (5, 10, 15, 25, 37.5, 50, 75, 100, 167, 250, 333, 500, 833, 1250, 1667, 2500, 3333, 5000,
        6667, 8333, 10000, 12500, 16667, 20000, 25000, 33333),
    3: (15, 30, 45, 75, 112.5, 150, 225, 300, 500, 750, 1000, 1500, 2000, 2500, 3750, 5000, 7500,
        10000, 12000, 15000, 20000, 25000, 30000, 40000, 50000, 60000, 75000, 100000),
}  # fmt: skip
_BEYOND_LIST_FACTOR = 1.5
#: Range of the turns ratio of a tap what-if [-]: +-20 % covers off-circuit and on-load tap
#: ranges of ordinary units (common practice: +-5 % off-circuit, +-10 % on-load).
TURNS_RATIO_RANGE = (0.8, 1.2)


def next_standard_rating_kva(rating_kva: float, phases: int) -> float:
    """The next preferred rating above a given one.

    Parameters
    ----------
    rating_kva : float
        Present rating [kVA].
    phases : int
        1 or 3 [-].

    Returns
    -------
    float
        The smallest entry of :data:`STANDARD_RATINGS_KVA` above ``rating_kva`` (by more than
        0.1 %), or 1.5 x ``rating_kva`` beyond the list (modelling choice) [kVA].

    Raises
    ------
    ParameterError
        On a non-positive rating or a phase count other than 1 or 3.
    """
    if not (math.isfinite(rating_kva) and rating_kva > 0.0):
        raise ParameterError("rating_kva", rating_kva, "a finite number > 0")
    if phases not in STANDARD_RATINGS_KVA:
        raise ParameterError("phases", phases, "1 or 3")
    for r in STANDARD_RATINGS_KVA[phases]:
        if r > rating_kva * 1.001:
            return float(r)
    return _BEYOND_LIST_FACTOR * rating_kva


def _scaled_curve(curve: MagnetizingCurve, k: float) -> MagnetizingCurve:
    if isinstance(curve, PiecewiseLinearCurve):
        return PiecewiseLinearCurve(
            np.asarray(curve.flux_wb, dtype=float) * k,
            np.asarray(curve.current_a, dtype=float) / k,
            curve.final_inductance_h * k * k,
        )
    if isinstance(curve, SmoothKneeCurve):
        return SmoothKneeCurve(
            curve.unsaturated_inductance_h * k * k,
            curve.knee_flux_wb * k,
            curve.saturated_inductance_h * k * k,
            curve.knee_width_wb * k,
        )
    raise ParameterError("curve", type(curve).__name__, "a piecewise-linear or smooth curve")


def retap(circuit: EquivalentCircuit, turns_ratio: float) -> EquivalentCircuit:
    """The circuit with k times the turns on the energised winding, at the same applied voltage.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The unit at its present tap [-].
    turns_ratio : float
        k = N_new/N_present, in [0.8, 1.2]; 1.05 is a tap with 5 % more turns [-].

    Returns
    -------
    EquivalentCircuit
        The circuit at the new tap. Rated currents and the nominal flux linkage lambda_N (set by
        the applied voltage) are unchanged, so per-unit results stay comparable.

    Raises
    ------
    ParameterError
        On a ratio outside the range.

    Notes
    -----
    With lambda = N*A*B and N*i = H*l (Ampere's law on the core path), a core point (B, H)
    maps to lambda' = k*lambda and i' = i/k: every inductance of the winding scales with k^2
    (magnetising and air-core alike, L ~ N^2), the knee flux linkage with k. The applied
    voltage fixes lambda_N, so the knee in per unit becomes k*b_S; a residual flux density
    B_R, a property of the core, becomes k*b_R in per unit of lambda_N (apply that to the
    residual flux with ``turns_ratio``). The winding resistance is scaled by k (turns of the
    same conductor; common practice for a tap section). The closed-form first peak,
    ~ (2 + k*b_R - k*b_S)/(k^2*X_air), falls on both counts. The secondary voltage falls by
    1/k: a tap chosen for energisation stays in service unless it is changed de-energised.

    References
    ----------
    Turns scaling of winding inductances: e.g. any text on magnetic circuits (L = N^2/reluctance);
    the effect on inrush through the knee and air-core terms follows the closed form of
    Y. Wang, S. G. Abdulsalam, W. Xu, IEEE Trans. Power Delivery 23(2), 2008 (from memory).
    """
    lo, hi = TURNS_RATIO_RANGE
    if not (math.isfinite(turns_ratio) and lo <= turns_ratio <= hi):
        raise ParameterError("turns_ratio", turns_ratio, f"in [{lo:g}, {hi:g}]")
    k = float(turns_ratio)
    note = Assumption(
        "turns_ratio",
        k,
        "-",
        "what-if: turns of the energised winding scaled at the same applied voltage; "
        "inductances x k^2, knee flux x k, winding resistance x k (common practice)",
    )
    return replace(
        circuit,
        winding_resistance_ohm=circuit.winding_resistance_ohm * k,
        curve=_scaled_curve(circuit.curve, k),
        air_core_inductance_h=circuit.air_core_inductance_h * k * k,
        magnetizing_inductance_h=circuit.magnetizing_inductance_h * k * k,
        knee_flux_wb=circuit.knee_flux_wb * k,
        assumptions=(*circuit.assumptions, note),
    )


def _plain(nameplate: Nameplate) -> Nameplate:
    """The nameplate without the data that describe only the present unit."""
    return replace(
        nameplate,
        geometry=None,
        open_circuit_voltage_percent=(),
        open_circuit_current_percent=(),
    )


def variant_notes(nameplate: Nameplate) -> tuple[str, ...]:
    """What a rating, material or winding variant drops from the nameplate, in words.

    Parameters
    ----------
    nameplate : Nameplate
        The unit whose defaults the variants keep [-].
    """
    notes = []
    if nameplate.geometry is not None:
        notes.append(
            "the given winding geometry describes the present unit: the variant's air-core "
            "inductance is the default multiple of its short-circuit reactance"
        )
    if nameplate.open_circuit_voltage_percent:
        notes.append(
            "the given open-circuit test describes the present core: the variant uses the "
            "material class's two-slope curve"
        )
    return tuple(notes)


def with_material(
    nameplate: Nameplate,
    source: Source | None,
    material: str,
    nominal_flux_density_t: float | None = None,
    saturation_flux_density_t: float | None = None,
) -> EquivalentCircuit:
    """The circuit of the same unit with another core material.

    Parameters
    ----------
    nameplate : Nameplate
        The present unit [-].
    source : Source or None
        Supply at the energised terminals [-].
    material : str
        ``"grain_oriented"``, ``"amorphous"`` or ``"custom"`` [-].
    nominal_flux_density_t, saturation_flux_density_t : float or None
        B_N and B_S; required for ``"custom"``, override the class values otherwise [T].

    Returns
    -------
    EquivalentCircuit

    Raises
    ------
    ParameterError
        As :func:`core.transformer.circuit_model.equivalent_circuit`.

    Notes
    -----
    Only B_N and B_S change (the knee b_S = B_S/B_N moves); no-load current, impedance and the
    air-core inductance stay as given.
    """
    npl = replace(
        _plain(nameplate),
        material=material,
        nominal_flux_density_t=nominal_flux_density_t,
        saturation_flux_density_t=saturation_flux_density_t,
        provenance={k: v for k, v in nameplate.provenance.items() if k != "material"},
    )
    return circuit_model.equivalent_circuit(npl, source)


def with_rating(nameplate: Nameplate, source: Source | None, rating_va: float) -> EquivalentCircuit:
    """The circuit of a unit of another rating with the same per-unit data.

    Parameters
    ----------
    nameplate : Nameplate
        The present unit [-].
    source : Source or None
        Supply at the energised terminals (unchanged: the same bus) [-].
    rating_va : float
        Rating of the variant [VA].

    Returns
    -------
    EquivalentCircuit
        Its rated currents are the variant's own.

    Notes
    -----
    Same %Z, X/R, no-load current and core: in ohms every impedance of the variant scales with
    1/S, so a larger unit on the same bus draws a larger inrush in amperes (a fact of the trade:
    an oversized unit costs inrush on the same duty).
    """
    npl = replace(_plain(nameplate), rating_va=rating_va)
    return circuit_model.equivalent_circuit(npl, source)


def from_other_winding(
    nameplate: Nameplate,
    source: Source | None,
    line_voltage_v: float,
    connection: str,
    position: str,
) -> EquivalentCircuit:
    """The circuit of the same unit energised from its other winding.

    Parameters
    ----------
    nameplate : Nameplate
        The unit as energised now [-].
    source : Source or None
        Supply at the other winding's terminals [-].
    line_voltage_v : float
        Rated line-to-line voltage of the other winding [V].
    connection : str
        Its connection (``"wye_grounded"``, ``"wye"`` or ``"delta"``) [-].
    position : str
        Its position on the leg (``"inner"`` or ``"outer"``) [-].

    Returns
    -------
    EquivalentCircuit
        With the other winding's rated currents.

    Notes
    -----
    The core, the per-unit impedance and no-load current are the unit's; the air-core inductance
    follows the winding position (the outer winding encloses more air, so it draws less inrush).
    """
    npl = replace(
        _plain(nameplate),
        line_voltage_v=line_voltage_v,
        connection=connection,
        position=position,
        provenance={k: v for k, v in nameplate.provenance.items() if k != "connection"},
    )
    return circuit_model.equivalent_circuit(npl, source)
