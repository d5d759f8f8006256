"""SVG figures: the time-current characteristic (TCC) plot and the inrush waveform.

Plain arrays in, SVG text out; nothing here computes physics (the caller takes the curves from
:mod:`core.protection.device_operation`, :mod:`core.protection.damage_curves` and
:mod:`core.waveform`). Rendering uses matplotlib's object-oriented
:class:`~matplotlib.figure.Figure` with the SVG canvas (no pyplot, so no global backend or figure
registry) and is byte-for-byte deterministic: a fixed ``svg.hashsalt`` for element ids, text kept as
text (``svg.fonttype = 'none'``), no date in the metadata; rc settings are applied in a context, so
global state is left as found.
"""

from __future__ import annotations

import io
import textwrap
from collections.abc import Sequence
from contextlib import AbstractContextManager
from dataclasses import dataclass

import matplotlib as mpl
import numpy as np
import numpy.typing as npt
from matplotlib.axes import Axes
from matplotlib.backends.backend_svg import FigureCanvasSVG
from matplotlib.figure import Figure

from core.errors import ParameterError

FloatArray = npt.NDArray[np.float64]

#: Salt of the SVG element ids: fixed, so the same figure gives the same bytes.
SVG_HASHSALT = "firstcycle"
TCC_FIGSIZE_IN = (8.5, 8.0)  # log-log TCC near square; the legend sits below the axes
WAVEFORM_FIGSIZE_IN = (10.0, 6.5)
POINTS_LABEL = "Inrush points (common practice: 12 × I_r at 0.1 s, 25 × I_r at 0.01 s)"
DAMAGE_LABEL = "Through-fault damage limit (IEEE C57.109)"
LEGEND_WIDTH_CHARS = 100  # TCC legend lines wrap here (one column below the axes)
#: Time axis of the TCC: the span of the usual log-log TCC sheet, 0.01-1000 s (common practice).
TCC_TIME_RANGE_S = (0.01, 1000.0)


@dataclass(frozen=True, eq=False)
class CurveTrace:
    """One device on the TCC: a curve, or a band when ``upper_time_s`` is given.

    Attributes
    ----------
    label : str
        Legend label, e.g. "Fuse 65E: minimum melt / total clearing".
    current_a : array_like, shape (n,)
        Currents [A].
    time_s : array_like, shape (n,)
        Lower edge (minimum melt, minimum band, relay curve); +inf or NaN leaves a gap [s].
    upper_time_s : array_like, shape (n,), optional
        Upper edge (total clearing, maximum band, relay curve plus opening time) [s].
    verticals : sequence of (float, float, float), optional
        Vertical edges (current [A], lower time [s], upper time [s]): a lower time of 0 runs to
        the bottom of the axes, an upper time of +inf to the top (an instantaneous pickup).
    tag : str, optional
        Short name written beside the curve on the plot; empty: none.
    """

    label: str
    current_a: npt.ArrayLike
    time_s: npt.ArrayLike
    upper_time_s: npt.ArrayLike | None = None
    verticals: Sequence[tuple[float, float, float]] = ()
    tag: str = ""


@dataclass(frozen=True)
class Marker:
    """A point marked on the TCC with its words, e.g. what an instantaneous element compares.

    Attributes
    ----------
    current_a : float
        Current [A].
    time_s : float
        Time; drawn at the bottom of the axes if below it [s].
    label : str
        Legend label.
    tag : str
        Short text written beside the marker.
    """

    current_a: float
    time_s: float
    label: str
    tag: str = ""


def _vec(value: npt.ArrayLike, name: str, size: int | None = None) -> FloatArray:
    try:
        a = np.array(value, dtype=np.float64)
    except (TypeError, ValueError):
        raise ParameterError(name, value, "numbers") from None
    if a.ndim != 1 or (size is not None and a.size != size):
        raise ParameterError(name, a.shape, f"a 1-D array of {size or 'n'} values")
    return a


def _positive(a: FloatArray) -> FloatArray:
    """Values a log axis can show; the rest (<= 0, inf, NaN) become gaps."""
    with np.errstate(invalid="ignore"):
        return np.where(np.isfinite(a) & (a > 0.0), a, np.nan)


