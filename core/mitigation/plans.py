"""Mitigation options reduced to the energisation events each leaves possible.

Part of :mod:`core.mitigation.mitigation_study`: for each option this builds the :class:`Plan` --
the circuit (changed by a what-if of :mod:`core.transformer.variants`), the residual flux, the pole
timing, the source's extra terms (a pre-insertion resistor, a ramp) and whether the closing is at a
fixed instant with an error band -- together with the values that define the option (with their
provenance) and what it needs in practice. A pre-insertion resistor not given is sized here
(:func:`core.mitigation.pre_insertion.smallest_resistance`).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from core.energization import inrush_study
from core.energization.switching_event import SwitchingEvent, switching_event
from core.errors import ParameterError
from core.mitigation import point_on_wave, pre_insertion
from core.mitigation.mitigation_options import (
    KINDS,
    ControlledClosing,
    CoreMaterial,
    Demagnetize,
    GeneratorSupply,
    Option,
    OtherWinding,
    PreInsertionResistor,
    PreMagnetize,
    Ramp,
    Rating,
    Retap,
)
from core.supply import dip
from core.transformer import variants
from core.transformer.circuit_model import Assumption, EquivalentCircuit, Nameplate, Source

FloatArray = NDArray[np.float64]

__all__ = ["WINDOW_CYCLES", "Context", "Plan", "plan_for", "preset_flux"]

#: Cycles of record after the last switching action in which the first peak is sought [cycles].
WINDOW_CYCLES = 2.0


@dataclass
class Plan:
    """An option reduced to the events it leaves possible."""

    kind: str
    label: str
    circuit: EquivalentCircuit
    residual: FloatArray
    delay: FloatArray
    extras: dict[str, float] = field(default_factory=dict)
    # fixed closing with an error band (controlled / pre-magnetised): phase-A angle [deg]
    fixed_angle_deg: float | None = None
    error_ms: float = 0.0
    dip_circuit: EquivalentCircuit | None = None
    dip_note: str | None = None
    devices_apply: bool = True
    rating_va: float = math.nan
    x_rated_base_a: float = math.nan
    parameters: list[Assumption] = field(default_factory=list)
    requires: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    worst_over: str = ""
    # filled by the search
    angle_deg: float = math.nan
    event_delay: FloatArray | None = None
    peaks: FloatArray | None = None
    error: str | None = None

    @property
    def window_s(self) -> float:
        f = self.circuit.frequency_hz
        end = max(
            self.extras.get("insertion_time_s", 0.0),
            self.extras.get("voltage_hold_s", 0.0) + self.extras.get("voltage_rise_s", 0.0),
        )
        return end + float(np.max(self.delay)) + WINDOW_CYCLES / f


def preset_flux(
    circuit: EquivalentCircuit,
    max_flux_pu: float,
    closing_error_ms: float = 0.0,
    closing_angle_deg: float | None = None,
) -> tuple[float, FloatArray]:
    """Residual flux to pre-set for a simultaneous closing at a known instant.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The circuit (its phases, connection and frequency) [-].
    max_flux_pu : float
        Largest flux the pre-magnetising circuit can leave, in (0, 1.2] [pu of lambda_N].
    closing_error_ms : float
        Half-width of the breaker's closing-time error band, in [0, 5] [ms].
    closing_angle_deg : float or None
        Phase-A voltage angle at closing; None to choose it [deg].

    Returns
    -------
    tuple
        (phase-A closing angle [deg], flux to pre-set per winding [pu of lambda_N]).

    Notes
    -----
    A winding energised at voltage angle alpha_w has the flux-swing centre b + cos(alpha_w)
    (:func:`core.energization.closed_form.flux_offset_pu`): the flux b = -cos(alpha_w), clipped to
    +-max_flux_pu, leaves none. Unclipped, the three values of a three-phase unit sum to zero,
    as the residual fluxes of a core do. When the angle is chosen, it is the one (on a 0.1 degree
    grid) that minimises the largest |b + cos(alpha_w + delta)| over the windings and the
    errors delta in the band: closing where the voltages are steep is sensitive to timing.

    References
    ----------
    Matching the closing instant to the core flux: J. H. Brunke, K. J. Froehlich, IEEE Trans.
    Power Delivery 16(2), 2001 (from memory).
    """
    if not (math.isfinite(max_flux_pu) and 0.0 < max_flux_pu <= 1.2):
        raise ParameterError("max_flux_pu", max_flux_pu, "in (0, 1.2]")
    if not (math.isfinite(closing_error_ms) and 0.0 <= closing_error_ms <= 5.0):
        raise ParameterError("closing_error_ms", closing_error_ms, "in [0, 5]")
    m = circuit.phases
    zero = np.zeros(m)
    err_deg = 360.0 * circuit.frequency_hz * closing_error_ms * 1e-3
    if closing_angle_deg is not None:
        if not math.isfinite(closing_angle_deg):
            raise ParameterError("closing_angle_deg", closing_angle_deg, "a finite angle")
        alpha = float(closing_angle_deg)
    else:
        grid = np.arange(0.0, 360.0, 0.1)
        # winding angles are the phase-A angle plus fixed shifts
        w = grid[:, None] + inrush_study.winding_angles(circuit, 0.0, zero)[None, :]
        b = np.clip(-np.cos(np.radians(w)), -max_flux_pu, max_flux_pu)
        worst = np.zeros(grid.size)
        for d in (-err_deg, 0.0, err_deg):
            off = np.abs(b + np.cos(np.radians(w + d))).max(axis=1)
            worst = np.maximum(worst, off)
        alpha = float(grid[int(np.argmin(np.round(worst, 12)))])
    w0 = inrush_study.winding_angles(circuit, alpha, zero)
    flux: FloatArray = np.clip(-np.cos(np.radians(w0)), -max_flux_pu, max_flux_pu)
    return alpha, flux


def _x_loop_ohm(circuit: EquivalentCircuit) -> float:
    """Reactance of the saturated loop, omega*(L_air + L_s), a delta's through two lines [ohm]."""
    mult = 1.0 if circuit.connection in ("single_phase", "wye_grounded") else 2.0
    l_loop = circuit.air_core_inductance_h + mult * circuit.source_inductance_h
    return 2.0 * math.pi * circuit.frequency_hz * l_loop


