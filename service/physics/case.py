"""The dataclasses that describe one settling problem."""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from enum import IntEnum, StrEnum
from functools import cached_property

import numpy as np
from numpy.typing import NDArray
from scipy import special

from service.physics.schedule import Schedule

__all__ = [
    "Bath",
    "Body",
    "Case",
    "Criterion",
    "Faces",
    "Geometry",
    "Medium",
    "Product",
    "SemiInfinite",
    "Start",
    "Surface",
    "SurfaceKind",
    "SurroundingsSchedule",
    "characteristic_length",
]

FloatArray = NDArray[np.float64]

# Gauss–Legendre nodes on [0, 1]: four nodes integrate polynomials up to degree 7 exactly,
# enough for (linear profile)² × r² on one segment.
_GL_X, _GL_W = np.polynomial.legendre.leggauss(4)
_GL_X = 0.5 * (_GL_X + 1.0)
_GL_W = 0.5 * _GL_W


class Geometry(IntEnum):
    """The body's shape, valued as the metric exponent m of the weight r**m."""

    SLAB = 0
    CYLINDER = 1
    SPHERE = 2


class SurfaceKind(StrEnum):
    """What happens at every exposed surface."""

    NO_FLUX = "no_flux"
    FIXED_VALUE = "fixed_value"
    CONVECTIVE = "convective"
    # in contact with the case's finite, well-stirred bath (through a film when biot > 0)
    BATH = "bath"


@dataclass(frozen=True)
class Layer:
    """One layer of a layered body (a shell of a cylinder or sphere), in the potential φ that
    is continuous across interfaces: φ = c/K for mass (capacity K, conductivity D·K), φ = T for
    heat (capacity ρ·c_p, conductivity k). ``outer_m`` is where it ends (x from the first face,
    or r); ``resistance`` lies between it and the next layer (potential drop per flux)."""

    outer_m: float
    capacity: float
    conductivity: float
    partition: float = 1.0
    resistance: float = 0.0
    # whether the layer is described for heat (its conductivity is then k in W/(m·K))
    thermal: bool = False

    @property
    def diffusivity_m2_per_s(self) -> float:
        return self.conductivity / self.capacity


@dataclass(frozen=True)
class Body:
    """A homogeneous body. ``extent_m`` is the slab's full thickness or the (outer) radius;
    ``inner_m`` the inner radius of a hollow cylinder or sphere (0 for a solid one and for a
    slab).

    The coordinate runs inner_m..extent_m: from the first face for a slab, outward from the
    centre (or the inner surface) for a cylinder or sphere.
    """

    geometry: Geometry
    extent_m: float
    inner_m: float = 0.0
    # Layers from the inner end outward; empty for a homogeneous body (the case's medium).
    layers: tuple[Layer, ...] = ()

    @property
    def metric(self) -> int:
        return int(self.geometry)

    @property
    def has_inner_face(self) -> bool:
        """A slab's first face or a hollow body's inner surface; a solid body's centre is a
        symmetry point, not a face."""
        return self.geometry is Geometry.SLAB or self.inner_m > 0.0

    @property
    def wall_m(self) -> float:
        """The distance between the two ends: the thickness, the radius or the wall."""
        return self.extent_m - self.inner_m

    def weight_integral(self, lower_m: float, upper_m: float) -> float:
        """∫ r**m dr over [lower, upper]: the body's amount per unit weight there."""
        power = self.metric + 1
        return float((upper_m**power - lower_m**power) / power)


@dataclass(frozen=True)
class Medium:
    """Transport properties. Only the diffusivity enters the engines; the conductivity (for
    heat, when known) and the partition coefficient K (mass: the body's equilibrium value over
    the surroundings') are kept for what is derived from them and echoed."""

    diffusivity_m2_per_s: float
    conductivity_w_per_m_k: float | None = None
    partition: float = 1.0
    # first-order consumption or binding: ∂c/∂t = D∇²c − k·c
    reaction_per_s: float = 0.0
    # a diffusivity that depends on the value (then diffusivity_m2_per_s is D at the final
    # value, a time scale only)
    nonlinear: NonlinearDiffusivity | None = None


