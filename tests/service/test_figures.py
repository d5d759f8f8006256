"""Tests of service.figures: the SVG renders, parses as XML, carries its labels as text, and the
same inputs give the same bytes (in this process and in a fresh one). Device data is invented."""

from __future__ import annotations

import hashlib
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import matplotlib as mpl
import numpy as np
import pytest

from core.errors import ParameterError
from service import figures

ROOT = Path(__file__).resolve().parents[2]
SVG_NS = "{http://www.w3.org/2000/svg}"


def _tcc_inputs() -> dict[str, object]:
    t = np.geomspace(1 / 120, 2.0, 60)
    eq = np.vstack([1000.0 * t**-0.35, 700.0 * t**-0.3])  # invented decaying I_eq curves
    grid = np.geomspace(150.0, 8000.0, 40)
    melt = 2000.0 * (grid / 150.0) ** -2.5
    relay = 2.0 * (19.61 / ((grid / 140.0) ** 2 - 1.0) + 0.491)
    return {
        "eq_time_s": t,
        "eq_current_a": eq,
        "line_names": ("A", "B"),
        "points_current_a": [1200.0, 2500.0],
        "points_time_s": [0.1, 0.01],
        "devices": (
            figures.CurveTrace("Fuse 100E (invented)", grid, melt, 2.0 * melt),
            figures.CurveTrace("Relay 51 very inverse", grid, relay, relay + 5 / 60),
            figures.CurveTrace("Breaker (min band only)", grid, np.where(grid > 4000, 0.0, melt)),
        ),
        "damage_current_a": [200.0, 2000.0, 2000.0, 4000.0],
        "damage_time_s": [312.5, 3.125, 1.5, 0.4],
    }


def _texts(svg: str) -> str:
    root = ET.fromstring(svg)
    return "\n".join("".join(el.itertext()) for el in root.iter(f"{SVG_NS}text"))


def test_tcc_renders_valid_svg_with_labels() -> None:
    svg = figures.tcc_svg("Northgate main unit: TCC", **_tcc_inputs())  # type: ignore[arg-type]
    root = ET.fromstring(svg)
    assert root.tag == f"{SVG_NS}svg"
    text = _texts(svg)
    for label in (
        "Northgate main unit: TCC",
        "Current [A]",
        "Time [s]",
        "Inrush I_eq(t), line A",
        "Inrush I_eq(t), line B",
        figures.POINTS_LABEL,
        "Fuse 100E (invented)",
        "Relay 51 very inverse",
        "Breaker (min band only)",
        figures.DAMAGE_LABEL,
    ):
        assert label in text, label
    assert "<dc:date>" not in svg  # no date in the metadata


def test_tcc_same_inputs_same_bytes_and_global_rc_untouched() -> None:
    before = dict(mpl.rcParams)
    first = figures.tcc_svg("T", **_tcc_inputs())  # type: ignore[arg-type]
    second = figures.tcc_svg("T", **_tcc_inputs())  # type: ignore[arg-type]
    assert first.encode() == second.encode()
    assert dict(mpl.rcParams) == before


