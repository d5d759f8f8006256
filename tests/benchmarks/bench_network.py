"""Network solver speed (run on demand, prints ratios; nothing is asserted).

    python tests/benchmarks/bench_network.py [--cases 200] [--cycles 10]

1. One unit on a Thevenin source, each connection, a batch of cases (closing angles spread over
   a cycle, residual flux 0.8/-0.4/-0.4 pu): core.network.simulate_network against
   core.energize.simulate on the same cases, the baseline measured in this run.
2. Cost against the number of units: 1, 4, 16 and 64 units (grounded wye, delta and floating
   wye in turn, one in service for every four, the rest energised at t = 0) on one bus with a
   load, behind a 50 MVA source; time per unit-step relative to the single unit's, which
   should stay about flat (the bus couples the units through a 3x3 solve, O(n_units) per step).

Each timing is the best of three after a warm-up call (compilation excluded).
"""

from __future__ import annotations

import argparse
import time
from collections.abc import Callable

import numpy as np

from core import transformer
from core.energization import energize
from core.network import BusLoad, Source, Unit, simulate_network

F = 50.0
V_LL = 11_000.0


def _best(fn: Callable[[], object], repeat: int = 3) -> float:
    fn()
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def _circuit(connection: str, rating_va: float = 1e6) -> transformer.EquivalentCircuit:
    npl = transformer.Nameplate(
        rating_va=rating_va, phases=3, frequency_hz=F, line_voltage_v=V_LL, connection=connection
    )
    return transformer.equivalent_circuit(
        npl, transformer.Source("fault_level", fault_va=50e6, x_over_r=10.0)
    )


def single_unit(n_cases: int, cycles: float) -> None:
    print(f"1. one unit, {n_cases} cases, {cycles:g} cycles (energize = baseline, this run)")
    angles = np.linspace(0.0, 360.0, n_cases, endpoint=False)
    res = [0.8, -0.4, -0.4]
    for conn in ("wye_grounded", "delta", "wye"):
        c = _circuit(conn)
        src = Source(V_LL, F, c.source_resistance_ohm, c.source_inductance_h)
        t_old = _best(lambda c=c: energize.simulate(c, angles, res, duration_s=cycles / F))
        t_new = _best(
            lambda c=c, src=src: simulate_network(
                src, [Unit(c, residual_flux_pu=res)], closing_angle_deg=angles,
                duration_s=cycles / F,
            )
        )  # fmt: skip
        print(
            f"   {conn:13s} energize {t_old * 1e3:8.1f} ms  network {t_new * 1e3:8.1f} ms  "
            f"ratio network/energize {t_new / t_old:6.2f}"
        )


def scaling(cycles: float) -> None:
    print(f"2. cost against units, one case, {cycles:g} cycles (ratio per unit to 1 unit)")
    src = Source.from_fault_level(V_LL, F, 50e6, 10.0)
    load = BusLoad.from_power(V_LL, F, 2e6, 1e6)
    kinds = ("wye_grounded", "delta", "wye")
    circuits = {k: _circuit(k, 0.5e6) for k in kinds}
    base = None
    for n in (1, 4, 16, 64):
        units = [
            Unit(
                circuits[kinds[k % 3]],
                in_service=(k % 4 == 3),
                residual_flux_pu=[0.6, -0.3, -0.3] if k % 2 else [-0.2, 0.5, -0.3],
            )
            for k in range(n)
        ]
        t = _best(
            lambda units=units: simulate_network(
                src, units, closing_angle_deg=15.0, duration_s=cycles / F, load=load
            )
        )
        per_unit = t / n
        base = base or per_unit
        print(
            f"   {n:3d} units  {t * 1e3:9.1f} ms  {per_unit * 1e3:8.2f} ms/unit  "
            f"ratio per unit {per_unit / base:5.2f}"
        )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--cases", type=int, default=200)
    parser.add_argument("--cycles", type=float, default=10.0)
    args = parser.parse_args()
    single_unit(args.cases, args.cycles)
    scaling(args.cycles)


if __name__ == "__main__":
    main()
