"""POST /v1/network-energization with its units given as three-phase SI circuits, against the
independent scipy reference written from Kirchhoff's laws (tests/references/network_reference.py).

The request and the reference share only the circuit's numbers (SI, as a general-purpose
circuit simulator would take them): the EMFs e_k = sqrt(2)*V_LL/sqrt(3)*sin(omega*t + alpha +
theta_k) behind R_s, L_s per phase; each winding's resistance and two-slope curve; the
connection; the residual flux of the energised unit as b_R*lambda_N with lambda_N =
sqrt(2)*V_w/omega (circuit laws). The reference is sampled densely (2048 samples per cycle)
over the two cycles after the closing in which the operation reads its first peaks, so its
maximum is the peak itself; the operation's first peaks (128 samples per cycle, each refined
between samples) must lie within 0.1 % of it, the project's requirement for this solver.
"""

from __future__ import annotations

import math

import network_reference as ref
import numpy as np
import pytest
from fastapi.testclient import TestClient

from service.app import create_app

F = 60.0
V_LL = 13_800.0
W = 2.0 * math.pi * F
R_S, X_S = 0.25, 2.5  # invented feeder impedance per phase [ohm]
RESIDUAL = (0.8, -0.4, -0.4)  # [pu of lambda_N]
# invented units: a 13.8 kV delta energised, a grounded wye (7967 V windings) in service
DELTA = {"r_w": 0.93, "l_m": 75.8, "knee": 61.8, "l_air": 0.1035, "rated": 104.6}
WYE = {"r_w": 1.5, "l_m": 200.0, "knee": 35.9, "l_air": 0.3, "rated": 41.8}


def _circuit(connection: str, v_w: float, u: dict[str, float]) -> dict[str, object]:
    return {
        "connection": connection,
        "winding_voltage_v": v_w,
        "winding_resistance_ohm": u["r_w"],
        "magnetizing": {
            "kind": "two_slope",
            "unsaturated_inductance_h": u["l_m"],
            "knee_flux_wb": u["knee"],
            "saturated_inductance_h": u["l_air"],
        },
        "rated_current_a": u["rated"],
    }


@pytest.mark.parametrize("alpha_deg", [0.0, 90.0])
def test_first_peaks_of_si_units_against_the_scipy_reference(alpha_deg: float) -> None:
    v_wye = V_LL / math.sqrt(3.0)
    body = {
        "bus_voltage_kv": V_LL / 1e3,
        "frequency_hz": F,
        "source": {"kind": "impedance", "resistance_ohm": R_S, "reactance_ohm": X_S},
        "closing_angle_deg": alpha_deg,
        "units": [
            {
                "name": "delta",
                "circuit_three_phase": _circuit("delta", V_LL, DELTA),
                "residual_flux_pu": list(RESIDUAL),
            },
            {
                "name": "wye",
                "circuit_three_phase": _circuit("wye_grounded", v_wye, WYE),
                "state": "in_service",
            },
        ],
        "options": {"duration_s": 0.1},
    }
    with TestClient(create_app()) as client:
        r = client.post("/v1/network-energization", json=body)
    assert r.status_code == 200, r.text
    out = r.json()

    lam_n = math.sqrt(2.0) * V_LL / W  # the delta winding's lambda_N, circuit laws
    net = ref.RefNetwork(
        v_ll=V_LL,
        f=F,
        alpha_deg=alpha_deg,
        r_s=R_S,
        l_s=X_S / W,
        units=(
            ref.RefUnit("delta", DELTA["r_w"], DELTA["l_m"], DELTA["knee"], DELTA["l_air"],
                        (0.0, 0.0, 0.0), tuple(b * lam_n for b in RESIDUAL)),  # type: ignore[arg-type]
            ref.RefUnit("wye_grounded", WYE["r_w"], WYE["l_m"], WYE["knee"], WYE["l_air"],
                        (0.0, 0.0, 0.0), (0.0, 0.0, 0.0), in_service=True),
        ),
    )  # fmt: skip
    t = np.arange(2 * 2048 + 1) / (2048 * F)  # the first-peak window: two cycles from t = 0
    sol = ref.simulate(net, t)
    ref_unit = float(np.abs(sol.line_current_a[0]).max())
    ref_source = float(np.abs(sol.source_current_a).max())
    got_unit = out["units"][0]["current"]["first_peak_a"]
    got_source = out["source"]["first_peak_a"]
    # measured: the unit's and the source's first peaks 3.8e-7 below the reference at 0 deg
    # (8.7 x rated), 1.5e-6 at 90 deg (3.3 x rated)
    assert got_unit == pytest.approx(ref_unit, rel=1e-3), (got_unit, ref_unit)
    assert got_source == pytest.approx(ref_source, rel=1e-3), (got_source, ref_source)
    assert (
        ref_unit > 3.0 * DELTA["rated"]
    )  # an inrush, not a magnetising current (about 0.7 A peak)
