"""Bounded work: the budget refuses before any simulation, slots answer 503 when full."""

from __future__ import annotations

import json
import threading
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from fastapi.testclient import TestClient

from core.cost import Work
from core.errors import LimitError
from core.statistics import monte_carlo
from service import budget, compute
from service.app import create_app
from service.settings import get_settings

EXAMPLES = Path(__file__).resolve().parents[2] / "openapi" / "v1" / "examples"


def _req(name: str) -> dict[str, Any]:
    data: dict[str, Any] = json.loads((EXAMPLES / f"{name}.json").read_text())["request"]
    return data


def _app(monkeypatch: pytest.MonkeyPatch, **env: str) -> TestClient:
    for k, v in env.items():
        monkeypatch.setenv(f"FIRSTCYCLE_{k.upper()}", v)
    get_settings.cache_clear()
    return TestClient(create_app(), raise_server_exceptions=False)


@pytest.fixture(autouse=True)
def _fresh_settings() -> Iterator[None]:
    yield
    get_settings.cache_clear()


def test_statistics_over_event_limit_is_refused_before_the_monte_carlo(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    calls: list[int] = []
    real = monte_carlo.peak_distribution

    def spy(*a: Any, **k: Any) -> Any:
        calls.append(1)
        return real(*a, **k)

    monkeypatch.setattr(monte_carlo, "peak_distribution", spy)
    body = _req("inrush_statistics.northgate_backfeed_generator")
    body["options"]["check_events"] = 2000
    body["options"]["samples"] = 20000
    with _app(monkeypatch, max_event_checks="1000") as c:
        r = c.post("/v1/inrush/statistics", json=body)
    assert r.status_code == 422
    fields = [e["field"] for e in r.json()["errors"]]
    assert fields[0] == "options.check_events x (devices + dip)"
    assert calls == []  # refused before any simulation


def test_over_budget_names_the_knobs_and_their_values(monkeypatch: pytest.MonkeyPatch) -> None:
    body = _req("inrush_statistics.northgate_backfeed")
    body["options"]["samples"] = 20000
    with _app(monkeypatch, max_request_steps="5000000") as c:
        r = c.post("/v1/inrush/statistics", json=body)
    assert r.status_code == 422
    doc = r.json()
    assert doc["type"].endswith("limit-exceeded")
    knobs = {e["field"]: e["allowed"] for e in doc["errors"][1:]}
    allowed = knobs["options.samples"]
    n = int(allowed.split()[1])
    assert 10 <= n < 20000
    # the value named fits: the same request with it is accepted
    body["options"]["samples"] = n
    with _app(monkeypatch, max_request_steps="5000000") as c:
        assert c.post("/v1/inrush/statistics", json=body).status_code == 200


def test_when_no_field_fits_alone_the_fields_to_turn_together_are_named() -> None:
    # work = 10 x a + 10 x b winding-steps, budget 100: at a = 10, b = 10 (200) neither knob
    # alone fits (a -> 1 leaves 110); a at its smallest (1) with b <= 9 does (10 + 90 = 100)
    def estimate(o: Any) -> Work:
        a, b = o.get("a", 10), o.get("b", 10)
        return Work(10.0 * a + 10.0 * b, (("a", 10.0 * a), ("b", 10.0 * b)))

    knobs = [budget.Knob("a", 10, 1, integer=True), budget.Knob("b", 10, 1, integer=True)]
    with pytest.raises(LimitError) as err:
        budget.enforce(estimate, knobs, 100.0)
    hints = dict(err.value.knobs)
    assert hints == {"a": "<= 1 (now 10) with the others listed",
                     "b": "<= 9 (now 10) with the others listed"}  # fmt: skip
    assert estimate({"a": 1, "b": 9}).steps <= 100.0
    # a request within the budget passes with its estimate
    assert budget.enforce(estimate, knobs, 200.0).steps == 200.0


def test_batch_over_budget_names_the_case_count(monkeypatch: pytest.MonkeyPatch) -> None:
    case = _req("inrush_peak.northgate_main_unit")
    case["method"] = "simulated"
    with _app(monkeypatch, max_request_steps="1000000") as c:
        r = c.post("/v1/inrush/peak/batch", json={"cases": [case] * 20})
    assert r.status_code == 422
    knobs = {e["field"]: e["allowed"] for e in r.json()["errors"][1:]}
    assert knobs["cases"].startswith("<= ")


def test_split_statistics_combine_by_counts(client: TestClient) -> None:
    """Two half-size requests with different random_state are independent samples: their
    exceedance counts and sample counts add up to those of the combined sample (binomial
    counts add; Clopper-Pearson is then recomputed from the sums by the caller)."""
    body = _req("inrush_statistics.northgate_backfeed")
    body["options"].update(samples=400, threshold_a=15000.0)
    out = []
    for seed in (11, 12):
        body["options"]["random_state"] = seed
        r = client.post("/v1/inrush/statistics", json=body)
        assert r.status_code == 200
        out.append(r.json()["exceedance"])
    assert out[0] != out[1]  # different seeds, different samples
    total = sum(e["samples"] for e in out)
    hits = sum(e["exceedances"] for e in out)
    assert total == 800
    assert 0 <= hits <= total
    # each half's probability is its count over its samples, so the combined estimate is the
    # sample-weighted mean of the halves'
    mean = sum(e["probability"] * e["samples"] for e in out) / total
    assert hits / total == pytest.approx(mean, abs=1e-12)


def test_full_slots_answer_503_while_health_and_closed_form_stay_fast(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    """Saturating client: one slot, held by a slow job; a further simulating request gets 503
    with Retry-After at once, while /healthz, /readyz and the analytic peak answer."""
    release = threading.Event()
    started = threading.Event()
    slow = _req("inrush_peak.northgate_main_unit")
    slow["method"] = "simulated"
    analytic = dict(slow, method="analytic")
    from service.routers import inrush as inrush_router

    real = inrush_router._peak

    def held(body: Any, settings: Any) -> Any:
        if body.method == "simulated":
            started.set()
            release.wait(timeout=30)
        return real(body, settings)

    monkeypatch.setattr(inrush_router, "_peak", held)
    with _app(monkeypatch, max_concurrent_simulations="1", busy_retry_after_s="3") as c:
        results: list[int] = []
        t = threading.Thread(
            target=lambda: results.append(c.post("/v1/inrush/peak", json=slow).status_code)
        )
        t.start()
        try:
            assert started.wait(timeout=30)
            t0 = time.monotonic()
            r = c.post("/v1/inrush/peak", json=slow)
            assert r.status_code == 503
            assert r.headers["retry-after"] == "3"
            assert r.headers["content-type"].startswith("application/problem+json")
            assert r.json()["type"].endswith(":busy")
            assert c.get("/healthz").status_code == 200
            assert c.get("/readyz").status_code == 200
            assert c.post("/v1/inrush/peak", json=analytic).status_code == 200
            assert time.monotonic() - t0 < 5.0  # none of these waited for the slow job
        finally:
            release.set()
            t.join(timeout=60)
        assert results == [200]
        # the slot is free again
        assert c.post("/v1/inrush/peak", json=slow).status_code == 200


def test_deadline_answers_503_and_stops_the_job(monkeypatch: pytest.MonkeyPatch) -> None:
    stopped = threading.Event()
    from service.routers import inrush as inrush_router

    def slow(body: Any, settings: Any) -> Any:
        try:
            for _ in range(600):  # a chunked job: checks between chunks
                time.sleep(0.05)
                compute.checkpoint()
        except Exception:
            stopped.set()
            raise
        raise AssertionError("not stopped")

    monkeypatch.setattr(inrush_router, "_peak", slow)
    body = _req("inrush_peak.northgate_main_unit")
    body["method"] = "simulated"
    with _app(monkeypatch, request_deadline_s="0.5") as c:
        t0 = time.monotonic()
        r = c.post("/v1/inrush/peak", json=body)
        assert r.status_code == 503
        assert r.json()["type"].endswith(":deadline-exceeded")
        assert "retry-after" in r.headers
        assert time.monotonic() - t0 < 10.0
        assert stopped.wait(timeout=10)
