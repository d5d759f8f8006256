"""Solver speed against scipy's LSODA on the same cases (run on demand, prints ratios).

    python tests/benchmarks/bench_solver.py [--cases 1000]

Targets (issue "Peak and decay"): a batch of 1,000 cases, 1 s at 60 Hz, at least 100 x faster per
case than solve_ivp (LSODA, rtol 1e-8) at <= 0.5 % first-ten-peak error; one case alone at least
20 x faster. Both sides are measured in this run on this machine; nothing is asserted.

Also printed: a pre-insertion resistor sizing scan (17 resistances from 1e-2 to 1e2 x the
saturated-loop reactance, 145 closing angles, in for one cycle of a three-cycle record) on the
demo unit back-fed at 480 V from the standby generator, against the same batch without the
resistor, both timed in this run.
"""

from __future__ import annotations

import argparse
import math
import time

import numpy as np
from scipy.integrate import solve_ivp

from core import waveform
from core.energization import energize
from core.transformer import circuit_model


def _circuit() -> circuit_model.EquivalentCircuit:
    # one low-voltage winding of the demo 2500 kVA unit, single phase, ideal source: scipy's
    # LSODA (1.17) was seen to stall at the knee when a source inductance makes the right-hand
    # side jump there, so the baseline uses L_s = 0 where it runs cleanly
    npl = circuit_model.Nameplate(
        rating_va=2.5e6 / 3, phases=1, frequency_hz=60.0, line_voltage_v=277.0,
        position="inner", impedance_percent=5.75, x_over_r=7.0, no_load_current_percent=0.8,
    )  # fmt: skip
    return circuit_model.equivalent_circuit(npl)


def _lsoda_peaks(c: circuit_model.EquivalentCircuit, alpha_deg: float, res: float) -> np.ndarray:
    cv = c.curve
    assert isinstance(cv, __import__("core").magnetizing.PiecewiseLinearCurve)
    lm = cv.unsaturated_inductance_h
    ls_ = float(cv.flux_wb[1])
    la = cv.final_inductance_h
    r = c.winding_resistance_ohm + c.source_resistance_ohm
    L = c.source_inductance_h
    w = 2 * math.pi * c.frequency_hz
    v = math.sqrt(2) * c.winding_voltage_v
    a = math.radians(alpha_deg)

    def f(x: float) -> tuple[float, float]:
        ax = abs(x)
        if ax > ls_:
            return math.copysign(ls_ / lm + (ax - ls_) / la, x), 1.0 / la
        return x / lm, 1.0 / lm

    def rhs(t: float, y: np.ndarray) -> list[float]:
        i, d = f(y[0])
        return [(v * math.sin(w * t + a) - r * i) / (1.0 + L * d)]

    spc = 1024
    t_eval = np.arange(0, 10 * spc + 1) / (c.frequency_hz * spc)
    sol = solve_ivp(rhs, (0.0, 1.0), [res * c.nominal_flux_wb], method="LSODA", rtol=1e-8,
                    atol=1e-10 * c.nominal_flux_wb, t_eval=t_eval)  # fmt: skip
    cur = np.array([f(x)[0] for x in sol.y[0]])
    return np.abs(cur[:-1]).reshape(10, spc).max(axis=1)


def _lsoda_time(c: circuit_model.EquivalentCircuit, alpha_deg: float, res: float) -> float:
    cv = c.curve
    lm = cv.unsaturated_inductance_h
    ls_ = float(cv.flux_wb[1])  # type: ignore[union-attr]
    la = cv.final_inductance_h  # type: ignore[union-attr]
    r = c.winding_resistance_ohm + c.source_resistance_ohm
    L = c.source_inductance_h
    w = 2 * math.pi * c.frequency_hz
    v = math.sqrt(2) * c.winding_voltage_v
    a = math.radians(alpha_deg)

    def rhs(t: float, y: np.ndarray) -> list[float]:
        x = y[0]
        ax = abs(x)
        if ax > ls_:
            i = math.copysign(ls_ / lm + (ax - ls_) / la, x)
            d = 1.0 / la
        else:
            i = x / lm
            d = 1.0 / lm
        return [(v * math.sin(w * t + a) - r * i) / (1.0 + L * d)]

    t0 = time.perf_counter()
    solve_ivp(rhs, (0.0, 1.0), [res * c.nominal_flux_wb], method="LSODA", rtol=1e-8,
              atol=1e-10 * c.nominal_flux_wb)  # fmt: skip
    return time.perf_counter() - t0


def _backfeed() -> circuit_model.EquivalentCircuit:
    # the demo 2500 kVA unit energised from its 480 V grounded-wye (inner) winding by the
    # 1250 kVA standby generator, X''d 0.15 pu: 0.00138 + j0.02765 ohm (service/examples.py,
    # BACKFEED_UNIT and GENERATOR_SUBTRANSIENT)
    npl = circuit_model.Nameplate(
        rating_va=2.5e6, phases=3, frequency_hz=60.0, line_voltage_v=480.0,
        connection="wye_grounded", position="inner", impedance_percent=5.75, x_over_r=7.0,
        no_load_current_percent=0.8,
    )  # fmt: skip
    source = circuit_model.Source("impedance", resistance_ohm=0.00138, reactance_ohm=0.02765)
    return circuit_model.equivalent_circuit(npl, source)


