"""GET /: a plain page with a form for the common case (no front-end framework)."""

from __future__ import annotations

from functools import lru_cache
from pathlib import Path

from fastapi import APIRouter
from fastapi.responses import HTMLResponse

__all__ = ["router"]

router = APIRouter(tags=["page"])

_PAGE = Path(__file__).resolve().parent.parent / "web" / "index.html"


@lru_cache(maxsize=1)
def _page() -> str:
    return _PAGE.read_text(encoding="utf-8")


@router.get("/", response_class=HTMLResponse, include_in_schema=False)
def page() -> HTMLResponse:
    """The form: shape and size, a diffusivity or heat inputs, a uniform start, the surface,
    the criterion; the answer with its warnings and cautions, the two pictures, and a link to
    the stored result."""
    return HTMLResponse(_page())
