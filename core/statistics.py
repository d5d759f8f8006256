"""Statistics of the energisation peak: Monte Carlo over the closing instant; controlled closing.

Two questions about one transformer, both answered with the time-domain solver
(:func:`core.energize.simulate`):

* how the first-cycles inrush peak is distributed when the closing instant is random (uniform over
  one cycle), the residual flux is uncertain and the breaker poles scatter
  (:func:`peak_distribution`, :func:`exceedance_probability`);
* how much current a controlled (point-on-wave) closing leaves, and how large a closing-time error
  it tolerates (:func:`controlled_closing`, :func:`tolerance_window`).

Limits: the solver's approximations apply (reported with every result, see
:mod:`core.energize`; in particular the phases of a three-phase unit are magnetically
independent, so flux coupling between limbs, on which some three-phase closing strategies rely,
is not modelled). Percentiles are empirical, so their accuracy is that of the sample: each P99 is
given with a distribution-free confidence interval and a convergence table.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import stats

from core import analytic, energize
from core.errors import ParameterError
from core.inrush import line_names, winding_angles
from core.transformer import EquivalentCircuit

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]

__all__ = [
    "CONFIDENCE_LEVEL",
    "DEFAULT_THREE_PHASE_POLE_SCATTER_MS",
    "STRATEGIES",
    "ControlledClosing",
    "Convergence",
    "Exceedance",
    "FixedResidual",
    "PeakDistribution",
    "Percentiles",
    "ToleranceWindow",
    "UniformResidual",
    "controlled_closing",
    "exceedance_probability",
    "order_statistic_interval",
    "peak_distribution",
    "tolerance_window",
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
STRATEGIES = ("simultaneous", "first_phase_then_quarter_cycle", "independent")
_PHASE_SHIFT_DEG = np.array([0.0, -120.0, 120.0])


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


@dataclass(frozen=True)
class ControlledClosing:
    """Result of :func:`controlled_closing`.

    Attributes
    ----------
    optimal_angle_deg : ndarray, shape (n_windings,)
        Angle alpha of each winding's voltage v = sin(omega*t + alpha) at which its prospective
        flux equals its residual flux, arccos(-b_r) in [0, 180] [deg].
    strategy : str
        Pole timing used.
    closing_angle_deg : float
        Phase-A voltage angle when the first pole closes, with no error [deg].
    pole_delay_s : ndarray, shape (n_phases,)
        Pole closing instants after the first pole [s].
    flux_offset_pu : ndarray, shape (n_windings,)
        Centre of each winding's flux swing with no error, b_r + cos(angle at closing); 0 is a
        perfect closing [pu of lambda_N].
    errors_ms : ndarray, shape (n_errors,)
        Closing-time errors, common to every pole (positive: late) [ms].
    peaks_a : ndarray, shape (n_errors, n_lines)
        First peak of each line for each error [A].
    worst_peak_a : ndarray, shape (n_errors,)
        Largest line peak for each error [A].
    approximations : tuple of str
        What the solver approximates.
    """

    optimal_angle_deg: FloatArray
    strategy: str
    closing_angle_deg: float
    pole_delay_s: FloatArray
    flux_offset_pu: FloatArray
    errors_ms: FloatArray
    peaks_a: FloatArray
    worst_peak_a: FloatArray
    approximations: tuple[str, ...]


@dataclass(frozen=True)
class ToleranceWindow:
    """Result of :func:`tolerance_window`.

    Attributes
    ----------
    half_width_ms : float
        Largest w such that every error in [-w, w] keeps the peak below the target; 0 when even
        the exact instant does not [ms].
    early_limit_ms, late_limit_ms : float
        Where the peak first reaches the target on each side (negative: early) [ms].
    bounded : bool
        False when the peak stays below the target over the whole searched range, so the window
        is at least ``half_width_ms``.
    target_a : float
        Target peak [A].
    peak_at_optimum_a : float
        Largest line peak with no error [A].
    """

    half_width_ms: float
    early_limit_ms: float
    late_limit_ms: float
    bounded: bool
    target_a: float
    peak_at_optimum_a: float


def _check_int(name: str, value: object, low: int, high: int) -> int:
    if (
        isinstance(value, bool)
        or not isinstance(value, int | np.integer)
        or not low <= value <= high
    ):
        raise ParameterError(name, value, f"an integer in [{low}, {high}]")
    return int(value)


def _check_float(name: str, value: object, low: float, high: float) -> float:
    try:
        x = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError) as exc:
        raise ParameterError(name, value, f"a number in [{low:g}, {high:g}]") from exc
    if not (math.isfinite(x) and low <= x <= high):
        raise ParameterError(name, value, f"a number in [{low:g}, {high:g}]")
    return x


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


def _percentiles(peaks: FloatArray) -> Percentiles:
    ordered = np.sort(peaks)
    p50, p95, p99 = (float(v) for v in np.percentile(ordered, _PERCENTILES))
    return Percentiles(p50, p95, p99, float(ordered[-1]), order_statistic_interval(ordered, 0.99))


def _sample_residual(
    spec: ResidualSpec, windings: int, samples: int, rng: np.random.Generator
) -> FloatArray:
    if isinstance(spec, FixedResidual):
        values = np.asarray(spec.flux_pu, dtype=float)
        if values.shape != (windings,):
            raise ParameterError("residual.flux_pu", spec.flux_pu, f"{windings} values")
        if not np.all(np.isfinite(values)) or np.any(np.abs(values) > 5.0):
            raise ParameterError("residual.flux_pu", spec.flux_pu, "finite values in [-5, 5]")
        return np.broadcast_to(values, (samples, windings)).copy()
    if not isinstance(spec, UniformResidual):
        raise ParameterError("residual", type(spec).__name__, "FixedResidual or UniformResidual")
    low = _check_float("residual.low_pu", spec.low_pu, 0.0 if spec.random_sign else -5.0, 5.0)
    high = _check_float("residual.high_pu", spec.high_pu, low, 5.0)
    if spec.zero_sum and windings != 3:
        raise ParameterError("residual.zero_sum", spec.zero_sum, "False for a single phase")
    out: FloatArray = rng.uniform(low, high, size=(samples, windings))
    if spec.random_sign:
        out *= rng.choice(np.array([-1.0, 1.0]), size=(samples, windings))
    if spec.zero_sum:
        out -= out.mean(axis=1, keepdims=True)
    return out


def _convergence(worst: FloatArray) -> Convergence:
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
) -> PeakDistribution:
    """Monte Carlo distribution of the first-cycles inrush peak over random closing instants.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The transformer and its source.
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
        Compute limit per solver call, see :func:`core.energize.simulate` [-].
    batch : int
        Energisations per solver call, in [1, 1e6] [-].

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
    the first pole's closing, uniform in [0, 360) deg; the residual flux; the pole instants
    t_k ~ N(0, sigma^2), taken relative to the earliest (so a single pole never scatters). Every
    case is then simulated over the same window, ``cycles``/f plus the largest sampled pole
    delay, in batches of ``batch``; the result does not depend on ``batch``. A line's peak is
    the largest |i| in the window, refined by :func:`core.energize.refined_abs_peak`.

    References
    ----------
    Percentile intervals: see :func:`order_statistic_interval`. Monte Carlo treatment of the
    random closing instant: common practice in statistical switching studies.
    """
    n = _check_int("samples", samples, 1, _MAX_SAMPLES)
    size = _check_int("batch", batch, 1, 1_000_000)
    window = _check_float("cycles", cycles, 0.0, 60.0)
    if window <= 0.0:
        raise ParameterError("cycles", cycles, "a number in (0, 60]")
    if random_state is not None:
        _check_int("random_state", random_state, 0, 2**63 - 1)
    m = circuit.phases
    if pole_scatter_ms is None:
        sigma_ms = 0.0 if m == 1 else DEFAULT_THREE_PHASE_POLE_SCATTER_MS
    else:
        sigma_ms = _check_float("pole_scatter_ms", pole_scatter_ms, 0.0, 20.0)
    spec: ResidualSpec = UniformResidual() if residual is None else residual

    rng = np.random.default_rng(random_state)
    angles: FloatArray = rng.uniform(0.0, 360.0, size=n)
    res = _sample_residual(spec, m, n, rng)
    raw: FloatArray = rng.normal(0.0, sigma_ms * 1e-3, size=(n, m))
    delays: FloatArray = raw - raw.min(axis=1, keepdims=True)
    duration = window / circuit.frequency_hz + float(delays.max())

    peaks = np.empty((n, m))
    approximations: tuple[str, ...] = ()
    for start in range(0, n, size):
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
        by_line=tuple(_percentiles(peaks[:, j]) for j in range(m)),
        worst_line=_percentiles(worst),
        convergence=_convergence(worst),
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
        ``"clopper_pearson"`` (exact, conservative) or ``"wilson"`` (score interval).
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
    threshold = _check_float("threshold_a", threshold_a, -math.inf, math.inf)
    if method not in ("clopper_pearson", "wilson"):
        raise ParameterError("method", method, "'clopper_pearson' or 'wilson'")
    level = _check_float("confidence", confidence, 0.0, 1.0)
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


def _residual_vector(circuit: EquivalentCircuit, residual_flux_pu: ArrayLike) -> FloatArray:
    res = np.asarray(residual_flux_pu, dtype=float)
    res = np.broadcast_to(res, (circuit.phases,)).copy() if res.ndim == 0 else res
    if res.shape != (circuit.phases,):
        raise ParameterError("residual_flux_pu", res.tolist(), f"{circuit.phases} values")
    if not np.all(np.isfinite(res)) or np.any(np.abs(res) > 1.0):
        raise ParameterError("residual_flux_pu", res.tolist(), "finite values in [-1, 1]")
    return res


def _closing_plan(
    circuit: EquivalentCircuit, res: FloatArray, strategy: str
) -> tuple[FloatArray, float, FloatArray]:
    """Optimal angles per winding, phase-A angle at the first pole, and the pole delays [s]."""
    if strategy not in STRATEGIES:
        raise ParameterError("strategy", strategy, " or ".join(STRATEGIES))
    delta = circuit.connection == "delta"
    if delta and strategy != "simultaneous":
        raise ParameterError(
            "strategy", strategy, "simultaneous for a delta winding (each needs two poles)"
        )
    optimal: FloatArray = np.degrees(np.arccos(-res))
    period = 1.0 / circuit.frequency_hz
    m = circuit.phases
    shift = _PHASE_SHIFT_DEG[:m]
    ref = int(np.argmax(np.abs(res)))  # the winding whose residual matters most
    # phase-A angle at which the reference winding's voltage is at its optimal angle (a delta
    # winding's line-to-line voltage leads its first phase by 30 degrees)
    alpha_a = float(optimal[ref] - shift[ref] - (30.0 if delta else 0.0))
    if strategy == "simultaneous" or m == 1:
        delays = np.zeros(m)
    elif strategy == "first_phase_then_quarter_cycle":
        delays = np.full(m, 0.25 * period)
        delays[ref] = 0.0
    else:  # independent: each pole at the first instant its winding is at its optimum
        phase_a_at = optimal - shift  # phase-A angle at which winding k should close [deg]
        delays = np.mod(phase_a_at - alpha_a, 360.0) / 360.0 * period
        first = int(np.argmin(delays))
        alpha_a = float(phase_a_at[first])
        delays = np.mod(phase_a_at - alpha_a, 360.0) / 360.0 * period
    return optimal, float(np.mod(alpha_a, 360.0)), delays


def controlled_closing(
    circuit: EquivalentCircuit,
    residual_flux_pu: ArrayLike,
    *,
    errors_ms: ArrayLike | None = None,
    strategy: str = "simultaneous",
    cycles: float = 2.0,
    max_steps: int | None = None,
) -> ControlledClosing:
    """Peak after a controlled closing aimed at the residual flux, against the closing-time error.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The transformer and its source (single phase, grounded or ungrounded wye, or delta
        with the simultaneous strategy).
    residual_flux_pu : array_like, shape (n_windings,) or scalar
        Residual flux of each winding, in [-1, 1] [pu of lambda_N].
    errors_ms : array_like or None
        Closing-time errors common to every pole, each within +-1 cycle (positive: late); None
        for 81 values over +-1/4 cycle [ms].
    strategy : str
        ``"simultaneous"``: every pole at the optimal instant of the winding with the largest
        |residual|; ``"first_phase_then_quarter_cycle"``: that pole at its optimum, the others a
        quarter cycle later; ``"independent"``: each pole at its own winding's optimum (the
        first opportunity within one cycle).
    cycles : float
        Window searched for the first peak after the last pole closes, in (0, 60] [cycles].
    max_steps : int or None
        Compute limit of the solver call, see :func:`core.energize.simulate` [-].

    Returns
    -------
    ControlledClosing

    Raises
    ------
    ParameterError
        On a value out of range, or a pole-by-pole strategy for a delta winding.

    Notes
    -----
    With v = sqrt(2)*V*sin(omega*t + alpha) the prospective steady-state flux is
    -lambda_N*cos(omega*t + alpha); closing where it equals the residual flux b_r,
    alpha = arccos(-b_r), leaves no flux offset (:func:`core.analytic.flux_offset_pu` is 0), so
    only magnetising current flows. For b_r = 0 this is the voltage peak, alpha = 90 deg. Of the
    two solutions +-arccos(-b_r) the one in [0, 180] deg (closing while the voltage is
    positive) is used. A closing-time error e shifts every winding's
    closing angle by 360*f*e deg. The quarter-cycle strategy is meant for cores whose limbs
    share flux; with the solver's magnetically independent phases its later poles are not
    flux-matched (reported in ``flux_offset_pu``).

    References
    ----------
    J. H. Brunke, K. J. Froehlich, "Elimination of transformer inrush currents by controlled
    switching," IEEE Trans. Power Delivery 16(2), 2001, parts I and II (from memory).
    """
    res = _residual_vector(circuit, residual_flux_pu)
    window = _check_float("cycles", cycles, 0.0, 60.0)
    if window <= 0.0:
        raise ParameterError("cycles", cycles, "a number in (0, 60]")
    f = circuit.frequency_hz
    cycle_ms = 1e3 / f
    if errors_ms is None:
        err: FloatArray = np.linspace(-0.25 * cycle_ms, 0.25 * cycle_ms, 81)
    else:
        err = np.atleast_1d(np.asarray(errors_ms, dtype=float))
        if err.ndim != 1 or not np.all(np.isfinite(err)) or np.any(np.abs(err) > cycle_ms):
            raise ParameterError(
                "errors_ms", err.tolist(), f"finite values within +-{cycle_ms:.4g} ms"
            )
    optimal, alpha_a, delays = _closing_plan(circuit, res, strategy)
    winding_angle = winding_angles(circuit, alpha_a, delays)
    offset = analytic.flux_offset_pu(res, winding_angle)
    sim = energize.simulate(
        circuit,
        alpha_a + 360.0 * f * err * 1e-3,
        res,
        delays,
        duration_s=window / f + float(delays.max()),
        max_steps=max_steps,
    )
    peaks = energize.refined_abs_peak(sim.line_current_a)
    return ControlledClosing(
        optimal_angle_deg=optimal,
        strategy=strategy,
        closing_angle_deg=alpha_a,
        pole_delay_s=delays,
        flux_offset_pu=offset,
        errors_ms=err,
        peaks_a=peaks,
        worst_peak_a=peaks.max(axis=1),
        approximations=sim.approximations,
    )


def _worst_peak(
    circuit: EquivalentCircuit,
    res: FloatArray,
    errors_ms: Sequence[float] | FloatArray,
    strategy: str,
    cycles: float,
    max_steps: int | None,
) -> FloatArray:
    out = controlled_closing(
        circuit, res, errors_ms=errors_ms, strategy=strategy, cycles=cycles, max_steps=max_steps
    )
    return out.worst_peak_a


def tolerance_window(
    circuit: EquivalentCircuit,
    residual_flux_pu: ArrayLike,
    target_a: float,
    *,
    strategy: str = "simultaneous",
    max_error_ms: float | None = None,
    grid_points: int = 201,
    resolution_ms: float = 1e-3,
    cycles: float = 2.0,
    max_steps: int | None = None,
) -> ToleranceWindow:
    """Largest symmetric closing-time error band that keeps the peak below a target.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The transformer and its source, see :func:`controlled_closing`.
    residual_flux_pu : array_like
        Residual flux per winding, in [-1, 1] [pu of lambda_N].
    target_a : float
        Largest acceptable line peak, > 0 [A].
    strategy : str
        Pole timing, see :func:`controlled_closing`.
    max_error_ms : float or None
        Searched range +-max_error_ms, in (0, 1 cycle]; None for a quarter cycle [ms].
    grid_points : int
        Points of the error grid over +-max_error_ms, odd, in [11, 100001] [-].
    resolution_ms : float
        Bisection stops when the bracket is this narrow, in [1e-6, 1] [ms].
    cycles : float
        Window searched for the first peak, see :func:`controlled_closing` [cycles].
    max_steps : int or None
        Compute limit per solver call [-].

    Returns
    -------
    ToleranceWindow

    Raises
    ------
    ParameterError
        On a value out of range.

    Notes
    -----
    The peak is simulated on a uniform error grid (including 0); on each side the first grid
    point at or above the target brackets the limit with its inner neighbour, and bisection
    narrows the bracket to ``resolution_ms``, keeping the inner (safe) end. The half width is the
    smaller of the two limits. An excursion narrower than the grid step can be missed.
    """
    res = _residual_vector(circuit, residual_flux_pu)
    target = _check_float("target_a", target_a, 0.0, math.inf)
    if target <= 0.0:
        raise ParameterError("target_a", target_a, "a number > 0")
    cycle_ms = 1e3 / circuit.frequency_hz
    span = (
        0.25 * cycle_ms
        if max_error_ms is None
        else _check_float("max_error_ms", max_error_ms, 0.0, cycle_ms)
    )
    if span <= 0.0:
        raise ParameterError("max_error_ms", max_error_ms, f"a number in (0, {cycle_ms:.4g}]")
    points = _check_int("grid_points", grid_points, 11, 100_001)
    if points % 2 == 0:
        raise ParameterError("grid_points", grid_points, "an odd integer")
    tol = _check_float("resolution_ms", resolution_ms, 1e-6, 1.0)
    grid: FloatArray = np.linspace(-span, span, points)
    worst = _worst_peak(circuit, res, grid, strategy, cycles, max_steps)
    mid = points // 2
    at_optimum = float(worst[mid])
    if at_optimum >= target:
        return ToleranceWindow(0.0, 0.0, 0.0, True, target, at_optimum)

    limits: list[float] = []
    bounded = False
    for direction in (-1, 1):
        idx = np.arange(mid, points) if direction > 0 else np.arange(mid, -1, -1)
        fail = np.nonzero(worst[idx] >= target)[0]
        if fail.size == 0:
            limits.append(direction * span)
            continue
        bounded = True
        inner, outer = float(grid[idx[fail[0] - 1]]), float(grid[idx[fail[0]]])
        while abs(outer - inner) > tol:
            trial = 0.5 * (inner + outer)
            if float(_worst_peak(circuit, res, [trial], strategy, cycles, max_steps)[0]) >= target:
                outer = trial
            else:
                inner = trial
        limits.append(inner)
    early, late = limits
    return ToleranceWindow(min(-early, late), early, late, bounded, target, at_optimum)
