"""In-process speed of both engines, side by side with what a practitioner would write instead.

Run by hand:  python benchmarks/engines.py  (about a minute). Figures go in the issue note.

For each case it reports the median compute time per query of mixclock's solver (the whole
settling-time answer, every measure at the answer included) with the series engine and with
the finite-volume engine at 1e-4, and on the baseline cases the time and the error of
  * an explicit finite-difference loop in numpy (forward Euler at the stability limit), and
  * method of lines with scipy's solve_ivp: BDF with a banded Jacobian sparsity and a terminal
    event, and LSODA with its band, each at the loosest rtol that keeps its time-stepping
    error below a tenth of the accuracy asked, and at a tight rtol = 1e-8,
each on the coarsest uniform grid that is itself accurate to 1e-4 (the baselines get that
grid for free: a practitioner would also need a grid study) and stopped by the same criterion.
Each baseline is compared with the whole finite-volume query (three grids, its own error
estimate, every measure) and, like for like, with mixclock's exact-in-time eigen solve on
that same grid (no error estimate either).
"""

from __future__ import annotations

import json
import math
import statistics
import sys
import time
from collections.abc import Callable
from dataclasses import replace
from functools import partial
from pathlib import Path

import numpy as np
from scipy import integrate, optimize, sparse, special

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from service.api.cases import to_case
from service.models import DepthRequest, SettlingRequest
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
    Schedule,
    ScheduleSegment,
    Start,
    Surface,
    SurfaceKind,
    SurroundingsSchedule,
)
from service.solver import Solver
from service.units import Units

REPEATS = 7
ACCURACY = 1e-4
# The baselines' criterion: the mean-square deviation to this tolerance.
BASELINE_TOLERANCE = 0.01


def _case(
    geometry: Geometry, kind: SurfaceKind, criterion: Criterion, engine: str, start: str = "uniform"
) -> Case:
    extent = 2.0e-3 if geometry is Geometry.SLAB else 1.0e-3
    if start == "band":
        low, high = 0.15 * extent, 0.4 * extent
        initial = Start.from_pieces(
            [(0, low, 0.2, 0.2), (low, high, 1.0, 1.0), (high, extent, 0.2, 0.2)]
        )
    else:
        initial = Start.uniform(extent, 0.0)
    body = Body(geometry, extent)
    surface = Surface(kind, value=1.0, biot=2.0 if kind is SurfaceKind.CONVECTIVE else 0.0)
    return Case(
        body,
        Medium(1e-9),
        initial,
        Faces.alike(body, surface),
        criterion,
        accuracy=1e-4,
        engine=engine,
    )


def _median_ms(action: Callable[[], object], repeats: int = REPEATS) -> float:
    action()
    samples = []
    for _ in range(repeats):
        started = time.perf_counter()
        action()
        samples.append(time.perf_counter() - started)
    return statistics.median(samples) * 1e3


def _per_query_ms(solver: Solver, case: Case) -> float:
    loops = 50 if case.engine == "series" else 5
    return _median_ms(lambda: [solver.settle(case) for _ in range(loops)]) / loops


CRITERIA = {
    "mean_square_deviation": Criterion("mean_square_deviation", tolerance=0.01),
    "max_deviation": Criterion("max_deviation", tolerance=0.05),
    "rsd": Criterion("rsd", tolerance=0.02),
    "dirichlet_energy": Criterion("dirichlet_energy", tolerance=0.01),
    "fraction_equilibrated": Criterion("fraction_equilibrated", fraction=0.95),
    "value_at": Criterion("value_at", tolerance=0.05, position_m=0.3e-3),
}
EARLY = {
    "fraction 0.2": Criterion("fraction_equilibrated", fraction=0.2),
    "mean-square 0.8": Criterion("mean_square_deviation", tolerance=0.8),
}


def engine_table(solver: Solver) -> None:
    print("\n## Engines, ms of compute per query (median)")
    print(f"{'case':52s} {'Fo':>8s} {'series':>8s} {'f.vol.':>8s} {'cells':>6s} {'rel.diff':>9s}")
    rows: dict[str, list[float]] = {"series": [], "fv_long": [], "fv_short": []}
    for geometry in Geometry:
        for kind in (SurfaceKind.NO_FLUX, SurfaceKind.FIXED_VALUE, SurfaceKind.CONVECTIVE):
            for name, criterion in [*CRITERIA.items(), *EARLY.items()]:
                if kind is SurfaceKind.NO_FLUX and name.startswith("fraction"):
                    continue
                start = "band" if kind is SurfaceKind.NO_FLUX else "uniform"
                series_case = _case(geometry, kind, criterion, "series", start)
                volume_case = _case(geometry, kind, criterion, "finite_volume", start)
                exact = solver.settle(series_case)
                approx = solver.settle(volume_case)
                series_ms = _per_query_ms(solver, series_case)
                volume_ms = _per_query_ms(solver, volume_case)
                rows["series"].append(series_ms)
                rows["fv_long" if exact.fourier_number >= 0.05 else "fv_short"].append(volume_ms)
                label = f"{geometry.name.lower()} {kind.value} {name}"
                print(
                    f"{label:52s} {exact.fourier_number:8.3g} {series_ms:8.3f} {volume_ms:8.3f} "
                    f"{approx.resolution:6d} {abs(approx.time_s / exact.time_s - 1):9.1e}"
                )
    for key, label in (
        ("series", "series, all cases"),
        ("fv_long", "finite volume, Fo >= 0.05"),
        ("fv_short", "finite volume, Fo < 0.05"),
    ):
        values = rows[key]
        print(
            f"{label:30s} median {statistics.median(values):7.3f} ms  max {max(values):7.3f} ms"
            f"  ({len(values)} cases)"
        )


