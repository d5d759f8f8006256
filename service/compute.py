"""Where simulations run: a bounded number at a time per worker, each within a deadline.

A simulating operation calls :func:`run_heavy` instead of running its function in the shared
thread pool. It takes one of ``max_concurrent_simulations`` slots without waiting; when every
slot is busy the request is answered at once with 503 and ``Retry-After`` (``busy``), so health
checks, metrics and the closed-form peak, which never take a slot, stay fast. The function then
runs on a thread of this module's own pool (as many threads as slots). When it runs past
``request_deadline_s`` the caller gets 503 (``deadline-exceeded``) at the deadline; the thread
cannot be killed (the numba kernels hold no Python frames to interrupt), so the job is told to
stop and stops at its next :func:`checkpoint` (the core's chunked loops call it between chunks of
cases or events), keeping its slot until then: the slots count what really runs. The work
estimate (service/budget.py) is the primary bound; the deadline is the backstop.

503 rather than 504: the server itself, not an upstream, declined to finish in time; the same
request may succeed when the worker is less loaded, which ``Retry-After`` says.
"""

from __future__ import annotations

import asyncio
import contextvars
import math
import threading
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from typing import Any, TypeVar

from fastapi import FastAPI, Request
from fastapi.responses import JSONResponse

from service import problems
from service.settings import Settings

T = TypeVar("T")

_local = threading.local()
_lock = threading.Lock()
_pools: dict[int, tuple[threading.BoundedSemaphore, ThreadPoolExecutor]] = {}

BUSY_RESPONSES: dict[int | str, dict[str, Any]] = {
    503: {
        "description": "Every simulation slot of the worker is busy (problem type busy), or the "
        "computation ran past the request deadline (deadline-exceeded); retry after the "
        "Retry-After seconds. Limits: FIRSTCYCLE_MAX_CONCURRENT_SIMULATIONS per worker, "
        "FIRSTCYCLE_REQUEST_DEADLINE_S",
        "headers": {
            "Retry-After": {
                "description": "Seconds to wait before retrying",
                "schema": {"type": "integer"},
            }
        },
        "content": {
            problems.PROBLEM_MEDIA_TYPE: {"schema": {"$ref": "#/components/schemas/Problem"}}
        },
    }
}


class BusyError(Exception):
    """Every simulation slot is taken."""

    def __init__(self, slots: int, retry_after_s: int) -> None:
        self.slots = slots
        self.retry_after_s = retry_after_s
        super().__init__(f"all {slots} simulation slots of this worker are busy")


class DeadlineError(Exception):
    """The computation ran past the request deadline."""

    def __init__(self, deadline_s: float, retry_after_s: int) -> None:
        self.deadline_s = deadline_s
        self.retry_after_s = retry_after_s
        super().__init__(f"the computation ran past the request deadline of {deadline_s:g} s")


class _StoppedError(Exception):
    """Raised in a job's thread by :func:`checkpoint` once its caller has been answered."""


def _pool(slots: int) -> tuple[threading.BoundedSemaphore, ThreadPoolExecutor]:
    with _lock:
        if slots not in _pools:
            _pools[slots] = (
                threading.BoundedSemaphore(slots),
                ThreadPoolExecutor(max_workers=slots, thread_name_prefix="firstcycle-sim"),
            )
        return _pools[slots]


def checkpoint() -> None:
    """Stop the current job here if its caller has already been answered (deadline passed).

    Passed to the core's chunked loops as their ``checkpoint`` callable; outside a job (tests
    calling the core directly, the thread pool) it does nothing.
    """
    stop: threading.Event | None = getattr(_local, "stop", None)
    if stop is not None and stop.is_set():
        raise _StoppedError


async def run_heavy(settings: Settings, func: Callable[..., T], *args: Any) -> T:
    """Run ``func(*args)`` in a simulation slot within the request deadline.

    Raises BusyError at once when every slot is taken, DeadlineError at the deadline.
    """
    slots = settings.max_concurrent_simulations
    sem, pool = _pool(slots)
    retry = settings.busy_retry_after_s
    if not sem.acquire(blocking=False):
        raise BusyError(slots, retry)
    stop = threading.Event()
    ctx = contextvars.copy_context()

    def job() -> T:
        _local.stop = stop
        try:
            return ctx.run(func, *args)
        finally:
            _local.stop = None
            sem.release()

    try:
        fut = pool.submit(job)
    except BaseException:
        sem.release()
        raise
    deadline = settings.request_deadline_s
    try:
        return await asyncio.wait_for(asyncio.wrap_future(fut), timeout=deadline)
    except TimeoutError:
        stop.set()
        raise DeadlineError(deadline, retry) from None


async def _busy(request: Request, exc: Exception) -> JSONResponse:
    assert isinstance(exc, BusyError)
    return problems.problem_response(
        503,
        "Busy",
        f"{exc}; closed-form requests and health checks are still served. Retry after "
        f"{exc.retry_after_s} s, or spread the work over more workers.",
        "busy",
        request,
        headers={"Retry-After": str(exc.retry_after_s)},
    )


async def _deadline(request: Request, exc: Exception) -> JSONResponse:
    assert isinstance(exc, DeadlineError)
    return problems.problem_response(
        503,
        "Deadline exceeded",
        f"{exc}; the worker is loaded more than the work estimate allows for. Retry later, or "
        "reduce the request (fewer samples, events, cases or a shorter duration).",
        "deadline-exceeded",
        request,
        headers={"Retry-After": str(max(1, math.ceil(exc.retry_after_s)))},
    )


def install(app: FastAPI) -> None:
    """Register the 503 handlers on the app."""
    app.add_exception_handler(BusyError, _busy)
    app.add_exception_handler(DeadlineError, _deadline)
