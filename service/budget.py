"""The work budget of one request: the core's estimate against ``max_request_steps``.

Every simulating operation estimates its work with :mod:`core.cost` before it simulates
anything and calls :func:`enforce`; over the budget, the request is refused with a 422
``limit-exceeded`` problem that names, for each field that could bring it within the budget on
its own, the value that would (the "knobs"). The knob values are found by bisection on the
estimate itself, which costs microseconds.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass

from core.cost import Work
from core.errors import LimitError

Estimate = Callable[[Mapping[str, float]], Work]


@dataclass(frozen=True)
class Knob:
    """A request field that reduces the work: its path, value now, and smallest legal value.

    ``choice`` instead names a value of a non-numeric field that removes most of the work
    (e.g. ``method: analytic``); such a knob is listed as it is, not searched.
    """

    field: str
    current: float = math.nan
    low: float = math.nan
    integer: bool = False
    choice: str | None = None


def _largest_fitting(
    estimate: Estimate, knob: Knob, budget: float, others: Mapping[str, float] | None = None
) -> float | None:
    """Largest value of the knob in [low, current] whose estimate fits (with ``others`` set as
    given), None if none does."""
    base = dict(others or {})
    lo: float = knob.low
    hi: float = knob.current
    if estimate({**base, knob.field: lo}).steps > budget:
        return None
    if knob.integer:
        a, b = int(knob.low), int(knob.current)
        while b - a > 1:
            k = (a + b) // 2
            if estimate({**base, knob.field: k}).steps <= budget:
                a = k
            else:
                b = k
        return float(a)
    for _ in range(50):
        mid = 0.5 * (lo + hi)
        if estimate({**base, knob.field: mid}).steps <= budget:
            lo = mid
        else:
            hi = mid
    return math.floor(lo * 1e3) / 1e3 if lo >= 1e-3 else lo


def _shown(knob: Knob, value: float) -> str:
    return f"{int(value)}" if knob.integer else f"{value:g}"


def _together(estimate: Estimate, knobs: list[Knob], budget: float) -> list[tuple[str, str]]:
    """When no knob fits alone: the knobs in their order, each at its smallest value until the
    next one, searched, brings the request within the budget; [] if even all at their smallest
    do not."""
    chosen: dict[str, float] = {}
    numeric = [k for k in knobs if k.choice is None and k.current > k.low]
    for k in numeric:
        v = _largest_fitting(estimate, k, budget, chosen)
        if v is not None:
            chosen[k.field] = v
            break
        chosen[k.field] = k.low
    else:
        return []
    by_field = {k.field: k for k in numeric}
    return [
        (f, f"<= {_shown(by_field[f], v)} (now {by_field[f].current:g}) with the others listed")
        for f, v in chosen.items()
    ]


def enforce(estimate: Estimate, knobs: list[Knob], budget: float) -> Work:
    """The estimate of the request as sent; LimitError naming the knobs when over the budget.

    Parameters
    ----------
    estimate : callable
        Work of the request with some fields replaced (``{field path: value}``; ``{}`` for the
        request as sent).
    knobs : list of Knob
        Fields the caller can turn.
    budget : float
        ``max_request_steps`` [winding-steps].
    """
    work = estimate({})
    if work.steps <= budget:
        return work
    hints: list[tuple[str, str]] = []
    for k in knobs:
        if k.choice is not None:
            hints.append((k.field, k.choice))
            continue
        if not (k.current > k.low):
            continue
        v = _largest_fitting(estimate, k, budget)
        if v is None:
            continue
        hints.append((k.field, f"<= {_shown(k, v)} (now {k.current:g})"))
    if not any(a.startswith("<=") for _, a in hints):  # no field fits alone: several together
        hints.extend(_together(estimate, knobs, budget))
    parts = ", ".join(f"{name} {steps:.3g}" for name, steps in work.parts)
    raise LimitError(
        "work (integration steps, core/cost.py)",
        work.steps,
        budget,
        knobs=tuple(hints),
        detail=f"where the work goes: {parts}. Reduce one of the fields listed (each alone "
        "would bring the request within the budget, or those marked 'with the others listed' "
        "together) or split the work across requests.",
    )


def replaced(overrides: Mapping[str, float], field: str, value: float) -> float:
    """The value of ``field``: overridden, or as sent."""
    return float(overrides.get(field, value))