def _uniform_faces(case: Case, cells: int) -> np.ndarray:
    return np.linspace(case.body.inner_m, case.body.extent_m, cells + 1)


def _uniform_operator(case: Case, cells: int) -> tuple[sparse.csr_matrix, np.ndarray, np.ndarray]:
    """What a practitioner writes: cell-centred volumes on a uniform grid, tridiagonal operator,
    each end's condition as a conductance to its surroundings."""
    m = case.body.metric
    d = case.medium.diffusivity_m2_per_s
    faces = _uniform_faces(case, cells)
    centres = 0.5 * (faces[1:] + faces[:-1])
    volumes = (faces[1:] ** (m + 1) - faces[:-1] ** (m + 1)) / (m + 1)
    g = d * faces[1:-1] ** m / np.diff(centres)
    diagonal = np.r_[g, 0.0] + np.r_[0.0, g]
    forcing = np.zeros(cells)
    half = faces[-1] - centres[-1]
    ends = ((case.faces.inner, 0), (case.faces.outer, -1))
    for end, index in ends:
        if end is None:
            continue
        kf = end.biot * d / case.characteristic_length_m
        boundary = {
            SurfaceKind.NO_FLUX: 0.0,
            SurfaceKind.FIXED_VALUE: d / half,
            SurfaceKind.CONVECTIVE: 1.0 / (half / d + 1.0 / kf) if kf else 0.0,
        }[end.kind]
        area = faces[index] ** m
        diagonal[index] += boundary * area
        forcing[index] += boundary * area * end.value
    operator = sparse.diags([g / volumes[1:], -diagonal / volumes, g / volumes[:-1]], [-1, 0, 1])
    return operator.tocsr(), forcing / volumes, volumes


def _start_cells(case: Case, cells: int) -> np.ndarray:
    m = case.body.metric
    faces = _uniform_faces(case, cells)
    volumes = (faces[1:] ** (m + 1) - faces[:-1] ** (m + 1)) / (m + 1)
    return case.start.moments(m, faces[:-1], faces[1:]) / volumes


def _mean_square_ratio(case: Case, cells: int) -> Callable[[np.ndarray], float]:
    """⟨(c − c_f)²⟩/⟨(c0 − c_f)²⟩ on the grid, c_f the final state's cell averages."""
    m = case.body.metric
    faces = _uniform_faces(case, cells)
    volumes = (faces[1:] ** (m + 1) - faces[:-1] ** (m + 1)) / (m + 1)
    final = case.final_state.amounts(faces[:-1], faces[1:]) / volumes
    initial = case.final_state.deviation_moment(case.start, 2) / case.body_weight
    total = float(np.sum(volumes))
    return lambda y: float(np.sum(volumes * (y - final) ** 2) / total / initial)


def explicit_loop(case: Case, cells: int, tolerance: float) -> float:
    operator, forcing, _ = _uniform_operator(case, cells)
    ratio = _mean_square_ratio(case, cells)
    y = _start_cells(case, cells)
    step = 0.9 / float(np.max(np.abs(operator.diagonal())))  # forward Euler stability limit
    t, previous = 0.0, ratio(y)
    for _ in range(10_000_000):
        y = y + step * (operator @ y + forcing)
        t += step
        current = ratio(y)
        if current <= tolerance:
            return t - step * (current - tolerance) / (current - previous)
        previous = current
    raise RuntimeError("the explicit loop did not reach the tolerance")


def method_of_lines(
    case: Case, cells: int, tolerance: float, method: str, rtol: float = 1e-8
) -> float:
    operator, forcing, _ = _uniform_operator(case, cells)
    ratio = _mean_square_ratio(case, cells)

    def event(t: float, y: np.ndarray) -> float:
        return ratio(y) - tolerance

    event.terminal = True  # type: ignore[attr-defined]
    horizon = 50.0 * case.diffusion_time_s
    options: dict[str, object] = {"rtol": rtol, "atol": rtol * 1e-3}
    if method == "BDF":
        # as a practitioner writes it: the band's sparsity, the Jacobian left to BDF's finite
        # differences (an analytic sparse Jacobian measured within 10 % of this)
        options["jac_sparsity"] = sparse.diags([1.0, 1.0, 1.0], [-1, 0, 1], shape=(cells, cells))
    else:
        options["lband"] = options["uband"] = 1
        dense = operator.toarray()
        banded = np.zeros((3, cells))  # LSODA's band storage: banded[i - j + 1, j] = J[i, j]
        banded[0, 1:] = np.diag(dense, 1)
        banded[1] = np.diag(dense)
        banded[2, :-1] = np.diag(dense, -1)
        options["jac"] = lambda t, y: banded
    result = integrate.solve_ivp(
        lambda t, y: operator @ y + forcing,
        (0.0, horizon),
        _start_cells(case, cells),
        method=method,
        events=event,
        **options,
    )
    return float(result.t_events[0][0])


