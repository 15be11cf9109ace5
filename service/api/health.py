"""GET /healthz: liveness."""

from __future__ import annotations

from fastapi import APIRouter
from pydantic import BaseModel

from service import __version__

__all__ = ["router"]

router = APIRouter(tags=["health"])


class Health(BaseModel):
    status: str
    version: str


@router.get("/healthz", response_model=Health, summary="Liveness")
def healthz() -> Health:
    return Health(status="ok", version=__version__)
