"""The README's statistics and mitigation tables say what the committed golden examples say."""

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
