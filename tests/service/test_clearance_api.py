"""POST /v1/clearance and /v1/clearance/figure."""

from __future__ import annotations

import copy
import math
import re
import xml.etree.ElementTree as ET

import pytest
from fastapi.testclient import TestClient

from service.examples import CLEARANCE_REQUESTS, FEEDER_RELAY


def test_demo_devices_evaluated_and_ranked(client: TestClient) -> None:
    body = client.post("/v1/clearance", json=CLEARANCE_REQUESTS["northgate_main_unit"]).json()
    names = {d["name"]: d for d in body["devices"]}
    assert set(names) == {"F-main 13.8 kV", "51 feeder"}
    for d in body["devices"]:
        assert d["ride_through"]["margin_ratio"] is not None
        assert d["protection"]["status"] in ("protects", "partial", "does_not_protect")
        assert d["suitable"] == (
            not d["ride_through"]["trips"] and d["protection"]["status"] == "protects"
        )
    assert body["ranking"] == sorted(
        (d["name"] for d in body["devices"] if d["suitable"]),
        key=lambda n: -names[n]["margin_ratio"],
    )
    assert body["damage"]["category"] == "II"  # 2500 kVA three-phase: C57.12.00 category II
    assert names["51 feeder"]["coordination_window"]["statement"]
    assert "manufacturer" in body["caution"]
    assert body["closing_angle_source"].startswith("worst")


def test_a_fuse_far_below_the_inrush_trips(client: TestClient) -> None:
    req = copy.deepcopy(CLEARANCE_REQUESTS["northgate_main_unit"])
    tiny = {
        "kind": "fuse",
        "name": "too small",
        "minimum_melt": [{"current_a": 20, "time_s": 100}, {"current_a": 100, "time_s": 0.01}],
    }
    req["devices"] = [tiny]
    body = client.post("/v1/clearance", json=req).json()
    dev = body["devices"][0]
    assert dev["ride_through"]["trips"] is True
    assert dev["suitable"] is False
    assert body["ranking"] == []


def test_relay_curve_must_belong_to_its_standard(client: TestClient) -> None:
    req = copy.deepcopy(CLEARANCE_REQUESTS["northgate_main_unit"])
    req["devices"] = [{**FEEDER_RELAY, "standard": "ieee_c37_112", "curve": "standard_inverse"}]
    r = client.post("/v1/clearance", json=req)
    assert r.status_code == 422
    assert "standard_inverse" in r.json()["detail"]


def test_non_monotone_fuse_table_is_422_naming_the_field(client: TestClient) -> None:
    req = copy.deepcopy(CLEARANCE_REQUESTS["northgate_main_unit"])
    req["devices"] = [
        {
            "kind": "fuse",
            "name": "bad",
            "minimum_melt": [{"current_a": 100, "time_s": 1}, {"current_a": 200, "time_s": 5}],
        }
    ]
    r = client.post("/v1/clearance", json=req)
    assert r.status_code == 422
    assert r.headers["content-type"].startswith("application/problem+json")
    assert r.json()["errors"][0]["field"]


def test_zero_pickup_and_duplicate_names_rejected(client: TestClient) -> None:
    req = copy.deepcopy(CLEARANCE_REQUESTS["northgate_main_unit"])
    req["devices"] = [{**FEEDER_RELAY, "pickup_a": 0}]
    assert client.post("/v1/clearance", json=req).status_code == 422
    req["devices"] = [FEEDER_RELAY, FEEDER_RELAY]
    assert client.post("/v1/clearance", json=req).status_code == 422


def test_circuit_mode_is_rejected_for_clearance(client: TestClient) -> None:
    from service.examples import PEAK_REQUESTS

    req = {"circuit": PEAK_REQUESTS["circuit_mode"]["circuit"], "devices": [FEEDER_RELAY]}
    r = client.post("/v1/clearance", json=req)
    assert r.status_code == 422
    assert "nameplate" in r.json()["detail"]


def test_figure_is_svg_with_the_curves(client: TestClient) -> None:
    r = client.post("/v1/clearance/figure", json=CLEARANCE_REQUESTS["northgate_main_unit"])
    assert r.status_code == 200
    assert r.headers["content-type"].startswith("image/svg+xml")
    ET.fromstring(r.text)  # well-formed XML
    for label in ("F-main 13.8 kV", "51 feeder", "Current [A]", "Time [s]", "C57.109"):
        assert label in r.text
    again = client.post("/v1/clearance/figure", json=CLEARANCE_REQUESTS["northgate_main_unit"])
    assert again.content == r.content


