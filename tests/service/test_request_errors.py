"""What a caller is told about a request the service cannot take: the media type (415), JSON
syntax (400, with line and column), and field paths as the caller wrote them."""

from __future__ import annotations

import copy
import json

import pytest
from fastapi.testclient import TestClient

from service.examples import PEAK_REQUESTS

PROBLEM = "application/problem+json"
JSON_POSTS = [
    "/v1/inrush/peak",
    "/v1/inrush/envelope",
    "/v1/inrush/peak/batch",
    "/v1/inrush/statistics",
    "/v1/clearance",
    "/v1/clearance/figure",
    "/v1/clearance/differential-figure",
    "/v1/generator-dip",
    "/v1/generator-dip/figure",
    "/v1/mitigation",
    "/v1/network-energization",
    "/v1/network-energization/figure",
    "/v1/network-energization/statistics",
]


def _problem(r: object, status: int) -> dict[str, object]:
    assert r.status_code == status, r.text  # type: ignore[attr-defined]
    assert r.headers["content-type"].startswith(PROBLEM)  # type: ignore[attr-defined]
    body: dict[str, object] = r.json()  # type: ignore[attr-defined]
    assert body["status"] == status
    return body


@pytest.mark.parametrize("content_type", ["text/plain", "application/x-www-form-urlencoded"])
def test_other_media_type_is_415_naming_the_header(client: TestClient, content_type: str) -> None:
    body = json.dumps(PEAK_REQUESTS["northgate_main_unit"]).encode()
    r = client.post("/v1/inrush/peak", content=body, headers={"content-type": content_type})
    problem = _problem(r, 415)
    assert problem["type"] == "urn:firstcycle:problem:unsupported-media-type"
    assert "application/json" in str(problem["detail"])
    assert "b'" not in r.text  # no Python bytes literal
    err = problem["errors"][0]  # type: ignore[index]
    assert err["field"] == "headers.content-type"
    assert content_type in err["value"]
    assert r.headers["accept-post"] == "application/json"


def test_missing_media_type_is_415(client: TestClient) -> None:
    body = json.dumps(PEAK_REQUESTS["northgate_main_unit"]).encode()
    r = client.post("/v1/inrush/peak", content=body)
    assert "no Content-Type" in str(_problem(r, 415)["detail"])


@pytest.mark.parametrize("content_type", ["application/json; charset=utf-8", "application/x+json"])
def test_json_media_types_are_accepted(client: TestClient, content_type: str) -> None:
    req = {**PEAK_REQUESTS["northgate_main_unit"], "method": "analytic"}
    r = client.post(
        "/v1/inrush/peak", content=json.dumps(req).encode(), headers={"content-type": content_type}
    )
    assert r.status_code == 200, r.text


def test_every_json_operation_documents_415(client: TestClient) -> None:
    paths = client.get("/v1/openapi.json").json()["paths"]
    posts = sorted(p for p, item in paths.items() if "post" in item)
    assert posts == sorted(JSON_POSTS)
    for path in posts:
        ok = paths[path]["post"]["responses"]["415"]["content"]
        assert list(ok) == [PROBLEM]
        r = client.post(path, content=b"x=1", headers={"content-type": "text/plain"})
        _problem(r, 415)
    for item in paths.values():  # GET operations take no body: no 415 there
        if "get" in item:
            assert "415" not in item["get"]["responses"]


def test_json_syntax_error_gives_line_and_column(client: TestClient) -> None:
    text = '{\n  "transformer": {\n    "rating_kva": 45 "phases": 3\n  }\n}'
    r = client.post(
        "/v1/inrush/peak", content=text.encode(), headers={"content-type": "application/json"}
    )
    problem = _problem(r, 400)
    # json.loads reports the same place: line 3, column 22 (Python's json module, from its
    # documented JSONDecodeError.lineno/colno)
    try:
        json.loads(text)
    except json.JSONDecodeError as exc:
        where = f"line {exc.lineno}, column {exc.colno}"
    assert where == "line 3, column 22"
    assert where in str(problem["detail"])
    err = problem["errors"][0]  # type: ignore[index]
    assert err["field"] == "body"
    assert where in err["message"]