def _rows(value: npt.ArrayLike, name: str, names: Sequence[str], size: int) -> FloatArray:
    a = np.array(value, dtype=np.float64)
    a = a.reshape(1, -1) if a.ndim == 1 else a
    if a.ndim != 2 or a.shape != (len(names), size):
        raise ParameterError(name, a.shape, f"({len(names)}, {size}): one row per line name")
    return a


def _rc() -> AbstractContextManager[None]:
    """rc settings of every figure: fixed id salt, text kept as <text> (searchable, no glyphs)."""
    return mpl.rc_context({"svg.hashsalt": SVG_HASHSALT, "svg.fonttype": "none"})


def _render(fig: Figure) -> str:
    FigureCanvasSVG(fig)  # attaches the SVG canvas: no pyplot, no global backend
    buf = io.StringIO()
    fig.savefig(buf, format="svg", metadata={"Date": None})
    return buf.getvalue()


def _limits(ax: Axes, xs: list[FloatArray], ys: list[FloatArray]) -> None:
    lo, hi = TCC_TIME_RANGE_S
    ax.set_ylim(lo, hi)
    on = [(x, y) for x, y in zip(xs, ys, strict=True) if x.size == y.size]
    inside = [x[np.isfinite(y) & (y >= lo) & (y <= hi) & np.isfinite(x)] for x, y in on]
    x = np.concatenate([*inside, np.empty(0)])
    if x.size:
        ax.set_xlim(x.min() / 1.5, x.max() * 1.5)


def _tag(ax: Axes, x: FloatArray, y: FloatArray, text: str, colour: object, where: float) -> None:
    """Write ``text`` beside the curve, at the fraction ``where`` of its visible points."""
    lo, hi = ax.get_ylim()
    x0, x1 = ax.get_xlim()
    ok = np.flatnonzero(np.isfinite(x) & np.isfinite(y) & (y > lo) & (y < hi) & (x > x0) & (x < x1))
    if not text or ok.size == 0:
        return
    k = int(ok[min(int(where * ok.size), ok.size - 1)])
    ax.annotate(
        text, (float(x[k]), float(y[k])), xytext=(4, 3), textcoords="offset points",
        fontsize="small", color=colour, fontweight="bold",
        bbox={"boxstyle": "round,pad=0.15", "fc": "white", "ec": "none", "alpha": 0.75},
    )  # fmt: skip


