"""Translate a validated request into a physics case (SI floats), naming fields in errors.

Every interpreted position is recorded against its JSON pointer so that responses can echo
what a word like "surface" or a depth meant, in metres.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field, replace

import numpy as np

from service.errors import InvalidInput, UnitError
from service.models import requests as rq
from service.physics import (
    Arrhenius,
    Bath,
    Body,
    Case,
    Criterion,
    Faces,
    Geometry,
    Layer,
    Medium,
    NonlinearDiffusivity,
    Product,
    Schedule,
    ScheduleSegment,
    SemiInfinite,
    Start,
    Surface,
    SurfaceKind,
    SurroundingsSchedule,
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
# Interface resistances (s/m for mass, m^2·K/W for heat); zero is no resistance.
RESISTANCE_RANGE = (0.0, 1e12)
# The latest bath exchange accepted (about 3 000 years).
EXCHANGE_LIMIT_S = 1e11
# A bath's volume (m³) and a slab's face area (m²).
VOLUME_RANGE = (1e-24, 1e9)
AREA_RANGE = (1e-18, 1e8)
# First-order rate constants (1/s).
RATE_RANGE = (0.0, 1e9)
# Temperatures (K), durations (s), D0 (m²/s) and activation temperatures Q/R (K).
TEMPERATURE_RANGE_K = (1e-3, 1e5)
DURATION_RANGE_S = (1e-9, 1e11)
D0_RANGE = (1e-30, 1e10)
ACTIVATION_RANGE_K = (0.0, 1e7)
# Gas constant R and Boltzmann's constant k_B (exact in the 2019 SI).
GAS_CONSTANT = 8.314462618
BOLTZMANN = 1.380649e-23
# The length a semi-infinite body's film Biot number is computed on before the solver
# sizes its slab (it only carries k_eff = Bi·D/length from request to solver).
SEMI_INFINITE_REFERENCE_M = 1e-3
# Chords a periodic start's cosine is drawn with (largest sag 1.2e-6 of the amplitude).
PERIODIC_CHORDS = 1024
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


class _Translator:
    def __init__(self, units: Units) -> None:
        self.units = units
        self.positions: dict[str, float] = {}
        self.semi_infinite = False
        # half the wavelength of a periodic start: the cell a segregation pattern is solved on
        self.periodic_cell_m: float | None = None
        # a schedule of the surroundings' value, and the field it came from
        self.surroundings: tuple[SurroundingsSchedule, str] | None = None

    def length(self, raw: float | str, pointer: str) -> float:
        value = self.units.to_si(raw, "length", pointer)
        return _in_range(value, LENGTH_RANGE_M, "a length", "m", pointer)

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

    def quantity(
        self, raw: float | str, dimension: str, bounds: tuple[float, float], pointer: str
    ) -> float:
        value = self.units.to_si(raw, dimension, pointer)
        label = DIMENSIONS[dimension]
        return _in_range(value, bounds, label.label.removeprefix("a "), label.si_unit, pointer)

    def medium(
        self, request: rq.Medium, at: str = "/medium", diffusivity_given: float | None = None
    ) -> Medium:
        """The medium; ``diffusivity_given`` stands in for the diffusivity when it follows
        from an Arrhenius law at the case's temperature."""
        conductivity = (
            self.quantity(
                request.conductivity, "conductivity", CONDUCTIVITY_RANGE, at + "/conductivity"
            )
            if request.conductivity is not None
            else None
        )
        nonlinear = self._nonlinear(request, at)
        if nonlinear is not None:
            # a placeholder until the final value is known (see to_case)
            diffusivity_given = float(nonlinear.diffusivity(np.array(0.0)))
        if diffusivity_given is not None:
            diffusivity = _in_range(
                diffusivity_given,
                DIFFUSIVITY_RANGE_M2_PER_S,
                "the diffusivity D0·exp(−Q/RT)",
                "m^2/s",
                at + "/arrhenius",
            )
        elif request.diffusivity is not None:
            diffusivity = self.quantity(
                request.diffusivity, "diffusivity", DIFFUSIVITY_RANGE_M2_PER_S, at + "/diffusivity"
            )
        else:
            assert request.density is not None and request.specific_heat is not None
            assert conductivity is not None
            density = self.quantity(request.density, "density", DENSITY_RANGE, at + "/density")
            specific_heat = self.quantity(
                request.specific_heat, "specific_heat", SPECIFIC_HEAT_RANGE, at + "/specific_heat"
            )
            diffusivity = _in_range(
                conductivity / (density * specific_heat),
                DIFFUSIVITY_RANGE_M2_PER_S,
                "the thermal diffusivity k/(ρ·c_p)",
                "m^2/s",
                at,
            )
        partition = request.partition if request.partition is not None else 1.0
        if nonlinear is not None:
            return Medium(diffusivity, conductivity, partition, nonlinear=nonlinear)
        reaction = 0.0
        if request.reaction_rate is not None:
            reaction = self.quantity(
                request.reaction_rate, "rate", RATE_RANGE, at + "/reaction_rate"
            )
        return Medium(diffusivity, conductivity, partition, reaction)

    def _nonlinear(self, request: rq.Medium, at: str) -> NonlinearDiffusivity | None:
        """D(c) from a table (linear in log D) or an exponential law."""
        if request.diffusivity_exponential is not None:
            law = request.diffusivity_exponential
            d0 = self.quantity(law.d0, "diffusivity", D0_RANGE, at + "/diffusivity_exponential/d0")
            return NonlinearDiffusivity(d0=d0, beta=law.beta)
        if request.diffusivity_table is None:
            return None
        values: list[float] = []
        logs: list[float] = []
        for i, (value, raw) in enumerate(request.diffusivity_table):
            where = f"{at}/diffusivity_table/{i}"
            if not math.isfinite(value) or (values and value <= values[-1]):
                raise InvalidInput("the table's values must be finite and increase strictly", where)
            d = self.quantity(raw, "diffusivity", DIFFUSIVITY_RANGE_M2_PER_S, where + "/1")
            values.append(value)
            logs.append(math.log(d))
        return NonlinearDiffusivity(table_c=tuple(values), table_log_d=tuple(logs))

    def temperature(self, raw: float | str, pointer: str) -> float:
        """An absolute temperature in kelvin; it must carry its unit (900 could be °C or K)."""
        if not isinstance(raw, str) or "delta" in raw:
            raise InvalidInput(
                "give a temperature with its unit, such as '900 degC' or '1173 K' (a bare "
                "number could be either; a temperature difference is not a temperature)",
                pointer,
            )
        return self.quantity(raw, "temperature", TEMPERATURE_RANGE_K, pointer)

    def arrhenius(self, request: rq.ArrheniusRequest, at: str) -> Arrhenius:
        """D0 and the activation temperature Q/R (per mole) or Q/k_B (per atom)."""
        raw = request.activation_energy
        where = at + "/activation_energy"
        if not isinstance(raw, str):
            raise InvalidInput(
                "give the activation energy with its unit: J/mol, kJ/mol, kcal/mol or eV", where
            )
        try:
            energy = self.units.to_si(raw, "molar_energy", where)
            activation = energy / GAS_CONSTANT
        except UnitError:
            try:
                energy = self.units.to_si(raw, "energy", where)
            except UnitError as exc:
                raise InvalidInput(
                    f"{raw!r} is not an activation energy: use J/mol, kJ/mol, kcal/mol or eV "
                    "(per atom)",
                    where,
                ) from exc
            activation = energy / BOLTZMANN
        _in_range(activation, ACTIVATION_RANGE_K, "the activation energy over R", "K", where)
        if request.d0 is not None:
            d0 = self.quantity(request.d0, "diffusivity", D0_RANGE, at + "/d0")
        else:
            assert request.d_ref is not None and request.t_ref is not None
            d_ref = self.quantity(
                request.d_ref, "diffusivity", DIFFUSIVITY_RANGE_M2_PER_S, at + "/d_ref"
            )
            t_ref = self.temperature(request.t_ref, at + "/t_ref")
            d0 = d_ref * math.exp(activation / t_ref)
            if not math.isfinite(d0):
                raise InvalidInput(
                    "D0 = d_ref·exp(Q/(R·t_ref)) overflows: check the activation energy and the "
                    "reference temperature",
                    at,
                )
        return Arrhenius(d0, activation)

    def schedule(self, steps: list[rq.ScheduleStep], law: Arrhenius) -> Schedule:
        """Holds and ramps from the starting temperature, in kelvin and seconds."""
        first = steps[0]
        if first.start_at is None:
            raise InvalidInput("a schedule begins with {'start_at': T}", "/schedule/0")
        current = self.temperature(first.start_at, "/schedule/0/start_at")
        segments = []
        for i, step in enumerate(steps[1:], start=1):
            at = f"/schedule/{i}"
            if step.start_at is not None:
                raise InvalidInput("only the first step is 'start_at'", at)
            if step.hold is not None:
                assert step.at is not None
                duration = self._duration(step.hold, at + "/hold")
                current = self.temperature(step.at, at + "/at")
                segments.append(ScheduleSegment(current, current, duration, True))
            else:
                assert step.ramp_to is not None and step.over is not None
                duration = self._duration(step.over, at + "/over")
                target = self.temperature(step.ramp_to, at + "/ramp_to")
                segments.append(ScheduleSegment(current, target, duration, False))
                current = target
        return Schedule(law, tuple(segments))

    def _duration(self, raw: float | str, pointer: str) -> float:
        value = self.units.to_si(raw, "time", pointer)
        return _in_range(value, DURATION_RANGE_S, "a duration", "s", pointer)

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
    ) -> Start:
        extent, inner = body.extent_m, body.inner_m
        if isinstance(request, rq.PeriodicStart):
            # mean + amplitude·cos(πx/cell) by chords: their largest sag is
            # amplitude·(1 − cos(π/(2N))) ≈ 1.2e-6 of the amplitude for N = 1024
            x = np.linspace(0.0, extent, PERIODIC_CHORDS + 1)
            wave = request.mean + request.amplitude * np.cos(np.pi * x / extent)
            chords = Start.from_pieces(
                [
                    (float(x[i]), float(x[i + 1]), float(wave[i]), float(wave[i + 1]))
                    for i in range(PERIODIC_CHORDS)
                ]
            )
            sag = 1.0 - math.cos(math.pi / (2 * PERIODIC_CHORDS))
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
    start = in_potential(translator.start(request.initial, body), body)
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
    return Translation(
        case=case, positions_m=translator.positions, faces_given=request.faces is not None
    )


