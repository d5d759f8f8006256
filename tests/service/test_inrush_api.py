"""HTTP behaviour of /v1/inrush/peak and /v1/inrush/envelope: results, provenance, errors."""

from __future__ import annotations

import copy
import math

import pytest
from fastapi.testclient import TestClient

from service.examples import ENVELOPE_REQUESTS, PEAK_REQUESTS

PROBLEM = "application/problem+json"


def _problem(resp: object, status: int) -> dict[str, object]:
    r = resp  # httpx response
    assert r.status_code == status, r.text  # type: ignore[attr-defined]
    assert r.headers["content-type"].startswith(PROBLEM)  # type: ignore[attr-defined]
    body: dict[str, object] = r.json()  # type: ignore[attr-defined]
    assert body["status"] == status
    assert str(body["type"]).startswith("urn:firstcycle:problem:")
    return body


@pytest.mark.parametrize("name", sorted(PEAK_REQUESTS))
def test_peak_examples_answer(client: TestClient, name: str) -> None:
    r = client.post("/v1/inrush/peak", json=PEAK_REQUESTS[name])
    assert r.status_code == 200, r.text
    body = r.json()
    assert body["first_peak_a"] > 0
    assert body["worst_case_simulated"]["peak_a"] >= body["first_peak_a"] * (1 - 1e-9)
    assert "manufacturer" in body["caution"]
    assert all(a["source"] for a in body["assumptions"])
    assert body["method"]["analytic"]
    assert body["method"]["simulated"]


def test_peak_main_unit_is_plausible(client: TestClient) -> None:
    # common practice: a distribution/plant transformer's first peak is several to ~30 x rated
    body = client.post("/v1/inrush/peak", json=PEAK_REQUESTS["northgate_main_unit"]).json()
    assert 3 < body["worst_case_simulated"]["peak_x_rated"] < 30
    assert body["rated_current_a"] == pytest.approx(2500e3 / (math.sqrt(3) * 13.8e3))


def test_peak_method_analytic_only(client: TestClient) -> None:
    req = copy.deepcopy(PEAK_REQUESTS["northgate_lighting"])
    req["method"] = "analytic"
    body = client.post("/v1/inrush/peak", json=req).json()
    assert body["simulated"] is None
    assert body["worst_case_simulated"] is None
    assert body["analytic"]
    assert body["worst_case_analytic"]["peak_a"] > 0
    assert body["method"]["simulated"] is None


def test_default_residual_flux_is_reported_with_provenance(client: TestClient) -> None:
    body = client.post("/v1/inrush/peak", json=PEAK_REQUESTS["northgate_main_unit"]).json()
    res = next(a for a in body["assumptions"] if a["name"] == "residual_flux_pu")
    assert res["value"] == [0.8, -0.4, -0.4]
    assert "default" in res["source"]


def test_deterministic_bytes(client: TestClient) -> None:
    req = PEAK_REQUESTS["northgate_backfeed"]
    a = client.post("/v1/inrush/peak", json=req).content
    b = client.post("/v1/inrush/peak", json=req).content
    assert a == b


@pytest.mark.parametrize("name", sorted(ENVELOPE_REQUESTS))
def test_envelope_examples_answer(client: TestClient, name: str) -> None:
    r = client.post("/v1/inrush/envelope", json=ENVELOPE_REQUESTS[name])
    assert r.status_code == 200, r.text
    body = r.json()
    for line in body["lines"]:
        peaks = line["cycle_peaks_a"]
        assert len(peaks) == round(
            ENVELOPE_REQUESTS[name]["options"]["duration_s"] * body["frequency_hz"]
        )
        assert len(line["equivalent_rms_a"]) == len(body["equivalent_rms_times_s"])
    assert body["equivalent_rms_times_s"][0] == 0.01


def test_envelope_waveform_is_capped(client: TestClient) -> None:
    req = copy.deepcopy(ENVELOPE_REQUESTS["northgate_lighting"])
    req["options"]["waveform_points"] = 500
    body = client.post("/v1/inrush/envelope", json=req).json()
    wave = body["waveform"]
    assert len(wave["time_s"]) <= 500
    assert set(wave["current_a"]) == {"A", "B", "C"}


def test_invalid_field_names_field_and_range(client: TestClient) -> None:
    req = copy.deepcopy(PEAK_REQUESTS["northgate_main_unit"])
    req["transformer"]["impedance_percent"] = 55
    body = _problem(client.post("/v1/inrush/peak", json=req), 422)
    errors = body["errors"]
    assert isinstance(errors, list)
    assert errors[0]["field"] == "transformer.impedance_percent"
    assert errors[0]["allowed"] == "<= 30.0"
    assert errors[0]["value"] == "55"


