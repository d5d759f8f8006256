"""One switching event: how and when the breaker energises the transformer.

A :class:`SwitchingEvent` holds what a caller chooses about one energisation: the closing angle,
the residual flux of each winding, each pole's closing instant, an optional pre-insertion
resistor with its bypass, and an optional ramped source. :func:`switching_event` builds it for a
circuit: it broadcasts the per-winding and per-pole values, checks them, and states the warning
about a high residual flux once, in one wording, for every study that takes the event. The
defaults of the residual flux and its conversion from Wb-turn live here too, so that the HTTP
layer only names them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import ArrayLike, NDArray

from core.errors import ParameterError
from core.transformer.circuit_model import EquivalentCircuit

FloatArray = NDArray[np.float64]

__all__ = [
    "DEFAULT_RESIDUAL_FLUX_PU",
    "RESIDUAL_DEFAULT_SOURCE",
    "RESIDUAL_FLUX_HIGH_PU",
    "SwitchingEvent",
    "default_residual_flux_pu",
    "plain_event_arrays",
    "residual_flux_pu_from_wb",
    "residual_flux_warnings",
    "switching_event",
    "switching_events",
]

#: Default residual flux per winding [pu of lambda_N], by number of phases: 0.8 pu on the first
#: winding, the upper end of the typical 0.2-0.8 pu range (from memory), the other two -0.4 pu
#: each so that the three sum to zero (a three-limb core's fluxes sum to zero).
DEFAULT_RESIDUAL_FLUX_PU: dict[int, tuple[float, ...]] = {1: (0.8,), 3: (0.8, -0.4, -0.4)}
#: Provenance of :data:`DEFAULT_RESIDUAL_FLUX_PU`, as reported with each study's assumptions.
RESIDUAL_DEFAULT_SOURCE = (
    "default: 0.8 pu on the first winding (upper end of the typical 0.2-0.8 pu range, from "
    "memory), the other windings -0.4 pu each so that the three sum to zero"
)
#: Residual flux above which a warning is given [pu of lambda_N]: the usual worst case is about
#: 0.8-0.9 pu (from memory).
RESIDUAL_FLUX_HIGH_PU = 0.9


@dataclass(frozen=True, eq=False)
class SwitchingEvent:
    """One energisation of one circuit, built and checked by :func:`switching_event`.

    Attributes
    ----------
    closing_angle_deg : float
        Phase-A source voltage angle at t = 0, the closing command [deg].
    residual_flux_pu : ndarray, shape (n_windings,)
        Flux linkage of each winding at t = 0 [pu of lambda_N].
    pole_delay_s : ndarray, shape (n_phases,)
        Closing instant of each pole after t = 0 [s].
    insertion_resistance_ohm : float
        Pre-insertion resistor per pole, 0 for none [ohm].
    insertion_time_s : float
        Instant the resistor is bypassed, from t = 0 [s].
    voltage_start_pu : float
        Ramped source: the level it starts at, 1 for no ramp [pu of the rated EMF].
    voltage_hold_s : float
        Ramped source: time held at the start level [s].
    voltage_rise_s : float
        Ramped source: time of the linear rise to rated [s].
    warnings : tuple of (str, str)
        (code, message) about the event, e.g. ``residual_flux_high``.
    """

    closing_angle_deg: float
    residual_flux_pu: FloatArray
    pole_delay_s: FloatArray
    insertion_resistance_ohm: float = 0.0
    insertion_time_s: float = 0.0
    voltage_start_pu: float = 1.0
    voltage_hold_s: float = 0.0
    voltage_rise_s: float = 0.0
    warnings: tuple[tuple[str, str], ...] = ()

    @property
    def plain(self) -> bool:
        """True when the poles close straight onto the rated source (no resistor, no ramp)."""
        return (
            self.insertion_resistance_ohm == 0.0
            and self.insertion_time_s == 0.0
            and self.voltage_start_pu == 1.0
            and self.voltage_hold_s == 0.0
            and self.voltage_rise_s == 0.0
        )

    def closed_at_once(self) -> SwitchingEvent:
        """The same closing angle and residual flux, every pole at t = 0, no resistor, no ramp.

        The event a hand method assumes (it closes all poles together straight onto the rated
        source); nothing is checked again, the values being a subset of this checked event.
        """
        return replace(
            self,
            pole_delay_s=np.zeros_like(self.pole_delay_s),
            insertion_resistance_ohm=0.0,
            insertion_time_s=0.0,
            voltage_start_pu=1.0,
            voltage_hold_s=0.0,
            voltage_rise_s=0.0,
        )


def default_residual_flux_pu(phases: int) -> FloatArray:
    """The residual flux assumed when the caller gives none.

    Parameters
    ----------
    phases : int
        Phases of the circuit, 1 or 3 [-].

    Returns
    -------
    ndarray, shape (phases,)
        :data:`DEFAULT_RESIDUAL_FLUX_PU` of that many phases [pu of lambda_N].

    Notes
    -----
    b_R = (0.8,) on one phase, (0.8, -0.4, -0.4) on three: the sum is zero.

    References
    ----------
    Typical range 0.2-0.8 pu of residual flux after de-energisation: from memory (common
    practice in inrush studies); :data:`RESIDUAL_DEFAULT_SOURCE` says so in the answer.
    """
    if phases not in DEFAULT_RESIDUAL_FLUX_PU:
        raise ParameterError("phases", phases, "1 or 3")
    return np.array(DEFAULT_RESIDUAL_FLUX_PU[phases])


def residual_flux_pu_from_wb(residual_flux_wb: ArrayLike, circuit: EquivalentCircuit) -> FloatArray:
    """Residual flux linkage in Wb-turn as per unit of the circuit's nominal flux.

    Parameters
    ----------
    residual_flux_wb : array_like
        Flux linkage of each winding at t = 0 [Wb-turn].
    circuit : EquivalentCircuit
        The circuit whose nominal flux is the base [-].

    Returns
    -------
    ndarray
        b_R = lambda_R / lambda_N [pu of lambda_N].

    Notes
    -----
    lambda_N = sqrt(2)·V_w/omega, the crest of the steady flux linkage at rated voltage
    (:attr:`core.transformer.circuit_model.EquivalentCircuit.nominal_flux_wb`).

    References
    ----------
    Faraday's law for a sinusoidal voltage (any circuits text).
    """
    return np.asarray(residual_flux_wb, dtype=float) / circuit.nominal_flux_wb


def residual_flux_warnings(residual_flux_pu: FloatArray) -> list[tuple[str, str]]:
    """The warning about a residual flux beyond the usual worst case, or none.

    Parameters
    ----------
    residual_flux_pu : ndarray
        Residual flux of each winding [pu of lambda_N].

    Returns
    -------
    list of (str, str)
        ``[("residual_flux_high", message)]`` when any ``|b_R|`` exceeds
        :data:`RESIDUAL_FLUX_HIGH_PU`, else empty.

    Notes
    -----
    One wording for every study: the largest |b_R| and the usual worst case.

    References
    ----------
    Usual worst case about 0.8-0.9 pu: from memory.
    """
    if not np.any(np.abs(residual_flux_pu) > RESIDUAL_FLUX_HIGH_PU):
        return []
    return [
        (
            "residual_flux_high",
            f"residual flux up to {np.abs(residual_flux_pu).max():.2f} pu exceeds the usual "
            "worst case of about 0.8-0.9 pu (from memory)",
        )
    ]


def plain_event_arrays(
    circuit: EquivalentCircuit, event: SwitchingEvent
) -> tuple[FloatArray, FloatArray]:
    """The residual flux and pole delays of a plain event built for ``circuit`` (copies).

    For the studies that simulate a closing straight onto the source (the peak, envelope and
    protection studies): the event must have one value per winding and pole of the circuit,
    and no pre-insertion resistor or ramp (those are the mitigation study's to simulate).

    Parameters
    ----------
    circuit : EquivalentCircuit
        The circuit the study simulates [-].
    event : SwitchingEvent
        The event given to the study [-].

    Returns
    -------
    tuple of ndarray
        (residual flux per winding [pu of lambda_N], pole delays [s]), shape (phases,) each.

    Raises
    ------
    ParameterError
        Naming ``event`` when it was built for another phase count or is not plain.

    Notes
    -----
    Plain: R_ins = 0, t_ins = 0 and no ramp (:attr:`SwitchingEvent.plain`).

    References
    ----------
    This project's input rules.
    """
    m = circuit.phases
    if event.residual_flux_pu.shape != (m,) or event.pole_delay_s.shape != (m,):
        raise ParameterError(
            "event", f"{event.residual_flux_pu.size} windings", f"an event built for {m} phase(s)"
        )
    if not event.plain:
        raise ParameterError(
            "event", "a pre-insertion resistor or ramp", "a plain closing (see core.mitigation)"
        )
    return event.residual_flux_pu.copy(), event.pole_delay_s.copy()


def switching_event(
    circuit: EquivalentCircuit,
    closing_angle_deg: float = 0.0,
    residual_flux_pu: ArrayLike | None = None,
    pole_delay_s: ArrayLike = 0.0,
    *,
    insertion_resistance_ohm: float = 0.0,
    insertion_time_s: float = 0.0,
    voltage_start_pu: float = 1.0,
    voltage_hold_s: float = 0.0,
    voltage_rise_s: float = 0.0,
) -> SwitchingEvent:
    """Build and check one switching event for ``circuit``.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The circuit energised; its phases set the number of windings and poles [-].
    closing_angle_deg : float
        Phase-A source voltage angle at t = 0, finite [deg].
    residual_flux_pu : array_like or None
        A scalar or one value per winding; None for :func:`default_residual_flux_pu`
        [pu of lambda_N].
    pole_delay_s : array_like
        A scalar or one closing instant per pole after t = 0 [s].
    insertion_resistance_ohm : float
        Pre-insertion resistor per pole, >= 0 [ohm].
    insertion_time_s : float
        Instant the resistor is bypassed, >= 0 [s].
    voltage_start_pu : float
        Ramped source start level, in [0, 1] [pu of the rated EMF].
    voltage_hold_s : float
        Time held at the start level, >= 0 [s].
    voltage_rise_s : float
        Linear rise to rated, >= 0 [s].

    Returns
    -------
    SwitchingEvent
        Values broadcast to the circuit's windings and poles, with its warnings.

    Notes
    -----
    Checked here: a finite angle, the shapes, finite numbers, the resistor and ramp ranges. The
    bounds that depend on a study (the residual flux within [-5, 5] pu, every pole closed
    within the simulated record) are checked by the simulation that integrates the event
    (:func:`core.energization.energize_plan.check_cases`).

    References
    ----------
    This project's input rules; the warning threshold as in :func:`residual_flux_warnings`.
    """
    if not math.isfinite(closing_angle_deg):
        raise ParameterError("closing_angle_deg", closing_angle_deg, "a finite angle")
    m = circuit.phases
    given = default_residual_flux_pu(m) if residual_flux_pu is None else residual_flux_pu
    res = _per_phase("residual_flux_pu", given, m)
    delay = _per_phase("pole_delay_s", pole_delay_s, m)
    for name, value, low, high in (
        ("insertion_resistance_ohm", insertion_resistance_ohm, 0.0, math.inf),
        ("insertion_time_s", insertion_time_s, 0.0, math.inf),
        ("voltage_start_pu", voltage_start_pu, 0.0, 1.0),
        ("voltage_hold_s", voltage_hold_s, 0.0, math.inf),
        ("voltage_rise_s", voltage_rise_s, 0.0, math.inf),
    ):
        if not (_finite(value) and low <= value <= high):
            raise ParameterError(name, value, f"in [{low:g}, {high:g}]")
    return SwitchingEvent(
        closing_angle_deg=closing_angle_deg,
        residual_flux_pu=res,
        pole_delay_s=delay,
        insertion_resistance_ohm=insertion_resistance_ohm,
        insertion_time_s=insertion_time_s,
        voltage_start_pu=voltage_start_pu,
        voltage_hold_s=voltage_hold_s,
        voltage_rise_s=voltage_rise_s,
        warnings=tuple(residual_flux_warnings(res)),
    )


def _finite(value: object) -> bool:
    """True for a finite real number (False for None, a string, nan or inf)."""
    try:
        return math.isfinite(value)  # type: ignore[arg-type]
    except TypeError:
        return False


def _per_phase(name: str, value: ArrayLike, m: int) -> FloatArray:
    """``value`` broadcast to one finite float per phase (a copy)."""
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ParameterError(name, repr(value), f"a scalar or {m} numbers") from None
    try:
        out = np.broadcast_to(arr, (m,)).copy()
    except ValueError:
        raise ParameterError(name, arr.tolist(), f"a scalar or {m} values") from None
    if not np.all(np.isfinite(out)):
        raise ParameterError(name, "non-finite", "finite numbers")
    return out


def switching_events(
    circuit: EquivalentCircuit,
    closing_angle_deg: ArrayLike,
    residual_flux_pu: ArrayLike,
    pole_delay_s: ArrayLike = 0.0,
) -> tuple[SwitchingEvent, ...]:
    """Many plain switching events of one circuit (e.g. a Monte Carlo sample), checked at once.

    Parameters
    ----------
    circuit : EquivalentCircuit
        The circuit energised; its phases set the number of windings and poles [-].
    closing_angle_deg : array_like, shape (n,)
        Phase-A source voltage angle at t = 0 of each event, finite [deg].
    residual_flux_pu : array_like
        Broadcast to (n, windings): per event, per winding [pu of lambda_N].
    pole_delay_s : array_like
        Broadcast to (n, poles): per event, per pole after t = 0 [s].

    Returns
    -------
    tuple of SwitchingEvent
        One event per angle, each as :func:`switching_event` would build it (no resistor, no
        ramp), with its own warnings.

    Notes
    -----
    The same checks as :func:`switching_event`, done on the whole arrays: finite angles, shapes
    that broadcast, finite numbers; then event k is (alpha_k, b_R[k], t[k]).

    References
    ----------
    This project's input rules, as in :func:`switching_event`.
    """
    angles = np.atleast_1d(np.asarray(closing_angle_deg, dtype=float))
    if angles.ndim != 1 or not np.all(np.isfinite(angles)):
        raise ParameterError("closing_angle_deg", "non-finite or not 1-D", "finite angles")
    n, m = angles.size, circuit.phases
    res = _per_event("residual_flux_pu", residual_flux_pu, n, m)
    delay = _per_event("pole_delay_s", pole_delay_s, n, m)
    return tuple(
        SwitchingEvent(
            closing_angle_deg=float(angles[k]),
            residual_flux_pu=res[k],
            pole_delay_s=delay[k],
            warnings=tuple(residual_flux_warnings(res[k])),
        )
        for k in range(n)
    )


def _per_event(name: str, value: ArrayLike, n: int, m: int) -> FloatArray:
    """``value`` broadcast to (n, m) finite floats (a copy)."""
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ParameterError(name, repr(value), f"numbers broadcastable to ({n}, {m})") from None
    try:
        out = np.broadcast_to(arr, (n, m)).copy()
    except ValueError:
        raise ParameterError(name, list(arr.shape), f"broadcastable to ({n}, {m})") from None
    if not np.all(np.isfinite(out)):
        raise ParameterError(name, "non-finite", "finite numbers")
    return out
