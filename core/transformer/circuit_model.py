"""Nameplate data to the per-winding equivalent circuit used for energisation.

The circuit of one energised winding, with the other windings open (the unit energised unloaded),
is: source (ideal, or resistance and inductance from a fault level or given impedance), the
energised winding's resistance, and the magnetising branch whose saturated slope is the winding's
air-core inductance. The air-core inductance already contains the winding's own leakage flux, so
the leakage reactance is not added in series again.

Every parameter used is returned as an :class:`Assumption` carrying its provenance: given by the
caller, or a default and where that default comes from. Defaults recalled without the source at
hand say "from memory"; the engineering judgement of this project says "modelling choice".

Limits: a single set of curve parameters is used for every winding (a symmetrical core); the
three-limb core's magnetic coupling between phases is not represented here (see
:mod:`core.energization.energize` for how the phases are connected).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field

import numpy as np
from scipy.constants import mu_0

from core import checks
from core.errors import ParameterError
from core.transformer import magnetizing, per_unit, plausibility
from core.transformer.magnetizing import MagnetizingCurve
from core.waveform import MAX_STEPS_PER_CYCLE, shortest_time_constant

__all__ = [
    "MATERIALS",
    "Assumption",
    "CoreMaterial",
    "EquivalentCircuit",
    "Nameplate",
    "Source",
    "WindingGeometry",
    "air_core_inductance_solenoid",
    "circuit_from_si",
    "equivalent_circuit",
    "source_impedance",
]

CONNECTIONS = ("wye_grounded", "wye", "delta")
POSITIONS = ("inner", "outer")
CURVES = ("two_slope", "smooth")


@dataclass(frozen=True)
class Assumption:
    """One parameter actually used, with its value, unit and provenance."""

    name: str
    value: float | str | tuple[float, ...]
    unit: str
    source: str


@dataclass(frozen=True)
class CoreMaterial:
    """Design and saturation flux density of a core material class."""

    nominal_flux_density_t: float
    saturation_flux_density_t: float
    source: str


MATERIALS: dict[str, CoreMaterial] = {
    "grain_oriented": CoreMaterial(
        1.7,
        2.03,
        "default for grain-oriented silicon steel: design B_N 1.7 T (typical 1.6-1.75 T) and "
        "B_S 2.03 T, typical values from memory",
    ),
    "amorphous": CoreMaterial(
        1.35,
        1.56,
        "default for amorphous alloy: design B_N 1.35 T (typical 1.3-1.4 T) and B_S 1.56 T, "
        "typical values from memory",
    ),
}

# Air-core reactance as a multiple of the short-circuit reactance, by winding position.
# From memory: about 1-2 x X_sc for the inner winding, 2-4 x X_sc for the outer one; the middle
# of each range is used.
AIR_CORE_FACTOR = {"inner": 1.5, "outer": 3.0}
AIR_CORE_SOURCE = (
    "default {k:g} x short-circuit reactance for the {pos} winding (typical 1-2 x inner, "
    "2-4 x outer; from memory)"
)
# Share of the total winding resistance in the energised winding (common practice: half, the
# per-unit resistances of the two windings being about equal).
WINDING_RESISTANCE_SHARE = 0.5


@dataclass(frozen=True)
class WindingGeometry:
    """Geometry of the energised winding for the long-solenoid air-core inductance.

    Attributes
    ----------
    turns : float
        Number of turns [-].
    mean_diameter_m : float
        Mean diameter of the winding [m].
    height_m : float
        Axial height of the winding [m].
    """

    turns: float
    mean_diameter_m: float
    height_m: float


@dataclass(frozen=True)
class Source:
    """Supply seen at the energised terminals.

    ``kind`` is ``"ideal"``, ``"fault_level"`` (``fault_va`` and ``x_over_r``, three-phase
    short-circuit power for a three-phase unit) or ``"impedance"`` (``resistance_ohm`` and
    ``reactance_ohm`` per phase, wye-equivalent).
    """

    kind: str = "ideal"
    fault_va: float | None = None
    x_over_r: float | None = None
    resistance_ohm: float | None = None
    reactance_ohm: float | None = None


@dataclass(frozen=True)
class Nameplate:
    """Nameplate and design data of the transformer, energised side.

    Attributes
    ----------
    rating_va : float
        Rated power [VA].
    phases : int
        1 or 3.
    frequency_hz : float
        Rated frequency [Hz].
    line_voltage_v : float
        Rated line-to-line rms voltage of the energised winding (the winding voltage for a
        single-phase unit) [V].
    connection : str
        ``"wye_grounded"``, ``"wye"`` or ``"delta"``.
    position : str
        ``"inner"`` or ``"outer"``: where the energised winding sits on the leg.
    impedance_percent : float
        Short-circuit impedance [% on rating].
    x_over_r : float
        Ratio of short-circuit reactance to resistance [-].
    no_load_current_percent : float
        Rms no-load current at rated voltage [% of rated current].
    material : str
        ``"grain_oriented"``, ``"amorphous"`` or ``"custom"``.
    nominal_flux_density_t, saturation_flux_density_t : float or None
        B_N and B_S [T]; required for ``"custom"``, override the class defaults otherwise.
    geometry : WindingGeometry or None
        Gives the air-core inductance by the long-solenoid formula when present.
    curve : str
        ``"two_slope"`` or ``"smooth"``.
    knee_width_pu : float
        Knee rounding of the smooth curve [pu of lambda_N].
    open_circuit_voltage_percent, open_circuit_current_percent : tuple of float
        Optional open-circuit test points [% of rated voltage, % of rated current]; when given,
        the magnetising curve is converted from them (the air-core slope continues it).
    provenance : mapping of str to str
        Where a value came from when the caller did not give it (field name -> text); fields
        not named are recorded as "given". The dataclass defaults are conveniences (a typical
        distribution unit, common practice); a caller relying on one should say so here.
    """

    rating_va: float
    phases: int
    frequency_hz: float
    line_voltage_v: float
    connection: str = "wye_grounded"
    position: str = "outer"
    impedance_percent: float = 5.75
    x_over_r: float = 7.0
    no_load_current_percent: float = 1.0
    material: str = "grain_oriented"
    nominal_flux_density_t: float | None = None
    saturation_flux_density_t: float | None = None
    geometry: WindingGeometry | None = None
    curve: str = "two_slope"
    knee_width_pu: float = 0.01
    open_circuit_voltage_percent: tuple[float, ...] = ()
    open_circuit_current_percent: tuple[float, ...] = ()
    provenance: Mapping[str, str] = field(default_factory=dict)


@dataclass(frozen=True)
class EquivalentCircuit:
    """Per-winding energisation circuit in SI units.

    Attributes
    ----------
    phases : int
        Number of energised windings (1 or 3).
    connection : str
        Winding connection.
    frequency_hz : float
        [Hz].
    line_voltage_v : float
        Rated line-to-line voltage of the energised side [V].
    winding_voltage_v : float
        Rms voltage across one winding [V].
    rated_line_current_a, rated_winding_current_a : float
        Rated rms currents [A].
    nominal_flux_wb : float
        lambda_N of one winding [Wb-turn].
    winding_resistance_ohm : float
        Resistance of one energised winding [ohm].
    source_resistance_ohm, source_inductance_h : float
        Source per phase, wye-equivalent [ohm], [H].
    curve : PiecewiseLinearCurve or SmoothKneeCurve
        Magnetising curve of one winding.
    air_core_inductance_h, magnetizing_inductance_h, knee_flux_wb : float
        The curve's key values [H], [H], [Wb-turn].
    assumptions : tuple of Assumption
        Every parameter used, with provenance.
    warnings : tuple of (str, str)
        (code, message) of what the nameplate's plausibility check found
        (:func:`core.transformer.plausibility.rating_voltage_warnings`).
    """

    phases: int
    connection: str
    frequency_hz: float
    line_voltage_v: float
    winding_voltage_v: float
    rated_line_current_a: float
    rated_winding_current_a: float
    nominal_flux_wb: float
    winding_resistance_ohm: float
    source_resistance_ohm: float
    source_inductance_h: float
    curve: MagnetizingCurve
    air_core_inductance_h: float
    magnetizing_inductance_h: float
    knee_flux_wb: float
    assumptions: tuple[Assumption, ...]
    warnings: tuple[tuple[str, str], ...] = ()


def _calibrated_unsaturated_inductance(
    l_m: float, lam_n: float, lam_s: float, l_air: float, width: float
) -> float:
    """Unsaturated slope of the smooth curve through the two-slope curve's rated-flux point.

    The rounded knee adds current below lambda_S; without correction the smooth curve would
    draw several times the nameplate no-load current at rated voltage. With
    g = the hyperbolic excess at lambda_N, i(lambda_N) = a*lambda_N + (1/L_air - a)*g is set
    equal to lambda_N/L_m and solved for a = 1/L_m'.
    """
    s = lam_n - lam_s
    g = 0.5 * (s + math.hypot(s, width)) - 0.5 * (-lam_s + math.hypot(lam_s, width))
    a = (lam_n / l_m - g / l_air) / (lam_n - g)
    if not (a > 0.0 and 1.0 / a > l_air):
        raise ParameterError(
            "knee_width_pu",
            width / lam_n,
            "narrow enough that the smooth curve can pass through the rated no-load point",
        )
    return 1.0 / a


def air_core_inductance_solenoid(turns: float, mean_diameter_m: float, height_m: float) -> float:
    """Air-core inductance of a winding by the long-solenoid formula.

    Parameters
    ----------
    turns : float
        Number of turns N [-].
    mean_diameter_m : float
        Mean winding diameter D [m].
    height_m : float
        Winding height h [m].

    Returns
    -------
    float
        L_air = mu_0 * N^2 * (pi*D^2/4) / h [H].

    Raises
    ------
    ParameterError
        On non-positive or non-finite values.

    Notes
    -----
    The long-solenoid formula neglects end effects and so overestimates the inductance of a
    short, wide coil (Nagaoka's coefficient < 1); for transformer windings, taller than wide, it
    is the usual estimate and gives a somewhat lower (less conservative) inrush.

    References
    ----------
    Long-solenoid inductance, e.g. F. W. Grover, "Inductance Calculations", 1946 (from memory).
    """
    n = checks.in_range("turns", turns, 0.0, 1e6)
    d = checks.in_range("mean_diameter_m", mean_diameter_m, 0.0, 100.0)
    h = checks.in_range("height_m", height_m, 0.0, 100.0)
    return float(mu_0 * n * n * math.pi * d * d / 4.0 / h)


def source_impedance(source: Source, line_voltage_v: float, phases: int) -> tuple[float, float]:
    """Per-phase (wye-equivalent) source resistance and reactance.

    Parameters
    ----------
    source : Source
        Source description [-].
    line_voltage_v : float
        Line-to-line voltage at the energised terminals [V].
    phases : int
        1 or 3 [-].

    Returns
    -------
    tuple of float
        (R_s [ohm], X_s [ohm]).

    Notes
    -----
    Fault level: Z_s = V_LL^2 / S_sc (three-phase) or V^2/S_sc (single-phase),
    R_s = Z_s/sqrt(1 + (X/R)^2), X_s = R_s*(X/R) (common practice).
    """
    if source.kind == "ideal":
        return 0.0, 0.0
    if source.kind == "fault_level":
        s = checks.in_range("source.fault_va", float(source.fault_va or 0.0), 0.0, 1e15)
        xr = checks.in_range("source.x_over_r", float(source.x_over_r or 0.0), 0.0, 1e4)
        z = line_voltage_v * line_voltage_v / s
        r = z / math.sqrt(1.0 + xr * xr)
        return r, r * xr
    if source.kind == "impedance":
        r = checks.in_range(
            "source.resistance_ohm", float(source.resistance_ohm or 0.0), 0.0, 1e6, open_low=False
        )
        x = checks.in_range(
            "source.reactance_ohm", float(source.reactance_ohm or 0.0), 0.0, 1e6, open_low=False
        )
        return r, x
    raise ParameterError("source.kind", source.kind, "ideal, fault_level or impedance")


def _flux_densities(npl: Nameplate) -> tuple[float, float, str, str]:
    """B_N, B_S [T] of the nameplate's core material and where each comes from."""
    if npl.material == "custom":
        if npl.nominal_flux_density_t is None or npl.saturation_flux_density_t is None:
            raise ParameterError(
                "material",
                "custom",
                "custom needs nominal_flux_density_t and saturation_flux_density_t",
            )
        b_n, b_s = npl.nominal_flux_density_t, npl.saturation_flux_density_t
        prov_n = prov_s = "given"
    elif npl.material in MATERIALS:
        mat = MATERIALS[npl.material]
        b_n = npl.nominal_flux_density_t or mat.nominal_flux_density_t
        b_s = npl.saturation_flux_density_t or mat.saturation_flux_density_t
        prov_n = "given" if npl.nominal_flux_density_t else mat.source
        prov_s = "given" if npl.saturation_flux_density_t else mat.source
    else:
        raise ParameterError("material", npl.material, "grain_oriented, amorphous or custom")
    b_n = checks.in_range("nominal_flux_density_t", b_n, 0.0, 3.0)
    b_s = checks.in_range("saturation_flux_density_t", b_s, 0.0, 3.0)
    if b_s <= b_n:
        raise ParameterError(
            "saturation_flux_density_t", b_s, f"above the nominal flux density {b_n:g} T"
        )
    return b_n, b_s, prov_n, prov_s


def equivalent_circuit(nameplate: Nameplate, source: Source | None = None) -> EquivalentCircuit:
    """Build the energisation circuit of one winding from nameplate data.

    Parameters
    ----------
    nameplate : Nameplate
        Transformer data (see :class:`Nameplate`) [-].
    source : Source or None
        Supply at the energised terminals; ideal when None [-].

    Returns
    -------
    EquivalentCircuit

    Raises
    ------
    ParameterError
        On values outside the model's range, naming the parameter; on a source weaker than
        :func:`core.transformer.plausibility.check_source_strength` allows.

    Notes
    -----
    With per-unit impedance z = Z%/100 and X/R = k: r_T = z/sqrt(1+k^2), x_T = k*r_T.
    The energised winding carries half of r_T (common practice). The magnetising inductance is
    L_m = V_w/(omega * I_0) with I_0 the no-load current, taken as wholly magnetising
    (common practice simplification). The knee is lambda_S = (B_S/B_N)*lambda_N. The air-core
    inductance is the long-solenoid value when the geometry is given, else a multiple of the
    short-circuit reactance by winding position (see ``AIR_CORE_FACTOR``, from memory).

    References
    ----------
    Per-unit bases: IEEE Std C57.12.00 (rated current); air-core and knee modelling:
    Y. Wang, S. G. Abdulsalam, W. Xu, IEEE Trans. Power Delivery 23(2), 2008 (from memory).
    """
    npl = nameplate
    src = source or Source()
    assumptions: list[Assumption] = []

    def note(name: str, value: float | str | tuple[float, ...], unit: str, prov: str) -> None:
        if prov == "given":
            prov = npl.provenance.get(name, "given")
        assumptions.append(Assumption(name, value, unit, prov))

    s_va, f, v_ll, z_pct, xr, i0_pct = _checked_ratings(npl, note)
    b_n, b_s, prov_n, prov_s = _flux_densities(npl)
    note("material", npl.material, "-", "given")  # provenance applies
    note("nominal_flux_density_t", b_n, "T", prov_n)
    note("saturation_flux_density_t", b_s, "T", prov_s)

    v_w = per_unit.winding_voltage_v(v_ll, npl.phases, npl.connection)
    i_w = per_unit.rated_winding_current_a(s_va, npl.phases, v_w)
    z_b = per_unit.base_impedance_ohm(s_va, npl.phases, v_w)
    lam_n = per_unit.nominal_flux_linkage_wb(v_w, f)
    omega = 2.0 * math.pi * f

    z_pu = z_pct / 100.0
    r_t = z_pu / math.sqrt(1.0 + xr * xr)
    x_t = r_t * xr
    r_w = WINDING_RESISTANCE_SHARE * r_t * z_b
    note(
        "winding_resistance_ohm",
        r_w,
        "ohm",
        "half of the short-circuit resistance from impedance_percent and x_over_r "
        "(common practice split)",
    )
    l_air = _air_core_inductance(npl, x_t, z_b, omega, note)
    curve, l_m, lam_s = _magnetizing_curve(npl, v_w, i_w, f, lam_n, b_s / b_n, i0_pct, l_air, note)

    r_s, x_s = source_impedance(src, v_ll, npl.phases)
    if src.kind != "ideal":
        plausibility.check_source_strength(s_va, v_ll, r_s, x_s)
    note("source", src.kind, "-", "given" if source is not None else "default: ideal source")
    note("source_resistance_ohm", r_s, "ohm", "from the source description")
    note("source_inductance_h", x_s / omega, "H", "from the source description")

    return EquivalentCircuit(
        phases=npl.phases,
        connection=npl.connection if npl.phases == 3 else "single_phase",
        frequency_hz=f,
        line_voltage_v=v_ll,
        winding_voltage_v=v_w,
        rated_line_current_a=per_unit.rated_line_current_a(s_va, npl.phases, v_ll),
        rated_winding_current_a=i_w,
        nominal_flux_wb=lam_n,
        winding_resistance_ohm=r_w,
        source_resistance_ohm=r_s,
        source_inductance_h=x_s / omega,
        curve=curve,
        air_core_inductance_h=l_air,
        magnetizing_inductance_h=l_m,
        knee_flux_wb=lam_s,
        assumptions=tuple(assumptions),
        warnings=plausibility.rating_voltage_warnings(s_va, npl.phases, v_ll),
    )


_Note = Callable[[str, float | str | tuple[float, ...], str, str], None]


def _checked_ratings(
    npl: Nameplate, note: _Note
) -> tuple[float, float, float, float, float, float]:
    """Check the nameplate's ratings and choices, note them; (S, f, V_LL, Z%, X/R, I_0%).

    Parameters
    ----------
    npl : Nameplate
        Transformer data [-].
    note : callable
        Records one assumption (name, value, unit, provenance) [-].

    Returns
    -------
    tuple of float
        Rating [VA], frequency [Hz], line voltage [V], impedance [%], X/R [-], no-load
        current [%].
    """
    s_va = checks.in_range("rating_va", npl.rating_va, 0.0, 1e10)
    if npl.phases not in (1, 3):
        raise ParameterError("phases", npl.phases, "1 or 3")
    f = checks.in_range("frequency_hz", npl.frequency_hz, 1.0, 1000.0)
    v_ll = checks.in_range("line_voltage_v", npl.line_voltage_v, 0.0, 2e6)
    if npl.connection not in CONNECTIONS:
        raise ParameterError("connection", npl.connection, "one of " + ", ".join(CONNECTIONS))
    if npl.position not in POSITIONS:
        raise ParameterError("position", npl.position, "inner or outer")
    if npl.curve not in CURVES:
        raise ParameterError("curve", npl.curve, "two_slope or smooth")
    z_pct = checks.in_range("impedance_percent", npl.impedance_percent, 0.0, 100.0)
    xr = checks.in_range("x_over_r", npl.x_over_r, 0.0, 1e4)
    i0_pct = checks.in_range("no_load_current_percent", npl.no_load_current_percent, 0.0, 50.0)
    connection = npl.connection if npl.phases == 3 else "single_phase"
    note("rating_va", s_va, "VA", "given")
    note("phases", float(npl.phases), "-", "given")
    note("frequency_hz", f, "Hz", "given")
    note("line_voltage_v", v_ll, "V", "given")
    note("connection", connection, "-", "given" if npl.phases == 3 else "single-phase unit")
    note("position", npl.position, "-", "given")
    note("impedance_percent", z_pct, "%", "given")
    note("x_over_r", xr, "-", "given")
    note("no_load_current_percent", i0_pct, "%", "given")
    return s_va, f, v_ll, z_pct, xr, i0_pct


def _air_core_inductance(
    npl: Nameplate, x_t: float, z_b: float, omega: float, note: _Note
) -> float:
    """Air-core inductance of the energised winding, noted with its provenance [H].

    Parameters
    ----------
    npl : Nameplate
        Transformer data; its geometry, when given, sets the inductance [-].
    x_t : float
        Short-circuit reactance [pu].
    z_b : float
        Base impedance of the winding [ohm].
    omega : float
        Angular frequency [rad/s].
    note : callable
        Records one assumption [-].

    Returns
    -------
    float
        The long-solenoid inductance of the given geometry, else ``AIR_CORE_FACTOR`` of the
        winding position times the short-circuit inductance [H].
    """
    if npl.geometry is not None:
        g = npl.geometry
        l_air = air_core_inductance_solenoid(g.turns, g.mean_diameter_m, g.height_m)
        note("air_core_inductance_h", l_air, "H", "long-solenoid formula from the given geometry")
        return l_air
    k = AIR_CORE_FACTOR[npl.position]
    l_air = k * x_t * z_b / omega
    note("air_core_inductance_h", l_air, "H", AIR_CORE_SOURCE.format(k=k, pos=npl.position))
    return l_air


def _magnetizing_curve(
    npl: Nameplate,
    v_w: float,
    i_w: float,
    f: float,
    lam_n: float,
    knee_pu: float,
    i0_pct: float,
    l_air: float,
    note: _Note,
) -> tuple[MagnetizingCurve, float, float]:
    """The winding's magnetising curve, its unsaturated inductance and knee, noted.

    Parameters
    ----------
    npl : Nameplate
        Transformer data: open-circuit points, curve kind, knee width [-].
    v_w, i_w : float
        Rated winding voltage [V] and current [A].
    f : float
        Frequency [Hz].
    lam_n : float
        Nominal flux linkage [Wb-turn].
    knee_pu : float
        Knee flux density over the nominal, B_S/B_N [-].
    i0_pct : float
        No-load current, taken as wholly magnetising [% of rated].
    l_air : float
        Air-core inductance [H].
    note : callable
        Records one assumption [-].

    Returns
    -------
    tuple
        The curve, its unsaturated inductance [H] and its knee flux linkage [Wb-turn].

    Notes
    -----
    Open-circuit points are converted by the point-by-point method of Neves and Dommel (IEEE
    Trans. Power Delivery 8(2), 1993, from memory); otherwise a two-slope curve with its knee
    at lambda_S, or a smooth knee whose unsaturated slope is calibrated to pass through the
    rated no-load crest current.
    """
    curve: MagnetizingCurve
    l_m = v_w / (2.0 * math.pi * f * (i0_pct / 100.0) * i_w)
    lam_s = knee_pu * lam_n
    if npl.open_circuit_voltage_percent or npl.open_circuit_current_percent:
        vp = np.asarray(npl.open_circuit_voltage_percent, dtype=float)
        ip = np.asarray(npl.open_circuit_current_percent, dtype=float)
        curve = magnetizing.from_open_circuit_rms(vp / 100.0 * v_w, ip / 100.0 * i_w, f, l_air)
        note(
            "magnetizing_curve",
            "open_circuit_test",
            "-",
            "converted from the given open-circuit points (Neves & Dommel 1993 point-by-point "
            "method), air-core slope beyond the last point",
        )
        return curve, curve.unsaturated_inductance_h, float(curve.flux_wb[-1])
    if l_air >= l_m:
        raise ParameterError(
            "no_load_current_percent",
            i0_pct,
            "small enough that the magnetising inductance exceeds the air-core inductance",
        )
    if npl.curve == "two_slope":
        curve = magnetizing.two_slope(l_m, lam_s, l_air)
        note("magnetizing_curve", "two_slope", "-", npl.provenance.get("curve", "given"))
    else:
        width = checks.in_range("knee_width_pu", npl.knee_width_pu, 0.0, knee_pu)
        l_m = _calibrated_unsaturated_inductance(l_m, lam_n, lam_s, l_air, width * lam_n)
        curve = magnetizing.smooth_knee(l_m, lam_s, l_air, width * lam_n)
        note("magnetizing_curve", "smooth", "-", npl.provenance.get("curve", "given"))
        note("knee_width_pu", width, "pu of nominal flux", "given")
    note(
        "magnetizing_inductance_h",
        l_m,
        "H",
        "from no_load_current_percent, the no-load current taken as wholly magnetising"
        + (
            "; the smooth curve's slope set so that it passes through the same crest "
            "current at rated flux"
            if npl.curve == "smooth"
            else ""
        ),
    )
    return curve, l_m, lam_s


def check_saturated_loop(
    frequency_hz: float,
    inductance_h: float,
    resistance_ohm: float,
    source_resistance_ohm: float = 0.0,
    *,
    resistance_field: str = "resistance_ohm",
    source_field: str = "source_resistance_ohm",
) -> None:
    """Refuse a circuit whose saturated loop is too fast for the solver's step rule.

    Parameters
    ----------
    frequency_hz : float
        Source frequency, > 0 [Hz].
    inductance_h : float
        The saturated loop's inductance, L_air + L_s, >= 0 [H].
    resistance_ohm : float
        The winding's (or the series) resistance R_w, >= 0 [ohm].
    source_resistance_ohm : float
        The source resistance per phase R_s, >= 0 [ohm].
    resistance_field, source_field : str
        Names of the two resistances in the error [-].

    Raises
    ------
    ParameterError
        Naming ``resistance_field`` (value R_w, allowed at most L/tau_min - 2*R_s), or
        ``source_field`` when 2*R_s alone is too much, when (L_air + L_s)/(R_w + 2*R_s) is below
        :func:`core.waveform.shortest_time_constant`.

    Notes
    -----
    The loop of :func:`core.network.step_plan`: tau = (L_air + L_s)/(R_w + 2*R_s), the source
    resistance counted twice (the return of a line through the source); the solver needs four
    steps per tau and takes at most MAX_STEPS_PER_CYCLE steps a cycle.

    References
    ----------
    This project's step rule (core.network.step_rule); Kirchhoff's voltage law for the loop.
    """
    tau_min = shortest_time_constant(frequency_hz)
    r_loop = resistance_ohm + 2.0 * source_resistance_ohm
    if r_loop <= 0.0 or inductance_h / r_loop >= tau_min:
        return
    r_max = inductance_h / tau_min - 2.0 * source_resistance_ohm
    why = (
        f"with a saturated loop inductance of {inductance_h:.6g} H its L/R would be under "
        f"{tau_min:.3g} s, which needs over {MAX_STEPS_PER_CYCLE} steps a cycle: the loop is "
        "almost purely resistive"
    )
    if r_max <= 0.0:
        raise ParameterError(
            source_field,
            source_resistance_ohm,
            f"at most {inductance_h / tau_min / 2.0:.6g} ohm; {why}",
        )
    raise ParameterError(resistance_field, resistance_ohm, f"at most {r_max:.6g} ohm; {why}")


def circuit_from_si(
    voltage_rms_v: float,
    frequency_hz: float,
    resistance_ohm: float,
    inductance_h: float,
    curve: MagnetizingCurve,
    rated_current_a: float | None = None,
) -> EquivalentCircuit:
    """Single-phase energisation circuit given directly in SI units.

    Parameters
    ----------
    voltage_rms_v : float
        Source rms voltage [V].
    frequency_hz : float
        Source frequency [Hz].
    resistance_ohm : float
        Total series resistance (source plus winding) [ohm].
    inductance_h : float
        Series inductance outside the magnetising branch (source) [H].
    curve : PiecewiseLinearCurve or SmoothKneeCurve
        Magnetising curve of the winding [-].
    rated_current_a : float or None
        Rated rms current, only to express results as multiples of rated [A].

    Returns
    -------
    EquivalentCircuit
        With ``connection`` ``"single_phase"`` and the series resistance as winding resistance.

    Raises
    ------
    ParameterError
        On values out of range; naming ``resistance_ohm`` when the saturated loop's
        (saturated + series inductance)/resistance is too short to simulate
        (:func:`check_saturated_loop`).
    """
    v = checks.in_range("voltage_rms_v", voltage_rms_v, 0.0, 2e6)
    f = checks.in_range("frequency_hz", frequency_hz, 1.0, 1000.0)
    r = checks.in_range("resistance_ohm", resistance_ohm, 0.0, 1e9, open_low=False)
    ls = checks.in_range("inductance_h", inductance_h, 0.0, 1e6, open_low=False)
    i_r = math.nan
    if rated_current_a is not None:
        i_r = checks.in_range("rated_current_a", rated_current_a, 0.0, 1e9)
    if isinstance(curve, magnetizing.PiecewiseLinearCurve):
        l_air = curve.final_inductance_h
        l_m = curve.unsaturated_inductance_h
        knee = float(curve.flux_wb[-1])
    else:
        l_air = curve.saturated_inductance_h
        l_m = curve.unsaturated_inductance_h
        knee = curve.knee_flux_wb
    check_saturated_loop(f, l_air + ls, r)
    given = "given"
    assumptions = (
        Assumption("voltage_rms_v", v, "V", given),
        Assumption("frequency_hz", f, "Hz", given),
        Assumption("resistance_ohm", r, "ohm", given),
        Assumption("inductance_h", ls, "H", given),
        Assumption("saturated_inductance_h", l_air, "H", given),
        Assumption("unsaturated_inductance_h", l_m, "H", given),
    )
    return EquivalentCircuit(
        phases=1,
        connection="single_phase",
        frequency_hz=f,
        line_voltage_v=v,
        winding_voltage_v=v,
        rated_line_current_a=i_r,
        rated_winding_current_a=i_r,
        nominal_flux_wb=per_unit.nominal_flux_linkage_wb(v, f),
        winding_resistance_ohm=r,
        source_resistance_ohm=0.0,
        source_inductance_h=ls,
        curve=curve,
        air_core_inductance_h=l_air,
        magnetizing_inductance_h=l_m,
        knee_flux_wb=knee,
        assumptions=assumptions,
    )
