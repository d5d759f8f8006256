"""Optional API-key authentication."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest
from fastapi.testclient import TestClient

from service import cli
from service.app import create_app
from service.examples import PEAK_REQUESTS
from service.settings import KeySourceError, get_settings

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


def test_contract_and_docs_public_with_keys_on(keyed: TestClient) -> None:
    contract = keyed.get("/v1/openapi.json")
    assert contract.status_code == 200
    assert "apiKey" in contract.json()["components"]["securitySchemes"]
    page = keyed.get("/docs")
    assert page.status_code == 200
    assert "/docs/openapi.json" in page.text
    served = keyed.get("/docs/openapi.json").json()
    assert served["security"] == [{"apiKey": []}]  # "try it out" sends the key
    # the compute operations still need one
    assert keyed.get(PEAK_TXT).status_code == 401


PEAK_TXT = "/v1/sheet/inrush/peak.txt?rating_kva=112.5&voltage_kv=0.48"


def test_docs_hide_scheme_when_keys_off(client: TestClient) -> None:
    served = client.get("/docs/openapi.json").json()
    assert "securitySchemes" not in served["components"]
    assert "security" not in served
    # the contract itself does not depend on the deployment's settings
    assert "apiKey" in client.get("/v1/openapi.json").json()["components"]["securitySchemes"]


@pytest.mark.parametrize(
    ("keys_env", "file_text", "setting"),
    [
        ('[""]', None, "FIRSTCYCLE_API_KEYS"),
        ('["", ""]', None, "FIRSTCYCLE_API_KEYS"),
        ("[]", None, "FIRSTCYCLE_API_KEYS"),
        (None, "", "FIRSTCYCLE_API_KEY_FILE"),
        (None, "\n   \n", "FIRSTCYCLE_API_KEY_FILE"),
        (None, "missing", "FIRSTCYCLE_API_KEY_FILE"),  # a path that does not exist
        (None, "unset-path", "FIRSTCYCLE_API_KEY_FILE"),  # set to an empty string
        ('["good"]', "", "FIRSTCYCLE_API_KEY_FILE"),  # one good source does not hide the other
    ],
)
def test_empty_or_unreadable_key_source_refuses_to_start(
    monkeypatch: pytest.MonkeyPatch,
    tmp_path: Path,
    capsys: pytest.CaptureFixture[str],
    keys_env: str | None,
    file_text: str | None,
    setting: str,
) -> None:
    monkeypatch.delenv("FIRSTCYCLE_API_KEYS", raising=False)
    monkeypatch.delenv("FIRSTCYCLE_API_KEY_FILE", raising=False)
    if keys_env is not None:
        monkeypatch.setenv("FIRSTCYCLE_API_KEYS", keys_env)
    if file_text == "missing":
        monkeypatch.setenv("FIRSTCYCLE_API_KEY_FILE", str(tmp_path / "no-such-file"))
    elif file_text == "unset-path":
        monkeypatch.setenv("FIRSTCYCLE_API_KEY_FILE", "")
    elif file_text is not None:
        secret = tmp_path / "keys"
        secret.write_text(file_text, encoding="utf-8")
        monkeypatch.setenv("FIRSTCYCLE_API_KEY_FILE", str(secret))
    get_settings.cache_clear()
    try:
        with pytest.raises(KeySourceError, match=setting):
            create_app()
        # the command line stops before starting the server, naming the setting
        assert cli.main(["serve", "--port", "1"]) == 2
        err = capsys.readouterr().err
        assert "refusing to start" in err
        assert setting in err
    finally:
        get_settings.cache_clear()