@dataclass(frozen=True)
class Context:
    """The case every option changes: the unit, its supply, residual flux and pole timing."""

    nameplate: Nameplate
    source: Source | None
    circuit: EquivalentCircuit
    dip_circuit: EquivalentCircuit | None
    event: SwitchingEvent
    supply: GeneratorSupply | None
    target_a: float | None
    max_steps: int | None

    @property
    def residual(self) -> FloatArray:
        """The event's residual flux per winding [pu of lambda_N]."""
        return self.event.residual_flux_pu

    @property
    def delay(self) -> FloatArray:
        """The event's pole closing instants, of an uncontrolled closing [s]."""
        return self.event.pole_delay_s


def _given(name: str, value: float | str, unit: str, given: bool, default: str) -> Assumption:
    return Assumption(name, value, unit, "given" if given else default)


def _controlled(opt: ControlledClosing, ctx: Context) -> Plan:
    c = ctx.circuit
    strategy = opt.strategy or ("simultaneous" if c.connection == "delta" else "independent")
    cc = point_on_wave.controlled_closing(
        c, ctx.residual, errors_ms=[0.0], strategy=strategy, max_steps=ctx.max_steps
    )
    e = opt.closing_error_ms
    p = Plan(
        "controlled_closing",
        f"controlled closing ({strategy.replace('_', ' ')}, +-{e:g} ms)",
        c,
        ctx.residual,
        cc.pole_delay_s,
        fixed_angle_deg=cc.closing_angle_deg,
        error_ms=e,
        dip_circuit=ctx.dip_circuit,
        worst_over=f"closing-time errors within +-{e:g} ms of the aimed instant",
    )
    p.parameters += [
        _given(
            "strategy",
            strategy,
            "-",
            opt.strategy is not None,
            "default: independent poles (simultaneous for a delta winding)",
        ),
        Assumption(
            "closing_error_ms",
            e,
            "ms",
            "given or the default +-1 ms (common practice, from memory)",
        ),
        Assumption(
            "aimed_closing_angle_deg",
            cc.closing_angle_deg,
            "deg",
            "phase-A angle where the flux matches the residual, arccos(-b_r) per winding "
            "(Brunke & Froehlich 2001, from memory)",
        ),
        Assumption(
            "pole_delay_ms",
            tuple(float(x) * 1e3 for x in cc.pole_delay_s),
            "ms",
            f"pole timing of the {strategy.replace('_', ' ')} strategy",
        ),
    ]
    if ctx.target_a is not None:
        win = point_on_wave.tolerance_window(
            c, ctx.residual, ctx.target_a, strategy=strategy, max_steps=ctx.max_steps
        )
        p.parameters.append(
            Assumption(
                "tolerance_half_width_ms",
                win.half_width_ms,
                "ms",
                "largest symmetric closing-time error keeping the peak below the target"
                + ("" if win.bounded else " (at least; the searched quarter cycle)"),
            )
        )
    p.requires += [
        "a controlled-switching (point-on-wave) controller and a breaker whose closing time is "
        f"repeatable to +-{e:g} ms",
        "the residual flux of each winding known at closing (measured at de-energisation)",
    ]
    if strategy != "simultaneous":
        p.requires.append("a breaker with independent pole operation")
    return p


