"""POST /v1/history: measures and profiles of the same case over time."""

from __future__ import annotations

import time

from fastapi import APIRouter, Response

from service.answers import CAUTIONS, common_biot
from service.api.cases import to_case
from service.api.deps import SolverDep, UnitsDep, final_state_out, json_response
from service.api.problems import PROBLEM_RESPONSES
from service.models import HistoryRequest, HistoryResponse, Method, SnapshotOut

__all__ = ["router"]

router = APIRouter(tags=["history"])


@router.post(
    "/v1/history",
    response_model=HistoryResponse,
    responses=PROBLEM_RESPONSES,
    summary="Measures and profiles over time",
)
def history(request: HistoryRequest, solver: SolverDep, units: UnitsDep) -> Response:
    """Every defined measure at each time, and profile snapshots across the body."""
    started = time.perf_counter()
    translation = to_case(request, units)
    answer = solver.history(
        translation.case, request.times, request.time_count, request.snapshot_count
    )
    elapsed = time.perf_counter() - started
    return json_response(
        HistoryResponse(
            times_s=answer.times_s,
            measures=answer.measures,
            snapshots=[
                SnapshotOut(time_s=s.time_s, positions_m=s.positions_m, values=s.values)
                for s in answer.snapshots
            ],
            bath_values=answer.bath_values,
            final_value=answer.final_value,
            final_state=final_state_out(translation.case),
            characteristic_length_m=translation.case.characteristic_length_m,
            length_convention=translation.case.length_convention,
            diffusivity_m2_per_s=translation.case.medium.diffusivity_m2_per_s,
            biot=common_biot(translation.case),
            method=Method(engine=answer.engine, path=answer.path, resolution=answer.resolution),
            interpreted_positions_m=translation.positions_m,
            cautions=list(CAUTIONS),
        ),
        elapsed,
    )
