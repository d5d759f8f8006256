"""Validation of the numbers the protective-device curve modules take.

Each check returns the value as a float (or float array) or raises
:class:`core.errors.ParameterError` naming the parameter, the value and what is allowed.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import numpy.typing as npt

from core.errors import ParameterError

__all__ = ["array", "nonnegative", "positive", "scalar"]

FloatArray = npt.NDArray[np.float64]


def scalar(value: object, name: str, allowed: str, ok: Callable[[float], bool]) -> float:
    """``value`` as a finite float for which ``ok`` holds."""
    try:
        out = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        out = float("nan")
    if not (np.isfinite(out) and ok(out)):
        raise ParameterError(name, value, allowed)
    return out


def positive(value: object, name: str) -> float:
    """``value`` as a finite float > 0."""
    return scalar(value, name, "a finite number > 0", lambda x: x > 0.0)


def nonnegative(value: object, name: str) -> float:
    """``value`` as a finite float >= 0."""
    return scalar(value, name, "a finite number >= 0", lambda x: x >= 0.0)


def array(value: npt.ArrayLike, name: str, *, nonnegative: bool = True) -> FloatArray:
    """``value`` as a float array of finite (by default non-negative) numbers."""
    allowed = "finite numbers >= 0" if nonnegative else "finite numbers"
    try:
        arr = np.array(value, dtype=np.float64)
    except (TypeError, ValueError):
        raise ParameterError(name, value, allowed) from None
    if not np.all(np.isfinite(arr)) or (nonnegative and np.any(arr < 0.0)):
        raise ParameterError(name, value, allowed)
    return arr
