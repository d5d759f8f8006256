"""POST /v1/generator-dip and its figure."""

from __future__ import annotations

import copy
import xml.etree.ElementTree as ET
from typing import Any

import pytest
from fastapi.testclient import TestClient

from service.examples import DIP_REQUESTS

REQ = DIP_REQUESTS["northgate_backfeed"]


def _fast(req: dict[str, object]) -> dict[str, object]:
    out = copy.deepcopy(req)
    out["options"] = {**out["options"], "duration_s": 3.0, "size_for": None}  # type: ignore[dict-item]
    return out


def test_demo_backfeed_answered(client: TestClient) -> None:
    body = client.post("/v1/generator-dip", json=REQ).json()
    assert 0 < body["dip_percent"] < 100
    assert body["dip_percent"] == max(body["dip_phase_percent"], body["dip_line_percent"])
    assert {v["limit"] for v in body["verdicts"]} == {"G1", "G2", "G3", "G4"}
    assert "from memory" in body["verdicts"][0]["source"]
    sizing = body["sizing"]
    assert sizing["status"] == "found"
    assert sizing["dip_percent"] <= 20.0 + 1e-6
    assert sizing["rating_kva"] > 1250  # the 1250 kVA set itself fails G2 here
    assert "not modelled" in body["frequency_dip"]
    assert "manufacturer" in body["caution"]


def test_bigger_generator_smaller_dip(client: TestClient) -> None:
    small = client.post("/v1/generator-dip", json=_fast(REQ)).json()
    big_req = _fast(REQ)
    big_req["supply"] = {**big_req["supply"], "rating_kva": 5000}  # type: ignore[dict-item]
    big = client.post("/v1/generator-dip", json=big_req).json()
    assert big["dip_percent"] < small["dip_percent"]


@pytest.mark.parametrize(
    ("change", "field"),
    [
        ({"x_d2_pu": 0.3, "x_d1_pu": 0.25}, "x_d2_pu < x_d1_pu"),
        ({"rating_kva": 0}, "rating_kva"),
        ({"t_d1_s": None}, "t_d1_s"),
    ],
)
def test_bad_machine_data_is_422(client: TestClient, change: dict[str, object], field: str) -> None:
    req = _fast(REQ)
    req["supply"] = {**req["supply"], **change}  # type: ignore[dict-item]
    r = client.post("/v1/generator-dip", json=req)
    assert r.status_code == 422
    assert r.headers["content-type"].startswith("application/problem+json")
    assert field in r.text


def test_utility_source_and_custom_limit(client: TestClient) -> None:
    req = _fast(REQ)
    req["supply"] = {"kind": "utility", "fault_mva": 20, "x_over_r": 8}
    req["options"] = {"limits": {"name": "PCC 3 %", "max_dip_percent": 3.0}, "duration_s": 2.0,
                      "size_for": None}  # fmt: skip
    body = client.post("/v1/generator-dip", json=req).json()
    assert [v["limit"] for v in body["verdicts"]] == ["PCC 3 %"]
    assert body["sizing"] is None


def test_figure_svg(client: TestClient) -> None:
    r = client.post("/v1/generator-dip/figure", json=_fast(REQ))
    assert r.status_code == 200
    assert r.headers["content-type"].startswith("image/svg+xml")
    ET.fromstring(r.text)
    for label in ("Time [s]", "Voltage [pu]", "Recovery band"):
        assert label in r.text


# The reported case: 937.5 kVA set (X''d 0.15, X'd 0.25, Xd 2.8 pu, T''d 0.015 s, T'd 0.15 s)
# energising a 1000 kVA 480 V delta unit, no excitation given. With the earlier fixed default
# (K_A 50, T_A 0.5 s) it overshot to 1.23 pu, swung +-7 % at 1.2 Hz and failed G1-G3 on
# recovery; the sizing said even 4.8 MVA "does not recover".
REPORTED = {
    "transformer": {"rating_kva": 1000, "phases": 3, "frequency_hz": 60,
                    "energized_winding": {"voltage_kv": 0.48, "connection": "delta",
                                          "position": "inner"},
                    "impedance_percent": 5.75, "x_over_r": 5, "no_load_current_percent": 1.0},
    "supply": {"kind": "generator", "rating_kva": 937.5, "x_d2_pu": 0.15, "x_d1_pu": 0.25,
               "x_d_pu": 2.8, "t_d2_s": 0.015, "t_d1_s": 0.15},
}  # fmt: skip


def test_reported_case_recovers_with_the_default_regulator(client: TestClient) -> None:
    body = client.post("/v1/generator-dip", json=REPORTED).json()
    v = [x for rows in (body["voltage_rms_pu"], body["voltage_line_rms_pu"])
         for row in rows.values() for x in row]  # fmt: skip
    assert max(v) < 1.05
    assert 0.0 < body["recovery_time_s"] < 4.0
    assert [x["recovery_ok"] for x in body["verdicts"][:3]] == [True, True, True]
    assert "regulator_poorly_damped" not in {w["code"] for w in body["warnings"]}
    gain = next(a for a in body["assumptions"] if a["name"] == "excitation.gain_pu")
    assert "phase margin" in gain["source"]
    assert "within the 6 s limit" in body["sizing"]["statement"]