def _resistor_scan() -> tuple[float, float, int, int]:
    """Seconds for the resistor scan and for the same batch without it, the case count and the
    most sub-steps per step any case took while its resistor was in."""
    c = _backfeed()
    f = c.frequency_hz
    x_loop = 2.0 * math.pi * f * (c.air_core_inductance_h + c.source_inductance_h)
    angles = np.arange(0.0, 360.0 + 1.25, 2.5)  # 145 angles, both ends of the turn included
    r_ins = np.repeat(np.geomspace(1e-2, 1e2, 17) * x_loop, angles.size)
    alpha = np.tile(angles, 17)
    residual = np.array([0.8, -0.4, -0.4])
    kwargs = {"duration_s": 3.0 / f}
    energize.simulate(c, alpha, residual, **kwargs)  # warm both
    energize.simulate(
        c, alpha[:64], residual, insertion_resistance_ohm=r_ins[-64:], insertion_time_s=1.0 / f,
        **kwargs,
    )  # fmt: skip
    t0 = time.perf_counter()
    sim = energize.simulate(c, alpha, residual, insertion_resistance_ohm=r_ins,
                            insertion_time_s=1.0 / f, **kwargs)  # fmt: skip
    scan = time.perf_counter() - t0
    t0 = time.perf_counter()
    energize.simulate(c, alpha, residual, **kwargs)
    plain = time.perf_counter() - t0
    return scan, plain, alpha.size, int(sim.insertion_substeps.max())


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--cases", type=int, default=1000)
    ap.add_argument("--lsoda-samples", type=int, default=20)
    args = ap.parse_args()
    c = _circuit()
    rng = np.random.default_rng(1)
    angles = rng.uniform(0, 360, args.cases)
    res = rng.uniform(-0.8, 0.8, args.cases)
    energize.simulate(c, 0.0, 0.5, duration_s=0.05)  # compile / load the kernels first: serial
    energize.simulate(c, angles[:64], 0.5, duration_s=0.05)  # and parallel (64 cases and more)

    # accuracy on a few of the batch's cases
    worst = 0.0
    sim = energize.simulate(c, angles[:5], res[:5, None], duration_s=1.0, samples_per_cycle=128)
    ours = waveform.cycle_peaks(sim.line_current_a[:, 0], 128)[:, :10]
    for k in range(5):
        ref = _lsoda_peaks(c, float(angles[k]), float(res[k]))
        worst = max(worst, float(np.max(np.abs(ours[k] - ref) / ref.max())))

    t0 = time.perf_counter()
    energize.simulate(c, angles, res[:, None], duration_s=1.0, samples_per_cycle=128)
    batch = (time.perf_counter() - t0) / args.cases
    t0 = time.perf_counter()
    reps = 20
    for _ in range(reps):
        energize.simulate(c, float(angles[0]), float(res[0]), duration_s=1.0, samples_per_cycle=128)
    single = (time.perf_counter() - t0) / reps
    # the same batch with a pre-insertion resistor (the saturated reactance, in for five cycles)
    # and a reduced-voltage ramp (0.5 pu for a cycle, then three to rise): still 128 steps per
    # cycle here, so the ratio is what the features cost per step
    x_air = 2.0 * math.pi * c.frequency_hz * c.air_core_inductance_h
    mitigation = {
        "insertion_resistance_ohm": x_air, "insertion_time_s": 5.0 / 60.0,
        "voltage_start_pu": 0.5, "voltage_hold_s": 1.0 / 60.0, "voltage_rise_s": 3.0 / 60.0,
    }  # fmt: skip
    t0 = time.perf_counter()
    sim_m = energize.simulate(
        c, angles, res[:, None], duration_s=1.0, samples_per_cycle=128, **mitigation
    )
    mitigated = (time.perf_counter() - t0) / args.cases
    n = args.lsoda_samples
    ref_t = float(np.median([_lsoda_time(c, float(angles[k]), float(res[k])) for k in range(n)]))
    print(f"cases in batch: {args.cases}, simulated 1 s at 60 Hz, 128 steps per cycle")
    print(f"first-ten-peak worst error vs LSODA (of first peak): {worst * 100:.4f} %")
    print(f"scipy LSODA rtol 1e-8, scalar RHS, median of {n}: {ref_t * 1e3:.2f} ms per case")
    print(f"batch: {batch * 1e3:.3f} ms per case  -> {ref_t / batch:.0f} x faster (target 100 x)")
    print(
        f"single case: {single * 1e3:.3f} ms       -> {ref_t / single:.0f} x faster (target 20 x)"
    )
    print(
        f"batch with a pre-insertion resistor and a ramp: {mitigated * 1e3:.3f} ms per case "
        f"({mitigated / batch:.2f} x the plain batch, {sim_m.steps_per_cycle} steps per cycle)"
    )
    scan, plain, n_scan, most = _resistor_scan()
    print(
        f"resistor sizing scan, 17 R x 145 angles ({n_scan} cases, 3 cycles, R in for 1, up to "
        f"{most} sub-steps per step): {scan * 1e3:.0f} ms ({scan / plain:.2f} x the same batch "
        f"without the resistor, {plain * 1e3:.0f} ms)"
    )


if __name__ == "__main__":
    main()