def tcc_svg(
    title: str,
    *,
    eq_time_s: npt.ArrayLike | None = None,
    eq_current_a: npt.ArrayLike | None = None,
    line_names: Sequence[str] = ("A", "B", "C"),
    points_current_a: npt.ArrayLike = (),
    points_time_s: npt.ArrayLike = (),
    devices: Sequence[CurveTrace] = (),
    damage_current_a: npt.ArrayLike | None = None,
    damage_time_s: npt.ArrayLike | None = None,
    points_label: str = POINTS_LABEL,
    damage_label: str = DAMAGE_LABEL,
    markers: Sequence[Marker] = (),
    current_label: str = "Current [A]",
) -> str:
    """Time-current characteristic on log-log axes as SVG text.

    Parameters
    ----------
    title : str
        Figure title.
    eq_time_s, eq_current_a : array_like, optional
        I_eq(t) per line: times, shape (n_t,) [s], and currents, shape (n_lines, n_t) [A],
        e.g. ``InrushCurves.eq_time_s`` and ``.eq_current_a``; drawn as current against time.
    line_names : sequence of str
        One label per row of ``eq_current_a``.
    points_current_a, points_time_s : array_like
        The common-practice inrush points, drawn as markers [A], [s].
    devices : sequence of CurveTrace
        Device curves or bands.
    damage_current_a, damage_time_s : array_like, optional
        The through-fault damage curve [A], [s].
    points_label, damage_label : str
        Legend labels of the points and of the damage curve.
    markers : sequence of Marker
        Points to mark, each with its legend label and a short text on the plot.
    current_label : str
        Label of the current axis (say the reference voltage the currents are at).

    Returns
    -------
    str
        The SVG document.

    Raises
    ------
    ParameterError
        On arrays of mismatched shapes.

    Notes
    -----
    The time axis spans :data:`TCC_TIME_RANGE_S`; the current axis the visible data. Each
    device, the damage curve and each inrush line is named on the plot as well as in the legend.
    SVG group ids name what each line is: ``inrush-<line>``, ``inrush-points``,
    ``device-<k>-lower``, ``device-<k>-upper``, ``device-<k>-edge-<j>``, ``damage``,
    ``marker-<j>``.
    """
    fig = Figure(figsize=TCC_FIGSIZE_IN, layout="constrained")
    ax = fig.add_subplot()
    xs: list[FloatArray] = []
    ys: list[FloatArray] = []
    tags: list[tuple[FloatArray, FloatArray, str, object, float]] = []
    verticals: list[tuple[float, float, float, object, str]] = []

    def draw(x: FloatArray, y: FloatArray, **style: object) -> None:
        x, y = _positive(x), _positive(y)
        ax.plot(x, y, **style)  # type: ignore[arg-type]
        xs.append(x)
        ys.append(y)

    with _rc():
        if (eq_time_s is None) != (eq_current_a is None):
            raise ParameterError("eq_current_a", None, "given together with eq_time_s")
        if eq_time_s is not None and eq_current_a is not None:
            t = _vec(eq_time_s, "eq_time_s")
            for name, row in zip(
                line_names, _rows(eq_current_a, "eq_current_a", line_names, t.size), strict=True
            ):
                draw(
                    row,
                    t,
                    linewidth=1.8,
                    label=f"Inrush I_eq(t), line {name}",
                    gid=f"inrush-{name}",
                )
                line = ax.get_lines()[-1]
                tags.append((_positive(row), t, f"I_eq {name}", line.get_color(), 0.85))
        px = _vec(points_current_a, "points_current_a")
        py = _vec(points_time_s, "points_time_s", px.size)
        if px.size:
            draw(
                px,
                py,
                linestyle="none",
                marker="D",
                markersize=7,
                color="tab:red",
                label=points_label,
                gid="inrush-points",
            )
        for k, dev in enumerate(devices):
            colour = f"C{(k + 3) % 10}"
            x = _vec(dev.current_a, f"devices[{k}].current_a")
            lo = _vec(dev.time_s, f"devices[{k}].time_s", x.size)
            draw(x, lo, color=colour, linewidth=1.4, label=dev.label, gid=f"device-{k}-lower")
            tags.append((_positive(x), _positive(lo), dev.tag, colour, 0.3))
            verticals += [
                (c, a, b, colour, f"device-{k}-edge-{j}")
                for j, (c, a, b) in enumerate(dev.verticals)
            ]
            if dev.upper_time_s is not None:
                hi = _vec(dev.upper_time_s, f"devices[{k}].upper_time_s", x.size)
                draw(x, hi, color=colour, linewidth=1.4, linestyle="--", gid=f"device-{k}-upper")
                lo_p, hi_p = _positive(lo), _positive(hi)
                ax.fill_between(
                    _positive(x), lo_p, hi_p, where=np.isfinite(lo_p) & np.isfinite(hi_p),
                    color=colour, alpha=0.15, linewidth=0.0,
                )  # fmt: skip
        if (damage_current_a is None) != (damage_time_s is None):
            raise ParameterError("damage_time_s", None, "given together with damage_current_a")
        if damage_current_a is not None and damage_time_s is not None:
            dx = _vec(damage_current_a, "damage_current_a")
            dy = _vec(damage_time_s, "damage_time_s", dx.size)
            draw(dx, dy, color="black", linewidth=2.2, label=damage_label, gid="damage")
            tags.append((_positive(dx), _positive(dy), "damage limit", "black", 0.1))
        for m in markers:  # a marker below the axes is drawn at their bottom: keep it in view
            xs.append(np.array([m.current_a]))
            ys.append(np.array([max(m.time_s, TCC_TIME_RANGE_S[0])]))
        ax.set_xscale("log")
        ax.set_yscale("log")
        _limits(ax, xs, ys)
        bottom, top = ax.get_ylim()
        for c, a, b, edge_colour, gid in verticals:
            y0, y1 = (bottom if a <= 0.0 else a), (top if not np.isfinite(b) else b)
            ax.plot([c, c], [y0, y1], color=edge_colour, linewidth=1.4, gid=gid)
        for j, m in enumerate(markers):
            y_m = max(float(m.time_s), bottom * 1.25) if np.isfinite(m.time_s) else bottom * 1.25
            ax.plot([m.current_a], [y_m], linestyle="none", marker="X", markersize=10,
                    color="crimson", label=m.label, zorder=5, gid=f"marker-{j}")  # fmt: skip
            ax.annotate(m.tag, (m.current_a, y_m), xytext=(6, 4), textcoords="offset points",
                        fontsize="small", color="crimson")  # fmt: skip
        for tag_x, tag_y, text, tag_colour, where in tags:
            _tag(ax, tag_x, tag_y, text, tag_colour, where)
        ax.set_xlabel(current_label)
        ax.set_ylabel("Time [s]")
        ax.set_title(title)
        ax.grid(True, which="major", linewidth=0.6, alpha=0.6)
        ax.grid(True, which="minor", linewidth=0.3, alpha=0.35)
        handles, labels = ax.get_legend_handles_labels()
        if handles:
            wrapped = [textwrap.fill(text, LEGEND_WIDTH_CHARS) for text in labels]
            fig.legend(handles, wrapped, loc="outside lower center", ncols=1, fontsize="small")
        return _render(fig)


