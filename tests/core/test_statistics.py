"""Tests of core.statistics: Monte Carlo peak distribution, exceedance, controlled closing."""

from __future__ import annotations

import math

import numpy as np
import pytest

from core import analytic, energize, statistics, transformer
from core.errors import ParameterError

# 2.5 MVA, 480 V, 60 Hz distribution unit (typical nameplate values, common practice)
THREE_PHASE = transformer.Nameplate(
    rating_va=2.5e6,
    phases=3,
    frequency_hz=60,
    line_voltage_v=480,
    connection="wye_grounded",
    position="inner",
    impedance_percent=5.75,
    x_over_r=7,
    no_load_current_percent=0.8,
)
# one phase of the same unit
SINGLE_PHASE = transformer.Nameplate(
    rating_va=2.5e6 / 3,
    phases=1,
    frequency_hz=60,
    line_voltage_v=480 / math.sqrt(3),
    position="inner",
    impedance_percent=5.75,
    x_over_r=7,
    no_load_current_percent=0.8,
)


@pytest.fixture(scope="module")
def three_phase() -> transformer.EquivalentCircuit:
    return transformer.equivalent_circuit(THREE_PHASE)


@pytest.fixture(scope="module")
def single_phase() -> transformer.EquivalentCircuit:
    return transformer.equivalent_circuit(SINGLE_PHASE)


def _overlap(a: tuple[float, float], b: tuple[float, float]) -> bool:
    return a[0] <= b[1] and b[0] <= a[1]


def test_two_random_states_agree_within_p99_interval(
    three_phase: transformer.EquivalentCircuit,
) -> None:
    # two independent samples of the same distribution: their 95 % P99 intervals overlap (each
    # covers the true P99 with probability >= 95 %, so both miss it on the same side rarely)
    a = statistics.peak_distribution(three_phase, samples=10_000, random_state=1)
    b = statistics.peak_distribution(three_phase, samples=10_000, random_state=2)
    assert _overlap(a.worst_line.p99_interval_a, b.worst_line.p99_interval_a)
    # (not asserted per line: with four comparisons a miss is no longer rare -- for these two
    # random states line B's intervals do not overlap, while against a 200,000-sample reference
    # the intervals covered its P99 in 76 of 80 sub-samples of 10,000, i.e. at the stated 95 %)
    lo, hi = a.worst_line.p99_interval_a
    assert lo <= a.worst_line.p99_a <= hi
    # the relative difference of the two P99 is small against the P99 itself
    assert b.worst_line.p99_a == pytest.approx(a.worst_line.p99_a, rel=0.01)


def test_percentiles_ordered_and_convergence_table(
    three_phase: transformer.EquivalentCircuit,
) -> None:
    d = statistics.peak_distribution(three_phase, samples=3000, random_state=5)
    for p in (*d.by_line, d.worst_line):
        assert p.p50_a <= p.p95_a <= p.p99_a <= p.max_a
    np.testing.assert_array_equal(d.convergence.samples, [250, 500, 1000, 2000, 3000])
    assert d.convergence.p99_a[-1] == d.worst_line.p99_a
    # at N = 250 the 97.5 % upper rank of the 99th percentile is beyond the sample:
    # 0.99**250 = 0.08 > 0.025
    assert math.isinf(d.convergence.p99_high_a[0])
    assert np.all(np.isfinite(d.convergence.p99_high_a[1:]))
    # worst line is the largest line of every sample
    np.testing.assert_array_equal(d.worst_peaks_a, d.peaks_a.max(axis=1))
    assert d.residual_flux_pu.shape == (3000, 3)
    assert np.all(np.abs(d.residual_flux_pu) >= 0.2)
    assert np.all(np.abs(d.residual_flux_pu) <= 0.8)
    assert np.all(d.pole_delay_s.min(axis=1) == 0.0)


