"""The time-stepped path: cases with no eigen-expansion (``Case.needs_stepping``), answered
on nested grids by the tridiagonal stepper, with the soak search of a schedule that ends first
and the history of such a case."""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import replace

import numpy as np
from numpy.typing import NDArray
from scipy import optimize

from service.answers import (
    BASE_ASSUMPTIONS,
    CAUTIONS,
    SNAPSHOT_POINTS,
    HistoryAnswer,
    ScheduleAnswer,
    SettlingAnswer,
    Snapshot,
    common_biot,
    describe_final_state,
    final_value_of,
    finite_or_none,
    format_time,
    surroundings_assumption,
)
from service.engines.finite_volume import build_mesh, three_grid_estimate
from service.engines.rosenbrock import WorkBudget
from service.engines.stepping import SteppedRun, history_in_time, step_in_time
from service.errors import NumericalFailure
from service.measures import Facts
from service.physics import Case

FloatArray = NDArray[np.float64]
FurnaceLag = Callable[[Case], tuple[list[tuple[str, str]], str]]

# A stepped case's grids: the finest of the first three has this many cells
# over the body (the coarsest a quarter of them), halved until the estimate meets the
# accuracy, never past the cap. The step tolerance is this multiple of the accuracy; the
# check on it runs that much tighter, its difference counted with a safety factor.
STEPPED_FIRST_CELLS = 64
STEPPED_MAX_CELLS = 2048
STEPPED_RTOL_PER_ACCURACY = 1.0
STEPPED_TIGHTER = 4.0
STEPPED_MIN_RTOL = 1e-11
STEPPED_STEPPING_SAFETY = 3.0
# The steps all the runs of one request may take together (about 3–5 s of work).
STEP_BUDGET = 50_000

# A time-stepped history's grid: this many cells over the body.
HISTORY_STEPPED_CELLS = 256

# Soak lengthening beyond this many diffusion times (at the soak's D) is given up; a
# lengthening found on one grid brackets the next grid's search within this fraction; the
# search stops within this multiple of the step tolerance (times the schedule's length).
SOAK_SEARCH_LIMIT = 1e3
SOAK_BRACKET = 0.01
SOAK_TOLERANCE_PER_RTOL = 0.01

# How a stepped answer's transport is described.
_STEPPED_TRANSPORT = {
    "nonlinear": "Transport by diffusion only, in a homogeneous body whose diffusivity depends "
    "on the value as given (stepped in time with the Kirchhoff transform Φ = ∫D dc: the flux "
    "is −∇Φ); the Fourier number is on D at the final value.",
    "schedule": "Transport by diffusion only; the whole body follows the schedule's temperature "
    "and D(T) its Arrhenius law, while a surface film's transfer coefficient stays as given "
    "(its Biot number changes with D) or the surroundings keep their own clock, so reduced "
    "time does not separate the problem: stepped in clock time. The Fourier number is "
    "∫D dt / Lc².",
}


def _stepped_time(
    case: Case,
    faces: FloatArray,
    rtol: float,
    budget: WorkBudget,
    guess_s: float | None = None,
) -> SteppedRun:
    """One stepped run to the criterion. Under a schedule the run stops at its end; when the
    criterion is not met by then, the soak is lengthened until it is met exactly at the end
    (the criterion's quantity only falls, so its value at the end falls as the soak grows):
    the run's time is then the lengthened schedule's end. ``guess_s``, a lengthening found on
    another grid, narrows the search."""
    schedule = case.schedule
    if schedule is None:
        return step_in_time(case, faces, rtol, budget=budget)
    runs: dict[float, SteppedRun] = {}  # by lengthening, to the lengthened schedule's end

    def at_end(extra_s: float) -> float:
        if extra_s not in runs:
            longer = replace(case, schedule=schedule.with_soak_extended(extra_s))
            end_s = schedule.duration_s + extra_s
            runs[extra_s] = step_in_time(
                longer, faces, rtol, until_s=end_s, stop_when_met=False, budget=budget
            )
        return runs[extra_s].shortfall

    if guess_s is None or guess_s <= 0:
        first = step_in_time(case, faces, rtol, until_s=schedule.duration_s, budget=budget)
        if first.met:
            return first
        runs[0.0] = replace(first, met=False)
        soak = schedule.segments[schedule.soak]
        low, high = 0.0, max(soak.duration_s, 1e-3 * schedule.duration_s)
        step = 3 * high
    else:
        step = SOAK_BRACKET * guess_s
        low, high = guess_s - step, guess_s + step
        while at_end(low) <= 0:
            if low == 0.0:  # met within the schedule on this grid after all
                return step_in_time(case, faces, rtol, until_s=schedule.duration_s, budget=budget)
            high, step = low, 4 * step
            low = max(low - step, 0.0)
    limit = (
        SOAK_SEARCH_LIMIT
        * case.diffusion_time_s
        * (
            case.medium.diffusivity_m2_per_s
            / schedule.law.diffusivity(schedule.segments[schedule.soak].end_k)
        )
    )
    while at_end(high) > 0:
        low, high, step = high, high + step, 4 * step
        if high > limit:
            raise NumericalFailure(
                f"the criterion is not met even with the soak held {format_time(limit)} longer"
            )
    tolerance = SOAK_TOLERANCE_PER_RTOL * rtol * (schedule.duration_s + high)
    extra = float(optimize.brentq(at_end, low, high, xtol=tolerance))
    at_end(extra)
    return replace(runs[extra], time_s=schedule.duration_s + extra, met=True)