def baseline_table(solver: Solver) -> None:
    print("\n## Against what a practitioner would write (mean-square deviation to 1e-2)")
    print(f"{'case':34s} {'method':26s} {'ms/query':>10s} {'rel.error':>10s}")
    cases = [
        (Geometry.SLAB, SurfaceKind.FIXED_VALUE),
        (Geometry.CYLINDER, SurfaceKind.CONVECTIVE),
        (Geometry.SPHERE, SurfaceKind.CONVECTIVE),
    ]
    for geometry, kind in cases:
        criterion = Criterion("mean_square_deviation", tolerance=BASELINE_TOLERANCE)
        exact = solver.settle(_case(geometry, kind, criterion, "series")).time_s
        volume_case = _case(geometry, kind, criterion, "finite_volume")
        _compare(solver, f"{geometry.name.lower()} {kind.value}", volume_case, exact)


def real_bodies_table(solver: Solver) -> None:
    """Bodies only the finite-volume engine does: its own answer at accuracy 1e-9 is the
    reference (the membrane's is also the held sphere's, an exact identity)."""
    print("\n## Real bodies (finite volume only), against the same baselines")
    print(f"{'case':34s} {'method':26s} {'ms/query':>10s} {'rel.error':>10s}")
    criterion = Criterion("mean_square_deviation", tolerance=BASELINE_TOLERANCE)
    held = Surface(SurfaceKind.FIXED_VALUE, value=1.0)
    bodies = {
        "membrane, held at 1 and 0": (
            Body(Geometry.SLAB, 1e-3),
            Faces(held, Surface(SurfaceKind.FIXED_VALUE, value=0.0)),
        ),
        "hollow cylinder, held in, film out": (
            Body(Geometry.CYLINDER, 2e-3, 1e-3),
            Faces(held, Surface(SurfaceKind.CONVECTIVE, value=0.0, biot=3.0)),
        ),
        "tube wall, two films": (
            Body(Geometry.CYLINDER, 5e-3, 3.5e-3),
            Faces(
                Surface(SurfaceKind.CONVECTIVE, value=1.0, biot=7.5),
                Surface(SurfaceKind.CONVECTIVE, value=0.0, biot=0.1),
            ),
        ),
        "slab, one face sealed": (
            Body(Geometry.SLAB, 1e-3),
            Faces(Surface(SurfaceKind.NO_FLUX), Surface(SurfaceKind.CONVECTIVE, 1.0, 2.0)),
        ),
    }
    for label, (body, faces) in bodies.items():
        case = Case(
            body,
            Medium(1e-9),
            Start.uniform(body.extent_m, 0.0, body.inner_m),
            faces,
            criterion,
            accuracy=ACCURACY,
            engine="finite_volume",
        )
        exact = solver.settle(replace(case, accuracy=1e-9)).time_s
        _compare(solver, label, case, exact)


def bath_table(solver: Solver) -> None:
    """A coated bead releasing into a finite bath replaced twice: mixclock's finite-volume
    query against method of lines written for it (the bead's two layers on their own uniform
    grids, the bath one more unknown, solve_ivp restarted at each exchange with a terminal
    event on the remaining fraction). Reference: mixclock at accuracy 1e-9."""
    print("\n## Coated bead in a bath with two exchanges (remaining fraction to 15 %)")
    print(f"{'method':34s} {'ms/query':>10s} {'rel.error':>10s}")
    core, coating = 0.8e-3, 0.06e-3
    body = Body(
        Geometry.SPHERE,
        core + coating,
        0.0,
        (
            Layer(core, 1.0, 5e-10 * 1.0, 1.0),
            Layer(core + coating, 0.3, 2e-12 * 0.3, 0.3),
        ),
    )
    start = Start.from_pieces([(0.0, core, 5.0, 5.0), (core, core + coating, 0.0, 0.0)], [1.0, 0.3])
    bath = Bath(capacity_ratio=5.0, start_value=0.0, exchanges_s=(3600.0, 7200.0))
    case = Case(
        body,
        Medium(2e-12),
        start,
        Faces(None, Surface(SurfaceKind.BATH)),
        Criterion("remaining_fraction", fraction=0.15),
        accuracy=ACCURACY,
        engine="finite_volume",
        bath=bath,
    )
    exact = solver.settle(replace(case, accuracy=1e-9)).time_s
    ours = solver.settle(case)
    ours_ms = _per_query_ms(solver, case)
    print(f"{'mixclock finite_volume':34s} {ours_ms:10.3f} {abs(ours.time_s / exact - 1):10.1e}")
    for cells in (40, 80, 160):
        for method, rtol in (("BDF", 1e-6), ("BDF", 1e-8), ("LSODA", 1e-8)):
            run = partial(_bath_lines, case, cells, method, rtol)
            found = run()
            elapsed = _median_ms(run, repeats=3)
            label = f"{method} rtol={rtol:.0e}, {cells}+{cells // 4} cells"
            print(
                f"{label:34s} {elapsed:10.3f} {abs(found / exact - 1):10.1e}"
                f"   ({elapsed / ours_ms:6.0f}x ours)"
            )