def _resistor(opt: PreInsertionResistor, ctx: Context, warnings: list[tuple[str, str]]) -> Plan:
    c = ctx.circuit
    t_ins = opt.insertion_time_s if opt.insertion_time_s is not None else 1.0 / c.frequency_hz
    x_loop = _x_loop_ohm(c)
    params: list[Assumption] = [
        _given(
            "insertion_time_ms",
            t_ins * 1e3,
            "ms",
            opt.insertion_time_s is not None,
            "default: one cycle (modelling choice)",
        ),
    ]
    r = opt.resistance_ohm
    if r is not None:
        params.insert(0, Assumption("resistance_ohm", r, "ohm", "given"))
    else:
        window = t_ins + float(np.max(ctx.delay)) + WINDOW_CYCLES / c.frequency_hz

        def worst(rs: FloatArray) -> tuple[FloatArray, FloatArray]:
            # one search per resistance: each solver call stays within the compute limit on
            # its own (a large resistor needs sub-steps while it is in)
            found = [
                inrush_study.worst_closing_angles(
                    [c],
                    ctx.residual[None, :],
                    ctx.delay[None, :],
                    duration_s=window,
                    max_steps=ctx.max_steps,
                    per_case={
                        "insertion_resistance_ohm": np.array([x]),
                        "insertion_time_s": np.array([t_ins]),
                    },
                )
                for x in rs
            ]
            return (
                np.concatenate([a for a, _ in found]),
                np.concatenate([p for _, p in found], axis=0),
            )

        lim = ctx.supply.limit.max_dip_percent if ctx.supply is not None else None
        if ctx.supply is not None and ctx.dip_circuit is not None and lim is not None:
            sup, dc = ctx.supply, ctx.dip_circuit

            def dips(rs: FloatArray) -> FloatArray:
                angles, _ = worst(rs)
                return np.array(
                    [
                        dip.energize_from_source(
                            sup.generator,
                            dc,
                            switching_event(
                                dc,
                                float(a),
                                ctx.residual,
                                insertion_resistance_ohm=float(x),
                                insertion_time_s=t_ins,
                            ),
                            excitation=sup.excitation,
                            bus_load=sup.bus_load,
                            duration_s=1.0,
                            exact_peaks=False,
                        ).dip_percent
                        for a, x in zip(angles, rs, strict=True)
                    ]
                )

            sized = pre_insertion.smallest_resistance(dips, lim, x_loop)
            what = f"the {sup.limit.name} dip limit of {lim:g} %"
        elif ctx.target_a is not None:
            sized = pre_insertion.smallest_resistance(
                lambda rs: worst(rs)[1].max(axis=1), ctx.target_a, x_loop
            )
            what = f"the peak target of {ctx.target_a:.6g} A"
        else:
            sized = None
            what = ""
        if sized is None:
            r = x_loop
            params.insert(
                0,
                Assumption(
                    "resistance_ohm",
                    r,
                    "ohm",
                    "default: the saturated-loop reactance omega*(L_air + L_s) (modelling "
                    "choice: it divides the closed-form first peak by about sqrt(2); give a "
                    "target to size it)",
                ),
            )
        else:
            r = sized.resistance_ohm
            words = {
                "found": f"smallest resistance meeting {what} (scan and bisection, "
                f"{sized.evaluations} evaluations)",
                "below_range": f"smallest resistance scanned ({0.01:g} x the loop reactance) "
                f"already meets {what}",
                "not_reached": f"no resistance up to 100 x the loop reactance meets {what}; the "
                "one with the lowest value is shown",
            }[sized.status]
            params.insert(0, Assumption("resistance_ohm", r, "ohm", words))
            if sized.status == "not_reached":
                warnings.append(
                    (
                        "resistor_target_not_reached",
                        f"pre-insertion resistor: {words} (try a longer insertion time)",
                    )
                )
    p = Plan(
        "pre_insertion_resistor",
        f"pre-insertion resistor {r:.4g} ohm for {t_ins * 1e3:.3g} ms",
        c,
        ctx.residual,
        ctx.delay,
        extras={"insertion_resistance_ohm": r, "insertion_time_s": t_ins},
        dip_circuit=ctx.dip_circuit,
        parameters=params,
        worst_over="closing angle (uncontrolled breaker), resistor in circuit",
    )
    p.requires.append(
        "a breaker or switch with pre-insertion resistors rated for the insertion time and the "
        "energy below (the resistor is in series with each pole until the main contact closes)"
    )
    return p


