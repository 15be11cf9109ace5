"""From a case to an answer: choose the engine, search, then measure at the answer.

This module (with ``stepped.py`` for the cases that have no modes) is the only place that
knows engines, measures and the settling search together; the answers it returns are the
plain types of ``answers.py``, which the API turns into responses.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
from numpy.typing import NDArray

from service.answers import (
    BASE_ASSUMPTIONS,
    CAUTIONS,
    HOMOGENEOUS,
    SEMI_INFINITE_ASSUMPTION,
    SNAPSHOT_POINTS,
    STEADY_SURROUNDINGS,
    WARNING_CODES,
    DepthAnswer,
    HistoryAnswer,
    ScheduleAnswer,
    SettlingAnswer,
    Snapshot,
    assumptions_for,
    common_biot,
    describe_final_state,
    final_value_of,
    finite_or_none,
    format_time,
)
from service.depth import DepthAxis, depth_axis, depth_on
from service.engines import Crossing, Engine, ModalSolution, SeriesEngine, make_engines
from service.engines.common import (
    FOURIER_FLOOR,
    ROOT_RTOL,
    Interval,
    exchange_intervals,
    interval_index,
)
from service.engines.finite_volume import FiniteVolumeEngine, build_mesh, three_grid_estimate
from service.errors import InvalidInput, NotApplicable, NumericalFailure
from service.lumped import LUMPED_BIOT, classical_biot, lumped_answer
from service.measures import (
    Facts,
    Measure,
    ProductMeasure,
    build_measure,
    defined_measures,
)
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
from service.settling import find_settling_time
from service.stepped import history_stepped, settle_stepped

__all__ = ["Solver"]

FloatArray = NDArray[np.float64]

# Cases the API may answer on its event loop: series engine, a start of at most this many
# pieces, an accuracy no tighter than this.
QUICK_START_PIECES = 16
QUICK_ACCURACY = 1e-8
# A measure this far below its level at the earliest time searched is met from t → 0.
IMMEDIATE_FRACTION = 1e-6

# The part is said to lag the furnace when its thermal settling time (the whole section within
# this fraction of a step in surface temperature, every surface held) exceeds this share of
# the soak.
LAG_SETTLED = 0.01
LAG_SHARE = 0.1

# A semi-infinite body's slab: half-thickness at least this many √(D·t) at the answer, at
# least this absolute size, grown at most this many times; a real thickness with
# D·t/thickness² above the last figure is warned about.
SEMI_INFINITE_DEPTHS = 12.0
SEMI_INFINITE_MIN_HALF_M = 1e-9
SEMI_INFINITE_ROUNDS = 12
SEMI_INFINITE_FO = 0.05


def _interpret(
    crossing: Crossing, measure: Measure, case: Case
) -> tuple[float, list[tuple[str, str]]]:
    """The reported time and the warnings a crossing calls for."""
    warnings: list[tuple[str, str]] = []
    time_s = crossing.time_s
    if crossing.hit_floor:
        # met throughout the search, and either at the start too or so far below its level
        # at the earliest time searched that it is met from t → 0 (a point on a held surface)
        if crossing.holds_throughout and (
            measure.initial_value() <= measure.level
            or measure.value(crossing.time_s) <= IMMEDIATE_FRACTION * measure.level
        ):
            time_s = 0.0
            warnings.append(("settles_immediately", WARNING_CODES["settles_immediately"]))
        else:
            warnings.append(
                ("settles_before_resolved_time", WARNING_CODES["settles_before_resolved_time"])
            )
    if crossing.near_tangent:
        warnings.append(("near_tangent", WARNING_CODES["near_tangent"]))
    classical = classical_biot(case)
    if classical is not None and classical < LUMPED_BIOT:
        warnings.append(
            (
                "lumped_would_do",
                f"the classical Biot number on V/A is {classical:.3g}, below {LUMPED_BIOT}: a "
                "lumped (uniform-body) model would give nearly the same time",
            )
        )
    return time_s, warnings


# A depth query on finite volumes: the finest of the first three nested grids has this many
# cells, doubled until the depth's estimate meets the accuracy, never past the cap.
DEPTH_FIRST_CELLS = 128
DEPTH_MAX_CELLS = 4096


def _as_deep_slab(case: Case, half_m: float) -> Case:
    """The semi-infinite case as a symmetric slab of half-thickness ``half_m``."""
    assert case.semi_infinite is not None
    body = Body(Geometry.SLAB, 2 * half_m)
    surface = case.faces.outer
    transfer = case.semi_infinite.transfer_m_per_s
    if transfer is not None:
        surface = replace(surface, biot=transfer * half_m / case.medium.diffusivity_m2_per_s)
    return replace(
        case,
        body=body,
        start=Start.uniform(2 * half_m, float(case.start.v0[0])),
        faces=Faces.alike(body, surface),
        semi_infinite=None,
    )


def _reaction_figures(case: Case) -> tuple[float, float] | None:
    """The Thiele modulus on Lc and the effectiveness factor: the body's mean final value over
    the value at its surface's far side (the held value, or K·ambient through a film), which
    is the reaction rate achieved over the rate if all of it were at that value."""
    rate = case.medium.reaction_per_s
    if rate <= 0:
        return None
    modulus = case.characteristic_length_m * math.sqrt(rate / case.medium.diffusivity_m2_per_s)
    surface = case.faces.outer.value
    return modulus, (case.final_value / surface if surface != 0 else math.nan)


class Solver:
    """Holds the engines (and so their caches) for the life of the application."""

    def __init__(self) -> None:
        self.engines: dict[str, Engine] = make_engines()

    def _slowest_rate(self, case: Case, solution: ModalSolution) -> float:
        """D·λ1² of the body: exact where the series applies, else the engine's own."""
        series = self.engines["series"]
        assert isinstance(series, SeriesEngine)
        try:
            series.check(case)
        except NotApplicable:
            return solution.slowest_rate_per_s
        wavenumber = series.slowest_wavenumber(case) / case.characteristic_length_m
        return case.medium.diffusivity_m2_per_s * wavenumber**2

    def _engine(self, case: Case) -> Engine:
        """The engine asked for; ``auto`` is the exact series where it applies, otherwise the
        finite-volume engine."""
        if case.engine == "auto":
            series = self.engines["series"]
            try:
                series.check(case)
            except NotApplicable:
                return self.engines["finite_volume"]
            return series
        engine = self.engines.get(case.engine)
        if engine is None:
            raise NotApplicable(f"unknown engine {case.engine!r}", "/engine")
        try:
            engine.check(case)
        except NotApplicable as exc:
            if not exc.pointer:
                exc.at("/engine")
            raise
        return engine

    def furnace_lag(self, case: Case) -> tuple[list[tuple[str, str]], str]:
        """Whether the part keeps pace with its schedule: (warnings, an assumption line). The
        part's thermal settling time is that of its section with every surface held at a new
        temperature until the whole is within 1 % of it, a lower bound (a furnace heats
        through a film, which is slower)."""
        schedule = case.schedule
        assert schedule is not None
        alpha = schedule.thermal_diffusivity_m2_per_s
        if alpha is None:
            return [], (
                "The whole body is taken at the schedule's temperature at every moment; give "
                "medium.thermal_diffusivity to have its lag behind the furnace checked."
            )
        body = case.body
        thermal = Case(
            body=body,
            medium=Medium(alpha),
            start=Start.uniform(body.extent_m, 0.0, body.inner_m),
            faces=Faces.alike(body, Surface(SurfaceKind.FIXED_VALUE, 1.0)),
            criterion=Criterion("max_deviation", tolerance=LAG_SETTLED),
        )
        lag_s = self.settle(thermal).time_s
        soak = schedule.segments[schedule.soak].duration_s
        text = (
            f"the section's thermal settling time (within {LAG_SETTLED:.0%} of a step in surface "
            f"temperature, α = {alpha:.3g} m²/s, every surface held) is {format_time(lag_s)}, "
            f"{lag_s / soak:.0%} of the {format_time(soak)} soak"
        )
        if lag_s > LAG_SHARE * soak:
            return [
                (
                    "furnace_lag",
                    f"{text}: the interior lags the furnace, so the diffusion there runs behind "
                    "the schedule and the time given is too short; a film between furnace and "
                    "part makes the lag longer still",
                )
            ], "The whole body is taken at the schedule's temperature at every moment."
        return [], (
            f"The whole body is taken at the schedule's temperature at every moment: {text}, "
            "small enough for that."
        )

    def depth(
        self, case: Case, at_s: float, value: float, surface_pointer: str = "/surface"
    ) -> DepthAnswer:
        """The shallowest depth below the exchanging surface where the body-side value is
        ``value`` at clock time ``at_s`` (``service.depth``), with its estimated error: from the
        series' tail bound over the profile's slope there, or from three nested grids."""
        refusals = [
            (case.needs_stepping, "time-stepped cases", "/medium"),
            (case.product is not None, "bars, blocks and short cylinders", "/body"),
            (case.surroundings is not None, "surroundings that follow a schedule", "/surface"),
            (
                case.bath is not None and bool(case.bath.exchanges_s),
                "bath exchanges",
                "/bath/exchanges",
            ),
        ]
        for refused, what, pointer in refusals:
            if refused:
                raise InvalidInput(f"depth queries are not offered here for {what}", pointer)
        reference = case.medium.diffusivity_m2_per_s
        time_s = at_s
        if case.schedule is not None:
            time_s = case.schedule.reduced(at_s) / reference
        warnings: list[tuple[str, str]] = []
        work, axis = case, None
        if case.semi_infinite is not None:
            half = SEMI_INFINITE_DEPTHS * math.sqrt(reference * time_s)
            work = _as_deep_slab(case, half)
            axis = depth_axis(work, range_m=half / 2)
            thickness = case.semi_infinite.real_thickness_m
            if thickness is not None and reference * time_s / thickness**2 > SEMI_INFINITE_FO:
                warnings.append(
                    (
                        "semi_infinite_beyond_validity",
                        f"by then D·t/thickness² = {reference * time_s / thickness**2:.3g} for "
                        f"the real {thickness:.3g} m: above {SEMI_INFINITE_FO}, its far side "
                        "already matters and a slab of that thickness should be used",
                    )
                )
        axis = axis or depth_axis(work, pointer=surface_pointer)
        earliest = FOURIER_FLOOR * work.diffusion_time_s
        if time_s < earliest:
            raise InvalidInput(
                f"that is earlier than Fo = {FOURIER_FLOOR:g} ({earliest:.3g} s at D here), the "
                "earliest time the engines resolve",
                "/at",
            )
        engine = self._engine(work)
        if isinstance(engine, SeriesEngine):
            solution = engine.solution(work, time_s)
            depth, spread, slope = depth_on(work, solution, time_s, value, axis)
            error: float | None = None
            if depth is not None:
                assert solution.tail is not None
                bound = solution.tail(time_s).sup * float(
                    np.max(work.partition_at(axis.positions(np.array([depth]))))
                )
                error = bound / (slope * depth) if depth > 0 and slope > 0 else 0.0
            resolution, engine_name = solution.resolution, solution.engine
        else:
            depth, spread, error, resolution = self._depth_on_grids(work, time_s, value, axis)
            engine_name = "finite_volume"
        if error is not None and error > case.accuracy:
            warnings.append(
                (
                    "resolution_capped",
                    f"the depth's estimated error, {error:.2g} of it, is above the accuracy asked",
                )
            )
        assumptions = assumptions_for(work, Facts.of(work))
        length, convention = case.characteristic_length_m, case.length_convention
        if case.semi_infinite is not None:
            assumptions = [*assumptions[:-1], SEMI_INFINITE_ASSUMPTION]
            length, convention = (
                (depth, "depth") if depth else (math.sqrt(reference * time_s), "diffusion_length")
            )
        return DepthAnswer(
            depth_m=depth,
            measured_from="surface" if case.semi_infinite is not None else axis.name,
            profile_range=spread,
            fourier_number=reference * time_s / length**2,
            length_m=length,
            length_convention=convention,
            engine=engine_name,
            resolution=resolution,
            estimated_relative_error=error,
            warnings=warnings,
            assumptions=assumptions,
        )

    def _depth_on_grids(
        self, case: Case, time_s: float, value: float, axis: DepthAxis
    ) -> tuple[float | None, tuple[float, float], float | None, int]:
        """The depth on three nested finite-volume grids (graded toward the surfaces when the
        diffusion length is short), doubled until the estimate meets the accuracy."""
        engine = self.engines["finite_volume"]
        assert isinstance(engine, FiniteVolumeEngine)
        reach = math.sqrt(case.medium.diffusivity_m2_per_s * time_s)
        length = reach if reach < 0.25 * case.body.wall_m else None
        cells = DEPTH_FIRST_CELLS
        while True:
            faces = build_mesh(case, cells, length)
            found = [
                depth_on(case, engine.solution_on(case, faces[::scale]), time_s, value, axis)
                for scale in (4, 2, 1)
            ]
            depths = [f[0] for f in found]
            spread = found[-1][1]
            if any(d is None for d in depths):
                return depths[-1], spread, None, faces.size - 1
            coarsest, coarse, fine = (float(d) for d in depths if d is not None)
            # the profile between cell centres is linear: its error is not smooth in the cell
            # size, so the fine grid is reported with its grid convergence index
            depth, error, _ = three_grid_estimate(fine, coarse, coarsest, extrapolate=False)
            if error <= case.accuracy or 2 * cells > DEPTH_MAX_CELLS:
                return depth, spread, error, faces.size - 1
            cells *= 2

    def is_quick(self, case: Case) -> bool:
        """Whether ``case`` is answered by the series engine from a start of few pieces, which
        takes well under a millisecond (a few milliseconds at most, for very early answers)."""
        if case.needs_stepping or not (
            case.engine in ("auto", "series")
            and case.start.x0.size <= QUICK_START_PIECES
            and case.accuracy >= QUICK_ACCURACY
        ):
            return False
        try:
            self.engines["series"].check(case)
        except NotApplicable:
            return False  # auto will run the finite-volume engine: keep it off the event loop
        return True

    def settle(self, case: Case) -> SettlingAnswer:
        """The settling time of ``case`` under its criterion, with every measure at that time."""
        if case.semi_infinite is not None:
            return self._settle_semi_infinite(case)
        if case.product is not None:
            return self._settle_product(case)
        if case.needs_stepping:
            return settle_stepped(case, self.furnace_lag)
        return self._settle(case)

    def _settle_product(self, case: Case) -> SettlingAnswer:
        """A bar, block or short cylinder: each direction's exact series, their product
        searched (it falls monotonically), the measures that separate reported."""
        product, criterion = case.product, case.criterion
        assert product is not None and criterion is not None
        facts = Facts.of(case)
        series = self.engines["series"]
        floor_s = FOURIER_FLOOR * min(d.diffusion_time_s for d in product.directions)
        solutions = [series.solution(d, floor_s) for d in product.directions]
        centres = [
            d.body.extent_m / 2 if d.body.geometry is Geometry.SLAB else 0.0
            for d in product.directions
        ]
        deviation = facts.max_abs_start
        kinds = {
            "value_at": "centre",
            "reaches": "centre",
            "max_deviation": "centre",
            "mean_square_deviation": "square",
            "fraction_equilibrated": "mean",
        }
        levels = {
            "value_at": (
                criterion.absolute_tolerance / deviation
                if criterion.absolute_tolerance is not None
                else criterion.tolerance
            ),
            "max_deviation": criterion.tolerance,
            "mean_square_deviation": criterion.tolerance,
            "fraction_equilibrated": 1.0 - (criterion.fraction or 0.0),
        }
        if criterion.measure == "reaches":
            assert criterion.value is not None
            target = (criterion.value - facts.final_value) / (
                float(case.start.v0[0]) - facts.final_value
            )
            if not 0.0 < target < 1.0:
                raise InvalidInput(
                    "the centre never reaches that value: it moves from the start toward the "
                    "surroundings' value and stops there",
                    "/criterion/value",
                )
            levels["reaches"] = target

        def measure(name: str, level: float) -> ProductMeasure:
            return ProductMeasure(facts, solutions, centres, kinds[name], name, level)

        level = levels[criterion.measure]
        assert level is not None
        compared = measure(criterion.measure, level)
        crossing = find_settling_time(compared, floor_s)
        time_s = crossing.time_s
        reported = {
            name: finite_or_none(float(measure(name, 1.0).values(np.array([time_s]))[0]))
            for name in ("max_deviation", "mean_square_deviation", "fraction_equilibrated")
        }
        reported["fraction_equilibrated"] = finite_or_none(
            1.0 - (reported["fraction_equilibrated"] or 0.0)
        )
        if criterion.measure in ("value_at", "reaches"):
            reported[criterion.measure] = finite_or_none(float(compared.value(time_s)))
        rates = [float(sol.rates_per_s[0]) for sol in solutions]
        excited = [sol.slowest_excited_rate_per_s for sol in solutions]
        # each series is truncated far below the accuracy (see SeriesEngine.solution); the
        # root-finder's tolerance dominates what is left
        error = max(ROOT_RTOL, max(case.accuracy * 1e-4, 1e-12))
        return SettlingAnswer(
            time_s=time_s,
            definition="first_crossing" if criterion.measure == "reaches" else "monotone",
            fourier_number=time_s / case.diffusion_time_s,
            final_value=facts.final_value,
            slowest_rate_per_s=sum(rates),
            slowest_excited_rate_per_s=sum(excited),
            measures=reported,
            engine="series",
            resolution=sum(sol.resolution for sol in solutions),
            estimated_relative_error=error,
            biot=None,
            warnings=[],
            assumptions=[
                HOMOGENEOUS,
                *BASE_ASSUMPTIONS,
                STEADY_SURROUNDINGS,
                "The body is solved as the product of one-dimensional solutions ("
                + ", ".join(product.names)
                + "), exact for a uniform start and the same surface all round; Lc and the "
                "Fourier number are those of the first direction.",
                describe_final_state(case),
            ],
            cautions=list(CAUTIONS),
        )

    def _history_product(
        self, case: Case, times: FloatArray, chosen: NDArray[np.intp]
    ) -> HistoryAnswer:
        """A bar, block or short cylinder over time: the measures that separate (the centre's
        deviation as the largest, the mean square, the fraction equilibrated) from each
        direction's exact series, and profiles along the first direction through the centre,
        c = c_f + (c0 − c_f)·Π θ_i."""
        product = case.product
        assert product is not None
        facts = Facts.of(case)
        series = self.engines["series"]
        floor_s = FOURIER_FLOOR * min(d.diffusion_time_s for d in product.directions)
        solutions = [
            series.solution(d, min(floor_s, float(np.min(times)))) for d in product.directions
        ]
        centres = [
            d.body.extent_m / 2 if d.body.geometry is Geometry.SLAB else 0.0
            for d in product.directions
        ]
        measures: dict[str, list[float | None]] = {}
        for name, kind in (
            ("max_deviation", "centre"),
            ("mean_square_deviation", "square"),
            ("fraction_equilibrated", "mean"),
        ):
            values = ProductMeasure(facts, solutions, centres, kind, name, 1.0).values(times)
            if name == "fraction_equilibrated":
                values = 1.0 - values
            measures[name] = [finite_or_none(float(v)) for v in values]
        first = product.directions[0]
        positions = np.linspace(first.body.inner_m, first.body.extent_m, SNAPSHOT_POINTS)
        change = float(case.start.v0[0]) - facts.final_value
        snapshots = []
        for i in chosen.tolist():
            at = np.array([times[i]])
            theta = solutions[0].values_at(positions, at)[0] / change
            for solution, centre in zip(solutions[1:], centres[1:], strict=True):
                theta = theta * float(solution.values_at(np.array([centre]), at)[0, 0]) / change
            profile = facts.final_value + change * theta
            snapshots.append(Snapshot(float(times[i]), positions.tolist(), profile.tolist()))
        return HistoryAnswer(
            times_s=times.tolist(),
            measures=measures,
            snapshots=snapshots,
            bath_values=None,
            final_value=final_value_of(case),
            engine="series",
            resolution=sum(solution.resolution for solution in solutions),
        )

    def _settle_semi_infinite(self, case: Case) -> SettlingAnswer:
        """A semi-infinite body as a symmetric slab deep enough that its middle is untouched
        at the answer: half-thickness ≥ 12·√(D·t) (erfc(6) ≈ 2e-17 of the change reaches
        there), grown until the answer found on it satisfies that."""
        assert case.semi_infinite is not None and case.criterion is not None
        diffusivity = case.medium.diffusivity_m2_per_s
        depth = case.criterion.position_m or 0.0
        half = max(4.0 * depth, SEMI_INFINITE_MIN_HALF_M)
        for _ in range(SEMI_INFINITE_ROUNDS):
            answer = self._settle(_as_deep_slab(case, half))
            needed = max(SEMI_INFINITE_DEPTHS * math.sqrt(diffusivity * answer.time_s), 4 * depth)
            if half >= needed:
                break
            half = 1.5 * needed
        warnings = [w for w in answer.warnings if w[0] != "lumped_would_do"]
        thickness = case.semi_infinite.real_thickness_m
        if thickness is not None and diffusivity * answer.time_s / thickness**2 > SEMI_INFINITE_FO:
            warnings.append(
                (
                    "semi_infinite_beyond_validity",
                    f"by then D·t/thickness² = {diffusivity * answer.time_s / thickness**2:.3g} "
                    f"for the real {thickness:.3g} m: above {SEMI_INFINITE_FO}, its far side "
                    "already matters and a slab of that thickness should be used",
                )
            )
        name = case.criterion.measure
        return replace(
            answer,
            fourier_number=answer.time_s / case.diffusion_time_s,
            slowest_rate_per_s=None,
            slowest_excited_rate_per_s=None,
            measures={name: answer.measures[name]},
            biot=None,
            lumped=None,
            warnings=warnings,
            assumptions=[*answer.assumptions[:-1], SEMI_INFINITE_ASSUMPTION],
        )

    def _settle(self, case: Case) -> SettlingAnswer:
        criterion = case.criterion
        if criterion is None:
            raise InvalidInput("a settling time needs a criterion", "/criterion")
        facts = Facts.of(case)
        engine = self._engine(case)

        built: dict[int, tuple[ModalSolution, Measure]] = {}

        def measure_on(solution: ModalSolution) -> Measure:
            entry = built.get(id(solution))
            if entry is None or entry[0] is not solution:
                entry = (solution, build_measure(case, facts, solution, criterion))
                built[id(solution)] = entry
            return entry[1]

        def search(solution: ModalSolution, floor_s: float, near_s: float | None) -> Crossing:
            return find_settling_time(measure_on(solution), floor_s, near_s)

        def truncation_error(solution: ModalSolution, time_s: float) -> float:
            if solution.tail is None or time_s <= 0:
                return 0.0
            measure = measure_on(solution)
            error = measure.truncation(solution.tail(time_s))
            step = 1e-6 * time_s
            slope = abs(measure.value(time_s + step) - measure.value(time_s - step)) / (2 * step)
            return error / (slope * time_s) if slope > 0 else error

        try:
            run = engine.settle(case, search, truncation_error)
        except (ArithmeticError, ValueError, MemoryError) as exc:
            raise NumericalFailure(
                "the engine could not represent this case in floating point (a rate or time "
                f"beyond its range: {exc}); check the inputs' magnitudes",
                "/surface" if common_biot(case) is not None else "",
            ) from exc
        crossing = run.crossing
        measure = measure_on(run.solution)
        time_s, warnings = _interpret(crossing, measure, case)
        warnings = list(run.warnings) + warnings

        measured = defined_measures(case, facts, run.solution, criterion, measure)
        values: dict[str, float | None] = {}
        for name, each in measured.items():
            reported = (
                float(each.reported(np.array([time_s]))[0]) if time_s > 0 else each.initial_value()
            )
            values[name] = finite_or_none(reported)
        excited = run.solution.slowest_excited_rate_per_s
        biot = common_biot(case)
        fourier = time_s / case.diffusion_time_s
        schedule = None
        lag_assumptions: list[str] = []
        if case.schedule is not None:
            # the engines ran at D_ref in reference time; ∫D dt = D_ref·t_ref is exact
            reduced = time_s * case.medium.diffusivity_m2_per_s
            time_s, segment, extra = case.schedule.clock_time(reduced)
            schedule = ScheduleAnswer(reduced, segment, case.schedule.duration_s, extra)
            if segment is None:
                warnings.append(
                    (
                        "schedule_too_short",
                        f"the schedule ends before the criterion is met: the soak would need "
                        f"{format_time(extra)} more at its temperature",
                    )
                )
            lag_warnings, lag_assumption = self.furnace_lag(case)
            warnings += lag_warnings
            lag_assumptions.append(lag_assumption)
        return SettlingAnswer(
            time_s=time_s,
            definition=crossing.definition,
            fourier_number=fourier,
            final_value=final_value_of(case),
            slowest_rate_per_s=self._slowest_rate(case, run.solution),
            slowest_excited_rate_per_s=excited,
            measures=values,
            engine=run.solution.engine,
            resolution=run.solution.resolution,
            # a start drawn by chords moves the slowest mode's amplitude by at most their sag,
            # and the time by at most that over λ1·t (≥ 1 for tolerances below 1/e)
            estimated_relative_error=max(
                run.estimated_relative_error, case.start.representation_error
            ),
            biot=biot,
            lumped=lumped_answer(case, facts),
            schedule=schedule,
            reaction=_reaction_figures(case),
            met_after_exchange=(
                sum(1 for t in case.bath.exchanges_s if t <= time_s)
                if case.bath is not None and case.bath.exchanges_s
                else None
            ),
            warnings=warnings,
            assumptions=assumptions_for(case, facts) + lag_assumptions,
            cautions=list(CAUTIONS),
        )

    def history(
        self, case: Case, times_s: list[float] | None, time_count: int | None, snapshot_count: int
    ) -> HistoryAnswer:
        """Every defined measure at the given times (or log-spread around the settling time)."""
        if times_s is None:
            assert time_count is not None
            settled = self.settle(case).time_s
            if settled <= 0:
                raise InvalidInput(
                    "the criterion is met at once, so there is no span to spread "
                    "times over; give 'times' instead",
                    "/time_count",
                )
            times = np.geomspace(1e-3 * settled, 2.0 * settled, time_count)
        else:
            times = np.asarray(times_s, dtype=float)
            earliest = FOURIER_FLOOR * case.diffusion_time_s
            for index, time_s in enumerate(times_s):
                if time_s < earliest:
                    raise InvalidInput(
                        f"{time_s:g} s is earlier than Fo = {FOURIER_FLOOR:g} ({earliest:.3g} s "
                        "here), the earliest time the engines resolve",
                        f"/times/{index}",
                    )
        clock = times
        chosen = (
            np.unique(
                np.linspace(0, times.size - 1, min(snapshot_count, times.size)).round().astype(int)
            )
            if snapshot_count > 0
            else np.array([], dtype=int)
        )
        if case.needs_stepping:
            return history_stepped(case, times, chosen)
        if case.product is not None:
            return self._history_product(case, times, chosen)
        reach = case.body.extent_m
        if case.semi_infinite is not None:
            # deep enough for the latest time asked; profiles down to about 6·√(D·t)
            depth = case.criterion.position_m if case.criterion is not None else None
            spread = math.sqrt(case.medium.diffusivity_m2_per_s * float(np.max(times)))
            half = max(SEMI_INFINITE_DEPTHS * spread, 4.0 * (depth or 0.0))
            case = _as_deep_slab(case, half)
            reach = half / 2
        if case.schedule is not None:
            # clock times in the schedule → the engines' reference time, τ(t)/D_ref
            schedule, reference = case.schedule, case.medium.diffusivity_m2_per_s
            times = np.array([schedule.reduced(float(t)) / reference for t in times])
        facts = Facts.of(case)
        engine = self._engine(case)
        solution = engine.solution(case, float(np.min(times)))
        measured = defined_measures(case, facts, solution, case.criterion)
        series: dict[str, list[float | None]] = {}
        for name, each in measured.items():
            series[name] = [finite_or_none(float(v)) for v in each.reported(times)]
        positions = np.linspace(case.body.inner_m, reach, SNAPSHOT_POINTS)
        # between bath exchanges each stretch of time follows its own restarted solution
        intervals = [Interval(0.0, solution, case.final_state.value)]
        if case.bath is not None and case.bath.exchanges_s:
            intervals = exchange_intervals(
                solution, case.final_state.value, case.bath.exchanges_s, case.bath.start_value
            )
        stretch = interval_index(intervals, times)
        snapshots = []
        for i in chosen.tolist():
            interval = intervals[int(stretch[i])]
            elapsed = np.array([times[i] - interval.start_s])
            potential = interval.solution.values_at(positions, elapsed)[0]
            if interval.start_s == 0.0:
                potential = potential + case.final_state.values(positions)
            else:
                potential = potential + interval.final_value
            profile = potential * case.partition_at(positions)
            snapshots.append(Snapshot(float(times[i]), positions.tolist(), profile.tolist()))
        bath_values = None
        if case.bath is not None and solution.bath_basis is not None:
            values = np.empty(times.size)
            for i, interval in enumerate(intervals):
                chosen_times = stretch == i
                bath = interval.solution.bath_basis
                assert bath is not None
                elapsed = times[chosen_times] - interval.start_s
                deviation = interval.solution.weighted(elapsed) @ bath
                values[chosen_times] = interval.final_value + deviation
            bath_values = [float(v) for v in values / case.bath.to_potential]
        for i, snapshot in enumerate(snapshots):
            snapshots[i] = replace(snapshot, time_s=float(clock[chosen[i]]))
        return HistoryAnswer(
            times_s=clock.tolist(),
            measures=series,
            snapshots=snapshots,
            bath_values=bath_values,
            final_value=final_value_of(case),
            engine=solution.engine,
            resolution=solution.resolution,
        )
