"""Work estimates: how much an operation will compute, known before it computes anything.

Each function counts the integration steps an operation will take from the same step plan the
solvers use (:func:`core.network.step_rule`, :func:`core.energize_plan.
saturated_time_constant`, :func:`core.energize_plan.search_offsets`, :func:`core.dip_solver.
cycle_steps`), so the estimate cannot drift from the solver, and adds the judging that follows
each simulation. The unit of work is one *winding-step*: one Runge-Kutta step of one winding of one
case in :func:`core.energization.energize.simulate` (cases x windings x steps, the unit
``max_steps`` counts). The other kinds of work are weighed in it with the factors below, measured on
the reference machine by ``tests/benchmarks/bench_heaviest.py`` (ratios of CPU times in one run;
they are this project's measurements, not published values). The caller compares :attr:`Work.steps`
with its budget; :attr:`Work.parts` says where the work goes.
"""

from __future__ import annotations

import functools
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy import special

from core.energization import energize_plan, peaks
from core.errors import ParameterError
from core.network import BusLoad, Source, Unit, phases_decoupled, step_plan, step_rule
from core.network import peaks as network_peaks
from core.supply import dip_cases as dip_solver
from core.transformer import EquivalentCircuit

__all__ = [
    "DEVICE_JUDGEMENT_WEIGHT",
    "DEVICE_SAMPLE_WEIGHT",
    "DIFFERENTIAL_SAMPLE_WEIGHT",
    "DIP_FIGURE_WEIGHT",
    "DIP_RUN_WEIGHT",
    "DIP_STEP_WEIGHT",
    "ENVELOPE_SAMPLE_WEIGHT",
    "EVENT_SAMPLE_WEIGHT",
    "EVENT_WEIGHT",
    "NETWORK_DECOUPLED_PEAK_STEP_WEIGHT",
    "NETWORK_DECOUPLED_SOURCE_STEP_WEIGHT",
    "NETWORK_PEAK_STEP_WEIGHT",
    "NETWORK_SOURCE_STEP_WEIGHT",
    "NETWORK_STEP_WEIGHT",
    "PEAK_CASE_WEIGHT",
    "RECORD_SAMPLE_WEIGHT",
    "SIZING_EVALUATIONS",
    "TCC_FIGURE_WEIGHT",
    "WINDOW_JUDGEMENTS",
    "Work",
    "clearance_work",
    "dip_run_steps",
    "dip_study_work",
    "envelope_work",
    "expected_normal_range",
    "mitigation_work",
    "network_statistics_work",
    "network_work",
    "peak_work",
    "search_cases",
    "simulation_steps",
    "statistics_work",
]

