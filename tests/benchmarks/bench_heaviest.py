"""CPU time of the heaviest legal request of each operation, at the configured limits.

    OMP_NUM_THREADS=1 python tests/benchmarks/bench_heaviest.py [--only NAME ...] [--list]

Builds, for every simulating operation, the request that the current settings
(``FIRSTCYCLE_*``, see service/settings.py) still accept and that costs the most: the largest
counts the models allow, shrunk until the work estimate (core/cost.py) fits the budget
``max_request_steps``; runs each once in process (after one small warm-up request per operation,
so numba's compilation is not counted) and prints its status, CPU seconds, wall seconds, the
estimated integration steps and the CPU nanoseconds per estimated step. A request refused with
422 prints its status: that is what the budget is for. Nothing is asserted; the numbers depend on
the machine (run it on the machine whose limits you are choosing).
"""

from __future__ import annotations

import argparse
import copy
import json
import re
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

from fastapi.testclient import TestClient

from service.app import create_app
from service.settings import Settings, get_settings

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
        return "/v1/mitigation", body

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
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--only", nargs="*", default=None, help="operation names to run")
    parser.add_argument("--list", action="store_true", help="list the operation names")
    args = parser.parse_args()
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
            knob = _fitting_knob(r.json()) if r.status_code == 422 else None
            if knob is None:
                break
            _set(body, *knob)
            shrunk.append(f"{knob[0]}={knob[1]:g}")
        est = r.headers.get("x-work-steps", "")
        if not est and r.status_code == 422:
            errs = r.json().get("errors") or [{}]
            est = str(errs[0].get("value", ""))
        per = f"{cpu / float(est) * 1e9:8.1f}" if est.replace(".", "").isdigit() else ""
        print(f"{name:22s} {r.status_code:6d} {cpu:7.2f} {wall:7.2f} {est:>11s} {per:>8s} "
              f"{' '.join(shrunk)}")  # fmt: skip


def _fitting_knob(problem: dict[str, Any]) -> tuple[str, float] | None:
    """The first numeric field the budget's 422 names, with the largest value that fits."""
    for err in problem.get("errors", [])[1:]:
        m = re.fullmatch(r"<= ([0-9.e+]+) \(now .*\)", str(err.get("allowed", "")))
        if m:
            return str(err["field"]), float(m.group(1))
    return None


def _set(body: dict[str, Any], field: str, value: float) -> None:
    """Set a dotted field of the request (``cases`` keeps the first ``value`` cases)."""
    *parents, leaf = field.split(".")
    node: Any = body
    for part in parents:
        node = node[int(part)] if isinstance(node, list) else node.setdefault(part, {})
    if isinstance(node.get(leaf), list):
        node[leaf] = node[leaf][: int(value)]
    else:
        node[leaf] = int(value) if float(value).is_integer() else value


if __name__ == "__main__":
    main()
