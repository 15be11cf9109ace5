"""Measures of signed sums over the modes: the value at a point, the fraction
equilibrated, a value reached, and the bath's measures (see the package notes)."""

from __future__ import annotations

import math
from abc import abstractmethod
from functools import cached_property

import numpy as np
from numpy.typing import NDArray

from service.engines.common import (
    EXCITED_FRACTION,
    ModalSolution,
    TailBound,
)
from service.measures.base import _BOUND_BATCH, _BOUND_BATCHES, _BOUND_RATIO, Facts, Measure

FloatArray = NDArray[np.float64]


class _SignedSum(Measure):
    """|Σ c_k e^{−λ_k t}| / scale, for a point value or the body's mean."""

    is_monotone = False

    @abstractmethod
    def _coefficients(self) -> FloatArray: ...

    @abstractmethod
    def _scale(self) -> float: ...

    def _rates(self) -> FloatArray:
        """The rates the terms decay at, ascending (the solution's modes unless overridden)."""
        return self.solution.rates_per_s

    def signed(self, times_s: FloatArray) -> FloatArray:
        decay = np.exp(-np.outer(np.asarray(times_s, dtype=float), self._rates()))
        return np.asarray(decay @ self._coefficients())

    def values(self, times_s: FloatArray) -> FloatArray:
        return np.abs(self.signed(times_s)) / self._scale()

    @cached_property
    def _scaled(self) -> tuple[FloatArray, FloatArray]:
        """−λ_k and c_k/scale, for the scalar path of the search."""
        return -self._rates(), self._coefficients() / self._scale()

    def value(self, time_s: float) -> float:
        exponents, terms = self._scaled
        return abs(float(np.exp(exponents * time_s) @ terms))

    def log_rate(self, time_s: float) -> tuple[float, float] | None:
        exponents, terms = self._scaled
        weighted = np.exp(exponents * time_s) * terms
        total = float(weighted.sum())
        return (abs(total), float(weighted @ exponents) / total) if total != 0 else None

    def guess_s(self) -> float:
        """Where the slowest seen term alone would reach the level."""
        exponents, terms = self._scaled
        size = np.abs(terms)
        if not float(size.max()) > 0:
            return super().guess_s()
        lead = int(np.argmax(size > EXCITED_FRACTION * float(size.max())))
        rate = -float(exponents[lead])
        if not rate > 0:
            return super().guess_s()
        return max(math.log(max(size[lead] / self.level, 1.0 + 1e-9)) / rate, 1e-300)

    def truncation(self, tail: TailBound) -> float:
        return tail.sup / self._scale()

    def settled_after_s(self, floor_s: float) -> float:
        """A time (at most 5 % after the earliest) at which the slowest seen mode's term
        outweighs all others and their derivatives: Σ_{k>1} λ_k|c_k| e^{−(λ_k−λ_1)t} < λ_1|c_1|.
        From then on the sum keeps the sign of c_1 and its magnitude falls, so the measure is
        monotone."""
        coefficients = self._coefficients()
        rates = self._rates()
        size = np.abs(coefficients)
        if float(size.max()) == 0.0:
            return floor_s
        seen = np.flatnonzero(size > EXCITED_FRACTION * float(size.max()))
        lead = int(seen[0])
        rest = seen[1:]
        target = rates[lead] * size[lead]
        if rest.size == 0 or target == 0.0:
            return floor_s
        gaps = rates[rest] - rates[lead]
        weights = rates[rest] * size[rest]
        # Σ w_k e^{−g_k t} falls with t; search a geometric grid of times in vectorised
        # batches and take the first grid time where it is below the target (any later time
        # is as valid a bound)
        low = floor_s
        for _ in range(_BOUND_BATCHES):
            grid = low * _BOUND_RATIO ** np.arange(_BOUND_BATCH)
            excess = np.exp(-np.outer(grid, gaps)) @ weights
            below = np.flatnonzero(excess < target)
            if below.size:
                return float(grid[below[0]])
            low = float(grid[-1]) * _BOUND_RATIO
        return low


class ValueAt(_SignedSum):
    """|u(x, t)| over max|u0| (relative tolerance) or in value units (absolute tolerance)."""

    name = "value_at"

    def __init__(
        self,
        facts: Facts,
        solution: ModalSolution,
        level: float,
        position_m: float,
        is_absolute: bool,
        start_deviation: float,
    ) -> None:
        super().__init__(facts, solution, level)
        self.position_m = position_m
        self.is_absolute = is_absolute
        self._start_deviation = start_deviation
        basis = solution.basis_at(np.array([position_m]))[0]
        self._c = solution.amplitudes * basis

    def _coefficients(self) -> FloatArray:
        return self._c

    def _scale(self) -> float:
        return 1.0 if self.is_absolute else self.facts.max_abs_start

    def initial_value(self) -> float:
        return self._start_deviation / self._scale()

    def truncation(self, tail: TailBound) -> float:
        return tail.sup / self._scale()