def processes_table(solver: Solver) -> None:
    """Processes in time: mixclock's query against BDF method of lines on the same case
    (uniform grid of 200 cells, banded sparsity, terminal event, rtol 1e-8). References:
    mixclock at accuracy 1e-9."""
    print("\n## Processes in time (ms per query; error against the reference)")
    print(f"{'case':40s} {'mixclock':>10s} {'rel.error':>10s} {'BDF':>10s} {'rel.error':>10s}")
    law = Arrhenius(2.0e-5, 250e3 / 8.314462618)
    schedule = Schedule(
        law,
        (
            ScheduleSegment(293.15, 1423.15, 3 * 3600.0, False),
            ScheduleSegment(1423.15, 1423.15, 6 * 3600.0, True),
            ScheduleSegment(1423.15, 1173.15, 2 * 3600.0, False),
        ),
    )
    cell = 30e-6
    wave = Start.from_pieces(
        [
            (
                cell * i / 256,
                cell * (i + 1) / 256,
                float(np.cos(np.pi * i / 256)),
                float(np.cos(np.pi * (i + 1) / 256)),
            )
            for i in range(256)
        ]
    )
    sealed = Body(Geometry.SLAB, cell)
    cases = {
        "ramp-and-soak schedule (segregation)": replace(
            Case(
                sealed,
                Medium(schedule.reference_diffusivity),
                wave,
                Faces.alike(sealed, Surface(SurfaceKind.NO_FLUX)),
                Criterion("residual_segregation", tolerance=0.1),
                accuracy=ACCURACY,
            ),
            schedule=schedule,
        ),
        "ramped ambient (convective slab)": replace(
            Case(
                Body(Geometry.SLAB, 2e-3),
                Medium(1e-9),
                Start.uniform(2e-3, 0.0),
                Faces.alike(Body(Geometry.SLAB, 2e-3), Surface(SurfaceKind.CONVECTIVE, 1.0, 2.0)),
                Criterion("mean_square_deviation", tolerance=0.01),
                accuracy=ACCURACY,
            ),
            surroundings=SurroundingsSchedule(0.0, ((1.0, 600.0),)),
        ),
        "reacting pellet (first order)": Case(
            Body(Geometry.SPHERE, 2e-3),
            Medium(5e-7, reaction_per_s=20.0),
            Start.uniform(2e-3, 0.0),
            Faces(None, Surface(SurfaceKind.CONVECTIVE, 1.0, 0.02 * 2e-3 / 5e-7)),
            Criterion("mean_square_deviation", tolerance=1e-4),
            accuracy=ACCURACY,
        ),
    }
    for label, case in cases.items():
        exact = solver.settle(replace(case, accuracy=1e-9)).time_s
        ours = solver.settle(case)
        ours_ms = _per_query_ms(solver, case)
        found, bdf_ms = _process_lines(case, 200)
        print(
            f"{label:40s} {ours_ms:10.3f} {abs(ours.time_s / exact - 1):10.1e} "
            f"{bdf_ms:10.3f} {abs(found / exact - 1):10.1e}"
        )


def carburizing_table(solver: Solver) -> None:
    """The carburizing examples of openapi_examples/ (a semi-infinite body held at its surface):
    the time a depth reaches a value, and the depth a value has reached at a time, each
    against the erf solution x = 2·√(Dt)·erf⁻¹((c − c_s)/(c0 − c_s))."""
    print("\n## Carburizing, semi-infinite (ms per query; error against the erf solution)")
    examples = Path(__file__).resolve().parent.parent / "openapi_examples"
    units = Units()
    settling = json.loads((examples / "settling-time.carburizing-case-depth.json").read_text())
    request = SettlingRequest.model_validate(settling["value"])
    case = to_case(request, units).case
    diffusivity, ratio = 2.3e-11, (0.45 - 1.0) / (0.20 - 1.0)
    z = float(special.erfinv(ratio))
    expected_s = (0.6e-3 / (2 * z)) ** 2 / diffusivity
    found = solver.settle(case).time_s
    elapsed = _median_ms(lambda: solver.settle(case), repeats=20)
    print(
        f"{'time for 0.6 mm to reach 0.45':40s} {elapsed:10.3f} {abs(found / expected_s - 1):10.1e}"
    )
    depth_example = json.loads((examples / "depth.carburized-case-after-a-shift.json").read_text())
    depth_request = DepthRequest.model_validate(depth_example["value"])
    depth_case = to_case(depth_request, units).case
    at_s = 8 * 3600.0
    expected_m = 2 * math.sqrt(diffusivity * at_s) * z
    depth = solver.depth(depth_case, at_s, 0.45).depth_m
    assert depth is not None
    elapsed = _median_ms(lambda: solver.depth(depth_case, at_s, 0.45), repeats=20)
    print(f"{'depth of 0.45 after 8 h':40s} {elapsed:10.3f} {abs(depth / expected_m - 1):10.1e}")


