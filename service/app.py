"""The FastAPI application: routers, problem handlers, body-size limit, CORS, health checks."""

from __future__ import annotations

import asyncio
import copy
from collections.abc import AsyncIterator
from contextlib import asynccontextmanager
from pathlib import Path
from typing import Any

from fastapi import FastAPI
from fastapi.middleware.cors import CORSMiddleware
from fastapi.openapi.docs import get_swagger_ui_html
from fastapi.responses import HTMLResponse, Response
from fastapi.staticfiles import StaticFiles
from starlette.types import ASGIApp, Message, Receive, Scope, Send

from service import auth, compute, observability, problems, warmup
from service.routers import (
    clearance,
    dip,
    inrush,
    mitigation,
    network,
    network_statistics,
    sheet,
    sheet_verdicts,
    statistics,
)
from service.settings import KeySourceError, get_settings
from service.version import API_VERSION, PACKAGE_VERSION

# Swagger UI 5.35.0 (swagger-ui-dist, Apache-2.0, LICENSE and NOTICE beside it), vendored so the
# docs page needs no network: version 4 cannot render OpenAPI 3.1.
STATIC = Path(__file__).resolve().parent / "static"

DESCRIPTION = """
What happens when a transformer is switched on, and whether the system around it copes:
first inrush peak and its worst case, the decay envelope (per-cycle peaks, rms over time,
second harmonic), from nameplate data or an SI equivalent circuit.

Every response lists the assumptions actually used with their provenance, warnings, the method
and its references. **Results are engineering estimates: verify with the equipment
manufacturers' data; local codes and licensed engineering practice govern.**

Errors are RFC 9457 problem documents (`application/problem+json`): 422 for invalid input
(the field's path, the value and the allowed range), 400 for a body that is not JSON text (with
the line and column of the syntax error), 415 for a body sent as another media type, 413 for a
body larger than the configured limit, 408 for one that does not arrive in full within the
configured time (and the connection is closed).

**x rated**: every field ending in `_x_rated` is a multiple of the rated rms line current of the
energised winding, I_r = S/(sqrt(3)·V_LL) (S/V for one phase). A peak in x rated is the
instantaneous peak over that rms current, so a steady rated current peaks at 1.414 x rated.

**Versions**: `info.version` is the version of this API contract; it changes only when the
contract does (additions raise the minor number; a breaking change gets a `/v2` path beside
`/v1`). The software's own (package) version changes with every release of the code, contract
changed or not; `/healthz` reports both.
"""


class BodyGuard:
    """Read each request body under a size limit and a deadline before the app sees it.

    * larger than ``max_bytes`` (by ``content-length``, or counted as a chunked body arrives):
      413 problem document;
    * not complete within ``timeout_s`` of the first read (a ``content-length`` larger than
      what is sent, or a client that trickles): 408 problem document, connection closed.

    The body is then replayed to the app in one message; later reads (the disconnect) go to
    the server as before.
    """

    def __init__(self, app: ASGIApp, max_bytes: int, timeout_s: float) -> None:
        self.app = app
        self.max_bytes = max_bytes
        self.timeout_s = timeout_s

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        for name, value in scope.get("headers", []):
            if name == b"content-length" and value.isdigit() and int(value) > self.max_bytes:
                await self._reject(scope, receive, send, 413)
                return
        chunks: list[bytes] = []
        seen = 0
        loop = asyncio.get_running_loop()
        deadline = loop.time() + self.timeout_s
        while True:
            try:
                message = await asyncio.wait_for(receive(), max(deadline - loop.time(), 0.0))
            except TimeoutError:
                await self._reject(scope, receive, send, 408)
                return
            if message["type"] != "http.request":  # the client went away
                return
            body = message.get("body", b"")
            seen += len(body)
            if seen > self.max_bytes:
                await self._reject(scope, receive, send, 413)
                return
            chunks.append(body)
            if not message.get("more_body", False):
                break
        replayed = False

        async def replay() -> Message:
            nonlocal replayed
            if not replayed:
                replayed = True
                return {"type": "http.request", "body": b"".join(chunks), "more_body": False}
            return await receive()

        await self.app(scope, replay, send)

    async def _reject(self, scope: Scope, receive: Receive, send: Send, status: int) -> None:
        if status == 413:
            response = problems.problem_response(
                413,
                "Request body too large",
                f"the body exceeds the limit of {self.max_bytes} bytes",
                "body-too-large",
            )
        else:
            response = problems.problem_response(
                408,
                "Request timeout",
                f"the request body did not arrive within {self.timeout_s:g} s",
                "request-timeout",
                headers={"Connection": "close"},
            )
        await response(scope, receive, send)


