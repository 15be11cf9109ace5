"""GET /healthz: liveness; GET /metrics: Prometheus metrics."""

from __future__ import annotations

from fastapi import APIRouter, Request, Response
from pydantic import BaseModel

from service import __version__
from service.api.deps import json_response
from service.metrics import CONTENT_TYPE_LATEST, Metrics

__all__ = ["router"]

router = APIRouter(tags=["health"])


class Health(BaseModel):
    status: str
    version: str


@router.get("/healthz", response_model=Health, summary="Liveness")
def healthz() -> Response:
    return json_response(Health(status="ok", version=__version__))


@router.get("/metrics", summary="Prometheus metrics", response_class=Response)
def metrics(request: Request) -> Response:
    """Requests and latency per endpoint, answers by engine and their solve time, errors by
    kind, summed over every worker process."""
    registry: Metrics = request.app.state.metrics
    return Response(registry.exposition(), media_type=CONTENT_TYPE_LATEST)
