"""Request IDs, JSON access logs and Prometheus metrics.

* ``X-Request-ID``: accepted from the caller when it is 1-128 characters of ``[A-Za-z0-9._-]``,
  otherwise generated (UUID4 hex); echoed on every response and written in every log line.
* JSON logs: one object per line on the ``firstcycle`` logger (``ts``, ``level``, ``msg`` and the
  request fields), so log shippers need no parsing rules.
* Metrics: ``firstcycle_requests_total{operation,status}`` and
  ``firstcycle_request_seconds{operation}`` served at ``GET /metrics`` in the Prometheus text
  format. With several worker processes each worker reports its own counters.
"""

from __future__ import annotations

import json
import logging
import re
import time
import uuid
from typing import Any

from prometheus_client import CONTENT_TYPE_LATEST, CollectorRegistry, Counter, Histogram
from prometheus_client import generate_latest as _generate
from starlette.types import ASGIApp, Message, Receive, Scope, Send

_ID = re.compile(r"^[A-Za-z0-9._-]{1,128}$")
log = logging.getLogger("firstcycle")

REGISTRY = CollectorRegistry()
REQUESTS = Counter(
    "firstcycle_requests_total", "HTTP requests by route and status", ["operation", "status"],
    registry=REGISTRY,
)  # fmt: skip
LATENCY = Histogram(
    "firstcycle_request_seconds", "Request latency by route", ["operation"], registry=REGISTRY,
    buckets=(0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1.0, 2.5, 5.0, 10.0),
)  # fmt: skip


class JsonFormatter(logging.Formatter):
    """One JSON object per record."""

    def format(self, record: logging.LogRecord) -> str:
        out: dict[str, Any] = {
            "ts": time.strftime("%Y-%m-%dT%H:%M:%S", time.gmtime(record.created))
            + f".{int(record.msecs):03d}Z",
            "level": record.levelname.lower(),
            "logger": record.name,
            "msg": record.getMessage(),
        }
        fields = getattr(record, "fields", None)
        if isinstance(fields, dict):
            out.update(fields)
        if record.exc_info:
            out["exception"] = self.formatException(record.exc_info)
        return json.dumps(out, default=str)


def configure_logging(level: str = "INFO") -> None:
    """Send the ``firstcycle`` logger to stderr as JSON lines (idempotent)."""
    if any(isinstance(h.formatter, JsonFormatter) for h in log.handlers):
        return
    handler = logging.StreamHandler()
    handler.setFormatter(JsonFormatter())
    log.addHandler(handler)
    log.setLevel(level)
    log.propagate = False


def metrics_text() -> tuple[bytes, str]:
    """The current metrics and their media type."""
    return _generate(REGISTRY), CONTENT_TYPE_LATEST


def _route(scope: Scope) -> str:
    route = scope.get("route")
    path = getattr(route, "path", None)
    return str(path) if path else "unmatched"


class RequestContext:
    """ASGI middleware: request ID, access log line, metrics."""

    def __init__(self, app: ASGIApp) -> None:
        self.app = app

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        given = dict(scope.get("headers", [])).get(b"x-request-id", b"").decode("latin-1")
        rid = given if _ID.match(given) else uuid.uuid4().hex
        scope.setdefault("state", {})["request_id"] = rid
        status = 500
        start = time.perf_counter()

        async def send_with_id(message: Message) -> None:
            nonlocal status
            if message["type"] == "http.response.start":
                status = int(message["status"])
                headers = list(message.get("headers", []))
                headers.append((b"x-request-id", rid.encode("latin-1")))
                message = {**message, "headers": headers}
            await send(message)

        try:
            await self.app(scope, receive, send_with_id)
        finally:
            elapsed = time.perf_counter() - start
            op = _route(scope)
            REQUESTS.labels(op, str(status)).inc()
            LATENCY.labels(op).observe(elapsed)
            log.info(
                "request",
                extra={
                    "fields": {
                        "request_id": rid,
                        "method": scope.get("method"),
                        "path": scope.get("path"),
                        "route": op,
                        "status": status,
                        "duration_ms": round(elapsed * 1e3, 3),
                    }
                },
            )