def test_max_approaches_worst_closing_angle_from_below(
    three_phase: transformer.EquivalentCircuit,
) -> None:
    residual = (0.8, -0.4, -0.4)
    worst = energize.worst_closing_angle(three_phase, residual)
    d = statistics.peak_distribution(
        three_phase,
        samples=4000,
        random_state=3,
        residual=statistics.FixedResidual(residual),
        pole_scatter_ms=0.0,
    )
    # from below: the search refines to 0.025 deg, so random angles cannot beat it by more than
    # the peak's change over that step (relative 1e-6 is ample)
    assert d.worst_line.max_a <= worst.peak_a * (1.0 + 1e-6)
    # 4000 uniform angles are 0.09 deg apart on average: within 3 %
    assert d.worst_line.max_a >= 0.97 * worst.peak_a


def test_deterministic_and_batch_independent(single_phase: transformer.EquivalentCircuit) -> None:
    a = statistics.peak_distribution(single_phase, samples=300, random_state=11)
    b = statistics.peak_distribution(single_phase, samples=300, random_state=11, batch=7)
    np.testing.assert_array_equal(a.peaks_a, b.peaks_a)
    assert a.worst_line == b.worst_line
    c = statistics.peak_distribution(single_phase, samples=300, random_state=12)
    assert not np.array_equal(a.peaks_a, c.peaks_a)


def test_zero_sum_residual(three_phase: transformer.EquivalentCircuit) -> None:
    d = statistics.peak_distribution(
        three_phase,
        samples=50,
        random_state=0,
        residual=statistics.UniformResidual(-0.8, 0.8, random_sign=False, zero_sum=True),
    )
    np.testing.assert_allclose(d.residual_flux_pu.sum(axis=1), 0.0, atol=1e-12)


@pytest.mark.parametrize(
    ("kwargs", "field"),
    [
        ({"samples": 0}, "samples"),
        ({"samples": 10, "batch": 0}, "batch"),
        ({"samples": 10, "cycles": 0.0}, "cycles"),
        ({"samples": 10, "pole_scatter_ms": -1.0}, "pole_scatter_ms"),
        ({"samples": 10, "residual": statistics.UniformResidual(0.8, 0.2)}, "residual.high_pu"),
        ({"samples": 10, "residual": statistics.UniformResidual(-0.1, 0.5)}, "residual.low_pu"),
        ({"samples": 10, "residual": statistics.FixedResidual((0.5,))}, "residual.flux_pu"),
    ],
)
def test_parameter_errors_name_the_field(
    three_phase: transformer.EquivalentCircuit, kwargs: dict[str, object], field: str
) -> None:
    with pytest.raises(ParameterError) as info:
        statistics.peak_distribution(three_phase, random_state=0, **kwargs)  # type: ignore[arg-type]
    assert info.value.parameter == field


def test_zero_sum_needs_three_phases(single_phase: transformer.EquivalentCircuit) -> None:
    with pytest.raises(ParameterError) as info:
        statistics.peak_distribution(
            single_phase,
            samples=5,
            random_state=0,
            residual=statistics.UniformResidual(zero_sum=True),
        )
    assert info.value.parameter == "residual.zero_sum"


@pytest.mark.parametrize("method", ["clopper_pearson", "wilson"])
def test_exceedance_limits(method: str) -> None:
    peaks = np.linspace(1.0, 2.0, 200)
    none = statistics.exceedance_probability(peaks, 5.0, method=method)
    assert none.probability == 0.0
    assert none.low == 0.0
    assert 0.0 < none.high < 0.03  # Clopper-Pearson: 1 - 0.025**(1/200) = 0.018
    every = statistics.exceedance_probability(peaks, 0.0, method=method)
    assert every.probability == 1.0
    assert every.high == pytest.approx(1.0)
    assert 0.97 < every.low < 1.0
    half = statistics.exceedance_probability(peaks, 1.5, method=method)
    assert half.exceedances == 100
    assert half.low < 0.5 < half.high


def test_clopper_pearson_zero_is_closed_form() -> None:
    # k = 0: the upper end solves (1 - p)^n = a/2
    out = statistics.exceedance_probability(np.zeros(200), 1.0)
    assert out.high == pytest.approx(1.0 - 0.025 ** (1.0 / 200), rel=1e-9)


