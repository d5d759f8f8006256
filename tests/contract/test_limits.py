"""The contract publishes the limits the service applies: each request field bounded by a
setting has the setting's default as its maximum, so the two cannot drift apart."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest

from service.settings import CONTRACT_MAXIMA, Settings

CONTRACT = Path(__file__).resolve().parents[2] / "openapi/v1/openapi.json"

# (schema, property, JSON Schema keyword) -> the setting that bounds it at run time
BOUNDED = [
    ("EnvelopeOptions", "duration_s", "maximum", "max_duration_s"),
    ("ClearanceOptions", "duration_s", "maximum", "max_duration_s"),
    ("EnvelopeOptions", "samples_per_cycle", "maximum", "max_samples_per_cycle"),
    ("StatisticsOptions", "samples", "maximum", "max_statistics_samples"),
    ("NetworkSamplingIn", "samples", "maximum", "max_statistics_samples"),
    ("NetworkOptions", "duration_s", "maximum", "max_duration_s"),
    ("PeakBatchRequest", "cases", "maxItems", "max_cases"),
]
SHEET = [
    ("/v1/sheet/inrush/ieq.txt", "duration_s"),
    ("/v1/sheet/inrush/envelope.csv", "duration_s"),
    ("/v1/sheet/inrush/ieq.csv", "duration_s"),
]


@pytest.fixture(scope="module")
def contract() -> dict[str, Any]:
    doc: dict[str, Any] = json.loads(CONTRACT.read_text(encoding="utf-8"))
    return doc


@pytest.mark.parametrize(("schema", "prop", "keyword", "setting"), BOUNDED)
def test_contract_maximum_is_the_settings_default(
    contract: dict[str, Any], schema: str, prop: str, keyword: str, setting: str
) -> None:
    field = contract["components"]["schemas"][schema]["properties"][prop]
    assert field[keyword] == getattr(Settings(), setting)
    assert f"FIRSTCYCLE_{setting.upper()}" in field["description"]  # says who may change it


@pytest.mark.parametrize(("path", "name"), SHEET)
def test_sheet_duration_maximum_is_the_settings_default(
    contract: dict[str, Any], path: str, name: str
) -> None:
    params = {p["name"]: p for p in contract["paths"][path]["get"]["parameters"]}
    assert params[name]["schema"]["maximum"] == Settings().max_duration_s


def test_every_published_limit_is_checked() -> None:
    assert {b[3] for b in BOUNDED} == set(CONTRACT_MAXIMA)


def test_settings_above_the_contract_are_refused(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("FIRSTCYCLE_MAX_DURATION_S", "10")
    with pytest.raises(ValueError, match=r"FIRSTCYCLE_MAX_DURATION_S=10\.0 is above 5\.0"):
        Settings()
    monkeypatch.setenv("FIRSTCYCLE_MAX_DURATION_S", "2")
    assert Settings().max_duration_s == 2.0  # lowering is the operator's right
