"""The finite-volume engine: order of accuracy, conservation, energy identity, max principle."""

from __future__ import annotations

import numpy as np
import pytest
from numpy.typing import NDArray

from service.engines.finite_volume import FiniteVolumeEngine, build_mesh
from service.measures import Facts, build_measure
from service.physics import Case, Criterion, Geometry, SurfaceKind
from service.settling import find_settling_time
from service.solver import Solver
from tests.factories import KINDS, SHAPES, make_case, off_centre_band


def _time_on(case: Case, cells: int) -> tuple[float, int]:
    """Settling time on a uniform grid, and the cells it really had."""
    engine = FiniteVolumeEngine()
    solution = engine.solution_on(case, build_mesh(case, cells, None))
    assert case.criterion is not None
    measure = build_measure(case, Facts.of(case), solution, case.criterion)
    return find_settling_time(measure, 1e-8).time_s, solution.resolution


@pytest.mark.parametrize("geometry", SHAPES)
def test_finite_volume_observed_order_is_two(solver: Solver, geometry: Geometry) -> None:
    # Refine uniform grids, fit log(error) against log(cell size): a second-order scheme.
    case = make_case(
        geometry,
        SurfaceKind.CONVECTIVE,
        biot=3.0,
        criterion=Criterion("mean_square_deviation", tolerance=0.01),
    )
    exact = solver.settle(case).time_s  # series, error ~1e-12
    runs = [_time_on(case, n) for n in (16, 32, 64, 128)]
    errors = np.array([abs(time - exact) / exact for time, _ in runs])
    cells = np.array([resolution for _, resolution in runs], dtype=float)
    slope = np.polyfit(np.log(1.0 / cells), np.log(errors), 1)[0]
    assert 1.8 < slope < 2.2


@pytest.mark.parametrize("geometry", SHAPES)
def test_finite_volume_conserves_amount_with_sealed_surfaces(geometry: Geometry) -> None:
    case = make_case(geometry, SurfaceKind.NO_FLUX, start=off_centre_band(geometry))
    faces = build_mesh(case, 60, None)
    solution = FiniteVolumeEngine().solution_on(case, faces)
    m = case.body.metric
    volumes = (faces[1:] ** (m + 1) - faces[:-1] ** (m + 1)) / (m + 1)
    initial = float(np.sum(case.start.moments(m, faces[:-1], faces[1:])))
    times = np.array([1e-4, 1e-2, 0.1, 1.0, 10.0])
    cells = solution.weighted(times) @ solution.sample_basis.T + case.final_value
    amounts = cells @ volumes
    np.testing.assert_allclose(amounts, initial, rtol=1e-12)


