"""GET /healthz: liveness."""

from __future__ import annotations

from fastapi import APIRouter, Response
from pydantic import BaseModel

from service import __version__
from service.api.deps import json_response

__all__ = ["router"]

router = APIRouter(tags=["health"])


class Health(BaseModel):
    status: str
    version: str


@router.get("/healthz", response_model=Health, summary="Liveness")
def healthz() -> Response:
    return json_response(Health(status="ok", version=__version__))