@dataclass(frozen=True)
class Start:
    """A piecewise-linear start: segment k runs from ``x0[k]`` to ``x1[k]`` with values
    ``v0[k]`` → ``v1[k]``. Segments tile 0..extent; a jump is two segments meeting with
    different values."""

    x0: FloatArray
    x1: FloatArray
    v0: FloatArray
    v1: FloatArray
    # Capacity of each segment's material (a layered body's K or ρ·c_p; 1 when homogeneous):
    # amounts and means over the body are weighted by it.
    capacity: FloatArray | None = None
    # When the pieces stand for a curve (a periodic pattern drawn by chords): their largest
    # distance from it, relative to its amplitude; answers carry it in their error estimate.
    representation_error: float = 0.0

    @classmethod
    def uniform(cls, extent_m: float, value: float, inner_m: float = 0.0) -> Start:
        return cls.from_pieces([(inner_m, extent_m, value, value)])

    @classmethod
    def from_pieces(
        cls, pieces: list[tuple[float, float, float, float]], capacity: list[float] | None = None
    ) -> Start:
        keep = [i for i, piece in enumerate(pieces) if piece[1] > piece[0]]
        arrays = np.array([pieces[i] for i in keep], dtype=float).T
        weights = None if capacity is None else np.array([capacity[i] for i in keep], dtype=float)
        return cls(arrays[0], arrays[1], arrays[2], arrays[3], weights)

    @property
    def weights(self) -> FloatArray:
        return self.capacity if self.capacity is not None else np.ones(self.x0.size)

    @property
    def breakpoints_m(self) -> FloatArray:
        """Interior points where the start jumps or bends, or the material changes; the
        finite-volume faces go here."""
        inner = self.x0[1:]
        jumps = self.v0[1:] != self.v1[:-1]
        slope = (self.v1 - self.v0) / (self.x1 - self.x0)
        kinks = slope[1:] != slope[:-1]
        weights = self.weights
        interfaces = weights[1:] != weights[:-1]
        return np.asarray(inner[jumps | kinks | interfaces], dtype=float)

    def values(self, positions_m: FloatArray) -> FloatArray:
        """Values at positions; exactly at a jump, the mean of both sides."""
        x = np.asarray(positions_m, dtype=float)
        segment = np.clip(np.searchsorted(self.x0, x, side="right") - 1, 0, self.x0.size - 1)
        fraction = (x - self.x0[segment]) / (self.x1 - self.x0)[segment]
        value = self.v0[segment] + (self.v1 - self.v0)[segment] * fraction
        at_joint = (segment > 0) & (x == self.x0[segment])
        left_value = self.v1[np.maximum(segment - 1, 0)]
        return np.asarray(np.where(at_joint, 0.5 * (value + left_value), value), dtype=float)

    def moments(
        self,
        metric: int,
        lower_m: FloatArray,
        upper_m: FloatArray,
        shift: float = 0.0,
        power: int = 1,
    ) -> FloatArray:
        """Exact ∫ C·(c − shift)**power · r**metric dr over each [lower, upper] (C the segment's
        capacity), which must each lie inside one segment (finite-volume faces include every
        breakpoint)."""
        lower = np.asarray(lower_m, dtype=float)
        upper = np.asarray(upper_m, dtype=float)
        mid = 0.5 * (lower + upper)
        segment = np.clip(np.searchsorted(self.x1, mid, side="left"), 0, self.x0.size - 1)
        x = lower[:, None] + (upper - lower)[:, None] * _GL_X[None, :]
        fraction = (x - self.x0[segment, None]) / (self.x1 - self.x0)[segment, None]
        value = self.v0[segment, None] + (self.v1 - self.v0)[segment, None] * fraction
        integrand = (value - shift) ** power * x**metric
        weight = self.weights[segment] * (upper - lower)
        return np.asarray((integrand @ _GL_W) * weight, dtype=float)

    def body_moment(self, metric: int, shift: float = 0.0, power: int = 1) -> float:
        """Exact ∫ C·(c − shift)**power r**metric dr over the whole body."""
        values, weights = self._body_nodes(metric)
        return float(np.dot((values - shift) ** power, weights))

    def _body_nodes(self, metric: int) -> tuple[FloatArray, FloatArray]:
        """Start values and quadrature weights (times r**metric) at every segment's nodes."""
        cache: dict[int, tuple[FloatArray, FloatArray]] = self.__dict__.setdefault("_nodes", {})
        if metric not in cache:
            width = (self.x1 - self.x0)[:, None] * self.weights[:, None]
            x = self.x0[:, None] + (self.x1 - self.x0)[:, None] * _GL_X[None, :]
            values = self.v0[:, None] + (self.v1 - self.v0)[:, None] * _GL_X[None, :]
            cache[metric] = (values.ravel(), (width * _GL_W[None, :] * x**metric).ravel())
        return cache[metric]

    def is_mirror_symmetric(self, extent_m: float) -> bool:
        """Whether c(x) = c(extent − x): compared on both sides of every break and its mirror
        image and between them (exact for piecewise-linear profiles, to round-off). Kept once
        worked out, since every grid of a finite-volume query asks."""
        cache: dict[float, bool] = self.__dict__.setdefault("_mirror", {})
        if extent_m not in cache:
            cache[extent_m] = self._mirror_symmetric(extent_m)
        return cache[extent_m]

    def _mirror_symmetric(self, extent_m: float) -> bool:
        points = np.unique(np.r_[self.x0, self.x1, extent_m - self.x0, extent_m - self.x1])
        points = np.clip(np.r_[points, 0.5 * (points[1:] + points[:-1])], 0.0, extent_m)
        offset = 1e-9 * extent_m
        probes = np.clip(np.r_[points - offset, points + offset], 0.0, extent_m)
        here = self.values(probes)
        mirrored = self.values(extent_m - probes)
        scale = float(np.max(np.abs(np.r_[self.v0, self.v1]))) or 1.0
        return bool(np.all(np.abs(here - mirrored) <= 1e-12 * scale))

    def max_abs_deviation(self, reference: float) -> float:
        """Largest |c − reference| over the body (at a segment end, the profile being linear)."""
        return max(abs(self.value_range[0] - reference), abs(self.value_range[1] - reference))

    @cached_property
    def value_range(self) -> tuple[float, float]:
        """Smallest and largest start value."""
        both = np.concatenate([self.v0, self.v1])
        return float(np.min(both)), float(np.max(both))

    def signs(self) -> set[int]:
        return {int(s) for s in np.sign(np.r_[self.v0, self.v1]) if s != 0}


