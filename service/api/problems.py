"""RFC 9457 problem details for every error the service returns.

Pydantic locations become JSON Pointers (RFC 6901) into the request body: FastAPI's leading
"body" segment is dropped, and so are the tags Pydantic inserts for discriminated unions
(found by walking the submitted JSON: a segment that is not a key or index there is a tag).
"""

from __future__ import annotations

from typing import Any

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse
from starlette.exceptions import HTTPException

from service.errors import MixclockError
from service.models import Problem, ProblemItem

__all__ = ["MEDIA_TYPE", "PROBLEM_RESPONSES", "install_problem_handlers", "pointer_for"]

MEDIA_TYPE = "application/problem+json"
_TYPE_BASE = "https://mixclock.invalid/problems/"

PROBLEM_RESPONSES: dict[int | str, dict[str, Any]] = {
    400: {"model": Problem, "description": "Malformed JSON."},
    422: {
        "model": Problem,
        "description": "Invalid content; `errors` names each field by JSON Pointer.",
    },
}


def _escape(segment: str) -> str:
    return segment.replace("~", "~0").replace("/", "~1")


def pointer_for(location: tuple[Any, ...], document: Any, is_missing: bool = False) -> str:
    """JSON Pointer for a Pydantic error location inside ``document`` (the request body);
    ``is_missing`` keeps a last segment that names an absent field."""
    parts: list[str] = []
    current = document
    segments = list(location)
    if segments and segments[0] == "body":
        segments = segments[1:]
    for index, segment in enumerate(segments):
        is_last = index == len(segments) - 1
        if isinstance(current, dict) and isinstance(segment, str) and segment in current:
            parts.append(_escape(segment))
            current = current[segment]
        elif isinstance(current, list) and isinstance(segment, int) and 0 <= segment < len(current):
            parts.append(str(segment))
            current = current[segment]
        elif is_last and is_missing and isinstance(segment, str):
            parts.append(_escape(segment))
        # anything else is a union tag or validator label, not part of the document
    return "/" + "/".join(parts) if parts else ""


def _problem(
    request: Request, status: int, slug: str, title: str, detail: str, errors: list[ProblemItem]
) -> JSONResponse:
    metrics = getattr(request.app.state, "metrics", None)
    if metrics is not None:
        metrics.errors.labels(kind=slug).inc()
    body = Problem(type=_TYPE_BASE + slug, title=title, status=status, detail=detail, errors=errors)
    return JSONResponse(body.model_dump(), status_code=status, media_type=MEDIA_TYPE)


def _message(error: dict[str, Any]) -> str:
    message = str(error.get("msg", "invalid value"))
    return message.removeprefix("Value error, ")


def _pointer_of(error: dict[str, Any], document: Any) -> str:
    """The pointer of one Pydantic error; a bad or missing union tag points at the tag field."""
    location = tuple(error.get("loc", ()))
    kind = error.get("type")
    if kind in ("union_tag_invalid", "union_tag_not_found"):
        tag = str(error.get("ctx", {}).get("discriminator", "")).strip("'\"")
        return pointer_for((*location, tag), document, is_missing=True)
    return pointer_for(location, document, is_missing=kind == "missing")


def validation_items(errors: list[Any], document: Any) -> list[ProblemItem]:
    """Pydantic's errors on ``document`` as problem items, each with its JSON Pointer; an
    error in a query or path parameter has no place in the body, so its detail names it."""
    items = []
    for error in errors:
        location = tuple(error.get("loc", ()))
        if len(location) > 1 and location[0] in ("query", "path", "header"):
            detail = f"{location[0]} parameter '{location[1]}': {_message(error)}"
            items.append(ProblemItem(pointer="", detail=detail))
        else:
            items.append(ProblemItem(pointer=_pointer_of(error, document), detail=_message(error)))
    return items


async def _on_validation(request: Request, exc: RequestValidationError) -> JSONResponse:
    errors = list(exc.errors())
    if any(error.get("type") == "json_invalid" for error in errors):
        detail = "; ".join(
            str(error.get("ctx", {}).get("error", "")) or _message(error) for error in errors
        )
        return _problem(
            request,
            400,
            "malformed-json",
            "Malformed JSON",
            f"the request body is not valid JSON: {detail}",
            [ProblemItem(pointer="", detail=detail)],
        )
    items = validation_items(errors, getattr(exc, "body", None))
    summary = "; ".join(f"{item.pointer or '/'}: {item.detail}" for item in items[:3])
    return _problem(request, 422, "invalid-request", "Invalid request", summary, items)


async def _on_mixclock(request: Request, exc: Exception) -> JSONResponse:
    assert isinstance(exc, MixclockError)
    return _problem(
        request,
        exc.status,
        exc.slug,
        exc.title,
        exc.detail,
        [ProblemItem(pointer=exc.pointer, detail=exc.detail)],
    )


async def _on_http(request: Request, exc: Exception) -> JSONResponse:
    assert isinstance(exc, HTTPException)
    return _problem(
        request, exc.status_code, f"http-{exc.status_code}", str(exc.detail), str(exc.detail), []
    )


async def _on_unexpected(request: Request, exc: Exception) -> JSONResponse:
    return _problem(
        request,
        500,
        "internal",
        "Internal error",
        "the service failed unexpectedly; please report the request that caused it",
        [],
    )


def install_problem_handlers(app: FastAPI) -> None:
    app.add_exception_handler(RequestValidationError, _on_validation)  # type: ignore[arg-type]
    app.add_exception_handler(MixclockError, _on_mixclock)
    app.add_exception_handler(HTTPException, _on_http)
    app.add_exception_handler(Exception, _on_unexpected)