def test_under_damped_regulator_is_flagged_not_judged(client: TestClient) -> None:
    req = copy.deepcopy(REPORTED)
    req["excitation"] = {"kind": "regulator", "gain_pu": 50, "time_constant_s": 0.5,
                         "ceiling_pu": 5.24, "sensing_time_constant_s": 0.02}  # fmt: skip
    req["options"] = {"size_for": None}
    body = client.post("/v1/generator-dip", json=req).json()
    codes = {w["code"] for w in body["warnings"]}
    assert "regulator_poorly_damped" in codes
    assert "not_recovered" not in codes
    for v in body["verdicts"][:3]:
        assert v["recovery_ok"] is None
        assert "not reliable" in v["note"]


def test_source_fault_level_is_the_utility_supply(client: TestClient) -> None:
    # a feeder given as the shared 'source' (fault level) is the same as supply kind utility
    base = _fast(REQ)
    base.pop("supply")
    base["options"] = {"duration_s": 1.0, "size_for": None}
    as_source = {**base, "source": {"kind": "fault_level", "fault_mva": 20, "x_over_r": 8}}
    as_supply = {**base, "supply": {"kind": "utility", "fault_mva": 20, "x_over_r": 8}}
    a = client.post("/v1/generator-dip", json=as_source).json()
    b = client.post("/v1/generator-dip", json=as_supply).json()
    assert a["dip_percent"] == pytest.approx(b["dip_percent"], rel=1e-12)
    # the same feeder as its impedance, Z = V^2/S_sc with X/R = 8 (common practice)
    z = 480.0**2 / 20e6
    r = z / (1.0 + 8.0**2) ** 0.5
    imp = {**base, "source": {"kind": "impedance", "resistance_ohm": r, "reactance_ohm": 8 * r}}
    c = client.post("/v1/generator-dip", json=imp).json()
    assert c["dip_percent"] == pytest.approx(b["dip_percent"], rel=1e-9)
    names = {x["name"]: x["source"] for x in c["assumptions"]}
    assert "impedance" in names["fault_level_va"]


@pytest.mark.parametrize(
    ("change", "text"),
    [
        ({"source": {"kind": "ideal"}}, "ideal source has no impedance"),
        ({"source": {"kind": "impedance", "resistance_ohm": 0.0, "reactance_ohm": 0.01}},
         "resistance_ohm > 0"),
        ({"source": {"kind": "fault_level", "fault_mva": 20, "x_over_r": 8},
          "supply": {"kind": "utility", "fault_mva": 20, "x_over_r": 8}}, "exactly one"),
        ({"supply": None}, "exactly one"),
    ],
)  # fmt: skip
def test_source_and_supply_messages(
    client: TestClient, change: dict[str, object], text: str
) -> None:
    req = _fast(REQ)
    if "supply" not in change or change["supply"] is None:
        req.pop("supply")
    req.update({k: v for k, v in change.items() if v is not None})
    r = client.post("/v1/generator-dip", json=req)
    assert r.status_code == 422
    assert text in r.text


def test_pole_delays_are_simulated(client: TestClient) -> None:
    """Staggered poles change the dip; a common delay is a later closing angle.

    Reference: circuit laws. Behind a constant EMF with no bus load nothing flows before the
    poles close, so closing all three poles a time d after the command is the closing at the
    angle omega*d later, shifted by d (d = 1/8 cycle, a whole number of the solver's 128 steps a
    cycle, so no rounding of the instant enters). Until this operation honoured pole_delay_ms
    it listed the delays as given and closed the poles together.
    """
    base: dict[str, Any] = dict(_fast(REQ))
    base["supply"] = {"kind": "utility", "fault_mva": 20, "x_over_r": 8}
    base["bus_load"] = None
    base["options"] = {**base["options"], "duration_s": 1.0}
    f = base["transformer"]["frequency_hz"]
    d_ms = 1e3 / (8 * f)
    angle = base["switching"].get("closing_angle_deg", 0.0)
    late = copy.deepcopy(base)
    late["switching"] = {**base["switching"], "pole_delay_ms": [d_ms] * 3}
    turned = copy.deepcopy(base)
    turned["switching"] = {**base["switching"], "closing_angle_deg": angle + 45.0}
    r_late = client.post("/v1/generator-dip", json=late)
    r_turned = client.post("/v1/generator-dip", json=turned)
    assert r_late.status_code == r_turned.status_code == 200, r_late.text
    a, b = r_late.json(), r_turned.json()
    assert a["inrush_peak_a"] == pytest.approx(b["inrush_peak_a"], rel=1e-9)
    staggered = copy.deepcopy(base)
    staggered["switching"] = {**base["switching"], "pole_delay_ms": [3.0, 0.0, 0.0]}
    together = client.post("/v1/generator-dip", json=base).json()
    s = client.post("/v1/generator-dip", json=staggered).json()
    assert abs(s["inrush_peak_a"] - together["inrush_peak_a"]) > 1e-3 * together["inrush_peak_a"]