@pytest.mark.parametrize(("method", "minimum"), [("clopper_pearson", 0.95), ("wilson", 0.93)])
def test_exceedance_interval_coverage(method: str, minimum: float) -> None:
    # synthetic Bernoulli(0.1) samples of 200: Clopper-Pearson covers at least 95 % by
    # construction; Wilson's coverage oscillates around 95 % (Brown, Cai & DasGupta 2001, from
    # memory), and 600 repetitions add a binomial standard error of 0.009
    rng = np.random.default_rng(2024)
    p_true = 0.1
    hits = 0
    trials = 600
    for _ in range(trials):
        x = (rng.random(200) < p_true).astype(float)
        out = statistics.exceedance_probability(x, 0.5, method=method)
        hits += out.low <= p_true <= out.high
    assert hits / trials >= minimum - 0.02


def test_exceedance_errors() -> None:
    with pytest.raises(ParameterError) as info:
        statistics.exceedance_probability([], 1.0)
    assert info.value.parameter == "peaks"
    with pytest.raises(ParameterError) as info:
        statistics.exceedance_probability([1.0], 1.0, method="normal")
    assert info.value.parameter == "method"


def test_order_statistic_interval_coverage() -> None:
    # exponential samples of 400, true P90 = ln 10: coverage >= 95 % by construction
    rng = np.random.default_rng(7)
    hits = sum(
        lo <= math.log(10.0) <= hi
        for lo, hi in (
            statistics.order_statistic_interval(np.sort(rng.exponential(size=400)), 0.9)
            for _ in range(400)
        )
    )
    assert hits / 400 >= 0.93


def test_zero_residual_optimum_is_voltage_peak(single_phase: transformer.EquivalentCircuit) -> None:
    # fact of the trade: with no residual flux, close at the voltage peak
    out = statistics.controlled_closing(single_phase, 0.0, errors_ms=[0.0])
    assert out.optimal_angle_deg[0] == pytest.approx(90.0, abs=1e-12)
    assert out.closing_angle_deg == pytest.approx(90.0, abs=1e-12)


@pytest.mark.parametrize("residual", [0.0, 0.6, -0.5])
def test_controlled_closing_magnetising_level_and_quarter_cycle(
    single_phase: transformer.EquivalentCircuit, residual: float
) -> None:
    c = single_phase
    quarter_ms = 250.0 / c.frequency_hz
    out = statistics.controlled_closing(c, residual, errors_ms=[0.0, -quarter_ms, quarter_ms])
    assert out.optimal_angle_deg[0] == pytest.approx(math.degrees(math.acos(-residual)))
    assert abs(out.flux_offset_pu[0]) < 1e-12
    i0 = 0.008 * c.rated_line_current_a
    assert out.worst_peak_a[0] < 2.0 * math.sqrt(2.0) * i0
    # a quarter cycle off: the flux-swing centre is b_r + cos(alpha -+ 90) = b_r +- sin(alpha),
    # and the closed form gives sqrt(2) V/|Z| (|d| + 1 - b_S) = first_peak_wang(..., |d| - 1, b_S)
    r = c.winding_resistance_ohm + c.source_resistance_ohm
    L = c.air_core_inductance_h + c.source_inductance_h
    x = 2.0 * math.pi * c.frequency_hz * L
    b_s = c.knee_flux_wb / c.nominal_flux_wb
    alpha = math.acos(-residual)
    for k, shifted in ((1, alpha - math.pi / 2), (2, alpha + math.pi / 2)):
        d = float(analytic.flux_offset_pu(residual, math.degrees(shifted)))
        wang = float(
            analytic.first_peak_wang(c.winding_voltage_v, c.frequency_hz, L, r, abs(d) - 1.0, b_s)
        )
        if wang == 0.0:
            assert out.worst_peak_a[k] < 2.0 * math.sqrt(2.0) * i0
            continue
        # the closed form is exact at R = 0 (tests/core/test_energize.py) up to the knee
        # current lambda_S/L_m; the resistance lowers the peak by at most
        # (1/L) * integral of R*|i| over the half cycle to it <= pi*(R/X)*I_pk
        knee = c.knee_flux_wb / c.magnetizing_inductance_h
        assert out.worst_peak_a[k] <= wang + knee
        assert out.worst_peak_a[k] >= wang * (1.0 - math.pi * r / x)
    # with no residual flux a quarter cycle off is a voltage zero: the full Wang peak, >> i0
    if residual == 0.0:
        assert out.worst_peak_a[1:].min() > 1000.0 * i0


