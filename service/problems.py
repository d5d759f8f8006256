"""RFC 9457 problem documents (``application/problem+json``) for every error the service returns.

One place maps each kind of failure to a status and a problem type: request validation (422,
with every offending field's path, value and allowed range), domain errors raised by the core
(422), compute limits (422), oversized bodies (413), routing errors (404/405, passing the
``Allow`` header through), and anything unexpected (500, with no internals in the body).
"""

from __future__ import annotations

import json
import logging
import math
from typing import Any, cast

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse
from pydantic import BaseModel, Field
from starlette.exceptions import HTTPException as StarletteHTTPException

from core.errors import LimitError, ParameterError

PROBLEM_MEDIA_TYPE = "application/problem+json"
_TYPE = "urn:firstcycle:problem:"
log = logging.getLogger("firstcycle")


class FieldProblem(BaseModel):
    """One invalid field."""

    field: str = Field(
        description="Dotted path of the field in the request, e.g. transformer.rating_kva"
    )
    message: str
    value: str | None = Field(None, description="The value received, as text (truncated)")
    allowed: str | None = Field(None, description="The valid range or set, when known")


class Problem(BaseModel):
    """RFC 9457 problem details."""

    type: str = Field(description="URI identifying the problem type")
    title: str
    status: int
    detail: str
    instance: str | None = Field(None, description="The request path")
    errors: list[FieldProblem] | None = Field(None, description="Field-level problems")


PROBLEM_RESPONSES: dict[int | str, dict[str, Any]] = {
    status: {
        "description": desc,
        "content": {PROBLEM_MEDIA_TYPE: {"schema": {"$ref": "#/components/schemas/Problem"}}},
    }
    for status, desc in (
        (400, "Body that cannot be read as JSON text (e.g. not UTF-8)"),
        (401, "Missing or invalid API key (only when the operator enables keys)"),
        (413, "Request body larger than the configured limit"),
        (422, "Invalid input, a physically inconsistent combination, or work over a limit"),
        (500, "Unexpected server error (no details are disclosed)"),
    )
}


def _text(value: Any, limit: int = 200) -> str | None:
    if value is None:
        return None
    try:
        text = json.dumps(value, default=str, allow_nan=True)
    except (TypeError, ValueError):
        text = str(value)
    return text if len(text) <= limit else text[: limit - 3] + "..."


def _allowed(err: dict[str, Any]) -> str | None:
    ctx = err.get("ctx") or {}
    parts = []
    for key, sym in (("gt", ">"), ("ge", ">="), ("lt", "<"), ("le", "<=")):
        if key in ctx:
            parts.append(f"{sym} {ctx[key]}")
    if "expected" in ctx:
        parts.append(f"one of {ctx['expected']}")
    for key in ("min_length", "max_length"):
        if key in ctx:
            parts.append(f"{key.replace('_', ' ')} {ctx[key]}")
    if err.get("type") == "finite_number":
        parts.append("a finite number")
    return ", ".join(parts) or None


def batch_problem(index: int, exc: Exception) -> Problem:
    """The problem document of one failed batch item (validation or domain error)."""
    from pydantic import ValidationError

    if isinstance(exc, ValidationError):
        errors = [
            FieldProblem(
                field=".".join(str(p) for p in e.get("loc", ())) or "case",
                message=str(e.get("msg", "invalid")),
                value=_text(e.get("input")),
                allowed=_allowed(dict(e)),
            )
            for e in exc.errors(include_context=True)
        ]
        detail = f"{errors[0].field}: {errors[0].message}" if errors else "invalid case"
        return Problem(
            type=_TYPE + "invalid-input",
            title="Invalid input",
            status=422,
            detail=detail,
            instance=f"cases[{index}]",
            errors=errors,
        )
    if isinstance(exc, LimitError):
        err = FieldProblem(
            field=exc.parameter,
            message=str(exc),
            value=_text(exc.value),
            allowed=f"<= {exc.limit:g}",
        )
        return Problem(
            type=_TYPE + "limit-exceeded",
            title="Over a compute limit",
            status=422,
            detail=str(exc),
            instance=f"cases[{index}]",
            errors=[err],
        )
    if isinstance(exc, ParameterError):
        err = FieldProblem(
            field=exc.parameter, message=str(exc), value=_text(exc.value), allowed=exc.allowed
        )
        return Problem(
            type=_TYPE + "invalid-input",
            title="Inconsistent or out-of-range input",
            status=422,
            detail=str(exc),
            instance=f"cases[{index}]",
            errors=[err],
        )
    return Problem(
        type=_TYPE + "invalid-input",
        title="Invalid case",
        status=422,
        detail=str(exc),
        instance=f"cases[{index}]",
    )


