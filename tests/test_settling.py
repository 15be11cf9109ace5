"""The settling-time search: scaling, monotonicity in the tolerance, the last-crossing rule."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from service.engines.series import SeriesEngine
from service.measures import Facts, build_measure
from service.physics import Body, Case, Criterion, Faces, Geometry, Start, SurfaceKind
from service.solver import Solver, format_time
from tests.factories import KINDS, SHAPES, make_case, off_centre_band


@pytest.mark.parametrize("geometry", SHAPES)
@pytest.mark.parametrize("kind", KINDS)
def test_settling_time_scales_with_length_squared_over_diffusivity(
    solver: Solver,
    geometry: Geometry,
    kind: SurfaceKind,
) -> None:
    criterion = Criterion("max_deviation", tolerance=0.05)
    base = solver.settle(
        make_case(
            geometry,
            kind,
            start=off_centre_band(geometry),
            criterion=criterion,
            surface_value=0.4,
            biot=3.0,
        )
    )
    for length, diffusivity in ((3e-3, 2e-9), (0.25, 7e-6)):
        extent_scale = length
        start = off_centre_band(geometry, length_m=extent_scale)
        scaled = solver.settle(
            make_case(
                geometry,
                kind,
                start=start,
                criterion=criterion,
                length_m=length,
                diffusivity=diffusivity,
                surface_value=0.4,
                biot=3.0,
            )
        )
        assert scaled.time_s == pytest.approx(base.time_s * length**2 / diffusivity, rel=1e-9)
        assert scaled.fourier_number == pytest.approx(base.fourier_number, rel=1e-9)


@pytest.mark.parametrize(
    "measure", ["mean_square_deviation", "max_deviation", "rsd", "dirichlet_energy", "value_at"]
)
def test_settling_time_is_monotone_in_tolerance(solver: Solver, measure: str) -> None:
    times = []
    for tolerance in (0.3, 0.1, 0.03, 0.01, 0.003, 1e-4):
        criterion = Criterion(measure, tolerance=tolerance, position_m=0.2)
        case = make_case(
            Geometry.SPHERE,
            SurfaceKind.CONVECTIVE,
            criterion=criterion,
            biot=4.0,
            start=off_centre_band(Geometry.SPHERE),
            surface_value=0.5,
        )
        times.append(solver.settle(case).time_s)
    assert np.all(np.diff(times) > 0)


def test_settling_fraction_is_monotone_in_fraction(solver: Solver) -> None:
    times = [
        solver.settle(
            make_case(Geometry.CYLINDER, criterion=Criterion("fraction_equilibrated", fraction=f))
        ).time_s
        for f in (0.5, 0.9, 0.99, 0.999)
    ]
    assert np.all(np.diff(times) > 0)


def _rise_then_fall_case() -> Case:
    """A slab held at 0 on both faces; a band of 1 near the first face; the point watched lies
    outside the band, so its deviation starts at zero, rises as the band spreads, then falls."""
    start = Start.from_pieces([(0.0, 0.2, 0.0, 0.0), (0.2, 0.5, 1.0, 1.0), (0.5, 2.0, 0.0, 0.0)])
    criterion = Criterion("value_at", position_m=1.2, absolute_tolerance=0.02)
    return make_case(
        Geometry.SLAB, SurfaceKind.FIXED_VALUE, start=start, criterion=criterion, surface_value=0.0
    )


def test_settling_uses_last_crossing_when_a_point_rises_before_it_falls(solver: Solver) -> None:
    case = _rise_then_fall_case()
    answer = solver.settle(case)
    assert answer.definition == "last_crossing"
    solution = SeriesEngine().solution(case, 1e-4)
    # the criterion holds at the start and early on (first crossing would be t = 0) ...
    early = np.abs(solution.values_at(np.array([1.2]), np.array([1e-4]))[0, 0])
    assert early <= 0.02
    # ... fails in between, and holds at every time after the answer
    times = np.geomspace(1e-3, 50.0, 4000)
    values = np.abs(solution.values_at(np.array([1.2]), times)[:, 0])
    assert np.any(values[times < answer.time_s] > 0.02)
    assert np.all(values[times > answer.time_s * (1 + 1e-9)] <= 0.02 + 1e-12)
    assert np.abs(
        solution.values_at(np.array([1.2]), np.array([answer.time_s]))[0, 0]
    ) == pytest.approx(0.02, rel=1e-8)


def test_settling_point_on_held_surface_is_met_at_once(solver: Solver) -> None:
    # the deviation at a held surface is zero for every t > 0 (every mode vanishes there)
    case = make_case(
        Geometry.SPHERE,
        SurfaceKind.FIXED_VALUE,
        criterion=Criterion("value_at", tolerance=0.01, position_m=1.0),
    )
    answer = solver.settle(case)
    assert answer.time_s == 0.0
    assert [code for code, _ in answer.warnings] == ["settles_immediately"]


def test_settling_point_at_node_of_antisymmetric_start_settles_at_once(solver: Solver) -> None:
    # A start odd about the slab's centre excites only antisymmetric modes; the centre stays
    # at its final value for all time.
    start = Start.from_pieces([(0.0, 1.0, 1.0, 1.0), (1.0, 2.0, -1.0, -1.0)])
    answer = solver.settle(
        make_case(
            Geometry.SLAB,
            SurfaceKind.NO_FLUX,
            start=start,
            criterion=Criterion("value_at", tolerance=1e-3, position_m=1.0),
        )
    )
    assert answer.time_s == 0.0


def test_settling_centred_band_excites_no_antisymmetric_mode(solver: Solver) -> None:
    # sealed slab of half-thickness 1: slowest mode π/2 (antisymmetric), next π (symmetric)
    centred = Start.from_pieces([(0.0, 0.7, 0.0, 0.0), (0.7, 1.3, 1.0, 1.0), (1.3, 2.0, 0.0, 0.0)])
    answer = solver.settle(
        make_case(
            Geometry.SLAB,
            SurfaceKind.NO_FLUX,
            start=centred,
            criterion=Criterion("mean_square_deviation", tolerance=0.01),
        )
    )
    assert answer.slowest_rate_per_s == pytest.approx((np.pi / 2) ** 2, rel=1e-12)
    assert answer.slowest_excited_rate_per_s == pytest.approx(np.pi**2, rel=1e-12)


def test_measure_monotone_region_holds_after_bound(solver: Solver) -> None:
    # After settled_after_s the point measure must not increase.
    case = _rise_then_fall_case()
    solution = SeriesEngine().solution(case, 1e-4)
    assert case.criterion is not None
    measure = build_measure(case, Facts.of(case), solution, case.criterion)
    start = measure.settled_after_s(1e-6)
    values = measure.values(np.geomspace(start, 100 * start, 2000))
    assert np.all(np.diff(values) <= 1e-15)


@pytest.mark.parametrize(
    ("seconds", "text"),
    [
        (42.0, "42.0 s"),
        (5499.2, "91.7 min"),
        (3 * 3600, "3.00 h"),
        (86400 * 12.34, "12.3 d"),
        (0.00123, "0.00123 s"),
    ],
)
def test_format_time_gives_three_significant_figures(seconds: float, text: str) -> None:
    assert format_time(seconds) == text


def _peak_at_point(case: Case) -> float:
    solution = SeriesEngine().solution(case, 1e-4)
    times = np.geomspace(1e-3, 20.0, 20000)
    return float(np.max(np.abs(solution.values_at(np.array([1.2]), times)[:, 0])))


def test_settling_warns_near_tangent_when_peak_just_below_tolerance(solver: Solver) -> None:
    # The watched point's deviation rises to a peak and falls; with the tolerance 1 % above
    # the peak the criterion always holds, but only just: time 0 with a near_tangent warning.
    base = _rise_then_fall_case()
    peak = _peak_at_point(base)
    criterion = Criterion("value_at", position_m=1.2, absolute_tolerance=1.01 * peak)
    answer = solver.settle(replace(base, criterion=criterion))
    codes = [code for code, _ in answer.warnings]
    assert answer.time_s == 0.0
    assert "near_tangent" in codes


def test_settling_peak_just_above_tolerance_is_a_crossing(solver: Solver) -> None:
    base = _rise_then_fall_case()
    peak = _peak_at_point(base)
    criterion = Criterion("value_at", position_m=1.2, absolute_tolerance=0.999 * peak)
    answer = solver.settle(replace(base, criterion=criterion))
    assert answer.time_s > 0.0
    solution = SeriesEngine().solution(base, 1e-4)
    value = abs(solution.values_at(np.array([1.2]), np.array([answer.time_s]))[0, 0])
    assert value == pytest.approx(0.999 * peak, rel=1e-8)


def test_solver_is_quick_only_for_small_series_cases(solver: Solver) -> None:
    # the API answers these on its event loop and hands everything else to the thread pool
    assert solver.is_quick(make_case(Geometry.SPHERE, start=off_centre_band(Geometry.SPHERE)))
    assert not solver.is_quick(make_case(Geometry.SPHERE, engine="finite_volume"))
    pieces = [(0.1 * i, 0.1 * (i + 1), float(i % 2), float(i % 2)) for i in range(20)]
    assert not solver.is_quick(make_case(Geometry.SLAB, start=Start.from_pieces(pieces)))


def test_only_series_answers_count_as_quick(solver: Solver) -> None:
    """Quick answers run on the event loop; a case the series engine declines (here a hollow
    body, which auto sends to finite volume) must not."""
    solid = make_case(Geometry.SPHERE, SurfaceKind.FIXED_VALUE)
    body = Body(Geometry.SPHERE, 1.0, 0.5)
    hollow = replace(
        solid,
        body=body,
        start=Start.uniform(1.0, 0.0, 0.5),
        faces=Faces.alike(body, solid.faces.outer),
    )
    assert solver.is_quick(solid)
    assert not solver.is_quick(hollow)


def test_first_crossing_precedes_the_last_for_a_passing_band(solver: Solver) -> None:
    """A point beside a band in a sealed slab: its value rises past the final mean and falls
    back. 'reaches' the final-plus-a-bit value answers the first time it gets there; value_at
    with the same margin answers when it stays within it — later."""
    band = Start.from_pieces([(0.0, 0.4, 0.0, 0.0), (0.4, 0.6, 1.0, 1.0), (0.6, 2.0, 0.0, 0.0)])
    final = 0.1  # the band holds 0.2 of the 2-long slab's amount
    first = solver.settle(
        make_case(
            Geometry.SLAB,
            SurfaceKind.NO_FLUX,
            start=band,
            criterion=Criterion("reaches", position_m=0.3, value=final + 0.05),
        )
    )
    last = solver.settle(
        make_case(
            Geometry.SLAB,
            SurfaceKind.NO_FLUX,
            start=band,
            criterion=Criterion("value_at", absolute_tolerance=0.05, position_m=0.3),
        )
    )
    assert first.definition == "first_crossing"
    assert 0 < first.time_s < last.time_s