@dataclass(frozen=True)
class Surface:
    """The condition at one end. ``value`` is the held value (fixed_value) or the body-side
    equilibrium value of the surroundings (convective: K·ambient); ``biot`` = k_eff·Lc/D for
    convective ends, on the case's characteristic length."""

    kind: SurfaceKind
    value: float = 0.0
    biot: float = 0.0


@dataclass(frozen=True)
class Faces:
    """The condition at each end of the body's coordinate. ``inner`` acts at x = 0 (a slab's
    first face) or at a hollow body's inner radius, and is None at a solid body's centre (a
    symmetry point, never a boundary); ``outer`` acts at x = thickness (the second face) or at
    the outer radius."""

    inner: Surface | None
    outer: Surface

    @classmethod
    def alike(cls, body: Body, surface: Surface) -> Faces:
        """The same condition on every exposed surface."""
        return cls(surface if body.has_inner_face else None, surface)

    @property
    def ends(self) -> tuple[Surface, ...]:
        return (self.outer,) if self.inner is None else (self.inner, self.outer)

    @property
    def exchanging(self) -> tuple[Surface, ...]:
        """The ends through which something enters or leaves."""
        return tuple(end for end in self.ends if end.kind is not SurfaceKind.NO_FLUX)

    @property
    def is_closed(self) -> bool:
        """Whether nothing leaves the body and its bath together (every end sealed or in the
        bath): then what they hold is conserved and one mode is the constant."""
        return all(end.kind in (SurfaceKind.NO_FLUX, SurfaceKind.BATH) for end in self.ends)

    @property
    def is_alike(self) -> bool:
        """Whether every end has the same condition."""
        return self.inner is None or self.inner == self.outer


def characteristic_length(body: Body, faces: Faces) -> tuple[float, str]:
    """Lc and its name: the radius of a solid cylinder or sphere; otherwise the distance
    between the two ends (thickness, wall) when exactly one of them is sealed (the diffusion
    path then crosses the whole body), and half of it when neither or both are. Only the kinds
    of the ends matter, so it can be worked out before their Biot numbers."""
    if not body.has_inner_face:
        return body.extent_m, "radius"
    whole = "thickness" if body.geometry is Geometry.SLAB else "wall_thickness"
    if len(faces.exchanging) == 1:
        return body.wall_m, whole
    return body.wall_m / 2, "half_" + whole


@dataclass(frozen=True)
class Bath:
    """A finite, well-stirred bath: its capacity over the body's (Crank's α = V_bath/(K·V_body),
    or (ρc)_bath·V_bath/((ρc)_body·V_body) for heat) and its starting value in the body's
    potential (K times the bath's concentration for a homogeneous body)."""

    capacity_ratio: float
    start_value: float
    # the bath's concentration times this is its value in the body's potential
    to_potential: float = 1.0
    # times at which the bath is replaced by fresh fluid at its starting value
    exchanges_s: tuple[float, ...] = ()


@dataclass(frozen=True)
class SemiInfinite:
    """A semi-infinite body: solved as a symmetric slab made thick enough that its middle
    stays undisturbed until the answer (so its answer is the erfc solution's to round-off).
    ``transfer_m_per_s`` is a convective surface's k_eff (its Biot number then follows from
    the slab's half-thickness); ``real_thickness_m`` the part's own, for the validity check."""

    transfer_m_per_s: float | None = None
    real_thickness_m: float | None = None


@dataclass(frozen=True)
class Product:
    """A finite body as a product of one-dimensional solutions (θ = Π θ_i, θ the deviation
    over its start): each direction a slab or a solid cylinder with the same medium, uniform
    start and surface (its Biot number on its own Lc). ``names`` says which is which."""

    directions: tuple[Case, ...]
    names: tuple[str, ...]


