"""Generator-dip study: the dip, its recovery, the verdicts, and the generator that would pass.

One call for the ``/v1/generator-dip`` operation, combining
:func:`core.supply.dip.energize_from_source` (the coupled simulation and the hand method beside it),
:func:`core.supply.dip_limits.verdicts` (ISO 8528-5 classes or a caller's limit) and, for a
generator source,
:func:`core.supply.generator_sizing.smallest_generator` (the smallest rating with the same per-unit
data that keeps the dip within the limit). An optional pre-insertion resistor in the energising
breaker and the closing instants of its poles are passed to both.
"""

from __future__ import annotations

from dataclasses import dataclass

from core.energization.switching_event import SwitchingEvent
from core.supply import dip, dip_limits, generator_sizing, sources
from core.supply.dip_limits import DipLimit
from core.supply.sources import ExcitationSpec, Source
from core.transformer.circuit_model import EquivalentCircuit

__all__ = ["DipReport", "dip_study"]


@dataclass(frozen=True)
class DipReport:
    """Result of :func:`dip_study`."""

    study: dip.DipStudy
    verdicts: tuple[dip_limits.Verdict, ...]
    sizing: generator_sizing.Sizing | None


def dip_study(
    source: Source,
    circuit: EquivalentCircuit,
    event: SwitchingEvent,
    *,
    limits: tuple[DipLimit, ...] = dip_limits.ISO_8528_5_CLASSES,
    size_for: DipLimit | None = None,
    excitation: ExcitationSpec = "unknown",
    bus_load: sources.BusLoad | None = None,
    duration_s: float = 10.0,
    recovery_band_percent: float = 3.0,
    voltage_measure: dip.Measure = "worst",
    waveform_points: int = 0,
) -> DipReport:
    """Dip and recovery of one energisation, judged, with the passing generator size.

    Parameters
    ----------
    source : Generator or UtilitySource
        The supply [-].
    circuit : EquivalentCircuit
        Transformer circuit (ideal source; the source model replaces it) [-].
    event : SwitchingEvent
        The energisation: closing angle, residual flux per winding, the closing instant of
        poles a, b, c (each in [0, duration_s), and when sizing in [0, 2) s, the sizing's
        simulated time), an optional pre-insertion resistor in each line to the transformer and
        its time from closing to the bypass, in [0, 600] s (see
        :func:`core.supply.dip.energize_from_source`) [-].
    limits : tuple of DipLimit
        Limits to judge against (ISO 8528-5 classes by default, from memory) [-].
    size_for : DipLimit or None
        Find the smallest generator meeting this limit (generator sources only) [-].
    excitation : Excitation, "unknown" or "constant_field"
        Regulator model [-].
    bus_load : BusLoad or None
        Load already on the bus [-].
    duration_s : float
        Simulated time [s].
    recovery_band_percent : float
        Recovery band around the pre-event voltage [%].
    voltage_measure : str
        ``"worst"``, ``"line"`` or ``"phase"``: which rms voltage the dip is read from [-].
    waveform_points : int
        Return the terminal voltages and currents with at most this many points [-].

    Returns
    -------
    DipReport

    Raises
    ------
    ParameterError
        On inputs outside the model's range, naming the parameter.
    """
    study = dip.energize_from_source(
        source,
        circuit,
        event,
        excitation=excitation,
        bus_load=bus_load,
        duration_s=duration_s,
        recovery_band_percent=recovery_band_percent,
        voltage_measure=voltage_measure,
        waveform_points=waveform_points,
    )
    judged = dip_limits.verdicts(
        study.dip_percent,
        study.recovery_time_s,
        limits,
        simulated_s=duration_s,
        recovery_reliable=study.recovery_reliable,
    )
    sizing = None
    if size_for is not None and isinstance(source, sources.Generator):
        sizing = generator_sizing.smallest_generator(
            source,
            circuit,
            event,
            size_for,
            excitation=excitation,
            bus_load=bus_load,
            voltage_measure=voltage_measure,
        )
    return DipReport(study, judged, sizing)