def reference_medium(body: Body) -> Medium:
    """A layered body's reference diffusivity, for its Fourier number and time scales only:
    D_ref = L²/((Σ C_i·t_i)·(Σ t_i/Λ_i)), the wall's capacity times its resistance (exact for
    one layer; the engines use each layer's own properties)."""
    capacity, resistance, lower = 0.0, 0.0, body.inner_m
    for layer in body.layers:
        thickness = layer.outer_m - lower
        capacity += layer.capacity * thickness
        resistance += thickness / layer.conductivity + layer.resistance
        lower = layer.outer_m
    return Medium(body.wall_m**2 / (capacity * resistance))


def in_potential(start: Start, body: Body) -> Start:
    """A layered body's start in the potential φ = c/K, split at the interfaces, each piece
    carrying its layer's capacity; a homogeneous body's start as it is."""
    if not body.layers:
        return start
    lowers = [body.inner_m] + [layer.outer_m for layer in body.layers[:-1]]
    pieces: list[tuple[float, float, float, float]] = []
    capacity: list[float] = []
    for lower, layer in zip(lowers, body.layers, strict=True):
        for x0, x1, v0, v1 in zip(start.x0, start.x1, start.v0, start.v1, strict=True):
            low, high = max(x0, lower), min(x1, layer.outer_m)
            if high <= low:
                continue
            slope = (v1 - v0) / (x1 - x0)
            values = (v0 + slope * (low - x0), v0 + slope * (high - x0))
            pieces.append((low, high, values[0] / layer.partition, values[1] / layer.partition))
            capacity.append(layer.capacity)
    return Start.from_pieces(pieces, capacity)


