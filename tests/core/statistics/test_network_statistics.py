"""core.statistics.network_statistics: Monte Carlo of a network's energisation.

References:

* core.energization.energize behind core.statistics.monte_carlo.peak_distribution, an
  independent solver of one unit on a Thevenin source (its agreement with the network solver
  is checked against scipy in tests/references/test_network_vs_scipy.py): with one unit and the
  same random state the two draw the same events, so their peaks agree to the solvers' rounding;
* Clopper-Pearson's interval at k = 0 and k = n in closed form, [0, 1 - (a/2)^(1/n)] and
  [(a/2)^(1/n), 1] (C. J. Clopper, E. S. Pearson, Biometrika 26(4), 1934; the closed form from
  the beta quantile B^-1(q; 1, n) = 1 - (1 - q)^(1/n));
* properties: a fixed event in every sample gives no spread; the chunking does not change the
  answer; a zero-sum draw sums to zero.

Circuits: 13.8 kV grounded-wye pad-mount units of the invented Northgate ring (service/examples.py)
with the nameplate defaults of core.transformer (common practice), behind the ring's 250 MVA,
X/R 12 utility source (invented demo values).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from core import transformer
from core.errors import ParameterError
from core.network import Breaker, Source, Unit, analysis, simulate_network
from core.protection import device_operation
from core.statistics import monte_carlo
from core.statistics import network_statistics as ns

F = 60.0
V_LL = 13_800.0
UTILITY = transformer.Source("fault_level", fault_va=250e6, x_over_r=12.0)


def _nameplate(kva: float) -> transformer.Nameplate:
    return transformer.Nameplate(
        rating_va=kva * 1e3, phases=3, frequency_hz=F, line_voltage_v=V_LL,
        connection="wye_grounded",
    )  # fmt: skip


def _unit(kva: float, **kw: object) -> Unit:
    c = transformer.equivalent_circuit(_nameplate(kva), None)
    kw.setdefault("breaker", Breaker(np.zeros(3)))
    kw.setdefault("residual_flux_pu", np.array([0.8, -0.4, -0.4]))
    return Unit(c, **kw)  # type: ignore[arg-type]


def _source() -> Source:
    c = transformer.equivalent_circuit(_nameplate(1500), UTILITY)
    return Source(V_LL, F, c.source_resistance_ohm, c.source_inductance_h)


def test_one_unit_draws_and_peaks_equal_the_single_unit_statistics() -> None:
    # same random state, same draws in the same order; the peaks from core.energize agree to
    # the solvers' rounding (1e-11 of the largest current, solver docstring) -- 1e-9 here
    circuit = transformer.equivalent_circuit(_nameplate(1500), UTILITY)
    ref = monte_carlo.peak_distribution(circuit, samples=300, random_state=7)
    got = ns.network_peak_distribution(
        _source(), [_unit(1500)], samples=300, random_state=7,
        residual=monte_carlo.UniformResidual(),
    )  # fmt: skip
    np.testing.assert_array_equal(got.closing_angle_deg, ref.closing_angle_deg)
    np.testing.assert_array_equal(got.residual_flux_pu[:, 0], ref.residual_flux_pu)
    np.testing.assert_array_equal(got.pole_closing_s[:, 0], ref.pole_delay_s)
    np.testing.assert_allclose(got.source_peaks_a, ref.worst_peaks_a, rtol=1e-9)
    np.testing.assert_allclose(got.unit_peaks_a[:, 0], ref.worst_peaks_a, rtol=1e-9)
    p, q = got.source.percentiles, ref.worst_line
    assert p.p99_a == pytest.approx(q.p99_a, rel=1e-9)
    assert p.max_a == pytest.approx(q.max_a, rel=1e-9)


def test_a_fixed_event_has_no_spread_and_is_the_single_simulation() -> None:
    units = [_unit(1500), _unit(1000, in_service=True, breaker=Breaker()), _unit(750)]
    d = ns.network_peak_distribution(
        _source(), units, samples=12, random_state=3, closing_angle_deg=30.0, residual=None,
        pole_scatter_ms=0.0,
    )  # fmt: skip
    assert np.ptp(d.source_peaks_a) == 0.0
    for s in (d.source, d.units[0], d.units[2]):
        assert s is not None
        p = s.percentiles
        assert p.p50_a == p.p99_a == p.max_a
        assert s.mean_a == pytest.approx(p.max_a, rel=1e-14)  # the sum's rounding only
    assert d.units[1] is None  # in service: no first peak of its own
    assert np.isnan(d.unit_peaks_a[:, 1]).all()
    # the one event simulated once, read the way the single operation reads it
    one = simulate_network(_source(), units, closing_angle_deg=30.0, duration_s=0.2)
    end = analysis.first_peak_window_end(one.closing_time_s[0], [True, False, True], F)
    peak, _ = analysis.first_peaks(one.time_s, one.source_current_a[0], end)
    assert d.source.percentiles.max_a == pytest.approx(float(peak), rel=1e-9)


def test_chunking_does_not_change_the_answer() -> None:
    units = [_unit(1500), _unit(750)]
    kw = {"samples": 40, "random_state": 11, "residual": monte_carlo.UniformResidual()}
    whole = ns.network_peak_distribution(_source(), units, **kw)  # type: ignore[arg-type]
    tiny = ns.network_peak_distribution(_source(), units, chunk_bytes=1.0, **kw)  # type: ignore[arg-type]
    np.testing.assert_array_equal(whole.source_peaks_a, tiny.source_peaks_a)
    np.testing.assert_array_equal(whole.unit_peaks_a, tiny.unit_peaks_a)


def test_peaks_without_a_record_equal_the_whole_records_reading() -> None:
    # property: the Monte Carlo keeps no record (each case's first peaks kept while it runs);
    # the same drawn events simulated with every output written out and read by
    # analysis.first_peaks over the same plan give the same peaks (1e-12 relative)
    units = [_unit(1500), _unit(1000, in_service=True, breaker=Breaker()), _unit(750)]
    d = ns.network_peak_distribution(
        _source(), units, samples=30, random_state=4, residual=monte_carlo.UniformResidual(),
        pole_scatter_ms=2.0,
    )  # fmt: skip
    part = slice(0, 30)
    cases = []
    for k, u in enumerate(units):
        if u.in_service:
            cases.append(u)
            continue
        brk = Breaker(d.pole_closing_s[part, k])
        cases.append(Unit(u.circuit, breaker=brk, residual_flux_pu=d.residual_flux_pu[part, k]))
    duration = 2.0 / F + float(np.nanmax(d.pole_closing_s)) + 2.0 / (F * 128)
    whole = simulate_network(
        _source(), cases, closing_angle_deg=d.closing_angle_deg, duration_s=duration
    )
    end = analysis.first_peak_window_end(whole.closing_time_s, [True, False, True], F)
    src, _ = analysis.first_peaks(whole.time_s, whole.source_current_a, end)
    np.testing.assert_allclose(d.source_peaks_a, src, rtol=1e-12)
    for k in (0, 2):
        unit, _ = analysis.first_peaks(whole.time_s, whole.line_current_a[:, k], end)
        np.testing.assert_allclose(d.unit_peaks_a[:, k], unit, rtol=1e-12)


def test_scatter_convention_and_zero_sum_residual() -> None:
    units = [_unit(1500), _unit(750, breaker=Breaker(np.array([0.004, 0.004, 0.004])))]
    d = ns.network_peak_distribution(
        _source(), units, samples=50, random_state=2,
        residual=monte_carlo.UniformResidual(zero_sum=True), pole_scatter_ms=1.5,
    )  # fmt: skip
    np.testing.assert_allclose(d.residual_flux_pu.sum(axis=2), 0.0, atol=1e-15)
    # pole u,k closes at given + r - min(r): the earliest drawn pole keeps its given instant
    drawn = d.pole_closing_s - np.array([0.0, 0.004])[None, :, None]
    np.testing.assert_allclose(drawn.min(axis=(1, 2)), 0.0, atol=1e-18)
    assert d.pole_scatter_ms == 1.5


def test_chunk_cases() -> None:
    # per case 8 x samples x (9 + 9 x units) bytes: 2 units, 1000 samples -> 216 kB a case
    assert ns.chunk_cases(2, 1000, 216_000 * 5 + 1) == 5
    assert ns.chunk_cases(2, 1000, 1.0) == 1


def _relay(
    name: str, pickup_a: float, instantaneous_a: float | None = None
) -> device_operation.Relay:
    return device_operation.Relay(
        name, "ieee_c37_112", "extremely_inverse", pickup_a, 0.5, instantaneous_a
    )


def test_device_odds_all_and_none_with_closed_form_intervals() -> None:
    units = [_unit(1500), _unit(1000)]
    d = ns.network_peak_distribution(_source(), units, samples=30, random_state=4)
    rated = sum(u.circuit.rated_line_current_a for u in units)
    # invented settings: a relay whose instantaneous element is set at a tenth of the smallest
    # first peak (operates on every event) and one whose pickup is above any first peak of the
    # sample (cannot operate)
    low = _relay("sensitive", 5.0, 0.1 * float(d.source_peaks_a.min()))
    high = _relay("insensitive", 2.0 * float(d.source_peaks_a.max()))
    odds = ns.network_device_odds(
        _source(), units, d, [low, high], rated, events=12, duration_s=0.3
    )
    a = 1.0 - monte_carlo.CONFIDENCE_LEVEL
    n = 12
    assert odds[0].operates.probability == 1.0
    assert odds[0].operates.low == pytest.approx((a / 2) ** (1 / n), rel=1e-9)
    assert odds[0].operates.high == 1.0
    assert odds[1].operates.probability == 0.0
    assert odds[1].operates.high == pytest.approx(1.0 - (a / 2) ** (1 / n), rel=1e-9)
    assert odds[1].operates.samples == n
    assert odds[1].smallest_margin > 1.0 > odds[0].smallest_margin


def test_values_are_checked() -> None:
    units = [_unit(1500)]
    with pytest.raises(ParameterError, match="samples"):
        ns.network_peak_distribution(_source(), units, samples=0, random_state=1)
    with pytest.raises(ParameterError, match="being energised"):
        ns.network_peak_distribution(
            _source(), [_unit(1500, in_service=True, breaker=Breaker())], samples=5,
            random_state=1,
        )  # fmt: skip
    d = ns.network_peak_distribution(_source(), units, samples=10, random_state=1)
    with pytest.raises(ParameterError, match="duration_s"):
        ns.network_device_odds(
            _source(), units, d, [_relay("r", 100.0)], 60.0, events=5, duration_s=1e-4
        )
    assert math.isfinite(ns.replay_values(d, 9)[0])