def waveform_svg(
    title: str,
    time_s: npt.ArrayLike,
    current_a: npt.ArrayLike,
    *,
    line_names: Sequence[str] = ("A", "B", "C"),
    envelope_time_s: npt.ArrayLike | None = None,
    envelope_a: npt.ArrayLike | None = None,
) -> str:
    """Inrush current against time per line, with its per-cycle peak envelope, as SVG text.

    Parameters
    ----------
    title : str
        Figure title.
    time_s : array_like, shape (n,)
        Sample times [s].
    current_a : array_like, shape (n_lines, n) or (n,)
        Line currents [A].
    line_names : sequence of str
        One label per line.
    envelope_time_s : array_like, shape (n_cycles,), optional
        Time at which each cycle's peak is drawn (e.g. the cycle's start or its peak) [s].
    envelope_a : array_like, shape (n_lines, n_cycles), optional
        Per-cycle peak |i|, e.g. :func:`core.waveform.cycle_peaks`; drawn dashed on the
        side where the line's current mostly lies (the sign of its mean), so the envelope meets the
        lobes it describes [A].

    Returns
    -------
    str
        The SVG document.

    Raises
    ------
    ParameterError
        On arrays of mismatched shapes.
    """
    fig = Figure(figsize=WAVEFORM_FIGSIZE_IN, layout="constrained")
    ax = fig.add_subplot()
    with _rc():
        t = _vec(time_s, "time_s")
        cur = _rows(current_a, "current_a", line_names, t.size)
        if (envelope_time_s is None) != (envelope_a is None):
            raise ParameterError("envelope_a", None, "given together with envelope_time_s")
        env_t = None if envelope_time_s is None else _vec(envelope_time_s, "envelope_time_s")
        env = None
        if env_t is not None and envelope_a is not None:
            env = _rows(envelope_a, "envelope_a", line_names, env_t.size)
        for k, name in enumerate(line_names):
            ax.plot(t, cur[k], color=f"C{k}", linewidth=0.8, label=f"Line {name}")
            if env is not None and env_t is not None:
                label = f"Line {name}: per-cycle peak envelope"
                side = -1.0 if float(np.mean(cur[k])) < 0.0 else 1.0
                ax.plot(env_t, side * env[k], color=f"C{k}", linestyle="--", label=label)
        ax.axhline(0.0, color="0.4", linewidth=0.6)
        ax.set_xlabel("Time [s]")
        ax.set_ylabel("Current [A]")
        ax.set_title(title)
        ax.grid(True, linewidth=0.5, alpha=0.5)
        fig.legend(loc="outside lower center", ncols=2, fontsize="small")
        return _render(fig)


