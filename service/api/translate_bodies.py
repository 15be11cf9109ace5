"""Bodies, their layers, positions in them and the start across them."""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from service.api.ranges import (
    HOLLOW_WALL_MIN,
    LENGTH_RANGE_M,
    PERIODIC_CHORDS,
    PERIODIC_SAG_PER_ACCURACY,
    RESISTANCE_RANGE,
)
from service.api.translate_media import MediaMixin
from service.errors import InvalidInput
from service.models import requests as rq
from service.physics import (
    Body,
    Geometry,
    Layer,
    Start,
)

_GEOMETRY = {"slab": Geometry.SLAB, "cylinder": Geometry.CYLINDER, "sphere": Geometry.SPHERE}


class BodiesMixin(MediaMixin):
    """Reads body, layers (each with its medium), positions and start."""

    def body(
        self, request: rq.SlabBody | rq.RadialBody | rq.SemiInfiniteBody | rq.ProductBody
    ) -> Body:
        if isinstance(request, rq.ProductBody):
            # the directions are made in _product; the case's own body is the first of them
            return self.product_directions(request)[0][1]
        if isinstance(request, rq.SemiInfiniteBody):
            # a provisional slab as deep as any length accepted; the solver sizes the real one
            self.semi_infinite = True
            return Body(Geometry.SLAB, 2 * LENGTH_RANGE_M[1])
        geometry = _GEOMETRY[request.shape]
        inner = self._inner_radius(request)
        if request.layers is not None:
            layers = self._layers(request.layers, inner)
            return Body(geometry, layers[-1].outer_m, inner, layers)
        if isinstance(request, rq.SlabBody):
            if request.thickness is not None:
                extent = self.length(request.thickness, "/body/thickness")
            elif request.half_thickness is not None:
                extent = 2 * self.length(request.half_thickness, "/body/half_thickness")
            elif self.periodic_cell_m is not None:
                extent = self.periodic_cell_m
            else:
                raise InvalidInput(
                    "give the slab's 'thickness', 'half_thickness' or 'layers'", "/body"
                )
        elif request.radius is not None:
            extent = self.length(request.radius, "/body/radius")
        else:
            assert request.diameter is not None
            extent = self.length(request.diameter, "/body/diameter") / 2
        if not inner < extent * (1 - HOLLOW_WALL_MIN):
            raise InvalidInput(
                f"the inner radius ({inner:g} m) must be smaller than the outer radius "
                f"({extent:g} m), with a wall of at least {HOLLOW_WALL_MIN:g} of it",
                "/body/inner_radius",
            )
        return Body(geometry, extent, inner)

    def product_directions(self, request: rq.ProductBody) -> list[tuple[str, Body]]:
        """Each direction's one-dimensional body (slabs of the full sides; the cylinder's
        radial part and its length as a slab), by name."""
        if request.shape in ("bar", "block"):
            count = 2 if request.shape == "bar" else 3
            if request.sides is None or len(request.sides) != count:
                raise InvalidInput(
                    f"a {request.shape} takes 'sides': {count} full side lengths", "/body/sides"
                )
            extra = [v for v in ("radius", "diameter", "length") if getattr(request, v)]
            if extra:
                raise InvalidInput(f"a {request.shape} takes only 'sides'", f"/body/{extra[0]}")
            sides = [self.length(v, f"/body/sides/{i}") for i, v in enumerate(request.sides)]
            names = "xyz"[:count]
            return [(n, Body(Geometry.SLAB, side)) for n, side in zip(names, sides, strict=True)]
        if request.sides is not None:
            raise InvalidInput(
                "a short cylinder takes a radius or diameter and a length", "/body/sides"
            )
        if (request.radius is None) == (request.diameter is None) or request.length is None:
            raise InvalidInput(
                "a short cylinder takes exactly one of 'radius' or 'diameter', and 'length'",
                "/body",
            )
        radius = (
            self.length(request.radius, "/body/radius")
            if request.radius is not None
            else self.length(request.diameter, "/body/diameter") / 2  # type: ignore[arg-type]
        )
        length = self.length(request.length, "/body/length")
        return [("radial", Body(Geometry.CYLINDER, radius)), ("axial", Body(Geometry.SLAB, length))]

    def _inner_radius(self, request: rq.SlabBody | rq.RadialBody) -> float:
        if isinstance(request, rq.RadialBody) and request.inner_radius is not None:
            return self.length(request.inner_radius, "/body/inner_radius")
        return 0.0

    def _layers(self, requests: list[rq.LayerRequest], inner: float) -> tuple[Layer, ...]:
        """Each layer in the potential that is continuous across interfaces: for heat (every
        layer gives a conductivity) T, with capacity ρ·c_p = k/α and conductivity k; for mass
        (none does) c/K, with capacity K and conductivity D·K."""
        for i, layer in enumerate(requests):
            if layer.medium.arrhenius is not None:
                raise InvalidInput(
                    "a layer's medium takes a diffusivity (or heat inputs); temperature-"
                    "dependent layers are not solved here",
                    f"/body/layers/{i}/medium/arrhenius",
                )
        media = [
            self.medium(layer.medium, f"/body/layers/{i}/medium")
            for i, layer in enumerate(requests)
        ]
        heat = [medium.conductivity_w_per_m_k is not None for medium in media]
        if any(heat) and not all(heat):
            first = heat.index(not heat[0])
            raise InvalidInput(
                "give every layer a conductivity (heat) or none (mass): the layers must describe "
                "one kind of transport",
                f"/body/layers/{first}/medium",
            )
        layers, outer = [], inner
        for i, (layer, medium) in enumerate(zip(requests, media, strict=True)):
            at = f"/body/layers/{i}"
            outer += self.length(layer.thickness, at + "/thickness")
            if medium.conductivity_w_per_m_k is not None:
                if medium.partition != 1.0:
                    raise InvalidInput(
                        "a partition coefficient applies to mass transfer, not to a layer "
                        "described for heat",
                        at + "/medium/partition",
                    )
                capacity = medium.conductivity_w_per_m_k / medium.diffusivity_m2_per_s
                conductivity, partition = medium.conductivity_w_per_m_k, 1.0
                dimension = "thermal_resistance"
            else:
                capacity = medium.partition
                conductivity = medium.diffusivity_m2_per_s * medium.partition
                partition, dimension = medium.partition, "mass_transfer_resistance"
            resistance = 0.0
            if layer.interface_resistance is not None:
                if i == len(requests) - 1:
                    raise InvalidInput(
                        "the last layer has no next layer to meet; give its surface condition "
                        "in 'surface' or 'faces' instead",
                        at + "/interface_resistance",
                    )
                resistance = self.quantity(
                    layer.interface_resistance,
                    dimension,
                    RESISTANCE_RANGE,
                    at + "/interface_resistance",
                )
            thermal = medium.conductivity_w_per_m_k is not None
            layers.append(Layer(outer, capacity, conductivity, partition, resistance, thermal))
        return tuple(layers)

    def position(self, raw: float | str | rq.PositionSpec, body: Body, pointer: str) -> float:
        extent, inner = body.extent_m, body.inner_m
        is_slab = body.geometry is Geometry.SLAB
        # each face by name: where it is and which way "depth" runs from it
        faces = (
            {"first": (0.0, 1.0), "second": (extent, -1.0)}
            if is_slab
            else {"outer": (extent, -1.0), **({"inner": (inner, 1.0)} if inner > 0 else {})}
        )
        if self.semi_infinite:
            faces = {"first": (0.0, 1.0)}  # the one surface; x is the depth below it
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
                axis = (
                    "below the surface"
                    if self.semi_infinite
                    else "from the first face"
                    if is_slab
                    else "from the centre"
                )
                raise InvalidInput(
                    f"the position {value:g} m ({axis}) is outside the body, which "
                    f"spans {inner:g} to {extent:g} m",
                    pointer,
                )
        self.positions[pointer] = value
        return value

    def _centre(self, body: Body, pointer: str) -> float:
        if self.semi_infinite:
            raise InvalidInput("a semi-infinite body has no centre; give a depth", pointer)
        if body.geometry is Geometry.SLAB:
            return body.extent_m / 2
        if body.inner_m > 0:
            raise InvalidInput(
                "a hollow body has no material at its centre; give a radius, a depth or "
                "{'at': 'surface', 'face': 'inner'}",
                pointer,
            )
        return 0.0

    def start(
        self,
        request: rq.UniformStart | rq.BandStart | rq.ProfileStart | rq.PeriodicStart,
        body: Body,
        accuracy: float = 1e-4,
    ) -> Start:
        extent, inner = body.extent_m, body.inner_m
        if isinstance(request, rq.PeriodicStart):
            # mean + amplitude·cos(πx/cell) by N chords: their largest sag is
            # amplitude·(1 − cos(π/(2N))), carried into the error estimate; N is the fewest
            # power of two that keeps it within a share of the accuracy (256 at 1e-4)
            fewest, most = PERIODIC_CHORDS
            count = fewest
            while count < most and 1.0 - math.cos(math.pi / (2 * count)) > (
                PERIODIC_SAG_PER_ACCURACY * accuracy
            ):
                count *= 2
            x = np.linspace(0.0, extent, count + 1)
            wave = request.mean + request.amplitude * np.cos(np.pi * x / extent)
            chords = Start.from_pieces(
                [
                    (float(x[i]), float(x[i + 1]), float(wave[i]), float(wave[i + 1]))
                    for i in range(count)
                ]
            )
            sag = 1.0 - math.cos(math.pi / (2 * count))
            return replace(chords, representation_error=sag)
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