def _boundary_pointer(request: rq.CaseRequest) -> str:
    return "/surface" if request.surface is not None else "/faces"


def _medium_and_schedule(
    translator: _Translator, request: rq.CaseRequest, body: Body
) -> tuple[Medium, Schedule | None]:
    """The medium (a layered body's reference one), and the schedule an Arrhenius medium
    follows; an Arrhenius medium at one temperature is a constant diffusivity."""
    if request.medium is None:
        for name in ("temperature", "schedule"):
            if getattr(request, name) is not None:
                raise InvalidInput(f"'{name}' goes with an Arrhenius medium", f"/{name}")
        return reference_medium(body), None
    law_request = request.medium.arrhenius
    if law_request is None:
        for name in ("temperature", "schedule"):
            if getattr(request, name) is not None:
                raise InvalidInput(f"'{name}' goes with a medium given as 'arrhenius'", f"/{name}")
        return translator.medium(request.medium), None
    law = translator.arrhenius(law_request, "/medium/arrhenius")
    if (request.temperature is None) == (request.schedule is None):
        raise InvalidInput(
            "an Arrhenius medium needs exactly one of 'temperature' or 'schedule'",
            "/medium/arrhenius",
        )
    if request.temperature is not None:
        kelvin = translator.temperature(request.temperature, "/temperature")
        return translator.medium(request.medium, diffusivity_given=law.diffusivity(kelvin)), None
    assert request.schedule is not None
    schedule = translator.schedule(request.schedule, law)
    medium = translator.medium(request.medium, diffusivity_given=schedule.reference_diffusivity)
    return medium, schedule