def nonlinear_table(solver: Solver) -> None:
    """Sorption into a sheet with D = 1e-10·exp(3c) m²/s, held at 1 from 0, to 90 % uptake:
    mixclock's three-grid stepping against what a practitioner writes (a uniform grid, D at
    the mean of neighbouring cells, BDF with the band's sparsity and an event) at the
    loosest tolerance and the coarsest grid that reach 1e-4. Reference: mixclock at 1e-8."""
    print("\n## Nonlinear D(c): sorption into a sheet (ms per query; error)")
    sheet = Body(Geometry.SLAB, 1e-3)
    case = Case(
        sheet,
        Medium(1e-10 * np.exp(3.0), nonlinear=NonlinearDiffusivity(d0=1e-10, beta=3.0)),
        Start.uniform(1e-3, 0.0),
        Faces.alike(sheet, Surface(SurfaceKind.FIXED_VALUE, 1.0)),
        Criterion("fraction_equilibrated", fraction=0.9),
        accuracy=ACCURACY,
    )
    exact = solver.settle(replace(case, accuracy=1e-8)).time_s
    ours = solver.settle(case)
    ours_ms = _median_ms(lambda: solver.settle(case), repeats=5)
    label = "mixclock (RODAS3, three grids)"
    print(f"{label:40s} {ours_ms:10.1f} {abs(ours.time_s / exact - 1):10.1e}")
    for cells, rtol in ((100, 1e-5), (200, 1e-5), (200, 1e-6), (300, 1e-5), (300, 1e-8)):
        run = partial(_sorption_lines, cells, rtol)
        found = run()
        elapsed = _median_ms(run, repeats=3)
        label = f"BDF, {cells} cells, rtol {rtol:.0e}"
        print(f"{label:40s} {elapsed:10.1f} {abs(found / exact - 1):10.1e}")


def stepped_films_table(solver: Solver) -> None:
    """Two cases stepped because of a film: drying through an air film with D = 1e-10·e^{3c}
    (4 mm sheet, k = 1e-7 m/s, to 90 % of the loss), and a carbon-like diffusant loading a
    10 mm plate through a film (k = 2e-8 m/s) under a 5 h ramp from 800 to 1000 °C and a soak
    (to half of the uptake). Each against a practitioner's BDF method of lines (uniform grid,
    the band's sparsity, an event) on the coarsest grid and loosest tolerance that reach 1e-4.
    Reference: mixclock at 1e-8 accuracy."""
    print("\n## Stepped films (ms per query; error)")
    sheet = Body(Geometry.SLAB, 4e-3)
    film = Surface(SurfaceKind.CONVECTIVE, 0.0, 1e-7 * 2e-3 / 1e-10)
    drying = Case(
        sheet,
        Medium(1e-10, nonlinear=NonlinearDiffusivity(d0=1e-10, beta=3.0)),
        Start.uniform(4e-3, 1.0),
        Faces.alike(sheet, film),
        Criterion("fraction_equilibrated", fraction=0.9),
        accuracy=ACCURACY,
    )
    plate = Body(Geometry.SLAB, 10e-3)
    law = Arrhenius(1e-11 / math.exp(-140e3 / 8.314462618 / 1273.15), 140e3 / 8.314462618)
    schedule = Schedule(
        law,
        (
            ScheduleSegment(1073.15, 1273.15, 5 * 3600.0, False),
            ScheduleSegment(1273.15, 1273.15, 400 * 3600.0, True),
        ),
    )
    loading = Case(
        plate,
        Medium(1e-11),
        Start.uniform(10e-3, 0.2),
        Faces.alike(plate, Surface(SurfaceKind.CONVECTIVE, 1.0, 2e-8 * 5e-3 / 1e-11)),
        Criterion("fraction_equilibrated", fraction=0.5),
        accuracy=ACCURACY,
        schedule=schedule,
    )
    rows = (
        ("drying through a film, D(c)", drying, _drying_lines, ((100, 1e-6), (200, 1e-6))),
        ("film under ramp and soak", loading, _ramp_film_lines, ((100, 1e-6), (200, 1e-6))),
    )
    for label, case, lines, settings in rows:
        exact = solver.settle(replace(case, accuracy=1e-8)).time_s
        ours = solver.settle(case)
        ours_ms = _median_ms(lambda case=case: solver.settle(case), repeats=5)
        print(f"{label:40s}")
        ours_error = abs(ours.time_s / exact - 1)
        print(f"{'  mixclock (RODAS3, three grids)':40s} {ours_ms:10.1f} {ours_error:10.1e}")
        for cells, rtol in settings:
            run = partial(lines, cells, rtol)
            found = run()
            elapsed = _median_ms(run, repeats=3)
            name = f"  BDF, {cells} cells, rtol {rtol:.0e}"
            print(f"{name:40s} {elapsed:10.1f} {abs(found / exact - 1):10.1e}")