def test_union_member_names_are_not_in_the_field_path(client: TestClient) -> None:
    req = copy.deepcopy(PEAK_REQUESTS["northgate_main_unit"])
    req["source"]["fault_mva"] = 0.001
    problem = _problem(client.post("/v1/inrush/peak", json=req), 422)
    err = problem["errors"][0]  # type: ignore[index]
    assert err["field"] == "source.fault_mva"
    assert err["allowed"] == ">= 0.01"


def test_union_member_names_are_not_in_batch_field_paths(client: TestClient) -> None:
    case = copy.deepcopy(PEAK_REQUESTS["northgate_main_unit"])
    case["source"]["x_over_r"] = -1.0
    body = client.post("/v1/inrush/peak/batch", json={"cases": [case]}).json()
    assert body["results"][0]["problem"]["errors"][0]["field"] == "source.x_over_r"


def test_a_missing_field_keeps_its_name(client: TestClient) -> None:
    req = copy.deepcopy(PEAK_REQUESTS["northgate_main_unit"])
    del req["source"]["x_over_r"]
    err = _problem(client.post("/v1/inrush/peak", json=req), 422)["errors"][0]  # type: ignore[index]
    assert err["field"] == "source.x_over_r"


WEAK_UNIT = {
    "rating_kva": 45,
    "energized_winding": {"voltage_kv": 0.48, "connection": "delta", "position": "inner"},
    "impedance_percent": 3.5,
    "x_over_r": 1.2,
    "no_load_current_percent": 3,
}


@pytest.mark.parametrize("x_over_r", [1.2, 10.0])
def test_source_weaker_than_the_unit_names_fault_mva(client: TestClient, x_over_r: float) -> None:
    # before: a 422 on a field "circuit" the caller never sent, about Newton iterations
    req = {
        "transformer": WEAK_UNIT,
        "source": {"kind": "fault_level", "fault_mva": 0.01, "x_over_r": x_over_r},
    }
    problem = _problem(client.post("/v1/inrush/peak", json=req), 422)
    err = problem["errors"][0]  # type: ignore[index]
    assert err["field"] == "source.fault_mva"
    assert err["value"] == "0.01"
    assert err["allowed"].startswith("at least 0.09 MVA, twice the unit's rating of 0.045 MVA")
    assert "Newton" not in r_text(problem)
    req["source"]["fault_mva"] = 0.09  # type: ignore[index]
    assert client.post("/v1/inrush/peak", json=req).status_code == 200


def test_weak_impedance_source_names_its_impedance(client: TestClient) -> None:
    req = {
        "transformer": WEAK_UNIT,
        "source": {"kind": "impedance", "resistance_ohm": 1.0, "reactance_ohm": 5.0},
    }
    err = _problem(client.post("/v1/inrush/peak", json=req), 422)["errors"][0]  # type: ignore[index]
    assert err["field"] == "source.reactance_ohm"
    # |Z| at most V^2/(2 S) = 480^2/90 000 = 2.56 ohm
    assert "at most 2.56 ohm" in err["allowed"]


def r_text(problem: dict[str, object]) -> str:
    return json.dumps(problem)


KV_TYPO = {**WEAK_UNIT, "energized_winding": {**WEAK_UNIT["energized_winding"], "voltage_kv": 480}}  # type: ignore[dict-item]


def _codes(body: dict[str, object]) -> set[str]:
    return {w["code"] for w in body["warnings"]}  # type: ignore[attr-defined]


@pytest.mark.parametrize(
    ("path", "extra"),
    [
        ("/v1/inrush/peak", {"method": "analytic"}),
        ("/v1/inrush/envelope", {"options": {"duration_s": 0.2}}),
        ("/v1/inrush/statistics", {"options": {"samples": 100}}),
    ],
)
def test_volts_typed_as_kilovolts_warn(
    client: TestClient, path: str, extra: dict[str, object]
) -> None:
    r = client.post(path, json={"transformer": KV_TYPO, **extra})
    assert r.status_code == 200, r.text
    assert {"implausible_rating_voltage", "voltage_looks_like_volts"} <= _codes(r.json())
    fine = client.post(path, json={"transformer": WEAK_UNIT, **extra})
    assert not _codes(fine.json()) & {"implausible_rating_voltage", "voltage_looks_like_volts"}