def test_independent_poles_match_every_phase(three_phase: transformer.EquivalentCircuit) -> None:
    out = statistics.controlled_closing(
        three_phase, [0.6, -0.3, -0.3], errors_ms=[0.0], strategy="independent"
    )
    np.testing.assert_allclose(out.flux_offset_pu, 0.0, atol=1e-12)
    assert out.worst_peak_a[0] < 2.0 * math.sqrt(2.0) * 0.008 * three_phase.rated_line_current_a
    # the simultaneous strategy matches only the winding with the largest residual
    sim = statistics.controlled_closing(three_phase, [0.6, -0.3, -0.3], errors_ms=[0.0])
    assert abs(sim.flux_offset_pu[0]) < 1e-12
    assert np.all(np.abs(sim.flux_offset_pu[1:]) > 0.5)


def test_tolerance_window(single_phase: transformer.EquivalentCircuit) -> None:
    c = single_phase
    target = 5.0 * math.sqrt(2.0) * 0.008 * c.rated_line_current_a
    win = statistics.tolerance_window(c, 0.6, target)
    assert win.bounded
    assert 0.0 < win.half_width_ms < 250.0 / c.frequency_hz
    assert win.half_width_ms == min(-win.early_limit_ms, win.late_limit_ms)
    inside = statistics.controlled_closing(
        c, 0.6, errors_ms=np.linspace(-win.half_width_ms, win.half_width_ms, 41)
    )
    assert np.all(inside.worst_peak_a < target)
    # just outside the limiting side the target is reached (bisection resolution 1e-3 ms)
    edge = win.late_limit_ms if win.late_limit_ms <= -win.early_limit_ms else win.early_limit_ms
    outside = statistics.controlled_closing(c, 0.6, errors_ms=[edge + math.copysign(2e-3, edge)])
    assert outside.worst_peak_a[0] >= target
    # a target below the magnetising current leaves no window
    none = statistics.tolerance_window(c, 0.6, 1.0)
    assert none.half_width_ms == 0.0


def test_controlled_closing_errors(
    single_phase: transformer.EquivalentCircuit, three_phase: transformer.EquivalentCircuit
) -> None:
    with pytest.raises(ParameterError) as info:
        statistics.controlled_closing(single_phase, 0.0, strategy="late")
    assert info.value.parameter == "strategy"
    with pytest.raises(ParameterError) as info:
        statistics.controlled_closing(three_phase, [0.1, 0.2])
    assert info.value.parameter == "residual_flux_pu"
    with pytest.raises(ParameterError) as info:
        statistics.controlled_closing(single_phase, 0.0, errors_ms=[100.0])
    assert info.value.parameter == "errors_ms"
    with pytest.raises(ParameterError) as info:
        statistics.tolerance_window(single_phase, 0.0, -1.0)
    assert info.value.parameter == "target_a"


def test_delta_simultaneous_matches_the_winding_with_the_largest_residual() -> None:
    # a delta winding's line-to-line voltage leads its first phase by 30 degrees (ABC
    # sequence), so the aimed phase-A angle is arccos(-b_r) - 30 for winding AB
    delta = transformer.equivalent_circuit(
        transformer.Nameplate(
            rating_va=2.5e6, phases=3, frequency_hz=60, line_voltage_v=13.8e3,
            connection="delta", position="outer", impedance_percent=5.75, x_over_r=7,
            no_load_current_percent=0.8,
        )
    )  # fmt: skip
    out = statistics.controlled_closing(delta, [0.7, -0.35, -0.35], errors_ms=[0.0])
    assert out.closing_angle_deg == pytest.approx(math.degrees(math.acos(-0.7)) - 30.0)
    assert abs(out.flux_offset_pu[0]) < 1e-12
    # the uncontrolled worst case is far larger than what the aimed closing leaves
    worst = energize.worst_closing_angle(delta, [0.7, -0.35, -0.35])
    assert out.worst_peak_a[0] < 0.5 * worst.peak_a
    with pytest.raises(ParameterError) as info:
        statistics.controlled_closing(delta, [0.7, -0.35, -0.35], strategy="independent")
    assert info.value.parameter == "strategy"