def _check_separable(request: rq.CaseRequest, case: Case) -> None:
    """Reduced time is exact only while nothing but D changes with temperature: sealed and
    held surfaces and film-free baths, one material, no bath exchanges (clock times)."""
    if any(end.biot > 0 for end in case.faces.ends):
        raise InvalidInput(
            "under a temperature schedule a surface film's Biot number k·Lc/D changes with D, "
            "so reduced time is not exact; that needs time stepping, which this version does "
            "not do: use held or sealed surfaces, or a fixed temperature",
            _boundary_pointer(request),
        )
    if case.bath is not None and case.bath.exchanges_s:
        raise InvalidInput(
            "bath exchanges are not combined with a temperature schedule here",
            "/bath/exchanges",
        )


def _semi_infinite(request: rq.CaseRequest, translator: _Translator, case: Case) -> SemiInfinite:
    """What a semi-infinite body needs beyond the provisional slab: its surface's transfer
    coefficient (a Biot number needs a length it has not got) and the real thickness."""
    if request.surface is None or case.faces.outer.kind not in (
        SurfaceKind.FIXED_VALUE,
        SurfaceKind.CONVECTIVE,
    ):
        raise InvalidInput(
            "a semi-infinite body takes one 'surface', held ('fixed_value') or convective",
            "/surface" if request.surface is not None else "/faces",
        )
    surface = request.surface
    if isinstance(surface, rq.ConvectiveSurface) and surface.biot is not None:
        raise InvalidInput(
            "a semi-infinite body has no length for a Biot number: give the surface's "
            "'transfer_coefficient' or 'heat_transfer_coefficient'",
            "/surface/biot",
        )
    if not (case.start.x0.size == 1 and case.start.v0[0] == case.start.v1[0]):
        raise InvalidInput("a semi-infinite body starts uniform here", "/initial")
    criterion = case.criterion
    if criterion is not None and criterion.measure not in ("reaches", "value_at"):
        raise InvalidInput(
            "a semi-infinite body is asked about a point: use 'reaches' or 'value_at'",
            "/criterion/measure",
        )
    outer = case.faces.outer
    transfer = None
    if outer.kind is SurfaceKind.CONVECTIVE:
        transfer = outer.biot * case.medium.diffusivity_m2_per_s / SEMI_INFINITE_REFERENCE_M
    thickness = None
    assert isinstance(request.body, rq.SemiInfiniteBody)
    if request.body.thickness is not None:
        thickness = translator.length(request.body.thickness, "/body/thickness")
    return SemiInfinite(transfer, thickness)