def test_volts_typed_as_kilovolts_warn_in_batch_and_clearance(client: TestClient) -> None:
    from service.examples import CLEARANCE_REQUESTS

    batch = client.post(
        "/v1/inrush/peak/batch", json={"cases": [{"transformer": KV_TYPO, "method": "analytic"}]}
    ).json()
    assert "implausible_rating_voltage" in _codes(batch["results"][0]["result"])
    req = copy.deepcopy(CLEARANCE_REQUESTS["northgate_lighting"])
    req["transformer"]["energized_winding"]["voltage_kv"] = 480.0
    req["source"] = {"kind": "ideal"}
    req["options"]["duration_s"] = 0.5
    r = client.post("/v1/clearance", json=req)
    assert r.status_code == 200, r.text
    assert "voltage_looks_like_volts" in _codes(r.json())


def test_volts_typed_as_kilovolts_warn_in_dip_and_mitigation(client: TestClient) -> None:
    from service.examples import DIP_REQUESTS, MITIGATION_REQUESTS

    req = copy.deepcopy(DIP_REQUESTS["northgate_backfeed"])
    req["transformer"]["energized_winding"]["voltage_kv"] = 480.0  # 480 V typed as kV
    req["options"] = {"duration_s": 1.0, "size_for": None}
    r = client.post("/v1/generator-dip", json=req)
    assert r.status_code == 200, r.text
    assert "voltage_looks_like_volts" in _codes(r.json())
    req = copy.deepcopy(MITIGATION_REQUESTS["northgate_backfeed"])
    req["transformer"]["energized_winding"]["voltage_kv"] = 480.0
    req["options"] = [{"kind": "demagnetize"}]
    r = client.post("/v1/mitigation", json=req)
    assert r.status_code == 200, r.text
    assert "voltage_looks_like_volts" in _codes(r.json())


def test_over_the_sample_limit_names_the_fields_that_fit(client: TestClient) -> None:
    from service.examples import ENVELOPE_REQUESTS, NETWORK_REQUESTS

    # 64 units on the ring over 5 s: 195 lines (each unit's three and the source's) x (5 s x
    # 60 Hz x 128 + 1) samples = 7.49 M against the default 4 M; the longest record that fits is
    # (4e6/195 - 1)/(60*128) = 2.6708 s
    ring = copy.deepcopy(NETWORK_REQUESTS["northgate_ring_reclose"])
    unit = ring["units"][0]
    ring["units"] = [{**copy.deepcopy(unit), "name": f"unit {k}"} for k in range(64)]
    ring["source"] = {"kind": "fault_level", "fault_mva": 500, "x_over_r": 10}
    ring["options"] = {"duration_s": 5.0}
    body = _problem(client.post("/v1/network-energization", json=ring), 422)
    errors = body["errors"]
    assert isinstance(errors, list)
    assert errors[0]["field"] == "samples simulated (195 lines x samples per line)"
    assert [e["field"] for e in errors[1:]] == ["options.duration_s"]  # no samples_per_cycle here
    assert errors[1]["allowed"] == "<= 2.6708 (now 5)"
    ring["options"] = {"duration_s": 2.6708}  # what it names fits the sample limit
    r = client.post("/v1/network-energization", json=ring)
    if r.status_code == 422:  # the work budget may still refuse it, but not the sample limit
        assert not r.json()["errors"][0]["field"].startswith("samples simulated")
    # an envelope at 400 Hz, 1024 samples a cycle over 5 s: 3 x 2 048 001 samples = 6.1 M; it
    # sets its samples per cycle, so both fields are named
    env = copy.deepcopy(ENVELOPE_REQUESTS["northgate_main_unit"])
    env["transformer"]["frequency_hz"] = 400
    env["options"] = {"duration_s": 5.0, "samples_per_cycle": 1024}
    body = _problem(client.post("/v1/inrush/envelope", json=env), 422)
    errors = body["errors"]
    assert isinstance(errors, list)
    fields = {e["field"]: e["allowed"] for e in errors[1:]}
    # (4e6/3 - 1)/(400*1024) = 3.2552 s; (4e6/3 - 1)/(400*5) = 666 samples a cycle
    assert fields == {"options.duration_s": "<= 3.2552 (now 5)",
                      "options.samples_per_cycle": "<= 666 (now 1024)"}  # fmt: skip
