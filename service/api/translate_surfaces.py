"""Surfaces and faces, their films and schedules, and the finite bath."""

from __future__ import annotations

import math
from collections.abc import Callable

from service.api.ranges import (
    AREA_RANGE,
    BIOT_RANGE,
    EXCHANGE_LIMIT_S,
    LENGTH_RANGE_M,
    SEMI_INFINITE_REFERENCE_M,
    VALUE_LIMIT,
    VOLUME_RANGE,
)
from service.api.translate_base import TranslatorBase
from service.errors import InvalidInput
from service.models import requests as rq
from service.physics import (
    Bath,
    Body,
    Case,
    Faces,
    Geometry,
    Layer,
    Medium,
    Surface,
    SurfaceKind,
    SurroundingsSchedule,
    characteristic_length,
)

# An end's material (its medium, as a Biot number needs it) and what its values are divided by
# to be in the body's potential.
_EndMaterial = tuple[Medium, float]


def _end_materials(body: Body, medium: Medium) -> tuple[_EndMaterial, _EndMaterial]:
    """(inner, outer) end materials: the medium itself for a homogeneous body; for a layered
    one the end layers, with their partition coefficient dividing the values (φ = c/K)."""
    if not body.layers:
        return (medium, 1.0), (medium, 1.0)

    def material(layer: Layer) -> _EndMaterial:
        conductivity = layer.conductivity if layer.thermal else None
        return (
            Medium(layer.diffusivity_m2_per_s, conductivity, layer.partition),
            layer.partition,
        )

    return material(body.layers[0]), material(body.layers[-1])


