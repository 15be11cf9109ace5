"""GET /v1/results/{result_id} and its picture: answers stored with a stable id."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import UTC, datetime

from fastapi import APIRouter, Response

from service import __version__
from service.api.deps import (
    PlotterDep,
    SolverDep,
    StoreDep,
    UnitsDep,
    json_response,
    json_text_response,
)
from service.api.plots import draw_decay
from service.api.problems import PROBLEM_RESPONSES
from service.errors import NotFound
from service.models import SettlingRequest
from service.models.responses import SettlingResponse, StoredResultOut
from service.store import ResultStore, StoredResult, canonical_request, result_id

__all__ = ["Keeping", "keep_answer", "keeping", "router"]

router = APIRouter(tags=["results"])


@dataclass(frozen=True)
class Keeping:
    """An answer that is to be stored: its store, its canonical request and the id."""

    store: ResultStore
    canonical: str
    result_id: str


def keeping(store: ResultStore | None, request: SettlingRequest) -> Keeping | None:
    """What storing this answer needs (the canonical request is made once, for the id and
    the record), or None when it is not to be stored."""
    if store is None:
        return None
    canonical = canonical_request(request)
    return Keeping(store, canonical, result_id(canonical, __version__))


def keep_answer(
    kept: Keeping | None, kind: str, response: SettlingResponse, solve_seconds: float
) -> Response:
    """The answer as JSON; when it is to be stored (the response then carries its id), queued
    for the store with the same JSON text: the answer does not wait for the database."""
    content = response.model_dump_json()
    if kept is not None:
        kept.store.put(
            StoredResult(
                result_id=kept.result_id,
                kind=kind,
                version=__version__,
                stored_at=datetime.now(UTC),
                request_json=kept.canonical,
                answer_json=content,
            )
        )
    return json_text_response(content, solve_seconds)


@router.get(
    "/v1/results/{result_id}",
    response_model=StoredResultOut,
    responses=PROBLEM_RESPONSES,
    summary="A stored answer with its request",
)
async def stored_result(result_id: str, store: StoreDep) -> Response:
    """The request (canonical: every default in force filled in, so that its SHA-256 with the
    version gives the id back) and the answer (with the caller's ``ref``) stored under
    ``result_id``, with the version that answered and when."""
    record = _found(store, result_id)
    return json_response(
        StoredResultOut(
            result_id=record.result_id,
            kind=record.kind,
            version=record.version,
            stored_at=record.stored_at.isoformat(),
            request=record.request,
            answer=record.answer,
        )
    )


@router.get(
    "/v1/results/{result_id}/plot.svg",
    responses=PROBLEM_RESPONSES,
    response_class=Response,
    summary="The decay picture of a stored answer (for an <img>)",
)
def stored_plot(
    result_id: str, store: StoreDep, solver: SolverDep, units: UnitsDep, plotter: PlotterDep
) -> Response:
    """The decay picture of the stored request, drawn by this service version."""
    record = _found(store, result_id)
    request = SettlingRequest.model_validate(record.request)
    return draw_decay(request, solver, units, plotter, "svg")


def _found(store: ResultStore, identity: str) -> StoredResult:
    record = store.get(identity) if len(identity) <= 64 else None
    if record is None:
        raise NotFound(f"no stored result has the id {identity!r} (the path's result_id)")
    return record