def _banded_lines(
    cells: int,
    half_m: float,
    rtol: float,
    start: float,
    rhs_of: Callable[[float, np.ndarray, float], np.ndarray],
    level: float,
    horizon_s: float,
) -> float:
    """The practitioner's half-sheet: uniform cells, BDF with the band's sparsity, the mean's
    crossing of ``level`` as a terminal event."""
    h = half_m / cells

    def event(t: float, c: np.ndarray) -> float:
        return float(np.mean(c)) - level

    event.terminal = True  # type: ignore[attr-defined]
    result = integrate.solve_ivp(
        lambda t, c: rhs_of(t, c, h),
        (0.0, horizon_s),
        np.full(cells, start),
        method="BDF",
        events=event,
        rtol=rtol,
        atol=rtol * 1e-2,
        jac_sparsity=sparse.diags([1.0, 1.0, 1.0], [-1, 0, 1], shape=(cells, cells)),
    )
    return float(result.t_events[0][0])


def _drying_lines(cells: int, rtol: float) -> float:
    """D at the mean of neighbouring cells; the surface value from the film balance by Brent."""
    k = 1e-7

    def rhs(t: float, c: np.ndarray, h: float) -> np.ndarray:
        d = 1e-10 * np.exp(3.0 * 0.5 * (c[:-1] + c[1:]))
        flux = d * (c[:-1] - c[1:]) / h
        net = np.zeros(c.size)
        net[:-1] -= flux
        net[1:] += flux
        last = float(c[-1])

        def balance(surface: float) -> float:
            return k * surface - 1e-10 * math.exp(1.5 * (surface + last)) * (last - surface) / (
                h / 2
            )

        net[-1] -= k * optimize.brentq(balance, 0.0, max(last, 1e-300), xtol=1e-14)
        return net / h

    return _banded_lines(cells, 2e-3, rtol, 1.0, rhs, 0.1, 1e7)


def _ramp_film_lines(cells: int, rtol: float) -> float:
    """D(T(t)) from the ramp and soak; the film in series with the last half cell."""
    k, activation = 2e-8, 140e3 / 8.314462618

    def rhs(t: float, c: np.ndarray, h: float) -> np.ndarray:
        kelvin = 1073.15 + 200.0 * min(t / (5 * 3600.0), 1.0)
        d = 1e-11 * math.exp(-activation * (1 / kelvin - 1 / 1273.15))
        flux = d * (c[:-1] - c[1:]) / h
        net = np.zeros(c.size)
        net[:-1] -= flux
        net[1:] += flux
        net[-1] += (1.0 - c[-1]) / (1 / k + (h / 2) / d)
        return net / h

    return _banded_lines(cells, 5e-3, rtol, 0.2, rhs, 0.6, 400 * 3600.0)


def _sorption_lines(cells: int, rtol: float) -> float:
    length = 1e-3
    h = length / cells

    def d(c: np.ndarray) -> np.ndarray:
        return 1e-10 * np.exp(3.0 * c)

    def rhs(t: float, c: np.ndarray) -> np.ndarray:
        flux = d(0.5 * (c[:-1] + c[1:])) * (c[:-1] - c[1:]) / h
        net = np.zeros(cells)
        net[:-1] -= flux
        net[1:] += flux
        net[0] += d(0.5 * (1 + c[0])) * (1 - c[0]) / (h / 2)
        net[-1] += d(0.5 * (1 + c[-1])) * (1 - c[-1]) / (h / 2)
        return net / h

    def event(t: float, c: np.ndarray) -> float:
        return float(np.mean(c)) - 0.9

    event.terminal = True  # type: ignore[attr-defined]
    result = integrate.solve_ivp(
        rhs,
        (0.0, 1e5),
        np.zeros(cells),
        method="BDF",
        events=event,
        rtol=rtol,
        atol=rtol * 1e-3,
        jac_sparsity=sparse.diags([1.0, 1.0, 1.0], [-1, 0, 1], shape=(cells, cells)),
    )
    return float(result.t_events[0][0])