@pytest.mark.parametrize("token", ["NaN", "Infinity", "-Infinity"])
def test_non_finite_numbers_rejected(client: TestClient, token: str) -> None:
    text = (
        '{"circuit": {"voltage_rms_v": 277, "resistance_ohm": 0.001, "inductance_h": 0, '
        '"magnetizing": {"kind": "two_slope", "unsaturated_inductance_h": 0.03, '
        f'"knee_flux_wb": {token}, "saturated_inductance_h": 2e-5}}}}}}'
    )
    r = client.post("/v1/inrush/peak", content=text, headers={"content-type": "application/json"})
    body = _problem(r, 422)
    assert "knee_flux_wb" in str(body["errors"])


def test_inconsistent_physics_is_422_naming_field(client: TestClient) -> None:
    req = {
        "circuit": {
            "voltage_rms_v": 277,
            "resistance_ohm": 0.001,
            "inductance_h": 0,
            "magnetizing": {
                "kind": "two_slope",
                "unsaturated_inductance_h": 1e-5,
                "knee_flux_wb": 1.2,
                "saturated_inductance_h": 2e-5,
            },
        }
    }
    body = _problem(client.post("/v1/inrush/peak", json=req), 422)
    # named where the caller wrote it (the rule is core's, the path the request's)
    field = body["errors"][0]["field"]  # type: ignore[index]
    assert field == "circuit.magnetizing.saturated_inductance_h"


def test_non_monotone_table_is_422(client: TestClient) -> None:
    req = copy.deepcopy(PEAK_REQUESTS["circuit_mode"])
    req["circuit"]["magnetizing"] = {
        "kind": "table",
        "flux_wb": [1.0, 0.9],
        "current_a": [1.0, 2.0],
        "final_inductance_h": 2e-5,
    }
    body = _problem(client.post("/v1/inrush/peak", json=req), 422)
    assert body["errors"][0]["field"] == "circuit.magnetizing.flux_wb"  # type: ignore[index]


def test_both_modes_rejected(client: TestClient) -> None:
    req = copy.deepcopy(PEAK_REQUESTS["northgate_main_unit"])
    req["circuit"] = PEAK_REQUESTS["circuit_mode"]["circuit"]
    _problem(client.post("/v1/inrush/peak", json=req), 422)


def test_wrong_residual_length_rejected(client: TestClient) -> None:
    req = copy.deepcopy(PEAK_REQUESTS["northgate_main_unit"])
    req["switching"] = {"residual_flux_pu": [0.5]}
    body = _problem(client.post("/v1/inrush/peak", json=req), 422)
    assert "residual_flux_pu" in str(body["detail"])


def test_duration_over_limit_is_422_limit(
    client: TestClient, monkeypatch: pytest.MonkeyPatch
) -> None:
    from service.settings import get_settings

    req = copy.deepcopy(ENVELOPE_REQUESTS["northgate_lighting"])
    req["options"]["duration_s"] = 8.0  # over the contract's maximum: invalid input
    body = _problem(client.post("/v1/inrush/envelope", json=req), 422)
    assert body["type"] == "urn:firstcycle:problem:invalid-input"
    assert body["errors"][0]["allowed"] == "<= 5.0"  # type: ignore[index]
    monkeypatch.setenv("FIRSTCYCLE_MAX_DURATION_S", "0.5")  # an operator's lower limit
    get_settings.cache_clear()
    req["options"]["duration_s"] = 1.0
    body = _problem(client.post("/v1/inrush/envelope", json=req), 422)
    assert body["type"] == "urn:firstcycle:problem:limit-exceeded"
    assert body["errors"][0]["field"] == "options.duration_s"  # type: ignore[index]
    assert body["errors"][0]["allowed"] == "<= 0.5"  # type: ignore[index]
    get_settings.cache_clear()


def test_stiff_circuit_is_rejected_not_hung(client: TestClient) -> None:
    req = copy.deepcopy(PEAK_REQUESTS["circuit_mode"])
    req["circuit"]["resistance_ohm"] = 10_000.0
    req["circuit"]["magnetizing"]["saturated_inductance_h"] = 1e-9
    req["switching"] = {"closing_angle_deg": 0.0}
    body = _problem(client.post("/v1/inrush/peak", json=req), 422)
    err = body["errors"][0]  # type: ignore[index]
    # the request's own field and value, and the largest resistance this circuit allows: L/R of
    # the saturated loop at least 4/(f*16384) s (the step rule's ceiling, four steps per tau)
    assert err["field"] == "circuit.resistance_ohm"
    assert err["value"] == "10000.0"
    l_loop = 1e-9 + req["circuit"]["inductance_h"]
    r_max = l_loop * req["circuit"]["frequency_hz"] * 16384 / 4.0
    assert err["allowed"].startswith(f"at most {r_max:.6g} ohm")
    req["circuit"]["resistance_ohm"] = 0.99 * r_max  # just inside: answered
    req["circuit"]["magnetizing"]["saturated_inductance_h"] = 1e-9
    ok = client.post("/v1/inrush/peak", json=req)
    assert ok.status_code == 200, ok.text