def _stepped_schedule_answer(
    case: Case, time_s: float
) -> tuple[ScheduleAnswer, list[tuple[str, str]]]:
    """Where in the schedule a stepped answer falls, and the warning when the schedule ends
    first (then ``time_s`` is the end of the schedule with its soak lengthened)."""
    schedule = case.schedule
    assert schedule is not None
    extra = max(time_s - schedule.duration_s, 0.0)
    if extra == 0.0:
        reduced = schedule.reduced(time_s)
        return ScheduleAnswer(reduced, schedule.segment_at(time_s), schedule.duration_s, 0.0), []
    longer = schedule.with_soak_extended(extra)
    answer = ScheduleAnswer(longer.reduced(time_s), None, schedule.duration_s, extra)
    warning = (
        "schedule_too_short",
        "the schedule ends before the criterion is met: the soak would need "
        f"{format_time(extra)} more at its temperature",
    )
    return answer, [warning]


def _reduced_seconds(case: Case, run: SteppedRun, time_s: float | None = None) -> float:
    """The answer in seconds at D_ref: the clock time, or under a schedule ∫D dt / D_ref."""
    time_s = run.time_s if time_s is None else time_s
    schedule = case.schedule
    if schedule is None:
        return time_s
    extra = max(time_s - schedule.duration_s, 0.0)
    longer = schedule.with_soak_extended(extra) if extra > 0 else schedule
    return longer.reduced(time_s) / case.medium.diffusivity_m2_per_s


def _fastest_diffusivity(case: Case, facts: Facts) -> float:
    """The largest D the stepped body sees (a schedule's D_ref; D(c) over the values met)."""
    law = case.medium.nonlinear
    if law is None:
        return case.medium.diffusivity_m2_per_s
    low, high = case.start.value_range
    return float(np.max(law.diffusivity(np.array([low, high, facts.final_value]))))


def _bisected(faces: FloatArray) -> FloatArray:
    """Every cell split at its middle: the grid whose every second face is ``faces``."""
    return np.sort(np.r_[faces, 0.5 * (faces[1:] + faces[:-1])])


