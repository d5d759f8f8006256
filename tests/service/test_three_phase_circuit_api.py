"""The three-phase SI equivalent circuit (circuit_three_phase) in /v1/inrush/peak, envelope and
batch: rebuilt from the numbers a nameplate response states, it answers as the nameplate does.

The SI request is written only from what the nameplate response lists (its assumptions and
rated current), so each test also checks that the response states enough to rebuild the case
in a general-purpose circuit simulator. The two requests describe the same circuit; the
tolerance 1e-9 relative leaves room for the last bits of V_LL = sqrt(3)*(V_LL/sqrt(3)).
"""

from __future__ import annotations

import copy
import math
from typing import Any

import pytest
from fastapi.testclient import TestClient
from json_compare import assert_json_close

from service.examples import (
    CLEARANCE_REQUESTS,
    DIP_REQUESTS,
    ENVELOPE_REQUESTS,
    MITIGATION_REQUESTS,
    PEAK_REQUESTS,
    STATISTICS_REQUESTS,
)

Body = dict[str, Any]


def _stated(resp: Body) -> dict[str, Any]:
    return {a["name"]: a["value"] for a in resp["assumptions"]}


def si_circuit_from_response(nameplate: Body, resp: Body) -> Body:
    """The circuit_three_phase of a nameplate request, from the numbers its response states."""
    a = _stated(resp)
    t = nameplate["transformer"]
    conn = t["energized_winding"].get("connection", "wye_grounded")
    v_ll = t["energized_winding"]["voltage_kv"] * 1e3
    curve: Body = {
        "unsaturated_inductance_h": a["magnetizing_inductance_h"],
        "knee_flux_wb": a["knee_flux_wb"],
        "saturated_inductance_h": a["air_core_inductance_h"],
    }
    if a["magnetizing_curve"] == "smooth":
        curve.update(kind="smooth", knee_width_wb=a["knee_width_pu"] * a["nominal_flux_wb"])
    else:
        curve["kind"] = "two_slope"
    return {
        "connection": conn,
        "frequency_hz": a["frequency_hz"],
        "winding_voltage_v": v_ll if conn == "delta" else v_ll / math.sqrt(3.0),
        "winding_resistance_ohm": a["winding_resistance_ohm"],
        "magnetizing": curve,
        "rated_current_a": resp["rated_current_a"],
        "source_resistance_ohm": a["source_resistance_ohm"],
        "source_inductance_h": a["source_inductance_h"],
    }


def _si_request(nameplate: Body, resp: Body) -> Body:
    out = {k: copy.deepcopy(v) for k, v in nameplate.items() if k not in ("transformer", "source")}
    out["circuit_three_phase"] = si_circuit_from_response(nameplate, resp)
    return out


SMOOTH_FLOATING = {
    **PEAK_REQUESTS["northgate_lighting"],
    "transformer": {
        **PEAK_REQUESTS["northgate_lighting"]["transformer"],
        "energized_winding": {"voltage_kv": 0.48, "connection": "wye", "position": "outer"},
        "core": {"material": "grain_oriented", "curve": "smooth", "knee_width_pu": 0.02},
    },
    "switching": {"closing_angle_deg": 30.0, "pole_delay_ms": [0.0, 1.5, 3.0]},
}
PEAK_CASES = {
    "delta on a fault level": PEAK_REQUESTS["northgate_main_unit"],
    "grounded wye on an impedance, residual given": PEAK_REQUESTS["northgate_backfeed"],
    "delta on the 480 V bus": PEAK_REQUESTS["northgate_lighting"],
    "floating wye, smooth knee, pole scatter": SMOOTH_FLOATING,
}
RESULT_FIELDS = (
    "rated_current_a",
    "first_peak_a",
    "first_peak_x_rated",
    "analytic",
    "simulated",
    "worst_case_simulated",
    "worst_case_analytic",
    "saturation_flux_pu",
    "loop_resistance_ohm",
    "loop_inductance_h",
    "warnings",
    "method",
)


@pytest.mark.parametrize("name", sorted(PEAK_CASES))
def test_peak_from_the_nameplates_circuit_equals_the_nameplate(
    client: TestClient, name: str
) -> None:
    plate = PEAK_CASES[name]
    r1 = client.post("/v1/inrush/peak", json=plate)
    assert r1.status_code == 200, r1.text
    r2 = client.post("/v1/inrush/peak", json=_si_request(plate, r1.json()))
    assert r2.status_code == 200, r2.text
    a, b = r1.json(), r2.json()
    for field in RESULT_FIELDS:
        assert_json_close(a[field], b[field], field)
    for name_ in ("nominal_flux_wb", "knee_flux_wb", "residual_flux_pu", "source_emf"):
        assert_json_close(_stated(a)[name_], _stated(b)[name_], name_)