@dataclass(frozen=True)
class SurroundingsSchedule:
    """The surroundings' value over time, in the body's potential: from ``start_value``,
    segments (end value, duration) each a linear ramp (a hold is a ramp to the same value; a
    jump is a zero-length step between them). Every exchanging end follows it; the surfaces'
    own ``value`` is its last value, where the body ends."""

    start_value: float
    segments: tuple[tuple[float, float], ...]

    @property
    def end_s(self) -> float:
        return sum(duration for _, duration in self.segments)

    def value_at(self, time_s: float) -> float:
        """The surroundings' value at ``time_s`` (after a jump, its new value)."""
        value, elapsed = self.start_value, 0.0
        for end_value, duration in self.segments:
            if time_s < elapsed + duration:
                return value + (end_value - value) * (time_s - elapsed) / duration
            value, elapsed = end_value, elapsed + duration
        return value


@dataclass(frozen=True)
class Criterion:
    """When the body counts as settled. ``measure`` names a function in service.measures."""

    measure: str
    tolerance: float | None = None
    fraction: float | None = None
    position_m: float | None = None
    absolute_tolerance: float | None = None
    # the value a point must reach (the 'reaches' measure), in value units
    value: float | None = None


@dataclass(frozen=True)
class Case:
    body: Body
    medium: Medium
    start: Start
    faces: Faces
    criterion: Criterion | None = None
    accuracy: float = 1e-4
    engine: str = "auto"
    bath: Bath | None = None
    # an Arrhenius diffusivity following a temperature schedule: the engines then work at
    # the medium's diffusivity (D at the hottest temperature) in reference time
    schedule: Schedule | None = None
    semi_infinite: SemiInfinite | None = None
    product: Product | None = None
    surroundings: SurroundingsSchedule | None = None

    @property
    def layers(self) -> tuple[Layer, ...]:
        """The body's layers; a homogeneous body is one layer of capacity 1 whose potential is
        the value itself (its partition coefficient already folded into the surface values)."""
        if self.body.layers:
            return self.body.layers
        return (Layer(self.body.extent_m, 1.0, self.medium.diffusivity_m2_per_s),)

    def partition_at(self, positions_m: FloatArray) -> FloatArray:
        """c/φ at each position: the layer's partition coefficient (1 when homogeneous, whose
        potential is the value itself; at an interface, the outer layer's)."""
        layers = self.layers
        outers = np.array([layer.outer_m for layer in layers])
        index = np.minimum(np.searchsorted(outers, positions_m, side="right"), len(layers) - 1)
        return np.array([layer.partition for layer in layers])[index]

    @property
    def body_weight(self) -> float:
        """∫ C r^m over the body: its capacity (the volume, when homogeneous)."""
        body = self.body
        total, lower = 0.0, body.inner_m
        for layer in self.layers:
            total += layer.capacity * body.weight_integral(lower, layer.outer_m)
            lower = layer.outer_m
        return total

    @property
    def characteristic_length_m(self) -> float:
        if self.semi_infinite is not None:
            return self._depth_scale
        return characteristic_length(self.body, self.faces)[0]

    @property
    def length_convention(self) -> str:
        if self.semi_infinite is not None:
            return "depth"
        return characteristic_length(self.body, self.faces)[1]

    @property
    def _depth_scale(self) -> float:
        """A semi-infinite body's length: the depth of the criterion's point, or at the
        surface the film's length D/k (a held surface: the point's own scale is zero, so any
        positive length will do for the Fourier number, which is then zero)."""
        assert self.semi_infinite is not None
        depth = self.criterion.position_m if self.criterion is not None else None
        if depth:
            return depth
        transfer = self.semi_infinite.transfer_m_per_s
        return self.medium.diffusivity_m2_per_s / transfer if transfer else 1.0

    @property
    def exchange_area(self) -> float:
        """Σ r^m over the exchanging ends (per unit area, length and angle, as the weight)."""
        ends = ((self.faces.inner, self.body.inner_m), (self.faces.outer, self.body.extent_m))
        return sum(
            radius**self.body.metric
            for end, radius in ends
            if end is not None and end.kind is not SurfaceKind.NO_FLUX
        )

    @property
    def volume_to_area_m(self) -> float:
        """V/A over the exchanging surfaces (infinite when every surface is sealed)."""
        area = self.exchange_area
        volume = self.body.weight_integral(self.body.inner_m, self.body.extent_m)
        return volume / area if area > 0 else math.inf

    @cached_property
    def final_state(self) -> FinalState:
        """The state the body settles to: uniform, or a steady profile between two ends."""
        reaction = None
        if self.medium.reaction_per_s > 0:
            reaction = (self.medium.diffusivity_m2_per_s, self.medium.reaction_per_s)
        return final_state(
            self.body,
            self.faces,
            self.layers,
            self.start,
            self.characteristic_length_m,
            self.bath,
            reaction,
        )

    @property
    def needs_stepping(self) -> bool:
        """No eigen-expansion applies: a value-dependent diffusivity, or under a temperature
        schedule a surface film (its Biot number moves with D) or surroundings that change in
        clock time (reduced time would bend their schedule)."""
        return self.medium.nonlinear is not None or (
            self.schedule is not None
            and (self.surroundings is not None or any(end.biot > 0 for end in self.faces.ends))
        )

    @property
    def final_value(self) -> float:
        """The final state's mean over the body (its value, when uniform)."""
        state = self.final_state
        if state.is_uniform:
            return state.value
        lowers = _lowers(self.body, self.layers)
        amount = sum(
            layer.capacity * float(state.amounts(np.array([low]), np.array([layer.outer_m]))[0])
            for low, layer in zip(lowers, self.layers, strict=True)
        )
        return amount / self.body_weight

    @property
    def diffusion_time_s(self) -> float:
        """Lc²/D: the time unit of the Fourier number."""
        length = self.characteristic_length_m
        return length * length / self.medium.diffusivity_m2_per_s