# ----------------------------------------------------------------------------------------------
# A 45 kVA dry-type-size unit (invented): 480 V delta, Z 3.5 %, X/R 1.2, no-load 3 %, source
# 25 MVA X/R 5, behind a breaker with instantaneous pickup 1000 A (lower edge 900 A at ±10 %).
# ----------------------------------------------------------------------------------------------
SMALL_UNIT = {
    "transformer": {
        "rating_kva": 45,
        "phases": 3,
        "frequency_hz": 60,
        "energized_winding": {"voltage_kv": 0.48, "connection": "delta", "position": "outer"},
        "impedance_percent": 3.5,
        "x_over_r": 1.2,
        "no_load_current_percent": 3.0,
    },
    "source": {"kind": "fault_level", "fault_mva": 25, "x_over_r": 5},
    "devices": [
        {
            "kind": "breaker",
            "name": "CB-45",
            "long_time_pickup_a": 70,
            "long_time_delay_s": 10,
            "instantaneous_pickup_a": 1000,
        }
    ],
    "options": {"duration_s": 1.0},
}
SVG_NS = "{http://www.w3.org/2000/svg}"


def _small(**breaker: object) -> dict[str, object]:
    req = copy.deepcopy(SMALL_UNIT)
    req["devices"][0].update(breaker)  # type: ignore[index]
    return req


def test_breaker_instantaneous_compares_the_peak_with_root_two_times_the_setting(
    client: TestClient,
) -> None:
    # like with like (common practice, from memory): a peak-sensing trip unit picks up when the
    # peak reaches √2 × its rms setting, so the first peak (about 1046 A) is compared with
    # √2 × 900 A = 1273 A, not with 900 A (which "tripped" it with margin 0.86)
    body = client.post("/v1/clearance", json=SMALL_UNIT).json()
    peak = body["first_peak_a"]
    rt = body["devices"][0]["ride_through"]
    assert rt["trips"] is False
    assert rt["instantaneous_margin_ratio"] == pytest.approx(math.sqrt(2) * 900.0 / peak, 1e-9)
    inst = rt["instantaneous_check"]
    assert inst["sensing"] == "peak"
    assert inst["sensed_a"] == pytest.approx(peak, rel=1e-12)
    assert inst["compared_a"] == pytest.approx(peak / math.sqrt(2), rel=1e-12)
    assert inst["lower_edge_a"] == pytest.approx(900.0)
    # the words say what the verdict compared, with its numbers
    assert rt["compared_current"] == inst["statement"]
    assert f"{peak / math.sqrt(2):.4g} A rms-equivalent" in rt["compared_current"]
    assert "lower edge 900 A" in rt["compared_current"]
    names = {a["name"]: a for a in body["assumptions"]}
    assert names["CB-45.instantaneous_sensing"]["value"] == "peak"
    assert names["CB-45.peak_factor"]["value"] == pytest.approx(math.sqrt(2))
    # the same unit told to read the peak as rms trips; an rms-sensing one compares its window
    as_rms = client.post("/v1/clearance", json=_small(peak_factor=1.0)).json()
    assert as_rms["devices"][0]["ride_through"]["trips"] is True
    assert as_rms["devices"][0]["ride_through"]["instantaneous_margin_ratio"] == pytest.approx(
        900.0 / peak, rel=1e-9
    )
    half = client.post("/v1/clearance", json=_small(instantaneous_sensing="half_cycle_rms")).json()
    check = half["devices"][0]["ride_through"]["instantaneous_check"]
    assert check["sensing"] == "half_cycle_rms"
    assert check["compared_a"] == check["sensed_a"] < peak
    assert half["devices"][0]["ride_through"]["instantaneous_margin_ratio"] == pytest.approx(
        900.0 / check["sensed_a"], rel=1e-12
    )


def _groups(svg: str) -> dict[str, list[tuple[float, float]]]:
    """Pixel points of each SVG group with an id: path vertices, or marker positions."""
    out: dict[str, list[tuple[float, float]]] = {}

    def walk(el: ET.Element, pts: list[tuple[float, float]]) -> None:
        for child in el:
            if child.tag == f"{SVG_NS}defs":  # marker shapes, not positions
                continue
            if child.tag == f"{SVG_NS}path":
                nums = [float(v) for v in re.findall(r"-?\d+(?:\.\d+)?", child.get("d", ""))]
                pts += list(zip(nums[::2], nums[1::2], strict=True))
            elif child.tag == f"{SVG_NS}use":
                pts.append((float(child.get("x", "nan")), float(child.get("y", "nan"))))
            walk(child, pts)

    for g in ET.fromstring(svg).iter(f"{SVG_NS}g"):
        pts: list[tuple[float, float]] = []
        walk(g, pts)
        out[g.get("id", "")] = pts
    return out


