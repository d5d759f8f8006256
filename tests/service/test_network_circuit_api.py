"""Units given as three-phase SI circuits in POST /v1/network-energization, and its figure.

A unit rebuilt as circuit_three_phase from the numbers the nameplate response states (its
assumptions and rated current) is the same circuit, so the network answers as it does for the
nameplate, to 1e-9 relative. The figure is checked by reading positions from the SVG against the
JSON operation's currents.
"""

from __future__ import annotations

import copy
import math
import xml.etree.ElementTree as ET
from typing import Any

import numpy as np
import pytest
from fastapi.testclient import TestClient
from json_compare import assert_json_close

from service.app import create_app
from service.examples import NETWORK_REQUESTS
from service.settings import get_settings

URL = "/v1/network-energization"
SVG_NS = "{http://www.w3.org/2000/svg}"
Body = dict[str, Any]


def _stated(resp: Body) -> dict[str, Any]:
    return {a["name"]: a["value"] for a in resp["assumptions"]}


def si_units(request: Body, resp: Body) -> Body:
    """The request with every unit written as circuit_three_phase from the response's numbers."""
    a = _stated(resp)
    out = copy.deepcopy(request)
    for k, u in enumerate(out["units"]):
        t = u.pop("transformer")
        n = u["name"]
        conn = a[f"{n}.connection"]
        v_ll = t["energized_winding"]["voltage_kv"] * 1e3
        u["circuit_three_phase"] = {
            "connection": conn,
            "winding_voltage_v": v_ll if conn == "delta" else v_ll / math.sqrt(3.0),
            "winding_resistance_ohm": a[f"{n}.winding_resistance_ohm"],
            "magnetizing": {
                "kind": "two_slope",
                "unsaturated_inductance_h": a[f"{n}.magnetizing_inductance_h"],
                "knee_flux_wb": a[f"{n}.knee_flux_wb"],
                "saturated_inductance_h": a[f"{n}.air_core_inductance_h"],
            },
            "rated_current_a": resp["units"][k]["rated_current_a"],
        }
    return out


@pytest.mark.parametrize("name", sorted(NETWORK_REQUESTS))
def test_si_units_answer_as_the_nameplates(client: TestClient, name: str) -> None:
    plate = NETWORK_REQUESTS[name]
    r1 = client.post(URL, json=plate)
    assert r1.status_code == 200, r1.text
    si = si_units(plate, r1.json())
    r2 = client.post(URL, json=si)
    assert r2.status_code == 200, r2.text
    a, b = r1.json(), r2.json()
    for field in (
        "steps_per_cycle",
        "energized_rated_current_a",
        "source",
        "units",
        "bus_voltage",
        "rule_of_thumb",
        "devices",
        "warnings",
    ):
        assert_json_close(a[field], b[field], field)
    sa, sb = _stated(a), _stated(b)
    for k in sa:
        if k.endswith(("nominal_flux_wb", "knee_flux_wb", "residual_flux_pu")) or k == "source_emf":
            assert_json_close(sa[k], sb[k], k)


def test_a_nameplate_unit_beside_an_si_unit(client: TestClient) -> None:
    plate = NETWORK_REQUESTS["northgate_ring_sympathetic"]
    r1 = client.post(URL, json=plate).json()
    mixed = si_units(plate, r1)
    mixed["units"][0] = copy.deepcopy(plate["units"][0])
    r2 = client.post(URL, json=mixed)
    assert r2.status_code == 200, r2.text
    assert_json_close(r1["units"], r2.json()["units"], "units")


def _field_of(resp: Any) -> list[str]:
    assert resp.status_code == 422, resp.text
    assert resp.headers["content-type"].startswith("application/problem+json")
    return [e["field"] for e in resp.json()["errors"]]


def _si_ring(client: TestClient) -> Body:
    plate = NETWORK_REQUESTS["northgate_ring_reclose"]
    return si_units(plate, client.post(URL, json=plate).json())


