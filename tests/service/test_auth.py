"""Optional API-key authentication."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest
from fastapi.testclient import TestClient

from service.app import create_app
from service.examples import PEAK_REQUESTS
from service.settings import get_settings

REQ = {**PEAK_REQUESTS["northgate_lighting"], "method": "analytic"}


@pytest.fixture
def keyed(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> Iterator[TestClient]:
    secret = tmp_path / "keys"
    secret.write_text("from-file-key\n\n", encoding="utf-8")
    monkeypatch.setenv("FIRSTCYCLE_API_KEYS", '["env-key"]')
    monkeypatch.setenv("FIRSTCYCLE_API_KEY_FILE", str(secret))
    get_settings.cache_clear()
    with TestClient(create_app()) as c:
        yield c
    get_settings.cache_clear()


def test_off_by_default(client: TestClient) -> None:
    assert client.post("/v1/inrush/peak", json=REQ).status_code == 200


def test_missing_or_wrong_key_is_401_problem(keyed: TestClient) -> None:
    for headers in ({}, {"x-api-key": "wrong"}, {"authorization": "Bearer nope"}):
        r = keyed.post("/v1/inrush/peak", json=REQ, headers=headers)
        assert r.status_code == 401
        assert r.headers["content-type"].startswith("application/problem+json")
        assert r.json()["type"] == "urn:firstcycle:problem:unauthorized"


def test_keys_from_env_and_file_accepted(keyed: TestClient) -> None:
    assert (
        keyed.post("/v1/inrush/peak", json=REQ, headers={"x-api-key": "env-key"}).status_code == 200
    )
    r = keyed.post("/v1/inrush/peak", json=REQ, headers={"authorization": "Bearer from-file-key"})
    assert r.status_code == 200


def test_health_stays_open(keyed: TestClient) -> None:
    assert keyed.get("/healthz").status_code == 200
    assert keyed.get("/metrics").status_code == 200