# The weights below put every kind of work in winding-steps of core.energize. They are this
# project's measurements on the reference machine (2 cores; tests/benchmarks/bench_heaviest.py,
# CPU-time ratios in one run). On the one solver (core.network, every operation) a winding-step of
# core.energize's heaviest requests costs about 100 ns of CPU there (the 56 ns of the kernels it
# replaced no longer holds), and the heaviest legal request of each operation under the default
# budget of 40 million took 1.7 to 4.3 s of CPU (bench_heaviest.py, one run, 2026-12-05: peak,
# envelope, batch and the statistics with a generator 97 to 108 ns per estimated step; the
# statistics with devices, the clearance and the dip 51 to 68 ns; the mitigation 42 ns; the
# network 11 ns, its exact reading counted as if no window were shared; the network statistics
# of the demo ring's 4-unit feeder, phase by phase, 10 745 samples in 3.6 s, 90 ns).
#
# One step of a generator-dip run on the network solver (core.network with a machine source:
# one unit's three windings, the bus fluxes by Newton's method at each of the four stages, the
# machine's d-axis and regulator states with the bus-voltage magnitude at every stage, every
# step recorded for the per-cycle sums): 1.34 us a step against 4.2 us for the dip kernel it
# replaced (the demo's 10 s run, one run each on the same machine: ratio 3.2), which weighed
# 80; 80/3.2 = 25, rounded up to 30 for the per-cycle reductions of the record.
DIP_STEP_WEIGHT = 30.0
# One generator-dip run besides its steps (the machine's case built, the record read for the
# dip, the recovery and the band): about 3 ms.
DIP_RUN_WEIGHT = 55_000.0
# One Runge-Kutta step of one winding in the network solver (core.network: the Newton solve
# of the bus fluxes at every stage), in winding-steps of core.energize: about 163 ns against
# 65 ns for a winding-step of core.energize (eight 1500 kVA units over 2 s, one run, CPU time).
NETWORK_STEP_WEIGHT = 2.5
# One network step per winding of the statistics' Monte Carlo, which keeps no record (the
# kernel keeps each current's running first-peak maxima, no bus voltage computed, each case
# stopped one sample after its window), the drawing and the reading included, against the
# single-unit Monte Carlo (core.statistics.monte_carlo.peak_distribution) per winding-step of
# its estimate: tests/benchmarks/bench_network.py section 3, both in one run (4 units,
# 10 000 samples: 6.7 s of CPU; the baseline's 2000 samples 0.24 s, 124 ns per estimated
# winding-step; with 1.6 the ratio of the two per estimated winding-step was 1.01). The full
# record it replaced cost 8.9 s (and 143 MB against 6 MB). Re-measured after the kernel's
# stage loop was unrolled (core.network.kernel): that feeder's 10 000 samples 4.3 to 5.2 s of
# CPU, but the demo ring's feeder (tests/benchmarks/bench_heaviest.py network_statistics)
# still 102 ns per estimated winding-step with 1.6 (132 ns with 1.2): the weight stays. Both
# feeders are grounded wyes, which now run phase by phase (the weight below); this one holds
# for every network with a delta or a floating wye.
NETWORK_PEAK_STEP_WEIGHT = 1.6
# One network step per winding of a statistics device event, which records only the source
# current the devices are judged on (no bus voltage, no unit's currents or fluxes), against the
# same baseline in one run: 60 events of the benchmark's 4 units over 1 s, 0.94 s of CPU for
# 4.6 M winding-steps, 205 ns each against the baseline's 105 ns: 1.95.
NETWORK_SOURCE_STEP_WEIGHT = 2.0
# The same two kinds of step where every unit is a grounded wye on a Thevenin source, which the
# network solver runs phase by phase (core.network.phases_decoupled: one scalar KCL per phase,
# core.network.kernel.integrate_decoupled), as the ratio of its CPU time to the general
# kernel's on the same work in one run (tests/benchmarks/bench_network.py section 3, the
# general kernel forced, 2026-12-05) times the general kernel's weight: the Monte Carlo of
# 10 000 samples of the 4-unit feeder 3.8-4.1 s against 5.5-6.0 s (0.69), 200 events of its
# 4 units over 1 s with the source current recorded 1.70-1.82 s against 2.26-2.72 s (0.63 to
# 0.80; the upper end taken).
NETWORK_DECOUPLED_PEAK_STEP_WEIGHT = 1.1
NETWORK_DECOUPLED_SOURCE_STEP_WEIGHT = 1.6
# Judging one device against one event: per line-sample of the record (the sliding one-cycle
# rms, I_eq(t), the relay integral and its reset) and per judgement (the device's curve built
# and its verdict read): 45 ns a line-sample and 1.7 ms a judgement.
DEVICE_SAMPLE_WEIGHT = 0.8
DEVICE_JUDGEMENT_WEIGHT = 30_000.0
# A transformer differential judged on the record: a one-cycle Fourier estimate of three
# orders at every line-sample (128 a cycle), 1.5 µs a line-sample measured (a relay: 0.12 µs).
DIFFERENTIAL_SAMPLE_WEIGHT = 27.0
# Reading an event's record as the devices see it (I_eq(t), sliding rms per line) before any
# device is judged: per line-sample and per event (statistics' events checked in full).
EVENT_SAMPLE_WEIGHT = 1.2
EVENT_WEIGHT = 45_000.0
# Reading the clearance study's record (I_eq(t), harmonics, what each device would see and the
# through-fault comparison), per line-sample.
RECORD_SAMPLE_WEIGHT = 6.0
# The envelope's waveform analysis (peak per cycle, I_eq(t), time below a level, harmonics per
# cycle), per line-sample.
ENVELOPE_SAMPLE_WEIGHT = 8.0
# A relay's time-dial window search (core.coordination) re-judges the relay at trial dials on
# the one-cycle rms it has already computed: about 1.1 judgements in all, counted as 1.5.
WINDOW_JUDGEMENTS = 1.5
# What a simulated peak case costs besides its kernel steps (the closed-form worst line, the
# search's bookkeeping, the request's validation and conversion): a batch of 203 three-phase
# cases took 5.75 s of CPU, 28 ms a case against 8 ms for its steps alone.
PEAK_CASE_WEIGHT = 360_000.0
# Drawing a figure (matplotlib's layout and SVG writer): the log-log TCC with its tick labels
# about 1.2 s, the voltage-time figure of the dip about 0.25 s, whatever the record.
TCC_FIGURE_WEIGHT = 22_000_000.0
DIP_FIGURE_WEIGHT = 4_500_000.0
# The network's current-time figure (service.figures.network_svg), measured on this project's
# machine: about 0.45 s whatever is drawn, 0.02 s more per curve, and a little per sample drawn
# (matplotlib simplifies the paths: a five times longer record of 12 curves, 368 000 more
# samples, took 0.04 s more).
NETWORK_FIGURE_WEIGHT = 8_000_000.0
NETWORK_FIGURE_CURVE_WEIGHT = 400_000.0
FIGURE_SAMPLE_WEIGHT = 2.0
# Dip evaluations of the generator sizing (core.supply.generator_sizing.smallest_generator): the
# two ends of the range, Brent's method on log(rating) to a relative 1e-3 over a factor of 200
# (bisection alone needs 13; Brent's superlinear steps need fewer on this smooth, monotonic dip),
# two steps to the passing side of the root: a typical count, not a bound (the deadline is the
# backstop).
SIZING_EVALUATIONS = 2 + 12 + 2
# Simulated time of each sizing evaluation [s] (the default of
# core.supply.generator_sizing.smallest_generator).
SIZING_DURATION_S = 2.0
# The pole scatter's largest spread over a sample, counted in standard deviations: the range of
# three normal draws exceeds 10 sigma with a probability below 1e-6 per event (normal tail at
# 5 sigma, about 5.7e-7 two-sided); the statistics record grows by this spread.
SCATTER_SIGMAS = 10.0


