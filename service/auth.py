"""Optional API-key authentication for ``/v1`` (off unless keys are configured).

Keys come from ``FIRSTCYCLE_API_KEYS`` (a JSON list) and/or ``FIRSTCYCLE_API_KEY_FILE`` (one key
per line, e.g. a mounted secret). A request presents its key as ``X-API-Key: <key>`` or
``Authorization: Bearer <key>``; it is compared with every configured key in constant time
(``hmac.compare_digest``). Health, readiness and metrics stay open for the orchestrator; the
contract (``/v1/openapi.json``) and the docs page are public too, so a client can read what to
send before it has a key. A key source that is set but empty never turns authentication off:
:meth:`service.settings.Settings.keys` refuses it at start.
"""

from __future__ import annotations

import hmac

from starlette.types import ASGIApp, Receive, Scope, Send

from service import problems


def _presented(scope: Scope) -> bytes:
    headers = dict(scope.get("headers", []))
    key = headers.get(b"x-api-key", b"")
    if not key:
        auth = headers.get(b"authorization", b"")
        if auth[:7].lower() == b"bearer ":
            key = auth[7:].strip()
    return bytes(key)


# /v1 paths that need no key: the contract itself (the docs page loads it)
PUBLIC = frozenset({"/v1/openapi.json"})


class ApiKeyAuth:
    """ASGI middleware: 401 problem document for /v1 calls without a valid key."""

    def __init__(self, app: ASGIApp, keys: list[str]) -> None:
        if not keys or not all(keys):
            raise ValueError("ApiKeyAuth needs at least one key and no empty key")
        self.app = app
        self.keys = [k.encode() for k in keys]

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        path = str(scope.get("path", ""))
        if scope["type"] == "http" and path.startswith("/v1/") and path not in PUBLIC:
            given = _presented(scope)
            ok = False
            for key in self.keys:  # no early exit: time does not depend on which key matched
                ok |= hmac.compare_digest(given, key)
            if not ok:
                response = problems.problem_response(
                    401,
                    "Unauthorized",
                    "a valid API key is required (X-API-Key or Authorization: Bearer)",
                    "unauthorized",
                    headers={"WWW-Authenticate": 'Bearer realm="firstcycle"'},
                )
                await response(scope, receive, send)
                return
        await self.app(scope, receive, send)
