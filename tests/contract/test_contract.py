"""The committed contract in openapi/v1/ is exactly what the app produces."""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

import pytest
from fastapi.testclient import TestClient

from service import contract
from service.app import create_app

ROOT = Path(__file__).resolve().parents[2] / "openapi" / "v1"


@pytest.fixture(scope="module")
def live() -> dict[str, Any]:
    return create_app().openapi()


def test_openapi_json_matches_app(live: dict[str, Any]) -> None:
    committed = (ROOT / "openapi.json").read_text(encoding="utf-8")
    assert committed == contract.dumps(live), (
        "openapi/v1/openapi.json differs from the app: run `firstcycle openapi`"
    )


def test_schema_files_match_app(live: dict[str, Any]) -> None:
    files = contract.render(live, with_examples=False)
    expected = {k for k in files if k.startswith("schemas/")}
    present = {f"schemas/{p.name}" for p in (ROOT / "schemas").glob("*.json")}
    assert present == expected
    for rel in expected:
        assert (ROOT / rel).read_text(encoding="utf-8") == files[rel], rel


def test_every_path_is_versioned_and_documents_problems(live: dict[str, Any]) -> None:
    for path, ops in live["paths"].items():
        if path in ("/healthz", "/readyz", "/metrics"):
            continue
        assert path.startswith("/v1/")
        for op in ops.values():
            r422 = op["responses"]["422"]["content"]
            assert list(r422) == ["application/problem+json"]
            assert op["operationId"]


def _close(a: Any, b: Any, path: str = "") -> None:
    """Equal structure; floats equal to 1e-9 relative (platform libm differences)."""
    if isinstance(a, dict):
        assert isinstance(b, dict), path
        assert set(a) == set(b), path
        for k in a:
            _close(a[k], b[k], f"{path}.{k}")
    elif isinstance(a, list):
        assert isinstance(b, list), path
        assert len(a) == len(b), path
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            _close(x, y, f"{path}[{i}]")
    elif isinstance(a, float) or isinstance(b, float):
        assert math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-12), f"{path}: {a} != {b}"
    else:
        assert a == b, path


EXAMPLES = sorted((ROOT / "examples").glob("*.json"))


@pytest.mark.parametrize("path", EXAMPLES, ids=[p.stem for p in EXAMPLES])
def test_golden_examples_are_what_the_service_returns(path: Path) -> None:
    pair = json.loads(path.read_text(encoding="utf-8"))
    client = TestClient(create_app())
    if pair["method"] == "GET":
        resp = client.get(pair["path"])
        assert resp.status_code == pair["status"]
        assert resp.headers["content-type"].split(";")[0] == pair["media_type"]
        got, want = resp.text.splitlines(), pair["response_text"].splitlines()
        assert len(got) == len(want)
        for g, w in zip(got, want, strict=True):  # numbers to 1e-9 relative
            _close([_num(x) for x in g.split(",")], [_num(x) for x in w.split(",")])
        return
    resp = client.request(pair["method"], pair["path"], json=pair["request"])
    assert resp.status_code == pair["status"]
    if "response_contains" in pair:  # a figure: its labels, not its bytes
        assert resp.headers["content-type"].split(";")[0] == pair["media_type"]
        assert len(pair["response_contains"]) >= 3
        for text in pair["response_contains"]:
            assert text in resp.text
        return
    _close(resp.json(), pair["response"])


def _num(text: str) -> float | str:
    try:
        return float(text)
    except ValueError:
        return text


def test_examples_cover_every_compute_operation(live: dict[str, Any]) -> None:
    ops = {
        op["operationId"]
        for p, item in live["paths"].items()
        if p.startswith("/v1/")
        for op in item.values()
    }
    covered = {json.loads(p.read_text())["operation_id"] for p in EXAMPLES}
    assert ops <= covered
