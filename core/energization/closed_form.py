"""Closed-form inrush estimates: the first peak and the per-cycle decay of the flux offset.

Both rest on the two-slope core: below the knee the magnetising current is neglected, above it the
winding behaves as its air-core inductance (plus the source inductance) in series with the
circuit resistance. Flux is in per unit of the nominal peak lambda_N; the voltage is
v = sqrt(2)*V*sin(omega*t + alpha) from the closing instant.

Validity (stated with every result by the service): the core saturates deeply only once per cycle
(one polarity), the resistance is small against the saturated reactance (R/X below about 0.5;
the closed forms lose accuracy above), the unsaturated magnetising current is negligible, and
for three-phase units each phase is treated as a single-phase circuit.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike, NDArray

from core.errors import ParameterError

FloatArray = NDArray[np.float64]

__all__ = [
    "ENVELOPE_VALIDITY_R_OVER_X",
    "first_peak_wang",
    "flux_offset_pu",
    "flux_offsets_holcomb",
    "line_first_peaks",
    "peak_envelope_holcomb",
    "worst_line_first_peak",
]

# Saturated-loop R/X above which the closed-form per-cycle peaks after the first deviate from the
# exact two-slope solution by more than about 10 %, measured in
# tests/references/test_piecewise_reference.py (b_R 0.8, b_S 1.2, closing at a voltage zero):
# worst deviation over cycles 1-5 of +4 % at R/X 0.05, -7 % at 0.1, -10 % at 0.12, -15 % at 0.15,
# -40 % at 0.27, -82 % at 0.35 and -100 % (no saturation left after the first cycle) at 0.53;
# the first peak is over-estimated by 13 % at 0.1. The threshold is this project's choice.
ENVELOPE_VALIDITY_R_OVER_X = 0.1


def _amplitude(
    voltage_rms_v: ArrayLike,
    frequency_hz: float,
    inductance_h: ArrayLike,
    resistance_ohm: ArrayLike,
) -> FloatArray:
    v = np.asarray(voltage_rms_v, dtype=float)
    L = np.asarray(inductance_h, dtype=float)
    r = np.asarray(resistance_ohm, dtype=float)
    if not (math.isfinite(frequency_hz) and frequency_hz > 0.0):
        raise ParameterError("frequency_hz", frequency_hz, "a finite number > 0")
    if np.any(~np.isfinite(v)) or np.any(v <= 0.0):
        raise ParameterError("voltage_rms_v", v.tolist(), "finite values > 0")
    if np.any(~np.isfinite(L)) or np.any(L <= 0.0):
        raise ParameterError("inductance_h", L.tolist(), "finite values > 0")
    if np.any(~np.isfinite(r)) or np.any(r < 0.0):
        raise ParameterError("resistance_ohm", r.tolist(), "finite values >= 0")
    x = 2.0 * math.pi * frequency_hz * L
    out: FloatArray = math.sqrt(2.0) * v / np.hypot(x, r)
    return out


def first_peak_wang(
    voltage_rms_v: ArrayLike,
    frequency_hz: float,
    inductance_h: ArrayLike,
    resistance_ohm: ArrayLike,
    residual_flux_pu: ArrayLike,
    saturation_flux_pu: ArrayLike,
) -> FloatArray:
    """Worst-case first inrush peak by the closed form of Wang, Abdulsalam and Xu.

    Parameters
    ----------
    voltage_rms_v : array_like
        Rms voltage across the energised winding [V].
    frequency_hz : float
        Frequency [Hz].
    inductance_h : array_like
        Saturated loop inductance: air-core inductance of the winding plus source inductance [H].
    resistance_ohm : array_like
        Loop resistance: winding plus source [ohm].
    residual_flux_pu : array_like
        Residual flux aligned with the first flux excursion, B_R/B_N [pu of nominal].
    saturation_flux_pu : array_like
        Knee of the two-slope curve, B_S/B_N [pu of nominal].

    Returns
    -------
    ndarray
        First peak [A]; 0 where the flux never reaches the knee.

    Notes
    -----
    Closing at a voltage zero with the residual flux in the direction of the first excursion::

        I_pk = sqrt(2)*V / sqrt((omega*L)^2 + R^2) * (2*B_N + B_R - B_S) / B_N

    The flux rises from B_R to B_R + 2*B_N; above B_S the current follows the saturated slope.
    With R = 0 the formula is exact for the two-slope curve (less the knee current
    lambda_S/L_m, which it neglects).

    References
    ----------
    Y. Wang, S. G. Abdulsalam, W. Xu, "Analytical formula to estimate the maximum inrush current,"
    IEEE Trans. Power Delivery 23(2), pp. 1266-1268, 2008 (from memory).
    """
    amp = _amplitude(voltage_rms_v, frequency_hz, inductance_h, resistance_ohm)
    br = np.asarray(residual_flux_pu, dtype=float)
    bs = np.asarray(saturation_flux_pu, dtype=float)
    if np.any(~np.isfinite(bs)) or np.any(bs <= 0.0):
        raise ParameterError("saturation_flux_pu", bs.tolist(), "finite values > 0")
    out: FloatArray = amp * np.maximum(2.0 + br - bs, 0.0)
    return out


def flux_offset_pu(residual_flux_pu: ArrayLike, closing_angle_deg: ArrayLike) -> FloatArray:
    """Centre of the flux swing after closing at a given voltage angle.

    Parameters
    ----------
    residual_flux_pu : array_like
        Residual flux at closing [pu of nominal].
    closing_angle_deg : array_like
        Angle alpha of v = sqrt(2)*V*sin(omega*t + alpha) at the closing instant [deg].

    Returns
    -------
    ndarray
        Flux-swing centre d = b_R + cos(alpha) [pu of nominal]: the flux then swings between
        d - 1 and d + 1 (for R = 0).

    Notes
    -----
    lambda(t) = lambda_R + lambda_N*(cos(alpha) - cos(omega*t + alpha)), the integral of the
    voltage from the closing instant. d = 0 (no inrush) when cos(alpha) = -b_R: the controlled
    closing instant of Brunke & Froehlich, IEEE Trans. Power Delivery 16(2), 2001 (from memory).
    """
    br = np.asarray(residual_flux_pu, dtype=float)
    alpha = np.deg2rad(np.asarray(closing_angle_deg, dtype=float))
    out: FloatArray = br + np.cos(alpha)
    return out


def peak_envelope_holcomb(
    voltage_rms_v: float,
    frequency_hz: float,
    inductance_h: float,
    resistance_ohm: float,
    flux_offset: float,
    saturation_flux_pu: float,
    n_cycles: int,
) -> FloatArray:
    """Per-cycle inrush peaks from the resistive decay of the flux offset.

    Parameters
    ----------
    voltage_rms_v : float
        Rms voltage across the energised winding [V].
    frequency_hz : float
        Frequency [Hz].
    inductance_h : float
        Saturated loop inductance (air-core plus source) [H].
    resistance_ohm : float
        Loop resistance [ohm].
    flux_offset : float
        Centre of the first flux swing, see :func:`flux_offset_pu` [pu of nominal].
    saturation_flux_pu : float
        Knee B_S/B_N [pu of nominal].
    n_cycles : int
        Number of cycles [-].

    Returns
    -------
    ndarray, shape (n_cycles,)
        Peak of each cycle [A] (0 once the flux no longer reaches the knee).

    Notes
    -----
    With the swing centre d_n of cycle n (d_0 = |b_R + cos(alpha)|), the core saturates from
    angle theta_n to 2*pi - theta_n, cos(theta_n) = clip(d_n - b_S, -1, 1); there
    i = I_A*(cos(theta_n) - cos(phi)) with I_A = sqrt(2)*V/sqrt(X^2 + R^2), so the peak is
    I_A*(1 + cos(theta_n)) = I_A*(d_n + 1 - b_S). The resistive drop over the saturated interval
    lowers the centre by Delta d = (R/X) * 2 * [sin(theta_n) + (pi - theta_n)*(d_n - b_S)] each
    cycle (the integral of R*i over the cycle divided by lambda_N; theta_n = 0 when the core
    stays saturated all cycle). The unsaturated magnetising current and the drop it
    causes are neglected.

    References
    ----------
    T. R. Specht, "Transformer magnetizing inrush current," AIEE Trans. 70, 1951; J. F. Holcomb,
    "Distribution transformer magnetizing inrush current," AIEE Trans. PAS 80, 1961
    (attributions from memory; the recurrence is derived in these Notes).
    """
    amp = float(_amplitude(voltage_rms_v, frequency_hz, inductance_h, resistance_ohm))
    x = 2.0 * math.pi * frequency_hz * inductance_h
    sign = -1.0 if flux_offset < 0.0 else 1.0
    d = sign * flux_offsets_holcomb(x, resistance_ohm, flux_offset, saturation_flux_pu, n_cycles)
    out: FloatArray = amp * np.maximum(1.0 + d - float(saturation_flux_pu), 0.0)
    return out


def flux_offsets_holcomb(
    reactance_ohm: float,
    resistance_ohm: float,
    flux_offset: float,
    saturation_flux_pu: float,
    n_cycles: int,
) -> FloatArray:
    """Centre of the flux swing in each cycle, decayed by the resistive drop (signed).

    Parameters
    ----------
    reactance_ohm : float
        Saturated-loop reactance omega*(L_air + L_s) [ohm].
    resistance_ohm : float
        Loop resistance [ohm].
    flux_offset : float
        Centre of the first flux swing, see :func:`flux_offset_pu` [pu of nominal].
    saturation_flux_pu : float
        Knee B_S/B_N [pu of nominal].
    n_cycles : int
        Number of cycles [-].

    Returns
    -------
    ndarray, shape (n_cycles,)
        sign(d_0)*|d|_n [pu of nominal]; constant once the flux no longer reaches the knee. A
        loop so resistive that one cycle's drop overshoots leaves |d|_n negative, as the
        recurrence gives it (the peak of such a cycle is 0 for b_S >= 1).

    Notes
    -----
    The recurrence of :func:`peak_envelope_holcomb` on |d|:
    |d|_(n+1) = |d|_n - (R/X)*2*[sin(theta_n) + (pi - theta_n)*(|d|_n - b_S)],
    cos(theta_n) = clip(|d|_n - b_S, -1, 1).

    References
    ----------
    As :func:`peak_envelope_holcomb`.
    """
    if not (isinstance(n_cycles, int) and 1 <= n_cycles <= 100_000):
        raise ParameterError("n_cycles", n_cycles, "an integer in [1, 100000]")
    sign = -1.0 if flux_offset < 0.0 else 1.0
    d = abs(float(flux_offset))
    bs = float(saturation_flux_pu)
    out = np.zeros(n_cycles)
    for n in range(n_cycles):
        out[n] = sign * d
        c = d - bs
        if c <= -1.0:
            continue
        theta = math.acos(min(c, 1.0))
        d -= (resistance_ohm / reactance_ohm) * 2.0 * (math.sin(theta) + (math.pi - theta) * c)
    return out


def _winding_current_pu(
    theta: FloatArray, d: FloatArray, beta: FloatArray, bs: float
) -> FloatArray:
    # closed-form winding current / I_A at phase angle theta: flux d - cos(theta + beta)
    x = d - np.cos(theta + beta)
    out: FloatArray = np.maximum(x - bs, 0.0) + np.minimum(x + bs, 0.0)
    return out


def line_first_peaks(
    amplitude_a: float,
    flux_offset_pu: ArrayLike,
    winding_phase_deg: ArrayLike,
    saturation_flux_pu: float,
    delta: bool,
) -> FloatArray:
    """Closed-form peak of each line current over a cycle, from the windings' closed forms.

    Parameters
    ----------
    amplitude_a : float
        I_A = sqrt(2)*V_w/sqrt(X^2 + R^2) of the saturated loop [A].
    flux_offset_pu : array_like, shape (..., n_windings)
        Centre d_w of each winding's flux swing [pu of nominal].
    winding_phase_deg : array_like, shape (..., n_windings)
        beta_w: winding voltage sqrt(2)*V_w*sin(omega*t + beta_w) [deg].
    saturation_flux_pu : float
        Knee B_S/B_N [pu of nominal].
    delta : bool
        Delta windings AB, BC, CA (line j = winding j - winding j-1); otherwise line = winding [-].

    Returns
    -------
    ndarray, shape (..., n_lines)
        Largest |line current| over a cycle [A].

    Notes
    -----
    Each winding's flux is d_w - cos(theta + beta_w) (theta = omega*t; R neglected in the
    shape, as in Wang's formula) and its current, on the two-slope curve without magnetising
    current, I_A*[(x - b_S)^+ + (x + b_S)^-]. A delta's line current is the difference of the
    two winding currents meeting at its terminal (Kirchhoff's current law: i_a = c_ab - c_ca).
    When only one of them saturates the other carries only magnetising current, neglected here,
    so the line current equals that winding's current (not sqrt(3) times it: the rated line
    current is sqrt(3) times the rated winding current, the inrush of one winding is not); when
    both saturate in opposite directions within the same interval, which a residual flux
    pattern such as 0.8/-0.4/-0.4 pu makes common, their currents add. The line current is
    piecewise A + B*cos(theta) + C*sin(theta) between the windings' knee crossings,
    theta = +-arccos(d_w -+ b_S) - beta_w, so its largest |value| is at a crossing or at a
    stationary point of a piece: theta = -beta_w or pi - beta_w (one winding saturated) or
    pi/2 - (beta_1 + beta_2)/2 + k*pi (both); all are evaluated, which is exact.

    References
    ----------
    Wang, Abdulsalam & Xu, IEEE Trans. Power Delivery 23(2), 2008 (the winding's closed form,
    from memory); the line combination is Kirchhoff's current law, derived in these Notes.
    """
    d = np.asarray(flux_offset_pu, dtype=float)
    beta = np.deg2rad(np.asarray(winding_phase_deg, dtype=float))
    d, beta = np.broadcast_arrays(d, beta)
    bs = float(saturation_flux_pu)
    other_d = np.roll(d, 1, axis=-1) if delta else d
    other_b = np.roll(beta, 1, axis=-1) if delta else beta
    cands = [-beta, math.pi - beta]
    for dd, bb in ((d, beta), (other_d, other_b)):
        for level in (dd - bs, dd + bs):
            a = np.arccos(np.clip(level, -1.0, 1.0))
            cands += [a - bb, -a - bb]
    if delta:
        mid = 0.5 * math.pi - 0.5 * (beta + other_b)
        cands += [-other_b, math.pi - other_b, mid, mid + math.pi]
    theta = np.stack(cands, axis=-1)
    cur = _winding_current_pu(theta, d[..., None], beta[..., None], bs)
    if delta:
        cur = cur - _winding_current_pu(theta, other_d[..., None], other_b[..., None], bs)
    out: FloatArray = amplitude_a * np.max(np.abs(cur), axis=-1)
    return out


def worst_line_first_peak(
    amplitude_a: float,
    residual_flux_pu: ArrayLike,
    winding_shift_deg: ArrayLike,
    closing_delay_deg: ArrayLike,
    saturation_flux_pu: float,
    delta: bool,
) -> tuple[float, float, int]:
    """Largest closed-form line peak over the closing angle, for given residual fluxes.

    Parameters
    ----------
    amplitude_a : float
        I_A of the saturated loop [A].
    residual_flux_pu : array_like, shape (n_windings,)
        Residual flux of each winding [pu of nominal].
    winding_shift_deg : array_like, shape (n_windings,)
        Angle of each winding's voltage relative to phase A's [deg].
    closing_delay_deg : array_like, shape (n_windings,)
        omega times the instant each winding is energised [deg].
    saturation_flux_pu : float
        Knee B_S/B_N [pu of nominal].
    delta : bool
        Delta windings (see :func:`line_first_peaks`) [-].

    Returns
    -------
    tuple
        (peak [A], phase-A closing angle in [0, 360) [deg], index of the line).

    Notes
    -----
    With the phase-A angle alpha at t = 0, beta_w = alpha + shift_w and
    d_w = b_R,w + cos(beta_w + delay_w); :func:`line_first_peaks` is maximised over alpha on a
    0.25-degree grid, then twice locally (0.0025 and 2.5e-5 degrees). For windings that are
    their own lines this is Wang's worst case with the largest |b_R| aligned.
    """
    br = np.asarray(residual_flux_pu, dtype=float)
    shift = np.asarray(winding_shift_deg, dtype=float)
    delay = np.asarray(closing_delay_deg, dtype=float)

    def peaks(alpha: NDArray[np.floating]) -> FloatArray:
        beta = alpha[:, None] + shift[None, :]
        d = br[None, :] + np.cos(np.deg2rad(beta + delay[None, :]))
        return line_first_peaks(amplitude_a, d, beta, saturation_flux_pu, delta)

    grid = np.arange(0.0, 360.0, 0.25)
    best = float(grid[int(np.argmax(peaks(grid).max(axis=1)))])
    for step in (0.0025, 2.5e-5):
        grid = best + np.arange(-100, 101, dtype=float) * step
        best = float(grid[int(np.argmax(peaks(grid).max(axis=1)))])
    at = peaks(np.array([best]))[0]
    line = int(np.argmax(at))
    return float(at[line]), float(np.mod(best, 360.0)), line
