"""Helpers the compiled kernels each carry a copy of stay identical.

numba's cache is keyed by the file of the cached function alone, so a helper inlined from
another file could change without the cached kernel being recompiled; ``kernel_independent``
and ``kernel_coupled`` therefore each define ``_source_scale`` (the source EMF factor of a
ramp). A change to one copy and not the
other would give the two topologies different sources; this test compares their syntax trees.

The network kernel (``core.network.kernel``) carries its own copy of the magnetising-curve
evaluation that ``kernel_coupled`` has (``_curve_s`` for the two-slope and smooth-knee kinds,
``_curve_table`` for a table, against ``_winding_curve`` of an energised winding). The two copies
are written differently (one function per kind there, one for all kinds here), so their syntax
trees cannot be compared; they are held identical by their outputs instead: current and slope,
bit for bit, on a grid of flux linkages that crosses every branch of every curve kind, for
curves packed by the network solver itself from the three curve kinds of
core.transformer.magnetizing. Reference: the other copy (the compiled energisation kernel,
itself checked against scipy integrations and published peaks in tests/references/); the same
arithmetic on the same operands must agree exactly.
"""

from __future__ import annotations

import ast
import dataclasses
from pathlib import Path

import numpy as np
import pytest

from core.energization import kernel_coupled
from core.network import kernel, solver
from core.transformer import circuit_model, magnetizing

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


# ------------------------------------------------- the network kernel's curve helpers

F_HZ = 60.0


def _base() -> circuit_model.EquivalentCircuit:
    return circuit_model.equivalent_circuit(
        circuit_model.Nameplate(2.5e6, 3, F_HZ, 480.0, impedance_percent=5.75, x_over_r=7)
    )


def _curves() -> dict[str, object]:
    c = _base()
    lam_n = c.nominal_flux_wb
    l_m, l_air = c.curve.unsaturated_inductance_h, c.air_core_inductance_h
    return {
        "two_slope": magnetizing.two_slope(l_m, 1.2 * lam_n, l_air),
        "smooth_knee": magnetizing.smooth_knee(l_m, 1.2 * lam_n, l_air, 0.05 * lam_n),
        "table": magnetizing.from_table(
            np.array([0.8, 1.1, 1.25, 1.4]) * lam_n, [2.0, 8.0, 60.0, 400.0], l_air
        ),
    }


def _packed(name: str) -> tuple[int, np.ndarray, np.ndarray, np.ndarray, int]:
    """The curve packed by the network solver: (kind, par, flux, cur, top)."""
    unit = solver.Unit(dataclasses.replace(_base(), curve=_curves()[name]))  # type: ignore[arg-type]
    kind, par, flux, cur, npts = solver._curve_arrays([unit])
    return int(kind[0]), par[0], flux, cur, int(npts[0]) - 1


def _grid(name: str, par: np.ndarray, flux: np.ndarray, top: int) -> np.ndarray:
    """Flux linkages on both sides of zero, through and beyond every knee or breakpoint."""
    lam_n = _base().nominal_flux_wb
    edges = [par[1]] if name == "two_slope" else [par[2]] if name == "smooth_knee" else []
    if name == "table":
        edges = list(flux[0, : top + 1])
    edges = np.asarray(edges, dtype=float)
    near = np.concatenate([edges, np.nextafter(edges, 0.0), np.nextafter(edges, np.inf)])
    span = np.linspace(0.0, 3.0 * lam_n, 601)
    lam = np.concatenate([span, near, [0.0, 1e-300, 5.0 * lam_n]])
    return np.concatenate([lam, -lam])


@pytest.mark.parametrize("name", ["two_slope", "smooth_knee", "table"])
def test_the_network_curve_is_the_energisation_curve_bit_for_bit(name: str) -> None:
    kind, par, flux, cur, top = _packed(name)
    assert kind == {"two_slope": 0, "smooth_knee": 1, "table": 2}[name]
    lam = _grid(name, par, flux, top)
    p0, p1, p2, p3, p4 = (float(x) for x in par)
    for x in lam:
        if kind == 2:
            got = kernel._curve_table(float(x), flux, cur, 0, top, p0)
        else:
            got = kernel._curve_s(float(x), kind, p0, p1, p2, p3, p4)
        twin = kernel_coupled._winding_curve(
            float(x), True, kind, p0, p1, p2, p3, p4, 0, flux, cur, top
        )
        assert got == twin, f"{name} at lambda = {x!r}: network {got} != energisation {twin}"


@pytest.mark.parametrize("name", ["two_slope", "smooth_knee", "table"])
def test_the_grid_reaches_every_branch(name: str) -> None:
    # the comparison means something only if the grid crosses each branch: below and above a
    # knee, inside every table segment and beyond the last point, on both signs
    kind, par, flux, _, top = _packed(name)
    lam = np.abs(_grid(name, par, flux, top))
    if kind == 2:
        segments = np.searchsorted(flux[0, : top + 1], lam, side="right")
        assert set(range(1, top + 2)) <= set(segments.tolist())
    else:
        knee = par[1] if kind == 0 else par[2]
        assert np.any(lam < knee)
        assert np.any(lam > knee)
    assert np.any(_grid(name, par, flux, top) < 0.0)


def test_the_comparison_sees_a_changed_parameter() -> None:
    # a slope changed in one copy's input shows: the comparison is not vacuous
    kind, par, flux, cur, top = _packed("two_slope")
    x = 2.0 * float(par[1])
    p = [float(v) for v in par]
    got = kernel._curve_s(x, kind, p[0], p[1], p[2] * (1.0 + 1e-12), p[3], p[4])
    twin = kernel_coupled._winding_curve(x, True, kind, *p, 0, flux, cur, top)
    assert got != twin
