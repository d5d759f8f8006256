"""Deterministic export of the contract: ``openapi/v1/``.

* ``openapi.json`` -- the document the app serves at ``/v1/openapi.json``;
* ``schemas/<Model>.json`` -- one JSON Schema per component schema;
* ``examples/<operation>.<name>.json`` -- the demo requests with the responses the service gives.

Output is byte-for-byte reproducible: sorted keys, two-space indent, trailing newline.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from service.examples import (
    CLEARANCE_REQUESTS,
    DIP_REQUESTS,
    ENVELOPE_REQUESTS,
    MITIGATION_REQUESTS,
    NETWORK_REQUESTS,
    NETWORK_STATISTICS_REQUESTS,
    PEAK_BATCH_REQUESTS,
    PEAK_REQUESTS,
    SHEET_REQUESTS,
    STATISTICS_REQUESTS,
)


def dumps(obj: Any) -> str:
    """Canonical JSON text."""
    return json.dumps(obj, indent=2, sort_keys=True, ensure_ascii=False) + "\n"


def example_pairs() -> dict[str, dict[str, Any]]:
    """Every demo request with the response the app returns for it."""
    from fastapi.testclient import TestClient

    from service.app import create_app

    client = TestClient(create_app())
    out: dict[str, dict[str, Any]] = {}
    for op, path, requests in (
        ("inrush_peak", "/v1/inrush/peak", PEAK_REQUESTS),
        ("inrush_envelope", "/v1/inrush/envelope", ENVELOPE_REQUESTS),
        ("inrush_peak_batch", "/v1/inrush/peak/batch", PEAK_BATCH_REQUESTS),
        ("clearance", "/v1/clearance", CLEARANCE_REQUESTS),
        ("generator_dip", "/v1/generator-dip", DIP_REQUESTS),
        ("inrush_statistics", "/v1/inrush/statistics", STATISTICS_REQUESTS),
        ("mitigation", "/v1/mitigation", MITIGATION_REQUESTS),
        ("network_energization", "/v1/network-energization", NETWORK_REQUESTS),
        (
            "network_energization_statistics",
            "/v1/network-energization/statistics",
            NETWORK_STATISTICS_REQUESTS,
        ),
    ):
        for name, body in requests.items():
            resp = client.post(path, json=body)
            if resp.status_code != 200:
                raise RuntimeError(f"example {op}.{name} failed: {resp.status_code} {resp.text}")
            out[f"{op}.{name}"] = {
                "operation_id": op,
                "method": "POST",
                "path": path,
                "request": body,
                "status": 200,
                "response": resp.json(),
            }
    for name, body in CLEARANCE_REQUESTS.items():
        resp = client.post("/v1/clearance/figure", json=body)
        if resp.status_code != 200:
            raise RuntimeError(f"example clearance_figure.{name} failed: {resp.status_code}")
        # SVG bytes depend on the plotting library's version: consumers get the labels to check
        labels = [d["name"] for d in body["devices"]] + ["Current [A]", "Time [s]"]
        out[f"clearance_figure.{name}"] = {
            "operation_id": "clearance_figure",
            "method": "POST",
            "path": "/v1/clearance/figure",
            "request": body,
            "status": 200,
            "media_type": resp.headers["content-type"].split(";")[0],
            "response_contains": [x for x in labels if x in resp.text],
        }
    for name, body in CLEARANCE_REQUESTS.items():
        if not any(d.get("kind") == "differential" for d in body["devices"]):
            continue
        resp = client.post("/v1/clearance/differential-figure", json=body)
        if resp.status_code != 200:
            raise RuntimeError(f"example clearance_differential_figure.{name} failed: {resp.text}")
        out[f"clearance_differential_figure.{name}"] = {
            "operation_id": "clearance_differential_figure",
            "method": "POST",
            "path": "/v1/clearance/differential-figure",
            "request": body,
            "status": 200,
            "media_type": resp.headers["content-type"].split(";")[0],
            "response_contains": [
                x
                for x in ("Percentage characteristic", "Blocking level", "Restraint current")
                if x in resp.text
            ],
        }
    for name, body in DIP_REQUESTS.items():
        resp = client.post("/v1/generator-dip/figure", json=body)
        if resp.status_code != 200:
            raise RuntimeError(f"example generator_dip_figure.{name} failed: {resp.status_code}")
        out[f"generator_dip_figure.{name}"] = {
            "operation_id": "generator_dip_figure",
            "method": "POST",
            "path": "/v1/generator-dip/figure",
            "request": body,
            "status": 200,
            "media_type": resp.headers["content-type"].split(";")[0],
            "response_contains": [
                x
                for x in ("Time [s]", "Voltage [pu]", "Dip limit", "Recovery band")
                if x in resp.text
            ],
        }
    for name, body in NETWORK_REQUESTS.items():
        resp = client.post("/v1/network-energization/figure", json=body)
        if resp.status_code != 200:
            raise RuntimeError(f"example network_energization_figure.{name} failed: {resp.text}")
        labels = [u["name"] for u in body["units"]] + ["Source", "Current [A]", "Time [s]"]
        out[f"network_energization_figure.{name}"] = {
            "operation_id": "network_energization_figure",
            "method": "POST",
            "path": "/v1/network-energization/figure",
            "request": body,
            "status": 200,
            "media_type": resp.headers["content-type"].split(";")[0],
            "response_contains": [x for x in labels if x in resp.text],
        }
    for name, (op, url) in SHEET_REQUESTS.items():
        resp = client.get(url)
        if resp.status_code != 200:
            raise RuntimeError(f"example {op}.{name} failed: {resp.status_code} {resp.text}")
        out[f"{op}.{name}"] = {
            "operation_id": op,
            "method": "GET",
            "path": url,
            "status": 200,
            "media_type": resp.headers["content-type"].split(";")[0],
            "response_text": resp.text,
        }
    return out


def figures() -> dict[str, str]:
    """The demo figures (SVG), for the README and for looking at."""
    from fastapi.testclient import TestClient

    from service.app import create_app

    client = TestClient(create_app())
    out = {}
    for name, body in CLEARANCE_REQUESTS.items():
        out[f"examples/clearance_figure.{name}.svg"] = client.post(
            "/v1/clearance/figure", json=body
        ).text
    for name, body in CLEARANCE_REQUESTS.items():
        if any(d.get("kind") == "differential" for d in body["devices"]):
            out[f"examples/clearance_differential_figure.{name}.svg"] = client.post(
                "/v1/clearance/differential-figure", json=body
            ).text
    for name, body in DIP_REQUESTS.items():
        out[f"examples/generator_dip_figure.{name}.svg"] = client.post(
            "/v1/generator-dip/figure", json=body
        ).text
    return out


def render(schema: dict[str, Any], with_examples: bool = True) -> dict[str, str]:
    """Relative path -> file text of the whole contract directory."""
    files = {"openapi.json": dumps(schema)}
    for name, sub in sorted(schema.get("components", {}).get("schemas", {}).items()):
        files[f"schemas/{name}.json"] = dumps(sub)
    if with_examples:
        for key, pair in example_pairs().items():
            files[f"examples/{key}.json"] = dumps(pair)
        files.update(figures())
    return files


def write(target: Path, schema: dict[str, Any]) -> list[Path]:
    """Write the contract under ``target`` (removing stale files) and return the paths."""
    files = render(schema)
    written = []
    for sub in ("schemas", "examples"):
        d = target / sub
        d.mkdir(parents=True, exist_ok=True)
        for old in [*d.glob("*.json"), *d.glob("*.svg")]:
            if f"{sub}/{old.name}" not in files:
                old.unlink()
    for rel, text in files.items():
        path = target / rel
        path.write_text(text, encoding="utf-8")
        written.append(path)
    return written
