"""CPU time of the heaviest legal request of each operation, at the configured limits.

    OMP_NUM_THREADS=1 python tests/benchmarks/bench_heaviest.py [--only NAME ...] [--list]

Builds, for every simulating operation, the request that the current settings
(``FIRSTCYCLE_*``, see service/settings.py) still accept and that costs the most: the largest
counts the models allow, shrunk until the work estimate (core/cost.py) fits the budget
``max_request_steps``; runs each once in process (after one small warm-up request per operation,
so numba's compilation is not counted) and prints its status, CPU seconds, wall seconds, the
estimated integration steps (read from the 422 the same request gets under a tiny budget, so the
service needs no extra header) and the CPU nanoseconds per estimated step. A request refused with
422 prints its status: that is what the budget is for. Nothing is asserted; the numbers depend on
the machine (run it on the machine whose limits you are choosing).
"""

from __future__ import annotations

import argparse
import copy
import json
import os
import re
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

from fastapi.testclient import TestClient

from service.app import create_app
from service.models.network import MAX_UNITS
from service.settings import Settings, get_settings, settings_dependency

EXAMPLES = Path(__file__).resolve().parents[2] / "openapi" / "v1" / "examples"


def _example(name: str) -> dict[str, Any]:
    data: dict[str, Any] = json.loads((EXAMPLES / f"{name}.json").read_text())["request"]
    return data


def _relay(k: int) -> dict[str, Any]:
    return {
        "kind": "relay",
        "name": f"R{k}",
        "standard": "ieee_c37_112",
        "curve": "very_inverse",
        "pickup_a": 3000.0 + 100.0 * k,
        "time_dial": 2.0,
    }


GENERATOR = {"kind": "generator", "rating_kva": 1250, "t_d1_s": 0.8, "t_d2_s": 0.03,
             "x_d1_pu": 0.25, "x_d2_pu": 0.15, "x_d_pu": 2.0}  # fmt: skip


def _circuit_400hz() -> dict[str, Any]:
    """A single-phase SI circuit at 400 Hz, resistive enough to need many steps per cycle."""
    return {
        "frequency_hz": 400,
        "inductance_h": 0.0,
        "magnetizing": {"kind": "two_slope", "knee_flux_wb": 0.18, "saturated_inductance_h":
                        2.09e-05, "unsaturated_inductance_h": 0.0306},
        "rated_current_a": 3007.0,
        "resistance_ohm": 25.0,
        "voltage_rms_v": 277.0,
    }  # fmt: skip


WARM_UP = (
    ("/v1/inrush/peak", "inrush_peak.northgate_main_unit"),
    ("/v1/inrush/peak", "inrush_peak.northgate_backfeed"),
    ("/v1/inrush/peak", "inrush_peak.circuit_mode"),
    ("/v1/inrush/envelope", "inrush_envelope.northgate_main_unit"),
    ("/v1/generator-dip", "generator_dip.northgate_backfeed"),
    ("/v1/clearance", "clearance.northgate_main_unit"),
    ("/v1/mitigation", "mitigation.northgate_backfeed"),
    ("/v1/network-energization", "network_energization.northgate_ring_sympathetic"),
    (
        "/v1/network-energization/statistics",
        "network_energization_statistics.northgate_ring_reclose",
    ),
)