def _periodic_cell(translator: _Translator, request: rq.CaseRequest) -> float | None:
    """Half the wavelength of a periodic start, after checking that the body is the sealed
    slab cell it implies."""
    initial = request.initial
    if not isinstance(initial, rq.PeriodicStart):
        return None
    body = request.body
    if not isinstance(body, rq.SlabBody) or any(
        v is not None for v in (body.thickness, body.half_thickness, body.layers)
    ):
        raise InvalidInput(
            "a periodic start is solved on its half-wavelength cell: give the body as "
            "{'shape': 'slab'} with no size (the wavelength sets it)",
            "/body",
        )
    if request.surface is None or not isinstance(request.surface, rq.NoFluxSurface):
        raise InvalidInput(
            "the faces of a periodic cell are planes of symmetry: the surface is 'no_flux'",
            "/surface" if request.surface is not None else "/faces",
        )
    wavelength = translator.length(initial.wavelength, "/initial/wavelength")
    return wavelength / 2


def _check_reacting(request: rq.CaseRequest, case: Case) -> None:
    """First-order reaction is solved for a homogeneous solid cylinder or sphere, or a slab,
    with the same held or convective condition on every surface."""
    reasons = [
        (request.surface is None, "the same surface on every face", "/faces"),
        (case.body.layers != () or case.body.inner_m > 0, "a solid, homogeneous body", "/body"),
        (case.bath is not None or case.schedule is not None, "unchanging surroundings", "/bath"),
        (case.semi_infinite is not None, "a finite body", "/body"),
        (
            case.faces.outer.kind not in (SurfaceKind.FIXED_VALUE, SurfaceKind.CONVECTIVE),
            "a held or convective surface (a sealed body would only decay to zero)",
            "/surface",
        ),
    ]
    for failed, needs, pointer in reasons:
        if failed:
            raise InvalidInput(f"a reacting medium is solved here for {needs}", pointer)


_PRODUCT_MEASURES = (
    "value_at",
    "reaches",
    "max_deviation",
    "mean_square_deviation",
    "fraction_equilibrated",
)


def _product(request: rq.CaseRequest, translator: _Translator, case: Case) -> Product:
    """A finite body as a product of one-dimensional cases, after checking that the product
    rule holds: a uniform start, the same held or convective surface on every face (one
    ambient), a homogeneous medium, nothing else that couples the directions."""
    assert isinstance(request.body, rq.ProductBody)
    checks = [
        (request.surface is None, "the same surface on every face ('surface')", "/faces"),
        (
            case.faces.outer.kind not in (SurfaceKind.FIXED_VALUE, SurfaceKind.CONVECTIVE),
            "a held or convective surface",
            "/surface",
        ),
        (
            not (case.start.x0.size == 1 and case.start.v0[0] == case.start.v1[0]),
            "a uniform start",
            "/initial",
        ),
        (
            case.bath is not None or case.schedule is not None or case.medium.reaction_per_s > 0,
            "unchanging surroundings without reaction",
            "/body",
        ),
    ]
    for failed, needs, pointer in checks:
        if failed:
            raise InvalidInput(
                f"a {request.body.shape} is solved as a product of one-dimensional solutions, "
                f"which holds only for {needs}",
                pointer,
            )
    criterion = case.criterion
    if criterion is not None:
        if criterion.measure not in _PRODUCT_MEASURES:
            raise InvalidInput(
                "a product body answers " + ", ".join(_PRODUCT_MEASURES), "/criterion/measure"
            )
        centre = case.body.extent_m / 2 if case.body.geometry is Geometry.SLAB else 0.0
        if criterion.position_m is not None and criterion.position_m != centre:
            raise InvalidInput(
                "a product body is asked about its centre ('centre') or as a whole",
                "/criterion/position",
            )
    surface = request.surface
    if isinstance(surface, rq.ConvectiveSurface) and surface.biot is not None:
        raise InvalidInput(
            "a product body's directions have their own lengths: give the surface's "
            "'transfer_coefficient' or 'heat_transfer_coefficient' rather than a Biot number",
            "/surface/biot",
        )
    # the film's coefficient over D, from the Biot number on the case's own Lc
    film = case.faces.outer.biot / case.characteristic_length_m
    directions = []
    names = []
    for name, body in translator.product_directions(request.body):
        alike = Faces.alike(body, case.faces.outer)
        length, _ = characteristic_length(body, alike)
        end = replace(case.faces.outer, biot=film * length) if film > 0 else case.faces.outer
        start = Start.uniform(body.extent_m, float(case.start.v0[0]))
        directions.append(
            replace(case, body=body, start=start, faces=Faces.alike(body, end), criterion=None)
        )
        names.append(name)
    return Product(tuple(directions), tuple(names))


