"""Plain physics objects in SI units: what a request means, with no web or validation code.

A :class:`Case` is a homogeneous body (slab, long cylinder or sphere, solid or hollow) with
a constant diffusivity, a start given as a piecewise-linear profile across the body, a
condition at each end of its coordinate and, optionally, a settling criterion. Geometry enters
the numerics only as the metric exponent ``m`` (0 slab, 1 cylinder, 2 sphere).
"""

from __future__ import annotations

from service.physics.case import (
    Bath,
    Body,
    Case,
    Criterion,
    Faces,
    FinalState,
    Geometry,
    Layer,
    Medium,
    NonlinearDiffusivity,
    Product,
    SemiInfinite,
    Start,
    Surface,
    SurfaceKind,
    SurroundingsSchedule,
    characteristic_length,
    final_state,
)
from service.physics.schedule import Arrhenius, Schedule, ScheduleSegment

__all__ = [
    "Arrhenius",
    "Bath",
    "Body",
    "Case",
    "Criterion",
    "Faces",
    "FinalState",
    "Geometry",
    "Layer",
    "Medium",
    "NonlinearDiffusivity",
    "Product",
    "Schedule",
    "ScheduleSegment",
    "SemiInfinite",
    "Start",
    "Surface",
    "SurfaceKind",
    "SurroundingsSchedule",
    "characteristic_length",
    "final_state",
]
