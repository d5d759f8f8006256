"""POST /v1/clearance and /v1/clearance/figure."""

from __future__ import annotations

import copy
import xml.etree.ElementTree as ET

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