def voltage_dip_svg(
    title: str,
    time_s: npt.ArrayLike,
    voltage_pu: npt.ArrayLike,
    *,
    line_names: Sequence[str] = ("A", "B", "C"),
    dip_limit_percent: float | None = None,
    band_percent: float | None = None,
    recovery_time_s: float | None = None,
    voltage_label: str = "Terminal voltage, rms per cycle",
) -> str:
    """Terminal voltage (rms per cycle) against time with the dip limit, band and recovery.

    Parameters
    ----------
    title : str
        Figure title.
    time_s : array_like, shape (n_cycles,)
        Start of each cycle [s].
    voltage_pu : array_like, shape (n_lines, n_cycles) or (n_cycles,)
        Rms voltage per cycle [pu].
    line_names : sequence of str
        One label per row.
    dip_limit_percent : float or None
        The limit's allowed dip, drawn at 1 - limit/100 [%].
    band_percent : float or None
        Recovery band around 1 pu [%].
    recovery_time_s : float or None
        Where the voltage re-enters the band for good [s].

    Returns
    -------
    str
        The SVG document.
    """
    fig = Figure(figsize=WAVEFORM_FIGSIZE_IN, layout="constrained")
    ax = fig.add_subplot()
    with _rc():
        t = _vec(time_s, "time_s")
        v = _rows(voltage_pu, "voltage_pu", line_names, t.size)
        for k, name in enumerate(line_names):
            ax.step(t, v[k], where="post", color=f"C{k}", linewidth=1.0,
                    label=f"{voltage_label}, {name}")  # fmt: skip
        if band_percent is not None:
            lo, hi = 1.0 - band_percent / 100.0, 1.0 + band_percent / 100.0
            ax.axhspan(lo, hi, color="0.85", alpha=0.6, label=f"Recovery band ±{band_percent:g} %")
        if dip_limit_percent is not None:
            ax.axhline(1.0 - dip_limit_percent / 100.0, color="C3", linestyle="--",
                       label=f"Dip limit {dip_limit_percent:g} %")  # fmt: skip
        if recovery_time_s is not None and np.isfinite(recovery_time_s):
            ax.axvline(recovery_time_s, color="0.3", linestyle=":",
                       label=f"Recovered at {recovery_time_s:.2f} s")  # fmt: skip
        ax.set_xlabel("Time [s]")
        ax.set_ylabel("Voltage [pu]")
        ax.set_title(title)
        ax.grid(True, linewidth=0.5, alpha=0.5)
        fig.legend(loc="outside lower center", ncols=2, fontsize="small")
        return _render(fig)


DIFFERENTIAL_FIGSIZE_IN = (10.0, 8.0)


def differential_svg(
    title: str,
    *,
    phases: Sequence[str],
    operate_pu: npt.ArrayLike,
    restraint_pu: npt.ArrayLike,
    second_harmonic_percent: npt.ArrayLike,
    cycle_end_s: npt.ArrayLike,
    characteristic_restraint_pu: npt.ArrayLike,
    characteristic_operate_pu: npt.ArrayLike,
    second_harmonic_level_percent: float,
) -> str:
    """A differential element through the energisation: operate against restraint per phase,
    with its characteristic, and the second-harmonic ratio it sees against its setting.

    Parameters
    ----------
    title : str
        Figure title.
    phases : sequence of str
        One label per row of the per-cycle arrays.
    operate_pu : array_like, shape (n_phases, n_cycles)
        Operate current at each cycle's end [pu of the relay's tap].
    restraint_pu : array_like, shape (n_phases, n_cycles)
        Restraint current at each cycle's end [pu of the relay's tap].
    second_harmonic_percent : array_like, shape (n_phases, n_cycles)
        Second-harmonic ratio the relay sees at each cycle's end (nan where no current) [%].
    cycle_end_s : array_like, shape (n_cycles,)
        End of each cycle after the closing [s].
    characteristic_restraint_pu, characteristic_operate_pu : array_like, shape (m,)
        The percentage characteristic: operate threshold against restraint [pu of the tap].
    second_harmonic_level_percent : float
        The blocking level [%].

    Returns
    -------
    str
        The SVG document.
    """
    fig = Figure(figsize=DIFFERENTIAL_FIGSIZE_IN, layout="constrained")
    top, bottom = fig.subplots(2, 1)
    with _rc():
        t = _vec(cycle_end_s, "cycle_end_s")
        op = _rows(operate_pu, "operate_pu", phases, t.size)
        rs = _rows(restraint_pu, "restraint_pu", phases, t.size)
        r2 = _rows(second_harmonic_percent, "second_harmonic_percent", phases, t.size)
        cr = _vec(characteristic_restraint_pu, "characteristic_restraint_pu")
        co = _vec(characteristic_operate_pu, "characteristic_operate_pu", cr.size)
        ceiling = 1.1 * float(np.nanmax(np.concatenate([co, op.ravel(), [1.0]])))
        top.fill_between(cr, co, ceiling, where=co < ceiling, color="C3", alpha=0.08,
                         label="Operate region (above the characteristic)")  # fmt: skip
        top.set_ylim(0.0, ceiling)
        top.plot(cr, co, color="C3", linewidth=1.5, label="Percentage characteristic")
        for k, name in enumerate(phases):
            top.plot(rs[k], op[k], marker="o", markersize=3, color=f"C{k}", linewidth=0.8,
                     label=f"Phase {name}, cycle by cycle")  # fmt: skip
            bottom.step(t, r2[k], where="post", color=f"C{k}", linewidth=1.0,
                        label=f"Second harmonic, phase {name}")  # fmt: skip
        bottom.axhline(second_harmonic_level_percent, color="C3", linestyle="--",
                       label=f"Blocking level {second_harmonic_level_percent:g} %")  # fmt: skip
        top.set_xlabel("Restraint current [pu of tap]")
        top.set_ylabel("Operate current [pu of tap]")
        top.set_title(title)
        bottom.set_xlabel("Time after closing, end of each one-cycle window [s]")
        bottom.set_ylabel("Second harmonic / fundamental [%]")
        for ax in (top, bottom):
            ax.grid(True, linewidth=0.5, alpha=0.5)
            ax.legend(fontsize="small")
        return _render(fig)