@dataclass(frozen=True)
class Work:
    """An estimate of an operation's work.

    ``steps`` is the total in winding-steps [-]; ``parts`` names where it goes, one
    (description, winding-steps) pair each [-].
    """

    steps: float
    parts: tuple[tuple[str, float], ...]

    def __add__(self, other: Work) -> Work:
        return Work(self.steps + other.steps, self.parts + other.parts)


@functools.lru_cache(maxsize=256)
def expected_normal_range(m: int) -> float:
    """Expected range of m independent standard normal draws.

    Parameters
    ----------
    m : int
        Number of draws, >= 1 [-].

    Returns
    -------
    float
        E[max - min] [standard deviations].

    Notes
    -----
    E[R_m] = integral over x of 1 - Phi(x)^m - (1 - Phi(x))^m, by the trapezoidal rule on
    [-12, 12] (the integrand is below 1e-30 beyond for any m here); 0 for m = 1, 2/sqrt(pi)
    for m = 2, about 3.26 for m = 12.

    References
    ----------
    L. H. C. Tippett, "On the extreme individuals and the range of samples taken from a normal
    population", Biometrika 17, 1925 (from memory); H. A. David, H. N. Nagaraja, Order
    Statistics, 3rd ed., Wiley 2003 (from memory).
    """
    n = int(m)
    if n < 1:
        raise ParameterError("m", m, "an integer >= 1")
    x = np.linspace(-12.0, 12.0, 24_001)
    phi = special.ndtr(x)
    return float(np.trapezoid(1.0 - phi**n - (1.0 - phi) ** n, x))


def _work(parts: Sequence[tuple[str, float]]) -> Work:
    kept = tuple((name, float(v)) for name, v in parts if v > 0.0)
    return Work(sum(v for _, v in kept), kept)


def search_cases() -> int:
    """Simulations one worst-closing-angle search runs per case: its trials and the last call.

    Returns
    -------
    int
        Sum of the trials of every stage of :func:`core.energize_plan.search_offsets`, plus one [-].

    Notes
    -----
    n = sum over stages of the trial count + 1 (the call at the angle found); 145 + 21 + 21 + 1
    = 188 with the present stages.

    References
    ----------
    Counts the search of :func:`core.inrush.worst_closing_angles` (this project).
    """
    return sum(o.size for o in energize_plan.search_offsets()) + 1


def simulation_steps(
    circuit: EquivalentCircuit,
    cases: float,
    duration_s: float,
    samples_per_cycle: int = 128,
) -> float:
    """Winding-steps of one :func:`core.energize.simulate` call without a pre-insertion resistor.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The circuit every case shares.
    cases : float
        Number of cases [-].
    duration_s : float
        Simulated time [s].
    samples_per_cycle : int
        Output samples per cycle [-].

    Returns
    -------
    float
        cases x windings x steps [-].

    Notes
    -----
    steps = :func:`core.network.step_rule` (f, T, samples per cycle, tau) with tau the
    saturated loop's time constant (:func:`core.energize_plan.saturated_time_constant`): the
    count :func:`core.energize.simulate` compares with ``max_steps``.

    References
    ----------
    The solver's own step plan (this project).
    """
    tau = energize_plan.saturated_time_constant(circuit)
    _, _, n_steps = step_rule(circuit.frequency_hz, duration_s, samples_per_cycle, tau)
    return float(cases) * circuit.phases * n_steps