# The final state ------------------------------------------------------------------------
# The state a body settles to: uniform, or a steady profile between two different ends.
#
# Notes
# -----
# With constant properties the steady states of ∇·(r^m ∇c) = 0 are c_f = a + b·g(r) with
# g = x (slab), ln r (cylinder) and −1/r (sphere), so that r^m·g′ = 1. A body with one value
# on every exchanging end (or sealed all round) settles uniformly (b = 0); a membrane or a
# wall between two different surroundings settles to the profile through both end conditions:
#
#     held end e:       a + b·g(r_e) = v_e
#     convective end e: a + b·(g(r_e) + σ_e·(Lc/Bi_e)·g′(r_e)) = v_e
#
# (σ = +1 at the outer end, −1 at the inner; from D·σ·c′ = k_e·(v_e − c) with k_e = Bi_e·D/Lc,
# the flux into the body). The measures then compare c − c_f, and its moments over the body
# are integrated here.

# Gauss–Legendre nodes on [0, 1] for the deviation's moments on a steady profile: sixteen nodes per
# piece, pieces no wider than this ratio of radii (ln r and 1/r vary by a bounded amount on
# each), integrate (linear − a − b·g)² r^m to round-off.
_GL16_X, _GL16_W = np.polynomial.legendre.leggauss(16)
_GL16_X = 0.5 * (_GL16_X + 1.0)
_GL16_W = 0.5 * _GL16_W
_PIECE_RATIO = 1.25


# The steady reaction–diffusion profile's shape h(x) and ∫ h(m·r) r^m dr as a function of
# (m, r), per metric exponent: cosh (slab, about its centre), sinh(x)/x (sphere), I0 (cylinder).
def _sinhc(x: FloatArray) -> FloatArray:
    x = np.asarray(x, dtype=float)
    safe = np.where(np.abs(x) < 1e-8, 1.0, x)
    return np.asarray(np.where(np.abs(x) < 1e-8, 1.0 + x * x / 6, np.sinh(safe) / safe))


def _sinhc_slope(x: float) -> float:
    return (x * math.cosh(x) - math.sinh(x)) / (x * x) if abs(x) > 1e-4 else x / 3


_REACTING: dict[int, tuple[Callable[..., FloatArray], Callable[..., FloatArray]]] = {
    0: (np.cosh, lambda m, r: np.sinh(m * r) / m),
    1: (special.i0, lambda m, r: r * special.i1(m * r) / m),
    2: (_sinhc, lambda m, r: (r * np.cosh(m * r) / m - np.sinh(m * r) / m**2) / m),
}
# h′ at the surface, per metric exponent
_REACTING_SLOPE: dict[int, Callable[[float], float]] = {
    0: math.sinh,
    1: lambda x: float(special.i1(x)),
    2: _sinhc_slope,
}
# Samples per start segment when the deviation from a reaction profile is maximised.
_REACTION_SAMPLES = 257

# g(r) and its antiderivatives against r^m, per metric exponent
_G: dict[int, Callable[[FloatArray], FloatArray]] = {
    0: lambda r: r,
    1: lambda r: np.log(r),
    2: lambda r: -1.0 / r,
}
# ∫ g(r)·r^m dr
_G_MOMENT: dict[int, Callable[[FloatArray], FloatArray]] = {
    0: lambda r: 0.5 * r**2,
    1: lambda r: 0.5 * r**2 * np.log(r) - 0.25 * r**2,
    2: lambda r: -0.5 * r**2,
}