class JsonBodyOnly:
    """Answer 415 (problem+json) when a JSON-body operation is sent another media type.

    Without this, a form-encoded or text body reached validation as raw bytes and came back as a
    422 quoting a Python bytes literal. A body without a Content-Type is not read as JSON either
    (FastAPI's strict content type, a guard against cross-site requests), so it gets the same 415;
    an empty body (Content-Length 0) is left to validation, which names the missing body.
    """

    def __init__(self, app: ASGIApp, service: FastAPI) -> None:
        self.app = app
        self.service = service
        self.paths: frozenset[str] | None = None

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if self.paths is None:
            self.paths = json_body_paths(self.service.openapi())
        if scope["type"] == "http" and scope["method"] == "POST" and scope["path"] in self.paths:
            headers = dict(scope.get("headers", []))
            raw = headers.get(b"content-type")
            content_type = raw.decode("latin-1") if raw is not None else None
            if headers.get(b"content-length") != b"0" and not problems.is_json_media_type(
                content_type
            ):
                response = problems.unsupported_media_type(content_type, scope["path"])
                await response(scope, receive, send)
                return
        await self.app(scope, receive, send)


def json_body_paths(contract: dict[str, Any]) -> frozenset[str]:
    """Paths of the POST operations whose contract reads a JSON body."""
    return frozenset(
        path
        for path, item in contract.get("paths", {}).items()
        if problems.JSON_MEDIA_TYPE
        in item.get("post", {}).get("requestBody", {}).get("content", {})
    )


