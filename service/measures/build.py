"""Which measure a criterion names, built for a case and its solution; the measures a
case defines."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
from numpy.typing import NDArray

from service.engines.common import (
    ModalSolution,
    TailBound,
    exchange_intervals,
)
from service.errors import InvalidInput
from service.measures.base import Facts, Measure
from service.measures.composite import (
    ExchangedBathValue,
    ExchangedRemainingFraction,
    Surrounded,
    _Exchanged,
)
from service.measures.signed import (
    BathMeanSquare,
    BathValue,
    FractionEquilibrated,
    Reaches,
    RemainingFraction,
    ValueAt,
)
from service.measures.spread import (
    DirichletEnergy,
    MaxDeviation,
    MeanSquareDeviation,
    RelativeStandardDeviation,
    ResidualSegregation,
)
from service.physics import Case, Criterion

FloatArray = NDArray[np.float64]

MEASURES: dict[str, type[Measure]] = {
    cls.name: cls
    for cls in (
        MeanSquareDeviation,
        MaxDeviation,
        RelativeStandardDeviation,
        DirichletEnergy,
        FractionEquilibrated,
        ValueAt,
        BathValue,
        RemainingFraction,
        Reaches,
        ResidualSegregation,
    )
}


def build_measure(
    case: Case, facts: Facts, solution: ModalSolution, criterion: Criterion
) -> Measure:
    """The measure a criterion names, on one solution, with its level."""
    name = criterion.measure
    if name == "rsd" and facts.rsd_refusal:
        raise InvalidInput(facts.rsd_refusal, "/criterion/measure")
    with_bath = solution.bath_basis is not None
    if with_bath and name in _NOT_WITH_BATH:
        raise InvalidInput(_NOT_WITH_BATH[name], "/criterion/measure")
    if case.bath is not None and case.bath.exchanges_s:
        return _exchanged(case, facts, solution, criterion)
    if case.surroundings is not None:
        return _surrounded(case, facts, solution, criterion)
    return _plain_measure(case, facts, solution, criterion)


def _plain_measure(
    case: Case, facts: Facts, solution: ModalSolution, criterion: Criterion
) -> Measure:
    """The measure a criterion names when its surroundings do not change."""
    name = criterion.measure
    with_bath = solution.bath_basis is not None
    if name == "mean_square_deviation" and with_bath:
        assert criterion.tolerance is not None
        return BathMeanSquare(facts, solution, criterion.tolerance)
    if name == "bath_value":
        return _bath_value(case, facts, solution, criterion)
    if name == "reaches":
        return _reaches(case, facts, solution, criterion)
    if name == "residual_segregation" and (case.faces.exchanging or not facts.start_range > 0):
        raise InvalidInput(
            "residual_segregation is for a sealed body whose start varies (a segregation "
            "cell): there the range only narrows",
            "/criterion/measure",
        )
    if name == "remaining_fraction":
        assert criterion.fraction is not None
        return _remaining_fraction(facts, solution, criterion.fraction)
    if name == "fraction_equilibrated":
        if facts.fraction_refusal:
            raise InvalidInput(facts.fraction_refusal, "/criterion/measure")
        assert criterion.fraction is not None
        return FractionEquilibrated(facts, solution, 1.0 - criterion.fraction)
    if name == "value_at":
        assert criterion.position_m is not None
        is_absolute = criterion.absolute_tolerance is not None
        point = np.array([criterion.position_m])
        # an absolute tolerance is in value units; the engines work in the potential c/K
        level = (
            criterion.absolute_tolerance / float(case.partition_at(point)[0])
            if criterion.absolute_tolerance is not None
            else criterion.tolerance
        )
        assert level is not None
        start_deviation = float(case.start.values(point)[0] - case.final_state.values(point)[0])
        return ValueAt(
            facts, solution, level, criterion.position_m, is_absolute, abs(start_deviation)
        )
    assert criterion.tolerance is not None
    return MEASURES[name](facts, solution, criterion.tolerance)


_NOT_WITH_BATH = {
    "max_deviation": "max_deviation is not proven monotone for a body coupled to a finite "
    "bath (the bath can push the body's largest deviation up again); use "
    "mean_square_deviation, value_at or fraction_equilibrated",
    "dirichlet_energy": "the gradient energy is not defined here for a body coupled to a "
    "finite bath; use mean_square_deviation",
    "rsd": "rsd is not offered for a body coupled to a finite bath; use mean_square_deviation",
}


_SURROUNDED_KINDS = {
    "mean_square_deviation": "square",
    "fraction_equilibrated": "mean",
    "value_at": "point",
    "max_deviation": "max",
}


def _surrounded(
    case: Case, facts: Facts, solution: ModalSolution, criterion: Criterion
) -> Surrounded:
    """A measure across a schedule of the surroundings (see ``Surrounded``)."""
    schedule = case.surroundings
    assert schedule is not None
    kind = _SURROUNDED_KINDS[criterion.measure]
    level = criterion.tolerance
    point, scale = None, 1.0
    if kind == "mean":
        level = 1.0 - (criterion.fraction or 0.0)
    if kind == "point":
        point = criterion.position_m
        if criterion.absolute_tolerance is not None:
            level = criterion.absolute_tolerance / float(case.partition_at(np.array([point]))[0])
        else:
            scale = facts.max_abs_start
    assert level is not None
    probe = Surrounded(
        facts, solution, level, schedule, kind, criterion.measure, _Null(facts, solution, 0.0)
    )
    after = replace(solution, amplitudes=probe.final_amplitudes)
    last = _plain_measure(case, facts, after, criterion)
    return Surrounded(facts, solution, level, schedule, kind, criterion.measure, last, point, scale)


class _Null(Measure):
    """A stand-in while the amplitudes after a schedule are worked out."""

    name = "null"
    is_monotone = True

    def values(self, times_s: FloatArray) -> FloatArray:
        return np.zeros(np.shape(times_s))

    def initial_value(self) -> float:
        return 0.0

    def truncation(self, tail: TailBound) -> float:
        return 0.0


def _exchanged(
    case: Case, facts: Facts, solution: ModalSolution, criterion: Criterion
) -> _Exchanged:
    """remaining_fraction or bath_value across the bath's exchanges."""
    bath = case.bath
    assert bath is not None
    if criterion.measure not in ("remaining_fraction", "bath_value"):
        raise InvalidInput(
            "with bath exchanges, the body is judged by 'remaining_fraction' (the share of its "
            "starting amount it still holds) or 'bath_value'",
            "/criterion/measure",
        )
    intervals = exchange_intervals(
        solution, case.final_state.value, bath.exchanges_s, bath.start_value
    )
    last = intervals[-1]
    last_facts = replace(
        facts,
        final_value=last.final_value,
        bath_start_deviation=bath.start_value - last.final_value,
    )
    if criterion.measure == "remaining_fraction":
        assert criterion.fraction is not None
        single = _remaining_fraction(last_facts, last.solution, criterion.fraction)
        return ExchangedRemainingFraction(facts, intervals, criterion.fraction, single)
    start_deviation = bath.start_value - last.final_value
    if criterion.absolute_tolerance is not None:
        level, scale = criterion.absolute_tolerance * bath.to_potential, 1.0
    else:
        if start_deviation == 0.0:
            raise InvalidInput(
                "the bath starts at the value it ends at, so a tolerance relative to its "
                "starting deviation means nothing; give 'absolute_tolerance'",
                "/criterion/tolerance",
            )
        assert criterion.tolerance is not None
        level, scale = criterion.tolerance, abs(start_deviation)
    single_bath = BathValue(last_facts, last.solution, level * scale, True)
    return ExchangedBathValue(facts, intervals, level, single_bath, scale)


