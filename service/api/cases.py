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
from service.units import DIMENSIONS, Units

__all__ = ["Translation", "to_case"]

# Accepted ranges of the SI inputs; outside them the arithmetic is no longer trustworthy
# (and no real body is that small, large, fast or slow).
LENGTH_RANGE_M = (1e-9, 1e4)
DIFFUSIVITY_RANGE_M2_PER_S = (1e-30, 1e3)
BIOT_RANGE = (0.0, 1e6)
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
        medium: Medium,
    ) -> Surface:
        if isinstance(request, rq.NoFluxSurface):
            return Surface(SurfaceKind.NO_FLUX)
        if isinstance(request, rq.FixedValueSurface):
            return Surface(SurfaceKind.FIXED_VALUE, value=request.value)
        partition = medium.partition
        length = body.characteristic_length_m
        if request.biot is not None:
            biot = request.biot
        elif request.transfer_coefficient is not None:
            pointer = "/surface/transfer_coefficient"
            coefficient = self.units.to_si(request.transfer_coefficient, "velocity", pointer)
            biot = self._biot(
                coefficient * length / (partition * medium.diffusivity_m2_per_s),
                "k_f·Lc/(K·D)",
                pointer,
            )
        else:
            assert request.heat_transfer_coefficient is not None
            pointer = "/surface/heat_transfer_coefficient"
            if medium.conductivity_w_per_m_k is None:
                raise InvalidInput(
                    "a heat transfer coefficient needs the medium's 'conductivity' (Bi = h·Lc/k); "
                    "give it beside the diffusivity, or give the Biot number",
                    pointer,
                )
            if partition != 1.0:
                raise InvalidInput(
                    "a partition coefficient applies to mass transfer; with a heat transfer "
                    "coefficient the body's surface comes to the surroundings' temperature",
                    "/medium/partition",
                )
            coefficient = self.units.to_si(
                request.heat_transfer_coefficient, "heat_transfer_coefficient", pointer
            )
            biot = self._biot(
                coefficient * length / medium.conductivity_w_per_m_k, "h·Lc/k", pointer
            )
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
    surface = translator.surface(request.surface, body, medium)
    raw_criterion = getattr(request, "criterion", None)
    criterion = translator.criterion(raw_criterion, body) if raw_criterion is not None else None
    case = Case(
        body=body,
        medium=medium,
        start=start,
        surface=surface,
        criterion=criterion,
        accuracy=request.accuracy,
        engine=request.engine,
    )
    return Translation(case=case, positions_m=translator.positions)