def test_errors_name_the_field_path(client: TestClient) -> None:
    si = _si_ring(client)
    bad = copy.deepcopy(si)
    m = bad["units"][1]["circuit_three_phase"]["magnetizing"]
    m["unsaturated_inductance_h"], m["saturated_inductance_h"] = 4.0, 5.0
    assert _field_of(client.post(URL, json=bad)) == [
        "units.1.circuit_three_phase.magnetizing.saturated_inductance_h"
    ]
    # a wye winding at the bus's line voltage: sqrt(3) x too high for the 13.8 kV bus
    bad = copy.deepcopy(si)
    bad["units"][2]["circuit_three_phase"]["winding_voltage_v"] = 13_800.0
    r = client.post(URL, json=bad)
    assert _field_of(r) == ["units.2.circuit_three_phase.winding_voltage_v"]
    assert "7569.06" in r.json()["errors"][0]["allowed"]  # 13.8 kV x 0.95 / sqrt(3)
    bad = copy.deepcopy(si)
    bad["units"][0]["circuit_three_phase"]["winding_resistance_ohm"] = -1.0
    assert _field_of(client.post(URL, json=bad)) == [
        "units.0.circuit_three_phase.winding_resistance_ohm"
    ]


def test_a_unit_is_given_one_way_only(client: TestClient) -> None:
    si = _si_ring(client)
    both = copy.deepcopy(si)
    both["units"][0]["transformer"] = NETWORK_REQUESTS["northgate_ring_reclose"]["units"][0][
        "transformer"
    ]
    assert client.post(URL, json=both).status_code == 422
    neither = copy.deepcopy(si)
    del neither["units"][0]["circuit_three_phase"]
    assert client.post(URL, json=neither).status_code == 422
    no_rating = copy.deepcopy(si)
    del no_rating["units"][0]["circuit_three_phase"]["rated_current_a"]
    assert _field_of(client.post(URL, json=no_rating)) == [
        "units.0.circuit_three_phase.rated_current_a"
    ]


def test_the_source_is_checked_against_the_si_units_rating(client: TestClient) -> None:
    # the three pads' ratings, sqrt(3)*V_LL*I_r = 3250 kVA: a source needs twice that
    si = _si_ring(client)
    si["source"] = {"kind": "fault_level", "fault_mva": 6.0, "x_over_r": 6.0}
    r = client.post(URL, json=si)
    assert _field_of(r) == ["source.fault_mva"]
    assert "6.5 MVA" in r.json()["errors"][0]["allowed"]


def test_a_delta_differential_needs_a_delta_circuit(client: TestClient) -> None:
    plate = NETWORK_REQUESTS["northgate_ring_sympathetic"]
    si = si_units(plate, client.post(URL, json=plate).json())
    si["units"][1]["differential"]["vector_group"] = "Dyn1"
    assert _field_of(client.post(URL, json=si)) == ["units.1.differential.vector_group"]


# -------------------------------------------------------------------------------- the figure


def _path_points(root: ET.Element, gid: str) -> np.ndarray:
    group = next(g for g in root.iter(f"{SVG_NS}g") if g.get("id") == gid)
    d = next(group.iter(f"{SVG_NS}path")).get("d", "")
    nums = [float(x) for x in d.replace("M", " ").replace("L", " ").replace("z", " ").split()]
    return np.array(nums).reshape(-1, 2)