def settle_stepped(case: Case, furnace_lag: FurnaceLag) -> SettlingAnswer:
    """No eigen-expansion: stepped in time on three nested grids, reported as the eigen
    engine reports its grids, with the time-stepping error measured by a second run at a
    tighter step tolerance and added to the estimate. Grids are halved until the
    estimate meets the accuracy asked or the cell cap is reached. The step tolerance
    starts at the accuracy and is tightened first, on the coarsest grid, until its share of
    the error is at most half the accuracy."""
    criterion = case.criterion
    assert criterion is not None
    facts = Facts.of(case)
    rtol = STEPPED_RTOL_PER_ACCURACY * case.accuracy

    found: list[float] = []  # the soak lengthenings found so far, the last first used
    budget = WorkBudget(STEP_BUDGET)

    def run(faces: FloatArray, rtol: float) -> SteppedRun:
        stepped = _stepped_time(case, faces, rtol, budget, found[-1] if found else None)
        if case.schedule is not None and stepped.time_s > case.schedule.duration_s:
            found.append(stepped.time_s - case.schedule.duration_s)
        return stepped

    # the coarsest grid, uniform, says how far the diffusion has got by the answer; an
    # early answer gets grids graded toward the surfaces instead, as the eigen engine does
    faces = build_mesh(case, STEPPED_FIRST_CELLS, None)
    glance = run(faces[::4], rtol)
    reach = math.sqrt(_fastest_diffusivity(case, facts) * _reduced_seconds(case, glance))
    if reach < 0.25 * case.body.wall_m:
        faces = build_mesh(case, STEPPED_FIRST_CELLS, reach)
        glance = run(faces[::4], rtol)
    # the step tolerance's share of the error: the coarsest grid again at a tighter one,
    # tightening until that share is at most half the accuracy asked
    while True:
        tighter = run(faces[::4], rtol / STEPPED_TIGHTER)
        stepping_error = STEPPED_STEPPING_SAFETY * abs(glance.time_s / tighter.time_s - 1)
        if stepping_error <= 0.5 * case.accuracy or rtol < STEPPED_MIN_RTOL:
            break
        rtol /= STEPPED_TIGHTER
        glance = tighter
    runs = [glance, *(run(faces[::scale], rtol) for scale in (2, 1))]
    while True:
        time_s, grid_error, _ = three_grid_estimate(runs[2].time_s, runs[1].time_s, runs[0].time_s)
        error = grid_error + stepping_error
        if error <= case.accuracy or 2 * (faces.size - 1) > STEPPED_MAX_CELLS:
            break
        faces = _bisected(faces)
        runs = [*runs[1:], run(faces, rtol)]
    fine = runs[-1]
    warnings = []
    if error > case.accuracy:
        warnings.append(
            (
                "resolution_capped",
                f"the time-stepped grids and step tolerances leave an estimated {error:.2g} "
                "of the time, more than the accuracy asked",
            )
        )
    schedule = None
    lag_assumptions: list[str] = []
    if case.schedule is not None:
        schedule, schedule_warnings = _stepped_schedule_answer(case, time_s)
        lag_warnings, lag_assumption = furnace_lag(case)
        warnings += schedule_warnings + lag_warnings
        lag_assumptions.append(lag_assumption)
    return SettlingAnswer(
        time_s=time_s,
        definition=(
            "first_crossing"
            if criterion.measure == "reaches" or case.surroundings is not None
            else "monotone"
        ),
        fourier_number=_reduced_seconds(case, fine, time_s) / case.diffusion_time_s,
        final_value=facts.final_value,
        slowest_rate_per_s=None,
        slowest_excited_rate_per_s=None,
        measures=fine.measures,
        engine="finite_volume",
        resolution=fine.cells,
        estimated_relative_error=error,
        biot=common_biot(case) if case.schedule is not None else None,
        schedule=schedule,
        warnings=warnings,
        assumptions=[
            _STEPPED_TRANSPORT["nonlinear" if case.medium.nonlinear else "schedule"],
            *BASE_ASSUMPTIONS,
            surroundings_assumption(case),
            describe_final_state(case),
            *lag_assumptions,
        ],
        cautions=list(CAUTIONS),
        path="time_stepping",
    )


def history_stepped(case: Case, times: FloatArray, chosen: NDArray[np.intp]) -> HistoryAnswer:
    """A time-stepped case's history: one run on a fine grid (graded toward the surfaces
    when the earliest time's diffusion length is short) at a tenth of the settling path's
    step tolerance, its states read at the times asked from the stepper's interpolant."""
    order = np.argsort(times)
    ascending = times[order]
    facts = Facts.of(case)
    reach = math.sqrt(_fastest_diffusivity(case, facts) * float(ascending[0]))
    length = reach if reach < 0.25 * case.body.wall_m else None
    faces = build_mesh(case, HISTORY_STEPPED_CELLS, length)
    positions = np.linspace(case.body.inner_m, case.body.extent_m, SNAPSHOT_POINTS)
    rank = np.empty_like(order)
    rank[order] = np.arange(order.size)
    stepped = history_in_time(
        case,
        faces,
        STEPPED_RTOL_PER_ACCURACY * case.accuracy / 10,
        ascending,
        [int(rank[i]) for i in chosen],
        positions,
    )
    measures: dict[str, list[float | None]] = {
        name: [finite_or_none(values[int(rank[i])]) for i in range(times.size)]
        for name, values in stepped.measures.items()
    }
    snapshots = [
        Snapshot(float(times[i]), positions.tolist(), profile.tolist())
        for i, profile in zip(chosen, stepped.profiles, strict=True)
    ]
    return HistoryAnswer(
        times_s=times.tolist(),
        measures=measures,
        snapshots=snapshots,
        bath_values=None,
        final_value=final_value_of(case),
        engine="finite_volume",
        resolution=stepped.cells,
        path="time_stepping",
    )
