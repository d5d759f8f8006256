"""POST /v1/inrush/statistics."""

from __future__ import annotations

import copy

from fastapi.testclient import TestClient

from service.examples import STATISTICS_REQUESTS

REQ = STATISTICS_REQUESTS["northgate_backfeed"]


def _small(state: int) -> dict[str, object]:
    req = copy.deepcopy(REQ)
    req["options"] = {**req["options"], "samples": 2000, "random_state": state}  # type: ignore[dict-item]
    return req


def test_percentiles_ordered_and_reproducible(client: TestClient) -> None:
    a = client.post("/v1/inrush/statistics", json=_small(7))
    b = client.post("/v1/inrush/statistics", json=_small(7))
    assert a.content == b.content  # same random_state, same bytes
    w = a.json()["worst_line"]
    assert w["p50_a"] <= w["p95_a"] <= w["p99_a"] <= w["max_a"]
    assert w["p99_low_a"] <= w["p99_a"]
    ex = a.json()["exceedance"]
    assert 0.0 <= ex["low"] <= ex["probability"] <= ex["high"] <= 1.0


def test_worst_line_p99_not_below_any_line(client: TestClient) -> None:
    body = client.post("/v1/inrush/statistics", json=_small(3)).json()
    assert body["worst_line"]["p99_a"] >= max(line["p99_a"] for line in body["lines"]) - 1e-9


def test_samples_over_the_limit_is_a_limit_problem(client: TestClient) -> None:
    req = copy.deepcopy(REQ)
    req["options"]["samples"] = 50_000
    r = client.post("/v1/inrush/statistics", json=req)
    assert r.status_code == 422
    assert r.json()["type"] == "urn:firstcycle:problem:limit-exceeded"
