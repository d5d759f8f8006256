"""POST /v1/inrush/peak/batch: item-by-item answers, vectorised, bounded."""

from __future__ import annotations

import copy

import pytest
from fastapi.testclient import TestClient

from service.examples import PEAK_BATCH_REQUESTS, PEAK_REQUESTS

URL = "/v1/inrush/peak/batch"


def test_one_bad_item_never_fails_the_rest(client: TestClient) -> None:
    body = client.post(URL, json=PEAK_BATCH_REQUESTS["northgate_sizing_loop"]).json()
    assert body["count"] == 4
    assert body["failed"] == 1
    statuses = [r["status"] for r in body["results"]]
    assert statuses == [200, 200, 200, 422]
    bad = body["results"][3]["problem"]
    assert bad["errors"][0]["field"] == "transformer.impedance_percent"
    assert bad["instance"] == "cases[3]"


def test_items_equal_single_calls(client: TestClient) -> None:
    # the vectorised batch gives what each case gets alone (simulated, two connections)
    cases = [PEAK_REQUESTS["northgate_backfeed"], PEAK_REQUESTS["northgate_lighting"]]
    cases += [copy.deepcopy(PEAK_REQUESTS["northgate_backfeed"])]
    cases[2]["switching"]["closing_angle_deg"] = 90.0
    batch = client.post(URL, json={"cases": cases}).json()
    for item, case in zip(batch["results"], cases, strict=True):
        single = client.post("/v1/inrush/peak", json=case).json()
        assert item["result"]["first_peak_a"] == pytest.approx(single["first_peak_a"], rel=1e-12)
        assert item["result"]["worst_case_simulated"]["peak_a"] == pytest.approx(
            single["worst_case_simulated"]["peak_a"], rel=1e-9
        )


def test_domain_error_is_per_item(client: TestClient) -> None:
    bad = copy.deepcopy(PEAK_REQUESTS["circuit_mode"])
    bad["circuit"]["magnetizing"]["unsaturated_inductance_h"] = 1e-5  # below the air-core slope
    good = {**PEAK_REQUESTS["northgate_lighting"], "method": "analytic"}
    body = client.post(URL, json={"cases": [bad, good]}).json()
    assert [r["status"] for r in body["results"]] == [422, 200]
    assert body["results"][0]["problem"]["errors"][0]["field"] == (
        "circuit.magnetizing.saturated_inductance_h"
    )


def test_too_many_cases_is_a_limit_problem(
    client: TestClient, monkeypatch: pytest.MonkeyPatch
) -> None:
    from service.settings import get_settings

    monkeypatch.setenv("FIRSTCYCLE_MAX_CASES", "2")
    get_settings.cache_clear()
    case = {**PEAK_REQUESTS["northgate_lighting"], "method": "analytic"}
    r = client.post(URL, json={"cases": [case, case, case]})
    assert r.status_code == 422
    assert r.json()["type"] == "urn:firstcycle:problem:limit-exceeded"
    get_settings.cache_clear()


def test_empty_batch_rejected(client: TestClient) -> None:
    assert client.post(URL, json={"cases": []}).status_code == 422
