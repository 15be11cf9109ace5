"""The depth below a surface at which a value is reached at one time (a case depth).

Notes
-----
Depth is measured along the body's coordinate from the surface named by ``depth_axis``: a
slab's first face (x = depth) when it exchanges, else its second (x = thickness − depth); a
cylinder's or sphere's outer surface (r = R − depth). The profile at the time asked,
c(x) = K(x)·(f(x) + u(x, t)) with u from the engine's modal solution and f the final state, is
sampled on a grid that is uniform over the depth range and geometric toward the surface (so an
early profile, steep within a small fraction of the body, is seen), and the shallowest sign
change of c − value is refined by Brent's method on the same solution.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from scipy import optimize

from service.engines.common import ModalSolution
from service.errors import InvalidInput
from service.physics import Case, Geometry, Surface, SurfaceKind

__all__ = ["DepthAxis", "depth_axis", "depth_on", "profile_on"]

FloatArray = NDArray[np.float64]

# Samples over the depth range: this many uniform, and as many geometric from this fraction
# of the range toward the surface.
_UNIFORM_SAMPLES = 1001
_GEOMETRIC_SAMPLES = 400
_NEAREST_FRACTION = 1e-7


@dataclass(frozen=True)
class DepthAxis:
    """Position = surface + direction·depth, for depths from 0 to ``range_m``."""

    surface_m: float
    direction: float
    range_m: float
    name: str

    def positions(self, depths_m: FloatArray) -> FloatArray:
        return self.surface_m + self.direction * np.asarray(depths_m, dtype=float)


def depth_axis(case: Case, range_m: float | None = None, pointer: str = "/surface") -> DepthAxis:
    """The surface a depth is measured from (see the module notes), and how deep it can go;
    ``pointer`` names the request's field that sets the surfaces."""
    body, faces = case.body, case.faces
    wall = body.extent_m - body.inner_m if range_m is None else range_m
    if body.geometry is Geometry.SLAB:
        if _exchanges(faces.inner):
            return DepthAxis(0.0, 1.0, wall, "first_face")
        if _exchanges(faces.outer):
            return DepthAxis(body.extent_m, -1.0, wall, "second_face")
    elif _exchanges(faces.outer):
        return DepthAxis(body.extent_m, -1.0, wall, "outer_surface")
    raise InvalidInput(
        "a depth is measured from a surface that exchanges with the surroundings (held, "
        "convective or a bath); this body has none there",
        pointer,
    )


def _exchanges(surface: Surface | None) -> bool:
    return surface is not None and surface.kind is not SurfaceKind.NO_FLUX


def profile_on(
    case: Case, solution: ModalSolution, time_s: float, positions_m: FloatArray
) -> FloatArray:
    """The body-side value c at positions, at ``time_s`` (the engines' time)."""
    positions = np.asarray(positions_m, dtype=float)
    deviation = solution.values_at(positions, np.array([time_s]))[0]
    return np.asarray(
        (deviation + case.final_state.values(positions)) * case.partition_at(positions)
    )


def depth_on(
    case: Case, solution: ModalSolution, time_s: float, value: float, axis: DepthAxis
) -> tuple[float | None, tuple[float, float], float]:
    """(the shallowest depth where c = value, or None; the profile's range; |dc/d depth| there)."""
    span = axis.range_m
    depths = np.unique(
        np.r_[
            np.linspace(0.0, span, _UNIFORM_SAMPLES),
            span * np.geomspace(_NEAREST_FRACTION, 1.0, _GEOMETRIC_SAMPLES),
        ]
    )
    values = profile_on(case, solution, time_s, axis.positions(depths))
    spread = (float(np.min(values)), float(np.max(values)))
    offset = values - value
    if offset[0] == 0.0:
        return 0.0, spread, _slope(case, solution, time_s, axis, 0.0)
    changed = np.nonzero(np.sign(offset[1:]) != np.sign(offset[0]))[0]
    if not changed.size:
        return None, spread, 0.0
    i = int(changed[0])

    def gap(depth_m: float) -> float:
        return (
            float(profile_on(case, solution, time_s, axis.positions(np.array([depth_m])))[0])
            - value
        )

    found = float(optimize.brentq(gap, depths[i], depths[i + 1], xtol=1e-14 * span, rtol=1e-13))
    return found, spread, _slope(case, solution, time_s, axis, found)


def _slope(
    case: Case, solution: ModalSolution, time_s: float, axis: DepthAxis, depth_m: float
) -> float:
    """|dc/d depth| at a depth, by a central difference (one-sided at the surface)."""
    step = 1e-6 * axis.range_m
    low, high = max(depth_m - step, 0.0), min(depth_m + step, axis.range_m)
    ends = profile_on(case, solution, time_s, axis.positions(np.array([low, high])))
    return abs(float(ends[1] - ends[0])) / (high - low)
