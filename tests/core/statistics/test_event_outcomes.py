"""Tests of core.statistics.event_outcomes: how often random energisations trip a device or dip too
deep."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from core.errors import ParameterError
from core.protection import fuse_breaker_curves
from core.protection.device_operation import Breaker
from core.statistics import event_outcomes, monte_carlo
from core.supply import sources
from core.transformer import circuit_model

# 2.5 MVA unit back-fed at 480 V from a 1250 kVA machine's X''d (the demo's back-feed values;
# typical nameplate data, common practice)
UNIT = circuit_model.Nameplate(
    rating_va=2.5e6, phases=3, frequency_hz=60, line_voltage_v=480, connection="wye_grounded",
    position="inner", impedance_percent=5.75, x_over_r=7, no_load_current_percent=0.8,
)  # fmt: skip
GEN = sources.Generator(
    rating_va=1.25e6, line_voltage_v=480, frequency_hz=60, x_d2_pu=0.15, x_d1_pu=0.25,
    x_d_pu=2.0, t_d2_s=0.03, t_d1_s=0.8,
)  # fmt: skip


@pytest.fixture(scope="module")
def fed() -> tuple[circuit_model.EquivalentCircuit, monte_carlo.PeakDistribution]:
    src = circuit_model.Source("impedance", resistance_ohm=0.00138, reactance_ohm=0.02765)
    c = circuit_model.equivalent_circuit(UNIT, src)
    return c, monte_carlo.peak_distribution(c, samples=400, random_state=5)


def test_an_instantaneous_element_operates_on_the_events_whose_peak_exceeds_it(
    fed: tuple[circuit_model.EquivalentCircuit, monte_carlo.PeakDistribution],
) -> None:
    # two code paths: a breaker's instantaneous element judged on each 0.5 s record
    # (core.protection.device_operation, peak-sensing with peak factor 1 so that the threshold is
    # the pickup itself, tolerance 0) against the Monte Carlo's
    # own first peaks; they agree except for peaks within 0.5 % of the pickup (sampling of the
    # crest)
    c, dist = fed
    pickup = float(np.median(dist.worst_peaks_a[:100]))
    unit = fuse_breaker_curves.LowVoltageBreaker(
        long_time_pickup=1e6, long_time_delay=10.0, instantaneous_pickup=pickup,
        pickup_tolerance=0.0, instantaneous_tolerance=0.0,
    )  # fmt: skip
    (odds,) = event_outcomes.device_operation_odds(
        c, dist, [Breaker("inst", unit, peak_factor=1.0)], events=100, duration_s=0.5
    )
    peaks = dist.worst_peaks_a[:100]
    clear = np.abs(peaks / pickup - 1.0) > 5e-3
    expected = np.count_nonzero(peaks[clear] > pickup)
    assert odds.operates.samples == 100
    assert expected <= odds.operates.exceedances <= expected + np.count_nonzero(~clear)
    assert odds.operates.low <= odds.operates.probability <= odds.operates.high
    assert odds.smallest_margin < 1.0


def test_dip_odds_limits_and_monotone_in_the_peak(
    fed: tuple[circuit_model.EquivalentCircuit, monte_carlo.PeakDistribution],
) -> None:
    _, dist = fed
    ideal = circuit_model.equivalent_circuit(UNIT)
    odds = event_outcomes.dip_exceedance_odds(GEN, ideal, dist, 20.0, events=40, duration_s=0.2)
    assert odds.dips_percent.shape == (40,)
    assert odds.exceeds.exceedances == np.count_nonzero(odds.dips_percent > 20.0)
    # physics: a larger inrush draws a deeper dip (rank correlation with the first peak)
    rho = stats.spearmanr(dist.worst_peaks_a[:40], odds.dips_percent).statistic
    assert rho > 0.8
    assert not any(a.startswith("poles close at a ") for a in odds.approximations)
    none = event_outcomes.dip_exceedance_odds(GEN, ideal, dist, 100.0, events=5, duration_s=0.2)
    assert none.exceeds.probability == 0.0


def test_event_count_is_bounded_by_the_sample(
    fed: tuple[circuit_model.EquivalentCircuit, monte_carlo.PeakDistribution],
) -> None:
    c, dist = fed
    with pytest.raises(ParameterError) as info:
        event_outcomes.dip_exceedance_odds(GEN, c, dist, 20.0, events=401)
    assert info.value.parameter == "events"
    with pytest.raises(ParameterError) as info:
        event_outcomes.device_operation_odds(c, dist, [], events=10, duration_s=0.05)
    assert info.value.parameter == "duration_s"
