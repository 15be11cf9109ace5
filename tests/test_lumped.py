"""The lumped answer: its closed forms against the distributed answer where Bi → 0."""

from __future__ import annotations

import pytest

from service.physics import Criterion, Geometry, SurfaceKind
from service.solver import Solver
from tests.factories import SHAPES, make_case

CRITERIA = {
    "mean_square_deviation": Criterion("mean_square_deviation", tolerance=1e-3),
    "max_deviation": Criterion("max_deviation", tolerance=0.05),
    "value_at": Criterion("value_at", tolerance=0.05, position_m=0.0),
    "value_at_absolute": Criterion("value_at", absolute_tolerance=0.02, position_m=0.0),
    "fraction_equilibrated": Criterion("fraction_equilibrated", fraction=0.99),
}


@pytest.mark.parametrize("name", sorted(CRITERIA))
@pytest.mark.parametrize("geometry", SHAPES)
def test_lumped_time_agrees_with_distributed_as_biot_vanishes(
    solver: Solver, geometry: Geometry, name: str
) -> None:
    """With Bi = 1e-3 the profile inside the body is flat to O(Bi) (common practice: the
    lumped model's error is of the order of the Biot number), so both times agree to ~1e-3."""
    case = make_case(
        geometry, SurfaceKind.CONVECTIVE, criterion=CRITERIA[name], biot=1e-3, start_value=0.0
    )
    answer = solver.settle(case)
    assert answer.lumped is not None
    assert answer.lumped.time_s == pytest.approx(answer.time_s, rel=2e-3)


def test_lumped_answer_only_below_the_classical_limit(solver: Solver) -> None:
    # a sphere's V/A is R/3, so Bi = 0.3 on the radius is 0.1 on V/A
    criterion = CRITERIA["fraction_equilibrated"]
    above = make_case(Geometry.SPHERE, SurfaceKind.CONVECTIVE, criterion=criterion, biot=0.31)
    below = make_case(Geometry.SPHERE, SurfaceKind.CONVECTIVE, criterion=criterion, biot=0.29)
    assert solver.settle(above).lumped is None
    assert solver.settle(below).lumped is not None
