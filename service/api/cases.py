"""Translate a validated request into a physics case (SI floats), naming fields in errors.

Every interpreted position is recorded against its JSON pointer so that responses can echo
what a word like "surface" or a depth meant, in metres.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

from service.errors import InvalidInput
from service.models import requests as rq
from service.physics import (
    Body,
    Case,
    Criterion,
    Geometry,
    Medium,
    Start,
    Surface,
    SurfaceKind,
)
from service.units import Units

__all__ = ["Translation", "to_case"]

# Accepted ranges of the SI inputs; outside them the arithmetic is no longer trustworthy
# (and no real body is that small, large, fast or slow).
LENGTH_RANGE_M = (1e-9, 1e4)
DIFFUSIVITY_RANGE_M2_PER_S = (1e-30, 1e3)
BIOT_RANGE = (0.0, 1e6)

_GEOMETRY = {"slab": Geometry.SLAB, "cylinder": Geometry.CYLINDER, "sphere": Geometry.SPHERE}


@dataclass
class Translation:
    """The case and every position the request gave, in metres, keyed by JSON pointer."""

    case: Case
    positions_m: dict[str, float] = field(default_factory=dict)


def _in_range(
    value: float, bounds: tuple[float, float], what: str, unit: str, pointer: str
) -> float:
    low, high = bounds
    if not low <= value <= high:
        raise InvalidInput(
            f"{what} must lie between {low:g} and {high:g} {unit}; got {value:g} {unit}", pointer
        )
    return value


class _Translator:
    def __init__(self, units: Units) -> None:
        self.units = units
        self.positions: dict[str, float] = {}

    def length(self, raw: float | str, pointer: str) -> float:
        value = self.units.to_si(raw, "length", pointer)
        return _in_range(value, LENGTH_RANGE_M, "a length", "m", pointer)

    def body(self, request: rq.SlabBody | rq.RadialBody) -> Body:
        geometry = _GEOMETRY[request.shape]
        if isinstance(request, rq.SlabBody):
            if request.thickness is not None:
                extent = self.length(request.thickness, "/body/thickness")
            else:
                assert request.half_thickness is not None
                extent = 2 * self.length(request.half_thickness, "/body/half_thickness")
        elif request.radius is not None:
            extent = self.length(request.radius, "/body/radius")
        else:
            assert request.diameter is not None
            extent = self.length(request.diameter, "/body/diameter") / 2
        return Body(geometry, extent)

    def position(self, raw: float | str | rq.PositionSpec, body: Body, pointer: str) -> float:
        extent = body.extent_m
        is_slab = body.geometry is Geometry.SLAB
        words: dict[str, Callable[[str], float]] = {
            "centre": lambda face: extent / 2 if is_slab else 0.0,
            "surface": lambda face: (extent if face == "second" else 0.0) if is_slab else extent,
        }
        if isinstance(raw, rq.PositionSpec):
            if raw.face == "second" and not is_slab:
                raise InvalidInput(
                    "'face' applies to a slab only; a cylinder or sphere has one surface",
                    pointer + "/face",
                )
            if raw.at is not None:
                value = words[raw.at](raw.face)
            else:
                assert raw.depth is not None
                depth = self.units.to_si(raw.depth, "length", pointer + "/depth")
                if not 0 <= depth <= extent:
                    raise InvalidInput(
                        f"the depth {depth:g} m is outside the body (0 to {extent:g} m)",
                        pointer + "/depth",
                    )
                from_first = raw.face == "first" if is_slab else False
                value = depth if from_first else extent - depth
        elif isinstance(raw, str) and raw.strip() in words:
            value = words[raw.strip()]("first")
        else:
            value = self.units.to_si(raw, "length", pointer)
            if not 0 <= value <= extent:
                axis = "from the first face" if is_slab else "from the centre"
                raise InvalidInput(
                    f"the position {value:g} m ({axis}) is outside the body, which "
                    f"spans 0 to {extent:g} m",
                    pointer,
                )
        self.positions[pointer] = value
        return value

    def start(self, request: rq.UniformStart | rq.BandStart | rq.ProfileStart, body: Body) -> Start:
        extent = body.extent_m
        if isinstance(request, rq.UniformStart):
            return Start.uniform(extent, request.value)
        if isinstance(request, rq.BandStart):
            lower = self.position(request.between[0], body, "/initial/between/0")
            upper = self.position(request.between[1], body, "/initial/between/1")
            if not lower < upper:
                raise InvalidInput(
                    "'between' takes two positions in increasing order", "/initial/between"
                )
            out, inside = request.outside, request.inside
            return Start.from_pieces(
                [(0.0, lower, out, out), (lower, upper, inside, inside), (upper, extent, out, out)]
            )
        points = [
            self.position(p, body, f"/initial/positions/{i}")
            for i, p in enumerate(request.positions)
        ]
        for i in range(1, len(points)):
            if not points[i] > points[i - 1]:
                raise InvalidInput(
                    "profile positions must increase strictly (a jump is two "
                    "points close together)",
                    f"/initial/positions/{i}",
                )
        values = request.values
        pieces = [(0.0, points[0], values[0], values[0])]
        pieces += [
            (points[i], points[i + 1], values[i], values[i + 1]) for i in range(len(points) - 1)
        ]
        pieces.append((points[-1], extent, values[-1], values[-1]))
        return Start.from_pieces(pieces)

    def surface(
        self,
        request: rq.NoFluxSurface | rq.FixedValueSurface | rq.ConvectiveSurface,
        body: Body,
        diffusivity: float,
    ) -> Surface:
        if isinstance(request, rq.NoFluxSurface):
            return Surface(SurfaceKind.NO_FLUX)
        if isinstance(request, rq.FixedValueSurface):
            return Surface(SurfaceKind.FIXED_VALUE, value=request.value)
        if request.biot is not None:
            biot = request.biot
        else:
            assert request.transfer_coefficient is not None
            pointer = "/surface/transfer_coefficient"
            coefficient = self.units.to_si(request.transfer_coefficient, "velocity", pointer)
            biot = coefficient * body.characteristic_length_m / diffusivity
            if not BIOT_RANGE[0] < biot <= BIOT_RANGE[1]:
                raise InvalidInput(
                    f"this transfer coefficient gives Bi = k_f·Lc/D = {biot:.3g}; "
                    f"accepted is 0 < Bi ≤ {BIOT_RANGE[1]:g}",
                    pointer,
                )
        return Surface(SurfaceKind.CONVECTIVE, value=request.ambient, biot=biot)

    def criterion(self, request: object, body: Body) -> Criterion:
        if isinstance(request, rq.ValueAtCriterion):
            position = self.position(request.position, body, "/criterion/position")
            return Criterion(
                "value_at",
                tolerance=request.tolerance,
                position_m=position,
                absolute_tolerance=request.absolute_tolerance,
            )
        if isinstance(request, rq.FractionCriterion):
            return Criterion("fraction_equilibrated", fraction=request.fraction)
        return Criterion(request.measure, tolerance=request.tolerance)  # type: ignore[attr-defined]


def to_case(request: rq.CaseRequest, units: Units) -> Translation:
    """The physics case a request describes."""
    translator = _Translator(units)
    body = translator.body(request.body)
    diffusivity = _in_range(
        units.to_si(request.medium.diffusivity, "diffusivity", "/medium/diffusivity"),
        DIFFUSIVITY_RANGE_M2_PER_S,
        "the diffusivity",
        "m^2/s",
        "/medium/diffusivity",
    )
    start = translator.start(request.initial, body)
    surface = translator.surface(request.surface, body, diffusivity)
    raw_criterion = getattr(request, "criterion", None)
    criterion = translator.criterion(raw_criterion, body) if raw_criterion is not None else None
    case = Case(
        body=body,
        medium=Medium(diffusivity),
        start=start,
        surface=surface,
        criterion=criterion,
        accuracy=request.accuracy,
        engine=request.engine,
    )
    return Translation(case=case, positions_m=translator.positions)
