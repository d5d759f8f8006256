"""Warm-up before readiness: /readyz waits for it, and after it no request compiles a kernel."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import threading
from collections.abc import Iterator
from pathlib import Path

import pytest
from fastapi.testclient import TestClient

from service import warmup
from service.app import create_app
from service.settings import get_settings

ROOT = Path(__file__).resolve().parents[2]

# Run in a fresh interpreter: in this one, earlier tests have compiled every kernel already, so
# a missing warm-up signature would go unnoticed. The child warms up, records every numba
# dispatcher of core (signatures compiled or loaded, cache misses), sends every demo request of
# every simulating operation, and records them again.
CHILD = r"""
import importlib, json, pkgutil
from numba.core.registry import CPUDispatcher
from fastapi.testclient import TestClient
import core
from service import examples as ex, warmup
from service.app import create_app

mods = [importlib.import_module(m.name) for m in pkgutil.walk_packages(core.__path__, "core.")]

def snapshot():
    out = {}
    for m in mods:
        for name, d in vars(m).items():
            if isinstance(d, CPUDispatcher) and d.__module__ == m.__name__:
                out[f"{m.__name__}.{name}"] = [
                    sorted(str(s) for s in d.signatures), sum(d.stats.cache_misses.values())
                ]
    return out

app = create_app()
warmup.run(app)
before = snapshot()
client = TestClient(app)  # no lifespan: the warm-up above is the only one
posts = [("/v1/inrush/peak", ex.PEAK_REQUESTS), ("/v1/inrush/envelope", ex.ENVELOPE_REQUESTS),
         ("/v1/inrush/peak/batch", ex.PEAK_BATCH_REQUESTS),
         ("/v1/clearance", ex.CLEARANCE_REQUESTS), ("/v1/clearance/figure", ex.CLEARANCE_REQUESTS),
         ("/v1/generator-dip", ex.DIP_REQUESTS), ("/v1/generator-dip/figure", ex.DIP_REQUESTS),
         ("/v1/mitigation", ex.MITIGATION_REQUESTS)]
stats = {k: {**v, "options": {**v["options"], "samples": 300, "check_events": 10}}
         for k, v in ex.STATISTICS_REQUESTS.items()}
posts.append(("/v1/inrush/statistics", stats))
posts += [("/v1/network-energization", ex.NETWORK_REQUESTS),
          ("/v1/network-energization/figure", ex.NETWORK_REQUESTS)]
net_stats = {k: {**v, "sampling": {**v["sampling"], "samples": 200}}
             for k, v in ex.NETWORK_STATISTICS_REQUESTS.items()}
posts.append(("/v1/network-energization/statistics", net_stats))
status = {}
for path, requests in posts:
    for name, body in requests.items():
        status[f"{path} {name}"] = client.post(path, json=body).status_code
for name, (_, url) in ex.SHEET_REQUESTS.items():
    status[f"sheet {name}"] = client.get(url).status_code