def _axes_map(svg: str, i_r: float) -> tuple[object, object]:
    """Pixel to current and time, from the inrush points drawn at 12 × I_r/0.1 s and 25 ×/0.01 s
    (common practice points, placed by the figure itself)."""
    (x1, y1), (x2, y2) = _groups(svg)["inrush-points"]

    def current(px: float) -> float:
        return 12.0 * i_r * (25.0 / 12.0) ** ((px - x1) / (x2 - x1))

    def time(py: float) -> float:
        return 0.1 * 10.0 ** (-(py - y1) / (y2 - y1))

    return current, time


def test_figure_marks_the_compared_value_and_draws_the_band_edges(client: TestClient) -> None:
    body = client.post("/v1/clearance", json=SMALL_UNIT).json()
    svg = client.post("/v1/clearance/figure", json=SMALL_UNIT).text
    current, time = _axes_map(svg, body["rated_current_a"])
    groups = _groups(svg)
    inst = body["devices"][0]["ride_through"]["instantaneous_check"]
    (mx, _my), *_ = groups["marker-0"]
    assert current(mx) == pytest.approx(inst["compared_a"], rel=1e-3)  # type: ignore[operator]
    assert f"CB-45 compares {inst['compared_a']:.4g} A" in svg
    # the instantaneous band's lower edge: a vertical at 900 A down to the bottom of the axes
    edge = groups["device-0-edge-0"]
    assert {round(current(x), 1) for x, _ in edge} == {900.0}  # type: ignore[operator]
    assert min(time(y) for _, y in edge) == pytest.approx(0.01, rel=1e-3)  # type: ignore[operator]
    # the time axis spans 0.01-1000 s: patch_2 is the axes' frame (matplotlib's SVG ids)
    ys = [time(y) for _, y in groups["patch_2"]]  # type: ignore[operator]
    assert max(ys) == pytest.approx(1000.0, rel=1e-3)
    assert min(ys) == pytest.approx(0.01, rel=1e-3)
    texts = ["".join(t.itertext()) for t in ET.fromstring(svg).iter(f"{SVG_NS}text")]
    assert "Current [A] at 0.48 kV" in texts
    assert "CB-45" in texts  # named on the plot, not only in the legend
    assert "damage limit" in texts


def test_figure_reference_voltage_scales_currents(client: TestClient) -> None:
    # drawn at 13.8 kV, the 480 V breaker's 900 A edge sits at 900 × 0.48/13.8 = 31.30 A
    req = _small()
    req["options"] = {"duration_s": 1.0, "reference_voltage_kv": 13.8}
    body = client.post("/v1/clearance", json=req).json()
    svg = client.post("/v1/clearance/figure", json=req).text
    ratio = 0.48 / 13.8
    current, _ = _axes_map(svg, body["rated_current_a"] * ratio)
    edge = _groups(svg)["device-0-edge-0"]
    assert current(edge[0][0]) == pytest.approx(900.0 * ratio, rel=1e-3)  # type: ignore[operator]
    texts = ["".join(t.itertext()) for t in ET.fromstring(svg).iter(f"{SVG_NS}text")]
    assert "Current [A] at 13.8 kV" in texts


def test_figure_fuse_curves_over_their_data_with_a_derated_legend(client: TestClient) -> None:
    req = CLEARANCE_REQUESTS["northgate_main_unit"]
    body = client.post("/v1/clearance", json=req).json()
    svg = client.post("/v1/clearance/figure", json=req).text
    current, time = _axes_map(svg, body["rated_current_a"])
    groups = _groups(svg)
    melt, clearing = groups["device-0-lower"], groups["device-0-upper"]
    # the invented fuse's tables end at 4000 A (0.012 s melt, 0.022 s clearing); the melt curve
    # is drawn derated (current × 0.8, the default): it ends at 3200 A, 0.012 s, not flat beyond
    x_end, y_end = max(melt)
    assert current(x_end) == pytest.approx(0.8 * 4000.0, rel=1e-3)  # type: ignore[operator]
    assert time(y_end) == pytest.approx(0.012, rel=1e-3)  # type: ignore[operator]
    x_end, y_end = max(clearing)
    assert current(x_end) == pytest.approx(4000.0, rel=1e-3)  # type: ignore[operator]
    assert time(y_end) == pytest.approx(0.022, rel=1e-3)  # type: ignore[operator]
    texts = ["".join(t.itertext()) for t in ET.fromstring(svg).iter(f"{SVG_NS}text")]
    assert any(t.startswith("F-main 13.8 kV: minimum melt derated (current x 0.8)") for t in texts)
    assert "Current [A] at 13.8 kV" in texts


