"""POST /v1/inrush/statistics."""

from __future__ import annotations

import copy

import pytest
from fastapi.testclient import TestClient

from service.examples import STATISTICS_REQUESTS

REQ = STATISTICS_REQUESTS["northgate_backfeed"]


def _small(state: int) -> dict[str, object]:
    req = copy.deepcopy(REQ)
    req["options"] = {**req["options"], "samples": 2000, "random_state": state}  # type: ignore[dict-item]
    return req


def test_percentiles_ordered_and_reproducible(client: TestClient) -> None:
    a = client.post("/v1/inrush/statistics", json=_small(7))
    b = client.post("/v1/inrush/statistics", json=_small(7))
    assert a.content == b.content  # same random_state, same bytes
    w = a.json()["worst_line"]
    assert w["p50_a"] <= w["p95_a"] <= w["p99_a"] <= w["max_a"]
    assert w["p99_low_a"] <= w["p99_a"]
    ex = a.json()["exceedance"]
    assert 0.0 <= ex["low"] <= ex["probability"] <= ex["high"] <= 1.0


def test_worst_line_p99_not_below_any_line(client: TestClient) -> None:
    body = client.post("/v1/inrush/statistics", json=_small(3)).json()
    assert body["worst_line"]["p99_a"] >= max(line["p99_a"] for line in body["lines"]) - 1e-9


def test_samples_over_the_limit_is_a_limit_problem(
    client: TestClient, monkeypatch: pytest.MonkeyPatch
) -> None:
    from service.settings import get_settings

    req = copy.deepcopy(REQ)
    req["options"]["samples"] = 50_000  # over the contract's maximum (20 000): invalid input
    r = client.post("/v1/inrush/statistics", json=req)
    assert r.status_code == 422
    assert r.json()["errors"][0]["field"] == "options.samples"
    monkeypatch.setenv("FIRSTCYCLE_MAX_STATISTICS_SAMPLES", "1000")  # an operator's lower limit
    get_settings.cache_clear()
    req["options"]["samples"] = 2000
    r = client.post("/v1/inrush/statistics", json=req)
    assert r.status_code == 422
    assert r.json()["type"] == "urn:firstcycle:problem:limit-exceeded"
    get_settings.cache_clear()


def test_device_and_dip_odds_from_the_first_events(client: TestClient) -> None:
    from service.examples import CLEARANCE_REQUESTS, STANDBY_GENERATOR

    req = copy.deepcopy(REQ)
    req.pop("source")
    req["supply"] = STANDBY_GENERATOR
    req["options"] = {**req["options"], "samples": 500, "check_events": 40}
    # a breaker-like device on the 480 V side: the demo relay scaled to the 480 V currents
    relay = copy.deepcopy(CLEARANCE_REQUESTS["northgate_main_unit"]["devices"][1])
    relay.update(pickup_a=4500.0, instantaneous_pickup_a=15000.0)
    req["devices"] = [relay]
    r = client.post("/v1/inrush/statistics", json=req)
    assert r.status_code == 200, r.text
    body = r.json()
    (dev,) = body["device_operation"]
    assert dev["events"] == 40
    assert dev["low"] <= dev["probability"] <= dev["high"]
    dip = body["dip_exceedance"]
    assert dip["limit"] == "G2"
    assert dip["events"] == 40
    assert dip["dip_p50_percent"] <= dip["dip_max_percent"]
    assert any(a["name"] == "check_events" for a in body["assumptions"])
    sources = {a["name"]: a["source"] for a in body["assumptions"]}
    assert "X''d" in sources["source_inductance_h"]


def test_supply_and_source_together_is_a_422(client: TestClient) -> None:
    from service.examples import STANDBY_GENERATOR

    req = copy.deepcopy(REQ)
    req["supply"] = STANDBY_GENERATOR
    r = client.post("/v1/inrush/statistics", json=req)
    assert r.status_code == 422
    assert "supply" in r.text


def test_event_checks_over_the_limit_is_a_limit_problem(client: TestClient) -> None:
    from service.examples import CLEARANCE_REQUESTS

    req = copy.deepcopy(REQ)
    req["options"] = {**req["options"], "samples": 2000, "check_events": 2000}
    fuse = CLEARANCE_REQUESTS["northgate_main_unit"]["devices"][0]
    req["devices"] = [{**fuse, "name": f"F{k}"} for k in range(3)]
    r = client.post("/v1/inrush/statistics", json=req)
    assert r.status_code == 422
    assert r.json()["type"] == "urn:firstcycle:problem:limit-exceeded"
    assert "check_events" in r.text


@pytest.mark.parametrize("angle", [37.0, 90.0])
def test_a_fixed_angle_without_scatter_or_spread_is_the_single_peak(
    client: TestClient, angle: float
) -> None:
    # every sample the same event: no spread, and the first peak of /v1/inrush/peak for that
    # event. The readings differ only in the refinement between samples (a parabola through
    # three samples here, dense re-integration around the sample there, core.peaks): 1e-6
    # relative on the worst line, the parabola's error at 128 samples a cycle on a peak this
    # size (it reaches a few 1e-6 on a line carrying a few percent of the worst one).
    switching = {"closing_angle_deg": angle, "residual_flux_pu": [0.7, -0.35, -0.35]}
    req = copy.deepcopy(REQ)
    req["switching"] = switching
    req["options"] = {
        "samples": 10,
        "closing_angle_fixed_deg": angle,
        "pole_scatter_ms": 0.0,
        "residual": {"kind": "fixed"},
    }
    r = client.post("/v1/inrush/statistics", json=req)
    assert r.status_code == 200, r.text
    w = r.json()["worst_line"]
    assert w["p50_a"] == w["max_a"]
    fixed = [a for a in r.json()["assumptions"] if a["name"] == "closing_angle_fixed_deg"]
    assert [a["value"] for a in fixed] == [angle]
    single = copy.deepcopy(REQ)
    single.pop("options")
    single["switching"] = switching
    single["method"] = "simulated"
    p = client.post("/v1/inrush/peak", json=single)
    assert p.status_code == 200, p.text
    assert w["max_a"] == pytest.approx(p.json()["first_peak_a"], rel=1e-6)


def test_a_fixed_angle_out_of_range_names_its_field(client: TestClient) -> None:
    req = copy.deepcopy(REQ)
    req["options"] = {**req["options"], "closing_angle_fixed_deg": 400.0}  # type: ignore[dict-item]
    r = client.post("/v1/inrush/statistics", json=req)
    assert r.status_code == 422
    assert r.json()["errors"][0]["field"] == "options.closing_angle_fixed_deg"