#: What the worst case is taken over when the breaker closes at random.
UNCONTROLLED = "closing angle (uncontrolled breaker)"


def _demagnetize(opt: Demagnetize, ctx: Context, warnings: list[tuple[str, str]]) -> Plan:
    """The residual flux reduced to a share of itself before closing."""
    c = ctx.circuit
    k = opt.residual_fraction
    p = Plan(
        "demagnetize",
        f"demagnetised to {k:.0%} of the residual flux",
        c,
        ctx.residual * k,
        ctx.delay,
        dip_circuit=ctx.dip_circuit,
        worst_over=UNCONTROLLED,
    )
    p.parameters.append(Assumption("residual_fraction", k, "-", "given or the default 0"))
    p.requires.append(
        "a demagnetising procedure before energising (e.g. a decreasing alternating or "
        "reversing DC excitation), with no DC test or fault in between"
    )
    return p


def _premagnetize(opt: PreMagnetize, ctx: Context, warnings: list[tuple[str, str]]) -> Plan:
    """The core flux pre-set to match a fixed closing instant."""
    c = ctx.circuit
    alpha, flux = preset_flux(c, opt.max_flux_pu, opt.closing_error_ms, opt.closing_angle_deg)
    e = opt.closing_error_ms
    p = Plan(
        "pre_magnetize",
        f"pre-magnetised, closing at {alpha:.1f} deg +-{e:g} ms",
        c,
        flux,
        np.zeros(c.phases),
        fixed_angle_deg=alpha,
        error_ms=e,
        dip_circuit=ctx.dip_circuit,
        worst_over=f"closing-time errors within +-{e:g} ms",
    )
    p.parameters += [
        Assumption(
            "preset_flux_pu",
            tuple(float(x) for x in flux),
            "pu of nominal flux",
            "-cos of each winding's voltage angle at closing, within +-max_flux_pu",
        ),
        Assumption(
            "max_flux_pu",
            opt.max_flux_pu,
            "pu of nominal flux",
            "given or the default 0.8 (typical residual range, from memory)",
        ),
        _given(
            "closing_angle_deg",
            alpha,
            "deg",
            opt.closing_angle_deg is not None,
            "chosen: least flux mismatch over the error band",
        ),
        Assumption("closing_error_ms", e, "ms", "given or the default +-1 ms"),
    ]
    p.requires += [
        "a pre-magnetising circuit that sets the core flux before closing",
        f"all poles closed together at phase-A angle {alpha:.1f} deg, repeatable to "
        f"+-{e:g} ms (a controlled-switching controller)",
    ]
    return p


