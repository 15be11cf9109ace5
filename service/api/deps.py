"""Dependencies shared by the routers, as Annotated aliases."""

from __future__ import annotations

from collections.abc import Awaitable, Callable
from typing import Annotated, Any

import numpy as np
from fastapi import Depends, Request, Response
from pydantic import BaseModel

from service.answers import PROFILE_FORMS, REACTION_FORMS
from service.metrics import Metrics
from service.models.responses import FinalStateOut, ProfilePieceOut
from service.physics import Case, Geometry, SurfaceKind
from service.plots import Plotter
from service.settings import Settings
from service.solver import Solver
from service.store import ResultStore
from service.units import Units

__all__ = [
    "MetricsDep",
    "PlotterDep",
    "SettingsDep",
    "SolverDep",
    "StoreDep",
    "UnitsDep",
    "biot_by_face",
    "final_state_out",
    "json_response",
    "json_text_response",
]


def _from_state(name: str) -> Callable[[Request], Awaitable[Any]]:
    """A dependency that reads one shared object from ``app.state``. It is ``async def``
    because it only reads: a plain ``def`` dependency would be sent to the thread pool, one
    more hop per request (measured ~0.2 ms)."""

    async def shared(request: Request) -> Any:
        return getattr(request.app.state, name)

    return shared


SolverDep = Annotated[Solver, Depends(_from_state("solver"))]
UnitsDep = Annotated[Units, Depends(_from_state("units"))]
PlotterDep = Annotated[Plotter, Depends(_from_state("plotter"))]
StoreDep = Annotated[ResultStore, Depends(_from_state("store"))]
SettingsDep = Annotated[Settings, Depends(_from_state("settings"))]
MetricsDep = Annotated[Metrics, Depends(_from_state("metrics"))]


def json_response(model: BaseModel, solve_seconds: float | None = None) -> Response:
    """Serialise a response model once, with pydantic-core.

    Returning the model itself makes FastAPI validate and serialise it again through the
    route's response field, which was measured to cost about 0.6 ms per answer under uvicorn;
    the route keeps ``response_model=`` for the OpenAPI document. ``solve_seconds`` goes into
    a Server-Timing header, never into the body, so the same request gives the same JSON."""
    return json_text_response(model.model_dump_json(), solve_seconds)


def json_text_response(content: str, solve_seconds: float | None = None) -> Response:
    """A response of JSON text already made (see ``json_response``)."""
    headers = (
        {} if solve_seconds is None else {"Server-Timing": f"solve;dur={solve_seconds * 1e3:.3f}"}
    )
    return Response(content=content, media_type="application/json", headers=headers)


def final_state_out(case: Case) -> FinalStateOut:
    """What the body settles to, for the response."""
    state = case.final_state
    if state.is_uniform:
        layer_values = (
            [state.value * layer.partition for layer in case.body.layers]
            if case.body.layers
            else None
        )
        return FinalStateOut(kind="uniform", value=state.value, layer_values=layer_values)
    ends = state.values(np.array([case.body.inner_m, case.body.extent_m]))
    if state.reaction is not None:
        scale, modulus, centre = state.reaction
        return FinalStateOut(
            kind="reaction_profile",
            profile=REACTION_FORMS[case.body.metric],
            reaction_profile={"scale": scale, "modulus_per_m": modulus, "centre_m": centre},
            end_values=[float(v) for v in ends],
        )
    return FinalStateOut(
        kind="steady_profile",
        profile=PROFILE_FORMS[case.body.metric],
        pieces=[
            ProfilePieceOut(from_m=low, to_m=high, a=a, b=b)
            for low, high, a, b in zip(state.lower, state.upper, state.a, state.b, strict=True)
        ],
        end_values=[float(v) for v in ends],
    )


def biot_by_face(case: Case, faces_given: bool) -> dict[str, float] | None:
    """Each convective end's Biot number by the name the request used for it."""
    if not faces_given:
        return None
    names = ("first", "second") if case.body.geometry is Geometry.SLAB else ("inner", "outer")
    ends = (case.faces.inner, case.faces.outer)
    return {
        name: end.biot
        for name, end in zip(names, ends, strict=True)
        if end is not None and end.kind is SurfaceKind.CONVECTIVE
    }