def _process_lines(case: Case, cells: int) -> tuple[float, float]:
    """BDF method of lines on a uniform grid: D(T(t)) under a schedule, −k·c for a reaction,
    the criterion as a terminal event. Returns its time and its median ms."""
    assert case.criterion is not None
    m = case.body.metric
    faces = _uniform_faces(case, cells)
    centres = 0.5 * (faces[1:] + faces[:-1])
    volumes = (faces[1:] ** (m + 1) - faces[:-1] ** (m + 1)) / (m + 1)
    g = faces[1:-1] ** m / np.diff(centres)
    outer = case.faces.outer
    half = faces[-1] - centres[-1]
    boundary = 0.0
    if outer.kind is SurfaceKind.CONVECTIVE:
        boundary = 1.0 / (half + case.characteristic_length_m / outer.biot) * faces[-1] ** m
    diagonal = np.r_[g, 0.0] + np.r_[0.0, g]
    diagonal[-1] += boundary
    unit = sparse.diags(
        [g / volumes[1:], -diagonal / volumes, g / volumes[:-1]], [-1, 0, 1]
    ).tocsr()
    forcing = np.zeros(cells)
    forcing[-1] = boundary * outer.value / volumes[-1]
    if case.body.geometry is Geometry.SLAB:  # both faces exchange alike
        diagonal[0] += boundary
        unit = sparse.diags([g / volumes[1:], -diagonal / volumes, g / volumes[:-1]], [-1, 0, 1])
        unit = unit.tocsr()
        forcing[0] = boundary * outer.value / volumes[0]
    surroundings = case.surroundings

    def ambient_factor(t: float) -> float:
        """The surroundings' value over its final one (a single ramp from 0 here)."""
        if surroundings is None:
            return 1.0
        target, duration = surroundings.segments[0]
        return min(t / duration, 1.0) * target / outer.value

    rate = case.medium.reaction_per_s
    schedule = case.schedule
    law = schedule.law if schedule is not None else None
    clock = np.cumsum([0.0, *(seg.duration_s for seg in schedule.segments)]) if schedule else None

    def diffusivity(t: float) -> float:
        if schedule is None or law is None or clock is None:
            return case.medium.diffusivity_m2_per_s
        i = min(int(np.searchsorted(clock, t, side="right")) - 1, len(schedule.segments) - 1)
        seg = schedule.segments[max(i, 0)]
        into = min(max(t - clock[max(i, 0)], 0.0), seg.duration_s)
        return law.diffusivity(seg.start_k + (seg.end_k - seg.start_k) * into / seg.duration_s)

    y0 = case.start.moments(m, faces[:-1], faces[1:]) / volumes
    final = case.final_state.amounts(faces[:-1], faces[1:]) / volumes
    criterion = case.criterion
    if criterion.measure == "residual_segregation":
        initial_range = float(np.ptp(y0))

        def measure(y: np.ndarray) -> float:
            return float(np.ptp(y)) / initial_range - (criterion.tolerance or 0.0)
    else:
        total = float(np.sum(volumes))
        start = float(np.sum(volumes * (y0 - final) ** 2)) / total

        def measure(y: np.ndarray) -> float:
            mean_square = float(np.sum(volumes * (y - final) ** 2)) / total
            return mean_square / start - (criterion.tolerance or 0.0)

    def event(t: float, y: np.ndarray) -> float:
        return measure(y)

    event.terminal = True  # type: ignore[attr-defined]
    sparsity = sparse.diags([1.0, 1.0, 1.0], [-1, 0, 1], shape=(cells, cells))

    def run() -> float:
        result = integrate.solve_ivp(
            lambda t, y: diffusivity(t) * (unit @ y + ambient_factor(t) * forcing) - rate * y,
            (0.0, 1e3 * case.diffusion_time_s + (clock[-1] if clock is not None else 0.0)),
            y0,
            method="BDF",
            events=event,
            rtol=1e-8,
            atol=1e-11,
            jac_sparsity=sparsity,
        )
        return float(result.t_events[0][0])

    found = run()
    return found, _median_ms(run, repeats=3)