def _reaches(case: Case, facts: Facts, solution: ModalSolution, criterion: Criterion) -> Reaches:
    """The point's value reaching ``criterion.value``: it must start on one side of it and
    end on the other (a value it only tends to is never attained)."""
    assert criterion.position_m is not None and criterion.value is not None
    point = np.array([criterion.position_m])
    partition = float(case.partition_at(point)[0])
    target = criterion.value / partition  # in the engines' potential
    start = float(case.start.values(point)[0])
    final = float(case.final_state.values(point)[0])
    if start == target:
        raise InvalidInput(f"the point starts at {criterion.value:.6g} already", "/criterion/value")
    span = start - target
    return Reaches(facts, solution, criterion.position_m, final - target, span)


def _bath_value(
    case: Case, facts: Facts, solution: ModalSolution, criterion: Criterion
) -> BathValue:
    bath = case.bath
    if bath is None or solution.bath_basis is None:
        raise InvalidInput("bath_value needs a 'bath'", "/criterion/measure")
    if criterion.absolute_tolerance is not None:
        return BathValue(facts, solution, criterion.absolute_tolerance * bath.to_potential, True)
    if not facts.bath_start_deviation:
        raise InvalidInput(
            "the bath starts at its final value, so a tolerance relative to its starting "
            "deviation means nothing; give 'absolute_tolerance'",
            "/criterion/tolerance",
        )
    assert criterion.tolerance is not None
    return BathValue(facts, solution, criterion.tolerance, False)


