"""A transformer differential element through the energisation of its own unit.

During energisation the far side of the unit carries no current, so the relay's differential
current is the energised side's line currents, in per unit of the relay's tap, after its
vector-group compensation. The element is judged window by window as a numerical relay sees it:

* filtering: a one-cycle (full-cycle) discrete Fourier estimate of the fundamental, second and
  fifth harmonics over a window sliding one sample at a time, zeros before the closing (what
  the relay's buffer held); the usual phasor filter of numerical relays (common practice; Phadke
  and Thorp, *Computer Relaying for Power Systems*, ch. 3, from memory);
* compensation: a real 3 × 3 matrix that advances the positive sequence by the clock angle,
  retards the negative sequence by the same angle and removes the zero sequence
  (:func:`compensation_matrix`; IEEE Std C37.91-2008, clause on numerical-relay compensation,
  from memory); the reference side gets only the zero-sequence removal;
* percentage characteristic: operate I_op = |I_1| of the compensated current; restraint I_r the
  average of the two sides' magnitudes (|I_op|/2 here) or their maximum (|I_op|); the element
  picks up where I_op exceeds a dual-slope threshold (:func:`operate_threshold`);
* harmonic blocking, with three logics (our names): ``own_phase`` (each phase blocked by its
  own ratio), ``any_phase`` (one phase's ratio blocks all three, "cross-blocking" in the
  trade) and ``summed_phases`` (the three phases' harmonic magnitudes summed over the phase's
  own fundamental); an optional unrestrained element operates above its setting regardless.

Limits: CT saturation and the relay's own timers (a pickup must usually persist for a few
milliseconds) are not modelled — a single window counts, which is conservative; harmonic
*restraint* (adding harmonics to the restraint quantity) is not modelled, only blocking.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import ClassVar, Literal

import numpy as np
import numpy.typing as npt

from core import checks
from core.errors import ParameterError
from core.protection import fuse_breaker_curves
from core.transformer.circuit_model import Assumption

__all__ = [
    "HARMONIC_LOGICS",
    "Differential",
    "DifferentialResult",
    "VectorGroup",
    "Verdict",
    "compensation_matrix",
    "differential_response",
    "one_cycle_phasors",
    "operate_threshold",
    "vector_group",
]

FloatArray = npt.NDArray[np.float64]
ComplexArray = npt.NDArray[np.complex128]
HarmonicLogic = Literal["own_phase", "any_phase", "summed_phases"]
RestraintRule = Literal["average", "maximum"]
Side = Literal["high", "low"]

#: The harmonic logics, in the order the answers list them.
HARMONIC_LOGICS: tuple[HarmonicLogic, ...] = ("own_phase", "any_phase", "summed_phases")
LOGIC_WORDS = {
    "own_phase": "each phase blocked by its own harmonic ratio",
    "any_phase": "any phase whose ratio exceeds the level blocks all three (cross-blocking)",
    "summed_phases": "the three phases' harmonic magnitudes summed, over the phase's fundamental",
}
RESTRAINT_WORDS = {
    "average": "average of the two sides' fundamental magnitudes (far side 0: I_op/2)",
    "maximum": "larger of the two sides' fundamental magnitudes (far side 0: I_op)",
}
#: Settings' defaults: minimum operate 0.3 pu, slope 1 25 % through the origin, slope 2 50 %
#: above 3 pu of restraint, second-harmonic blocking at 15 %, no fifth-harmonic blocking. Common
#: practice for numerical transformer differentials (from memory; the relay's settings govern).
DEFAULTS_SOURCE = (
    "common practice (from memory): minimum operate 0.3 pu, slopes 25 % / 50 %, breakpoint "
    "3 pu, second-harmonic blocking 15 %"
)
FILTER_WORDS = "one-cycle discrete Fourier estimate, sliding by one sample (common practice)"

_GROUP = re.compile(r"^(YN|Y|D)(yn|y|d)(\d{1,2})$")


@dataclass(frozen=True)
class VectorGroup:
    """A two-winding unit's connection: high- and low-side letters and the clock number."""

    high: str  #: "Y" or "D"
    low: str  #: "y" or "d"
    clock: int  #: the low side lags the high side by clock × 30° [-]
    text: str  #: as given