def test_body_too_large_is_413(client: TestClient) -> None:
    big = b'{"x": "' + b"a" * 2_000_000 + b'"}'
    r = client.post("/v1/inrush/peak", content=big, headers={"content-type": "application/json"})
    _problem(r, 413)


def test_malformed_json_is_400_with_line_and_column(client: TestClient) -> None:
    # RFC 9110 section 15.5.1: malformed syntax is a 400 (422 is for well-formed content)
    r = client.post(
        "/v1/inrush/peak", content=b"{not json", headers={"content-type": "application/json"}
    )
    body = _problem(r, 400)
    assert body["type"] == "urn:firstcycle:problem:malformed-json"
    assert "line 1, column 2" in str(body["detail"])


def test_unknown_path_and_method(client: TestClient) -> None:
    _problem(client.get("/v1/nothing-here"), 404)
    r = client.get("/v1/inrush/peak")
    _problem(r, 405)
    assert r.headers["allow"] == "POST"


def test_health(client: TestClient) -> None:
    from importlib.metadata import version

    assert client.get("/healthz").json() == {
        "status": "ok",
        "api_version": client.get("/v1/openapi.json").json()["info"]["version"],
        "package_version": version("firstcycle"),  # pyproject.toml's, as installed
    }
    assert client.get("/readyz").json() == {"status": "ready"}


def test_api_defaults_are_labelled_as_defaults(client: TestClient) -> None:
    req = copy.deepcopy(PEAK_REQUESTS["northgate_main_unit"])
    del req["transformer"]["no_load_current_percent"]
    del req["transformer"]["core"]
    req["method"] = "analytic"
    body = client.post("/v1/inrush/peak", json=req).json()
    src = {a["name"]: a["source"] for a in body["assumptions"]}
    assert src["no_load_current_percent"].startswith("default")
    assert src["material"].startswith("default")
    assert src["magnetizing_curve"].startswith("default")
    assert src["impedance_percent"] == "given"
    assert src["closing_angle_deg"] == "given"


def test_winding_position_is_required(client: TestClient) -> None:
    req = copy.deepcopy(PEAK_REQUESTS["northgate_main_unit"])
    del req["transformer"]["energized_winding"]["position"]
    body = _problem(client.post("/v1/inrush/peak", json=req), 422)
    assert body["errors"][0]["field"] == "transformer.energized_winding.position"  # type: ignore[index]


def test_delta_closed_form_reports_line_currents(client: TestClient) -> None:
    # The main unit's 13.8 kV winding is a delta: the closed form's first_peak_a is a line
    # current (KCL: i_a = c_ab - c_ca), at least the winding current it contains, and the
    # worst case is a line value at least Wang's winding value; both against the simulation.
    body = client.post("/v1/inrush/peak", json=PEAK_REQUESTS["northgate_main_unit"]).json()
    sim = {p["line"]: p["first_peak_a"] for p in body["simulated"]}
    for w in body["analytic"]:
        assert w["line"] == w["winding"][0]
        assert w["first_peak_a"] >= w["winding_current_peak_a"] * (1 - 1e-12)
        assert w["simulated_over_analytic"] == pytest.approx(sim[w["line"]] / w["first_peak_a"])
        rated_winding = body["rated_current_a"] / math.sqrt(3.0)
        assert w["winding_current_peak_x_rated_winding"] == pytest.approx(
            w["winding_current_peak_a"] / rated_winding
        )
    worst = body["worst_case_analytic"]
    assert worst["peak_a"] > worst["winding_current_peak_a"]
    assert worst["line"] in sim
    assert worst["closing_angle_deg"] is not None
    # the line closed form is within 10 % of the simulated worst case (it was 26 % low)
    ratio = body["worst_case_simulated"]["peak_a"] / worst["peak_a"]
    assert 0.9 < ratio < 1.1, ratio


def test_envelope_ratio_and_validity_warning(client: TestClient) -> None:
    req = copy.deepcopy(ENVELOPE_REQUESTS["northgate_lighting"])
    body = client.post("/v1/inrush/envelope", json=req).json()
    for a, ln in zip(body["analytic"], body["lines"], strict=True):
        assert a["line"] == ln["line"]
        first = ln["cycle_peaks_a"][0] / a["cycle_peaks_a"][0]
        assert a["simulated_over_analytic"][0] == pytest.approx(first)
    codes = {w["code"] for w in body["warnings"]}
    # the dry-type unit's saturated loop is resistive (R/X above 0.1): the warning is given
    r_over_x_high = "analytic_envelope_outside_validity" in codes
    peak = client.post("/v1/inrush/peak", json=PEAK_REQUESTS["northgate_lighting"]).json()
    x = 2 * math.pi * 60.0 * peak["loop_inductance_h"]
    assert r_over_x_high == (peak["loop_resistance_ohm"] / x > 0.1)