def _ramp(opt: Ramp, ctx: Context, warnings: list[tuple[str, str]]) -> Plan:
    """The supply voltage ramped up with the unit connected."""
    c = ctx.circuit
    p = Plan(
        "ramp",
        f"ramped from {opt.start_pu:g} pu over {opt.hold_s + opt.rise_s:g} s",
        c,
        ctx.residual,
        ctx.delay,
        extras={
            "voltage_start_pu": opt.start_pu,
            "voltage_hold_s": opt.hold_s,
            "voltage_rise_s": opt.rise_s,
        },
        dip_note="dip not defined: the supply's own voltage is ramped (loads on the "
        "same bus see the ramp)",
        worst_over=UNCONTROLLED,
    )
    p.parameters += [
        Assumption("start_pu", opt.start_pu, "pu of rated voltage", "given or the default 0"),
        Assumption("hold_s", opt.hold_s, "s", "given or the default 0"),
        Assumption("rise_s", opt.rise_s, "s", "given or the default 0.5 s (modelling choice)"),
    ]
    p.requires.append(
        "a supply whose voltage can be raised with the unit connected: a generator's soft "
        "start (excitation ramp) or a reduced-voltage source with a switch-over"
    )
    if opt.rise_s == 0.0 and opt.hold_s > 0.0:
        p.notes.append("the step to rated voltage is itself an energisation (simulated)")
    return p


def _retap(opt: Retap, ctx: Context, warnings: list[tuple[str, str]]) -> Plan:
    """The energised winding's turns changed by a tap."""
    c = ctx.circuit
    k = 1.0 + opt.turns_percent / 100.0
    p = Plan(
        "tap",
        f"tap with {opt.turns_percent:+g} % turns on the energised winding",
        variants.retap(c, k),
        ctx.residual * k,
        ctx.delay,
        dip_circuit=variants.retap(ctx.dip_circuit, k) if ctx.dip_circuit else None,
        worst_over=UNCONTROLLED,
    )
    p.parameters += [
        Assumption(
            "turns_percent",
            opt.turns_percent,
            "%",
            "given or the default +5 % (common practice: +-2 x 2.5 % off-circuit taps)",
        ),
        Assumption(
            "output_voltage_change_percent",
            100.0 * (1.0 / k - 1.0),
            "%",
            "the other winding's voltage at the same applied voltage",
        ),
    ]
    p.requires.append(
        "an off-circuit tap on the energised winding (taps usually sit on the high-voltage "
        "winding; a tap on the open winding does not change the inrush), and a secondary "
        "voltage that tolerates the change"
    )
    p.notes.append("residual flux density kept: in per unit of nominal flux it scales with k")
    return p


def _material(opt: CoreMaterial, ctx: Context, warnings: list[tuple[str, str]]) -> Plan:
    """The same unit with another core material."""
    npl = ctx.nameplate
    other = "amorphous" if npl.material == "grain_oriented" else "grain_oriented"
    mat = opt.material or other
    args = (mat, opt.nominal_flux_density_t, opt.saturation_flux_density_t)
    vc = variants.with_material(npl, ctx.source, *args)
    p = Plan(
        "core_material",
        f"{mat.replace('_', '-')} core",
        vc,
        ctx.residual,
        ctx.delay,
        dip_circuit=variants.with_material(npl, None, *args) if ctx.dip_circuit else None,
        worst_over=UNCONTROLLED,
    )
    p.parameters += [
        _given("material", mat, "-", opt.material is not None, "default: the other class"),
        *[a for a in vc.assumptions if a.name.endswith("flux_density_t")],
    ]
    p.requires.append("a new or rebuilt core (a design choice, not a retrofit)")
    p.notes += ["residual flux kept in per unit", *variants.variant_notes(npl)]
    return p


