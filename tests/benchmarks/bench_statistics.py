"""Monte Carlo statistics of the peak: samples per second, vectorised against one case at a time.

    python tests/benchmarks/bench_statistics.py [--samples 10000] [--loop 300]

Target (issue "Mitigation and switching studies"): 10,000 samples of a three-phase case in one
request, within the service's compute limit, on this 2-core machine; print samples/s and the ratio
to the single-case path run in a loop. Both sides are measured in this run; nothing is asserted.
The cases are the demo's back-feed (grounded wye, the generator's X''d as source: the independent
kernel) and the main unit from the utility (delta through a source impedance: the coupled kernel).
"""

from __future__ import annotations

import argparse
import time

import numpy as np
from fastapi.testclient import TestClient

from core.energization import energize
from core.statistics import monte_carlo
from core.transformer import circuit_model
from service.app import create_app
from service.examples import STATISTICS_REQUESTS
from service.settings import get_settings

CASES = {
    "back-feed, 480 V grounded wye, X''d source": (
        circuit_model.Nameplate(
            rating_va=2.5e6, phases=3, frequency_hz=60.0, line_voltage_v=480.0,
            connection="wye_grounded", position="inner", impedance_percent=5.75, x_over_r=7.0,
            no_load_current_percent=0.8,
        ),
        circuit_model.Source("impedance", resistance_ohm=0.00138, reactance_ohm=0.02765),
    ),
    "main unit, 13.8 kV delta, 250 MVA source": (
        circuit_model.Nameplate(
            rating_va=2.5e6, phases=3, frequency_hz=60.0, line_voltage_v=13.8e3,
            connection="delta", position="outer", impedance_percent=5.75, x_over_r=7.0,
            no_load_current_percent=0.8,
        ),
        circuit_model.Source("fault_level", 250e6, 12.0),
    ),
}  # fmt: skip


def _loop(c: circuit_model.EquivalentCircuit, dist: monte_carlo.PeakDistribution, n: int) -> float:
    """Seconds per sample of the same events simulated one call each (the single-case path)."""
    duration = 2.0 / c.frequency_hz + float(dist.pole_delay_s.max())
    t0 = time.perf_counter()
    for k in range(n):
        sim = energize.simulate(
            c, float(dist.closing_angle_deg[k]), dist.residual_flux_pu[k],
            dist.pole_delay_s[k], duration_s=duration,
        )  # fmt: skip
        energize.refined_abs_peak(sim.line_current_a)
    return (time.perf_counter() - t0) / n


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--samples", type=int, default=10_000)
    ap.add_argument("--loop", type=int, default=300, help="events timed one by one")
    args = ap.parse_args()
    limit = get_settings().max_total_steps
    print(f"service compute limit: {limit:,} integration steps per solver call")
    for name, (npl, src) in CASES.items():
        c = circuit_model.equivalent_circuit(npl, src)
        monte_carlo.peak_distribution(c, samples=300, random_state=0, max_steps=limit)  # compile
        t0 = time.perf_counter()
        dist = monte_carlo.peak_distribution(
            c, samples=args.samples, random_state=1, max_steps=limit
        )
        vec = (time.perf_counter() - t0) / args.samples
        one = _loop(c, dist, min(args.loop, args.samples))
        p99 = dist.worst_line.p99_a
        print(f"{name}:")
        print(
            f"  {args.samples} samples in {vec * args.samples:.2f} s -> "
            f"{1 / vec:,.0f} samples/s; one at a time {1 / one:,.0f} samples/s; "
            f"ratio {one / vec:.1f} x"
        )
        print(f"  worst-line P99 {p99:,.0f} A ({p99 / c.rated_line_current_a:.2f} x rated)")
    # the same through the service, in one request
    get_settings.cache_clear()
    client = TestClient(create_app())
    req = STATISTICS_REQUESTS["northgate_backfeed"]
    body = {**req, "options": {**req["options"], "samples": args.samples}}
    client.post("/v1/inrush/statistics", json=body)
    t0 = time.perf_counter()
    r = client.post("/v1/inrush/statistics", json=body)
    took = time.perf_counter() - t0
    print(
        f"POST /v1/inrush/statistics, {args.samples} samples (demo back-feed): HTTP "
        f"{r.status_code} in {took:.2f} s -> {args.samples / took:,.0f} samples/s"
    )
    if r.status_code == 200:
        print(f"  P99 {np.round(r.json()['worst_line']['p99_a'], 0):,.0f} A")


if __name__ == "__main__":
    main()