def test_tcc_same_bytes_in_a_fresh_process() -> None:
    code = (
        "import hashlib, sys; sys.path.insert(0, 'tests/service'); import test_figures as tf; "
        "from service import figures; "
        "print(hashlib.sha256(figures.tcc_svg('T', **tf._tcc_inputs()).encode()).hexdigest())"
    )
    out = subprocess.run(
        [sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True, check=True
    )
    here = hashlib.sha256(figures.tcc_svg("T", **_tcc_inputs()).encode()).hexdigest()  # type: ignore[arg-type]
    assert out.stdout.strip() == here


def test_tcc_with_nothing_but_a_title_still_renders() -> None:
    svg = figures.tcc_svg("Empty")
    assert "Current [A]" in _texts(svg)


def test_waveform_renders_with_envelope() -> None:
    t = np.arange(0, 0.5, 1 / 3840)
    cur = np.vstack([800 * np.exp(-t / 0.2) * (1 - np.cos(2 * np.pi * 60 * t)), -0.5 * t])
    env_t = np.arange(30) / 60.0
    env = np.vstack([1600 * np.exp(-env_t / 0.2), 0.25 + 0 * env_t])
    kw = {"line_names": ("A", "B"), "envelope_time_s": env_t, "envelope_a": env}
    svg = figures.waveform_svg("Energisation, 0 deg", t, cur, **kw)  # type: ignore[arg-type]
    text = _texts(svg)
    labels = ("Energisation, 0 deg", "Time [s]", "Current [A]", "Line A", "Line B")
    for label in (*labels, "Line A: per-cycle peak envelope", "Line B: per-cycle peak envelope"):
        assert label in text, label
    assert svg == figures.waveform_svg("Energisation, 0 deg", t, cur, **kw)  # type: ignore[arg-type]


@pytest.mark.parametrize(
    ("kwargs", "name"),
    [
        ({"eq_time_s": [1.0, 2.0], "eq_current_a": [[1.0, 2.0, 3.0]]}, "eq_current_a"),
        ({"eq_time_s": [1.0, 2.0]}, "eq_current_a"),
        ({"points_current_a": [1.0], "points_time_s": [1.0, 2.0]}, "points_time_s"),
        ({"damage_current_a": [1.0, 2.0]}, "damage_time_s"),
    ],
)
def test_mismatched_shapes_are_parameter_errors(kwargs: dict[str, object], name: str) -> None:
    with pytest.raises(ParameterError) as err:
        figures.tcc_svg("x", **kwargs)  # type: ignore[arg-type]
    assert err.value.parameter == name
    with pytest.raises(ParameterError) as err:
        figures.waveform_svg("x", [0.0, 1.0], [[0.0, 1.0]] * 2, line_names=("A",))
    assert err.value.parameter == "current_a"


def test_tcc_marks_points_draws_edges_and_names_curves_on_the_plot() -> None:
    inputs = _tcc_inputs()
    breaker = figures.CurveTrace(
        "Breaker: minimum band / maximum band",
        [100.0, 1000.0, 3000.0],
        [100.0, 1.0, float("nan")],
        verticals=[(2500.0, 0.0, 0.5)],
        tag="CB-1",
    )
    inputs["devices"] = (*inputs["devices"], breaker)  # type: ignore[misc]
    marker = figures.Marker(1800.0, 0.004, "CB-1: compares 1800 A", "CB-1 compares 1800 A")
    svg = figures.tcc_svg("T", markers=[marker], current_label="Current [A] at 13.8 kV", **inputs)  # type: ignore[arg-type]
    root = ET.fromstring(svg)
    ids = {g.get("id") for g in root.iter(f"{SVG_NS}g")}
    for gid in ("inrush-A", "inrush-points", "device-3-lower", "device-3-edge-0", "marker-0"):
        assert gid in ids, gid
    texts = [("".join(t.itertext())) for t in root.iter(f"{SVG_NS}text")]
    assert "Current [A] at 13.8 kV" in texts
    assert "CB-1" in texts  # named on the plot
    assert "CB-1 compares 1800 A" in texts
    assert "CB-1: compares 1800 A" in texts  # and in the legend
    assert "damage limit" in texts


def _network_inputs() -> dict[str, object]:
    t = np.arange(0, 769) / 7680.0  # 0.1 s at 128 samples per cycle of 60 Hz
    w = 2.0 * np.pi * 60.0
    unit = 900.0 * np.maximum(np.sin(w * t), 0.0) ** 3 * np.exp(-t / 0.05)  # invented inrush
    near = 40.0 * np.sin(w * t - 1.2)  # invented sympathetic current
    return {
        "time_s": t,
        "energized": [
            figures.CurrentTrace("Source, line A", "Source", unit + near, "source"),
            figures.CurrentTrace("T1 (energised), line A", "T1", unit, "unit-0"),
        ],
        "in_service": [figures.CurrentTrace("T2 (in service), line B", "T2", near, "unit-1")],
    }


def _path_points(root: ET.Element, gid: str) -> np.ndarray:
    """The vertices of the first path in the group ``gid`` [SVG user units]."""
    group = next(g for g in root.iter(f"{SVG_NS}g") if g.get("id") == gid)
    d = next(group.iter(f"{SVG_NS}path")).get("d", "")
    nums = [float(x) for x in d.replace("M", " ").replace("L", " ").replace("z", " ").split()]
    return np.array(nums).reshape(-1, 2)


def test_network_figure_names_curves_and_draws_them_where_they_are() -> None:
    inputs = _network_inputs()
    svg = figures.network_svg("Ring: T1 energised beside T2", **inputs)  # type: ignore[arg-type]
    root = ET.fromstring(svg)
    texts = [("".join(t.itertext())) for t in root.iter(f"{SVG_NS}text")]
    for label in ("Source, line A", "T1 (energised), line A", "T2 (in service), line B",
                  "Source", "T1", "T2", "Time [s]", "Current [A]"):  # fmt: skip
        assert label in texts, label
    assert any("Ring: T1 energised beside T2" in t for t in texts)
    # positions read from the SVG: the curves share the axes' scale, so their largest
    # excursions from the zero line stand in the ratio of the currents' largest values, and
    # the peak sits at its time along the axis (x from t = 0 to the record's end)
    zero = _path_points(root, "zero-top")[0, 1]
    src, unit = _path_points(root, "source"), _path_points(root, "unit-0")
    t = np.asarray(inputs["time_s"])
    i_src = np.asarray(inputs["energized"][0].current_a)  # type: ignore[index]
    i_unit = np.asarray(inputs["energized"][1].current_a)  # type: ignore[index]
    ratio = np.max(np.abs(src[:, 1] - zero)) / np.max(np.abs(unit[:, 1] - zero))
    assert ratio == pytest.approx(np.max(np.abs(i_src)) / np.max(np.abs(i_unit)), rel=1e-3)
    k = int(np.argmax(np.abs(unit[:, 1] - zero)))
    x0, x1 = unit[0, 0], unit[-1, 0]
    assert (unit[k, 0] - x0) / (x1 - x0) == pytest.approx(
        t[int(np.argmax(np.abs(i_unit)))] / t[-1], abs=2e-3
    )
    # the units in service on their own axes below
    assert _path_points(root, "unit-1").shape[0] > 10


def test_network_figure_same_bytes_and_one_axes_without_units_in_service() -> None:
    inputs = _network_inputs()
    a = figures.network_svg("T", **inputs)  # type: ignore[arg-type]
    assert a.encode() == figures.network_svg("T", **inputs).encode()  # type: ignore[arg-type]
    inputs["in_service"] = []
    svg = figures.network_svg("T", **inputs)  # type: ignore[arg-type]
    assert "Units in service" not in svg
    assert "zero-bottom" not in svg


def test_network_figure_refuses_a_current_of_another_length() -> None:
    inputs = _network_inputs()
    inputs["in_service"] = [figures.CurrentTrace("x", "x", [1.0, 2.0], "unit-9")]
    with pytest.raises(ParameterError) as err:
        figures.network_svg("T", **inputs)  # type: ignore[arg-type]
    assert err.value.parameter == "unit-9.current_a"