def _rating(opt: Rating, ctx: Context, warnings: list[tuple[str, str]]) -> Plan:
    """A larger unit of the next standard rating."""
    npl = ctx.nameplate
    rating = opt.rating_va or 1e3 * variants.next_standard_rating_kva(
        npl.rating_va / 1e3, npl.phases
    )
    p = Plan(
        "rating",
        f"{rating / 1e3:g} kVA unit, same per-unit data",
        variants.with_rating(npl, ctx.source, rating),
        ctx.residual,
        ctx.delay,
        dip_circuit=variants.with_rating(npl, None, rating) if ctx.dip_circuit else None,
        rating_va=rating,
        worst_over=UNCONTROLLED,
    )
    p.parameters.append(
        _given(
            "rating_kva",
            rating / 1e3,
            "kVA",
            opt.rating_va is not None,
            "default: the next standard rating up (IEEE C57.12.00 list, from memory)",
        )
    )
    p.requires.append("a rating that still carries the load (not checked here)")
    p.notes += [
        "peak x rated is of the present unit's rated current (the same duty)",
        *variants.variant_notes(npl),
    ]
    return p


def _other_winding(opt: OtherWinding, ctx: Context, warnings: list[tuple[str, str]]) -> Plan:
    """The unit energised from its other winding."""
    npl = ctx.nameplate
    pos = opt.position or ("outer" if npl.position == "inner" else "inner")
    vc = variants.from_other_winding(npl, opt.source, opt.line_voltage_v, opt.connection, pos)
    p = Plan(
        "other_winding",
        f"energised from the {opt.line_voltage_v / 1e3:g} kV {pos} winding",
        vc,
        ctx.residual,
        ctx.delay[: vc.phases],
        dip_note="dip not evaluated: the supply is on the presently energised side",
        devices_apply=False,
        x_rated_base_a=vc.rated_line_current_a,
        worst_over=UNCONTROLLED,
    )
    p.parameters += [
        Assumption("line_voltage_v", opt.line_voltage_v, "V", "given"),
        Assumption("connection", opt.connection, "-", "given"),
        _given("position", pos, "-", opt.position is not None, "default: the other position"),
        Assumption(
            "source",
            opt.source.kind if opt.source else "ideal",
            "-",
            "given" if opt.source else "default: ideal source",
        ),
    ]
    p.requires.append("a supply on the other winding's side able to carry its inrush")
    p.notes += [
        "devices not evaluated: they sit on the presently energised side",
        "peak x rated is of the other winding's rated current",
        *variants.variant_notes(npl),
    ]
    return p


# Each option kind's plan builder: plan_for looks the option's class up here.
_BUILDERS: dict[type, Callable[[Any, Context, list[tuple[str, str]]], Plan]] = {
    ControlledClosing: lambda opt, ctx, _warnings: _controlled(opt, ctx),
    PreInsertionResistor: _resistor,
    Demagnetize: _demagnetize,
    PreMagnetize: _premagnetize,
    Ramp: _ramp,
    Retap: _retap,
    CoreMaterial: _material,
    Rating: _rating,
    OtherWinding: _other_winding,
}


def plan_for(opt: Option, ctx: Context, warnings: list[tuple[str, str]]) -> Plan:
    """The events an option leaves possible, with its parameters and requirements.

    Parameters
    ----------
    opt : Option
        The mitigation option [-].
    ctx : Context
        The case it changes: unit, supply, residual flux, pole timing [-].
    warnings : list of (str, str)
        Collects (code, message) warnings the option raises [-].
    """
    build = _BUILDERS.get(type(opt))
    if build is None:
        raise ParameterError("option", type(opt).__name__, "one of " + ", ".join(KINDS))
    return build(opt, ctx, warnings)
