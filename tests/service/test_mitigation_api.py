"""POST /v1/mitigation."""

from __future__ import annotations

import copy
from typing import Any

import pytest
from fastapi.testclient import TestClient

from service.examples import MITIGATION_REQUESTS

MAIN = MITIGATION_REQUESTS["northgate_main_unit"]


def _req(**changes: Any) -> dict[str, Any]:
    req = copy.deepcopy(MAIN)
    req.pop("devices")
    req["options"] = [{"kind": "controlled_closing"}, {"kind": "demagnetize"}]
    req.update(changes)
    return req


def test_ranked_with_caution_and_provenance(client: TestClient) -> None:
    r = client.post("/v1/mitigation", json=_req())
    assert r.status_code == 200, r.text
    body = r.json()
    assert "licensed engineering practice" in body["caution"]
    ranks = [o["rank"] for o in body["options"]]
    assert ranks == list(range(1, len(ranks) + 1))
    assert body["baseline"]["rank"] is None
    for o in body["options"]:
        assert o["evaluated"]
        assert o["requires"]
        assert all(p["source"] for p in o["parameters"])
        assert o["peak_reduction_percent"] > 0
        assert o["peak_x_rated"] * body["rated_current_a"] == _approx(o["peak_a"])
    # the target (6 x rated) is judged for every option
    assert body["target_peak_a"] == _approx(6.0 * body["rated_current_a"])
    assert all(o["meets_target"] is not None for o in body["options"])
    sweep = [s["peak_a"] for s in body["residual_sweep"]]
    assert sweep == sorted(sweep)


def _approx(x: float) -> Any:
    return pytest.approx(x, rel=1e-9)


def test_same_request_same_bytes(client: TestClient) -> None:
    a = client.post("/v1/mitigation", json=_req())
    b = client.post("/v1/mitigation", json=_req())
    assert a.content == b.content


def test_source_and_supply_together_is_a_422(client: TestClient) -> None:
    gen = {"kind": "generator", "rating_kva": 1250, "x_d2_pu": 0.15, "x_d1_pu": 0.25,
           "x_d_pu": 2.0, "t_d2_s": 0.03, "t_d1_s": 0.8}  # fmt: skip
    r = client.post("/v1/mitigation", json=_req(supply=gen))
    assert r.status_code == 422
    assert r.headers["content-type"].startswith("application/problem+json")
    assert "supply" in r.text


def test_circuit_mode_is_a_422_naming_transformer(client: TestClient) -> None:
    req = _req()
    req.pop("transformer")
    req.pop("source")
    req.pop("switching")
    req["circuit"] = {
        "voltage_rms_v": 277.0, "resistance_ohm": 0.001, "inductance_h": 0.0,
        "magnetizing": {"kind": "two_slope", "unsaturated_inductance_h": 1.0,
                        "knee_flux_wb": 0.9, "saturated_inductance_h": 1e-4},
    }  # fmt: skip
    r = client.post("/v1/mitigation", json=req)
    assert r.status_code == 422
    assert "transformer" in r.text


def test_option_fields_are_validated(client: TestClient) -> None:
    r = client.post("/v1/mitigation", json=_req(options=[{"kind": "ramp", "start_pu": 2.0}]))
    assert r.status_code == 422
    assert "start_pu" in r.text
    r = client.post("/v1/mitigation", json=_req(options=[{"kind": "levitate"}]))
    assert r.status_code == 422
