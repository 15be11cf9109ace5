"""POST /v1/settling-time: how long until the body is settled under a criterion."""

from __future__ import annotations

import math
import time

from fastapi import APIRouter, Response
from starlette.concurrency import run_in_threadpool

from service.answers import SettlingAnswer, format_time
from service.api.cases import Translation, to_case
from service.api.deps import (
    MetricsDep,
    SettingsDep,
    SolverDep,
    StoreDep,
    UnitsDep,
    biot_by_face,
    final_state_out,
)
from service.api.problems import PROBLEM_RESPONSES
from service.api.results import keep_answer, keeping
from service.metrics import Metrics
from service.models import LumpedOut, Method, SettlingRequest, SettlingResponse, WarningOut
from service.models.responses import ReactionOut, ScheduleOut
from service.solver import Solver
from service.store import ResultStore

__all__ = ["router", "settling_response"]

router = APIRouter(tags=["estimates"])


@router.post(
    "/v1/settling-time",
    response_model=SettlingResponse,
    responses=PROBLEM_RESPONSES,
    summary="Settling time of a slab, cylinder or sphere",
)
async def settling_time(
    request: SettlingRequest,
    solver: SolverDep,
    units: UnitsDep,
    store: StoreDep,
    settings: SettingsDep,
    metrics: MetricsDep,
) -> Response:
    """The earliest time after which the criterion holds for good, with every measure at that
    time, the method and its estimated error, and what was assumed. With ``store`` (or the
    store_all setting) the answer is stored and carries its ``result_id``."""
    translation = to_case(request, units)
    kept = store if request.store or settings.store_all else None
    # A quick series answer (well under a millisecond) runs on the event loop: handing it to
    # the thread pool was measured to add about 0.4 ms to a 0.3 ms answer. Anything that can
    # take longer runs in the thread pool, so the loop keeps serving other requests.
    if solver.is_quick(translation.case):
        return _respond(request, translation, solver, kept, metrics)
    return await run_in_threadpool(_respond, request, translation, solver, kept, metrics)


def _respond(
    request: SettlingRequest,
    translation: Translation,
    solver: Solver,
    store: ResultStore | None,
    metrics: Metrics | None = None,
) -> Response:
    started = time.perf_counter()
    answer = solver.settle(translation.case)
    elapsed = time.perf_counter() - started
    if metrics is not None:
        metrics.observe_solve(answer.engine, answer.path, elapsed)
    kept = keeping(store, request)
    identity = None if kept is None else kept.result_id
    response = settling_response(translation, answer, ref=request.ref, result_id=identity)
    return keep_answer(kept, "settling-time", response, elapsed)


def settling_response(
    translation: Translation,
    answer: SettlingAnswer,
    ref: str | None = None,
    result_id: str | None = None,
) -> SettlingResponse:
    """The response for one answer (shared by the endpoint and the command line)."""
    case = translation.case
    rate = answer.slowest_excited_rate_per_s
    return SettlingResponse(
        result_id=result_id,
        ref=ref,
        time_s=answer.time_s,
        time_text=format_time(answer.time_s),
        time_definition=answer.definition,
        fourier_number=answer.fourier_number,
        characteristic_length_m=case.characteristic_length_m,
        length_convention=case.length_convention,
        final_value=answer.final_value,
        final_state=final_state_out(case),
        slowest_rate_per_s=answer.slowest_rate_per_s,
        slowest_excited_rate_per_s=rate,
        time_constant_s=1.0 / rate if rate else None,
        measures=answer.measures,
        method=Method(
            engine=answer.engine,
            path=answer.path,
            resolution=answer.resolution,
            estimated_relative_error=answer.estimated_relative_error,
        ),
        diffusivity_m2_per_s=case.medium.diffusivity_m2_per_s,
        biot=answer.biot,
        biot_by_face=biot_by_face(case, translation.faces_given),
        met_after_exchange=answer.met_after_exchange,
        reaction=(
            ReactionOut(
                thiele_modulus=answer.reaction[0],
                effectiveness_factor=_finite_or_none(answer.reaction[1]),
            )
            if answer.reaction is not None
            else None
        ),
        schedule=(
            ScheduleOut(
                integrated_diffusivity_m2=answer.schedule.integrated_diffusivity_m2,
                met_in_segment=answer.schedule.met_in_segment,
                schedule_end_s=answer.schedule.schedule_end_s,
                extra_soak_s=answer.schedule.extra_soak_s,
            )
            if answer.schedule is not None
            else None
        ),
        lumped=(
            LumpedOut(
                time_s=answer.lumped.time_s,
                time_text=format_time(answer.lumped.time_s),
                rate_per_s=answer.lumped.rate_per_s,
                biot_volume_to_area=answer.lumped.biot_volume_to_area,
            )
            if answer.lumped is not None
            else None
        ),
        interpreted_positions_m=translation.positions_m,
        warnings=[WarningOut(code=code, message=message) for code, message in answer.warnings],
        assumptions=answer.assumptions,
        cautions=answer.cautions,
    )


def _finite_or_none(value: float) -> float | None:
    return value if math.isfinite(value) else None
