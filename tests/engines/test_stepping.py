"""Time stepping with a value-dependent diffusivity: invariants of the Kirchhoff scheme."""

from __future__ import annotations

import numpy as np

from service.engines.finite_volume import build_mesh
from service.engines.stepping import step_in_time
from service.physics import (
    Body,
    Case,
    Criterion,
    Faces,
    Geometry,
    Medium,
    NonlinearDiffusivity,
    Start,
    Surface,
    SurfaceKind,
)

LAW = NonlinearDiffusivity(d0=1e-10, beta=3.0)


def _case(geometry: Geometry, surface: Surface) -> Case:
    body = Body(geometry, 1e-3)
    start = Start.from_pieces([(0.0, 0.4e-3, 0.0, 0.0), (0.4e-3, 1e-3, 1.0, 1.0)])
    return Case(
        body,
        Medium(1e-10, nonlinear=LAW),
        start,
        Faces.alike(body, surface),
        Criterion("mean_square_deviation", tolerance=1e-6),
        accuracy=1e-6,
    )


def _energy(case: Case, faces: np.ndarray, state: np.ndarray, surface_value: float) -> float:
    """∫|∇Φ|² on the grid: Σ over faces of A·(ΔΦ)²/Δx, the held surface's gap included."""
    m = case.body.metric
    centres = 0.5 * (faces[1:] + faces[:-1])
    areas = faces**m
    phi = LAW.kirchhoff(state)
    inner = float(np.sum(areas[1:-1] * np.diff(phi) ** 2 / np.diff(centres)))
    held = case.faces.outer.kind is SurfaceKind.FIXED_VALUE
    surface_phi = float(LAW.kirchhoff(np.array(surface_value)))
    end = areas[-1] * (phi[-1] - surface_phi) ** 2 / (faces[-1] - centres[-1]) if held else 0.0
    return inner + end


def test_kirchhoff_energy_never_increases() -> None:
    """Sealed and held spheres from a two-level start: the grid's ∫|∇Φ|² at a sequence of
    times never rises: with E = Σ_faces g·(ΔΦ)², ∂E/∂Φ_i = −2·F_i (F_i the net flux into cell
    i) and V_i·dc_i/dt = F_i, so dE/dt = Σ ∂E/∂Φ_i·D(c_i)·dc_i/dt = −2·Σ D(c_i)·F_i²/V_i ≤ 0."""
    for surface in (Surface(SurfaceKind.NO_FLUX), Surface(SurfaceKind.FIXED_VALUE, 1.0)):
        case = _case(Geometry.SPHERE, surface)
        faces = build_mesh(case, 64, None)
        times = np.geomspace(1e-3, 3.0, 25) * case.diffusion_time_s
        energies = []
        for time_s in times:
            run = step_in_time(case, faces, 1e-8, until_s=float(time_s), stop_when_met=False)
            assert run.state is not None
            energies.append(_energy(case, faces, run.state, surface.value))
        # falling while it is above the stepping's own rounding (the local error tolerance)
        assert np.all(np.diff(energies) <= 1e-12 * energies[0]), energies
        assert energies[-1] < 1e-6 * energies[0]


def test_sealed_body_keeps_its_amount() -> None:
    """No flux through the surface: Σ V·c is the start's amount to rounding."""
    case = _case(Geometry.CYLINDER, Surface(SurfaceKind.NO_FLUX))
    faces = build_mesh(case, 64, None)
    volumes = (faces[1:] ** 2 - faces[:-1] ** 2) / 2
    start = case.start.moments(1, faces[:-1], faces[1:])
    run = step_in_time(case, faces, 1e-8, until_s=case.diffusion_time_s, stop_when_met=False)
    assert run.state is not None
    assert (
        float(volumes @ run.state) == np.float64(np.sum(start)).item()
        or abs(float(volumes @ run.state) / float(np.sum(start)) - 1) < 1e-12
    )
