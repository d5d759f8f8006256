"""Structural comparison of two OpenAPI documents: what would break an existing client.

A change breaks a client when it removes an operation, a documented status, a response
property (or stops requiring one the client may rely on), adds a required request property,
removes a request property, or removes a value from a request enum. Additions are compatible.
The rules are the usual semantic-versioning reading of a JSON API contract (common practice).
"""

from __future__ import annotations

from typing import Any

METHODS = ("get", "put", "post", "delete", "patch", "head", "options")


def _resolve(doc: dict[str, Any], schema: dict[str, Any]) -> dict[str, Any]:
    seen = 0
    while "$ref" in schema and seen < 50:
        name = schema["$ref"].rsplit("/", 1)[-1]
        schema = doc["components"]["schemas"][name]
        seen += 1
    return schema


def _variants(doc: dict[str, Any], schema: dict[str, Any]) -> list[dict[str, Any]]:
    schema = _resolve(doc, schema)
    for key in ("anyOf", "oneOf"):
        if key in schema:
            out = []
            for sub in schema[key]:
                out += _variants(doc, sub)
            return out
    return [schema]


def _compare(
    old_doc: dict[str, Any],
    new_doc: dict[str, Any],
    old: dict[str, Any],
    new: dict[str, Any],
    where: str,
    request: bool,
    problems: list[str],
    depth: int = 0,
) -> None:
    if depth > 12:
        return
    olds, news = _variants(old_doc, old), _variants(new_doc, new)
    if len(olds) > 1 or len(news) > 1:
        titles_old = {o.get("title") for o in olds}
        titles_new = {n.get("title") for n in news}
        if request and not titles_old <= titles_new:
            problems.append(
                f"{where}: alternatives removed {sorted(map(str, titles_old - titles_new))}"
            )
        for o in olds:
            for n in news:
                if o.get("title") and o.get("title") == n.get("title"):
                    _compare(old_doc, new_doc, o, n, where, request, problems, depth + 1)
        return
    o, n = olds[0], news[0]
    if request and "enum" in o and "enum" in n:
        lost = set(map(str, o["enum"])) - set(map(str, n["enum"]))
        if lost:
            problems.append(f"{where}: enum values removed {sorted(lost)}")
    if request and "const" in o and n.get("const", o["const"]) != o["const"]:
        problems.append(f"{where}: constant changed")
    op, np_ = o.get("properties", {}), n.get("properties", {})
    oreq, nreq = set(o.get("required", [])), set(n.get("required", []))
    if request:
        for name in sorted(nreq - oreq):
            problems.append(f"{where}.{name}: new required request field")
        for name in sorted(set(op) - set(np_)):
            if n.get("additionalProperties") is False:
                problems.append(f"{where}.{name}: request field removed")
    else:
        for name in sorted(set(op) - set(np_)):
            problems.append(f"{where}.{name}: response field removed")
        for name in sorted(oreq - nreq):
            problems.append(f"{where}.{name}: response field no longer required")
    for name in sorted(set(op) & set(np_)):
        _compare(old_doc, new_doc, op[name], np_[name], f"{where}.{name}", request, problems,
                 depth + 1)  # fmt: skip
    if "items" in o and "items" in n:
        _compare(old_doc, new_doc, o["items"], n["items"], f"{where}[]", request, problems,
                 depth + 1)  # fmt: skip


def breaking_changes(old: dict[str, Any], new: dict[str, Any]) -> list[str]:
    """Every change from ``old`` to ``new`` that would break a client of ``old``."""
    problems: list[str] = []
    for path, item in old.get("paths", {}).items():
        new_item = new.get("paths", {}).get(path)
        for method in METHODS:
            if method not in item:
                continue
            where = f"{method.upper()} {path}"
            if new_item is None or method not in new_item:
                problems.append(f"{where}: operation removed")
                continue
            o_op, n_op = item[method], new_item[method]
            for status in o_op.get("responses", {}):
                if status not in n_op.get("responses", {}):
                    problems.append(f"{where}: response {status} removed")
            o_body = o_op.get("requestBody", {}).get("content", {}).get("application/json")
            n_body = n_op.get("requestBody", {}).get("content", {}).get("application/json")
            if o_body and n_body:
                _compare(old, new, o_body["schema"], n_body["schema"], f"{where} body", True,
                         problems)  # fmt: skip
            o_params = {p["name"]: p for p in o_op.get("parameters", [])}
            n_params = {p["name"]: p for p in n_op.get("parameters", [])}
            for name, p in n_params.items():
                if p.get("required") and not o_params.get(name, {}).get("required"):
                    problems.append(f"{where} ?{name}: new required parameter")
            for name in o_params:
                if name not in n_params:
                    problems.append(f"{where} ?{name}: parameter removed")
            o_ok = o_op.get("responses", {}).get("200", {}).get("content", {})
            n_ok = n_op.get("responses", {}).get("200", {}).get("content", {})
            for media, o_media in o_ok.items():
                if media not in n_ok:
                    problems.append(f"{where}: 200 {media} removed")
                elif "schema" in o_media and "schema" in n_ok[media]:
                    _compare(old, new, o_media["schema"], n_ok[media]["schema"],
                             f"{where} 200", False, problems)  # fmt: skip
    return problems
