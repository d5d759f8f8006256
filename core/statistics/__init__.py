"""Random energisation: Monte Carlo of the peak, and how often random events operate a device or
dip beyond a limit."""

from __future__ import annotations

from core.statistics.event_outcomes import (
    DeviceOdds,
    DipOdds,
    device_operation_odds,
    dip_exceedance_odds,
)
from core.statistics.monte_carlo import (
    CONFIDENCE_LEVEL,
    DEFAULT_THREE_PHASE_POLE_SCATTER_MS,
    Convergence,
    Exceedance,
    FixedResidual,
    PeakDistribution,
    Percentiles,
    UniformResidual,
    exceedance_probability,
    order_statistic_interval,
    peak_distribution,
    pole_scatter_sigma_ms,
)

__all__ = [
    "CONFIDENCE_LEVEL",
    "DEFAULT_THREE_PHASE_POLE_SCATTER_MS",
    "Convergence",
    "DeviceOdds",
    "DipOdds",
    "Exceedance",
    "FixedResidual",
    "PeakDistribution",
    "Percentiles",
    "UniformResidual",
    "device_operation_odds",
    "dip_exceedance_odds",
    "exceedance_probability",
    "order_statistic_interval",
    "peak_distribution",
    "pole_scatter_sigma_ms",
]