def _bath_lines(case: Case, cells: int, method: str, rtol: float) -> float:
    """The practitioner's version: each layer its own uniform grid, the bath one more node,
    restarted at each exchange."""
    assert case.bath is not None and case.criterion is not None
    layers = case.body.layers
    faces = np.concatenate(
        [
            np.linspace(0.0, layers[0].outer_m, cells + 1),
            np.linspace(layers[0].outer_m, layers[1].outer_m, cells // 4 + 1)[1:],
        ]
    )
    centres = 0.5 * (faces[1:] + faces[:-1])
    layer = (centres > layers[0].outer_m).astype(int)
    capacity = np.array([lay.capacity for lay in layers])[layer]
    conductivity = np.array([lay.conductivity for lay in layers])[layer]
    volumes = capacity * (faces[1:] ** 3 - faces[:-1] ** 3) / 3
    g = faces[1:-1] ** 2 / (
        (faces[1:-1] - centres[:-1]) / conductivity[:-1]
        + (centres[1:] - faces[1:-1]) / conductivity[1:]
    )
    link = faces[-1] ** 2 * conductivity[-1] / (faces[-1] - centres[-1])
    total = float(np.sum(volumes))
    volumes = np.r_[volumes, case.bath.capacity_ratio * total]
    upper = np.r_[g, link]
    diagonal = np.r_[upper, 0.0] + np.r_[0.0, upper]
    operator = sparse.diags(
        [upper / volumes[1:], -diagonal / volumes, upper / volumes[:-1]], [-1, 0, 1]
    ).tocsr()
    y = np.r_[case.start.moments(2, faces[:-1], faces[1:]) / volumes[:-1], case.bath.start_value]
    held = float(np.dot(volumes[:-1], y[:-1]))
    fraction = case.criterion.fraction
    assert fraction is not None

    def event(t: float, y: np.ndarray) -> float:
        return float(np.dot(volumes[:-1], y[:-1])) / held - fraction

    event.terminal = True  # type: ignore[attr-defined]
    options: dict[str, object] = {"rtol": rtol, "atol": rtol * 1e-3}
    if method == "BDF":
        options["jac_sparsity"] = sparse.diags([1.0, 1.0, 1.0], [-1, 0, 1], shape=(y.size, y.size))
    else:
        options["lband"] = options["uband"] = 1
    starts = (0.0, *case.bath.exchanges_s)
    ends = (*case.bath.exchanges_s, 1e3 * case.diffusion_time_s)
    for begin, end in zip(starts, ends, strict=True):
        result = integrate.solve_ivp(
            lambda t, v: operator @ v, (begin, end), y, method=method, events=event, **options
        )
        if result.t_events[0].size:
            return float(result.t_events[0][0])
        y = result.y[:, -1].copy()
        y[-1] = case.bath.start_value
    raise RuntimeError("the remaining fraction was never reached")


def _compare(solver: Solver, label: str, volume_case: Case, exact: float) -> None:
    """mixclock's finite-volume query against the practitioner's baselines on one case."""
    ours = solver.settle(volume_case)
    fv_ms = _per_query_ms(solver, volume_case)
    print(
        f"{label:34s} {'mixclock finite_volume':26s} {fv_ms:10.3f} "
        f"{abs(ours.time_s / exact - 1):10.1e}"
    )
    # the practitioner's uniform grid: the coarsest whose exact-in-time answer is within
    # the accuracy asked of the exact one; each integrator's tolerance is the loosest that
    # keeps its time-stepping error below a tenth of that accuracy on that same grid
    cells = next(
        n
        for n in (40, 60, 80, 100, 120, 160, 200, 240, 320, 480, 640)
        if abs(_exact_in_time(volume_case, n) / exact - 1) <= ACCURACY
    )
    same_grid = _exact_in_time(volume_case, cells)
    print(f"{'':34s} (practitioner's uniform grid: {cells} cells)")
    # like for like: the exact-in-time eigen solve on that same grid, also given the grid
    # for free and also without an error estimate of its own
    eigen_ms = _median_ms(partial(_exact_in_time, volume_case, cells), repeats=REPEATS)
    print(
        f"{'':34s} {'eigen solve, same grid':26s} {eigen_ms:10.3f} "
        f"{abs(same_grid / exact - 1):10.1e}"
    )
    tolerance = BASELINE_TOLERANCE
    runs: list[tuple[str, Callable[[], float]]] = [
        ("explicit loop (numpy)", partial(explicit_loop, volume_case, cells, tolerance))
    ]
    for method in ("BDF", "LSODA"):
        rtol = _loosest_rtol(volume_case, cells, tolerance, method, same_grid)
        for chosen in sorted({rtol, 1e-8}, reverse=True):
            runs.append(
                (
                    f"solve_ivp {method} rtol={chosen:.0e}",
                    partial(method_of_lines, volume_case, cells, tolerance, method, chosen),
                )
            )
    for name, run in runs:
        found = run()
        elapsed = _median_ms(run, repeats=3)
        print(
            f"{'':34s} {name:26s} {elapsed:10.3f} {abs(found / exact - 1):10.1e}"
            f"   ({elapsed / fv_ms:6.0f}x the query, {elapsed / eigen_ms:5.0f}x the solve)"
        )


def _exact_in_time(case: Case, cells: int) -> float:
    """mixclock's own answer on the practitioner's uniform grid (exact in time)."""
    from service.engines.finite_volume import FiniteVolumeEngine
    from service.measures import Facts, build_measure
    from service.settling import find_settling_time

    solution = FiniteVolumeEngine().solution_on(case, _uniform_faces(case, cells))
    assert case.criterion is not None
    measure = build_measure(case, Facts.of(case), solution, case.criterion)
    return find_settling_time(measure, 1e-6 * case.diffusion_time_s).time_s


def _loosest_rtol(case: Case, cells: int, tolerance: float, method: str, target: float) -> float:
    for rtol in (1e-3, 1e-4, 1e-5, 1e-6, 1e-7, 1e-8, 1e-9):
        found = method_of_lines(case, cells, tolerance, method, rtol)
        if abs(found / target - 1) <= 1e-5:
            return rtol
    return 1e-10


def main() -> None:
    solver = Solver()
    print(f"mixclock engine benchmark, numpy {np.__version__}, {REPEATS} repeats, median")
    engine_table(solver)
    baseline_table(solver)
    real_bodies_table(solver)
    bath_table(solver)
    processes_table(solver)
    carburizing_table(solver)
    nonlinear_table(solver)
    stepped_films_table(solver)


if __name__ == "__main__":
    main()
