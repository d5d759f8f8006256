"""The cross-field rules are in the contract: a general-purpose JSON Schema validator
(jsonschema-rs, Draft 2020-12, the dialect of OpenAPI 3.1) reading the committed contract
accepts and rejects the same bodies as the service's own validation."""

from __future__ import annotations

import copy
import json
from collections.abc import Callable
from pathlib import Path
from typing import Any

import jsonschema_rs
import pytest
from pydantic import BaseModel, ValidationError

from service.examples import (
    CLEARANCE_REQUESTS,
    DIP_REQUESTS,
    MITIGATION_REQUESTS,
    NETWORK_REQUESTS,
    PEAK_REQUESTS,
    STATISTICS_REQUESTS,
)
from service.models.clearance import ClearanceRequest
from service.models.dip import GeneratorDipRequest
from service.models.inrush import EnvelopeRequest, PeakRequest
from service.models.mitigation import MitigationRequest
from service.models.network import NetworkRequest
from service.models.statistics import StatisticsRequest

CONTRACT = json.loads(
    (Path(__file__).resolve().parents[2] / "openapi/v1/openapi.json").read_text(encoding="utf-8")
)
Body = dict[str, Any]


def _edit(base: Body, change: Callable[[Body], None]) -> Body:
    out = copy.deepcopy(base)
    change(out)
    return out


PEAK = PEAK_REQUESTS["northgate_main_unit"]
CIRCUIT = PEAK_REQUESTS["circuit_mode"]
THREE = PEAK_REQUESTS["circuit_three_phase_mode"]
DIP = DIP_REQUESTS["northgate_backfeed"]
STATS = STATISTICS_REQUESTS["northgate_backfeed_generator"]
CLEAR = CLEARANCE_REQUESTS["northgate_main_unit"]
MITIG = MITIGATION_REQUESTS["northgate_backfeed"]
RING = NETWORK_REQUESTS["northgate_ring_reclose"]
SI_WINDING = {
    k: v
    for k, v in THREE["circuit_three_phase"].items()
    if k not in ("frequency_hz",) and not k.startswith("source_")
}


def _ring_unit(**unit: Any) -> Body:
    out = copy.deepcopy(RING)
    out["units"][0] = {"name": "pad 1", **unit}
    return out