def test_envelope_from_the_nameplates_circuit_equals_the_nameplate(client: TestClient) -> None:
    plate = ENVELOPE_REQUESTS["northgate_main_unit"]
    r1 = client.post("/v1/inrush/envelope", json=plate)
    assert r1.status_code == 200, r1.text
    r2 = client.post("/v1/inrush/envelope", json=_si_request(plate, r1.json()))
    assert r2.status_code == 200, r2.text
    a, b = r1.json(), r2.json()
    for field in ("lines", "analytic", "threshold_a", "equivalent_rms_times_s", "steps_per_cycle"):
        assert_json_close(a[field], b[field], field)


def test_batch_item_from_the_nameplates_circuit_equals_the_nameplate(client: TestClient) -> None:
    plate = PEAK_REQUESTS["northgate_main_unit"]
    single = client.post("/v1/inrush/peak", json=plate).json()
    si = _si_request(plate, single)
    r = client.post("/v1/inrush/peak/batch", json={"cases": [plate, si]})
    assert r.status_code == 200, r.text
    items = r.json()["results"]
    assert [it["status"] for it in items] == [200, 200]
    for field in RESULT_FIELDS:
        assert_json_close(items[0]["result"][field], items[1]["result"][field], field)


def _si_main_unit(client: TestClient) -> Body:
    plate = PEAK_REQUESTS["northgate_main_unit"]
    return _si_request(plate, client.post("/v1/inrush/peak", json=plate).json())


def _field_of(resp: Any) -> list[str]:
    assert resp.status_code == 422, resp.text
    assert resp.headers["content-type"].startswith("application/problem+json")
    return [e["field"] for e in resp.json()["errors"]]


def test_core_errors_name_the_field_path(client: TestClient) -> None:
    body = _si_main_unit(client)
    # the air-core slope must lie below the unsaturated one (a saturating curve)
    bad = copy.deepcopy(body)
    m = bad["circuit_three_phase"]["magnetizing"]
    m["unsaturated_inductance_h"], m["saturated_inductance_h"] = 4.0, 5.0
    fields = _field_of(client.post("/v1/inrush/peak", json=bad))
    assert fields == ["circuit_three_phase.magnetizing.saturated_inductance_h"]
    # a smooth knee wider than the knee flux itself
    bad = copy.deepcopy(body)
    m = bad["circuit_three_phase"]["magnetizing"]
    bad["circuit_three_phase"]["magnetizing"] = {
        **m,
        "kind": "smooth",
        "knee_width_wb": 2.0 * m["knee_flux_wb"],
    }
    del bad["method"]  # an envelope request has none
    fields = _field_of(client.post("/v1/inrush/envelope", json=bad))
    assert fields == ["circuit_three_phase.magnetizing.knee_width_wb"]
    # a table whose currents fall
    bad = copy.deepcopy(body)
    bad["circuit_three_phase"]["magnetizing"] = {
        "kind": "table",
        "flux_wb": [40.0, 60.0],
        "current_a": [2.0, 1.0],
        "final_inductance_h": 0.1,
    }
    fields = _field_of(client.post("/v1/inrush/peak", json=bad))
    assert fields == ["circuit_three_phase.magnetizing.current_a"]


def test_request_errors_name_the_field_path(client: TestClient) -> None:
    body = _si_main_unit(client)
    bad = copy.deepcopy(body)
    bad["circuit_three_phase"]["winding_resistance_ohm"] = -1.0
    assert _field_of(client.post("/v1/inrush/peak", json=bad)) == [
        "circuit_three_phase.winding_resistance_ohm"
    ]
    bad = copy.deepcopy(body)
    bad["circuit_three_phase"]["connection"] = "zigzag"
    assert _field_of(client.post("/v1/inrush/peak", json=bad)) == ["circuit_three_phase.connection"]


@pytest.mark.parametrize(
    "change",
    [
        lambda b: b.update(transformer=PEAK_REQUESTS["northgate_main_unit"]["transformer"]),
        lambda b: b.update(circuit=PEAK_REQUESTS["circuit_mode"]["circuit"]),
        lambda b: b.update(source={"kind": "ideal"}),
        lambda b: b.update(switching={"residual_flux_wb": [1.0]}),
        lambda b: b.update(switching={"residual_flux_pu": [0.8]}),
        lambda b: b.update(switching={"pole_delay_ms": [0.0, 1.0]}),
    ],
    ids=["with transformer", "with circuit", "with source", "wb residual", "one residual", "two"],
)
def test_inconsistent_bodies_are_refused(client: TestClient, change: Any) -> None:
    body = _si_main_unit(client)
    change(body)
    r = client.post("/v1/inrush/peak", json=body)
    assert r.status_code == 422, r.text


