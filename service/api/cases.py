"""Translate a validated request into a physics case (SI floats), naming fields in errors.

Every interpreted position is recorded against its JSON pointer so that responses can echo
what a word like "surface" or a depth meant, in metres.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

from service.api.case_checks import (
    _check_reacting,
    _check_separable,
    _check_stepped_schedule,
    _check_surroundings,
    _medium_and_schedule,
    _nonlinear_case,
    _periodic_cell,
    _product,
    _semi_infinite,
    in_potential,
)
from service.api.translate_bodies import BodiesMixin
from service.api.translate_surfaces import SurfacesMixin
from service.errors import InvalidInput
from service.models import requests as rq
from service.physics import (
    Body,
    Case,
    Criterion,
)
from service.units import Units

__all__ = ["Translation", "to_case"]


@dataclass
class Translation:
    """The case and every position the request gave, in metres, keyed by JSON pointer."""

    case: Case
    positions_m: dict[str, float] = field(default_factory=dict)
    faces_given: bool = False


class _Translator(BodiesMixin, SurfacesMixin):
    """Reads a request into physics, naming the field of every error."""

    def criterion(self, request: object, body: Body) -> Criterion:
        if isinstance(request, rq.ValueAtCriterion):
            position = self.position(request.position, body, "/criterion/position")
            return Criterion(
                "value_at",
                tolerance=request.tolerance,
                position_m=position,
                absolute_tolerance=request.absolute_tolerance,
            )
        if isinstance(request, rq.FractionCriterion | rq.RemainingFractionCriterion):
            return Criterion(request.measure, fraction=request.fraction)
        if isinstance(request, rq.ReachesCriterion):
            position = self.position(request.position, body, "/criterion/position")
            return Criterion("reaches", position_m=position, value=request.value)
        if isinstance(request, rq.ResidualSegregationCriterion):
            return Criterion("residual_segregation", tolerance=request.tolerance)
        if isinstance(request, rq.BathValueCriterion):
            return Criterion(
                "bath_value",
                tolerance=request.tolerance,
                absolute_tolerance=request.absolute_tolerance,
            )
        return Criterion(request.measure, tolerance=request.tolerance)  # type: ignore[attr-defined]


def to_case(request: rq.CaseRequest, units: Units) -> Translation:
    """The physics case a request describes."""
    translator = _Translator(units)
    translator.periodic_cell_m = _periodic_cell(translator, request)
    body = translator.body(request.body)
    if (request.medium is None) == (not body.layers):
        raise InvalidInput(
            "give 'medium' for a homogeneous body, or 'body.layers' each with its own medium "
            "(not both)",
            "/medium",
        )
    medium, schedule = _medium_and_schedule(translator, request, body)
    start = in_potential(translator.start(request.initial, body, request.accuracy), body)
    faces = translator.faces(request, body, medium)
    raw_criterion = getattr(request, "criterion", None)
    criterion = translator.criterion(raw_criterion, body) if raw_criterion is not None else None
    case = Case(
        body=body,
        medium=medium,
        start=start,
        faces=faces,
        criterion=criterion,
        accuracy=request.accuracy,
        engine=request.engine,
    )
    bath = translator.bath(request, case)
    if bath is not None:
        case = replace(case, bath=bath)
    if schedule is not None:
        _check_separable(request, case)
        case = replace(case, schedule=schedule)
    if translator.semi_infinite:
        case = replace(case, semi_infinite=_semi_infinite(request, translator, case))
    if case.medium.reaction_per_s > 0:
        _check_reacting(request, case)
    if isinstance(request.body, rq.ProductBody):
        case = replace(case, product=_product(request, translator, case))
    if translator.surroundings is not None:
        _check_surroundings(request, case)
        case = replace(case, surroundings=translator.surroundings[0])
    if case.medium.nonlinear is not None:
        case = _nonlinear_case(request, case)
    if case.needs_stepping and case.schedule is not None:
        _check_stepped_schedule(request, case)
    return Translation(
        case=case, positions_m=translator.positions, faces_given=request.faces is not None
    )
