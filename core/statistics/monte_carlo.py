"""Statistics of the energisation peak: Monte Carlo over the closing instant and residual flux.

How the first-cycles inrush peak is distributed when the closing instant is random (uniform over
one cycle), the residual flux is uncertain and the breaker poles scatter
(:func:`peak_distribution`), and the probability that it exceeds a threshold
(:func:`exceedance_probability`), with the time-domain solver
(:func:`core.energization.energize.simulate`). Controlled closing, the other side of the same
question, is :mod:`core.mitigation.point_on_wave`.

Limits: the solver's approximations apply (reported with every result, see
:mod:`core.energization.energize`; in particular the phases of a three-phase unit are magnetically
independent). Percentiles are empirical, so their accuracy is that of the sample: each P99 is
given with a distribution-free confidence interval and a convergence table.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import stats

from core import checks
from core.energization import energize
from core.energization.inrush_study import line_names
from core.energization.switching_event import SwitchingEvent, switching_events
from core.errors import ParameterError
from core.transformer.circuit_model import EquivalentCircuit

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]

__all__ = [
    "CONFIDENCE_LEVEL",
    "DEFAULT_THREE_PHASE_POLE_SCATTER_MS",
    "Convergence",
    "Exceedance",
    "FixedResidual",
    "PeakDistribution",
    "Percentiles",
    "UniformResidual",
    "convergence_of",
    "exceedance_probability",
    "order_statistic_interval",
    "peak_distribution",
    "percentiles_of",
    "pole_scatter_sigma_ms",
    "sample_residual",
]

# Two-sided confidence level of every interval in this module [-].
CONFIDENCE_LEVEL = 0.95
# Standard deviation of each pole's closing instant for a three-phase breaker [ms]. Common
# practice: the mechanical pole scatter of an uncontrolled breaker is of the order of a
# millisecond (spreads of 1-3 ms between the first and last pole are usual; the standards limit
# the closing non-simultaneity to a fraction of a cycle), so sigma = 1 ms per pole.
DEFAULT_THREE_PHASE_POLE_SCATTER_MS = 1.0
# Sample sizes of the convergence table: 250 doubled up to the sample count [-].
_CONVERGENCE_START = 250
_PERCENTILES = (50.0, 95.0, 99.0)
_MAX_SAMPLES = 10_000_000


@dataclass(frozen=True)
class FixedResidual:
    """Residual flux known per winding.

    Attributes
    ----------
    flux_pu : tuple of float
        Residual flux of each winding, one value per winding [pu of lambda_N].
    """

    flux_pu: tuple[float, ...]


@dataclass(frozen=True)
class UniformResidual:
    """Residual flux drawn independently per winding from a uniform distribution.

    Attributes
    ----------
    low_pu, high_pu : float
        Range of the draw [pu of lambda_N]. With ``random_sign`` it is the range of the
        magnitude (0 <= low <= high), otherwise of the signed value (low <= high).
    random_sign : bool
        Give each winding's magnitude a sign of +1 or -1 with equal probability.
    zero_sum : bool
        Three-phase only: subtract the mean of the three draws so that the residuals sum to zero
        (the projection onto the zero-sum plane; projected values may fall outside the range).

    Notes
    -----
    The defaults, magnitude uniform in 0.2-0.8 pu with a random sign pattern, are a typical range
    of residual flux after de-energisation of a power transformer (from memory: values of
    0.2-0.8 pu are commonly quoted, e.g. in Brunke & Froehlich, IEEE Trans. Power Delivery 16(2),
    2001).
    """

    low_pu: float = 0.2
    high_pu: float = 0.8
    random_sign: bool = True
    zero_sum: bool = False


ResidualSpec = FixedResidual | UniformResidual


@dataclass(frozen=True)
class Percentiles:
    """Empirical percentiles of a peak sample.

    Attributes
    ----------
    p50_a, p95_a, p99_a : float
        Percentiles by numpy's default linear interpolation (Hyndman & Fan type 7) [A].
    max_a : float
        Largest sampled peak [A].
    p99_interval_a : tuple of float
        Distribution-free confidence interval of the 99th percentile at
        :data:`CONFIDENCE_LEVEL`, see :func:`order_statistic_interval`; an end is infinite when
        the sample is too small to bound it [A].
    """

    p50_a: float
    p95_a: float
    p99_a: float
    max_a: float
    p99_interval_a: tuple[float, float]


@dataclass(frozen=True)
class Convergence:
    """The worst-line P99 and its interval from the first N samples.

    Attributes
    ----------
    samples : ndarray of int, shape (k,)
        N: 250, 500, 1000, ... and the full sample count [-].
    p99_a : ndarray, shape (k,)
        P99 of the first N samples [A].
    p99_low_a, p99_high_a : ndarray, shape (k,)
        Ends of its confidence interval, see :func:`order_statistic_interval` [A].
    """

    samples: IntArray
    p99_a: FloatArray
    p99_low_a: FloatArray
    p99_high_a: FloatArray


@dataclass(frozen=True)
class PeakDistribution:
    """Result of :func:`peak_distribution`.

    Attributes
    ----------
    lines : tuple of str
        Line labels.
    by_line : tuple of Percentiles
        Percentiles of each line's first peak.
    worst_line : Percentiles
        Percentiles of the largest line peak of each sample.
    convergence : Convergence
        Worst-line P99 against the sample size.
    peaks_a : ndarray, shape (samples, n_lines)
        First peak of every line in every sample [A].
    closing_angle_deg : ndarray, shape (samples,)
        Phase-A voltage angle when the first pole closes [deg].
    residual_flux_pu : ndarray, shape (samples, n_windings)
        Sampled residual flux [pu of lambda_N].
    pole_delay_s : ndarray, shape (samples, n_phases)
        Pole closing instants after the first pole [s].
    confidence_level : float
        Two-sided level of the intervals [-].
    approximations : tuple of str
        What the solver approximates.
    """

    lines: tuple[str, ...]
    by_line: tuple[Percentiles, ...]
    worst_line: Percentiles
    convergence: Convergence
    peaks_a: FloatArray
    closing_angle_deg: FloatArray
    residual_flux_pu: FloatArray
    pole_delay_s: FloatArray
    confidence_level: float
    approximations: tuple[str, ...]

    @property
    def worst_peaks_a(self) -> FloatArray:
        """Largest line peak of each sample, shape (samples,) [A]."""
        out: FloatArray = self.peaks_a.max(axis=1)
        return out

    def events(self, circuit: EquivalentCircuit, count: int) -> tuple[SwitchingEvent, ...]:
        """The first ``count`` sampled energisations as switching events of ``circuit``.

        Parameters
        ----------
        circuit : EquivalentCircuit
            A circuit of the phase count the sample was drawn for; its source may differ (e.g.
            the same unit on an ideal source, for a machine to replace it) [-].
        count : int
            How many, from the first, at most the samples [-].

        Returns
        -------
        tuple of SwitchingEvent
            Event k: (closing_angle_deg[k], residual_flux_pu[k], pole_delay_s[k]).

        Notes
        -----
        Built and checked at once by :func:`core.energization.switching_event.switching_events`.

        References
        ----------
        This project's switching event.
        """
        return switching_events(
            circuit,
            self.closing_angle_deg[:count],
            self.residual_flux_pu[:count],
            self.pole_delay_s[:count],
        )


@dataclass(frozen=True)
class Exceedance:
    """Result of :func:`exceedance_probability`.

    Attributes
    ----------
    probability : float
        Fraction of the peaks above the threshold [-].
    low, high : float
        Confidence interval of the probability [-].
    exceedances, samples : int
        Peaks above the threshold, and all peaks [-].
    method : str
        ``"clopper_pearson"`` or ``"wilson"``.
    confidence_level : float
        Two-sided level [-].
    """

    probability: float
    low: float
    high: float
    exceedances: int
    samples: int
    method: str
    confidence_level: float


def pole_scatter_sigma_ms(phases: int, pole_scatter_ms: float | None) -> float:
    """Standard deviation of each pole's closing instant that :func:`peak_distribution` draws.

    Parameters
    ----------
    phases : int
        Phases of the circuit, 1 or 3 [-].
    pole_scatter_ms : float or None
        As given, in [0, 20]; None for the default of the phases [ms].

    Returns
    -------
    float
        sigma [ms].

    Notes
    -----
    sigma = the value given, else 0 on a single phase (one pole has nothing to scatter against)
    and :data:`DEFAULT_THREE_PHASE_POLE_SCATTER_MS` on three phases.

    References
    ----------
    The default: common practice (see :data:`DEFAULT_THREE_PHASE_POLE_SCATTER_MS`).
    """
    if pole_scatter_ms is None:
        return 0.0 if phases == 1 else DEFAULT_THREE_PHASE_POLE_SCATTER_MS
    return checks.in_range("pole_scatter_ms", pole_scatter_ms, 0.0, 20.0, open_low=False)


def order_statistic_interval(
    sorted_values: FloatArray, quantile: float, confidence: float = CONFIDENCE_LEVEL
) -> tuple[float, float]:
    """Distribution-free confidence interval of a quantile from the order statistics.

    Parameters
    ----------
    sorted_values : ndarray, shape (n,)
        Sample in ascending order [any unit].
    quantile : float
        Probability p of the quantile, in (0, 1) [-].
    confidence : float
        Two-sided confidence level, in (0, 1) [-].

    Returns
    -------
    tuple of float
        (x_(l), x_(u)) with 1-based ranks l, u; -inf or +inf where the rank falls outside the
        sample [same unit as the sample].

    Notes
    -----
    The number of sample values below the quantile xi_p is binomial(n, p), so for ranks l < u
    P(x_(l) <= xi_p < x_(u)) = F(u - 1) - F(l - 1) with F the binomial CDF, whatever the
    (continuous) distribution. With l = F^-1(a/2) and u = F^-1(1 - a/2) + 1, a = 1 - confidence,
    the coverage is at least the confidence level (equal tails, conservative for a discrete F).

    References
    ----------
    The standard order-statistic confidence interval for quantiles, e.g. H. A. David and
    H. N. Nagaraja, Order Statistics, 3rd ed., Wiley 2003, section 7.1 (from memory).
    """
    n = sorted_values.size
    a = 1.0 - confidence
    lo_rank = int(stats.binom.ppf(0.5 * a, n, quantile))
    hi_rank = int(stats.binom.ppf(1.0 - 0.5 * a, n, quantile)) + 1
    low = float(sorted_values[lo_rank - 1]) if lo_rank >= 1 else -math.inf
    high = float(sorted_values[hi_rank - 1]) if hi_rank <= n else math.inf
    return low, high


def percentiles_of(peaks: FloatArray) -> Percentiles:
    """Percentiles of a peak sample, with the distribution-free interval of its P99.

    Parameters
    ----------
    peaks : ndarray, shape (n,)
        The sample, n >= 1 [A].

    Returns
    -------
    Percentiles

    Notes
    -----
    P50, P95, P99 by numpy's default linear interpolation (Hyndman & Fan type 7); the P99
    interval by :func:`order_statistic_interval` at :data:`CONFIDENCE_LEVEL`.

    References
    ----------
    R. J. Hyndman, Y. Fan, "Sample quantiles in statistical packages," The American
    Statistician 50(4), 1996 (from memory).
    """
    ordered = np.sort(peaks)
    p50, p95, p99 = (float(v) for v in np.percentile(ordered, _PERCENTILES))
    return Percentiles(p50, p95, p99, float(ordered[-1]), order_statistic_interval(ordered, 0.99))


def sample_residual(
    spec: ResidualSpec, windings: int, samples: int, rng: np.random.Generator
) -> FloatArray:
    """Residual flux of every sample, drawn from ``rng`` (nothing drawn for a fixed one).

    Parameters
    ----------
    spec : FixedResidual or UniformResidual
        The distribution [pu of lambda_N].
    windings : int
        Windings of the unit, 1 or 3 [-].
    samples : int
        Samples drawn [-].
    rng : numpy.random.Generator
        The generator, advanced by the draw [-].

    Returns
    -------
    ndarray, shape (samples, windings)
        Residual flux [pu of lambda_N].

    Raises
    ------
    ParameterError
        On a value out of range (named ``residual.*``).

    Notes
    -----
    Uniform: b ~ U(low, high) per winding, then (random_sign) b *= s, s = +-1 with equal
    probability, then (zero_sum) b -= mean(b) over the windings; the draws in that order, all
    samples at once.

    References
    ----------
    The typical range: see :class:`UniformResidual` (from memory).
    """
    if isinstance(spec, FixedResidual):
        values = np.asarray(spec.flux_pu, dtype=float)
        if values.shape != (windings,):
            raise ParameterError("residual.flux_pu", spec.flux_pu, f"{windings} values")
        if not np.all(np.isfinite(values)) or np.any(np.abs(values) > 5.0):
            raise ParameterError("residual.flux_pu", spec.flux_pu, "finite values in [-5, 5]")
        return np.broadcast_to(values, (samples, windings)).copy()
    if not isinstance(spec, UniformResidual):
        raise ParameterError("residual", type(spec).__name__, "FixedResidual or UniformResidual")
    low = checks.in_range(
        "residual.low_pu", spec.low_pu, 0.0 if spec.random_sign else -5.0, 5.0, open_low=False
    )
    high = checks.in_range("residual.high_pu", spec.high_pu, low, 5.0, open_low=False)
    if spec.zero_sum and windings != 3:
        raise ParameterError("residual.zero_sum", spec.zero_sum, "False for a single phase")
    out: FloatArray = rng.uniform(low, high, size=(samples, windings))
    if spec.random_sign:
        out *= rng.choice(np.array([-1.0, 1.0]), size=(samples, windings))
    if spec.zero_sum:
        out -= out.mean(axis=1, keepdims=True)
    return out


def convergence_of(worst: FloatArray) -> Convergence:
    """P99 and its interval from the first N samples, N = 250, 500, 1000, ... and all.

    Parameters
    ----------
    worst : ndarray, shape (n,)
        The sample in the order it was drawn [A].

    Returns
    -------
    Convergence

    Notes
    -----
    Each row is :func:`percentiles_of` of the first N values (its P99 and interval).

    References
    ----------
    See :func:`order_statistic_interval`.
    """
    n = worst.size
    sizes: list[int] = []
    k = _CONVERGENCE_START
    while k < n:
        sizes.append(k)
        k *= 2
    sizes.append(n)
    p99 = np.empty(len(sizes))
    low = np.empty(len(sizes))
    high = np.empty(len(sizes))
    for j, m in enumerate(sizes):
        ordered = np.sort(worst[:m])
        p99[j] = np.percentile(ordered, 99.0)
        low[j], high[j] = order_statistic_interval(ordered, 0.99)
    return Convergence(np.array(sizes, dtype=np.int64), p99, low, high)


def peak_distribution(
    circuit: EquivalentCircuit,
    *,
    samples: int,
    random_state: int | None,
    residual: ResidualSpec | None = None,
    pole_scatter_ms: float | None = None,
    cycles: float = 2.0,
    max_steps: int | None = None,
    batch: int = 2000,
    checkpoint: Callable[[], None] | None = None,
    closing_angle_deg: float | None = None,
) -> PeakDistribution:
    """Monte Carlo distribution of the first-cycles inrush peak over random closing instants.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The transformer and its source [-].
    samples : int
        Number of energisations drawn, in [1, 1e7] [-].
    random_state : int or None
        State of ``numpy.random.default_rng``; an integer makes the result reproducible [-].
    residual : FixedResidual or UniformResidual or None
        Residual flux distribution; None for ``UniformResidual()`` (magnitude 0.2-0.8 pu, random
        sign per winding; a typical range, from memory) [pu of lambda_N].
    pole_scatter_ms : float or None
        Standard deviation of a normal scatter of each pole's closing instant, in [0, 20]; None
        for 0 on a single phase and :data:`DEFAULT_THREE_PHASE_POLE_SCATTER_MS` (1 ms, common
        practice) on three phases [ms].
    cycles : float
        Window searched for the first peak after the last pole closes, in (0, 60] [cycles].
    max_steps : int or None
        Compute limit per solver call, see :func:`core.energization.energize.simulate` [-].
    batch : int
        Energisations per solver call, in [1, 1e6] [-].
    checkpoint : callable or None
        Called with no argument before each solver call; it may raise to stop the work (the
        caller's deadline) [-].
    closing_angle_deg : float or None
        Phase-A voltage angle at the first pole's closing in every sample, in [-360, 360] (a
        controlled closing's target); None draws it uniform in [0, 360) [deg].

    Returns
    -------
    PeakDistribution

    Raises
    ------
    ParameterError
        On a value out of range (named by the field, e.g. ``residual.low_pu``).
    LimitError
        When a solver call exceeds ``max_steps``.

    Notes
    -----
    Every sample is drawn first, from one generator, in this order: the phase-A voltage angle at
    the first pole's closing, uniform in [0, 360) deg (not drawn when given: the residual flux
    and the scatter are then the next draws of the generator); the residual flux; the pole instants
    t_k ~ N(0, sigma^2), taken relative to the earliest (so a single pole never scatters). Every
    case is then simulated over the same window, ``cycles``/f plus the largest sampled pole
    delay, in batches of ``batch``; the result does not depend on ``batch``. A line's peak is
    the largest |i| in the window, refined by :func:`core.energization.energize.refined_abs_peak`.

    References
    ----------
    Percentile intervals: see :func:`order_statistic_interval`. Monte Carlo treatment of the
    random closing instant: common practice in statistical switching studies.
    """
    n = checks.integer("samples", samples, 1, _MAX_SAMPLES)
    size = checks.integer("batch", batch, 1, 1_000_000)
    window = checks.in_range("cycles", cycles, 0.0, 60.0, open_low=False)
    if window <= 0.0:
        raise ParameterError("cycles", cycles, "a number in (0, 60]")
    if random_state is not None:
        checks.integer("random_state", random_state, 0, 2**63 - 1)
    m = circuit.phases
    sigma_ms = pole_scatter_sigma_ms(m, pole_scatter_ms)
    spec: ResidualSpec = UniformResidual() if residual is None else residual

    rng = np.random.default_rng(random_state)
    angles: FloatArray
    if closing_angle_deg is None:
        angles = rng.uniform(0.0, 360.0, size=n)
    else:
        a = checks.in_range("closing_angle_deg", closing_angle_deg, -360.0, 360.0, open_low=False)
        angles = np.full(n, a)
    res = sample_residual(spec, m, n, rng)
    raw: FloatArray = rng.normal(0.0, sigma_ms * 1e-3, size=(n, m))
    delays: FloatArray = raw - raw.min(axis=1, keepdims=True)
    duration = window / circuit.frequency_hz + float(delays.max())

    peaks = np.empty((n, m))
    approximations: tuple[str, ...] = ()
    for start in range(0, n, size):
        if checkpoint is not None:
            checkpoint()
        part = slice(start, min(start + size, n))
        sim = energize.simulate(
            circuit,
            angles[part],
            res[part],
            delays[part],
            duration_s=duration,
            max_steps=max_steps,
        )
        peaks[part] = energize.refined_abs_peak(sim.line_current_a)
        approximations = tuple(dict.fromkeys(approximations + sim.approximations))
    worst: FloatArray = peaks.max(axis=1)
    return PeakDistribution(
        lines=line_names(circuit),
        by_line=tuple(percentiles_of(peaks[:, j]) for j in range(m)),
        worst_line=percentiles_of(worst),
        convergence=convergence_of(worst),
        peaks_a=peaks,
        closing_angle_deg=angles,
        residual_flux_pu=res,
        pole_delay_s=delays,
        confidence_level=CONFIDENCE_LEVEL,
        approximations=approximations,
    )


def exceedance_probability(
    peaks: ArrayLike,
    threshold_a: float,
    *,
    method: str = "clopper_pearson",
    confidence: float = CONFIDENCE_LEVEL,
) -> Exceedance:
    """Probability that a peak exceeds a threshold, with a binomial confidence interval.

    Parameters
    ----------
    peaks : array_like, shape (n,)
        Independent peak samples, e.g. ``PeakDistribution.worst_peaks_a`` [A].
    threshold_a : float
        Threshold; a peak counts when strictly above it [A].
    method : str
        ``"clopper_pearson"`` (exact, conservative) or ``"wilson"`` (score interval) [-].
    confidence : float
        Two-sided confidence level, in (0, 1) [-].

    Returns
    -------
    Exceedance

    Raises
    ------
    ParameterError
        On an empty or non-finite sample, a non-finite threshold, an unknown method or a
        confidence outside (0, 1).

    Notes
    -----
    With k of n above the threshold and a = 1 - confidence, Clopper-Pearson gives
    [B^-1(a/2; k, n-k+1), B^-1(1-a/2; k+1, n-k)] (B^-1 the beta quantile; 0 for k = 0, 1 for
    k = n), and Wilson (p + z^2/2n -+ z*sqrt(p(1-p)/n + z^2/4n^2)) / (1 + z^2/n) with p = k/n
    and z the normal quantile of 1 - a/2.

    References
    ----------
    C. J. Clopper, E. S. Pearson, Biometrika 26(4), 1934; E. B. Wilson, J. Am. Stat. Assoc.
    22(158), 1927; compared in L. D. Brown, T. T. Cai, A. DasGupta, Statistical Science 16(2),
    2001 (all from memory).
    """
    x = np.asarray(peaks, dtype=float)
    if x.ndim != 1 or x.size == 0:
        raise ParameterError("peaks", x.shape, "a non-empty one-dimensional sample")
    if not np.all(np.isfinite(x)):
        raise ParameterError("peaks", "non-finite", "finite values")
    threshold = checks.in_range("threshold_a", threshold_a, -math.inf, math.inf, open_low=False)
    if method not in ("clopper_pearson", "wilson"):
        raise ParameterError("method", method, "'clopper_pearson' or 'wilson'")
    level = checks.in_range("confidence", confidence, 0.0, 1.0, open_low=False)
    if not 0.0 < level < 1.0:
        raise ParameterError("confidence", confidence, "a number in (0, 1)")
    n = int(x.size)
    k = int(np.count_nonzero(x > threshold))
    a = 1.0 - level
    p = k / n
    if method == "clopper_pearson":
        low = 0.0 if k == 0 else float(stats.beta.ppf(0.5 * a, k, n - k + 1))
        high = 1.0 if k == n else float(stats.beta.ppf(1.0 - 0.5 * a, k + 1, n - k))
    else:
        z = float(stats.norm.ppf(1.0 - 0.5 * a))
        centre = (p + z * z / (2 * n)) / (1.0 + z * z / n)
        half = z * math.sqrt(p * (1.0 - p) / n + z * z / (4 * n * n)) / (1.0 + z * z / n)
        # exactly 0 at k = 0 and 1 at k = n (the formula's rounding leaves ~1e-18)
        low = 0.0 if k == 0 else max(0.0, centre - half)
        high = 1.0 if k == n else min(1.0, centre + half)
    return Exceedance(p, low, high, k, n, method, level)
