"""Breaking-change gate: the live contract must stay compatible with every released v1."""

from __future__ import annotations

import copy
import json
from pathlib import Path
from typing import Any

import pytest

from service.app import create_app
from service.compat import breaking_changes

RELEASED = sorted((Path(__file__).resolve().parents[2] / "openapi/v1/released").glob("*.json"))


@pytest.fixture(scope="module")
def live() -> dict[str, Any]:
    return create_app().openapi()


@pytest.mark.parametrize("path", RELEASED, ids=[p.stem for p in RELEASED])
def test_live_contract_keeps_released_promises(live: dict[str, Any], path: Path) -> None:
    old = json.loads(path.read_text(encoding="utf-8"))
    assert breaking_changes(old, live) == []


def test_gate_detects_breaking_changes(live: dict[str, Any]) -> None:
    # the gate itself: each mutation below must be reported
    new = copy.deepcopy(live)
    del new["paths"]["/v1/inrush/envelope"]
    schemas = new["components"]["schemas"]
    schemas["PeakResponse"]["properties"].pop("first_peak_a")
    schemas["TransformerNameplate"]["required"].append("frequency_hz")
    schemas["EnergizedWinding"]["properties"]["connection"]["enum"].remove("wye")
    found = "\n".join(breaking_changes(live, new))
    assert "POST /v1/inrush/envelope: operation removed" in found
    assert "first_peak_a: response field removed" in found
    assert "frequency_hz: new required request field" in found
    assert "enum values removed ['wye']" in found


def test_additions_are_compatible(live: dict[str, Any]) -> None:
    new = copy.deepcopy(live)
    new["components"]["schemas"]["PeakResponse"]["properties"]["extra_a"] = {"type": "number"}
    new["paths"]["/v1/new"] = {"get": {"responses": {"200": {"description": "x"}}}}
    assert breaking_changes(live, new) == []
