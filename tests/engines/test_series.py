"""The series engine against Crank's uptake solutions."""

from __future__ import annotations

import numpy as np
import pytest

from service.engines.series import SeriesEngine
from service.physics import Criterion, Geometry, SurfaceKind
from service.solver import Solver
from tests.factories import make_case
from tests.references import CRANK_F_AT_FOURIER_0_1, CRANK_HALF_TIMES


def _uptake_fraction(geometry: Geometry, fourier: float) -> float:
    case = make_case(geometry, SurfaceKind.FIXED_VALUE, surface_value=1.0)
    solution = SeriesEngine().solution(case, fourier / 2)
    mean_deviation = float((solution.weighted(np.array([fourier])) @ solution.mode_means)[0])
    return 1.0 - mean_deviation / (0.0 - 1.0)


@pytest.mark.parametrize("geometry", [Geometry.SLAB, Geometry.CYLINDER, Geometry.SPHERE])
def test_series_uptake_at_fourier_0_1_matches_crank(geometry: Geometry) -> None:
    # Crank (1975) eqs. 4.18, 5.23, 6.20, evaluated at D·t/a² = 0.1.
    reference = CRANK_F_AT_FOURIER_0_1[geometry.name.lower()]
    assert _uptake_fraction(geometry, 0.1) == pytest.approx(
        reference.value, abs=reference.tolerance
    )


def test_series_sheet_half_time_matches_crank_on_full_thickness(solver: Solver) -> None:
    # Crank (1975): D·t½/l² = 0.049 with l the FULL thickness of the sheet (memory).
    case = make_case(
        Geometry.SLAB,
        SurfaceKind.FIXED_VALUE,
        length_m=0.5,
        criterion=Criterion("fraction_equilibrated", fraction=0.5),
    )
    answer = solver.settle(case)
    full_thickness = case.body.extent_m
    reference = CRANK_HALF_TIMES["slab_full_thickness"]
    assert answer.time_s * 1.0 / full_thickness**2 == pytest.approx(
        reference.value, abs=reference.tolerance
    )


@pytest.mark.parametrize(
    ("geometry", "key"),
    [(Geometry.SPHERE, "sphere_radius"), (Geometry.CYLINDER, "cylinder_radius")],
)
def test_series_radial_half_times_match_crank(solver: Solver, geometry: Geometry, key: str) -> None:
    # Crank (1975) chapters 5 and 6: D·t½/a² = 0.06306 (cylinder), 0.03055 (sphere).
    case = make_case(
        geometry,
        SurfaceKind.FIXED_VALUE,
        length_m=2.0,
        diffusivity=3.0,
        criterion=Criterion("fraction_equilibrated", fraction=0.5),
    )
    answer = solver.settle(case)
    reference = CRANK_HALF_TIMES[key]
    assert answer.time_s * 3.0 / 2.0**2 == pytest.approx(reference.value, abs=reference.tolerance)


def test_series_sphere_series_matches_crank_formula_at_many_times() -> None:
    # Crank (1975) eq. 6.20: F = 1 − (6/π²) Σ n⁻² exp(−D n² π² t / a²), summed here directly.
    n = np.arange(1, 20001)
    for fourier in (0.001, 0.01, 0.05, 0.3):
        expected = 1 - 6 / np.pi**2 * np.sum(np.exp(-(n**2) * np.pi**2 * fourier) / n**2)
        assert _uptake_fraction(Geometry.SPHERE, fourier) == pytest.approx(expected, abs=1e-9)


def test_series_sheet_series_matches_crank_formula_at_many_times() -> None:
    # Crank (1975) eq. 4.18 with l the full thickness: F = 1 − Σ 8/((2n+1)²π²) e^{−D(2n+1)²π²t/l²}.
    n = np.arange(0, 20000)
    for fourier in (0.001, 0.01, 0.05, 0.3):  # on the half-thickness, so t/l² = fourier/4
        k = (2 * n + 1) ** 2 * np.pi**2
        expected = 1 - np.sum(8 / k * np.exp(-k * fourier / 4))
        assert _uptake_fraction(Geometry.SLAB, fourier) == pytest.approx(expected, abs=1e-9)


def test_series_solution_reproduces_band_start_at_early_time() -> None:
    # At t → 0 the expansion must return the start itself away from its jumps.
    from tests.factories import off_centre_band

    for geometry in (Geometry.SLAB, Geometry.CYLINDER, Geometry.SPHERE):
        start = off_centre_band(geometry)
        case = make_case(geometry, SurfaceKind.NO_FLUX, start=start)
        solution = SeriesEngine().solution(case, 1e-5)
        extent = case.body.extent_m
        points = np.array([0.05, 0.27, 0.7]) * extent
        values = solution.values_at(points, np.array([1e-5]))[0] + case.final_value
        np.testing.assert_allclose(values, start.values(points), atol=1e-6)


def test_series_uniform_shortcut_matches_general_projection() -> None:
    # A uniform start is projected through the cached mode means; a start of two equal pieces
    # takes the general closed-form path. Both must give the same amplitudes.
    from service.physics import Start

    for geometry in (Geometry.SLAB, Geometry.CYLINDER, Geometry.SPHERE):
        case = make_case(geometry, SurfaceKind.CONVECTIVE, start_value=0.3, surface_value=1.0)
        extent = case.body.extent_m
        split = make_case(
            geometry,
            SurfaceKind.CONVECTIVE,
            surface_value=1.0,
            start=Start.from_pieces(
                [(0.0, 0.4 * extent, 0.3, 0.3), (0.4 * extent, extent, 0.3, 0.3)]
            ),
        )
        engine = SeriesEngine()
        uniform = engine.solution(case, 0.01).amplitudes
        general = engine.solution(split, 0.01).amplitudes
        np.testing.assert_allclose(uniform, general, rtol=1e-12, atol=1e-14)