def test_bad_fuse_curve_names_its_path_and_device(client: TestClient) -> None:
    req = copy.deepcopy(CLEARANCE_REQUESTS["northgate_main_unit"])
    bad = {
        "kind": "fuse",
        "name": "F-spare",
        "minimum_melt": [{"current_a": 100, "time_s": 1}, {"current_a": 200, "time_s": 5}],
    }
    req["devices"] = [FEEDER_RELAY, bad]
    r = client.post("/v1/clearance", json=req)
    assert r.status_code == 422
    err = r.json()["errors"][0]
    assert err["field"] == "devices.1.minimum_melt"
    assert "F-spare" in err["allowed"]
    assert "times must not rise as the current increases" in err["allowed"]
    req["devices"][1] = {
        **bad,
        "minimum_melt": [{"current_a": 100, "time_s": 1}, {"current_a": 50, "time_s": 0.5}],
    }
    err = client.post("/v1/clearance", json=req).json()["errors"][0]
    assert err["field"] == "devices.1.minimum_melt"
    assert "currents must increase" in err["allowed"]


def test_method_says_relays_use_one_cycle_rms(client: TestClient) -> None:
    body = client.post("/v1/clearance", json=CLEARANCE_REQUESTS["northgate_main_unit"]).json()
    text = body["method"]["simulated"]
    assert "relay instantaneous against the largest sliding one-cycle rms" in text
    assert "instantaneous elements against the first peak and half-cycle rms" not in text
    relay = next(d for d in body["devices"] if d["name"] == "51 feeder")
    assert relay["ride_through"]["compared_current"] == "largest sliding one-cycle rms"


# An invented fuse built to the E-rating definition (melting in 300 s at 200-240 % of its
# rating, ANSI C37.46, from memory: here 220 %), rated 1.5 × the main unit's 104.6 A (a common
# primary fuse sizing, common practice), total clearing 1.25 × melt + 10 ms (invented).
_R = 1.5 * 2500e3 / (math.sqrt(3) * 13_800)
_MELT = [(2.0, 1000.0), (2.2, 300.0), (3.0, 30.0), (5.0, 3.0), (10.0, 0.35), (22.0, 0.1)]
E_FUSE = {
    "kind": "fuse",
    "name": "F-1.5x",
    "minimum_melt": [{"current_a": m * _R, "time_s": t} for m, t in _MELT],
    "total_clearing": [{"current_a": m * _R, "time_s": 1.25 * t + 0.01} for m, t in _MELT],
}


def test_common_fuse_sizing_protects_with_the_default_check_start(client: TestClient) -> None:
    req = copy.deepcopy(CLEARANCE_REQUESTS["northgate_main_unit"])
    req["devices"] = [E_FUSE]
    body = client.post("/v1/clearance", json=req).json()
    i_r = body["rated_current_a"]
    prot = body["devices"][0]["protection"]
    assert prot["status"] == "protects"
    assert prot["checked_from_a"] == pytest.approx(6.0 * i_r, rel=1e-12)  # default 6 × rated
    # up to what the 250 MVA source lets flow through Z_T + Z_S = 0.0575 + 0.01 pu
    assert prot["checked_to_a"] == pytest.approx(i_r / 0.0675, rel=1e-6)
    dmg = body["damage"]
    assert dmg["short_circuit_current_a"] == pytest.approx(i_r / 0.0575, rel=1e-6)  # category II
    portions = dmg["portions"]
    # below the start: the secondary device's; above 1/(Z_T + Z_S): cannot flow (category II
    # draws its curve to 1/Z_T)
    assert [p["checked"] for p in portions] == [False, True, False]
    assert portions[0]["reason"] == "a secondary-side device carries the overload range"
    assert "1/(Z_T + Z_S)" in portions[2]["reason"]
    assert portions[2]["to_current_a"] == pytest.approx(i_r / 0.0575, rel=1e-6)
    assert portions[0]["from_current_a"] == pytest.approx(2.0 * i_r, rel=1e-12)
    names = {a["name"]: a for a in body["assumptions"]}
    assert names["damage_check_from_a"]["value"] == pytest.approx(6.0 * i_r, rel=1e-12)
    # with no secondary-side device for overloads the check starts at 2 × and the fuse, which
    # does not melt below 2 × its rating (3 × rated), leaves the overload range unprotected
    req["options"]["overload_by_secondary_device"] = False
    alone = client.post("/v1/clearance", json=req).json()["devices"][0]["protection"]
    assert alone["status"] == "partial"
    assert alone["checked_from_a"] == pytest.approx(2.0 * i_r, rel=1e-12)
    assert alone["unprotected_from_a"] == pytest.approx(2.0 * i_r, rel=1e-12)
    # a start given as a multiple of rated current, or in amperes; not both
    req["options"] = {"damage_check_from_x_rated": 4.0}
    given = client.post("/v1/clearance", json=req).json()["devices"][0]["protection"]
    assert given["checked_from_a"] == pytest.approx(4.0 * i_r, rel=1e-12)
    req["options"] = {"damage_check_from_x_rated": 4.0, "damage_check_from_a": 500.0}
    assert client.post("/v1/clearance", json=req).status_code == 422
