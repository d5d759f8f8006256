"""Network solver speed (run on demand, prints ratios; nothing is asserted).

    python tests/benchmarks/bench_network.py [--cases 200] [--cycles 10] [--samples 10000]

1. One unit on a Thevenin source, each connection, a batch of cases (closing angles spread over
   a cycle, residual flux 0.8/-0.4/-0.4 pu), then one case alone: the time per case of
   core.energize.simulate (the single-unit entry; a grounded wye on the kernel of decoupled
   phases, the others on the general kernel) and of core.network.simulate_network (the general
   kernel for every connection), against the baseline measured in this run: scipy's LSODA
   (solve_ivp, rtol 1e-8) on the grounded-wye case, written here from Kirchhoff's laws (the
   three loop fluxes psi_k = lambda_k + L_s*i_k, the curve re-expressed against psi so that the
   right-hand side is continuous at the knee), the median over five closing angles. Both of
   ours use the cores for a batch; a single case runs on one core.
2. Cost against the number of units: 1, 4, 16 and 64 units (grounded wye, delta and floating
   wye in turn, one in service for every four, the rest energised at t = 0) on one bus with a
   load, behind a 50 MVA source; time per unit-step relative to the single unit's, which
   should stay about flat (the bus couples the units through a 3x3 solve, O(n_units) per step).
3. Statistics over a network: 10 000 random energisations of a 4-unit feeder
   (core.statistics.network_statistics, default sampling: closing uniform, 1 ms pole scatter,
   residual 0.2-0.8 pu random sign; 128 samples a cycle) and one feeder relay judged on the
   first 200 events over the default 1 s record: the work estimate (core.cost) against the
   default request budget, the CPU time, and the CPU time per estimated winding-step against
   that of the single-unit Monte Carlo (core.statistics.peak_distribution, the baseline, this
   run), for the whole and for each part (the Monte Carlo, the device events); the peak traced
   memory (tracemalloc) of each part, in a separate run. The feeder's units are grounded wyes,
   which the solver runs phase by phase (core.network.phases_decoupled); the same work is then
   run forced onto the general kernel, and the ratio of the two CPU times, times the general
   kernel's weights (NETWORK_PEAK_STEP_WEIGHT, NETWORK_SOURCE_STEP_WEIGHT), calibrates
   core.cost's NETWORK_DECOUPLED_PEAK_STEP_WEIGHT and NETWORK_DECOUPLED_SOURCE_STEP_WEIGHT (a
   ratio of 1 to the baseline is an honest estimate). --only-statistics runs this part alone.

Each timing is the best of three after a warm-up call (compilation excluded).
"""

from __future__ import annotations

import argparse
import math
import time
import tracemalloc
from collections.abc import Callable

import numpy as np
from scipy.integrate import solve_ivp

from core import cost, transformer
from core.energization import energize
from core.network import Breaker, BusLoad, Source, Unit, simulate_network, solver
from core.protection import device_operation
from core.statistics import monte_carlo, network_statistics
from core.transformer.magnetizing import PiecewiseLinearCurve
from service.settings import Settings

F = 50.0
V_LL = 11_000.0
DECOUPLED = solver.phases_decoupled


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


def _lsoda_per_case(c: transformer.EquivalentCircuit, cycles: float, cases: int = 5) -> float:
    """Median seconds of scipy's LSODA (rtol 1e-8) on the grounded-wye unit ``c``, one case."""
    cv = c.curve
    assert isinstance(cv, PiecewiseLinearCurve)
    l_s, r = c.source_inductance_h, c.source_resistance_ohm + c.winding_resistance_ohm
    # the curve against the loop flux psi = lambda + L_s*i: breakpoints psi_m = lambda_m +
    # L_s*i_m, final slope 1/(L_final + L_s) (Kirchhoff's current law at the bus of one unit)
    psi_bp = cv.flux_wb + l_s * cv.current_a
    final = 1.0 / (cv.final_inductance_h + l_s)
    top_psi, top_i = psi_bp[-1], cv.current_a[-1]
    w = 2.0 * math.pi * F
    v = math.sqrt(2.0) * V_LL / math.sqrt(3.0)
    shift = np.array([0.0, -2.0 * math.pi / 3.0, 2.0 * math.pi / 3.0])
    times = []
    for alpha in np.linspace(0.0, 360.0, cases, endpoint=False):
        ph = math.radians(alpha) + shift

        def rhs(t: float, y: np.ndarray, ph: np.ndarray = ph) -> np.ndarray:
            x = np.abs(y)
            i = np.where(
                x > top_psi, top_i + (x - top_psi) * final, np.interp(x, psi_bp, cv.current_a)
            )
            out: np.ndarray = v * np.sin(w * t + ph) - r * np.sign(y) * i
            return out

        lam0 = np.array([0.8, -0.4, -0.4]) * c.nominal_flux_wb
        psi0 = lam0 + l_s * np.sign(lam0) * np.interp(np.abs(lam0), cv.flux_wb, cv.current_a)
        t0 = time.perf_counter()
        sol = solve_ivp(rhs, (0.0, cycles / F), psi0, method="LSODA", rtol=1e-8,
                        atol=1e-10 * c.nominal_flux_wb)  # fmt: skip
        times.append(time.perf_counter() - t0)
        assert sol.success
    return float(np.median(times))


