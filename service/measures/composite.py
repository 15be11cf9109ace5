"""Measures built from others: products of directions, surroundings that follow a
schedule, and bath exchanges (see the package notes)."""

from __future__ import annotations

import bisect
import math
from abc import abstractmethod
from collections.abc import Callable
from functools import cached_property

import numpy as np
from numpy.typing import NDArray

from service.engines.common import (
    Interval,
    ModalSolution,
    TailBound,
    interval_index,
)
from service.measures.base import Facts, Measure
from service.measures.signed import _SignedSum
from service.physics import SurroundingsSchedule

FloatArray = NDArray[np.float64]


class ProductMeasure(Measure):
    """A finite body as a product of one-dimensional solutions: θ = Π θ_i with θ_i each
    direction's deviation over its start. The centre value, the mean and the mean square all
    separate (∫Πθ_i = Πθ̄_i); for a uniform start with these surfaces each factor falls
    monotonically, and so does the product. ``kind`` picks the factor: 'centre', 'mean' or
    'square'."""

    is_monotone = True

    def __init__(
        self,
        facts: Facts,
        solutions: list[ModalSolution],
        centres_m: list[float],
        kind: str,
        name: str,
        level: float,
    ) -> None:
        super().__init__(facts, solutions[0], level)
        self.name = name  # type: ignore[misc]
        self.kind = kind
        deviation = facts.max_abs_start
        factor = _PRODUCT_FACTORS[kind]
        self._factors = [
            factor(solution, centre, deviation)
            for solution, centre in zip(solutions, centres_m, strict=True)
        ]
        self.solutions = solutions

    def values(self, times_s: FloatArray) -> FloatArray:
        times = np.asarray(times_s, dtype=float)
        product = np.ones(times.shape)
        for rates, coefficients in self._factors:
            product *= np.exp(-np.outer(times, rates)) @ coefficients
        return np.asarray(np.abs(product))

    def initial_value(self) -> float:
        return 1.0

    def truncation(self, tail: TailBound) -> float:
        return 0.0

    def guess_s(self) -> float:
        rate = sum(float(rates[0]) for rates, _ in self._factors)
        return max(math.log(max(1.0 / self.level, 1.0 + 1e-9)) / rate, 1e-300)


class Surrounded(Measure):
    """A measure while the surroundings follow a schedule, against where they end (f_end).

    With u = c − f_end = (f(t) − f_end) + w, w meets homogeneous surface conditions and obeys
    ∂w/∂t = D∇²w − f′(t): its modal coefficients γ_k follow γ′ = −λ_k γ − f′·a_k (a_k the
    modes' means, the expansion of 1), so on a ramp of rate r from s_j
    γ(t) = γ(s_j)·e^{−λτ} − r·a·(1 − e^{−λτ})/λ, a jump J in f changes γ by −J·a, and from
    γ(0) = b − (f(0) − f_end)·a on. After the schedule, w = u is the plain modal solution.
    ``kind``: 'square' ⟨u²⟩/⟨u0²⟩, 'mean' |⟨u⟩/⟨u0⟩|, 'point' |u(x)|/scale, 'max' max|u|."""

    is_monotone = False

    def __init__(
        self,
        facts: Facts,
        solution: ModalSolution,
        level: float,
        schedule: SurroundingsSchedule,
        kind: str,
        name: str,
        last: Measure,
        point_m: float | None = None,
        scale: float = 1.0,
    ) -> None:
        super().__init__(facts, solution, level)
        self.name = name  # type: ignore[misc]
        self.kind = kind
        self.last = last
        self.scale = scale
        rates, means = solution.rates_per_s, solution.mode_means
        final = schedule.segments[-1][0]
        gamma = solution.amplitudes - (schedule.start_value - final) * means
        value, time = schedule.start_value, 0.0
        # (start time, duration, γ at its start, f at its start, rate of f)
        self._segments: list[tuple[float, float, FloatArray, float, float]] = []
        for target, duration in schedule.segments:
            if duration == 0.0:
                gamma = gamma - (target - value) * means
                value = target
                continue
            rate = (target - value) / duration
            self._segments.append((time, duration, gamma, value - final, rate))
            decay = np.exp(-rates * duration)
            gamma = gamma * decay - rate * means * (1.0 - decay) / rates
            value, time = target, time + duration
        self._segments.append((time, math.inf, gamma, 0.0, 0.0))
        self.end_s = time
        self._point = solution.basis_at(np.array([point_m]))[0] if point_m is not None else None

    @property
    def final_amplitudes(self) -> FloatArray:
        """γ when the schedule ends: the plain modal solution's amplitudes from then on."""
        return self._segments[-1][2]

    def values(self, times_s: FloatArray) -> FloatArray:
        times = np.asarray(times_s, dtype=float)
        out = np.empty(times.shape)
        starts = np.array([segment[0] for segment in self._segments])
        index = np.searchsorted(starts, times, side="right") - 1
        rates, means = self.solution.rates_per_s, self.solution.mode_means
        for i in np.unique(index).tolist():
            chosen = index == i
            start, _, gamma0, offset0, rate = self._segments[i]
            tau = times[chosen] - start
            decay = np.exp(-np.outer(tau, rates))
            gamma = decay * gamma0 - rate * means * (1.0 - decay) / rates
            offset = offset0 + rate * tau
            out[chosen] = self._measure(offset, gamma)
        return out

    def _measure(self, offset: FloatArray, gamma: FloatArray) -> FloatArray:
        facts, means = self.facts, self.solution.mode_means
        if self.kind == "square":
            square = offset**2 + 2 * offset * (gamma @ means) + np.sum(gamma**2, axis=1)
            return np.asarray(square / facts.mean_square_start)
        if self.kind == "mean":
            return np.asarray(np.abs(offset + gamma @ means) / abs(facts.mean_start))
        if self.kind == "point":
            assert self._point is not None
            return np.asarray(np.abs(offset + gamma @ self._point) / self.scale)
        samples = offset[:, None] + gamma @ self.solution.sample_basis.T
        return np.asarray(np.max(np.abs(samples), axis=1) / facts.max_abs_start)

    def reported(self, times_s: FloatArray) -> FloatArray:
        if self.kind == "mean":  # report F itself, as fraction_equilibrated does
            times = np.asarray(times_s, dtype=float)
            return np.asarray(1.0 - self.values(times))
        return self.values(times_s)

    def initial_value(self) -> float:
        return float(self.values(np.zeros(1))[0])

    def truncation(self, tail: TailBound) -> float:
        return self.last.truncation(tail)

    def settled_after_s(self, floor_s: float) -> float:
        return self.end_s + self.last.settled_after_s(floor_s)

    def guess_s(self) -> float:
        return self.end_s + self.last.guess_s()