NETWORK_FIGSIZE_IN = (10.0, 8.0)


@dataclass(frozen=True, eq=False)
class CurrentTrace:
    """One current drawn against time on the network figure.

    Attributes
    ----------
    label : str
        Legend label, e.g. "Source, line A".
    tag : str
        Short name written beside the curve on the plot.
    current_a : array_like, shape (n,)
        The current at the figure's sample times [A].
    gid : str
        Id of the curve's group in the SVG (for readers of the file).
    """

    label: str
    tag: str
    current_a: npt.ArrayLike
    gid: str


def network_svg(
    title: str,
    time_s: npt.ArrayLike,
    energized: Sequence[CurrentTrace],
    in_service: Sequence[CurrentTrace] = (),
) -> str:
    """Currents of a network energisation against time: the source and the energised units
    above, the units in service (their sympathetic currents, usually far smaller) below.

    Parameters
    ----------
    title : str
        Figure title.
    time_s : array_like, shape (n,)
        Sample times [s].
    energized : sequence of CurrentTrace
        The source current and the energised units' currents (top axes).
    in_service : sequence of CurrentTrace
        The units in service (bottom axes; none: one axes only).

    Returns
    -------
    str
        The SVG document.

    Raises
    ------
    ParameterError
        On a current whose length is not that of ``time_s``.
    """
    fig = Figure(figsize=NETWORK_FIGSIZE_IN if in_service else WAVEFORM_FIGSIZE_IN,
                 layout="constrained")  # fmt: skip
    axes = list(fig.subplots(2, 1, sharex=True)) if in_service else [fig.add_subplot()]
    with _rc():
        t = _vec(time_s, "time_s")
        colour = 0
        panels = zip(
            axes,
            (energized, in_service),
            ("Source and energised units", "Units in service (sympathetic current)"),
            ("top", "bottom"),
            strict=False,
        )
        for ax, traces, what, where in panels:
            for tr in traces:
                i = _vec(tr.current_a, f"{tr.gid}.current_a", t.size)
                c = f"C{colour % 10}"
                colour += 1
                ax.plot(t, i, color=c, linewidth=0.8, label=tr.label, gid=tr.gid)
                # the name at the curve's own largest excursion
                k = int(np.argmax(np.abs(i)))
                _tag(ax, t[k : k + 1], i[k : k + 1], tr.tag, c, 0.0)
            ax.axhline(0.0, color="0.4", linewidth=0.6, gid=f"zero-{where}")
            ax.set_ylabel("Current [A]")
            ax.set_title(f"{title}\n{what}" if where == "top" else what)
            ax.grid(True, linewidth=0.5, alpha=0.5)
        axes[-1].set_xlabel("Time [s]")
        fig.legend(loc="outside lower center", ncols=2, fontsize="small")
        return _render(fig)