def problem_response(
    status: int,
    title: str,
    detail: str,
    kind: str,
    request: Request | None = None,
    errors: list[FieldProblem] | None = None,
    headers: dict[str, str] | None = None,
) -> JSONResponse:
    """Build a problem+json response."""
    body = Problem(
        type=_TYPE + kind,
        title=title,
        status=status,
        detail=detail,
        instance=str(request.url.path) if request is not None else None,
        errors=errors,
    )
    return JSONResponse(
        body.model_dump(exclude_none=True),
        status_code=status,
        media_type=PROBLEM_MEDIA_TYPE,
        headers=headers,
    )


def _loc(loc: tuple[Any, ...]) -> str:
    parts = [str(p) for p in loc]
    if parts and parts[0] in ("body", "query"):
        parts = parts[1:]
    return ".".join(parts) or "body"


async def _validation(request: Request, exc: RequestValidationError) -> JSONResponse:
    errors = [
        FieldProblem(
            field=_loc(tuple(e.get("loc", ()))),
            message=str(e.get("msg", "invalid")),
            value=_text(e.get("input")),
            allowed=_allowed(e),
        )
        for e in exc.errors()
    ]
    first = errors[0] if errors else None
    detail = (
        f"{first.field}: {first.message}"
        + (f" (allowed: {first.allowed})" if first.allowed else "")
        if first
        else "the request is invalid"
    )
    return problem_response(422, "Invalid input", detail, "invalid-input", request, errors)


async def _parameter(request: Request, exc: Exception) -> JSONResponse:
    exc = cast(ParameterError, exc)
    value = exc.value
    if isinstance(value, float) and not math.isfinite(value):
        value = str(value)
    err = FieldProblem(
        field=exc.parameter, message=str(exc), value=_text(value), allowed=exc.allowed
    )
    return problem_response(
        422, "Inconsistent or out-of-range input", str(exc), "invalid-input", request, [err]
    )


async def _limit(request: Request, exc: Exception) -> JSONResponse:
    exc = cast(LimitError, exc)
    err = FieldProblem(
        field=exc.parameter, message=str(exc), value=_text(exc.value), allowed=f"<= {exc.limit:g}"
    )
    # the fields that would bring the work within the limit (service/budget.py)
    knobs = [
        FieldProblem(field=f, message="reduce this field to fit the work budget", allowed=a)
        for f, a in exc.knobs
    ]
    return problem_response(
        422, "Over a compute limit", str(exc), "limit-exceeded", request, [err, *knobs]
    )


async def _http(request: Request, exc: Exception) -> JSONResponse:
    exc = cast(StarletteHTTPException, exc)
    titles = {
        400: "Unreadable body",
        404: "Not found",
        405: "Method not allowed",
        413: "Request body too large",
    }
    return problem_response(
        exc.status_code,
        titles.get(exc.status_code, "HTTP error"),
        str(exc.detail),
        {
            400: "unreadable-body",
            404: "not-found",
            405: "method-not-allowed",
            413: "body-too-large",
        }.get(exc.status_code, "http-error"),
        request,
        headers=dict(exc.headers) if exc.headers else None,
    )


async def _unexpected(request: Request, exc: Exception) -> JSONResponse:
    log.exception("unexpected error on %s", request.url.path)
    return problem_response(
        500,
        "Internal error",
        "an unexpected error occurred; it has been logged",
        "internal",
        request,
    )


def install(app: FastAPI) -> None:
    """Register every handler on the app."""
    app.add_exception_handler(RequestValidationError, _validation)  # type: ignore[arg-type]
    app.add_exception_handler(ParameterError, _parameter)
    app.add_exception_handler(LimitError, _limit)
    app.add_exception_handler(StarletteHTTPException, _http)
    app.add_exception_handler(Exception, _unexpected)
