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

__all__ = ["first_peak_wang", "flux_offset_pu", "peak_envelope_holcomb"]


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
    if not (isinstance(n_cycles, int) and 1 <= n_cycles <= 100_000):
        raise ParameterError("n_cycles", n_cycles, "an integer in [1, 100000]")
    amp = float(_amplitude(voltage_rms_v, frequency_hz, inductance_h, resistance_ohm))
    x = 2.0 * math.pi * frequency_hz * inductance_h
    bs = float(saturation_flux_pu)
    d = abs(float(flux_offset))
    peaks = np.zeros(n_cycles)
    for n in range(n_cycles):
        c = d - bs
        if c <= -1.0:
            break
        theta = math.acos(min(c, 1.0))
        peaks[n] = amp * (1.0 + c)
        d -= (resistance_ohm / x) * 2.0 * (math.sin(theta) + (math.pi - theta) * c)
    return peaks
