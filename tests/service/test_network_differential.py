"""A unit's own differential in POST /v1/network-energization, judged on its own currents.

References: the unit's no-load current from its nameplate (1 % of rated, the magnetising level
a relay sees from a unit in steady state; IEEE Std C57.12.00 defines no-load current as a
percentage of rated, from memory); and POST /v1/clearance, which judges the same element on the
single-unit solver's record (an independent implementation, whose agreement with the network
solver is checked against scipy in tests/references/test_network_vs_scipy.py).
"""

from __future__ import annotations

import copy
from typing import Any

import pytest
from fastapi.testclient import TestClient

from service.app import create_app
from service.examples import NETWORK_REQUESTS, UTILITY
from service.settings import get_settings

URL = "/v1/network-energization"
CLOSE_S = 0.1  # the neighbour's poles close this late


def _pad(kva: float) -> dict[str, Any]:
    t: dict[str, Any] = copy.deepcopy(NETWORK_REQUESTS["northgate_ring_reclose"]["units"][0])
    return dict(t["transformer"]) | {"rating_kva": kva}


def _relay(ct_a: float, tap_a: float) -> dict[str, Any]:
    return {
        "kind": "differential",
        "name": "87T",
        "vector_group": "YNyn0",
        "ct_primary_a": ct_a,
        "ct_secondary_a": 5,
        "tap_a": tap_a,
        "second_harmonic_percent": 15,
    }


def test_in_service_relay_sees_the_neighbour_only_after_it_closes(client: TestClient) -> None:
    """The 1000 kVA unit in service (rated 41.8 A; 1 pu = 42 A primary) beside the 1500 kVA
    unit whose poles close at 0.1 s, on the ring's far end. Before the closing the relay's
    operate quantity is the steady magnetising current: of the order of the 1 % no-load current
    (0.42 A, 0.01 pu), far below the 0.3 pu pickup; after it, the sympathetic current grows
    over cycles and so does the operate quantity."""
    body = copy.deepcopy(NETWORK_REQUESTS["northgate_ring_sympathetic"])
    body["units"][0]["pole_closing_ms"] = [CLOSE_S * 1e3] * 3
    body["units"][1]["differential"] = _relay(50, 4.2)
    body["options"]["duration_s"] = 0.4
    out = client.post(URL, json=body).json()
    energised, in_service = out["units"]
    assert energised["differential"] is None
    d = in_service["differential"]
    assert d["base_current_a"] == 42.0
    ends = d["cycle_end_s"]
    before = [k for k, t in enumerate(ends) if t <= CLOSE_S]
    after = [k for k, t in enumerate(ends) if t > CLOSE_S + 1.0 / 60]
    assert len(before) >= 4
    for p in d["phases"]:
        op = p["operate_pu"]
        steady = [op[k] for k in before]
        assert all(0.002 < x < 0.03 for x in steady), steady
        assert max(steady) < 1.2 * min(steady)  # steady: no growth before the closing
        grown = [op[k] for k in after]
        assert max(grown) > 5 * max(steady)
        assert grown[-1] > grown[0]  # grows over the cycles, like the sympathetic current
    sym = in_service["sympathetic"]
    assert sym["peak_cycle"] > after[0]


def test_vector_group_against_the_winding_names_the_field(client: TestClient) -> None:
    body = copy.deepcopy(NETWORK_REQUESTS["northgate_ring_sympathetic"])
    body["units"][1]["differential"] = _relay(50, 4.2) | {"vector_group": "Dyn1"}
    r = client.post(URL, json=body)
    assert r.status_code == 422
    err = r.json()["errors"][0]
    assert err["field"] == "units.1.differential.vector_group"
    assert "wye_grounded" in err["allowed"]


def test_one_unit_matches_clearance(client: TestClient) -> None:
    """The same 1500 kVA unit (rated 62.8 A; 1 pu = 60 A), source, angle and residual flux
    through both operations. The waveforms come from two solvers agreeing to ~1e-11 and are
    read at the same 128 samples a cycle; the first peaks, read differently, agree to ~1e-7.
    The differential filters the same samples in both, so its verdicts are equal and its
    margins agree far inside 1e-4 percentage points (measured 3e-14; a different source, angle
    or residual flux moves them by whole points)."""
    t = _pad(1500)
    res = [0.8, -0.4, -0.4]
    relay = _relay(100, 3.0)
    clr = client.post(
        "/v1/clearance",
        json={
            "transformer": t,
            "source": UTILITY,
            "switching": {"closing_angle_deg": 30.0, "residual_flux_pu": res},
            "devices": [relay],
            "options": {"closing": "given", "duration_s": 0.3},
        },
    ).json()
    net = client.post(
        URL,
        json={
            "bus_voltage_kv": 13.8,
            "source": UTILITY,
            "closing_angle_deg": 30.0,
            "units": [
                {"name": "u", "transformer": t, "residual_flux_pu": res, "differential": relay}
            ],
            "options": {"duration_s": 0.3},
        },
    ).json()
    want = clr["devices"][0]["ride_through"]["differential"]
    got = net["units"][0]["differential"]
    assert len(got["cycle_end_s"]) == len(want["cycle_end_s"])
    for a, b in zip(got["verdict_by_logic"], want["verdict_by_logic"], strict=True):
        for key in ("harmonic_logic", "operates", "operate_cycle", "operate_phase"):
            assert a[key] == b[key]
        assert abs(a["margin_pp"] - b["margin_pp"]) < 1e-4
        assert a["margin_phase"] == b["margin_phase"]
    for p, q in zip(got["phases"], want["phases"], strict=True):
        assert max(abs(x - y) for x, y in zip(p["operate_pu"], q["operate_pu"], strict=True)) < 1e-4


def test_over_budget_names_the_differentials(monkeypatch: pytest.MonkeyPatch) -> None:
    """The differential's filter is most of the sympathetic example's work (a one-cycle Fourier
    estimate of three orders at every line-sample): a budget between the work with and without
    it names units.differential, and the request without it fits."""
    monkeypatch.setenv("FIRSTCYCLE_MAX_REQUEST_STEPS", "2500000")
    get_settings.cache_clear()
    try:
        with TestClient(create_app(), raise_server_exceptions=False) as c:
            body = copy.deepcopy(NETWORK_REQUESTS["northgate_ring_sympathetic"])
            r = c.post(URL, json=body)
            assert r.status_code == 422
            doc = r.json()
            assert doc["type"].endswith("limit-exceeded")
            knobs = {e["field"]: e["allowed"] for e in doc["errors"][1:]}
            assert knobs["units.differential"].startswith("<= 0")
            del body["units"][1]["differential"]
            assert c.post(URL, json=body).status_code == 200
    finally:
        get_settings.cache_clear()
