"""Request IDs, JSON access logs, metrics."""

from __future__ import annotations

import io
import json
import logging

from fastapi.testclient import TestClient

from service.observability import JsonFormatter


def test_request_id_is_echoed_or_generated(client: TestClient) -> None:
    assert (
        client.get("/healthz", headers={"x-request-id": "calc-42.a_b"}).headers["x-request-id"]
        == "calc-42.a_b"
    )
    generated = client.get("/healthz", headers={"x-request-id": "no spaces allowed"})
    rid = generated.headers["x-request-id"]
    assert rid != "no spaces allowed"
    assert len(rid) == 32
    assert client.get("/v1/missing").headers["x-request-id"]


def test_access_log_is_one_json_object_per_request(client: TestClient) -> None:
    stream = io.StringIO()
    handler = logging.StreamHandler(stream)
    handler.setFormatter(JsonFormatter())
    logger = logging.getLogger("firstcycle")
    logger.addHandler(handler)
    try:
        client.get("/healthz", headers={"x-request-id": "trace-1"})
    finally:
        logger.removeHandler(handler)
    line = json.loads(stream.getvalue().strip().splitlines()[-1])
    assert line["request_id"] == "trace-1"
    assert line["status"] == 200
    assert line["route"] == "/healthz"
    assert line["duration_ms"] >= 0


def test_metrics_count_requests(client: TestClient) -> None:
    client.get("/healthz")
    text = client.get("/metrics").text
    assert 'firstcycle_requests_total{operation="/healthz",status="200"}' in text
    assert "firstcycle_request_seconds_bucket" in text
