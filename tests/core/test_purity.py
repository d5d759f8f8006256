"""core/ stays pure numeric code: no web framework, validation models, service layer, logging
or printing (the layering DEVELOPERS.md describes), and no ``assert`` used for validation."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

CORE = Path(__file__).resolve().parents[2] / "core"
FORBIDDEN = {"fastapi", "pydantic", "pydantic_settings", "starlette", "service", "logging"}
MODULES = sorted(CORE.rglob("*.py"))


def _rel(path: Path) -> str:
    return path.relative_to(CORE).as_posix()


def test_core_modules_are_found() -> None:
    names = {_rel(p) for p in MODULES}
    assert {
        "energization/energize.py",
        "transformer/magnetizing.py",
        "transformer/circuit_model.py",
        "waveform.py",
    } <= names


def _imported_roots(tree: ast.AST) -> set[str]:
    roots: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            roots.update(alias.name.split(".")[0] for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module:
            # absolute, or relative (``from ..service import x`` names ``service`` too)
            roots.add(node.module.split(".")[0])
    return roots


@pytest.mark.parametrize("path", MODULES, ids=_rel)
def test_core_module_imports_nothing_forbidden(path: Path) -> None:
    tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    bad = _imported_roots(tree) & FORBIDDEN
    assert not bad, f"{path.name} imports {sorted(bad)}"
    # dynamic imports by name would dodge the check above
    for node in ast.walk(tree):
        if isinstance(node, ast.Call) and isinstance(node.func, ast.Name | ast.Attribute):
            name = node.func.id if isinstance(node.func, ast.Name) else node.func.attr
            if name in {"__import__", "import_module"}:
                pytest.fail(f"{path.name}:{node.lineno} imports dynamically")


@pytest.mark.parametrize("path", MODULES, ids=_rel)
def test_core_module_does_not_print(path: Path) -> None:
    tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    for node in ast.walk(tree):
        if isinstance(node, ast.Call):
            func = node.func
            if isinstance(func, ast.Name) and func.id == "print":
                pytest.fail(f"{path.name}:{node.lineno} calls print")
            if isinstance(func, ast.Attribute) and func.attr == "print":
                pytest.fail(f"{path.name}:{node.lineno} calls .print")


@pytest.mark.parametrize("path", MODULES, ids=_rel)
def test_core_module_validates_without_assert(path: Path) -> None:
    tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    asserts = [n.lineno for n in ast.walk(tree) if isinstance(n, ast.Assert)]
    assert not asserts, f"{path.name} uses assert at lines {asserts}"


def test_the_checker_sees_forbidden_code() -> None:
    # the check itself must be able to fail
    tree = ast.parse("import logging\nfrom fastapi import APIRouter\nfrom service.app import x\n")
    assert _imported_roots(tree) >= {"logging", "fastapi", "service"}