def single_unit(n_cases: int, cycles: float, lsoda: float) -> None:
    print(
        f"1. one unit, {n_cases} cases, {cycles:g} cycles: time per case; baseline scipy LSODA "
        f"rtol 1e-8 on the grounded wye, {lsoda * 1e3:.1f} ms per case (this run)"
    )
    angles = np.linspace(0.0, 360.0, n_cases, endpoint=False)
    res = [0.8, -0.4, -0.4]
    for conn in ("wye_grounded", "delta", "wye"):
        c = _circuit(conn)
        src = Source(V_LL, F, c.source_resistance_ohm, c.source_inductance_h)
        t_one = _best(lambda c=c: energize.simulate(c, angles, res, duration_s=cycles / F))
        t_net = _best(
            lambda c=c, src=src: simulate_network(
                src, [Unit(c, residual_flux_pu=res)], closing_angle_deg=angles,
                duration_s=cycles / F,
            )
        )  # fmt: skip
        e, nw = t_one / n_cases, t_net / n_cases
        print(
            f"   {conn:13s} energize {e * 1e3:8.3f} ms ({lsoda / e:6.0f} x LSODA)  "
            f"network {nw * 1e3:8.3f} ms ({lsoda / nw:6.0f} x LSODA)"
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


def _cpu(fn: Callable[[], object]) -> float:
    t0 = time.process_time()
    fn()
    return time.process_time() - t0


def statistics(samples: int, events: int) -> None:
    print(f"3. network statistics: {samples} samples, 4 units, relay on {events} events over 1 s")
    budget = Settings().max_request_steps
    c = _circuit("wye_grounded")
    src = Source(V_LL, F, c.source_resistance_ohm, c.source_inductance_h)
    ideal = _circuit_ideal()
    units = [
        Unit(ideal, breaker=Breaker([0.0, 0.0, 0.0]), residual_flux_pu=[0.8, -0.4, -0.4])
        for _ in range(4)
    ]
    rated = 4 * ideal.rated_line_current_a
    relay = device_operation.Relay("51", "ieee_c37_112", "very_inverse", 3 * rated, 2.0)
    sigma = monte_carlo.DEFAULT_THREE_PHASE_POLE_SCATTER_MS
    base_samples = 2000
    base_work = cost.statistics_work(
        c, samples=base_samples, pole_scatter_ms=sigma, events=0, devices=0,
        device_duration_s=1.0, dip_duration_s=None,
    )  # fmt: skip
    # warm-up: 100 samples, enough for the parallel build of the kernel the timed run uses
    monte_carlo.peak_distribution(c, samples=100, random_state=1)
    t_base = _cpu(lambda: monte_carlo.peak_distribution(c, samples=base_samples, random_state=1))
    per_base = t_base / base_work.steps
    print(
        f"   baseline single-unit Monte Carlo ({base_samples} samples): {t_base:6.2f} s, "
        f"{per_base * 1e9:5.1f} ns per estimated winding-step"
    )
    # the feeder phase by phase (its own kernel), then forced onto the general kernel
    for general in (False, True):
        if general:
            solver.phases_decoupled = lambda *a: False  # type: ignore[assignment]
            cost.phases_decoupled = solver.phases_decoupled  # type: ignore[attr-defined]
        try:
            _statistics_kernel(
                src, units, relay, rated, samples, events, sigma, budget, per_base, general
            )
        finally:
            solver.phases_decoupled = DECOUPLED
            cost.phases_decoupled = DECOUPLED  # type: ignore[attr-defined]


def _statistics_kernel(
    src: Source,
    units: list[Unit],
    relay: device_operation.Relay,
    rated: float,
    samples: int,
    events: int,
    sigma: float,
    budget: int,
    per_base: float,
    general: bool,
) -> None:
    name = "general kernel (forced)" if general else "phase by phase (its own kernel)"
    print(f"   -- {name}")
    work = cost.network_statistics_work(
        src, units, samples=samples, pole_closing_max_s=0.0, pole_scatter_ms=sigma,
        events=events, devices=1, duration_s=1.0,
    )  # fmt: skip
    peaks_only = cost.network_statistics_work(
        src, units, samples=samples, pole_closing_max_s=0.0, pole_scatter_ms=sigma
    )
    fits = "fits" if work.steps <= budget else "does NOT fit"
    print(
        f"   estimate {work.steps / 1e6:8.1f} M winding-steps; budget {budget / 1e6:.0f} M: {fits}"
    )
    for part, steps in work.parts:
        print(f"      {part:24s} {steps / 1e6:8.1f} M")
    alone = int(samples * budget / peaks_only.steps)
    events_work = work.steps - peaks_only.steps
    largest = int(samples * (budget - events_work) / peaks_only.steps)
    print(
        f"   most samples within the budget: about {alone} without devices, "
        f"{max(0, largest)} with the {events} device events ({events_work / 1e6:.1f} M alone)"
    )
    warm = network_statistics.network_peak_distribution(
        src, units, samples=20, random_state=1, residual=monte_carlo.UniformResidual()
    )
    network_statistics.network_device_odds(
        src, units, warm, [relay], rated, events=2, duration_s=1.0
    )
    holder: dict[str, network_statistics.NetworkPeakDistribution] = {}

    def peaks() -> None:
        holder["d"] = network_statistics.network_peak_distribution(
            src, units, samples=samples, random_state=1, residual=monte_carlo.UniformResidual()
        )

    t_peaks = _cpu(peaks)
    t_dev = _cpu(
        lambda: network_statistics.network_device_odds(
            src, units, holder["d"], [relay], rated, events=events, duration_s=1.0
        )
    )
    total = t_peaks + t_dev
    print(
        f"   CPU: Monte Carlo {t_peaks:7.2f} s, devices {t_dev:7.2f} s, total {total:7.2f} s "
        f"({total / work.steps * 1e9:5.1f} ns per estimated winding-step)"
    )
    mem_peaks = _traced(peaks)
    mem_dev = _traced(
        lambda: network_statistics.network_device_odds(
            src, units, holder["d"], [relay], rated, events=events, duration_s=1.0
        )
    )
    print(f"   peak traced memory: Monte Carlo {mem_peaks / 1e6:6.1f} MB, devices "
          f"{mem_dev / 1e6:6.1f} MB")  # fmt: skip
    p = holder["d"].source.percentiles
    print(f"   source first peak P50/P99/max {p.p50_a:.0f} / {p.p99_a:.0f} / {p.max_a:.0f} A")
    mc = peaks_only.steps
    dev = work.steps - mc
    print(
        f"   ratio network/baseline per estimated winding-step: whole "
        f"{total / work.steps / per_base:5.2f}, Monte Carlo {t_peaks / mc / per_base:5.2f}, "
        f"device events {t_dev / dev / per_base:5.2f}"
    )


def _traced(fn: Callable[[], object]) -> int:
    tracemalloc.start()
    try:
        fn()
        return tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()


def _circuit_ideal(rating_va: float = 1e6) -> transformer.EquivalentCircuit:
    npl = transformer.Nameplate(
        rating_va=rating_va, phases=3, frequency_hz=F, line_voltage_v=V_LL,
        connection="wye_grounded",
    )  # fmt: skip
    return transformer.equivalent_circuit(npl, None)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--cases", type=int, default=200)
    parser.add_argument("--cycles", type=float, default=10.0)
    parser.add_argument("--samples", type=int, default=10_000)
    parser.add_argument("--events", type=int, default=200)
    parser.add_argument("--only-statistics", action="store_true", help="section 3 alone")
    args = parser.parse_args()
    if args.only_statistics:
        statistics(args.samples, args.events)
        return
    lsoda = _lsoda_per_case(_circuit("wye_grounded"), args.cycles)
    single_unit(args.cases, args.cycles, lsoda)
    single_unit(1, args.cycles, lsoda)
    scaling(args.cycles)
    statistics(args.samples, args.events)


if __name__ == "__main__":
    main()
