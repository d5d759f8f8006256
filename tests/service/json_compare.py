"""One comparison of two JSON answers, shared by the tests that rebuild a request another way."""

from __future__ import annotations

import math
from typing import Any

#: Relative agreement asked of every number [-].
TOL = 1e-9


def assert_json_close(a: Any, b: Any, where: str = "") -> None:
    """Every number of two JSON values agrees to TOL relative (of the larger magnitude)."""
    if isinstance(a, dict):
        assert set(a) == set(b), where
        for k in a:
            assert_json_close(a[k], b[k], f"{where}.{k}")
    elif isinstance(a, list):
        assert len(a) == len(b), where
        for k, (x, y) in enumerate(zip(a, b, strict=True)):
            assert_json_close(x, y, f"{where}[{k}]")
    elif isinstance(a, float) and isinstance(b, float | int):
        assert math.isclose(a, b, rel_tol=TOL, abs_tol=1e-12 * max(1.0, abs(a))), (where, a, b)
    else:
        assert a == b, (where, a, b)
