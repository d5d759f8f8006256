"""Warm-up before readiness: compile (or load from numba's cache) every kernel, build the
contract, render one figure of each kind, so the first real request is as fast as a warm one.

The numba kernels are compiled on first call (or loaded from ``NUMBA_CACHE_DIR``); that first
call costs seconds, and a worker that compiles late also holds more memory. :func:`run` sends a
small set of demo requests (the invented Northgate Cold Storage scenario, short durations and
few samples) through the app's routes in-process, one per code path that reaches a kernel,
plus the two figure renderers and a spreadsheet table, and builds the OpenAPI document that
``/docs`` loads. The requests go to the router directly: no authentication, metrics or access
log is involved.

:func:`start` runs it once per process in a background thread (the event loop stays free to
answer ``/healthz``); :func:`state` tells ``/readyz`` whether it has finished. A failed warm-up
leaves the process not ready and logs why: a service whose demo requests fail should not
receive traffic.
"""

from __future__ import annotations

import asyncio
import json
import logging
import threading
import time
from dataclasses import dataclass, field
from typing import Any

from starlette.types import ASGIApp, Message

from service.examples import (
    CLEARANCE_REQUESTS,
    DIP_REQUESTS,
    ENVELOPE_REQUESTS,
    NETWORK_REQUESTS,
    NETWORK_STATISTICS_REQUESTS,
    PEAK_REQUESTS,
    SHEET_REQUESTS,
    STATISTICS_REQUESTS,
)
from service.settings import WARMUP_SCOPE_KEY, get_settings

log = logging.getLogger("firstcycle")

# (method, path, body): each line reaches a kernel signature or a first-call path.
REQUESTS: tuple[tuple[str, str, dict[str, Any] | None], ...] = (
    # delta winding on a source with impedance: core.network.kernel.integrate, single unit
    ("POST", "/v1/inrush/peak", PEAK_REQUESTS["northgate_main_unit"]),
    # grounded wye on the generator's subtransient reactance, worst-case search over many
    # closing instants (a large batch of single-unit cases)
    ("POST", "/v1/inrush/peak", PEAK_REQUESTS["northgate_backfeed"]),
    ("POST", "/v1/inrush/envelope", ENVELOPE_REQUESTS["northgate_lighting"]),
    # machine and transformer together: core.network.kernel.integrate with a machine source,
    # and the voltage figure
    (
        "POST",
        "/v1/generator-dip/figure",
        {**DIP_REQUESTS["northgate_backfeed"], "options": {"duration_s": 1.0}},
    ),
    # time-current figure (log-log axes) and the clearance study
    ("POST", "/v1/clearance/figure", CLEARANCE_REQUESTS["northgate_lighting"]),
    # Monte Carlo with event checks through the generator
    (
        "POST",
        "/v1/inrush/statistics",
        {
            **STATISTICS_REQUESTS["northgate_backfeed_generator"],
            "options": {"samples": 200, "random_state": 1, "check_events": 10},
        },
    ),
    ("GET", SHEET_REQUESTS["northgate_main_unit_envelope"][1], None),
    # several units on one bus, one in service with its differential, and the current figure:
    # the network kernel with a writable step array (a second signature of the one above), the
    # exact peak reading's windows
    (
        "POST",
        "/v1/network-energization/figure",
        {**NETWORK_REQUESTS["northgate_ring_sympathetic"], "options": {"duration_s": 0.2}},
    ),
    # the network Monte Carlo without a record, and its device events
    (
        "POST",
        "/v1/network-energization/statistics",
        {
            **NETWORK_STATISTICS_REQUESTS["northgate_ring_reclose"],
            "options": {"duration_s": 0.2},
            "sampling": {"samples": 40, "random_state": 1, "check_events": 10},
        },
    ),
)


#: Times a warm-up request answered 503 (deadline or busy) is asked again, a second apart.
_RETRIES_WHEN_BUSY = 120


@dataclass
class WarmupState:
    """Progress of the process-wide warm-up."""

    started: bool = False
    done: threading.Event = field(default_factory=threading.Event)
    error: str | None = None
    seconds: float | None = None


_STATE = WarmupState()
_LOCK = threading.Lock()


def state() -> WarmupState:
    """The warm-up state of this process."""
    return _STATE


async def _call(
    app: ASGIApp, method: str, target: str, body: dict[str, Any] | None, headers: list[Any]
) -> int:
    path, _, query = target.partition("?")
    payload = json.dumps(body).encode() if body is not None else b""
    headers = [*headers, (b"host", b"warmup"), (b"content-length", str(len(payload)).encode())]
    if body is not None:
        headers.append((b"content-type", b"application/json"))
    scope = {
        "type": "http",
        "asgi": {"version": "3.0"},
        "http_version": "1.1",
        "method": method,
        "scheme": "http",
        "path": path,
        "raw_path": path.encode(),
        "query_string": query.encode(),
        "root_path": "",
        "headers": headers,
        "client": ("127.0.0.1", 0),
        "server": ("127.0.0.1", 0),
        "state": {},
        # the default compute limits for these demo requests (service.settings)
        WARMUP_SCOPE_KEY: True,
    }
    sent = False
    status = 0

    async def receive() -> Message:
        nonlocal sent
        if sent:
            await asyncio.sleep(3600)  # a client that stays connected
        sent = True
        return {"type": "http.request", "body": payload, "more_body": False}

    async def send(message: Message) -> None:
        nonlocal status
        if message["type"] == "http.response.start":
            status = int(message["status"])

    await app(scope, receive, send)
    return status


async def _run_all(app: Any, key: str | None) -> None:
    for n, (method, target, body) in enumerate(REQUESTS, start=1):
        headers = [(b"x-request-id", f"warmup-{n}".encode())]
        if key:
            headers.append((b"x-api-key", key.encode()))
        status = await _call(app, method, target, body, headers)
        for _ in range(_RETRIES_WHEN_BUSY):
            # a first call that compiles may outlast the request deadline (503), and the job it
            # leaves keeps its simulation slot until it stops (503 busy): the compiled kernel
            # stays in the process either way, so ask again once the slot is free
            if status != 503:
                break
            await asyncio.sleep(1.0)
            status = await _call(app, method, target, body, headers)
        if status != 200:
            raise RuntimeError(f"warm-up {method} {target.split('?')[0]} answered {status}")
    app.openapi()


def run(app: Any) -> float:
    """Send the warm-up requests to ``app`` and build its contract.

    Returns the seconds it took; raises when a warm-up request does not answer 200.
    """
    keys = get_settings().keys()
    t0 = time.perf_counter()
    asyncio.run(_run_all(app, keys[0] if keys else None))
    return time.perf_counter() - t0


def _worker(app: Any) -> None:
    try:
        _STATE.seconds = run(app)
        log.info("warm-up done", extra={"fields": {"warmup_s": round(_STATE.seconds, 2)}})
    except Exception as exc:  # any failure: stay not ready, say why
        _STATE.error = f"{type(exc).__name__}: {exc}"
        log.error("warm-up failed; not ready", exc_info=True)
        return
    _STATE.done.set()


def start(app: Any) -> None:
    """Start the warm-up in a background thread, once per process (later calls do nothing)."""
    with _LOCK:
        if _STATE.started:
            return
        _STATE.started = True
    threading.Thread(target=_worker, args=(app,), name="firstcycle-warmup", daemon=True).start()


def skip() -> None:
    """Mark the process ready without warming up (``FIRSTCYCLE_WARMUP=false``)."""
    with _LOCK:
        _STATE.started = True
    _STATE.done.set()
