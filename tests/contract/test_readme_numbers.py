"""The README's peak, statistics and mitigation numbers say what the golden examples say."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parents[2]
README = (ROOT / "README.md").read_text(encoding="utf-8")


def _response(name: str) -> dict[str, Any]:
    pair = json.loads((ROOT / "openapi/v1/examples" / f"{name}.json").read_text("utf-8"))
    out: dict[str, Any] = pair["response"]
    return out


def test_statistics_numbers() -> None:
    body = _response("inrush_statistics.northgate_backfeed_generator")
    w = body["worst_line"]
    assert f"{w['p50_a'] / 1e3:.1f} / {w['p95_a'] / 1e3:.1f} / {w['p99_a'] / 1e3:.1f} kA" in README
    assert f"P99 = {w['p99_x_rated']:.2f} × rated" in README
    assert f"{w['p99_low_a'] / 1e3:.2f}–{w['p99_high_a'] / 1e3:.2f} kA" in README
    d = body["dip_exceedance"]
    assert f"| {d['probability']:.2f} (95 % interval {d['low']:.2f}–{d['high']:.2f}" in README
    assert f"median dip {d['dip_p50_percent']:.1f} %" in README


def test_mitigation_table() -> None:
    body = _response("mitigation.northgate_backfeed")
    base = body["baseline"]
    assert f"{base['peak_x_rated']:.2f} × rated | {base['dip']['dip_percent']:.1f} %" in README
    for o in body["options"][:5]:
        row = next(line for line in README.splitlines() if line.startswith(f"| {o['rank']} |"))
        assert f"{o['peak_x_rated']:.2f} × rated" in row, row
        if o["dip"] is not None:
            assert f"{o['dip']['dip_percent']:.1f} %" in row, row
    pir = next(o for o in body["options"] if o["kind"] == "pre_insertion_resistor")
    values = {p["name"]: p["value"] for p in pir["parameters"]}
    assert f"{values['resistance_ohm']:.3f} Ω" in README
    assert f"{values['largest_energy_kj']:.1f} kJ" in README
    kinds = [o["kind"] for o in body["options"][:3]]
    assert kinds == ["pre_magnetize", "controlled_closing", "ramp"]


def test_peak_table_and_envelope_prose() -> None:
    rows = {
        "northgate_main_unit": "| main unit from the utility",
        "northgate_backfeed": "| back-fed from the generator",
        "northgate_lighting": "| lighting transformer",
    }
    for name, start in rows.items():
        body = _response(f"inrush_peak.{name}")
        row = next(line for line in README.splitlines() if line.startswith(start))
        cells = [c.strip() for c in row.split("|")[2:-1]]
        assert float(cells[0]) == round(body["rated_current_a"], 1), row
        assert cells[1:] == [
            f"{body['first_peak_x_rated']:.1f} × rated",
            f"{body['worst_case_simulated']['peak_x_rated']:.1f} × rated",
            f"{body['worst_case_analytic']['peak_x_rated']:.1f} × rated",
        ], row
    main = _response("inrush_peak.northgate_main_unit")
    winding = main["worst_case_analytic"]["winding_current_peak_a"] / main["rated_current_a"]
    assert f"winding alone would say {winding:.1f} × rated" in README
    env = _response("inrush_envelope.northgate_main_unit")
    a = env["lines"][0]
    assert f"from {a['cycle_peaks_x_rated'][0]:.1f} × rated in the first cycle" in README
    assert f"below rated after\n{a['time_below_s']:.2f} s" in README
    ratios = " / ".join(f"{w['simulated_over_analytic'][0]:.2f}" for w in env["analytic"])
    assert f"`simulated_over_analytic`, {ratios} for the main unit" in README


def test_clearance_table() -> None:
    body = _response("clearance.northgate_main_unit")
    devices = {d["name"]: d for d in body["devices"]}
    for name, d in devices.items():
        row = next(line for line in README.splitlines() if line.startswith(f"| {name} |"))
        prot = d["protection"]
        at = f"{prot['margin_ratio']:.3g} at {prot['margin_current_a']:.0f} A"
        assert at in row, (at, row)
    window = devices["51 feeder"]["coordination_window"]
    low, high = window["lowest_riding_through"], window["highest_protecting"]
    assert f"time dial window {low:.1f} – {high:.1f}" in README
    assert f"{body['damage']['fault_current_a']:.0f} A;" in README


def test_network_numbers() -> None:
    body = _response("network_energization.northgate_ring_reclose")
    src = body["source"]
    assert (
        f"{src['first_peak_a']:.0f} A = {src['first_peak_x_rated']:.1f} × the summed rated "
        f"current ({body['energized_rated_current_a']:.1f} A)"
    ) in README
    peaks = " / ".join(f"{u['current']['first_peak_a']:.0f}" for u in body["units"])
    assert f"| first peaks of the units | {peaks} A |" in README
    rule = body["rule_of_thumb"][0]
    assert (rule["multiple_x_rated"], rule["time_s"]) == (12.0, 0.1)
    assert f"| {rule['simulated_equivalent_rms_a']:.0f} A |" in README
    assert (
        f"{rule['current_a']:.0f} A (the simulation is {rule['simulated_over_rule']:.2f}" in README
    )
    assert f"{body['bus_voltage']['min_percent']:.1f} % of nominal" in README
    assert (
        f"rides through, margin {body['devices'][0]['ride_through']['margin_ratio']:.2f}" in README
    )
    body = _response("network_energization.northgate_ring_sympathetic")
    e, s = body["units"][0], body["units"][1]["sympathetic"]
    c = e["current"]
    assert f"{c['first_peak_a']:.0f} A = {c['first_peak_x_rated']:.2f} × rated" in README
    assert (
        f"{s['peak_a']:.1f} A = {s['peak_x_rated']:.2f} × its rated, in cycle {s['peak_cycle']}"
    ) in README
    assert (
        f"from {s['above_from_s']:.3f} s to {s['above_until_s']:.3f} s "
        f"({s['duration_above_s']:.2f} s)"
    ) in README
    bus = body["bus_voltage"]
    assert (
        f"{bus['min_percent']:.1f} % in cycle {bus['min_cycle']}; from cycle "
        f"{bus['recovered_cycle']}"
    ) in README
    d = body["units"][1]["differential"]
    verdicts = ", ".join(
        f"{v['harmonic_logic']} {v['margin_pp']:+.1f} pp" for v in d["verdict_by_logic"]
    )
    assert all(not v["operates"] for v in d["verdict_by_logic"])
    assert f"| restrains: {verdicts};" in README
    op = max(max(p["operate_pu"]) for p in d["phases"])
    h2 = " / ".join(f"{p['min_second_harmonic_percent']:.1f}" for p in d["phases"])
    assert f"operate up to {op:.2f} pu, smallest 2nd harmonic while picked up {h2} %" in README


def test_network_statistics_numbers() -> None:
    body = _response("network_energization_statistics.northgate_ring_reclose")
    s = body["source"]
    pct = " / ".join(f"{s[k]:.0f}" for k in ("p50_a", "p95_a", "p99_a", "max_a"))
    assert f"| {pct} A (P99 = {s['p99_x_rated']:.2f} × the summed rated current" in README
    assert f"95 % interval {s['p99_low_a']:.0f}–{s['p99_high_a']:.0f} A) |" in README
    p99 = " / ".join(f"{u['first_peak']['p99_a']:.0f}" for u in body["units"])
    assert f"| P99 of the units' first peaks | {p99} A |" in README
    (d,) = body["device_operation"]
    assert (
        f"| {d['operations']} of {d['events']} events (95 % interval {d['low']:.2f}–"
        f"{d['high']:.2f}), smallest margin {d['smallest_margin']:.2f} |"
    ) in README
    single = _response("network_energization.northgate_ring_reclose")["source"]["first_peak_a"]
    assert single > s["max_a"]
    assert f"on every unit, {single:.0f} A)" in README


def test_differential_table() -> None:
    body = _response("clearance.northgate_main_unit_differential")
    out = body["devices"][0]["ride_through"]["differential"]
    for v in out["verdict_by_logic"]:
        verdict = f"operates at cycle {v['operate_cycle']}" if v["operates"] else "restrains"
        row = f"| {v['harmonic_logic']} | {verdict} | {v['margin_pp']:+.1f} pp, phase "
        assert row + f"{v['margin_phase']}, {v['margin_time_s']:.4f} s |" in README
    for p in out["phases"]:
        assert f"{p['phase']} {p['min_second_harmonic_percent']:.1f} %" in README
