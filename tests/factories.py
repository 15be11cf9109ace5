"""Case factories for engine tests: each returns a physics case in SI units."""

from __future__ import annotations

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
)

SHAPES = (Geometry.SLAB, Geometry.CYLINDER, Geometry.SPHERE)
KINDS = (SurfaceKind.NO_FLUX, SurfaceKind.FIXED_VALUE, SurfaceKind.CONVECTIVE)


def make_case(
    geometry: Geometry = Geometry.SLAB,
    kind: SurfaceKind = SurfaceKind.FIXED_VALUE,
    *,
    start: Start | None = None,
    criterion: Criterion | None = None,
    length_m: float = 1.0,
    start_value: float = 0.0,
    diffusivity: float = 1.0,
    surface_value: float = 1.0,
    biot: float = 2.0,
    engine: str = "auto",
    accuracy: float = 1e-4,
) -> Case:
    """A body whose characteristic length is ``length_m`` (slab thickness 2·length_m)."""
    extent = 2 * length_m if geometry is Geometry.SLAB else length_m
    body = Body(geometry, extent)
    surface = Surface(
        kind, value=surface_value, biot=biot if kind is SurfaceKind.CONVECTIVE else 0.0
    )
    return Case(
        body=body,
        medium=Medium(diffusivity),
        start=start if start is not None else Start.uniform(extent, start_value),
        faces=Faces.alike(body, surface),
        criterion=criterion,
        accuracy=accuracy,
        engine=engine,
    )


def off_centre_band(geometry: Geometry, length_m: float = 1.0) -> Start:
    """A band from 15 % to 40 % of the extent at 1 over a background of 0.2 (off centre, so a
    slab's antisymmetric modes are excited)."""
    extent = 2 * length_m if geometry is Geometry.SLAB else length_m
    low, high = 0.15 * extent, 0.40 * extent
    return Start.from_pieces(
        [(0.0, low, 0.2, 0.2), (low, high, 1.0, 1.0), (high, extent, 0.2, 0.2)]
    )