class SurfacesMixin(TranslatorBase):
    """Reads the conditions at the ends and the bath."""

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
        if self.semi_infinite:
            # no length of its own: a Biot number on a reference length carries the film
            length = SEMI_INFINITE_REFERENCE_M
        materials = _end_materials(body, medium)
        inner_end = (
            self.surface(ends[0][0], length, materials[0], ends[0][1])
            if ends[0] is not None
            else None
        )
        return Faces(inner_end, self.surface(ends[1][0], length, materials[1], ends[1][1]))

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
        self, request: rq.SurfaceRequest, length: float, material: _EndMaterial, pointer: str
    ) -> Surface:
        """One end's condition, its values in the body's potential (c, or c/K of the end
        layer for a layered body) and its Biot number on Lc."""
        medium, divisor = material
        if isinstance(request, rq.NoFluxSurface):
            return Surface(SurfaceKind.NO_FLUX)
        if isinstance(request, rq.FixedValueSurface):
            held = self._surface_value(request.value, 1.0 / divisor, pointer + "/value")
            return Surface(SurfaceKind.FIXED_VALUE, value=held)
        if isinstance(request, rq.BathSurface):
            film = self._film_biot(request, length, medium, pointer)
            return Surface(SurfaceKind.BATH, biot=film if film is not None else 0.0)
        biot = self._film_biot(request, length, medium, pointer)
        assert biot is not None
        factor = medium.partition / divisor
        final = self._surface_value(request.ambient, factor, pointer + "/ambient") * divisor
        if abs(final) > VALUE_LIMIT:
            raise InvalidInput(
                f"the body's final value K·ambient = {final:.3g} is beyond ±{VALUE_LIMIT:g}; "
                "rescale the values (any one unit will do)",
                "/medium/partition",
            )
        return Surface(SurfaceKind.CONVECTIVE, value=final / divisor, biot=biot)

    def _surface_value(self, raw: float | list[rq.ValueStep], factor: float, pointer: str) -> float:
        """A surface value times ``factor`` (into the body's potential); a schedule of holds
        and ramps is kept as the case's surroundings, and its last value returned."""
        if not isinstance(raw, list):
            return raw * factor
        if self.surroundings is not None and self.surroundings[1] != pointer.rsplit("/", 1)[1]:
            raise InvalidInput("one schedule for the surroundings, please", pointer)
        if raw[0].start_at is None:
            raise InvalidInput("a schedule begins with {'start_at': v}", pointer + "/0")
        current = raw[0].start_at * factor
        start = current
        segments: list[tuple[float, float]] = []
        for i, step in enumerate(raw[1:], start=1):
            at = f"{pointer}/{i}"
            if step.start_at is not None:
                raise InvalidInput("only the first step is 'start_at'", at)
            if step.hold is not None:
                assert step.at is not None
                target = step.at * factor
                if target != current:
                    segments.append((target, 0.0))  # a jump, then the hold
                segments.append((target, self._duration(step.hold, at + "/hold")))
            else:
                assert step.ramp_to is not None and step.over is not None
                target = step.ramp_to * factor
                segments.append((target, self._duration(step.over, at + "/over")))
            current = target
        self.surroundings = (
            SurroundingsSchedule(start, tuple(segments)),
            pointer.rsplit("/", 1)[1],
        )
        return current

    def _film_biot(
        self,
        request: rq.ConvectiveSurface | rq.BathSurface,
        length: float,
        medium: Medium,
        pointer: str,
    ) -> float | None:
        """The Biot number on Lc of a surface's film, from whichever coefficient it gives."""
        partition = medium.partition
        if request.biot is not None:
            return request.biot
        if request.transfer_coefficient is not None:
            where = pointer + "/transfer_coefficient"
            coefficient = self.units.to_si(request.transfer_coefficient, "velocity", where)
            return self._biot(
                coefficient * length / (partition * medium.diffusivity_m2_per_s),
                "k_f·Lc/(K·D)",
                where,
            )
        if request.heat_transfer_coefficient is None:
            return None
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
        return self._biot(coefficient * length / medium.conductivity_w_per_m_k, "h·Lc/k", where)

    @staticmethod
    def _biot(biot: float, formula: str, pointer: str) -> float:
        if not BIOT_RANGE[0] < biot <= BIOT_RANGE[1]:
            raise InvalidInput(
                f"this coefficient gives Bi = {formula} = {biot:.3g}; "
                f"accepted is 0 < Bi ≤ {BIOT_RANGE[1]:g}",
                pointer,
            )
        return biot

    def bath(self, request: rq.CaseRequest, case: Case) -> Bath | None:
        """The bath, in the body's potential: its capacity ratio α and starting value."""
        touching = [end for end in case.faces.ends if end.kind is SurfaceKind.BATH]
        if request.bath is None:
            if touching:
                raise InvalidInput(
                    "a surface of kind 'bath' needs a top-level 'bath'", _boundary_pointer(request)
                )
            return None
        if not touching:
            raise InvalidInput(
                "the bath touches no surface: give the surfaces in it the kind 'bath'",
                _boundary_pointer(request),
            )
        others = [
            e for e in case.faces.ends if e.kind not in (SurfaceKind.BATH, SurfaceKind.NO_FLUX)
        ]
        if others:
            raise InvalidInput(
                "with a finite bath, every other surface must be sealed ('no_flux'): the body "
                "and its bath then share what they hold",
                _boundary_pointer(request),
            )
        body = case.body
        # the bath's concentration times this is its value in the body's potential: K for a
        # homogeneous body (which works in c), 1 for a layered one (which works in c/K)
        to_potential = case.medium.partition if not body.layers else 1.0
        ratio = request.bath.capacity_ratio
        if ratio is None:
            assert request.bath.volume is not None
            bath_volume = self.quantity(request.bath.volume, "volume", VOLUME_RANGE, "/bath/volume")
            if any(layer.thermal for layer in body.layers) or (
                case.medium.conductivity_w_per_m_k is not None
            ):
                raise InvalidInput(
                    "for heat, give the bath's 'capacity_ratio' (ρc·V of the bath over the "
                    "body's): a volume alone does not say how much heat the bath holds",
                    "/bath/volume",
                )
            ratio = bath_volume / (case.medium.partition * self._body_volume(request, case))
        exchanges: list[float] = []
        for i, raw in enumerate(request.bath.exchanges or []):
            at = f"/bath/exchanges/{i}"
            time_s = self.units.to_si(raw, "time", at)
            if not 0.0 < time_s <= EXCHANGE_LIMIT_S or (exchanges and time_s <= exchanges[-1]):
                raise InvalidInput(
                    "exchange times must be positive, at most "
                    f"{EXCHANGE_LIMIT_S:g} s, and increase strictly",
                    at,
                )
            exchanges.append(time_s)
        return Bath(ratio, request.bath.value * to_potential, to_potential, tuple(exchanges))

    def _body_volume(self, request: rq.CaseRequest, case: Case) -> float:
        """The body's K-weighted volume ∫K dV (its plain volume when homogeneous, whose K
        enters the ratio separately)."""
        shape = request.body
        if isinstance(shape, rq.SemiInfiniteBody | rq.ProductBody):
            raise InvalidInput(f"a bath is not offered for a {shape.shape} body", "/bath")
        body = case.body
        # ∫ C r^m dr is per unit face area (slab), per unit length and radian (cylinder) or
        # per steradian (sphere)
        weight = case.body_weight
        scale: dict[Geometry, Callable[[], float]] = {
            Geometry.SLAB: lambda: self._size(shape, "face_area", "area", "/body/face_area"),
            Geometry.CYLINDER: lambda: (
                2 * math.pi * self._size(shape, "length", "length", "/body/length")
            ),
            Geometry.SPHERE: lambda: 4 * math.pi,
        }
        return weight * scale[body.geometry]()

    def _size(self, body: rq.SlabBody | rq.RadialBody, name: str, dimension: str, at: str) -> float:
        raw = getattr(body, name, None)
        if raw is None:
            raise InvalidInput(
                f"a bath given by its volume needs the body's '{name}' (or give the bath's "
                "'capacity_ratio')",
                at,
            )
        bounds = AREA_RANGE if dimension == "area" else LENGTH_RANGE_M
        return self.quantity(raw, dimension, bounds, at)


def _boundary_pointer(request: rq.CaseRequest) -> str:
    return "/surface" if request.surface is not None else "/faces"
