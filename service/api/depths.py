"""POST /v1/depth: how deep below the surface a value is reached at a given time."""

from __future__ import annotations

import time

from fastapi import APIRouter, Response

from service.answers import CAUTIONS
from service.api.cases import to_case
from service.api.deps import SolverDep, UnitsDep, json_response
from service.api.problems import PROBLEM_RESPONSES
from service.api.ranges import DURATION_RANGE_S, in_range
from service.models import DepthRequest, DepthResponse, Method, WarningOut

__all__ = ["router"]

router = APIRouter(tags=["depth"])


@router.post(
    "/v1/depth",
    response_model=DepthResponse,
    responses=PROBLEM_RESPONSES,
    summary="Depth at which a value is reached at a given time",
)
def depth(request: DepthRequest, solver: SolverDep, units: UnitsDep) -> Response:
    """The shallowest depth below the exchanging surface where the value is reached at the
    time given (a carburized case depth, a cure or fixation front), with its estimated error
    and what was assumed."""
    started = time.perf_counter()
    translation = to_case(request, units)
    case = translation.case
    at_s = in_range(units.to_si(request.at, "time", "/at"), DURATION_RANGE_S, "a time", "s", "/at")
    pointer = "/faces" if translation.faces_given else "/surface"
    answer = solver.depth(case, at_s, request.value, pointer)
    elapsed = time.perf_counter() - started
    return json_response(
        DepthResponse(
            depth_m=answer.depth_m,
            time_s=at_s,
            value=request.value,
            measured_from=answer.measured_from,
            profile_range=answer.profile_range,
            fourier_number=answer.fourier_number,
            characteristic_length_m=answer.length_m,
            length_convention=answer.length_convention,
            diffusivity_m2_per_s=case.medium.diffusivity_m2_per_s,
            method=Method(
                engine=answer.engine,
                path="eigen",
                resolution=answer.resolution,
                estimated_relative_error=answer.estimated_relative_error,
            ),
            warnings=[WarningOut(code=c, message=m) for c, m in answer.warnings],
            assumptions=answer.assumptions,
            cautions=list(CAUTIONS),
        ),
        elapsed,
    )
