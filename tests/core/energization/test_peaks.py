"""Tests of core.energization.peaks: the curve inverse and the exact reading's basic properties."""

from __future__ import annotations

import numpy as np
import pytest

from core.energization import energize, peaks
from core.transformer import circuit_model, magnetizing


@pytest.mark.parametrize(
    "curve",
    [
        magnetizing.two_slope(20.0, 30.0, 0.05),
        magnetizing.smooth_knee(20.0, 30.0, 0.05, 1.5),
        magnetizing.from_table([10.0, 25.0, 32.0], [0.4, 1.5, 20.0], 0.05),
    ],
    ids=["two-slope", "smooth", "table"],
)
def test_flux_of_current_inverts_the_curve(curve: magnetizing.MagnetizingCurve) -> None:
    # definition of an inverse: f(f^-1(i)) = i, odd, over the unsaturated and saturated parts
    lam = np.linspace(-80.0, 80.0, 321)
    back = peaks.flux_of_current(curve, curve.current(lam))
    assert back == pytest.approx(lam, rel=1e-12, abs=1e-12)


def test_exact_peaks_are_never_below_the_samples_and_stay_in_their_cycle() -> None:
    npl = circuit_model.Nameplate(2500e3, 3, 60.0, 13.8e3, connection="wye")
    c = circuit_model.equivalent_circuit(npl)
    res = np.array([[0.8, -0.4, -0.4]])
    sim = energize.simulate(c, 0.0, res, duration_s=5.0 / 60.0, samples_per_cycle=64)
    got = peaks.cycle_peaks([c], np.array([0.0]), res, sim)[0]
    samples = np.abs(sim.line_current_a[0, :, :-1]).reshape(3, 5, 64).max(axis=-1)
    assert np.all(got >= samples)
    # a corner between samples: a few 1e-3 above the largest sample, not more
    assert np.all(got <= samples * 1.02)
    first = peaks.first_peaks([c], np.array([0.0]), res, sim)
    assert first.peak_a[0] == pytest.approx(got.max(axis=1), rel=1e-12)
    assert np.all((first.time_s >= 0.0) & (first.time_s <= sim.time_s[-1]))
