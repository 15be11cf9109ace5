"""Audit of the time-stepped path's error estimate (grids and step tolerance together).

Each case is answered at accuracies 1e-3, 1e-4 and 1e-5 and compared with a reference: the
exact series where the law is flat (β → 0, an independent route), otherwise the same path at
accuracy 1e-7 (whose own estimate is far below the errors audited). As for the finite-volume
engine (tests/test_error_estimates.py), no estimate may understate the true error by more than
a factor of two, errors under a tenth of the accuracy excepted, and every estimate meets the
accuracy asked.
"""

from __future__ import annotations

from dataclasses import replace

import pytest

from service.physics import (
    Arrhenius,
    Body,
    Case,
    Criterion,
    Faces,
    Geometry,
    Medium,
    NonlinearDiffusivity,
    Schedule,
    ScheduleSegment,
    Start,
    Surface,
    SurfaceKind,
)
from service.solver import Solver


def _body_case(
    geometry: Geometry,
    law: NonlinearDiffusivity,
    surface: Surface,
    start: float,
    criterion: Criterion,
) -> Case:
    body = Body(geometry, 1e-3)
    return Case(
        body,
        Medium(1e-10, nonlinear=law),
        Start.uniform(1e-3, start),
        Faces.alike(body, surface),
        criterion,
    )


HELD = Surface(SurfaceKind.FIXED_VALUE, 1.0)
EMPTIED = Surface(SurfaceKind.FIXED_VALUE, 0.0)
FILM = Surface(SurfaceKind.CONVECTIVE, 0.0, 2.0)
RISING = NonlinearDiffusivity(d0=1e-10, beta=3.0)
TABLE = NonlinearDiffusivity(table_c=(0.0, 0.5, 1.0), table_log_d=(-23.0, -21.5, -20.7))


def _scheduled_film() -> Case:
    plate = Body(Geometry.SLAB, 10e-3)
    activation = 140e3 / 8.314462618
    law = Arrhenius(1e-11 / pow(2.718281828459045, -activation / 1273.15), activation)
    schedule = Schedule(
        law,
        (
            ScheduleSegment(1073.15, 1273.15, 5 * 3600.0, False),
            ScheduleSegment(1273.15, 1273.15, 400 * 3600.0, True),
        ),
    )
    return Case(
        plate,
        Medium(1e-11),
        Start.uniform(10e-3, 0.2),
        Faces.alike(plate, Surface(SurfaceKind.CONVECTIVE, 1.0, 10.0)),
        Criterion("fraction_equilibrated", fraction=0.5),
        schedule=schedule,
    )


CASES = {
    "sorption, sheet": _body_case(
        Geometry.SLAB, RISING, HELD, 0.0, Criterion("fraction_equilibrated", fraction=0.9)
    ),
    "desorption, sphere": _body_case(
        Geometry.SPHERE, RISING, EMPTIED, 1.0, Criterion("mean_square_deviation", tolerance=1e-3)
    ),
    "sorption, cylinder, table": _body_case(
        Geometry.CYLINDER, TABLE, HELD, 0.0, Criterion("max_deviation", tolerance=0.05)
    ),
    "early point, sheet": _body_case(
        Geometry.SLAB,
        RISING,
        HELD,
        0.0,
        Criterion("reaches", position_m=0.1e-3, value=0.5),
    ),
    "Kirchhoff energy, held sheet": _body_case(
        Geometry.SLAB, RISING, HELD, 0.0, Criterion("dirichlet_energy", tolerance=0.01)
    ),
    "drying through a film": _body_case(
        Geometry.SLAB, RISING, FILM, 1.0, Criterion("fraction_equilibrated", fraction=0.9)
    ),
    "film under a ramp and soak": _scheduled_film(),
}


@pytest.fixture(scope="module")
def solver() -> Solver:
    return Solver()


@pytest.fixture(scope="module")
def references(solver: Solver) -> dict[str, float]:
    return {
        name: solver.settle(replace(case, accuracy=1e-7)).time_s for name, case in CASES.items()
    }


@pytest.mark.parametrize("name", sorted(CASES))
@pytest.mark.parametrize("accuracy", [1e-3, 1e-4, 1e-5])
def test_stepped_estimate_bounds_the_true_error(
    solver: Solver, references: dict[str, float], name: str, accuracy: float
) -> None:
    answer = solver.settle(replace(CASES[name], accuracy=accuracy))
    assert answer.path == "time_stepping"
    error = abs(answer.time_s / references[name] - 1)
    estimate = answer.estimated_relative_error
    assert estimate <= accuracy, (name, estimate)
    assert error <= max(2 * estimate, 0.1 * accuracy), (name, error, estimate)