# (model, body, valid?) — each invalid body breaks exactly one cross-field rule
CASES: dict[str, tuple[type[BaseModel], Body, bool]] = {
    "peak nameplate": (PeakRequest, PEAK, True),
    "peak circuit": (PeakRequest, CIRCUIT, True),
    "peak circuit null": (PeakRequest, {**PEAK, "circuit": None}, True),
    "peak both modes": (PeakRequest, {**PEAK, "circuit": CIRCUIT["circuit"]}, False),
    "peak no mode": (PeakRequest, {"switching": {}}, False),
    "peak circuit with source": (PeakRequest, {**CIRCUIT, "source": {"kind": "ideal"}}, False),
    "peak wb in nameplate mode": (
        PeakRequest,
        _edit(PEAK, lambda b: b["switching"].update(residual_flux_wb=[0.1])),
        False,
    ),
    "peak both residual forms": (
        PeakRequest,
        _edit(
            CIRCUIT,
            lambda b: b.update(switching={"residual_flux_pu": [0.5], "residual_flux_wb": [0.1]}),
        ),
        False,
    ),
    "peak three-phase circuit": (PeakRequest, THREE, True),
    "peak three-phase circuit and nameplate": (
        PeakRequest,
        {**THREE, "transformer": PEAK["transformer"]},
        False,
    ),
    "peak three-phase and single-phase circuits": (
        PeakRequest,
        {**THREE, "circuit": CIRCUIT["circuit"]},
        False,
    ),
    "peak three-phase circuit with source": (
        PeakRequest,
        {**THREE, "source": {"kind": "ideal"}},
        False,
    ),
    "peak wb in three-phase circuit mode": (
        PeakRequest,
        {**THREE, "switching": {"residual_flux_wb": [0.1]}},
        False,
    ),
    "envelope three-phase circuit": (
        EnvelopeRequest,
        {k: v for k, v in THREE.items() if k != "method"},
        True,
    ),
    "clearance three-phase circuit": (
        ClearanceRequest,
        {"circuit_three_phase": THREE["circuit_three_phase"], "devices": CLEAR["devices"]},
        False,
    ),
    "dip": (GeneratorDipRequest, DIP, True),
    "dip with source": (GeneratorDipRequest, {**DIP, "source": {"kind": "ideal"}}, False),
    "dip single phase": (
        GeneratorDipRequest,
        _edit(DIP, lambda b: b["transformer"].update(phases=1) or b.pop("switching")),
        False,
    ),
    "dip circuit mode": (
        GeneratorDipRequest,
        {**_edit(DIP, lambda b: b.pop("transformer")), "circuit": CIRCUIT["circuit"]},
        False,
    ),
    "dip custom size without a custom limit": (
        GeneratorDipRequest,
        _edit(DIP, lambda b: b["options"].update(size_for="custom")),
        False,
    ),
    "dip custom size with a custom limit": (
        GeneratorDipRequest,
        _edit(
            DIP,
            lambda b: b["options"].update(
                size_for="custom", limits={"name": "PCC", "max_dip_percent": 3.0}
            ),
        ),
        True,
    ),
    "dip both transient time constants": (
        GeneratorDipRequest,
        _edit(DIP, lambda b: b["supply"].update(t_d1o_s=5.0)),
        False,
    ),
    "dip no transient time constant": (
        GeneratorDipRequest,
        _edit(DIP, lambda b: b["supply"].pop("t_d1_s")),
        False,
    ),
    "statistics": (StatisticsRequest, STATS, True),
    "statistics supply and source": (
        StatisticsRequest,
        {**STATS, "source": {"kind": "ideal"}},
        False,
    ),
    "statistics supply single phase": (
        StatisticsRequest,
        _edit(STATS, lambda b: b["transformer"].update(phases=1)),
        False,
    ),
    "clearance": (ClearanceRequest, CLEAR, True),
    "clearance circuit mode": (
        ClearanceRequest,
        {"circuit": CIRCUIT["circuit"], "devices": CLEAR["devices"]},
        False,
    ),
    "clearance relay curve of the other standard": (
        ClearanceRequest,
        _edit(
            CLEAR,
            lambda b: b["devices"][1].update(standard="iec_60255_151", curve="moderately_inverse"),
        ),
        False,
    ),
    "network": (NetworkRequest, RING, True),
    "network unit as si circuit": (
        NetworkRequest,
        _ring_unit(circuit_three_phase=SI_WINDING),
        True,
    ),
    "network unit both ways": (
        NetworkRequest,
        _ring_unit(circuit_three_phase=SI_WINDING, transformer=RING["units"][1]["transformer"]),
        False,
    ),
    "network unit neither way": (NetworkRequest, _ring_unit(), False),
    "mitigation": (MitigationRequest, MITIG, True),
    "mitigation circuit mode": (
        MitigationRequest,
        {"circuit": CIRCUIT["circuit"], "dip_limit": "G2"},
        False,
    ),
}


def _schema_valid(model: type[BaseModel], body: Body) -> bool:
    root = {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$ref": f"#/components/schemas/{model.__name__}",
        "components": CONTRACT["components"],
    }
    return bool(jsonschema_rs.Draft202012Validator(root).is_valid(body))


def _model_valid(model: type[BaseModel], body: Body) -> bool:
    try:
        model.model_validate(body)
    except ValidationError:
        return False
    return True


@pytest.mark.parametrize("name", sorted(CASES))
def test_contract_and_service_agree(name: str) -> None:
    model, body, valid = CASES[name]
    assert _model_valid(model, body) is valid
    assert _schema_valid(model, body) is valid


def _properties(schema: dict[str, Any]) -> list[tuple[str, dict[str, Any]]]:
    return list(schema.get("properties", {}).items())


def test_every_x_rated_field_defines_x_rated() -> None:
    fields = [
        (f"{name}.{prop}", spec)
        for name, schema in CONTRACT["components"]["schemas"].items()
        for prop, spec in _properties(schema)
        if prop.endswith("_x_rated")
    ]
    assert len(fields) >= 13
    for where, spec in fields:
        assert "rated rms line current" in spec.get("description", ""), where
        assert "S/(sqrt(3)*V_LL)" in spec["description"], where
    assert "x rated" in CONTRACT["info"]["description"]
    for path in ("/v1/sheet/inrush/peak.txt", "/v1/sheet/inrush/ieq.txt"):
        params = {p["name"]: p for p in CONTRACT["paths"][path]["get"]["parameters"]}
        name = "quantity" if "peak" in path else "unit"
        assert "rated rms line current" in params[name]["description"], path


def test_the_two_versions_are_told_apart() -> None:
    text = CONTRACT["info"]["description"]
    assert "`info.version` is the version of this API contract" in text
    assert "package" in text
