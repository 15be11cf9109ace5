"""Translate a validated request into a physics case (SI floats), naming fields in errors.

Every interpreted position is recorded against its JSON pointer so that responses can echo
what a word like "surface" or a depth meant, in metres.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from service.errors import InvalidInput
from service.models import requests as rq
from service.physics import (
    Body,
    Case,
    Criterion,
    Faces,
    Geometry,
    Medium,
    Start,
    Surface,
    SurfaceKind,
    characteristic_length,
)
from service.units import DIMENSIONS, Units

__all__ = ["Translation", "to_case"]

# Accepted ranges of the SI inputs; outside them the arithmetic is no longer trustworthy
# (and no real body is that small, large, fast or slow).
LENGTH_RANGE_M = (1e-9, 1e4)
DIFFUSIVITY_RANGE_M2_PER_S = (1e-30, 1e3)
BIOT_RANGE = (0.0, 1e6)
# Thinnest wall of a hollow body, as a fraction of its outer radius.
HOLLOW_WALL_MIN = 1e-6
# Largest magnitude of a value (concentration, temperature), as the request models accept.
VALUE_LIMIT = 1e12
# Heat inputs: wider than any real material (aerogels to diamond, gases to metals).
CONDUCTIVITY_RANGE = (1e-6, 1e5)
DENSITY_RANGE = (1e-3, 1e5)
SPECIFIC_HEAT_RANGE = (1.0, 1e6)

_GEOMETRY = {"slab": Geometry.SLAB, "cylinder": Geometry.CYLINDER, "sphere": Geometry.SPHERE}


@dataclass
class Translation:
    """The case and every position the request gave, in metres, keyed by JSON pointer."""

    case: Case
    positions_m: dict[str, float] = field(default_factory=dict)
    faces_given: bool = False


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
        inner = 0.0
        if isinstance(request, rq.RadialBody) and request.inner_radius is not None:
            inner = self.length(request.inner_radius, "/body/inner_radius")
            if not inner < extent * (1 - HOLLOW_WALL_MIN):
                raise InvalidInput(
                    f"the inner radius ({inner:g} m) must be smaller than the outer radius "
                    f"({extent:g} m), with a wall of at least {HOLLOW_WALL_MIN:g} of it",
                    "/body/inner_radius",
                )
        return Body(geometry, extent, inner)

    def quantity(
        self, raw: float | str, dimension: str, bounds: tuple[float, float], pointer: str
    ) -> float:
        value = self.units.to_si(raw, dimension, pointer)
        label = DIMENSIONS[dimension]
        return _in_range(value, bounds, label.label.removeprefix("a "), label.si_unit, pointer)

    def medium(self, request: rq.Medium) -> Medium:
        conductivity = (
            self.quantity(
                request.conductivity, "conductivity", CONDUCTIVITY_RANGE, "/medium/conductivity"
            )
            if request.conductivity is not None
            else None
        )
        if request.diffusivity is not None:
            diffusivity = self.quantity(
                request.diffusivity,
                "diffusivity",
                DIFFUSIVITY_RANGE_M2_PER_S,
                "/medium/diffusivity",
            )
        else:
            assert request.density is not None and request.specific_heat is not None
            assert conductivity is not None
            density = self.quantity(request.density, "density", DENSITY_RANGE, "/medium/density")
            specific_heat = self.quantity(
                request.specific_heat,
                "specific_heat",
                SPECIFIC_HEAT_RANGE,
                "/medium/specific_heat",
            )
            diffusivity = _in_range(
                conductivity / (density * specific_heat),
                DIFFUSIVITY_RANGE_M2_PER_S,
                "the thermal diffusivity k/(ρ·c_p)",
                "m^2/s",
                "/medium",
            )
        partition = request.partition if request.partition is not None else 1.0
        return Medium(diffusivity, conductivity, partition)

    def position(self, raw: float | str | rq.PositionSpec, body: Body, pointer: str) -> float:
        extent, inner = body.extent_m, body.inner_m
        is_slab = body.geometry is Geometry.SLAB
        # each face by name: where it is and which way "depth" runs from it
        faces = (
            {"first": (0.0, 1.0), "second": (extent, -1.0)}
            if is_slab
            else {"outer": (extent, -1.0), **({"inner": (inner, 1.0)} if inner > 0 else {})}
        )
        default_face = "first" if is_slab else "outer"
        if isinstance(raw, rq.PositionSpec):
            face = raw.face or default_face
            if face not in faces:
                raise InvalidInput(
                    f"this body's faces are {', '.join(repr(f) for f in faces)}",
                    pointer + "/face",
                )
            at, direction = faces[face]
            if raw.at == "centre":
                value = self._centre(body, pointer + "/at")
            elif raw.at == "surface":
                value = at
            else:
                assert raw.depth is not None
                depth = self.units.to_si(raw.depth, "length", pointer + "/depth")
                if not 0 <= depth <= body.wall_m:
                    raise InvalidInput(
                        f"the depth {depth:g} m is outside the body (0 to {body.wall_m:g} m)",
                        pointer + "/depth",
                    )
                value = at + direction * depth
        elif isinstance(raw, str) and raw.strip() == "centre":
            value = self._centre(body, pointer)
        elif isinstance(raw, str) and raw.strip() == "surface":
            value = faces[default_face][0]
        else:
            value = self.units.to_si(raw, "length", pointer)
            if not inner <= value <= extent:
                axis = "from the first face" if is_slab else "from the centre"
                raise InvalidInput(
                    f"the position {value:g} m ({axis}) is outside the body, which "
                    f"spans {inner:g} to {extent:g} m",
                    pointer,
                )
        self.positions[pointer] = value
        return value

    @staticmethod
    def _centre(body: Body, pointer: str) -> float:
        if body.geometry is Geometry.SLAB:
            return body.extent_m / 2
        if body.inner_m > 0:
            raise InvalidInput(
                "a hollow body has no material at its centre; give a radius, a depth or "
                "{'at': 'surface', 'face': 'inner'}",
                pointer,
            )
        return 0.0

    def start(self, request: rq.UniformStart | rq.BandStart | rq.ProfileStart, body: Body) -> Start:
        extent, inner = body.extent_m, body.inner_m
        if isinstance(request, rq.UniformStart):
            return Start.uniform(extent, request.value, inner)
        if isinstance(request, rq.BandStart):
            lower = self.position(request.between[0], body, "/initial/between/0")
            upper = self.position(request.between[1], body, "/initial/between/1")
            if not lower < upper:
                raise InvalidInput(
                    "'between' takes two positions in increasing order", "/initial/between"
                )
            out, inside = request.outside, request.inside
            return Start.from_pieces(
                [
                    (inner, lower, out, out),
                    (lower, upper, inside, inside),
                    (upper, extent, out, out),
                ]
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
        pieces = [(inner, points[0], values[0], values[0])]
        pieces += [
            (points[i], points[i + 1], values[i], values[i + 1]) for i in range(len(points) - 1)
        ]
        pieces.append((points[-1], extent, values[-1], values[-1]))
        return Start.from_pieces(pieces)

    def faces(self, request: rq.CaseRequest, body: Body, medium: Medium) -> Faces:
        """The condition at each end, from ``surface`` (the same everywhere) or ``faces``."""
        if request.surface is not None:
            inner = (request.surface, "/surface") if body.has_inner_face else None
            ends = (inner, (request.surface, "/surface"))
        else:
            assert request.faces is not None
            ends = self._named_ends(request.faces, body)
        kinds = Faces(
            Surface(SurfaceKind(ends[0][0].kind)) if ends[0] is not None else None,
            Surface(SurfaceKind(ends[1][0].kind)),
        )
        length, _ = characteristic_length(body, kinds)
        inner_end = (
            self.surface(ends[0][0], length, medium, ends[0][1]) if ends[0] is not None else None
        )
        return Faces(inner_end, self.surface(ends[1][0], length, medium, ends[1][1]))

    @staticmethod
    def _named_ends(
        request: rq.Faces, body: Body
    ) -> tuple[tuple[rq.SurfaceRequest, str] | None, tuple[rq.SurfaceRequest, str]]:
        """(inner, outer) conditions with their pointers, from the names the shape uses."""
        if body.geometry is Geometry.SLAB:
            names, what = ("first", "second"), "a slab's faces are 'first' (x = 0) and 'second'"
        elif body.inner_m > 0:
            names, what = ("inner", "outer"), "a hollow body's surfaces are 'inner' and 'outer'"
        else:
            if request.inner is not None:
                raise InvalidInput(
                    "a solid cylinder's or sphere's centre is a symmetry point, never a "
                    "boundary; give 'body.inner_radius' for a hollow body",
                    "/faces/inner",
                )
            raise InvalidInput(
                "a solid cylinder or sphere has one surface: give 'surface' instead of 'faces'",
                "/faces",
            )
        given = {"first": request.first, "second": request.second, "inner": request.inner}
        given["outer"] = request.outer
        for name, value in given.items():
            if value is not None and name not in names:
                raise InvalidInput(what, f"/faces/{name}")
        pairs = []
        for name in names:
            value = given[name]
            if value is None:
                raise InvalidInput(f"give a condition for each end: {what}", f"/faces/{name}")
            pairs.append((value, f"/faces/{name}"))
        return pairs[0], pairs[1]

    def surface(
        self, request: rq.SurfaceRequest, length: float, medium: Medium, pointer: str
    ) -> Surface:
        if isinstance(request, rq.NoFluxSurface):
            return Surface(SurfaceKind.NO_FLUX)
        if isinstance(request, rq.FixedValueSurface):
            return Surface(SurfaceKind.FIXED_VALUE, value=request.value)
        partition = medium.partition
        if request.biot is not None:
            biot = request.biot
        elif request.transfer_coefficient is not None:
            where = pointer + "/transfer_coefficient"
            coefficient = self.units.to_si(request.transfer_coefficient, "velocity", where)
            biot = self._biot(
                coefficient * length / (partition * medium.diffusivity_m2_per_s),
                "k_f·Lc/(K·D)",
                where,
            )
        else:
            assert request.heat_transfer_coefficient is not None
            where = pointer + "/heat_transfer_coefficient"
            if medium.conductivity_w_per_m_k is None:
                raise InvalidInput(
                    "a heat transfer coefficient needs the medium's 'conductivity' (Bi = h·Lc/k); "
                    "give it beside the diffusivity, or give the Biot number",
                    where,
                )
            if partition != 1.0:
                raise InvalidInput(
                    "a partition coefficient applies to mass transfer; with a heat transfer "
                    "coefficient the body's surface comes to the surroundings' temperature",
                    "/medium/partition",
                )
            coefficient = self.units.to_si(
                request.heat_transfer_coefficient, "heat_transfer_coefficient", where
            )
            biot = self._biot(coefficient * length / medium.conductivity_w_per_m_k, "h·Lc/k", where)
        final = partition * request.ambient
        if abs(final) > VALUE_LIMIT:
            raise InvalidInput(
                f"the body's final value K·ambient = {final:.3g} is beyond ±{VALUE_LIMIT:g}; "
                "rescale the values (any one unit will do)",
                "/medium/partition",
            )
        return Surface(SurfaceKind.CONVECTIVE, value=final, biot=biot)

    @staticmethod
    def _biot(biot: float, formula: str, pointer: str) -> float:
        if not BIOT_RANGE[0] < biot <= BIOT_RANGE[1]:
            raise InvalidInput(
                f"this coefficient gives Bi = {formula} = {biot:.3g}; "
                f"accepted is 0 < Bi ≤ {BIOT_RANGE[1]:g}",
                pointer,
            )
        return biot

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
    medium = translator.medium(request.medium)
    start = translator.start(request.initial, body)
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
    return Translation(
        case=case, positions_m=translator.positions, faces_given=request.faces is not None
    )
