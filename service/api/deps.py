"""Dependencies shared by the routers, as Annotated aliases."""

from __future__ import annotations

from typing import Annotated

from fastapi import Depends, Request

from service.solver import Solver
from service.units import Units

__all__ = ["SolverDep", "UnitsDep"]


def _solver(request: Request) -> Solver:
    solver: Solver = request.app.state.solver
    return solver


def _units(request: Request) -> Units:
    units: Units = request.app.state.units
    return units


SolverDep = Annotated[Solver, Depends(_solver)]
UnitsDep = Annotated[Units, Depends(_units)]