print(json.dumps({"before": before, "after": snapshot(), "status": status}))
"""


@pytest.mark.slow
def test_no_kernel_compiles_after_warmup() -> None:
    env = {**os.environ, "OMP_NUM_THREADS": "1", "PYTHONPATH": str(ROOT)}
    env.pop("FIRSTCYCLE_WARMUP", None)
    env.pop("FIRSTCYCLE_API_KEYS", None)
    env.pop("FIRSTCYCLE_API_KEY_FILE", None)
    out = subprocess.run(
        [sys.executable, "-c", CHILD], env=env, cwd=ROOT, capture_output=True, text=True,
        timeout=900, check=True,
    )  # fmt: skip
    got = json.loads(out.stdout.strip().splitlines()[-1])
    assert set(got["status"].values()) == {200}, got["status"]
    kernels = ["core.network.kernel.integrate", "core.network.kernel.integrate_lone",
               "core.network.kernel.integrate_lone_parallel",
               "core.network.kernel.integrate_decoupled"]  # fmt: skip
    for name in kernels:  # the warm-up reached every top-level kernel
        assert got["before"][name][0], name
    assert got["after"] == got["before"]  # no new signature, no new compilation


@pytest.fixture
def gated(monkeypatch: pytest.MonkeyPatch) -> Iterator[tuple[TestClient, threading.Event]]:
    """An app whose warm-up waits for the test to release it (fresh process-wide state)."""
    gate = threading.Event()
    calls: list[object] = []

    def slow_run(app: object) -> float:
        calls.append(app)
        gate.wait(30)
        if os.environ.get("WARMUP_FAILS") == "1":
            raise RuntimeError("warm-up POST /v1/inrush/peak answered 422")
        return 0.0

    monkeypatch.setattr(warmup, "_STATE", warmup.WarmupState())
    monkeypatch.setattr(warmup, "run", slow_run)
    monkeypatch.setenv("FIRSTCYCLE_WARMUP", "true")
    get_settings.cache_clear()
    with TestClient(create_app()) as c:
        yield c, gate
    gate.set()
    get_settings.cache_clear()


def _wait_done() -> None:
    state = warmup.state()
    for _ in range(300):
        if state.done.is_set() or state.error:
            return
        threading.Event().wait(0.01)


def test_not_ready_until_warm(gated: tuple[TestClient, threading.Event]) -> None:
    client, gate = gated
    assert client.get("/healthz").status_code == 200  # liveness answers during the warm-up
    r = client.get("/readyz")
    assert r.status_code == 503
    assert r.headers["content-type"].startswith("application/problem+json")
    assert "warming up" in r.json()["detail"]
    gate.set()
    _wait_done()
    assert client.get("/readyz").json() == {"status": "ready"}


def test_failed_warmup_stays_not_ready(
    gated: tuple[TestClient, threading.Event], monkeypatch: pytest.MonkeyPatch
) -> None:
    client, gate = gated
    monkeypatch.setenv("WARMUP_FAILS", "1")
    gate.set()
    _wait_done()
    r = client.get("/readyz")
    assert r.status_code == 503
    assert "warm-up failed" in r.json()["detail"]
    assert client.get("/healthz").status_code == 200


def test_warmup_off_is_ready_at_once(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(warmup, "_STATE", warmup.WarmupState())
    monkeypatch.setenv("FIRSTCYCLE_WARMUP", "false")
    get_settings.cache_clear()
    with TestClient(create_app()) as c:
        assert c.get("/readyz").status_code == 200
    get_settings.cache_clear()


def test_warmup_succeeds_under_lowered_limits_which_still_hold_for_callers(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    # An operator who lowers the compute limits below the demo requests the warm-up sends (a
    # tenth of the work budget, 100 samples, 0.1 s) must still get a ready service: the
    # warm-up's in-process requests are held to the default limits, a caller to the lowered
    # ones, whatever it sends.
    from service.examples import NETWORK_STATISTICS_REQUESTS

    for name, value in (
        ("FIRSTCYCLE_MAX_REQUEST_STEPS", "4000000"),
        ("FIRSTCYCLE_MAX_STATISTICS_SAMPLES", "100"),
        ("FIRSTCYCLE_MAX_DURATION_S", "0.1"),
    ):
        monkeypatch.setenv(name, value)
    get_settings.cache_clear()
    try:
        app = create_app()
        assert warmup.run(app) > 0.0  # raises when a warm-up request is refused
        body = NETWORK_STATISTICS_REQUESTS["northgate_ring_reclose"]
        r = TestClient(app).post(
            "/v1/network-energization/statistics",
            json=body,
            headers={"host": "warmup", "x-request-id": "warmup-1"},
        )
        assert r.status_code == 422
        err = r.json()["errors"][0]
        assert err["field"] == "sampling.samples"
        assert err["allowed"] == "<= 100"
    finally:
        get_settings.cache_clear()
