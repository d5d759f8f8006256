"""POST /v1/clearance with a transformer differential among the devices (Northgate main unit)."""

from __future__ import annotations

import copy
from typing import Any

import pytest
from fastapi.testclient import TestClient

from service.examples import CLEARANCE_REQUESTS

# The main unit is 13.8 kV delta - 480Y/277 V: Dyn1, energised from its high (delta) side.
DIFF: dict[str, Any] = {"kind": "differential", "name": "87T main", "vector_group": "Dyn1"}


def _request(**change: Any) -> dict[str, Any]:
    req = copy.deepcopy(CLEARANCE_REQUESTS["northgate_main_unit"])
    req["devices"] = [*req["devices"], {**DIFF, **change}]
    return req


@pytest.fixture(scope="module")
def answer() -> dict[str, Any]:
    from service.app import create_app

    with TestClient(create_app()) as c:
        r = c.post("/v1/clearance", json=_request())
        assert r.status_code == 200
        return dict(r.json())


def _diff(body: dict[str, Any]) -> dict[str, Any]:
    return next(d for d in body["devices"] if d["kind"] == "differential")


def test_per_cycle_table_and_verdict(answer: dict[str, Any]) -> None:
    dev = _diff(answer)
    out = dev["ride_through"]["differential"]
    n = len(out["cycle_end_s"])
    assert n == round(answer["duration_s"] * 60)  # one row per cycle of the 2 s record
    assert [p["phase"] for p in out["phases"]] == ["A", "B", "C"]
    for p in out["phases"]:
        for key in ("operate_pu", "restraint_pu", "threshold_pu", "second_harmonic_percent"):
            assert len(p[key]) == n
        # average restraint with the far side unloaded: half the operate current
        assert p["restraint_pu"][0] == pytest.approx(p["operate_pu"][0] / 2, rel=1e-4)
    assert [v["harmonic_logic"] for v in out["verdict_by_logic"]] == [
        "own_phase",
        "any_phase",
        "summed_phases",
    ]
    assert out["verdict"] == out["verdict_by_logic"][0]  # own_phase is the default
    # cross-blocking can only block more than each phase on its own: its margin is larger
    by = {v["harmonic_logic"]: v for v in out["verdict_by_logic"]}
    assert by["any_phase"]["margin_pp"] >= by["own_phase"]["margin_pp"]
    # ride-through fields agree with the verdict
    assert dev["ride_through"]["trips"] == out["verdict"]["operates"]
    assert dev["suitable"] == (not out["verdict"]["operates"])
    assert (dev["ride_through"]["margin_ratio"] > 1.0) == (not out["verdict"]["operates"])
    assert dev["protection"] is None
    assert dev["common_practice_points"] == []
    assert "87T main" not in answer["ranking"]
    assert out["statement"]
    # 1 pu is the energised side's rated line current: 2500 kVA / (sqrt(3) 13.8 kV)
    assert out["base_current_a"] == pytest.approx(2500e3 / (3**0.5 * 13.8e3), rel=1e-6)


def test_harmonic_logic_changes_the_verdict_where_it_should(client: TestClient) -> None:
    # A blocking level above the demo's smallest own-phase ratio but below the other phases'
    # ratios: per-phase blocking lets the weakest phase operate, cross-blocking holds it.
    base = _diff(client.post("/v1/clearance", json=_request()).json())
    lows = [
        p["min_second_harmonic_percent"] for p in base["ride_through"]["differential"]["phases"]
    ]
    level = min(lows) + 1.0
    body = client.post(
        "/v1/clearance", json=_request(second_harmonic_percent=level, harmonic_logic="any_phase")
    ).json()
    by = {v["harmonic_logic"]: v for v in _diff(body)["ride_through"]["differential"][
        "verdict_by_logic"]}  # fmt: skip
    assert by["own_phase"]["operates"]
    assert by["own_phase"]["margin_pp"] < 0.0
    assert _diff(body)["ride_through"]["trips"] == by["any_phase"]["operates"]


def test_ct_ratio_and_tap_set_the_base(client: TestClient) -> None:
    body = client.post(
        "/v1/clearance", json=_request(ct_primary_a=150, ct_secondary_a=5, tap_a=3.5)
    ).json()
    assert _diff(body)["ride_through"]["differential"]["base_current_a"] == pytest.approx(105.0)


@pytest.mark.parametrize(
    ("change", "field"),
    [
        ({"vector_group": "Dy2"}, "devices.2.vector_group"),
        ({"harmonic_logic": "majority"}, "devices.2.harmonic_logic"),
        ({"second_harmonic_percent": 0}, "devices.2.second_harmonic_percent"),
        ({"tap_a": 4.0}, "devices.2.differential"),
    ],
)
def test_bad_settings_are_422_naming_the_field(
    client: TestClient, change: dict[str, Any], field: str
) -> None:
    r = client.post("/v1/clearance", json=_request(**change))
    assert r.status_code == 422
    assert r.json()["errors"][0]["field"] == field


def test_vector_group_must_match_the_energised_winding(client: TestClient) -> None:
    # the main unit is energised from its delta winding; YNd1's high side is a wye
    r = client.post("/v1/clearance", json=_request(vector_group="YNd1"))
    assert r.status_code == 422
    assert "YNd1" in r.text


def test_figure_skips_the_differential(client: TestClient) -> None:
    r = client.post("/v1/clearance/figure", json=_request())
    assert r.status_code == 200
    assert r.headers["content-type"].startswith("image/svg+xml")
    assert "F-main 13.8 kV" in r.text
    assert "87T main: differential, no time-current curve" in r.text  # named, not drawn


def test_differential_figure_draws_the_characteristic_and_the_harmonic(
    client: TestClient, answer: dict[str, Any]
) -> None:
    r = client.post("/v1/clearance/differential-figure", json=_request())
    assert r.status_code == 200
    assert r.headers["content-type"].startswith("image/svg+xml")
    svg = r.text
    for label in ("Percentage characteristic", "Blocking level 15 %", "Restraint current",
                  "Phase A, cycle by cycle", "Second harmonic, phase C"):  # fmt: skip
        assert label in svg, label
    # the title carries the verdict the JSON operation gives
    verdict = _diff(answer)["ride_through"]["differential"]["statement"].split(";")[0]
    assert verdict in svg


def test_differential_figure_without_a_differential_is_422_naming_devices(
    client: TestClient,
) -> None:
    body = copy.deepcopy(CLEARANCE_REQUESTS["northgate_main_unit"])
    r = client.post("/v1/clearance/differential-figure", json=body)
    assert r.status_code == 422
    assert r.headers["content-type"].startswith("application/problem+json")
    assert any(e["field"] == "devices" for e in r.json()["errors"])
