"""Imports inside core/ run one way: each domain package uses only the packages below it.

The order (DEVELOPERS.md, Layout): ``core.errors`` at the bottom, ``core.checks`` and
``core.waveform`` above it, then ``transformer``, ``network`` (the one time-domain solver),
``energization`` (single-unit simulation and studies on it), ``protection`` beside ``supply``
(neither imports the other; the dip runs on ``network``), ``statistics``, ``mitigation``;
``core.cost`` spans every
domain and sits on top. A
module may always import its own package. No module imports a private name (``_foo``) from
another module.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

CORE = Path(__file__).resolve().parents[2] / "core"
# rank of each package: a module may import a package of strictly lower rank (or its own)
RANK = {
    "errors": 0,
    "checks": 1,
    "waveform": 1,  # readings of a sampled current, used by energization, network, protection
    "transformer": 2,
    "network": 3,  # the one time-domain solver
    "energization": 4,  # above network: its single-unit simulation runs on core.network
    "protection": 5,  # its study simulates through core.energization
    "supply": 5,  # above network: the dip family runs on core.network
    "statistics": 6,
    "mitigation": 7,
    "cost": 8,
}
MODULES = sorted(CORE.rglob("*.py"))


def _unit(path: Path) -> str:
    """The package (or top-level module) a file belongs to: ``protection``, ``errors``, ..."""
    rel = path.relative_to(CORE)
    return rel.parts[0] if len(rel.parts) > 1 else rel.stem


def _core_imports(tree: ast.AST) -> list[tuple[int, str, list[str]]]:
    """(line, imported core unit, names) of every import of core in a parsed module."""
    found = []
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and node.module and node.module.startswith("core"):
            parts = node.module.split(".")
            names = [a.name for a in node.names]
            if len(parts) == 1:  # from core import errors
                found += [(node.lineno, n, []) for n in names]
            else:
                found.append((node.lineno, parts[1], names))
        elif isinstance(node, ast.Import):
            for alias in node.names:
                parts = alias.name.split(".")
                if parts[0] == "core" and len(parts) > 1:
                    found.append((node.lineno, parts[1], []))
    return found


def test_every_package_has_a_rank() -> None:
    units = {_unit(p) for p in MODULES if p.name != "__init__.py" or p.parent != CORE}
    assert units == set(RANK), f"give these a place in RANK: {sorted(units ^ set(RANK))}"


def _violations(path: Path, text: str) -> list[str]:
    own = _unit(path)
    bad = []
    for line, unit, names in _core_imports(ast.parse(text)):
        if unit != own and RANK.get(unit, 99) >= RANK[own]:
            bad.append(f"{path.name}:{line} ({own}) imports {unit}")
        bad += [f"{path.name}:{line} imports private {n} from {unit}" for n in names if n[0] == "_"]
    return bad


@pytest.mark.parametrize("path", MODULES, ids=lambda p: p.relative_to(CORE).as_posix())
def test_imports_run_one_way(path: Path) -> None:
    if path == CORE / "__init__.py":
        return
    assert not _violations(path, path.read_text(encoding="utf-8"))


def test_the_checker_sees_a_wrong_way_import() -> None:
    # the check itself must be able to fail: the transformer reaching up into energization, and
    # a private helper taken from another module
    path = CORE / "transformer" / "circuit_model.py"
    assert len(_violations(path, "from core.energization import energize\n")) == 1
    assert len(_violations(path, "from core.transformer.magnetizing import _hidden\n")) == 1
    assert not _violations(path, "from core.transformer import magnetizing\n")