def test_three_phase_residual_and_poles_are_accepted(client: TestClient) -> None:
    body = _si_main_unit(client)
    body["switching"] = {"residual_flux_pu": [0.5, -0.25, -0.25], "pole_delay_ms": [0, 1, 2]}
    r = client.post("/v1/inrush/peak", json=body)
    assert r.status_code == 200, r.text
    assert _stated(r.json())["residual_flux_pu"] == [0.5, -0.25, -0.25]


def test_without_rating_there_are_no_x_rated_values(client: TestClient) -> None:
    body = _si_main_unit(client)
    del body["circuit_three_phase"]["rated_current_a"]
    r = client.post("/v1/inrush/peak", json=body)
    assert r.status_code == 200, r.text
    assert r.json()["first_peak_x_rated"] is None
    assert r.json()["rated_current_a"] is None


def test_knee_below_nominal_flux_is_warned(client: TestClient) -> None:
    body = _si_main_unit(client)
    m = body["circuit_three_phase"]["magnetizing"]
    lam_n = math.sqrt(2.0) * 13800.0 / (2.0 * math.pi * 60.0)  # sqrt(2)*V/omega, circuit laws
    m["knee_flux_wb"] = 0.95 * lam_n
    r = client.post("/v1/inrush/peak", json={**body, "method": "analytic"})
    assert r.status_code == 200, r.text
    assert "knee_below_nominal_flux" in [w["code"] for w in r.json()["warnings"]]


# ------------------------------------------------------------ assumptions in every response


def _flux_notes(resp: Body) -> dict[str, Any]:
    a = _stated(resp)
    return {k: a[k] for k in ("nominal_flux_wb", "knee_flux_wb", "source_emf")}


def test_main_unit_fluxes_are_stated(client: TestClient) -> None:
    # 13.8 kV delta: lambda_N = sqrt(2)*13800/(2*pi*60) = 51.768 Wb-turn (circuit laws); the
    # knee is B_S/B_N = 2.03/1.7 of it for the grain-oriented default
    r = client.post("/v1/inrush/peak", json=PEAK_REQUESTS["northgate_main_unit"])
    notes = _flux_notes(r.json())
    lam_n = math.sqrt(2.0) * 13800.0 / (2.0 * math.pi * 60.0)
    assert notes["nominal_flux_wb"] == pytest.approx(lam_n, rel=1e-12)
    assert notes["knee_flux_wb"] == pytest.approx(lam_n * 2.03 / 1.7, rel=1e-12)
    assert "sqrt(2)*V_LL/sqrt(3)" in notes["source_emf"]


def test_single_phase_circuit_states_its_own_convention(client: TestClient) -> None:
    r = client.post("/v1/inrush/peak", json=PEAK_REQUESTS["circuit_mode"])
    notes = _flux_notes(r.json())
    assert (
        notes["knee_flux_wb"]
        == PEAK_REQUESTS["circuit_mode"]["circuit"]["magnetizing"]["knee_flux_wb"]
    )
    assert notes["source_emf"].startswith("e = sqrt(2)*V*sin(")


@pytest.mark.parametrize(
    ("path", "body", "emf"),
    [
        ("/v1/inrush/envelope", ENVELOPE_REQUESTS["northgate_main_unit"], "e_k = sqrt(2)"),
        ("/v1/clearance", CLEARANCE_REQUESTS["northgate_main_unit"], "e_k = sqrt(2)"),
        ("/v1/mitigation", MITIGATION_REQUESTS["northgate_backfeed"], "e_k = sqrt(2)"),
        ("/v1/generator-dip", DIP_REQUESTS["northgate_backfeed"], "pre-event phase-A"),
        ("/v1/inrush/statistics", STATISTICS_REQUESTS["northgate_backfeed"], "e_k = sqrt(2)"),
    ],
    ids=["envelope", "clearance", "mitigation", "dip", "statistics"],
)
def test_every_circuit_response_states_the_fluxes(
    client: TestClient, path: str, body: Body, emf: str
) -> None:
    r = client.post(path, json=body)
    assert r.status_code == 200, r.text
    notes = _flux_notes(r.json())
    assert notes["knee_flux_wb"] > 0.0
    assert notes["nominal_flux_wb"] > 0.0
    assert notes["source_emf"].startswith(emf)