def _centre_factor(
    solution: ModalSolution, centre_m: float, deviation: float
) -> tuple[FloatArray, FloatArray]:
    basis = solution.basis_at(np.array([centre_m]))[0]
    return solution.rates_per_s, solution.amplitudes * basis / deviation


def _mean_factor(
    solution: ModalSolution, centre_m: float, deviation: float
) -> tuple[FloatArray, FloatArray]:
    return solution.rates_per_s, solution.amplitudes * solution.mode_means / deviation


def _square_factor(
    solution: ModalSolution, centre_m: float, deviation: float
) -> tuple[FloatArray, FloatArray]:
    return 2 * solution.rates_per_s, solution.amplitudes**2 / deviation**2


# (rates, coefficients) of one direction's factor, per kind of product measure
_PRODUCT_FACTORS: dict[
    str, Callable[[ModalSolution, float, float], tuple[FloatArray, FloatArray]]
] = {"centre": _centre_factor, "mean": _mean_factor, "square": _square_factor}


class _Exchanged(Measure):
    """A measure across bath exchanges: piecewise in time, each interval following its own
    restarted solution, searched for its last crossing over all of them. After the last
    exchange it is the single-interval measure ``last``, whose bound on monotonicity holds."""

    is_monotone = False

    def __init__(
        self, facts: Facts, intervals: list[Interval], level: float, last: _SignedSum
    ) -> None:
        super().__init__(facts, intervals[0].solution, level)
        self.intervals = intervals
        self.last = last

    @abstractmethod
    def _on(self, interval: Interval, elapsed_s: FloatArray) -> FloatArray:
        """The compared quantity within one interval, at times since it began."""

    def values(self, times_s: FloatArray) -> FloatArray:
        times = np.asarray(times_s, dtype=float)
        index = interval_index(self.intervals, times)
        out = np.empty(times.shape)
        for i in np.unique(index).tolist():
            chosen = index == i
            interval = self.intervals[i]
            out[chosen] = self._on(interval, times[chosen] - interval.start_s)
        return out

    def value(self, time_s: float) -> float:
        """One time: its interval found by bisection (the search asks this one at a time)."""
        index = bisect.bisect_right(self._starts, time_s) - 1
        interval = self.intervals[max(index, 0)]
        return float(self._on(interval, np.array([time_s - interval.start_s]))[0])

    @cached_property
    def _starts(self) -> list[float]:
        return [interval.start_s for interval in self.intervals]

    def truncation(self, tail: TailBound) -> float:
        return 0.0

    def settled_after_s(self, floor_s: float) -> float:
        start = self.intervals[-1].start_s
        return start + self.last.settled_after_s(floor_s)

    def guess_s(self) -> float:
        return self.intervals[-1].start_s + self.last.guess_s()


class ExchangedRemainingFraction(_Exchanged):
    """M(t)/M(0) across exchanges (compared with the fraction itself)."""

    name = "remaining_fraction"

    def _on(self, interval: Interval, elapsed_s: FloatArray) -> FloatArray:
        facts, solution = self.facts, interval.solution
        decay = solution.decay(elapsed_s)
        held = facts.capacity * (
            interval.final_value + decay @ (solution.amplitudes * solution.mode_means)
        )
        return np.asarray(held / facts.amount_start)

    def initial_value(self) -> float:
        return 1.0


class ExchangedBathValue(_Exchanged):
    """|bath − its value at the end of the last interval| across exchanges."""

    name = "bath_value"

    def __init__(
        self,
        facts: Facts,
        intervals: list[Interval],
        level: float,
        last: _SignedSum,
        scale: float,
    ) -> None:
        super().__init__(facts, intervals, level, last)
        self.scale = scale

    def _on(self, interval: Interval, elapsed_s: FloatArray) -> FloatArray:
        solution = interval.solution
        assert solution.bath_basis is not None
        offset = interval.final_value - self.intervals[-1].final_value
        signed = offset + solution.decay(elapsed_s) @ (solution.amplitudes * solution.bath_basis)
        return np.asarray(np.abs(signed) / self.scale)

    def initial_value(self) -> float:
        first = self.intervals[0]
        return float(self._on(first, np.zeros(1))[0])