def _discrete_energy(
    case: Case, faces: NDArray[np.float64], cells_u: NDArray[np.float64]
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """uᵀKu/(D·ΣV) assembled directly from face conductances (independent of the engine's
    eigen-decomposition)."""
    m = case.body.metric
    d = case.medium.diffusivity_m2_per_s
    centres = 0.5 * (faces[1:] + faces[:-1])
    volumes = (faces[1:] ** (m + 1) - faces[:-1] ** (m + 1)) / (m + 1)
    conductance = d * faces[1:-1] ** m / np.diff(centres)
    interior = np.sum(conductance * np.diff(cells_u, axis=-1) ** 2, axis=-1)
    transfer = case.faces.outer.biot * d / case.characteristic_length_m
    gap = faces[-1] - centres[-1]
    outer = faces[-1] ** m / (gap / d + 1 / transfer)
    boundary = outer * cells_u[..., -1] ** 2
    if case.body.geometry is Geometry.SLAB:
        inner = 1.0 / ((centres[0] - faces[0]) / d + 1 / transfer)
        boundary = boundary + inner * cells_u[..., 0] ** 2
    return (interior + boundary) / (d * np.sum(volumes)), volumes


@pytest.mark.parametrize("geometry", SHAPES)
def test_finite_volume_energy_identity_holds(geometry: Geometry) -> None:
    # dE/dt = −(2/D)⟨u_t²⟩ for the semi-discrete system, with the convective surface term.
    case = make_case(
        geometry, SurfaceKind.CONVECTIVE, biot=1.5, start=off_centre_band(geometry), diffusivity=0.7
    )
    faces = build_mesh(case, 50, None)
    solution = FiniteVolumeEngine().solution_on(case, faces)
    step = 1e-6
    for time in (0.01, 0.1, 0.5):
        times = np.array([time - step, time, time + step])
        cells = solution.weighted(times) @ solution.sample_basis.T
        energy, volumes = _discrete_energy(case, faces, cells)
        energy_rate = (energy[2] - energy[0]) / (2 * step)
        u_t = (cells[2] - cells[0]) / (2 * step)
        mean_square_rate = float(np.sum(volumes * u_t**2) / np.sum(volumes))
        assert energy_rate == pytest.approx(-2 / 0.7 * mean_square_rate, rel=1e-5)
        # and the measure's closed form equals the directly assembled energy
        measure = build_measure(
            case, Facts.of(case), solution, Criterion("dirichlet_energy", tolerance=0.5)
        )
        normaliser = solution.slowest_rate_per_s / 0.7 * Facts.of(case).mean_square_start
        assert measure.value(time) * normaliser == pytest.approx(energy[1], rel=1e-9)


@pytest.mark.parametrize("geometry", SHAPES)
@pytest.mark.parametrize("kind", KINDS)
def test_finite_volume_max_deviation_never_increases(geometry: Geometry, kind: SurfaceKind) -> None:
    case = make_case(geometry, kind, start=off_centre_band(geometry), surface_value=0.6)
    solution = FiniteVolumeEngine().solution_on(case, build_mesh(case, 80, None))
    cells = solution.weighted(np.geomspace(1e-5, 3.0, 300)) @ solution.sample_basis.T
    peaks = np.max(np.abs(cells), axis=1)
    assert np.all(np.diff(peaks) <= 1e-13)


@pytest.mark.parametrize("kind", KINDS)
def test_finite_volume_half_slab_equals_whole_slab(kind: SurfaceKind) -> None:
    # A mirror-symmetric slab is meshed over half its thickness; the same discrete problem on
    # the mirrored whole-slab grid must give the same answer to round-off.
    from service.physics import Start

    start = Start.from_pieces([(0.0, 0.6, 1.0, 1.0), (0.6, 1.4, 0.1, 0.1), (1.4, 2.0, 1.0, 1.0)])
    case = make_case(
        Geometry.SLAB,
        kind,
        start=start,
        surface_value=0.3,
        biot=1.2,
        criterion=Criterion("max_deviation", tolerance=0.05),
    )
    half_faces = build_mesh(case, 64, None)
    assert half_faces[-1] == pytest.approx(1.0)
    whole_faces = np.concatenate([half_faces, 2.0 - half_faces[-2::-1]])
    engine = FiniteVolumeEngine()
    facts = Facts.of(case)
    assert case.criterion is not None
    times = [
        find_settling_time(
            build_measure(case, facts, engine.solution_on(case, faces), case.criterion), 1e-8
        ).time_s
        for faces in (half_faces, whole_faces)
    ]
    assert times[0] == pytest.approx(times[1], rel=1e-10)


def testthree_grid_estimate_extrapolates_a_second_order_sequence() -> None:
    # t(h) = T + C2·h² + C4·h⁴ on grids h, 2h, 4h (exact algebra, not tuned values): the
    # Richardson value has error −4·C4·h⁴, and the estimate is the safety factor 3 times it
    # (here above the floor of 1/64 of the fine grid's own estimate).
    from service.engines.finite_volume import three_grid_estimate

    exact, c2, c4, h = 10.0, 0.002, 0.3, 0.01

    def time_on(size: float) -> float:
        return exact + c2 * size**2 + c4 * size**4

    reported, error, order = three_grid_estimate(time_on(h), time_on(2 * h), time_on(4 * h))
    assert order == 4
    assert reported - exact == pytest.approx(-4 * c4 * h**4, rel=1e-6)
    assert error == pytest.approx(3 * 4 * c4 * h**4 / reported, rel=1e-6)


def testthree_grid_estimate_caps_the_credited_gain() -> None:
    # Three grids that agree on second order by chance (the Richardson values coincide): the
    # estimate stays at the safety factor times 1/64 of the fine grid's |t_f − t_c|/3.
    from service.engines.finite_volume import three_grid_estimate

    fine, coarse, coarsest = 1.0, 1.0 - 4.8e-4, 1.0 - 4.8e-4 - 1.92e-3
    reported, error, order = three_grid_estimate(fine, coarse, coarsest)
    assert order == 4
    assert error == pytest.approx(3 * (4.8e-4 / 3 / 64) / reported, rel=1e-9)


def testthree_grid_estimate_falls_back_without_second_order() -> None:
    from service.engines.finite_volume import three_grid_estimate

    # first-order convergence (differences halve): the fine time with a grid convergence index
    reported, error, order = three_grid_estimate(10.1, 10.2, 10.4)
    assert (reported, order) == (10.1, 2)
    assert error == pytest.approx(3 * 0.1 / 3 / 10.1)


@pytest.mark.parametrize("geometry", SHAPES)
def test_finite_volume_meets_a_tight_accuracy(solver: Solver, geometry: Geometry) -> None:
    criterion = Criterion("mean_square_deviation", tolerance=0.01)
    exact = solver.settle(make_case(geometry, SurfaceKind.CONVECTIVE, criterion=criterion)).time_s
    answer = solver.settle(
        make_case(
            geometry,
            SurfaceKind.CONVECTIVE,
            criterion=criterion,
            engine="finite_volume",
            accuracy=1e-7,
        )
    )
    assert answer.estimated_relative_error <= 1e-7
    assert abs(answer.time_s / exact - 1) <= 1e-7
