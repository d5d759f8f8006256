"""Magnetising characteristics: the flux-linkage / current curve of a transformer core.

The curve maps the flux linkage of the energised winding, lambda [Wb-turn], to the magnetising
current i [A]. It is single-valued and odd (i(-lambda) = -i(lambda)): hysteresis and core loss are
not modelled, which is the usual simplification for inrush peaks because the peak is set by the
saturated (air-core) slope, not by the loop's shape. A residual flux is represented by starting the
flux at lambda_r, where the curve gives a magnetising-level current.

Three kinds are provided:

* :class:`PiecewiseLinearCurve` -- the two-slope curve (:func:`two_slope`), a caller-given table
  (:func:`from_table`) and the curve converted from open-circuit test data
  (:func:`from_open_circuit_rms`);
* :class:`SmoothKneeCurve` -- a saturating curve with a continuous slope: the two-slope curve with
  its knee rounded by a hyperbola (:func:`smooth_knee`).

Beyond the last point every curve continues with a final slope, normally the air-core inductance
of the energised winding.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from core import checks
from core.errors import ParameterError

FloatArray = NDArray[np.float64]
#: Largest segment inductance of a caller's table [H]: a thousand times the largest unsaturated
#: inductance the two-slope and smooth curves accept at the API (1e6 H); steeper segments are
#: a table's rounding, not a winding (modelling choice), and would overflow the arithmetic.
MAX_TABLE_INDUCTANCE_H = 1e9

__all__ = [
    "PiecewiseLinearCurve",
    "SmoothKneeCurve",
    "from_open_circuit_rms",
    "from_table",
    "rms_current_sinusoidal_flux",
    "smooth_knee",
    "two_slope",
]


@dataclass(frozen=True)
class PiecewiseLinearCurve:
    """Odd piecewise-linear magnetising curve.

    Attributes
    ----------
    flux_wb : ndarray
        Breakpoints of |lambda|, strictly increasing, the first one 0 [Wb-turn].
    current_a : ndarray
        Current at each breakpoint, strictly increasing, the first one 0 [A].
    final_inductance_h : float
        Slope d(lambda)/di beyond the last breakpoint [H].
    """

    flux_wb: FloatArray
    current_a: FloatArray
    final_inductance_h: float

    def current(self, flux_wb: ArrayLike) -> FloatArray:
        """Magnetising current for a flux linkage.

        Parameters
        ----------
        flux_wb : array_like
            Flux linkage [Wb-turn].

        Returns
        -------
        ndarray
            Current [A], same shape as ``flux_wb``.
        """
        lam = np.asarray(flux_wb, dtype=float)
        x = np.abs(lam)
        inside = np.interp(x, self.flux_wb, self.current_a)
        beyond = self.current_a[-1] + (x - self.flux_wb[-1]) / self.final_inductance_h
        out: FloatArray = np.sign(lam) * np.where(x > self.flux_wb[-1], beyond, inside)
        return out

    def slope(self, flux_wb: ArrayLike) -> FloatArray:
        """Differential reciprocal inductance di/d(lambda) [1/H] at a flux linkage [Wb-turn]."""
        x = np.abs(np.asarray(flux_wb, dtype=float))
        seg = np.diff(self.current_a) / np.diff(self.flux_wb)
        k = np.searchsorted(self.flux_wb, x, side="right") - 1
        slopes = np.append(seg, 1.0 / self.final_inductance_h)
        out: FloatArray = slopes[np.clip(k, 0, slopes.size - 1)]
        return out

    @property
    def unsaturated_inductance_h(self) -> float:
        """Slope d(lambda)/di of the first segment [H]."""
        return float(self.flux_wb[1] / self.current_a[1])


@dataclass(frozen=True)
class SmoothKneeCurve:
    """Two-slope curve with the knee rounded by a hyperbola.

    Attributes
    ----------
    unsaturated_inductance_h : float
        Slope below the knee [H].
    knee_flux_wb : float
        Flux linkage where the two asymptotes meet [Wb-turn].
    saturated_inductance_h : float
        Slope far above the knee [H].
    knee_width_wb : float
        Rounding half-width of the knee [Wb-turn]; 0 would be the sharp two-slope curve.

    Notes
    -----
    With x = |lambda|, s = x - lambda_S and e the knee width::

        g(x) = (s + sqrt(s^2 + e^2))/2 - (-lambda_S + sqrt(lambda_S^2 + e^2))/2
        i(lambda) = sign(lambda) * [x/L_m + (1/L_air - 1/L_m) * g(x)]

    g is the hyperbola with the two lines g = 0 and g = s as asymptotes, shifted so that
    i(0) = 0; the slope di/d(lambda) is continuous and increases monotonically from about 1/L_m
    to 1/L_air. This rounding is a modelling choice of this project (no published source); it
    is offered for solvers and comparisons that need a continuous slope.
    """

    unsaturated_inductance_h: float
    knee_flux_wb: float
    saturated_inductance_h: float
    knee_width_wb: float

    def _g(self, x: FloatArray) -> tuple[FloatArray, FloatArray]:
        s = x - self.knee_flux_wb
        e = self.knee_width_wb
        r = np.hypot(s, e)
        g0 = 0.5 * (-self.knee_flux_wb + math.hypot(self.knee_flux_wb, e))
        return 0.5 * (s + r) - g0, 0.5 * (1.0 + s / r)

    def current(self, flux_wb: ArrayLike) -> FloatArray:
        """Magnetising current [A] for a flux linkage [Wb-turn]."""
        lam = np.asarray(flux_wb, dtype=float)
        x = np.abs(lam)
        g, _ = self._g(x)
        a = 1.0 / self.unsaturated_inductance_h
        b = 1.0 / self.saturated_inductance_h - a
        out: FloatArray = np.sign(lam) * (a * x + b * g)
        return out

    def slope(self, flux_wb: ArrayLike) -> FloatArray:
        """Differential reciprocal inductance di/d(lambda) [1/H] at a flux linkage [Wb-turn]."""
        x = np.abs(np.asarray(flux_wb, dtype=float))
        _, dg = self._g(x)
        a = 1.0 / self.unsaturated_inductance_h
        b = 1.0 / self.saturated_inductance_h - a
        out: FloatArray = a + b * dg
        return out


MagnetizingCurve = PiecewiseLinearCurve | SmoothKneeCurve


def two_slope(
    unsaturated_inductance_h: float, knee_flux_wb: float, saturated_inductance_h: float
) -> PiecewiseLinearCurve:
    """Two-slope (knee-point) magnetising curve.

    Parameters
    ----------
    unsaturated_inductance_h : float
        Magnetising inductance below the knee, L_m [H].
    knee_flux_wb : float
        Saturation flux linkage lambda_S = B_S/B_N * lambda_N [Wb-turn].
    saturated_inductance_h : float
        Slope above the knee, the air-core inductance L_air of the energised winding [H].

    Returns
    -------
    PiecewiseLinearCurve
        Curve through (0, 0) and (lambda_S, lambda_S/L_m), slope L_air beyond.

    Raises
    ------
    ParameterError
        If an inductance or the knee is not positive, or L_air >= L_m.

    Notes
    -----
    i = lambda/L_m for |lambda| <= lambda_S and
    i = sign(lambda)*(lambda_S/L_m + (|lambda| - lambda_S)/L_air) beyond.

    References
    ----------
    Y. Wang, S. G. Abdulsalam, W. Xu, "Analytical formula to estimate the maximum inrush
    current," IEEE Trans. Power Delivery 23(2), 2008 (two-slope core model; from memory).
    """
    lm = checks.positive("unsaturated_inductance_h", unsaturated_inductance_h)
    ls = checks.positive("knee_flux_wb", knee_flux_wb)
    la = checks.positive("saturated_inductance_h", saturated_inductance_h)
    if la >= lm:
        raise ParameterError(
            "saturated_inductance_h", la, f"smaller than the unsaturated inductance {lm:g} H"
        )
    return PiecewiseLinearCurve(np.array([0.0, ls]), np.array([0.0, ls / lm]), la)


def smooth_knee(
    unsaturated_inductance_h: float,
    knee_flux_wb: float,
    saturated_inductance_h: float,
    knee_width_wb: float,
) -> SmoothKneeCurve:
    """Saturating curve with a rounded knee (see :class:`SmoothKneeCurve` for the formula).

    Parameters
    ----------
    unsaturated_inductance_h : float
        Slope below the knee, L_m [H].
    knee_flux_wb : float
        Intersection of the asymptotes, lambda_S [Wb-turn].
    saturated_inductance_h : float
        Slope far above the knee, L_air [H].
    knee_width_wb : float
        Rounding half-width, > 0 and at most lambda_S [Wb-turn].

    Returns
    -------
    SmoothKneeCurve

    Raises
    ------
    ParameterError
        On non-positive values, L_air >= L_m, or a knee width above lambda_S.

    References
    ----------
    Modelling choice of this project; the asymptotes are those of :func:`two_slope`.
    """
    lm = checks.positive("unsaturated_inductance_h", unsaturated_inductance_h)
    ls = checks.positive("knee_flux_wb", knee_flux_wb)
    la = checks.positive("saturated_inductance_h", saturated_inductance_h)
    e = checks.positive("knee_width_wb", knee_width_wb)
    if la >= lm:
        raise ParameterError(
            "saturated_inductance_h", la, f"smaller than the unsaturated inductance {lm:g} H"
        )
    if e > ls:
        raise ParameterError("knee_width_wb", e, f"at most the knee flux {ls:g} Wb-turn")
    return SmoothKneeCurve(lm, ls, la, e)


def from_table(
    flux_wb: ArrayLike, current_a: ArrayLike, final_inductance_h: float
) -> PiecewiseLinearCurve:
    """Piecewise-linear curve from caller-given peak flux-linkage / current points.

    Parameters
    ----------
    flux_wb : array_like
        Flux linkages, strictly increasing and > 0; the origin is added [Wb-turn].
    current_a : array_like
        Currents at those fluxes, strictly increasing and > 0 [A].
    final_inductance_h : float
        Slope beyond the last point, normally the air-core inductance [H].

    Returns
    -------
    PiecewiseLinearCurve

    Raises
    ------
    ParameterError
        If the table is empty, of unequal lengths, not finite, not strictly increasing, or
        its segment slopes d(lambda)/di are not all larger than the final inductance.
    """
    lam = np.asarray(flux_wb, dtype=float).ravel()
    cur = np.asarray(current_a, dtype=float).ravel()
    if lam.size == 0:
        raise ParameterError("flux_wb", [], "at least one point")
    if lam.size != cur.size:
        raise ParameterError("current_a", cur.size, f"as many points as flux_wb ({lam.size})")
    for name, arr in (("flux_wb", lam), ("current_a", cur)):
        if not np.all(np.isfinite(arr)) or np.any(arr <= 0.0):
            raise ParameterError(name, arr.tolist(), "finite values > 0")
        if np.any(np.diff(arr) <= 0.0):
            raise ParameterError(name, arr.tolist(), "strictly increasing values")
    la = checks.positive("final_inductance_h", final_inductance_h)
    lam = np.concatenate(([0.0], lam))
    cur = np.concatenate(([0.0], cur))
    with np.errstate(over="ignore"):  # a rise of a few ulp in current: an infinite slope
        inductances = np.diff(lam) / np.diff(cur)
    if not np.all(inductances <= MAX_TABLE_INDUCTANCE_H):
        raise ParameterError(
            "current_a",
            cur[1:].tolist(),
            f"currents rising enough that each segment's inductance d(lambda)/di is at most "
            f"{MAX_TABLE_INDUCTANCE_H:g} H (largest here {float(inductances.max()):g} H)",
        )
    if np.any(inductances <= la):
        raise ParameterError(
            "final_inductance_h",
            la,
            f"smaller than every segment's inductance (smallest {inductances.min():g} H)",
        )
    return PiecewiseLinearCurve(lam, cur, la)


def _segment_square_integrals(theta0: float, theta1: float) -> tuple[float, float, float]:
    """Integrals of 1, sin and sin^2 over [theta0, theta1] [rad]."""
    i0 = theta1 - theta0
    i1 = math.cos(theta0) - math.cos(theta1)
    i2 = 0.5 * i0 - 0.25 * (math.sin(2.0 * theta1) - math.sin(2.0 * theta0))
    return i0, i1, i2


def _rms_squared_known(lam: FloatArray, cur: FloatArray, n_known: int, peak: float) -> float:
    """(2/pi) * integral over the first n_known-1 segments of i(peak*sin(theta))^2."""
    total = 0.0
    theta_prev = 0.0
    for j in range(1, n_known):
        theta_j = math.asin(min(lam[j] / peak, 1.0))
        s = (cur[j] - cur[j - 1]) / (lam[j] - lam[j - 1])
        a = cur[j - 1] - lam[j - 1] * s
        b = peak * s
        i0, i1, i2 = _segment_square_integrals(theta_prev, theta_j)
        total += a * a * i0 + 2.0 * a * b * i1 + b * b * i2
        theta_prev = theta_j
    return total * 2.0 / math.pi


def rms_current_sinusoidal_flux(curve: PiecewiseLinearCurve, peak_flux_wb: float) -> float:
    """Rms magnetising current when the flux linkage is a sinusoid of the given peak.

    Parameters
    ----------
    curve : PiecewiseLinearCurve
        The magnetising curve [-].
    peak_flux_wb : float
        Peak of the sinusoidal flux linkage, sqrt(2)*V/omega for an rms voltage V [Wb-turn].

    Returns
    -------
    float
        Rms current [A].

    Notes
    -----
    I^2 = (2/pi) * integral_0^{pi/2} i(lambda_pk sin(theta))^2 d(theta), evaluated exactly
    segment by segment (i is affine in sin(theta) on each segment).
    """
    peak = checks.positive("peak_flux_wb", peak_flux_wb)
    lam = curve.flux_wb
    cur = curve.current_a
    n_inside = int(np.searchsorted(lam, peak, side="left"))
    lam_ext = np.append(lam[:n_inside], peak)
    cur_ext = np.append(cur[:n_inside], float(curve.current(peak)))
    return math.sqrt(_rms_squared_known(lam_ext, cur_ext, lam_ext.size, peak))


def from_open_circuit_rms(
    voltage_rms_v: ArrayLike,
    current_rms_a: ArrayLike,
    frequency_hz: float,
    final_inductance_h: float,
) -> PiecewiseLinearCurve:
    """Convert open-circuit test points (rms voltage vs rms current) to a peak lambda-i curve.

    Parameters
    ----------
    voltage_rms_v : array_like
        Test voltages across the energised winding, strictly increasing [V].
    current_rms_a : array_like
        Measured rms no-load currents at those voltages, strictly increasing [A].
    frequency_hz : float
        Test frequency [Hz].
    final_inductance_h : float
        Slope beyond the last converted point, normally the air-core inductance [H].

    Returns
    -------
    PiecewiseLinearCurve
        Breakpoints lambda_k = sqrt(2)*V_k/omega with the currents that reproduce every I_k.

    Raises
    ------
    ParameterError
        If the points are empty, not finite, not increasing, or no increasing curve reproduces
        them (a current rising too slowly for the flux: the index of the point is named).

    Notes
    -----
    Cycle-by-cycle (point-by-point) conversion: with a sinusoidal voltage the flux linkage is
    lambda_k sin(theta). The first segment is linear, i_1 = sqrt(2)*I_1. For point k the
    segments 1..k-1 are known; on segment k the current is
    i = i_{k-1}(1 - u) + i_k u with
    u = (lambda_k sin(theta) - lambda_{k-1})/(lambda_k - lambda_{k-1}), so
    (pi/2) I_k^2 = integral_0^{pi/2} i^2 d(theta) is a quadratic in the unknown i_k, solved for
    its root above i_{k-1}. The integrals of 1, sin and sin^2 are exact. The measured current is
    taken as wholly magnetising (the loss component is not subtracted): this makes the
    unsaturated part of the curve slightly steeper in current and leaves the saturated slope,
    which sets the inrush peak, unchanged.

    References
    ----------
    W. L. A. Neves, H. W. Dommel, "On modelling iron core nonlinearities," IEEE Trans. Power
    Systems 8(2), 1993, pp. 417-425 (from memory).
    """
    v = np.asarray(voltage_rms_v, dtype=float).ravel()
    irms = np.asarray(current_rms_a, dtype=float).ravel()
    if v.size == 0:
        raise ParameterError("voltage_rms_v", [], "at least one point")
    if v.size != irms.size:
        raise ParameterError("current_rms_a", irms.size, f"as many points as voltages ({v.size})")
    for name, arr in (("voltage_rms_v", v), ("current_rms_a", irms)):
        if not np.all(np.isfinite(arr)) or np.any(arr <= 0.0):
            raise ParameterError(name, arr.tolist(), "finite values > 0")
        if np.any(np.diff(arr) <= 0.0):
            raise ParameterError(name, arr.tolist(), "strictly increasing values")
    f = checks.positive("frequency_hz", frequency_hz)
    la = checks.positive("final_inductance_h", final_inductance_h)
    omega = 2.0 * math.pi * f
    lam = np.concatenate(([0.0], math.sqrt(2.0) * v / omega))
    cur = np.zeros_like(lam)
    cur[1] = math.sqrt(2.0) * irms[0]
    for k in range(2, lam.size):
        peak = lam[k]
        known = _rms_squared_known(lam, cur, k, peak) * math.pi / 2.0
        theta0 = math.asin(lam[k - 1] / peak)
        i0, i1, i2 = _segment_square_integrals(theta0, 0.5 * math.pi)
        dl = lam[k] - lam[k - 1]
        c1 = peak / dl
        c0 = -lam[k - 1] / dl
        # integrals of u and u^2 on the last segment
        iu = c0 * i0 + c1 * i1
        iuu = c0 * c0 * i0 + 2.0 * c0 * c1 * i1 + c1 * c1 * i2
        p = cur[k - 1]
        # i = p(1-u) + x u  -> i^2 = p^2 (1-u)^2 + 2 p x u(1-u) + x^2 u^2
        qa = iuu
        qb = 2.0 * p * (iu - iuu)
        qc = p * p * (i0 - 2.0 * iu + iuu) + known - 0.5 * math.pi * irms[k - 1] ** 2
        disc = qb * qb - 4.0 * qa * qc
        x = (-qb + math.sqrt(disc)) / (2.0 * qa) if disc >= 0.0 else -math.inf
        if not x > p:
            raise ParameterError(
                f"current_rms_a[{k - 1}]",
                float(irms[k - 1]),
                "a current that rises fast enough with voltage for an increasing curve",
            )
        cur[k] = x
    with np.errstate(over="ignore"):  # a rise of a few ulp in current: an infinite slope
        inductances = np.diff(lam) / np.diff(cur)
    if not np.all(inductances <= MAX_TABLE_INDUCTANCE_H):
        raise ParameterError(
            "current_a",
            cur[1:].tolist(),
            f"currents rising enough that each segment's inductance d(lambda)/di is at most "
            f"{MAX_TABLE_INDUCTANCE_H:g} H (largest here {float(inductances.max()):g} H)",
        )
    if np.any(inductances <= la):
        raise ParameterError(
            "final_inductance_h",
            la,
            f"smaller than every converted segment's inductance (smallest {inductances.min():g} H)",
        )
    return PiecewiseLinearCurve(lam, cur, la)