def _check_surroundings(request: rq.CaseRequest, case: Case) -> None:
    """A schedule of the surroundings is applied by superposition in time on one linear body
    with the same surface all round, judged against where it ends."""
    checks = [
        (request.surface is None, "the same surface on every face ('surface')", "/faces"),
        (
            case.bath is not None
            or case.schedule is not None
            or case.semi_infinite is not None
            or case.product is not None,
            "a body in surroundings it does not change, without a temperature schedule",
            "/surface",
        ),
    ]
    for failed, needs, pointer in checks:
        if failed:
            raise InvalidInput(
                f"a schedule of the surroundings is applied here to {needs}", pointer
            )
    criterion = case.criterion
    if criterion is not None and criterion.measure not in _SURROUNDED_MEASURES:
        raise InvalidInput(
            "with changing surroundings the body is judged by "
            + ", ".join(_SURROUNDED_MEASURES)
            + " (against where it ends)",
            "/criterion/measure",
        )


_SURROUNDED_MEASURES = (
    "mean_square_deviation",
    "max_deviation",
    "value_at",
    "fraction_equilibrated",
)


_NONLINEAR_MEASURES = (
    "mean_square_deviation",
    "max_deviation",
    "fraction_equilibrated",
    "reaches",
)


def _nonlinear_case(request: rq.CaseRequest, case: Case) -> Case:
    """A value-dependent diffusivity is solved by stepping in time on one homogeneous body,
    sealed or held; its time scale is D at the final value."""
    checks = [
        (request.surface is None and request.faces is None, "a surface", "/surface"),
        (
            any(
                e.kind not in (SurfaceKind.NO_FLUX, SurfaceKind.FIXED_VALUE)
                for e in case.faces.ends
            ),
            "sealed or held surfaces (a film would need the surface value solved each step)",
            "/surface" if request.surface is not None else "/faces",
        ),
        (
            case.bath is not None
            or case.schedule is not None
            or case.surroundings is not None
            or case.semi_infinite is not None
            or case.product is not None
            or case.medium.reaction_per_s > 0,
            "a body on its own, in unchanging surroundings",
            "/medium",
        ),
        (
            len({e.value for e in case.faces.exchanging}) > 1,
            "one held value (a steady profile would need D(c) solved across the body)",
            "/faces",
        ),
    ]
    for failed, needs, pointer in checks:
        if failed:
            raise InvalidInput(f"a value-dependent diffusivity is solved here for {needs}", pointer)
    criterion = case.criterion
    if criterion is not None and criterion.measure not in _NONLINEAR_MEASURES:
        raise InvalidInput(
            "with a value-dependent diffusivity the body is judged by "
            + ", ".join(_NONLINEAR_MEASURES),
            "/criterion/measure",
        )
    law = case.medium.nonlinear
    assert law is not None
    scale = float(law.diffusivity(np.array(case.final_value)))
    return replace(case, medium=replace(case.medium, diffusivity_m2_per_s=scale))