def vector_group(text: str) -> VectorGroup:
    """Parse an IEC 60076-1 vector group such as ``Dyn11``, ``YNd1`` or ``Yy0``.

    Parameters
    ----------
    text : str
        Vector group: high-side letter (Y, YN or D), low-side letter (y, yn or d) and clock
        number 0-11 [-].

    Returns
    -------
    VectorGroup
        Its letters (neutral marks dropped) and clock number.

    Raises
    ------
    ParameterError
        On another form, or a clock number the connections cannot give (even for Yy and Dd,
        odd for Yd and Dy).

    Notes
    -----
    The clock number h says the low-side voltage lags the high side's by h·30°; a star-star or
    delta-delta pair shifts by a multiple of 60°, a star-delta pair by an odd multiple of 30°.

    References
    ----------
    IEC 60076-1:2011, clause 6 and annex D (connection symbols, clock notation), from memory.
    """
    m = _GROUP.match(str(text))
    if m is None:
        raise ParameterError("vector_group", text, "e.g. Dyn11, YNd1, Yy0 (Y/YN/D, y/yn/d, 0-11)")
    high, low, clock = m.group(1)[0], m.group(2)[0], int(m.group(3))
    if clock > 11:
        raise ParameterError("vector_group", text, "clock number 0-11")
    if (clock % 2 == 1) != (high.lower() != low):
        raise ParameterError("vector_group", text, "even clock for Yy/Dd, odd for Yd/Dy")
    return VectorGroup(high, low, clock, str(text))


def compensation_matrix(angle_deg: float) -> FloatArray:
    """Real matrix that advances the positive sequence by an angle and removes the zero sequence.

    Parameters
    ----------
    angle_deg : float
        Advance of the positive sequence (the negative sequence is retarded by as much) [deg].

    Returns
    -------
    ndarray, shape (3, 3)
        M with M_ij = (2/3)·cos(θ + (j − i)·120°) [-].

    Notes
    -----
    With the Fortescue matrix A (I_abc = A·I_012, a = e^{j120°}), M = A·diag(0, e^{jθ},
    e^{−jθ})·A⁻¹, which is real: a positive-sequence set is turned by +θ, a negative-sequence set
    by −θ, a zero-sequence set removed. θ = 0 gives I − J/3 (zero-sequence removal only);
    θ = 30° gives (I_a − I_b)/√3 and its cyclic shifts, the delta connection's algebra.

    References
    ----------
    C. L. Fortescue, "Method of symmetrical co-ordinates applied to the solution of polyphase
    networks", AIEE Trans. 37 (1918); IEEE Std C37.91-2008 (compensation matrices of numerical
    relays), from memory.
    """
    th = math.radians(checks.number("angle_deg", angle_deg, "finite", math.isfinite))
    i, j = np.indices((3, 3))
    return np.asarray((2.0 / 3.0) * np.cos(th + (j - i) * 2.0 * math.pi / 3.0), dtype=np.float64)


def operate_threshold(
    restraint_pu: npt.ArrayLike,
    minimum_pu: float,
    slope_1: float,
    slope_2: float,
    slope_1_from_pu: float,
    breakpoint_pu: float,
) -> FloatArray:
    """Operate current above which a dual-slope percentage differential picks up.

    Parameters
    ----------
    restraint_pu : array_like
        Restraint current [pu of tap].
    minimum_pu : float
        Minimum operate current [pu of tap].
    slope_1, slope_2 : float
        Slopes as fractions (0.25 is 25 %) [-].
    slope_1_from_pu : float
        Restraint where the slope-1 line crosses zero (0: through the origin) [pu of tap].
    breakpoint_pu : float
        Restraint where slope 2 takes over [pu of tap].

    Returns
    -------
    ndarray
        Threshold [pu of tap].

    Notes
    -----
    I_thr = max(I_min, s1·(I_r − b1)) for I_r <= b2, max(I_min, s1·(b2 − b1) + s2·(I_r − b2))
    above; the element picks up where I_op > I_thr.

    References
    ----------
    IEEE Std C37.91-2008, percentage-differential characteristic (from memory); common practice.
    """
    ir = np.asarray(restraint_pu, dtype=float)
    line = np.where(
        ir <= breakpoint_pu,
        slope_1 * (ir - slope_1_from_pu),
        slope_1 * (breakpoint_pu - slope_1_from_pu) + slope_2 * (ir - breakpoint_pu),
    )
    return np.asarray(np.maximum(minimum_pu, line), dtype=np.float64)