@dataclass(frozen=True)
class FinalState:
    """c_f(r) = a_i + b_i·g(r) on each piece [lower_i, upper_i] (a layer, or the whole body);
    every b_i = 0 with one a is a uniform state."""

    metric: int
    lower: tuple[float, ...]
    upper: tuple[float, ...]
    a: tuple[float, ...]
    b: tuple[float, ...]
    # with first-order reaction, the steady profile e·h(m·(r − centre)) instead, h = cosh,
    # sinh(x)/x or I0 by shape and m = √(k/D): (e, m, centre)
    reaction: tuple[float, float, float] | None = None

    @classmethod
    def uniform(cls, metric: int, value: float, inner_m: float, outer_m: float) -> FinalState:
        return cls(metric, (inner_m,), (outer_m,), (value,), (0.0,))

    @property
    def is_uniform(self) -> bool:
        return self.reaction is None and not any(self.b) and len(set(self.a)) == 1

    @property
    def value(self) -> float:
        """The uniform value (the first piece's when not uniform)."""
        return self.a[0]

    def _piece(self, positions_m: FloatArray) -> NDArray[np.intp]:
        uppers = np.asarray(self.upper)
        return np.minimum(np.searchsorted(uppers, positions_m, side="left"), uppers.size - 1)

    def values(self, positions_m: FloatArray) -> FloatArray:
        r = np.asarray(positions_m, dtype=float)
        if self.is_uniform:
            return np.full(r.shape, self.value)
        if self.reaction is not None:
            scale, modulus, centre = self.reaction
            return np.asarray(scale * _REACTING[self.metric][0](modulus * (r - centre)))
        piece = self._piece(r)
        a, b = np.asarray(self.a)[piece], np.asarray(self.b)[piece]
        return np.asarray(a + b * _G[self.metric](r), dtype=float)

    def amounts(self, lower_m: FloatArray, upper_m: FloatArray) -> FloatArray:
        """∫ c_f r^m dr over each [lower, upper], summed over the pieces it spans."""
        m = self.metric
        if self.reaction is not None:
            scale, modulus, centre = self.reaction
            moment = _REACTING[m][1]
            upper_m, lower_m = np.asarray(upper_m, dtype=float), np.asarray(lower_m, dtype=float)
            span = moment(modulus, upper_m - centre) - moment(modulus, lower_m - centre)
            return np.asarray(scale * span, dtype=float)
        lower = np.asarray(lower_m, dtype=float)[:, None]
        upper = np.asarray(upper_m, dtype=float)[:, None]
        low = np.maximum(lower, np.asarray(self.lower)[None, :])
        high = np.maximum(low, np.minimum(upper, np.asarray(self.upper)[None, :]))
        amounts = np.asarray(self.a)[None, :] * (high ** (m + 1) - low ** (m + 1)) / (m + 1)
        b = np.asarray(self.b)
        if np.any(b):
            # only a two-ended body has a profile, so a radial one is hollow and r > 0 here
            slope_part = _G_MOMENT[m](high) - _G_MOMENT[m](low)
            amounts = amounts + np.where(b[None, :] != 0.0, b[None, :] * slope_part, 0.0)
        return np.asarray(amounts.sum(axis=1), dtype=float)

    def deviation_moment(self, start: Start, power: int) -> float:
        """∫ C·(c0 − c_f)^power r^m dr over the body: exact for a uniform state, by
        Gauss–Legendre on pieces of bounded radius ratio for a profile."""
        if self.is_uniform:
            return start.body_moment(self.metric, shift=self.value, power=power)
        x, w = self._nodes(start)
        return float(np.dot((start.values(x) - self.values(x)) ** power, w * x**self.metric))

    def max_abs_deviation(self, start: Start) -> float:
        """Largest |c0 − c_f|: at a segment's ends or where its slope equals c_f′ inside it
        (a start is split at every interface, so each segment lies in one piece)."""
        if self.is_uniform:
            return start.max_abs_deviation(self.value)
        if self.reaction is not None:
            # no closed form for where a line meets cosh or I0 in slope: dense samples of each
            # segment (the profile is smooth, the start linear on it)
            fractions = np.linspace(0.0, 1.0, _REACTION_SAMPLES)
            x = start.x0[:, None] + (start.x1 - start.x0)[:, None] * fractions[None, :]
            line = start.v0[:, None] + (start.v1 - start.v0)[:, None] * fractions[None, :]
            return float(np.max(np.abs(line - self.values(x))))
        middle = 0.5 * (start.x0 + start.x1)
        piece = self._piece(middle)
        a, b = np.asarray(self.a)[piece], np.asarray(self.b)[piece]
        g = _G[self.metric]
        # a profile has two ends, so a radial body here is hollow and g is finite on it
        ends = np.concatenate([start.v0 - a - b * g(start.x0), start.v1 - a - b * g(start.x1)])
        largest = float(np.max(np.abs(ends)))
        if self.metric == 0:
            return largest  # the deviation is linear on each segment of a slab
        # c_f′ = b·r^(−m) equals the segment's slope s at r = (b/s)^(1/m)
        slope = (start.v1 - start.v0) / (start.x1 - start.x0)
        with np.errstate(divide="ignore", invalid="ignore"):
            ratio = b / slope
            inside = np.where(ratio > 0, ratio ** (1.0 / self.metric), np.nan)
        within = (inside > start.x0) & (inside < start.x1)
        if np.any(within):
            r = inside[within]
            deviation = (
                start.v0[within]
                + slope[within] * (r - start.x0[within])
                - a[within]
                - b[within] * g(r)
            )
            largest = max(largest, float(np.max(np.abs(deviation))))
        return largest

    def _nodes(self, start: Start) -> tuple[FloatArray, FloatArray]:
        """Quadrature nodes and weights (times each segment's capacity) over the body: one
        piece per segment for a slab (the integrand is a polynomial there), pieces of radius
        ratio at most 1.25 otherwise."""
        edges, capacity = [], []
        reacting = self.reaction is not None
        for low, high, weight in zip(
            start.x0.tolist(), start.x1.tolist(), start.weights.tolist(), strict=True
        ):
            if reacting:
                # pieces over which the profile changes by at most e^(1/2)
                assert self.reaction is not None
                count = max(1, math.ceil(2.0 * self.reaction[1] * (high - low)))
                cut = np.linspace(low, high, count + 1)
            elif self.metric == 0:
                cut = np.array([low, high])
            else:
                count = max(1, math.ceil(math.log(high / low) / math.log(_PIECE_RATIO)))
                cut = np.geomspace(low, high, count + 1)
            edges.append(cut)
            capacity.append(np.full(cut.size - 1, weight))
        lower = np.concatenate([e[:-1] for e in edges])
        upper = np.concatenate([e[1:] for e in edges])
        width = ((upper - lower) * np.concatenate(capacity))[:, None]
        x = lower[:, None] + (upper - lower)[:, None] * _GL16_X[None, :]
        return x.ravel(), (width * _GL16_W[None, :]).ravel()