class FractionEquilibrated(_SignedSum):
    """|1 − F| with F = (M(t) − M(0))/(M_final − M(0)) = 1 − ⟨u⟩/⟨u0⟩; reports F itself."""

    name = "fraction_equilibrated"

    def _coefficients(self) -> FloatArray:
        return self.solution.amplitudes * self.solution.mode_means

    def _scale(self) -> float:
        return abs(self.facts.mean_start)

    def initial_value(self) -> float:
        return 1.0

    def reported(self, times_s: FloatArray) -> FloatArray:
        return np.asarray(1.0 - self.signed(times_s) / self.facts.mean_start)


class BathMeanSquare(_SignedSum):
    """⟨u²⟩(t)/⟨u²⟩(0) over the body when a bath shares its modes: the modes are orthonormal
    over body and bath together, so the body's part is Σ_{k≤l} (2 − δ_kl)·b_k·b_l·(δ_kl −
    α·ψ_bk·ψ_bl)·e^{−(λ_k+λ_l)t}, a sum of exponentials at the pair rates. No bound makes it
    monotone from the start (the bath feeds the body back), so its last crossing is sought."""

    name = "mean_square_deviation"

    @cached_property
    def _pairs(self) -> tuple[FloatArray, FloatArray]:
        solution = self.solution
        assert solution.bath_basis is not None
        b, rates, bath = solution.amplitudes, solution.rates_per_s, solution.bath_basis
        k, ell = np.triu_indices(b.size)
        gram = (k == ell).astype(float) - solution.bath_ratio * bath[k] * bath[ell]
        coefficients = np.where(k == ell, 1.0, 2.0) * b[k] * b[ell] * gram
        pair_rates = rates[k] + rates[ell]
        order = np.argsort(pair_rates, kind="stable")
        return pair_rates[order], coefficients[order]

    def _rates(self) -> FloatArray:
        return self._pairs[0]

    def _coefficients(self) -> FloatArray:
        return self._pairs[1]

    def _scale(self) -> float:
        return self.facts.mean_square_start

    def initial_value(self) -> float:
        return 1.0

    def truncation(self, tail: TailBound) -> float:
        return tail.square / self.facts.mean_square_start


class BathValue(_SignedSum):
    """|u_bath(t)| over its starting deviation (relative) or in value units (absolute)."""

    name = "bath_value"

    def __init__(self, facts: Facts, solution: ModalSolution, level: float, is_absolute: bool):
        super().__init__(facts, solution, level)
        self.is_absolute = is_absolute

    def _coefficients(self) -> FloatArray:
        assert self.solution.bath_basis is not None
        return self.solution.amplitudes * self.solution.bath_basis

    def _scale(self) -> float:
        deviation = self.facts.bath_start_deviation
        return 1.0 if self.is_absolute or deviation is None else abs(deviation)

    def initial_value(self) -> float:
        return abs(self.facts.bath_start_deviation or 0.0) / self._scale()


class RemainingFraction(_SignedSum):
    """M(t)/M(0), the share of its starting amount the body still holds (how rinses and
    dialysis are judged). It ends at W·φ_f/M(0); the criterion M(t)/M(0) ≤ f is taken as
    |M(t) − W·φ_f| ≤ (f − W·φ_f/M(0))·M(0), which is the same while the body is above its
    final amount and stricter if it ever dipped below it."""

    name = "remaining_fraction"

    def _coefficients(self) -> FloatArray:
        facts = self.facts
        return self.solution.amplitudes * self.solution.mode_means * facts.capacity

    def _scale(self) -> float:
        return abs(self.facts.amount_start)

    def initial_value(self) -> float:
        facts = self.facts
        return abs(facts.amount_start - facts.capacity * facts.final_value) / self._scale()

    def reported(self, times_s: FloatArray) -> FloatArray:
        facts = self.facts
        held = facts.capacity * facts.final_value + self.signed(times_s)
        return np.asarray(held / facts.amount_start)


class Reaches(_SignedSum):
    """(c(x, t) − v)/(c0(x) − v): 1 at the start, 0 when the point reaches the value v. The
    time sought is the first at which it is ≤ 0 (the value attained), not the last crossing."""

    name = "reaches"
    first_crossing = True

    def __init__(
        self, facts: Facts, solution: ModalSolution, position_m: float, offset: float, span: float
    ) -> None:
        super().__init__(facts, solution, 0.0)
        self.position_m = position_m
        # c − v = (c_f − v) + u: the constant part, and the start's distance from v
        self._offset = offset
        self._span = span
        self._c = solution.amplitudes * solution.basis_at(np.array([position_m]))[0]

    def _coefficients(self) -> FloatArray:
        return self._c

    def _scale(self) -> float:
        return self._span

    def values(self, times_s: FloatArray) -> FloatArray:
        return np.asarray((self._offset + self.signed(times_s)) / self._span)

    def value(self, time_s: float) -> float:
        exponents, terms = self._scaled
        return float(self._offset / self._span + np.exp(exponents * time_s) @ terms)

    def log_rate(self, time_s: float) -> tuple[float, float] | None:
        return None

    def initial_value(self) -> float:
        return 1.0

    @property
    def passes_for_good(self) -> bool:
        """Whether the point ends past the value (then it is surely reached); otherwise only
        a transient swing can reach it, before the measure turns monotone."""
        return self._offset * self._span < 0
