"""core.network.simulate_network's record options against its whole record.

Property (no outside reference is needed: both sides are the same integration, one written out
sample by sample, one reduced while it runs): ``record="first_peaks"`` gives the first peaks
:func:`core.network.analysis.first_peaks` reads on the whole record of the same cases, and
``record="source"`` the same source current; tolerance 1e-12 relative (the arithmetic is the
same, so in practice they agree bit for bit). Circuits: 11 kV distribution units with the
nameplate defaults of core.transformer (common practice) behind a 30 MVA, X/R 8 source, every
connection, a unit in service, a bus load, pole instants spread over several milliseconds.
"""

from __future__ import annotations

import numpy as np
import pytest

from core import transformer
from core.errors import ParameterError
from core.network import Breaker, BusLoad, Source, Unit, analysis, simulate_network

F = 50.0
V_LL = 11_000.0
SOURCE = Source.from_fault_level(V_LL, F, 30e6, 8.0)
LOAD = BusLoad.from_power(V_LL, F, 1e6, 5e5)


def _unit(connection: str, rating_va: float, **unit: object) -> Unit:
    npl = transformer.Nameplate(
        rating_va=rating_va, phases=3, frequency_hz=F, line_voltage_v=V_LL, connection=connection
    )
    return Unit(transformer.equivalent_circuit(npl, None), **unit)  # type: ignore[arg-type]


def _units(n: int) -> list[Unit]:
    rng = np.random.default_rng(5)
    closing = rng.uniform(0.0, 0.006, size=(n, 3, 3))
    residual = rng.uniform(-0.8, 0.8, size=(n, 3, 3))
    return [
        _unit("wye_grounded", 1e6, breaker=Breaker(closing[:, 0]), residual_flux_pu=residual[:, 0]),
        _unit("delta", 5e5, breaker=Breaker(closing[:, 1]), residual_flux_pu=residual[:, 1]),
        _unit("wye", 7.5e5, in_service=True),
        _unit("wye", 5e5, breaker=Breaker(closing[:, 2]), residual_flux_pu=residual[:, 2]),
    ]


@pytest.mark.parametrize("cycles", [0.5, 2.0])
def test_first_peaks_without_a_record_equal_the_reading_of_the_whole_record(
    cycles: float,
) -> None:
    n = 24
    units = _units(n)
    angles = np.linspace(0.0, 360.0, n, endpoint=False)
    kw = {"closing_angle_deg": angles, "duration_s": 0.07, "load": LOAD}
    whole = simulate_network(SOURCE, units, **kw)  # type: ignore[arg-type]
    reduced = simulate_network(
        SOURCE,
        units,
        record="first_peaks",
        first_peak_cycles=cycles,
        **kw,  # type: ignore[arg-type]
    )
    energized = [not u.in_service for u in units]
    end = analysis.first_peak_window_end(whole.closing_time_s, energized, F, cycles)
    expected = [analysis.first_peaks(whole.time_s, whole.source_current_a, end)[0]]
    for k in range(len(units)):
        expected.append(analysis.first_peaks(whole.time_s, whole.line_current_a[:, k], end)[0])
    assert reduced.first_peak_a.shape == (n, len(units) + 1)
    np.testing.assert_allclose(reduced.first_peak_a, np.stack(expected, axis=1), rtol=1e-12)
    # no record is kept
    assert reduced.source_current_a.shape[-1] == 0
    assert reduced.line_current_a.shape[-1] == 0
    np.testing.assert_array_equal(reduced.closing_time_s, whole.closing_time_s)


def test_a_window_reaching_the_record_end_reads_as_the_whole_record() -> None:
    # the window runs past the record: the last sample has no right neighbour, not refined
    units = _units(6)
    kw = {"closing_angle_deg": 30.0, "duration_s": 0.025}
    whole = simulate_network(SOURCE, units, **kw)  # type: ignore[arg-type]
    reduced = simulate_network(SOURCE, units, record="first_peaks", **kw)  # type: ignore[arg-type]
    end = analysis.first_peak_window_end(whole.closing_time_s, [True, True, False, True], F)
    expected = analysis.first_peaks(whole.time_s, whole.source_current_a, end)[0]
    np.testing.assert_allclose(reduced.first_peak_a[:, 0], expected, rtol=1e-12)


def test_source_record_equals_the_whole_records_source_current() -> None:
    units = _units(5)
    kw = {"closing_angle_deg": [0.0, 45.0, 90.0, 200.0, 300.0], "duration_s": 0.1, "load": LOAD}
    whole = simulate_network(SOURCE, units, **kw)  # type: ignore[arg-type]
    src = simulate_network(SOURCE, units, record="source", **kw)  # type: ignore[arg-type]
    np.testing.assert_allclose(src.source_current_a, whole.source_current_a, rtol=1e-12, atol=0)
    assert src.line_current_a.shape[-1] == 0
    assert src.bus_voltage_v.shape[-1] == 0


def test_an_unknown_record_is_named() -> None:
    with pytest.raises(ParameterError, match="record"):
        simulate_network(SOURCE, _units(1), closing_angle_deg=0.0, duration_s=0.05, record="x")


def test_first_peaks_of_maxima_checks_its_shape() -> None:
    with pytest.raises(ParameterError, match="maxima"):
        analysis.first_peaks_of_maxima(np.zeros((2, 3, 3)), 10)