def create_app() -> FastAPI:
    """Build the application from the current settings."""
    settings = get_settings()
    observability.configure_logging()
    try:
        keys = settings.keys()
    except KeySourceError as exc:  # fail closed: never serve without the keys asked for
        observability.log.critical("refusing to start: %s", exc)
        raise

    @asynccontextmanager
    async def lifespan(app: FastAPI) -> AsyncIterator[None]:
        # compile the kernels in a thread: /healthz answers meanwhile, /readyz says 503
        if settings.warmup:
            warmup.start(app)
        else:
            warmup.skip()
        yield

    app = FastAPI(
        lifespan=lifespan,
        title="firstcycle",
        version=API_VERSION,
        description=DESCRIPTION,
        openapi_url="/v1/openapi.json",
        docs_url=None,
        redoc_url=None,
        license_info={"name": "MIT", "identifier": "MIT"},
    )
    problems.install(app)
    compute.install(app)
    app.mount("/static", StaticFiles(directory=STATIC), name="static")

    @app.get("/docs", include_in_schema=False)
    async def docs() -> HTMLResponse:
        """Interactive documentation, every asset served by this app (works offline)."""
        return get_swagger_ui_html(
            openapi_url="/docs/openapi.json",
            title="firstcycle API",
            swagger_js_url="/static/swagger-ui/swagger-ui-bundle.js",
            swagger_css_url="/static/swagger-ui/swagger-ui.css",
            swagger_favicon_url="/static/swagger-ui/favicon-32x32.png",
            # no validator badge: it would call an external validation service
            swagger_ui_parameters={"validatorUrl": None, "tryItOutEnabled": True},
        )

    @app.get("/docs/openapi.json", include_in_schema=False)
    async def docs_contract() -> dict[str, Any]:
        """The contract as this deployment applies it, for the docs page only.

        The committed contract (/v1/openapi.json) is the same for every deployment: it declares
        the API-key scheme and says it applies only when keys are configured. The docs page
        shows an authorise button only when keys are on (and then sends the key with every
        call); with keys off it hides the scheme.
        """
        doc = copy.deepcopy(app.openapi())
        if keys:
            doc["security"] = [{"apiKey": []}]
        else:
            doc.get("components", {}).pop("securitySchemes", None)
        return doc

    app.include_router(inrush.router)
    app.include_router(statistics.router)
    app.include_router(clearance.router)
    app.include_router(dip.router)
    app.include_router(mitigation.router)
    app.include_router(network.router)
    app.include_router(network_statistics.router)
    app.include_router(sheet.router)
    app.include_router(sheet_verdicts.router)

    @app.get("/healthz", tags=["operations"], operation_id="healthz", include_in_schema=True)
    async def healthz() -> dict[str, str]:
        """Liveness: the process answers. Also the API contract's version (``api_version``, the
        contract's ``info.version``) and the software's (``package_version``)."""
        return {"status": "ok", "api_version": API_VERSION, "package_version": PACKAGE_VERSION}

    @app.get(
        "/readyz",
        tags=["operations"],
        operation_id="readyz",
        response_model=dict[str, str],
        responses={503: {**problems.PROBLEM_RESPONSES[500], "description": "Not ready yet: "
                         "the kernels are still compiling (or the warm-up failed)"}},
    )  # fmt: skip
    async def readyz() -> Any:
        """Readiness: every compute kernel is compiled and the first-request paths are warm."""
        state = warmup.state()
        if state.done.is_set():
            return {"status": "ready"}
        detail = (
            f"warm-up failed: {state.error}" if state.error else "warming up: compiling kernels"
        )
        return problems.problem_response(503, "Not ready", detail, "not-ready")

    @app.get(
        "/metrics",
        tags=["operations"],
        operation_id="metrics",
        response_class=Response,
        responses={200: {"content": {"text/plain": {"schema": {"type": "string"}}},
                         "description": "Prometheus text exposition format"}},
    )  # fmt: skip
    async def metrics() -> Response:
        """Request counts and latencies (Prometheus text format; per worker process)."""
        body, media = observability.metrics_text()
        return Response(body, media_type=media)

    app.openapi_schema = None
    _add_problem_schema(app)
    app.add_middleware(JsonBodyOnly, service=app)
    if keys:
        app.add_middleware(auth.ApiKeyAuth, keys=keys)
    app.add_middleware(
        BodyGuard, max_bytes=settings.max_body_bytes, timeout_s=settings.body_timeout_s
    )
    app.add_middleware(observability.RequestContext)
    if settings.cors_origins:
        app.add_middleware(
            CORSMiddleware,
            allow_origins=settings.cors_origins,
            allow_methods=["GET", "POST"],
            allow_headers=["*"],
        )
    return app


def _add_problem_schema(app: FastAPI) -> None:
    """Put the Problem schema in the components (the responses reference it by $ref)."""
    original = app.openapi

    def openapi() -> dict[str, Any]:
        if app.openapi_schema:
            return app.openapi_schema
        schema = original()
        comps = schema.setdefault("components", {}).setdefault("schemas", {})
        comps["Problem"] = problems.Problem.model_json_schema(
            ref_template="#/components/schemas/{model}"
        )
        defs = comps["Problem"].pop("$defs", {})
        comps.update(defs)
        # FastAPI documents its own 422 under application/json; ours is problem+json only.
        for path in schema.get("paths", {}).values():
            for op in path.values():
                r422 = op.get("responses", {}).get("422")
                if r422 is not None:
                    r422["content"] = dict(problems.PROBLEM_RESPONSES[422]["content"])
                    r422["description"] = problems.PROBLEM_RESPONSES[422]["description"]
                if problems.JSON_MEDIA_TYPE in op.get("requestBody", {}).get("content", {}):
                    op["responses"]["415"] = dict(problems.UNSUPPORTED_MEDIA_TYPE)
        schema["components"]["securitySchemes"] = {
            "apiKey": {
                "type": "apiKey",
                "in": "header",
                "name": "X-API-Key",
                "description": "Only when the operator configures keys "
                "(FIRSTCYCLE_API_KEYS / FIRSTCYCLE_API_KEY_FILE); then every /v1 call without "
                "a valid key gets 401, except this contract (/v1/openapi.json), which stays "
                "public. Authorization: Bearer <key> is accepted too.",
            }
        }
        comps.pop("HTTPValidationError", None)
        comps.pop("ValidationError", None)
        app.openapi_schema = schema
        return schema

    app.openapi = openapi  # type: ignore[method-assign]


app = create_app()
