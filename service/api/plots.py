"""POST /v1/plots/decay and /v1/plots/profiles: the pictures of a settling-time answer."""

from __future__ import annotations

from typing import Annotated, Literal

import numpy as np
from fastapi import APIRouter, Query, Response

from service.answers import SettlingAnswer, format_time
from service.api.cases import to_case
from service.api.deps import PlotterDep, SolverDep, UnitsDep
from service.api.problems import PROBLEM_RESPONSES
from service.errors import InvalidInput
from service.models import SettlingRequest
from service.physics import Case, Geometry
from service.plots import DecayPicture, Plotter, ProfilesPicture
from service.solver import Solver
from service.units import Units

__all__ = ["draw_decay", "router"]

router = APIRouter(tags=["pictures"])

# Times a decay curve is drawn at (log-spread from 1/1000 of the answer to twice it), and the
# fractions of the answer at which profiles are drawn.
DECAY_POINTS = 160
PROFILE_FRACTIONS = (0.03, 0.1, 0.3, 1.0)
_MEDIA = {"svg": "image/svg+xml", "png": "image/png"}
# Criteria whose quantity falls as the body settles toward a level, as history reports it;
# the fraction equilibrated is drawn as what is left, 1 − F.
_LEFT = "unexchanged_fraction"

ImageFormat = Annotated[Literal["svg", "png"], Query(description="'svg' (default) or 'png'.")]
_RESPONSES = {
    **PROBLEM_RESPONSES,
    200: {"content": {"image/svg+xml": {}, "image/png": {}}, "description": "The picture."},
}


@router.post(
    "/v1/plots/decay",
    responses=_RESPONSES,
    response_class=Response,
    summary="Picture: the measures' decay, the tolerance and the settling time",
)
def decay(
    request: SettlingRequest,
    solver: SolverDep,
    units: UnitsDep,
    plotter: PlotterDep,
    format: ImageFormat = "svg",
) -> Response:
    """The case's measures over time on a log scale, the criterion's bold, its level dashed
    and the settling time marked (the others faint behind it)."""
    return draw_decay(request, solver, units, plotter, format)


def draw_decay(
    request: SettlingRequest,
    solver: Solver,
    units: Units,
    plotter: Plotter,
    image_format: str,
) -> Response:
    """The decay picture of a settling-time request (also drawn for stored results)."""
    case = to_case(request, units).case
    answer = _settled(solver, case)
    history = solver.history(case, None, DECAY_POINTS, 0)
    series = dict(history.measures)
    chosen = case.criterion.measure if case.criterion is not None else ""
    level = answer.measures.get(chosen)
    if "fraction_equilibrated" in series:
        series[_LEFT] = [
            None if value is None else 1.0 - value for value in series.pop("fraction_equilibrated")
        ]
        if chosen == "fraction_equilibrated":
            chosen, level = _LEFT, 1.0 - (level or 0.0)
    if chosen not in series or level is None or level <= 0:
        # a value reached at a point is no ratio to the start: mark the time on the mean square
        chosen = "mean_square_deviation"
        level = answer.measures.get(chosen)
    if level is None or level <= 0:
        raise InvalidInput("this answer has no falling measure to draw", "/criterion")
    picture = DecayPicture(
        title=_title(case),
        times_s=history.times_s,
        series=series,
        chosen=chosen,
        level=float(level),
        settled_s=answer.time_s,
        settled_text=format_time(answer.time_s),
    )
    return Response(plotter.decay(picture, image_format), media_type=_MEDIA[image_format])


@router.post(
    "/v1/plots/profiles",
    responses=_RESPONSES,
    response_class=Response,
    summary="Picture: profiles across the body at a few times, with the final state",
)
def profiles(
    request: SettlingRequest,
    solver: SolverDep,
    units: UnitsDep,
    plotter: PlotterDep,
    format: ImageFormat = "svg",
) -> Response:
    """Profiles at 3 %, 10 %, 30 % and 100 % of the settling time, the start dotted and the
    final state dashed."""
    case = to_case(request, units).case
    answer = _settled(solver, case)
    times = [fraction * answer.time_s for fraction in PROFILE_FRACTIONS]
    history = solver.history(case, times, None, len(times))
    positions = np.asarray(history.snapshots[0].positions_m)
    if history.final_value is not None:
        final = np.full(positions.size, history.final_value)
    else:
        final = case.final_state.values(positions) * case.partition_at(positions)
    start = case.start.values(positions) * case.partition_at(positions)
    picture = ProfilesPicture(
        title=_title(case),
        position_label=_position_label(case),
        value_label="value (as given)",
        positions_m=positions.tolist(),
        profiles=[(s.time_s, s.values) for s in history.snapshots],
        start=start.tolist(),
        final=final.tolist(),
    )
    return Response(plotter.profiles(picture, format), media_type=_MEDIA[format])


def _settled(solver: Solver, case: Case) -> SettlingAnswer:
    answer = solver.settle(case)
    if answer.time_s <= 0:
        raise InvalidInput(
            "the criterion is met from the start, so there is no decay to draw", "/criterion"
        )
    return answer


_SHAPES = {Geometry.SLAB: "slab", Geometry.CYLINDER: "cylinder", Geometry.SPHERE: "sphere"}


def _title(case: Case) -> str:
    """The case in a few words: shape and size, diffusivity, criterion."""
    body = case.body
    if case.semi_infinite is not None:
        shape = "semi-infinite body"
    elif case.product is not None:
        shape = " × ".join(case.product.names)
    elif body.geometry is Geometry.SLAB:
        shape = f"slab {body.extent_m * 1e3:.3g} mm"
    else:
        shape = f"{_SHAPES[body.geometry]} r = {body.extent_m * 1e3:.3g} mm"
    criterion = case.criterion.measure.replace("_", " ") if case.criterion else ""
    return f"{shape}, D = {case.medium.diffusivity_m2_per_s:.3g} m²/s — {criterion}"


def _position_label(case: Case) -> str:
    if case.semi_infinite is not None:
        return "depth below the surface (mm)"
    if case.product is not None:
        return "along the first side through the centre (mm)"
    if case.body.geometry is Geometry.SLAB:
        return "x from the first face (mm)"
    return "r from the centre (mm)"