def final_state(
    body: Body,
    faces: Faces,
    layers: tuple[Layer, ...],
    start: Start,
    length_m: float,
    bath: Bath | None = None,
    reaction: tuple[float, float] | None = None,
) -> FinalState:
    """The state the body settles to (see the notes above); ``length_m`` is the case's Lc, on
    which the Biot numbers are given.

    Between two different surroundings the steady flux per unit weight Q = −Λ_i·b_i is the
    same through every layer, so the potential falls by Q times a series of resistances: the
    inner film 1/(k_in·r_in^m), each layer (g(upper) − g(lower))/Λ_i, each interface
    R_j/r_j^m and the outer film 1/(k_out·r_out^m), with k = Bi·Λ_end/Lc (a held end has no
    film)."""
    m = body.metric
    exchanging = faces.exchanging
    inner, outer = body.inner_m, body.extent_m
    if reaction is not None:
        return _reaction_state(body, faces, reaction, length_m)
    if bath is not None or not exchanging:
        # the body (and its bath) share what they hold
        capacity = sum(
            layer.capacity * body.weight_integral(low, layer.outer_m)
            for low, layer in zip(_lowers(body, layers), layers, strict=True)
        )
        held = start.body_moment(m)
        if bath is not None:
            held += bath.capacity_ratio * capacity * bath.start_value
            capacity *= 1.0 + bath.capacity_ratio
        return FinalState.uniform(m, held / capacity, inner, outer)
    if len({end.value for end in exchanging}) == 1:
        return FinalState.uniform(m, exchanging[0].value, inner, outer)
    assert faces.inner is not None

    def g(r: float) -> float:
        return float(_G[m](np.array(r)))

    def film(end: Surface, radius: float, conductivity: float) -> float:
        if end.kind is not SurfaceKind.CONVECTIVE:
            return 0.0
        return length_m / (end.biot * conductivity * radius**m)

    lowers = _lowers(body, layers)
    inner_film = film(faces.inner, inner, layers[0].conductivity)
    total = inner_film + film(faces.outer, outer, layers[-1].conductivity)
    for low, layer in zip(lowers, layers, strict=True):
        total += (g(layer.outer_m) - g(low)) / layer.conductivity
        if layer is not layers[-1]:
            total += layer.resistance / layer.outer_m**m
    flux = (faces.inner.value - faces.outer.value) / total
    potential = faces.inner.value - flux * inner_film
    a, b = [], []
    for low, layer in zip(lowers, layers, strict=True):
        slope = -flux / layer.conductivity
        a.append(potential - slope * g(low))
        b.append(slope)
        potential += (
            slope * (g(layer.outer_m) - g(low)) - flux * layer.resistance / layer.outer_m**m
        )
    uppers = tuple(layer.outer_m for layer in layers)
    return FinalState(m, tuple(lowers), uppers, tuple(a), tuple(b))