@pytest.mark.parametrize("name", sorted(NETWORK_REQUESTS))
def test_figure_draws_the_currents_the_operation_reports(client: TestClient, name: str) -> None:
    req = NETWORK_REQUESTS[name]
    answer = client.post(URL, json=req).json()
    r = client.post(URL + "/figure", json=req)
    assert r.status_code == 200, r.text
    assert r.headers["content-type"].startswith("image/svg+xml")
    root = ET.fromstring(r.text)
    texts = [("".join(t.itertext())) for t in root.iter(f"{SVG_NS}text")]
    for u in req["units"]:
        assert u["name"] in texts, u["name"]  # named on the plot
    assert "Source" in texts
    assert any("energised on the 13.8 kV bus" in t for t in texts)  # the case in the title
    assert "Time [s]" in texts
    assert "Current [A]" in texts
    # positions read from the SVG: a curve's largest excursion from the zero line, over the
    # source's, is the ratio of their largest per-cycle peaks in the JSON answer (the drawing
    # uses the samples, the JSON refines each peak between samples: 0.5 %)
    zero = _path_points(root, "zero-top")[0, 1]
    src = _path_points(root, "source")
    src_px = np.max(np.abs(src[:, 1] - zero))
    src_a = max(answer["source"]["cycle_peaks_a"])
    for k, u in enumerate(answer["units"]):
        if u["state"] != "energized":
            continue
        px = np.max(np.abs(_path_points(root, f"unit-{k}")[:, 1] - zero))
        assert px / src_px == pytest.approx(max(u["current"]["cycle_peaks_a"]) / src_a, rel=5e-3)
    # the time axis runs over the record: the last point of each curve at duration_s
    x = src[:, 0]
    peak_x = x[int(np.argmax(np.abs(src[:, 1] - zero)))]
    cycle = int(np.argmax(answer["source"]["cycle_peaks_a"]))
    t_peak = (peak_x - x[0]) / (x[-1] - x[0]) * answer["duration_s"]
    assert cycle / 60.0 <= t_peak <= (cycle + 1) / 60.0
    in_service = [k for k, u in enumerate(req["units"]) if u.get("state") == "in_service"]
    ids = {g.get("id") for g in root.iter(f"{SVG_NS}g")}
    assert ("zero-bottom" in ids) == bool(in_service)


def test_figure_of_an_invalid_request_is_422_naming_the_field(client: TestClient) -> None:
    si = _si_ring(client)
    si["units"][2]["circuit_three_phase"]["winding_voltage_v"] = 13_800.0
    r = client.post(URL + "/figure", json=si)
    assert _field_of(r) == ["units.2.circuit_three_phase.winding_voltage_v"]


def test_figure_over_budget_names_the_knobs(monkeypatch: pytest.MonkeyPatch) -> None:
    # the ring's figure over 1 s is estimated at about 9.8 million steps (core.cost), most of it
    # the drawing: under 9.7 million the 422 names the duration and the units, and the duration
    # it names fits
    monkeypatch.setenv("FIRSTCYCLE_MAX_REQUEST_STEPS", "9700000")
    get_settings.cache_clear()
    try:
        with TestClient(create_app(), raise_server_exceptions=False) as c:
            body = copy.deepcopy(NETWORK_REQUESTS["northgate_ring_reclose"])
            r = c.post(URL + "/figure", json=body)
            assert r.status_code == 422, r.text
            doc = r.json()
            assert doc["type"].endswith("limit-exceeded")
            knobs = {e["field"]: e["allowed"] for e in doc["errors"][1:]}
            assert {"options.duration_s", "units"} <= set(knobs)
            assert "devices" not in knobs  # the figure judges none
            body["options"]["duration_s"] = float(knobs["options.duration_s"].split()[1])
            assert c.post(URL + "/figure", json=body).status_code == 200
    finally:
        get_settings.cache_clear()


def test_statistics_of_si_units_equal_those_of_the_nameplates(client: TestClient) -> None:
    # POST /v1/network-energization/statistics takes the same units: the same draws
    # (random_state) on the same circuits give the same percentiles and events
    plate = NETWORK_REQUESTS["northgate_ring_reclose"]
    si = si_units(plate, client.post(URL, json=plate).json())
    extra = {
        "options": {"duration_s": 0.5},
        "sampling": {"samples": 100, "random_state": 1, "check_events": 10},
    }
    r1 = client.post(URL + "/statistics", json={**plate, **extra})
    r2 = client.post(URL + "/statistics", json={**si, **extra})
    assert r1.status_code == 200, r1.text
    assert r2.status_code == 200, r2.text
    a, b = r1.json(), r2.json()
    for field in a:
        if field != "assumptions":
            assert_json_close(a[field], b[field], field)
