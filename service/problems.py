"""RFC 9457 problem documents (``application/problem+json``) for every error the service returns.

One place maps each kind of failure to a status and a problem type: request validation (422,
with every offending field's path, value and allowed range), domain errors raised by the core
(422), compute limits (422), a body that is not JSON text (400, with the line and column of a
syntax error), a body sent as another media type than JSON (415), oversized bodies (413), routing
errors (404/405, passing the ``Allow`` header through), and anything unexpected (500, with no
internals in the body).

Malformed JSON is a 400, not a 422: RFC 9110 reserves 422 (section 15.5.21) for content whose
media type and syntax are understood but whose instructions cannot be processed, and 400
(section 15.5.1) for malformed request syntax.
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
        (
            400,
            "Body that cannot be read as JSON text: a syntax error (its line and column are "
            "given) or bytes that are not UTF-8",
        ),
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


def batch_problem(index: int, exc: Exception, case: Any = None) -> Problem:
    """The problem document of one failed batch item (validation or domain error)."""
    from pydantic import ValidationError

    if isinstance(exc, ValidationError):
        errors = [
            FieldProblem(
                field=_loc(tuple(e.get("loc", ())), case) if e.get("loc") else "case",
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


JSON_MEDIA_TYPE = "application/json"
UNSUPPORTED_MEDIA_TYPE: dict[str, Any] = {
    "description": "Body sent with another Content-Type than application/json (or a "
    "+json type); send the body as JSON with Content-Type: application/json",
    "content": {PROBLEM_MEDIA_TYPE: {"schema": {"$ref": "#/components/schemas/Problem"}}},
}


def is_json_media_type(content_type: str | None) -> bool:
    """Whether a Content-Type header names JSON (application/json or application/*+json)."""
    if not content_type:
        return False
    media = content_type.split(";", 1)[0].strip().lower()
    return media == JSON_MEDIA_TYPE or (
        media.startswith("application/") and media.endswith("+json")
    )


def unsupported_media_type(content_type: str | None, path: str) -> JSONResponse:
    """The 415 problem of a JSON operation called with another media type (RFC 9110 15.5.16)."""
    received = content_type if content_type else "no Content-Type header"
    err = FieldProblem(
        field="headers.content-type",
        message="the body must be sent as JSON",
        value=_text(received),
        allowed="application/json (or application/<name>+json)",
    )
    body = Problem(
        type=_TYPE + "unsupported-media-type",
        title="Unsupported media type",
        status=415,
        detail=f"this operation reads a JSON body; received {received}: send the body with "
        "Content-Type: application/json",
        instance=path,
        errors=[err],
    )
    return JSONResponse(
        body.model_dump(exclude_none=True),
        status_code=415,
        media_type=PROBLEM_MEDIA_TYPE,
        headers={"Accept-Post": JSON_MEDIA_TYPE},
    )


def _loc(loc: tuple[Any, ...], body: Any = None) -> str:
    """The dotted path of a field as the caller wrote it.

    pydantic puts the member of a union it tried into the location (the ``kind`` of a
    discriminated union, e.g. ``source.fault_level.fault_mva``, or a member's name); the caller
    never wrote those, so they are dropped by walking the body received: a location element
    that is not a key of the object at that point, and is not the last element (a missing
    field can only be last), names a union member.
    """
    parts = list(loc)
    if parts and parts[0] in ("body", "query"):
        parts = parts[1:]
    out: list[str] = []
    cur: Any = body
    for k, p in enumerate(parts):
        last = k == len(parts) - 1
        if isinstance(cur, dict):
            if p in cur:
                out.append(str(p))
                cur = cur[p]
            elif not last:
                continue  # a union member's tag
            else:
                out.append(str(p))
        elif isinstance(cur, list) and isinstance(p, int) and 0 <= p < len(cur):
            out.append(str(p))
            cur = cur[p]
        elif body is not None and not isinstance(p, int) and not last:
            continue  # a union member's tag below a value that has no fields
        else:
            out.append(str(p))
            cur = None
    return ".".join(out) or "body"


def _line_column(doc: str, pos: int) -> tuple[int, int]:
    """1-based line and column of character ``pos`` of ``doc`` (as json.JSONDecodeError)."""
    line = doc.count("\n", 0, pos) + 1
    column = pos - doc.rfind("\n", 0, pos)
    return line, column


def _malformed_json(request: Request, exc: RequestValidationError) -> JSONResponse:
    err = exc.errors()[0]
    pos = int(err["loc"][1]) if len(err.get("loc", ())) > 1 else 0
    doc = exc.body if isinstance(exc.body, str) else ""
    line, column = _line_column(doc, pos)
    reason = str((err.get("ctx") or {}).get("error", "invalid JSON"))
    excerpt = doc[max(0, pos - 20) : pos + 20]
    detail = (
        f"the body is not valid JSON: {reason} at line {line}, column {column} (character {pos})"
    )
    field = FieldProblem(
        field="body",
        message=f"{reason} at line {line}, column {column}",
        value=_text(excerpt),
        allowed="a JSON document (RFC 8259)",
    )
    return problem_response(400, "Malformed JSON", detail, "malformed-json", request, [field])


async def _validation(request: Request, exc: RequestValidationError) -> JSONResponse:
    raw = exc.errors()
    if raw and raw[0].get("type") == "json_invalid":
        return _malformed_json(request, exc)
    body = getattr(exc, "body", None)
    errors = [
        FieldProblem(
            field=_loc(tuple(e.get("loc", ())), body if e.get("loc", ("",))[0] == "body" else None),
            message=str(e.get("msg", "invalid")),
            value=_text(e.get("input")),
            allowed=_allowed(e),
        )
        for e in raw
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
        FieldProblem(field=f, message="reduce this field to fit the limit above", allowed=a)
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
        415: "Unsupported media type",
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