def one_cycle_phasors(
    current: npt.ArrayLike, samples_per_cycle: int, orders: tuple[int, ...] = (1, 2, 5)
) -> ComplexArray:
    """One-cycle discrete Fourier estimates over a window sliding one sample at a time.

    Parameters
    ----------
    current : array_like, shape (..., n)
        Uniformly sampled current, the first sample at the closing [A or pu].
    samples_per_cycle : int
        Samples per cycle N, at least 8 [-].
    orders : tuple of int
        Harmonic orders h, each in [1, N/2) [-].

    Returns
    -------
    ndarray, shape (len(orders), ..., n)
        Peak phasor of each order for the window ending at each sample, zeros before the first
        sample [same unit as ``current``].

    Raises
    ------
    ParameterError
        On too few samples per cycle or an order out of range.

    Notes
    -----
    X_h[m] = (2/N)·Σ_{k=0}^{N−1} x[m − N + 1 + k]·e^{−j2πhk/N}; for a window holding whole
    cycles of a periodic signal this is exactly the amplitude of harmonic h.

    References
    ----------
    A. G. Phadke and J. S. Thorp, *Computer Relaying for Power Systems*, Wiley, ch. 3
    (full-cycle Fourier algorithm), from memory.
    """
    n = checks.integer("samples_per_cycle", samples_per_cycle, 8, 100_000)
    for h in orders:
        checks.integer("orders", h, 1, (n - 1) // 2)
    x = np.asarray(current, dtype=float)
    pad = np.concatenate((np.zeros((*x.shape[:-1], n - 1)), x), axis=-1)
    windows = np.lib.stride_tricks.sliding_window_view(pad, n, axis=-1)
    k = np.arange(n)
    basis = (2.0 / n) * np.exp(-2j * np.pi * np.outer(k, orders) / n)
    out = windows @ basis  # (..., n_samples, n_orders)
    return np.asarray(np.moveaxis(out, -1, 0), dtype=np.complex128)


@dataclass(frozen=True)
class Differential:
    """A transformer differential element on the unit being energised.

    Slopes and levels are percentages; currents in per unit of the relay's tap on the energised
    side, ``base_current_a`` primary amperes making 1 pu (None: the energised side's rated line
    current). ``energized_side`` and ``reference_side`` are "high" or "low" of ``vector_group``;
    the side that is not the reference is turned by the clock angle.
    """

    name: str
    vector_group: str = "Dyn1"
    energized_side: Side = "high"
    reference_side: Side = "high"
    base_current_a: float | None = None
    minimum_operate_pu: float = 0.3
    slope_1_percent: float = 25.0
    slope_2_percent: float = 50.0
    slope_1_from_pu: float = 0.0
    breakpoint_pu: float = 3.0
    second_harmonic_percent: float = 15.0
    fifth_harmonic_percent: float | None = None
    harmonic_logic: HarmonicLogic = "own_phase"
    restraint: RestraintRule = "average"
    unrestrained_pu: float | None = None

    def __post_init__(self) -> None:
        vector_group(self.vector_group)
        for name in ("energized_side", "reference_side"):
            if getattr(self, name) not in ("high", "low"):
                raise ParameterError(name, getattr(self, name), "high or low")
        if self.base_current_a is not None:
            checks.positive("base_current_a", self.base_current_a)
        checks.in_range("minimum_operate_pu", self.minimum_operate_pu, 0.0, 5.0)
        checks.in_range("slope_1_percent", self.slope_1_percent, 0.0, 100.0, open_low=False)
        checks.in_range("slope_2_percent", self.slope_2_percent, 0.0, 200.0, open_low=False)
        checks.number("slope_1_from_pu", self.slope_1_from_pu, "in [0, 5]", lambda x: 0 <= x <= 5)
        checks.in_range("breakpoint_pu", self.breakpoint_pu, 0.0, 50.0)
        checks.in_range("second_harmonic_percent", self.second_harmonic_percent, 0.0, 100.0)
        if self.fifth_harmonic_percent is not None:
            checks.in_range("fifth_harmonic_percent", self.fifth_harmonic_percent, 0.0, 100.0)
        if self.harmonic_logic not in HARMONIC_LOGICS:
            raise ParameterError("harmonic_logic", self.harmonic_logic, ", ".join(HARMONIC_LOGICS))
        if self.restraint not in RESTRAINT_WORDS:
            raise ParameterError("restraint", self.restraint, "average or maximum")
        if self.unrestrained_pu is not None:
            checks.in_range("unrestrained_pu", self.unrestrained_pu, 1.0, 100.0)

    #: The device's kind as the answers name it.
    kind: ClassVar[str] = "differential"
    #: False: a differential has no time-current curve; it is judged on the waveform [-].
    has_curve: ClassVar[bool] = False

    @property
    def clearing_curve(self) -> str | None:
        """Never returns: a differential has no clearing curve [-].

        Raises
        ------
        ParameterError
            Always: the element is judged on the waveform, not on a time-current curve.
        """
        raise self._no_curve()

    def trip_band(
        self, current_a: npt.ArrayLike, opening_time_s: float | None = None
    ) -> fuse_breaker_curves.TripBand:
        """A differential has no trip band; asking for one is an error.

        Parameters
        ----------
        current_a : array_like
            rms current, not read [A].
        opening_time_s : float or None
            Breaker opening time, not read [s].

        Returns
        -------
        core.protection.fuse_breaker_curves.TripBand
            Never returned.

        Raises
        ------
        ParameterError
            Always, naming the device: only devices with a time-current curve have a band.

        Notes
        -----
        The element is judged on the sampled waveform (:func:`differential_response`).

        References
        ----------
        IEEE Std C37.91-2008 (from memory).
        """
        raise self._no_curve()

    def _no_curve(self) -> ParameterError:
        return ParameterError("device", self.name, "a device with a time-current curve")

    def assumption_notes(self) -> tuple[Assumption, ...]:
        """What the differential's judgement assumes: its filter and its restraint rule.

        Returns
        -------
        tuple of core.transformer.circuit_model.Assumption
            The phasor filter (:data:`FILTER_WORDS`, common practice) and the restraint rule
            (setting).

        Notes
        -----
        No formula: the words of :data:`FILTER_WORDS` and :data:`RESTRAINT_WORDS`.

        References
        ----------
        Phadke and Thorp, *Computer Relaying for Power Systems*, ch. 3 (from memory); IEEE Std
        C37.91-2008 (from memory).
        """
        words = RESTRAINT_WORDS[self.restraint]
        return (
            Assumption(f"{self.name}.filter", FILTER_WORDS, "-", DEFAULTS_SOURCE),
            Assumption(f"{self.name}.restraint", words, "-", "setting"),
        )


@dataclass(frozen=True)
class Verdict:
    """The element under one harmonic logic over the whole record."""

    logic: str
    operates: bool
    time_s: float | None  #: end of the first window it operates on [s]
    cycle: int | None  #: that window's cycle, 1 for the first [-]
    phase: str | None  #: the phase element that operates first
    by_unrestrained: bool  #: the unrestrained element operates first
    margin_pp: float | None  #: min over picked-up windows of (ratio − level); None: no pickup
    margin_time_s: float | None  #: where it is tightest [s]
    margin_phase: str | None  #: the phase where it is tightest
    margin_ratio: float  #: min over all windows of max(I_thr/I_op, ratio/level) [-]
    margin_ratio_time_s: float  #: where that is smallest [s]
    margin_ratio_phase: str


@dataclass(frozen=True)
class DifferentialResult:
    """The element through the energisation: a per-cycle table and the verdicts.

    Table arrays have shape (3, n_cycles): values of the window ending at each cycle's end.
    """

    device: str
    phases: tuple[str, ...]
    base_current_a: float  #: 1 pu of the relay's tap, primary amperes [A]
    compensation: FloatArray  #: matrix applied to the energised side's line currents [-]
    cycle_end_s: FloatArray  #: [s]
    operate_pu: FloatArray  #: |I_1| of the compensated current [pu of tap]
    restraint_pu: FloatArray  #: [pu of tap]
    threshold_pu: FloatArray  #: percentage characteristic at that restraint [pu of tap]
    second_harmonic_percent: FloatArray  #: own phase |I_2|/|I_1|; nan where I_1 = 0 [%]
    fifth_harmonic_percent: FloatArray  #: own phase |I_5|/|I_1| [%]
    operates_in_cycle: npt.NDArray[np.bool_]  #: chosen logic operates in some window of it
    min_second_harmonic_percent: FloatArray  #: per phase, over windows where it picks up [%]
    verdict: Verdict  #: under the chosen logic
    by_logic: tuple[Verdict, ...]  #: under each of :data:`HARMONIC_LOGICS`
    restraint_words: str
    filter_words: str


def _uniform(time_s: FloatArray, frequency_hz: float) -> int:
    dt = float(time_s[1] - time_s[0])
    if dt <= 0.0 or np.any(np.abs(np.diff(time_s) - dt) > 1e-6 * dt):
        raise ParameterError("time_s", dt, "uniform increasing samples")
    n = 1.0 / (frequency_hz * dt)
    if abs(n - round(n)) > 1e-6 * n or round(n) < 8:
        raise ParameterError("time_s", n, "a whole number (>= 8) of samples per cycle")
    return round(n)


def _ratios(h1: FloatArray, hk: FloatArray, logic: HarmonicLogic) -> FloatArray:  # (3, n) percent
    mag = np.abs(hk).sum(axis=0, keepdims=True) if logic == "summed_phases" else np.abs(hk)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.asarray(np.where(h1 > 0.0, 100.0 * mag / h1, np.nan), dtype=np.float64)


def _verdict(
    dev: Differential,
    logic: HarmonicLogic,
    t: FloatArray,
    ph: ComplexArray,
    picked: npt.NDArray[np.bool_],
    thr_ratio: FloatArray,
    phases: tuple[str, ...],
    frequency_hz: float,
) -> tuple[Verdict, npt.NDArray[np.bool_]]:
    i1 = np.abs(ph[0])
    levels = [(1, dev.second_harmonic_percent)]
    if dev.fifth_harmonic_percent is not None:
        levels.append((2, dev.fifth_harmonic_percent))
    eff_pp = np.full(i1.shape, -np.inf)
    eff_ratio = np.zeros(i1.shape)
    for k, level in levels:
        r = _ratios(i1, ph[k], logic)
        eff_pp = np.fmax(eff_pp, r - level)
        eff_ratio = np.fmax(eff_ratio, r / level)
    if logic == "any_phase":
        eff_pp = np.broadcast_to(np.nanmax(eff_pp, axis=0), eff_pp.shape).copy()
        eff_ratio = np.broadcast_to(np.nanmax(eff_ratio, axis=0), eff_ratio.shape).copy()
    blocked = picked & (eff_pp >= 0.0)
    ratio = np.fmax(thr_ratio, eff_ratio)  # operating needs both: pick-up and no blocking
    over = np.zeros(i1.shape, dtype=bool)
    if dev.unrestrained_pu is not None:
        over = i1 > dev.unrestrained_pu
        with np.errstate(divide="ignore"):
            ratio = np.fmin(ratio, np.where(i1 > 0.0, dev.unrestrained_pu / i1, np.inf))
    ops = (picked & ~blocked) | over
    hit = np.flatnonzero(ops.any(axis=0))
    time: float | None = None
    cycle: int | None = None
    phase: str | None = None
    first_over = False
    if hit.size:
        m = int(hit[0])
        p = int(np.argmax(np.where(ops[:, m], -np.nan_to_num(eff_pp[:, m], nan=0.0), -np.inf)))
        time, phase, first_over = float(t[m]), phases[p], bool(over[p, m])
        cycle = max(1, math.ceil(time * frequency_hz - 1e-9))
    pp = np.where(picked, eff_pp, np.inf)
    pp = np.where(np.isnan(pp), np.inf, pp)
    kp = np.unravel_index(int(np.argmin(pp)), pp.shape)
    has = bool(np.isfinite(pp[kp]))
    kr = np.unravel_index(int(np.argmin(ratio)), ratio.shape)
    verdict = Verdict(
        logic,
        bool(hit.size),
        time,
        cycle,
        phase,
        first_over,
        float(pp[kp]) if has else None,
        float(t[kp[1]]) if has else None,
        phases[int(kp[0])] if has else None,
        float(ratio[kr]),
        float(t[kr[1]]),
        phases[int(kr[0])],
    )
    return verdict, ops


def differential_response(
    device: Differential,
    time_s: npt.ArrayLike,
    line_current_a: npt.ArrayLike,
    frequency_hz: float,
    rated_current_a: float,
) -> DifferentialResult:
    """What a differential element computes through the energisation of its own unit.

    Parameters
    ----------
    device : Differential
        The element's settings [-].
    time_s : array_like, shape (n,)
        Uniform sample times from the closing, a whole number of samples per cycle [s].
    line_current_a : array_like, shape (3, n)
        Energised side's line currents (the far side carries none) [A].
    frequency_hz : float
        System frequency [Hz].
    rated_current_a : float
        Energised side's rated line current, 1 pu when ``device.base_current_a`` is None [A].

    Returns
    -------
    DifferentialResult
        Per-cycle table, the verdict under the chosen harmonic logic and under each.

    Raises
    ------
    ParameterError
        On bad samples or settings.

    Notes
    -----
    i_d = M·i_line / I_base, M = :func:`compensation_matrix` (θ = +h·30° when the energised side
    is the low side and the high side the reference, −h·30° the other way round, 0 when the
    energised side is the reference). Phasors by :func:`one_cycle_phasors`; I_op = |I_1|,
    I_r = I_op/2 (average) or I_op (maximum); pick-up I_op > I_thr(I_r)
    (:func:`operate_threshold`); blocked where the logic's ratio >= its level (second, or fifth
    when set); operates where picked up and not blocked, or above the unrestrained setting.
    The margin in percentage points is min over picked-up windows of (ratio − level); the margin
    ratio min over all windows of max(I_thr/I_op, ratio/level) (min with I_unr/I_op).

    References
    ----------
    IEEE Std C37.91-2008 (percentage differential, harmonic restraint and blocking, compensation),
    from memory; Phadke and Thorp, *Computer Relaying for Power Systems* (full-cycle Fourier),
    from memory.
    """
    f = checks.number("frequency_hz", frequency_hz, "in [1, 1000] Hz", lambda x: 1 <= x <= 1000)
    t = checks.finite_array("time_s", time_s, (1,))
    i = checks.finite_array("line_current_a", line_current_a, (2,))
    if t.size < 3 or i.shape != (3, t.size):
        raise ParameterError("line_current_a", i.shape, f"(3, {t.size}): three line currents")
    n = _uniform(t, f)
    base = device.base_current_a or checks.positive("rated_current_a", rated_current_a)
    group = vector_group(device.vector_group)
    angle = 0.0
    if device.energized_side != device.reference_side:
        angle = 30.0 * group.clock * (1.0 if device.energized_side == "low" else -1.0)
    m = compensation_matrix(angle)
    ph = one_cycle_phasors(m @ i / base, n)
    i1 = np.abs(ph[0])
    restraint = i1 / 2.0 if device.restraint == "average" else i1
    thr = operate_threshold(
        restraint,
        device.minimum_operate_pu,
        device.slope_1_percent / 100.0,
        device.slope_2_percent / 100.0,
        device.slope_1_from_pu,
        device.breakpoint_pu,
    )
    picked = i1 > thr
    with np.errstate(divide="ignore"):
        thr_ratio = np.where(i1 > 0.0, thr / i1, np.inf)
    phases = ("A", "B", "C")
    verdicts, ops_of = [], {}
    for logic in HARMONIC_LOGICS:
        v, ops = _verdict(device, logic, t, ph, picked, thr_ratio, phases, f)
        verdicts.append(v)
        ops_of[logic] = ops
    n_cyc = t.size // n
    ends = np.arange(1, n_cyc + 1) * n - 1
    chosen_ops = ops_of[device.harmonic_logic][:, : n_cyc * n]
    in_cycle = np.asarray(chosen_ops.reshape(3, n_cyc, n).any(axis=2), dtype=np.bool_)
    with np.errstate(divide="ignore", invalid="ignore"):
        r2 = np.where(i1 > 0.0, 100.0 * np.abs(ph[1]) / i1, np.nan)
        r5 = np.where(i1 > 0.0, 100.0 * np.abs(ph[2]) / i1, np.nan)
    r2_picked = np.where(picked, r2, np.inf)
    low = r2_picked.min(axis=1)
    chosen = verdicts[HARMONIC_LOGICS.index(device.harmonic_logic)]
    return DifferentialResult(
        device.name,
        phases,
        float(base),
        m,
        t[ends],
        i1[:, ends],
        restraint[:, ends],
        thr[:, ends],
        r2[:, ends],
        r5[:, ends],
        in_cycle,
        np.where(np.isfinite(low), low, np.nan),
        chosen,
        tuple(verdicts),
        RESTRAINT_WORDS[device.restraint],
        FILTER_WORDS,
    )
