"""What every measure shares: the facts of a case, the refusals, and the base class."""

from __future__ import annotations

import math
from abc import ABC, abstractmethod
from dataclasses import dataclass
from typing import ClassVar

import numpy as np
from numpy.typing import NDArray

from service.engines.common import (
    ModalSolution,
    TailBound,
)
from service.errors import InvalidInput, NumericalFailure
from service.physics import Case

FloatArray = NDArray[np.float64]


# The fraction equilibrated is undefined when the amount changes by less than this
# fraction of the amount scale.
AMOUNT_FRACTION = 1e-9
# The monotone-from bound is sought on a geometric grid of times: this ratio between grid
# times (the bound may be this much later than the exact one), this many per batch, and at
# most this many batches (a span of 1e25 from the floor).
_BOUND_RATIO = 1.05
_BOUND_BATCH = 64
_BOUND_BATCHES = 19
# A start closer than this (relative) to its final state has nothing to settle.
SETTLED_FRACTION = 1e-12


@dataclass(frozen=True)
class Facts:
    """Exact properties of the case that the measures normalise by."""

    final_value: float
    max_abs_start: float
    mean_square_start: float
    mean_start: float
    diffusivity_m2_per_s: float
    # the start's range max − min (in the potential)
    start_range: float
    # the body's capacity ∫C r^m, what it holds at the start (∫C·φ0 r^m) and, with a bath,
    # the bath's starting deviation from the final state
    capacity: float
    amount_start: float
    bath_start_deviation: float | None
    rsd_refusal: str | None
    fraction_refusal: str | None

    @classmethod
    def of(cls, case: Case) -> Facts:
        """Facts of ``case``: its final state and the start's deviation from it."""
        weight = case.body_weight
        final = case.final_state
        start = case.start
        max_abs = final.max_abs_deviation(start)
        mean = final.deviation_moment(start, 1) / weight
        low, high = start.value_range
        scale = max(abs(case.final_value), abs(low), abs(high))
        if max_abs <= SETTLED_FRACTION * max(scale, np.finfo(float).tiny):
            raise InvalidInput(
                "the start already equals its final state, so there is nothing to settle",
                "/initial",
            )
        return cls(
            final_value=case.final_value,
            max_abs_start=max_abs,
            mean_square_start=final.deviation_moment(start, 2) / weight,
            mean_start=mean,
            diffusivity_m2_per_s=case.medium.diffusivity_m2_per_s,
            start_range=high - low,
            capacity=weight,
            amount_start=start.body_moment(case.body.metric),
            bath_start_deviation=(
                case.bath.start_value - final.value if case.bath is not None else None
            ),
            rsd_refusal=_rsd_refusal(case, case.final_value),
            fraction_refusal=_fraction_refusal(case, mean, scale),
        )


def _rsd_refusal(case: Case, final: float) -> str | None:
    if len({layer.partition for layer in case.layers}) > 1:
        return (
            "rsd compares values across the body, and a layered body's layers end at different "
            "values (K_i times one potential): use mean_square_deviation or max_deviation, "
            "which are taken on c/K"
        )
    if not case.final_state.is_uniform:
        return (
            "rsd needs a uniform final state; here the body ends in a steady profile between "
            "its faces, so its spread never vanishes: use mean_square_deviation or max_deviation"
        )
    if final == 0.0:
        return (
            "rsd needs a non-zero final value: the relative standard deviation divides by "
            "the mean, which tends to zero here"
        )
    values = set(case.start.signs())
    values.update(int(np.sign(end.value)) for end in case.faces.exchanging if end.value != 0.0)
    if len(values) > 1:
        return (
            "rsd needs every start and surface value to have one sign (the mean could pass "
            "through zero and the RSD depends on where zero is); use mean_square_deviation "
            "or max_deviation"
        )
    return None


def _fraction_refusal(case: Case, mean: float, scale: float) -> str | None:
    if not case.faces.exchanging:
        return (
            "fraction_equilibrated needs an amount that changes: with no_flux surfaces the "
            "amount is conserved; use mean_square_deviation, max_deviation or rsd"
        )
    if abs(mean) <= AMOUNT_FRACTION * scale:
        return (
            "fraction_equilibrated needs an amount that changes: here the body's start holds "
            "the same amount as its final state"
        )
    return None


class Measure(ABC):
    """One normalised measure on one solution; the criterion holds when value ≤ level."""

    name: ClassVar[str]
    is_monotone: ClassVar[bool]
    # whether the time sought is the first at which value ≤ level (a value reached), not the
    # last crossing
    first_crossing: ClassVar[bool] = False

    @property
    def passes_for_good(self) -> bool:
        """For a first crossing: whether the measure ends below its level (then the level is
        surely reached); otherwise only a swing before it turns monotone can reach it."""
        return True

    def __init__(self, facts: Facts, solution: ModalSolution, level: float) -> None:
        self.facts = facts
        self.solution = solution
        self.level = level

    @abstractmethod
    def values(self, times_s: FloatArray) -> FloatArray:
        """The compared quantity at each time."""

    def value(self, time_s: float) -> float:
        return float(self.values(np.array([time_s]))[0])

    def log_rate(self, time_s: float) -> tuple[float, float] | None:
        """(value, d ln(value)/dt) at a time, where a closed form exists; None otherwise."""
        return None

    def extrapolable_at(self, time_s: float) -> bool:
        """Whether a grid's error in this measure at ``time_s`` is a smooth expansion in the
        cell size, so that Richardson extrapolation across nested grids is sound. Integrals
        over the body are, and so is a value at a fixed point that is a face of every grid."""
        return True

    def reported(self, times_s: FloatArray) -> FloatArray:
        """The quantity the response reports at each time (the compared one unless a measure
        says otherwise)."""
        return self.values(times_s)

    @abstractmethod
    def initial_value(self) -> float:
        """The compared quantity for the exact start."""

    @abstractmethod
    def truncation(self, tail: TailBound) -> float:
        """Bound on the error of the compared quantity from the modes a solution leaves out."""

    def settled_after_s(self, floor_s: float) -> float:
        """A time after which the measure never increases or the criterion holds for good."""
        return floor_s

    def guess_s(self) -> float:
        """A first guess of the crossing from the slowest excited mode."""
        rate = self.solution.slowest_excited_rate_per_s
        if not rate > 0:
            raise NumericalFailure(
                "the slowest excited mode does not decay in floating point "
                "(a Biot number or diffusivity too small to represent)"
            )
        return max(math.log(max(1.0 / self.level, 1.0 + 1e-9)) / rate, 1e-300)