def _remaining_fraction(
    facts: Facts, solution: ModalSolution, fraction: float
) -> RemainingFraction:
    if not abs(facts.amount_start) > 0.0:
        raise InvalidInput(
            "remaining_fraction needs a body that starts holding something (its amount is "
            "counted from zero of the value units)",
            "/criterion/measure",
        )
    ends_with = facts.capacity * facts.final_value / facts.amount_start
    if not ends_with < fraction:
        raise InvalidInput(
            f"the body keeps {ends_with:.4g} of its starting amount at equilibrium, so it never "
            f"gets down to {fraction:g}; a larger bath or (more) bath exchanges would",
            "/criterion/fraction",
        )
    return RemainingFraction(facts, solution, fraction - ends_with)


def defined_measures(
    case: Case,
    facts: Facts,
    solution: ModalSolution,
    criterion: Criterion | None,
    criterion_measure: Measure | None = None,
) -> dict[str, Measure]:
    """Every measure defined for the case (value_at only when the criterion names a point),
    the criterion's own measure reused when given, the others at level 1."""
    out: dict[str, Measure] = {}
    if (case.bath is not None and case.bath.exchanges_s) or case.surroundings is not None:
        # across exchanges only the criterion's own measure is followed
        if criterion_measure is not None:
            out[criterion_measure.name] = criterion_measure
        elif criterion is not None:
            out[criterion.measure] = build_measure(case, facts, solution, criterion)
        return out
    with_bath = solution.bath_basis is not None
    for name, cls in MEASURES.items():
        if criterion_measure is not None and name == criterion_measure.name:
            out[name] = criterion_measure
        elif with_bath and name in _NOT_WITH_BATH:
            continue
        elif name == "mean_square_deviation" and with_bath:
            out[name] = BathMeanSquare(facts, solution, 1.0)
        elif name in ("reaches", "residual_segregation"):
            continue  # only as the criterion's own measure
        elif name == "bath_value":
            if with_bath and facts.bath_start_deviation:
                out[name] = BathValue(facts, solution, 1.0, False)
        elif name == "remaining_fraction":
            if with_bath and abs(facts.amount_start) > 0.0:
                out[name] = RemainingFraction(facts, solution, 1.0)
        elif (name == "rsd" and facts.rsd_refusal) or (
            name == "fraction_equilibrated" and facts.fraction_refusal
        ):
            continue
        elif name == "value_at":
            if criterion is not None and criterion.measure == "value_at":
                out[name] = build_measure(case, facts, solution, criterion)
        elif name == "fraction_equilibrated":
            out[name] = FractionEquilibrated(facts, solution, 1.0)
        else:
            out[name] = cls(facts, solution, 1.0)
    return out
