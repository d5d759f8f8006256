"""Validation of the numbers every core module takes: one argument order, one wording.

Each check takes the parameter's name first, then its value, and returns the value (as a float,
an int or a float array) or raises :class:`core.errors.ParameterError` naming the parameter,
the value and what is allowed. The wordings of what is allowed: ``"a finite number > 0"``,
``"a finite number >= 0"``, ``"in (low, high]"`` (``"in [low, high]"`` when the low end is
allowed), ``"an integer in [low, high]"``, ``"finite numbers"`` (``>= 0`` when so required).
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
import numpy.typing as npt

from core.errors import ParameterError

__all__ = ["array", "finite_array", "in_range", "integer", "nonnegative", "number", "positive"]

FloatArray = npt.NDArray[np.float64]


def number(name: str, value: object, allowed: str, ok: Callable[[float], bool]) -> float:
    """``value`` as a finite float for which ``ok`` holds.

    Parameters
    ----------
    name : str
        Parameter named in the error [-].
    value : object
        What the caller gave [any unit].
    allowed : str
        What is allowed, in words, for the error [-].
    ok : callable
        Test of the float value [-].

    Returns
    -------
    float
        The value [its unit].

    Notes
    -----
    Finite and ``ok(float(value))``, else :class:`ParameterError`.

    References
    ----------
    This project's input rules.
    """
    try:
        out = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        out = math.nan
    if not (math.isfinite(out) and ok(out)):
        raise ParameterError(name, value, allowed)
    return out


def positive(name: str, value: object, upper: float = math.inf) -> float:
    """``value`` as a finite float > 0 (and < ``upper`` when given).

    Parameters
    ----------
    name : str
        Parameter named in the error [-].
    value : object
        What the caller gave [any unit].
    upper : float
        Exclusive upper bound, infinite for none [the value's unit].

    Returns
    -------
    float
        The value [its unit].

    Notes
    -----
    0 < value < upper.

    References
    ----------
    This project's input rules.
    """
    allowed = "a finite number > 0" + ("" if math.isinf(upper) else f" and < {upper:g}")
    return number(name, value, allowed, lambda x: 0.0 < x < upper)


def nonnegative(name: str, value: object) -> float:
    """``value`` as a finite float >= 0.

    Parameters
    ----------
    name : str
        Parameter named in the error [-].
    value : object
        What the caller gave [any unit].

    Returns
    -------
    float
        The value [its unit].

    Notes
    -----
    value >= 0.

    References
    ----------
    This project's input rules.
    """
    return number(name, value, "a finite number >= 0", lambda x: x >= 0.0)


def in_range(name: str, value: object, low: float, high: float, *, open_low: bool = True) -> float:
    """``value`` as a finite float in (low, high], or [low, high] with ``open_low=False``.

    Parameters
    ----------
    name : str
        Parameter named in the error [-].
    value : object
        What the caller gave [any unit].
    low : float
        Lower bound, excluded unless ``open_low`` is False [the value's unit].
    high : float
        Upper bound, included [the value's unit].
    open_low : bool
        Whether ``low`` itself is refused [-].

    Returns
    -------
    float
        The value [its unit].

    Notes
    -----
    low < value <= high (low <= value <= high).

    References
    ----------
    This project's input rules.
    """
    allowed = f"in {'(' if open_low else '['}{low:g}, {high:g}]"
    if open_low:
        return number(name, value, allowed, lambda x: low < x <= high)
    return number(name, value, allowed, lambda x: low <= x <= high)


def integer(name: str, value: object, low: int, high: int) -> int:
    """``value`` as an int in [low, high] (a bool is not an integer here).

    Parameters
    ----------
    name : str
        Parameter named in the error [-].
    value : object
        What the caller gave [-].
    low : int
        Smallest allowed [-].
    high : int
        Largest allowed [-].

    Returns
    -------
    int
        The value [-].

    Notes
    -----
    low <= value <= high, for an int or numpy integer.

    References
    ----------
    This project's input rules.
    """
    if (
        isinstance(value, bool)
        or not isinstance(value, int | np.integer)
        or not low <= value <= high
    ):
        raise ParameterError(name, value, f"an integer in [{low}, {high}]")
    return int(value)


def array(name: str, value: npt.ArrayLike, *, nonnegative: bool = True) -> FloatArray:
    """``value`` as a float array of finite (by default non-negative) numbers.

    Parameters
    ----------
    name : str
        Parameter named in the error [-].
    value : array_like
        What the caller gave [any unit].
    nonnegative : bool
        Whether negative numbers are refused [-].

    Returns
    -------
    ndarray
        The values as float64 [their unit].

    Notes
    -----
    Every element finite (and >= 0).

    References
    ----------
    This project's input rules.
    """
    allowed = "finite numbers >= 0" if nonnegative else "finite numbers"
    try:
        arr = np.array(value, dtype=np.float64)
    except (TypeError, ValueError):
        raise ParameterError(name, value, allowed) from None
    if not np.all(np.isfinite(arr)) or (nonnegative and np.any(arr < 0.0)):
        raise ParameterError(name, value, allowed)
    return arr


def finite_array(
    name: str, value: object, ndim: tuple[int, ...], low: float = -math.inf
) -> FloatArray:
    """``value`` as a non-empty float array of ``ndim`` dimensions, finite and >= ``low``.

    Parameters
    ----------
    name : str
        Parameter named in the error [-].
    value : object
        What the caller gave [any unit].
    ndim : tuple of int
        Numbers of dimensions allowed [-].
    low : float
        Smallest value allowed [the value's unit].

    Returns
    -------
    ndarray
        The values as float64 [their unit].

    Notes
    -----
    a.ndim in ndim, a.size > 0, every element finite and >= low; the error names the shape.

    References
    ----------
    This project's input rules.
    """
    try:
        a = np.array(value, dtype=np.float64)
    except (TypeError, ValueError):
        raise ParameterError(name, value, "finite numbers") from None
    if a.ndim not in ndim or a.size == 0 or not np.all(np.isfinite(a)) or np.any(a < low):
        raise ParameterError(name, a.shape, f"finite numbers >= {low:g}, {ndim} dimension(s)")
    return a
