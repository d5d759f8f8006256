"""Helpers the two energisation kernels each carry a copy of stay identical.

numba's cache is keyed by the file of the cached function alone, so a helper inlined from
another file could change without the cached kernel being recompiled; ``kernel_independent``
and ``kernel_coupled`` therefore each define ``_source_scale`` (the source EMF factor of a
ramp). A change to one copy and not the
other would give the two topologies different sources; this test compares their syntax trees.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

HERE = Path(__file__).resolve().parents[3] / "core" / "energization"
KERNELS = ("kernel_independent.py", "kernel_coupled.py")


def _functions(path: Path) -> dict[str, str]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    out = {}
    for node in tree.body:
        if isinstance(node, ast.FunctionDef):
            if ast.get_docstring(node) is not None:
                node.body = node.body[1:]  # the docstrings may word it for their own module
            out[node.name] = ast.dump(node, include_attributes=False)
    return out


def _twins() -> list[str]:
    a, b = (_functions(HERE / name) for name in KERNELS)
    return sorted(set(a) & set(b))


def test_the_known_twin_is_found() -> None:
    assert "_source_scale" in _twins()


@pytest.mark.parametrize("name", _twins())
def test_twins_are_identical(name: str) -> None:
    a, b = (_functions(HERE / k)[name] for k in KERNELS)
    assert a == b, f"{name} differs between {KERNELS[0]} and {KERNELS[1]}"


def test_the_comparison_sees_a_changed_operator() -> None:
    one = ast.dump(ast.parse("def f(x):\n    return x * 2.0\n").body[0])
    two = ast.dump(ast.parse("def f(x):\n    return x + 2.0\n").body[0])
    assert one != two
