"""GET /v1/results/{result_id} and its picture: answers stored with a stable id."""

from __future__ import annotations

from datetime import UTC, datetime

from fastapi import APIRouter, Response
from pydantic import BaseModel

from service import __version__
from service.api.deps import PlotterDep, SolverDep, StoreDep, UnitsDep, json_response
from service.api.plots import draw_decay
from service.api.problems import PROBLEM_RESPONSES
from service.errors import NotFound
from service.models import SettlingRequest
from service.models.responses import SettlingResponse, StoredResultOut
from service.store import ResultStore, StoredResult, result_id

__all__ = ["keep_answer", "router"]

router = APIRouter(tags=["results"])


def keep_answer(
    store: ResultStore, kind: str, request: SettlingRequest, response: SettlingResponse
) -> SettlingResponse:
    """Give the answer its id and queue it for the store (the answer does not wait)."""
    identity = result_id(request.model_dump(mode="json"), __version__)
    kept = response.model_copy(update={"result_id": identity})
    store.put(
        StoredResult(
            result_id=identity,
            kind=kind,
            version=__version__,
            stored_at=datetime.now(UTC),
            request=request.model_dump(mode="json", exclude_unset=True),
            answer=_as_document(kept),
        )
    )
    return kept


def _as_document(model: BaseModel) -> dict[str, object]:
    return model.model_dump(mode="json")


@router.get(
    "/v1/results/{result_id}",
    response_model=StoredResultOut,
    responses=PROBLEM_RESPONSES,
    summary="A stored answer with its request",
)
async def stored_result(result_id: str, store: StoreDep) -> Response:
    """The request and the answer stored under ``result_id``, with the version that answered
    and when."""
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