def _reaction_state(
    body: Body, faces: Faces, reaction: tuple[float, float], length_m: float
) -> FinalState:
    """The steady profile of D∇²c = k·c with the same held or convective condition on every
    surface of a solid body (or both faces of a slab): e·h(m·(r − centre)), m = √(k/D),
    e from the surface condition (h′ the derivative of h)."""
    diffusivity, rate = reaction
    modulus = math.sqrt(rate / diffusivity)
    m = body.metric
    centre = body.extent_m / 2 if m == 0 else 0.0
    reach = body.extent_m - centre  # surface's distance from the centre
    shape = _REACTING[m][0]
    x = modulus * reach
    surface_value = float(shape(np.array(x)))
    slope = _REACTING_SLOPE[m](x)
    end = faces.outer
    if end.kind is SurfaceKind.FIXED_VALUE:
        scale = end.value / surface_value
    else:
        film = end.biot / length_m  # k_f/D
        scale = film * end.value / (modulus * slope + film * surface_value)
    return FinalState(
        m, (body.inner_m,), (body.extent_m,), (0.0,), (0.0,), (scale, modulus, centre)
    )


def _lowers(body: Body, layers: tuple[Layer, ...]) -> list[float]:
    return [body.inner_m] + [layer.outer_m for layer in layers[:-1]]


# Concentration-dependent diffusivity ---------------------------------------------------------


@dataclass(frozen=True)
class NonlinearDiffusivity:
    """D(c), either d0·exp(β·c) or a table of (c, D) points interpolated linearly in log D
    (flat beyond its ends). Its Kirchhoff transform Φ(c) = ∫₀^c D dc turns the flux into
    −∇Φ, which the finite-volume stepping uses face by face; ∫|∇Φ|² never increases."""

    d0: float = 0.0
    beta: float = 0.0
    table_c: tuple[float, ...] = ()
    table_log_d: tuple[float, ...] = ()

    def diffusivity(self, c: FloatArray) -> FloatArray:
        c = np.asarray(c, dtype=float)
        if not self.table_c:
            return np.asarray(self.d0 * np.exp(self.beta * c))
        return np.asarray(np.exp(np.interp(c, self.table_c, self.table_log_d)))

    def diffusivity_at(self, c: float) -> float:
        """D at one value (a scalar shortcut of ``diffusivity``)."""
        if not self.table_c:
            return self.d0 * math.exp(self.beta * c)
        return float(self.diffusivity(np.array(c)))

    def kirchhoff_at(self, c: float) -> float:
        """Φ at one value (a scalar shortcut of ``kirchhoff``)."""
        if not self.table_c:
            return (
                self.d0 * c if self.beta == 0.0 else self.d0 * math.expm1(self.beta * c) / self.beta
            )
        return float(self.kirchhoff(np.array(c)))

    def kirchhoff(self, c: FloatArray) -> FloatArray:
        """Φ(c) = ∫₀^c D(s) ds, exact for both forms."""
        c = np.asarray(c, dtype=float)
        if not self.table_c:
            if self.beta == 0.0:
                return np.asarray(self.d0 * c)
            return np.asarray(self.d0 * np.expm1(self.beta * c) / self.beta)
        return np.asarray(_table_kirchhoff(self.table_c, self.table_log_d, c))


def _table_kirchhoff(
    points: tuple[float, ...], log_d: tuple[float, ...], c: FloatArray
) -> FloatArray:
    """∫₀^c D for D = exp(piecewise-linear log D), flat beyond the ends: on a piece from a
    where log D has slope s, ∫ D = D(a)·(e^{s(c−a)} − 1)/s (D(a)·(c − a) when s = 0)."""
    x = np.asarray(points, dtype=float)
    y = np.asarray(log_d, dtype=float)
    breaks = np.unique(np.r_[x, 0.0])
    middles = 0.5 * (breaks[:-1] + breaks[1:])
    inside = (middles >= x[0]) & (middles <= x[-1])
    segment = np.clip(np.searchsorted(x, middles, side="right") - 1, 0, x.size - 2)
    slopes = np.where(inside, (y[segment + 1] - y[segment]) / (x[segment + 1] - x[segment]), 0.0)
    slopes = np.r_[slopes, 0.0]  # beyond the last break: flat
    start_d = np.exp(np.interp(breaks, x, y))

    def piece(a: FloatArray, slope: FloatArray, d_a: FloatArray, b: FloatArray) -> FloatArray:
        span = b - a
        small = np.abs(slope * span) < 1e-12
        safe = np.where(small, 1.0, slope)
        return np.asarray(np.where(small, d_a * span, d_a * np.expm1(slope * span) / safe))

    # Φ at every break, from 0 outward
    widths = piece(breaks[:-1], slopes[:-1], start_d[:-1], breaks[1:])
    cumulative = np.r_[0.0, np.cumsum(widths)]
    cumulative -= cumulative[int(np.searchsorted(breaks, 0.0))]
    values = np.asarray(c, dtype=float)
    index = np.clip(np.searchsorted(breaks, values, side="right") - 1, 0, breaks.size - 1)
    slope = np.where(values < breaks[0], 0.0, slopes[index])
    return np.asarray(cumulative[index] + piece(breaks[index], slope, start_d[index], values))