def dip_run_steps(
    frequency_hz: float, duration_s: float, cases: float = 1.0, exact_peaks: bool = True
) -> float:
    """Winding-steps of one generator-dip run (:func:`core.supply.dip.energize_from_source`).

    Parameters
    ----------
    frequency_hz : float
        Frequency [Hz].
    duration_s : float
        Simulated time [s].
    cases : float
        Cases run together (a sizing sweep) [-].
    exact_peaks : bool
        Whether the transformer's per-cycle peaks are read exactly (every line, every cycle:
        :func:`core.network.peaks.reading_steps`; a sizing sweep does not read them) [-].

    Returns
    -------
    float
        cases x (DIP_STEP_WEIGHT x (steps of the record + the one-cycle ideal-source run + the
        exact reading's steps) + DIP_RUN_WEIGHT) [-].

    Notes
    -----
    Steps = :func:`core.dip_solver.cycle_steps` at the solver's floor of 128 steps per cycle;
    a machine and transformer loop faster than that needs more, which this estimate does not
    see (the deadline is the backstop).

    References
    ----------
    The dip solver's own step plan (this project).
    """
    spc = dip_solver.MIN_STEPS_PER_CYCLE
    main = dip_solver.cycle_steps(frequency_hz, duration_s, spc)
    first = spc
    read = 0
    if exact_peaks:
        read = network_peaks.reading_steps(1, 3 * (main // spc), main + 1, spc, 1, 1)
    return float(cases) * (DIP_STEP_WEIGHT * (main + first + read) + DIP_RUN_WEIGHT)


def _line_samples(circuit: EquivalentCircuit, duration_s: float, samples_per_cycle: int) -> float:
    """Output samples of a record of ``duration_s`` [s] on every line [-]."""
    return circuit.phases * (duration_s * circuit.frequency_hz * samples_per_cycle + 1)


def _judging(circuit: EquivalentCircuit, devices: float, duration_s: float, events: float) -> float:
    """Winding-steps of judging ``devices`` on each of ``events`` records of ``duration_s``."""
    per = DEVICE_SAMPLE_WEIGHT * _line_samples(circuit, duration_s, 128) + DEVICE_JUDGEMENT_WEIGHT
    return events * devices * per


def _exact_reading(circuit: EquivalentCircuit, windows: float, samples_per_cycle: int) -> float:
    """Winding-steps of reading ``windows`` peaks exactly (:mod:`core.peaks`), every stage."""
    f = circuit.frequency_hz
    return sum(
        simulation_steps(circuit, windows, 2.0 / (f * coarse), fine)
        for coarse, fine in peaks.refinement_stages(samples_per_cycle)
    )


def _search(circuit: EquivalentCircuit, pole_delay_max_s: float, cycles: float = 2.0) -> float:
    """Winding-steps of one worst-closing-angle search over ``cycles`` after the last pole."""
    window = cycles / circuit.frequency_hz + pole_delay_max_s
    return simulation_steps(circuit, search_cases(), window)


def peak_work(
    circuit: EquivalentCircuit, simulated: bool, pole_delay_max_s: float, cycles: float = 2.0
) -> Work:
    """Work of :func:`core.inrush.peak_study`.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The circuit.
    simulated : bool
        Whether the method simulates (``"simulated"`` or ``"both"``).
    pole_delay_max_s : float
        Latest pole closing [s].
    cycles : float
        Window of the first peak after the last pole [cycles].

    Returns
    -------
    Work

    Notes
    -----
    (1 event + the search's :func:`search_cases`) x :func:`simulation_steps` over
    cycles/f + the latest pole; the closed form costs nothing here.

    References
    ----------
    Counts :func:`core.inrush.peak_study` (this project).
    """
    if not simulated:
        return _work(())
    event = simulation_steps(circuit, 1, cycles / circuit.frequency_hz + pole_delay_max_s)
    search = _search(circuit, pole_delay_max_s, cycles)
    # the first peak of each line, of the event and at the worst angle, read exactly
    exact = _exact_reading(circuit, 2 * circuit.phases, 128)
    return _work(
        (
            ("first peak and worst closing angle", event + search + exact),
            ("closed form and bookkeeping of the case", PEAK_CASE_WEIGHT),
        )
    )


def envelope_work(circuit: EquivalentCircuit, duration_s: float, samples_per_cycle: int) -> Work:
    """Work of :func:`core.inrush.envelope_study`: one simulation of ``duration_s`` [s].

    Parameters
    ----------
    circuit : EquivalentCircuit
        The circuit.
    duration_s : float
        Simulated time [s].
    samples_per_cycle : int
        Output samples per cycle [-].

    Returns
    -------
    Work

    Notes
    -----
    :func:`simulation_steps` (1 case) plus the analysis of each output sample
    (ENVELOPE_SAMPLE_WEIGHT winding-steps per line-sample) and the exact peak of each line in
    each whole cycle.

    References
    ----------
    Counts :func:`core.inrush.envelope_study` (this project).
    """
    sim = simulation_steps(circuit, 1, duration_s, samples_per_cycle)
    analysis = ENVELOPE_SAMPLE_WEIGHT * _line_samples(circuit, duration_s, samples_per_cycle)
    # each line's peak in each whole cycle, read exactly
    cycles = round(duration_s * circuit.frequency_hz * samples_per_cycle) // samples_per_cycle
    exact = _exact_reading(circuit, cycles * circuit.phases, samples_per_cycle)
    return _work((("simulation", sim), ("waveform analysis", analysis), ("exact peaks", exact)))


def statistics_work(
    circuit: EquivalentCircuit,
    *,
    samples: int,
    pole_scatter_ms: float,
    events: int,
    devices: int,
    device_duration_s: float,
    dip_duration_s: float | None,
    cycles: float = 2.0,
) -> Work:
    """Work of a statistics request: the Monte Carlo and the events checked in full.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The circuit the peaks are drawn for.
    samples : int
        Monte Carlo events [-].
    pole_scatter_ms : float
        Standard deviation of each pole's closing instant [ms].
    events : int
        Events simulated in full for the devices and the dip [-].
    devices : int
        Devices judged on each of those events [-].
    device_duration_s : float
        Record each device is judged on [s].
    dip_duration_s : float or None
        Simulated time of each dip event; None without a generator [s].
    cycles : float
        Window of the first peak [cycles].

    Returns
    -------
    Work

    Notes
    -----
    Monte Carlo: samples x :func:`simulation_steps` over cycles/f + d, d = SCATTER_SIGMAS x
    sigma the largest pole spread; devices: events x steps over device_duration_s + d, each
    event's record read (EVENT_WEIGHT + EVENT_SAMPLE_WEIGHT x lines x samples) and each device
    judged on it (DEVICE_JUDGEMENT_WEIGHT + DEVICE_SAMPLE_WEIGHT x lines x samples); dip:
    events x :func:`dip_run_steps` (the dip only, its peaks not read).

    References
    ----------
    Counts :func:`core.statistics.peak_distribution` and :mod:`core.event_checks` (this
    project).
    """
    f = circuit.frequency_hz
    spread = SCATTER_SIGMAS * pole_scatter_ms * 1e-3 if circuit.phases > 1 else 0.0
    parts = [("Monte Carlo peaks", simulation_steps(circuit, samples, cycles / f + spread))]
    if devices > 0:
        span = device_duration_s + spread
        read = events * (EVENT_WEIGHT + EVENT_SAMPLE_WEIGHT * _line_samples(circuit, span, 128))
        parts.append(("device events simulated", simulation_steps(circuit, events, span)))
        parts.append(("device events read", read))
        parts.append(("device events judged", _judging(circuit, devices, span, events)))
    if dip_duration_s is not None:
        parts.append(("dip events", events * dip_run_steps(f, dip_duration_s, exact_peaks=False)))
    return _work(parts)


def clearance_work(
    circuit: EquivalentCircuit,
    *,
    worst_angle: bool,
    duration_s: float,
    devices: int,
    windows: bool,
    pole_delay_max_s: float = 0.0,
    figure: bool = False,
    differentials: int = 0,
) -> Work:
    """Work of :func:`core.protection.protection_study.clearance_study` (and of its figure).

    Parameters
    ----------
    circuit : EquivalentCircuit
        The circuit.
    worst_angle : bool
        Whether the closing angle is searched.
    duration_s : float
        Simulated inrush [s].
    devices : int
        Devices evaluated [-].
    windows : bool
        Whether each relay's time-dial window is searched.
    pole_delay_max_s : float
        Latest pole closing [s].
    figure : bool
        Whether the TCC figure is drawn.
    differentials : int
        How many of ``devices`` are transformer differentials [-].

    Returns
    -------
    Work

    Notes
    -----
    Search: :func:`search_cases` x steps over 2 cycles + the latest pole; the event: steps over
    duration_s, its record read (RECORD_SAMPLE_WEIGHT x lines x samples) and each line's first
    peak read exactly (:func:`core.energization.peaks.refinement_stages`); judging: devices x
    (DEVICE_JUDGEMENT_WEIGHT + DEVICE_SAMPLE_WEIGHT x lines x samples), times
    (1 + WINDOW_JUDGEMENTS) with the window search, plus differentials x
    (DIFFERENTIAL_SAMPLE_WEIGHT - DEVICE_SAMPLE_WEIGHT) x lines x samples; the figure
    TCC_FIGURE_WEIGHT.

    References
    ----------
    Counts :func:`core.protection.protection_study.clearance_study` (this project).
    """
    parts = []
    if worst_angle:
        parts.append(("worst closing angle", _search(circuit, pole_delay_max_s)))
    parts.append(("inrush record", simulation_steps(circuit, 1, duration_s)))
    parts.append(("record read", RECORD_SAMPLE_WEIGHT * _line_samples(circuit, duration_s, 128)))
    parts.append(("first peaks read exactly", _exact_reading(circuit, circuit.phases, 128)))
    judged = _judging(circuit, devices, duration_s, 1.0) * (
        1 + (WINDOW_JUDGEMENTS if windows else 0)
    )
    parts.append(("devices judged", judged))
    if differentials:
        extra = DIFFERENTIAL_SAMPLE_WEIGHT - DEVICE_SAMPLE_WEIGHT
        samples = _line_samples(circuit, duration_s, 128)
        parts.append(("differentials filtered", min(differentials, devices) * extra * samples))
    if figure:
        parts.append(("figure", TCC_FIGURE_WEIGHT))
    return _work(parts)


def dip_study_work(
    frequency_hz: float,
    duration_s: float,
    *,
    sizing: bool,
    recovery_limit_s: float | None,
    figure: bool = False,
) -> Work:
    """Work of :func:`core.supply.dip_study.dip_study`.

    Parameters
    ----------
    frequency_hz : float
        Frequency [Hz].
    duration_s : float
        Simulated time of the event [s].
    sizing : bool
        Whether the smallest generator is searched.
    recovery_limit_s : float or None
        The sizing limit's recovery time (its check simulates it + 1 s) [s].
    figure : bool
        Whether the voltage-time figure is drawn.

    Returns
    -------
    Work

    Notes
    -----
    :func:`dip_run_steps` for the event; with sizing, SIZING_EVALUATIONS runs of
    SIZING_DURATION_S and the recovery check of recovery_limit_s + 1 s (their peaks not read);
    the figure
    DIP_FIGURE_WEIGHT.

    References
    ----------
    Counts :func:`core.supply.dip_study.dip_study` and
    :func:`core.supply.generator_sizing.smallest_generator` (this project).
    """
    parts = [("dip event", dip_run_steps(frequency_hz, duration_s))]
    if sizing:
        parts.append(
            ("generator sizing", SIZING_EVALUATIONS * dip_run_steps(frequency_hz,
                                                                     SIZING_DURATION_S,
                                                                     exact_peaks=False))
        )  # fmt: skip
        if recovery_limit_s is not None:
            recovery = dip_run_steps(frequency_hz, recovery_limit_s + 1.0, exact_peaks=False)
            parts.append(("recovery check", recovery))
    if figure:
        parts.append(("figure", DIP_FIGURE_WEIGHT))
    return _work(parts)


# Worst-closing-angle searches one mitigation option may run: the resistor's sizing searches one
# per trial resistance (core.resistor.smallest_resistance, a bracketing search), the controlled
# closing's tolerance window a bisection; an upper bound per option, this project's count.
OPTION_SEARCHES = 6
# Sub-steps a pre-insertion resistor may add while it is in (core.energize_plan.plan_steps):
# counted as this many times the steps of its searches, a measured allowance.
RESISTOR_SUBSTEPS = 4.0


def mitigation_work(
    circuit: EquivalentCircuit,
    *,
    options: int,
    sweep: int,
    devices: int,
    device_duration_s: float,
    dip_duration_s: float | None,
    pole_delay_max_s: float = 0.0,
) -> Work:
    """Work of :func:`core.mitigation.mitigation_study`, an upper estimate.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The unit on its peak source.
    options : int
        Options weighed (the baseline is added) [-].
    sweep : int
        Residual-flux sweep points [-].
    devices : int
        Devices judged at each option's design-basis event [-].
    device_duration_s : float
        Record the devices are judged on [s].
    dip_duration_s : float or None
        Simulated dip per option; None without a generator [s].
    pole_delay_max_s : float
        Latest pole closing [s].

    Returns
    -------
    Work

    Notes
    -----
    Per option and the baseline: OPTION_SEARCHES x RESISTOR_SUBSTEPS worst-angle searches over
    2 cycles (the sizing searches, which need no more than this), the design-basis event over
    max(0.1 s, device_duration_s), its peaks read exactly at the angle found (the window
    simulated again and each line's peak re-integrated), its devices judged, and the dip (with
    the resistor's sizing
    dips, one 1 s run per search); per sweep point one search. The mitigation study's searches
    depend on the case (how many trial resistances a bracket needs), so this bound is looser
    than the other operations'.

    References
    ----------
    Counts :mod:`core.mitigation` and :mod:`core.mitigation_plans` (this project).
    """
    f = circuit.frequency_hz
    plans = options + 1
    window = 2.0 / f + pole_delay_max_s
    one_search = _search(circuit, pole_delay_max_s)
    record = max(0.1 + 1.0 / f, device_duration_s) + window
    parts = [
        ("worst-angle searches", plans * OPTION_SEARCHES * RESISTOR_SUBSTEPS * one_search),
        ("residual sweep", sweep * one_search),
        ("design-basis events", plans * simulation_steps(circuit, 1, record)),
        (
            "design-basis peaks read exactly",
            plans * (simulation_steps(circuit, 1, window) + _exact_reading(circuit, 3, 128)),
        ),
    ]
    if devices > 0:
        parts.append(("devices judged", plans * _judging(circuit, devices, record, 1.0)))
    if dip_duration_s is not None:
        sizing = OPTION_SEARCHES * dip_run_steps(f, 1.0, exact_peaks=False)
        dips = plans * dip_run_steps(f, dip_duration_s) + sizing
        parts.append(("dips", dips))
    return _work(parts)


def network_work(
    source: Source,
    units: Sequence[Unit],
    duration_s: float,
    load: BusLoad | None = None,
    *,
    devices: int = 0,
    samples_per_cycle: int = 128,
    differentials: int = 0,
) -> Work:
    """Work of one :func:`core.network.simulate_network` call and the readings that follow.

    Parameters
    ----------
    source : core.network.Source
        The source [-].
    units : sequence of core.network.Unit
        The units on the bus [-].
    duration_s : float
        Simulated time [s].
    load : core.network.BusLoad or None
        The bus load [-].
    devices : int
        Feeder devices judged against the source current [-].
    samples_per_cycle : int
        Output samples per cycle [-].
    differentials : int
        Units whose own transformer differential is judged on their line currents [-].

    Returns
    -------
    Work

    Notes
    -----
    Simulation: NETWORK_STEP_WEIGHT x units x 3 windings x steps, the steps from
    :func:`core.network.step_plan` (the solver's own plan); reading: ENVELOPE_SAMPLE_WEIGHT x
    3 lines x (units + 1) x samples (per-cycle peaks, I_eq(t), harmonics of every unit and of
    the source), and the peaks read exactly, NETWORK_STEP_WEIGHT x 3 windings x
    :func:`core.network.peaks.reading_steps` for (distinct units + 1) currents x (whole cycles
    + the first peak), units equal in every input sharing their windows
    (:func:`core.network.peaks.distinct_units`) -- it grows as units x distinct units, every
    window integrating every unit; judging:
    devices x (DEVICE_JUDGEMENT_WEIGHT + DEVICE_SAMPLE_WEIGHT x 3 lines x samples), plus the
    source record read for the devices (EVENT_SAMPLE_WEIGHT x 3 x samples); each unit's
    differential: its record read (EVENT_SAMPLE_WEIGHT) and filtered
    (DIFFERENTIAL_SAMPLE_WEIGHT) per line-sample.

    References
    ----------
    Counts the network solver's step plan (this project).
    """
    units = list(units)
    decimate, spc, n_steps = step_plan(source, units, duration_s, load, samples_per_cycle)
    samples = 3.0 * (duration_s * source.frequency_hz * samples_per_cycle + 1)
    n_out = n_steps // decimate + 1
    readings = (network_peaks.distinct_units(units) + 1) * (n_steps // spc + 1)
    exact = network_peaks.reading_steps(len(units), readings, n_out, spc, decimate)
    parts = [
        ("network simulation", NETWORK_STEP_WEIGHT * len(units) * 3.0 * n_steps),
        ("currents read", ENVELOPE_SAMPLE_WEIGHT * samples * (len(units) + 1)),
        ("peaks read exactly", NETWORK_STEP_WEIGHT * 3.0 * exact),
    ]
    if devices:
        parts.append(
            (
                "devices judged",
                EVENT_SAMPLE_WEIGHT * samples
                + devices * (DEVICE_JUDGEMENT_WEIGHT + DEVICE_SAMPLE_WEIGHT * samples),
            )
        )
    if differentials:
        per = EVENT_SAMPLE_WEIGHT + DIFFERENTIAL_SAMPLE_WEIGHT
        parts.append(("differentials filtered", differentials * per * samples))
    return _work(parts)


def network_statistics_work(
    source: Source,
    units: Sequence[Unit],
    load: BusLoad | None = None,
    *,
    samples: int,
    pole_closing_max_s: float,
    pole_scatter_ms: float,
    events: int = 0,
    devices: int = 0,
    duration_s: float = 1.0,
    cycles: float = 2.0,
    samples_per_cycle: int = 128,
) -> Work:
    """Work of :func:`core.statistics.network_statistics.network_peak_distribution` and of
    :func:`core.statistics.network_statistics.network_device_odds`.

    Parameters
    ----------
    source : core.network.Source
        The source [-].
    units : sequence of core.network.Unit
        The units on the bus [-].
    load : core.network.BusLoad or None
        The bus load [-].
    samples : int
        Monte Carlo events [-].
    pole_closing_max_s : float
        Latest given pole instant of the units being energised [s].
    pole_scatter_ms : float
        Standard deviation of the pole scatter [ms].
    events : int
        Events simulated in full to judge the devices (0 for none) [-].
    devices : int
        Feeder devices judged on each of them [-].
    duration_s : float
        Record of each judged event [s].
    cycles : float
        First-peak window after the last pole [cycles].
    samples_per_cycle : int
        Output samples per cycle [-].

    Returns
    -------
    Work

    Notes
    -----
    Monte Carlo: samples x NETWORK_PEAK_STEP_WEIGHT (NETWORK_DECOUPLED_PEAK_STEP_WEIGHT where
    :func:`core.network.phases_decoupled`) x units x 3 windings x steps over
    cycles/f + d + 1 sample, d = pole_closing_max + E[R] x sigma the mean latest pole, E[R]
    the expected range of the 3 x (units being energised) normal pole draws
    (:func:`expected_normal_range`; each case is integrated only to the sample after its own
    window, so the sample's cost is its mean case's; :func:`core.network.step_plan`, the
    solver's own plan); the first peaks are read in the kernel (in the weight). Devices:
    events x the network simulated over duration_s (NETWORK_SOURCE_STEP_WEIGHT, or
    NETWORK_DECOUPLED_SOURCE_STEP_WEIGHT phase by phase: only the source current recorded),
    each event's source
    record read (EVENT_WEIGHT + EVENT_SAMPLE_WEIGHT x 3 x samples) and each device judged on it
    (DEVICE_JUDGEMENT_WEIGHT + DEVICE_SAMPLE_WEIGHT x 3 x samples).

    References
    ----------
    Counts the network solver's step plan and the statistics' reading (this project).
    """
    units = list(units)
    f = source.frequency_hz
    poles = 3 * max(1, sum(not u.in_service for u in units))
    spread = pole_closing_max_s + expected_normal_range(poles) * pole_scatter_ms * 1e-3
    window = cycles / f + spread + 1.0 / (f * samples_per_cycle)
    _, _, n_steps = step_plan(source, units, window, load, samples_per_cycle)
    decoupled = phases_decoupled(source, units, "first_peaks")
    peak_weight = NETWORK_DECOUPLED_PEAK_STEP_WEIGHT if decoupled else NETWORK_PEAK_STEP_WEIGHT
    source_weight = (
        NETWORK_DECOUPLED_SOURCE_STEP_WEIGHT if decoupled else NETWORK_SOURCE_STEP_WEIGHT
    )
    parts = [
        ("Monte Carlo events", peak_weight * samples * len(units) * 3.0 * n_steps),
    ]
    if events and devices:
        _, _, full = step_plan(source, units, duration_s, load, samples_per_cycle)
        line_samples = 3.0 * (duration_s * f * samples_per_cycle + 1)
        per_event = DEVICE_JUDGEMENT_WEIGHT + DEVICE_SAMPLE_WEIGHT * line_samples
        parts += [
            (
                "device events simulated",
                source_weight * events * len(units) * 3.0 * full,
            ),
            ("device events read", events * (EVENT_WEIGHT + EVENT_SAMPLE_WEIGHT * line_samples)),
            ("device events judged", events * devices * per_event),
        ]
    return _work(parts)


def network_figure_work(
    source: Source,
    units: Sequence[Unit],
    duration_s: float,
    load: BusLoad | None = None,
    *,
    samples_per_cycle: int = 128,
) -> Work:
    """Work of the network's current-time figure: one simulation and the drawing.

    Parameters
    ----------
    source : core.network.Source
        The source [-].
    units : sequence of core.network.Unit
        The units on the bus [-].
    duration_s : float
        Simulated time [s].
    load : core.network.BusLoad or None
        The bus load [-].
    samples_per_cycle : int
        Output samples per cycle [-].

    Returns
    -------
    Work

    Notes
    -----
    Simulation as :func:`network_work` (NETWORK_STEP_WEIGHT x units x 3 windings x steps);
    the figure: NETWORK_FIGURE_WEIGHT + curves x (NETWORK_FIGURE_CURVE_WEIGHT +
    FIGURE_SAMPLE_WEIGHT x samples), one curve for the source and one per unit (the line with
    the largest current). No reading, no device judged.

    References
    ----------
    Counts the network solver's step plan (this project); the drawing's weights measured.
    """
    units = list(units)
    _, _, n_steps = step_plan(source, units, duration_s, load, samples_per_cycle)
    samples = duration_s * source.frequency_hz * samples_per_cycle + 1
    curves = len(units) + 1.0
    return _work(
        [
            ("network simulation", NETWORK_STEP_WEIGHT * len(units) * 3.0 * n_steps),
            (
                "figure",
                NETWORK_FIGURE_WEIGHT
                + curves * (NETWORK_FIGURE_CURVE_WEIGHT + FIGURE_SAMPLE_WEIGHT * samples),
            ),
        ]
    )