def builders(s: Settings) -> dict[str, Callable[[], tuple[str, dict[str, Any]]]]:
    """One function per operation returning (path, body) of its heaviest legal request."""
    main = _example("inrush_peak.northgate_main_unit")
    back = _example("inrush_statistics.northgate_backfeed_generator")

    def peak() -> tuple[str, dict[str, Any]]:
        return "/v1/inrush/peak", {"circuit": _circuit_400hz(), "method": "both",
                                   "switching": {"residual_flux_wb": [0.15]}}  # fmt: skip

    def envelope() -> tuple[str, dict[str, Any]]:
        body = {"circuit": _circuit_400hz(), "switching": {"residual_flux_wb": [0.15]},
                "options": {"duration_s": s.max_duration_s, "samples_per_cycle": 16}}  # fmt: skip
        return "/v1/inrush/envelope", body

    def envelope_3ph() -> tuple[str, dict[str, Any]]:
        body = copy.deepcopy(main)
        body.pop("method")
        body["transformer"]["frequency_hz"] = 400
        body["options"] = {"duration_s": s.max_duration_s, "samples_per_cycle": 128}
        return "/v1/inrush/envelope", body

    def batch() -> tuple[str, dict[str, Any]]:
        case = copy.deepcopy(main)
        case["method"] = "simulated"
        return "/v1/inrush/peak/batch", {"cases": [case] * s.max_cases}

    def statistics_devices() -> tuple[str, dict[str, Any]]:
        body = copy.deepcopy(back)
        body.pop("supply")
        body["devices"] = [_relay(0), _relay(1)]
        events = min(2000, s.max_event_checks // 2)
        body["options"] = {"samples": s.max_statistics_samples, "check_events": events,
                           "device_duration_s": 5.0, "random_state": 1}  # fmt: skip
        return "/v1/inrush/statistics", body

    def statistics_generator() -> tuple[str, dict[str, Any]]:
        body = copy.deepcopy(back)
        events = min(2000, s.max_event_checks)
        body["options"] = {"samples": s.max_statistics_samples, "check_events": events,
                           "dip_duration_s": 0.1, "random_state": 1}  # fmt: skip
        return "/v1/inrush/statistics", body

    def clearance() -> tuple[str, dict[str, Any]]:
        body = _example("clearance.northgate_main_unit")
        body["devices"] = [_relay(k) for k in range(20)]
        body["options"] = {"closing": "worst", "duration_s": s.max_duration_s}
        body["transformer"]["frequency_hz"] = 400
        return "/v1/clearance", body

    def clearance_figure() -> tuple[str, dict[str, Any]]:
        return "/v1/clearance/figure", clearance()[1]

    def dip() -> tuple[str, dict[str, Any]]:
        body = _example("generator_dip.northgate_backfeed")
        body["options"]["duration_s"] = 30.0
        body["transformer"]["frequency_hz"] = 400
        return "/v1/generator-dip", body

    def dip_figure() -> tuple[str, dict[str, Any]]:
        return "/v1/generator-dip/figure", dip()[1]

    def mitigation() -> tuple[str, dict[str, Any]]:
        body = _example("mitigation.northgate_backfeed")
        body["dip_duration_s"] = 30.0
        body["devices"] = [_relay(k) for k in range(20)]
        body["device_options"] = {"duration_s": 5.0}
        kinds = ("controlled_closing", "pre_insertion_resistor", "demagnetize", "pre_magnetize",
                 "ramp", "tap", "core_material", "rating")  # fmt: skip
        body["options"] = [{"kind": k} for k in kinds]  # every default option, named
        return "/v1/mitigation", body

    ring = _example("network_energization_statistics.northgate_ring_reclose")

    def network() -> tuple[str, dict[str, Any]]:
        body = _example("network_energization.northgate_ring_sympathetic")
        body["units"] = [copy.deepcopy(body["units"][k % 2]) for k in range(MAX_UNITS)]
        for k, unit in enumerate(body["units"]):
            unit["name"] = f"unit {k + 1}"
        # a source strong enough for 64 units' rated load (the service asks for twice their sum)
        body["source"] = {"kind": "fault_level", "fault_mva": 500, "x_over_r": 10}
        # the longest record within the sample limit (lines x samples): 64 units' lines and the
        # source's at the default 128 samples a cycle
        lines = 3 * (MAX_UNITS + 1)
        duration = min(s.max_duration_s, 0.95 * s.max_total_samples / (lines * 60 * 128))
        body["options"] = {"duration_s": round(duration, 2)}
        return "/v1/network-energization", body

    def network_statistics() -> tuple[str, dict[str, Any]]:
        # the 4-unit feeder: the example's three pad units and a fourth like the first
        body = copy.deepcopy(ring)
        body["units"].append(copy.deepcopy(body["units"][0]))
        body["units"][-1]["name"] = "pad 4 (1500 kVA)"
        body.pop("devices")
        body["sampling"] = {"samples": s.max_statistics_samples, "random_state": 1}
        return "/v1/network-energization/statistics", body

    return {
        "peak": peak,
        "envelope": envelope,
        "envelope_3ph": envelope_3ph,
        "batch": batch,
        "statistics_devices": statistics_devices,
        "statistics_generator": statistics_generator,
        "clearance": clearance,
        "clearance_figure": clearance_figure,
        "generator_dip": dip,
        "generator_dip_figure": dip_figure,
        "mitigation": mitigation,
        "network": network,
        "network_statistics": network_statistics,
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--only", nargs="*", default=None, help="operation names to run")
    parser.add_argument("--list", action="store_true", help="list the operation names")
    args = parser.parse_args()
    # the time of the whole request is what is measured: the deadline must not cut it short
    os.environ.setdefault("FIRSTCYCLE_REQUEST_DEADLINE_S", "3600")
    settings = get_settings()
    table = builders(settings)
    if args.list:
        print("\n".join(table))
        return
    client = TestClient(create_app())
    # warm-up (numba compiles on the first call of each kernel): the demo examples
    for path, name in WARM_UP:
        client.post(path, json=_example(name))
    print(f"{'operation':22s} {'status':>6s} {'cpu_s':>7s} {'wall_s':>7s} {'est_steps':>11s} "
          f"{'ns/step':>8s} shrunk to fit")  # fmt: skip
    for name, build in table.items():
        if args.only and name not in args.only:
            continue
        path, body = build()
        shrunk: list[str] = []
        for _ in range(4):  # the largest counts first, then what the budget's 422 says fits
            c0, w0 = time.process_time(), time.perf_counter()
            r = client.post(path, json=body)
            cpu, wall = time.process_time() - c0, time.perf_counter() - w0
            absent = frozenset(f for f in ("options", "devices", "cases") if f not in body)
            knobs = _fitting_knobs(r.json(), absent) if r.status_code == 422 else []
            if not knobs:
                break
            for field, value in knobs:
                _set(body, field, value)
                shrunk.append(f"{field}={value}")
        est = _estimate(client, path, body)
        per = f"{cpu / est * 1e9:8.1f}" if est > 0 else ""
        print(f"{name:22s} {r.status_code:6d} {cpu:7.2f} {wall:7.2f} {est:11.4g} {per:>8s} "
              f"{' '.join(shrunk)}")  # fmt: skip


def _estimate(client: TestClient, path: str, body: dict[str, Any]) -> float:
    """The work estimate of a request [winding-steps]: what its 422 reports at a tiny budget."""
    tiny = get_settings().model_copy(update={"max_request_steps": 10_000})
    overrides = client.app.dependency_overrides  # type: ignore[attr-defined]
    overrides[settings_dependency] = lambda: tiny
    try:
        r = client.post(path, json=body)
    finally:
        overrides.clear()
    if r.status_code != 422:
        return 0.0
    errs = r.json().get("errors") or [{}]
    try:
        return float(errs[0].get("value", 0.0))
    except (TypeError, ValueError):
        return 0.0


CHOICES: dict[str, Any] = {"null": None, "false": False, "true": True}


def _fitting_knobs(
    problem: dict[str, Any], skip: frozenset[str] = frozenset()
) -> list[tuple[str, Any]]:
    """The first field the budget's 422 names with the largest value (or the choice) that fits
    alone; or, when none does, the fields it names to turn together."""
    errors = problem.get("errors", [])[1:]
    for err in errors:
        m = re.fullmatch(r"<= ([0-9.e+]+) \(now [^)]*\)", str(err.get("allowed", "")))
        # a count of a list the request leaves at its default (e.g. every mitigation option)
        # cannot be cut by the caller without naming the items: the next knob is used
        if m and str(err["field"]) not in skip:
            return [(str(err["field"]), float(m.group(1)))]
    together = []
    for err in errors:
        m = re.fullmatch(r"<= ([0-9.e+]+) \(now [^)]*\) with the others listed",
                         str(err.get("allowed", "")))  # fmt: skip
        if m:
            together.append((str(err["field"]), float(m.group(1))))
    if together:
        return together
    for err in errors:  # a choice (e.g. no sizing) when no number fits
        allowed = str(err.get("allowed", ""))
        if allowed and not allowed.startswith("<="):
            return [(str(err["field"]), CHOICES.get(allowed, allowed))]
    return []


def _set(body: dict[str, Any], field: str, value: Any) -> None:
    """Set a dotted field of the request (a list keeps its first ``value`` items)."""
    *parents, leaf = field.split(".")
    node: Any = body
    for part in parents:
        node = node[int(part)] if isinstance(node, list) else node.setdefault(part, {})
    if isinstance(node.get(leaf), list):
        node[leaf] = node[leaf][: int(value)]
    elif isinstance(value, float):
        node[leaf] = int(value) if value.is_integer() else value
    else:
        node[leaf] = value


if __name__ == "__main__":
    main()
