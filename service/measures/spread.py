"""Measures of spread: mean-square deviation, Dirichlet energy, the largest deviation,
residual segregation and the relative standard deviation (see the package notes)."""

from __future__ import annotations

import math
from functools import cached_property

import numpy as np
from numpy.typing import NDArray
from scipy import optimize

from service.engines.common import (
    EXCITED_FRACTION,
    ModalSolution,
    TailBound,
)
from service.measures.base import Facts, Measure

FloatArray = NDArray[np.float64]


class _SquareSum(Measure):
    """Measures of the form Σ weight_k b_k² e^{−2λ_k t} / normaliser."""

    is_monotone = True

    def __init__(self, facts: Facts, solution: ModalSolution, level: float) -> None:
        super().__init__(facts, solution, level)
        self._exponents = -2.0 * solution.rates_per_s
        self._terms = self._weights() * solution.amplitudes**2 / self._normaliser()

    def _weights(self) -> FloatArray:
        return np.ones_like(self.solution.rates_per_s)

    def _normaliser(self) -> float:
        return self.facts.mean_square_start

    def values(self, times_s: FloatArray) -> FloatArray:
        return np.asarray(np.exp(np.outer(times_s, self._exponents)) @ self._terms)

    def value(self, time_s: float) -> float:
        return float(np.exp(self._exponents * time_s) @ self._terms)

    def log_rate(self, time_s: float) -> tuple[float, float] | None:
        weighted = np.exp(self._exponents * time_s) * self._terms
        total = float(weighted.sum())
        return (total, float(weighted @ self._exponents) / total) if total > 0 else None

    def guess_s(self) -> float:
        """Where the slowest term alone would reach the level."""
        lead = int(np.argmax(self._terms > EXCITED_FRACTION * float(self._terms.max())))
        rate = -self._exponents[lead]
        if rate <= 0:
            return super().guess_s()
        return max(math.log(max(self._terms[lead] / self.level, 1.0 + 1e-9)) / rate, 1e-300)


class MeanSquareDeviation(_SquareSum):
    """⟨u²⟩(t)/⟨u0²⟩; with no-flux surfaces, the variance ratio (intensity of segregation)."""

    name = "mean_square_deviation"

    def initial_value(self) -> float:
        return 1.0

    def truncation(self, tail: TailBound) -> float:
        return tail.square / self.facts.mean_square_start


class DirichletEnergy(_SquareSum):
    """E(t)/(κ_1²⟨u0²⟩), the gradient energy with its convective surface term (module notes)."""

    name = "dirichlet_energy"

    def _weights(self) -> FloatArray:
        return self.solution.rates_per_s / self.solution.diffusivity_m2_per_s

    def _normaliser(self) -> float:
        # the solution's own slowest mode, so that energy ≥ mean-square ratio holds exactly
        # for each engine (the finite-volume eigenvalue differs from the exact one by O(h²))
        solution = self.solution
        return (
            solution.slowest_rate_per_s
            / solution.diffusivity_m2_per_s
            * self.facts.mean_square_start
        )

    def initial_value(self) -> float:
        return math.inf

    def truncation(self, tail: TailBound) -> float:
        return tail.energy / self._normaliser()

    def guess_s(self) -> float:
        return super().guess_s() / 2


# Samples within round-off of the largest count as tied, and the first of them is refined: a
# sample mirrored past a symmetry face equals its twin but for the order of a product's sums,
# and which of the two wins must not switch the parabola on and off from one time to the next.
_TIE = 1.0 - 1e-12


class MaxDeviation(Measure):
    """max|u(t)|/max|u0|, never increasing (maximum principle)."""

    name = "max_deviation"
    is_monotone = True

    def values(self, times_s: FloatArray) -> FloatArray:
        if times_s.size == 1:  # one time (the answer's): the scalar path is 5x cheaper
            return np.array([self.value(float(times_s[0]))])
        solution = self.solution
        samples = solution.weighted(times_s) @ solution.sample_basis.T
        magnitude = np.abs(samples)
        peak = magnitude.max(axis=1)
        best = np.argmax(magnitude >= peak[:, None] * _TIE, axis=1)
        if solution.refine_max:
            peak = np.maximum(peak, _parabola_peak(solution.sample_positions_m, magnitude, best))
        return np.asarray(peak / self.facts.max_abs_start)

    def value(self, time_s: float) -> float:
        solution = self.solution
        row = np.abs(
            solution.sample_basis @ (solution.amplitudes * np.exp(-solution.rates_per_s * time_s))
        )
        peak = float(row.max())
        best = int(np.argmax(row >= peak * _TIE))
        if solution.refine_max and 0 < best < row.size - 1:
            x = solution.sample_positions_m
            peak = max(
                peak,
                _vertex(
                    float(x[best - 1]),
                    float(x[best]),
                    float(x[best + 1]),
                    float(row[best - 1]),
                    peak,
                    float(row[best + 1]),
                ),
            )
        return peak / self.facts.max_abs_start

    def extrapolable_at(self, time_s: float) -> bool:
        """Only while the peak is pinned to a point every grid places alike: the first or the
        last sample (a radial centre's cell, a surface's), or a sample tied with the mirrored
        twin past a symmetry face. A peak inside the body falls at a different fraction of a
        cell on each grid, and its parabola's error (third order in the cell size) then jumps
        from grid to grid."""
        solution = self.solution
        row = np.abs(
            solution.sample_basis @ (solution.amplitudes * np.exp(-solution.rates_per_s * time_s))
        )
        last = row.size - 1
        best = int(np.argmax(row >= float(row.max()) * _TIE))
        return best in (0, last) or (best == last - 1 and row[last] >= row[best] * _TIE)

    def initial_value(self) -> float:
        return 1.0

    def guess_s(self) -> float:
        """Where the slowest excited mode alone, at its largest, would reach the level."""
        solution = self.solution
        rate = solution.slowest_excited_rate_per_s
        lead = int(np.argmax(solution.rates_per_s >= rate))
        peak = abs(solution.amplitudes[lead]) * float(np.abs(solution.sample_basis[:, lead]).max())
        ratio = peak / self.facts.max_abs_start / self.level
        if not rate > 0:
            return super().guess_s()
        return max(math.log(max(ratio, 1.0 + 1e-9)) / rate, 1e-300)

    def truncation(self, tail: TailBound) -> float:
        return tail.sup / self.facts.max_abs_start


class ResidualSegregation(Measure):
    """(max c − min c)/(max c0 − min c0), the index of residual segregation, for a sealed body
    (where the largest value only falls and the smallest only rises, so the index never
    increases); on samples refined by a parabola at each end of the range, as the largest
    deviation is. For a cosine pattern it is exp(−π²Dt/l²), l the half-wavelength."""

    name = "residual_segregation"
    is_monotone = True

    def _range(self, samples: FloatArray) -> FloatArray:
        positions = self.solution.sample_positions_m
        rows = np.arange(samples.shape[0])
        spread = []
        for sign in (1.0, -1.0):
            signed = sign * samples
            top = signed.max(axis=1)[:, None]
            best = np.argmax(signed >= top - np.abs(top) * (1.0 - _TIE), axis=1)
            extreme = signed[rows, best]
            if self.solution.refine_max:
                extreme = np.maximum(extreme, _parabola_peak(positions, signed, best))
            spread.append(extreme)
        return np.asarray(spread[0] + spread[1])

    def values(self, times_s: FloatArray) -> FloatArray:
        solution = self.solution
        samples = solution.weighted(np.asarray(times_s, dtype=float)) @ solution.sample_basis.T
        return np.asarray(self._range(samples) / self._initial_range)

    @cached_property
    def _initial_range(self) -> float:
        return self.facts.start_range

    def extrapolable_at(self, time_s: float) -> bool:
        """Like the largest deviation: while both ends of the range sit at the first or last
        sample (the faces of a segregation cell), every grid places them alike."""
        solution = self.solution
        row = solution.sample_basis @ (solution.amplitudes * np.exp(-solution.rates_per_s * time_s))
        last = row.size - 1
        return {int(np.argmax(row)), int(np.argmin(row))} <= {0, last}

    def initial_value(self) -> float:
        return 1.0

    def truncation(self, tail: TailBound) -> float:
        return 2.0 * tail.sup / self._initial_range


def _vertex(x0: float, x1: float, x2: float, y0: float, y1: float, y2: float) -> float:
    """Largest value of the parabola through three points, if it opens downward."""
    d1 = (y1 - y0) / (x1 - x0)
    d2 = (y2 - y1) / (x2 - x1)
    curvature = (d2 - d1) / (x2 - x0)
    if curvature >= 0:
        return y1
    offset = min(max(-(d1 - curvature * (x1 - x0)) / (2 * curvature), 0.0), x2 - x0)
    return y0 + (d1 - curvature * (x1 - x0)) * offset + curvature * offset * offset


def _parabola_peak(
    positions: FloatArray, magnitude: FloatArray, best: NDArray[np.intp]
) -> FloatArray:
    """Vertex of the parabola through the largest sample and its neighbours (interior only)."""
    rows = np.arange(best.size)
    interior = (best > 0) & (best < positions.size - 1)
    i = np.clip(best, 1, positions.size - 2)
    x0, x1, x2 = positions[i - 1], positions[i], positions[i + 1]
    y0, y1, y2 = magnitude[rows, i - 1], magnitude[rows, i], magnitude[rows, i + 1]
    d1 = (y1 - y0) / (x1 - x0)
    d2 = (y2 - y1) / (x2 - x1)
    curvature = (d2 - d1) / (x2 - x0)
    with np.errstate(divide="ignore", invalid="ignore"):
        slope_mid = d1 - curvature * (x1 - x0)
        vertex_offset = np.where(curvature < 0, -slope_mid / (2 * curvature), 0.0)
        vertex_offset = np.clip(vertex_offset, 0.0, x2 - x0)
        vertex = y0 + slope_mid * vertex_offset + curvature * vertex_offset**2
    return np.where(interior & (curvature < 0), np.maximum(vertex, y1), y1)


class RelativeStandardDeviation(Measure):
    """√(⟨u²⟩ − ⟨u⟩²)/|c_final + ⟨u⟩|, an absolute level as blend-uniformity limits are written."""

    name = "rsd"
    is_monotone = False

    def values(self, times_s: FloatArray) -> FloatArray:
        solution = self.solution
        decay = solution.decay(times_s)
        mean = decay @ (solution.amplitudes * solution.mode_means)
        square = (decay * decay) @ (solution.amplitudes**2)
        variance = np.maximum(square - mean * mean, 0.0)
        with np.errstate(divide="ignore"):
            return np.asarray(np.sqrt(variance) / np.abs(self.facts.final_value + mean))

    def initial_value(self) -> float:
        facts = self.facts
        variance = max(facts.mean_square_start - facts.mean_start**2, 0.0)
        denominator = abs(facts.final_value + facts.mean_start)
        return math.sqrt(variance) / denominator if denominator > 0 else math.inf

    def truncation(self, tail: TailBound) -> float:
        spread = math.sqrt(
            tail.square + 2 * tail.sup * math.sqrt(self.facts.mean_square_start) + tail.sup**2
        )
        return spread / abs(self.facts.final_value)

    def settled_after_s(self, floor_s: float) -> float:
        """RSD ≤ √⟨u²⟩/(|c_f| − √⟨u²⟩), which falls with t; it reaches the level once
        √⟨u²⟩ = τ|c_f|/(1 + τ). After that time the criterion holds for good."""
        target = (self.level * abs(self.facts.final_value) / (1 + self.level)) ** 2
        solution = self.solution

        def excess(time_s: float) -> float:
            return (
                float(np.exp(-2.0 * time_s * solution.rates_per_s) @ solution.amplitudes**2)
                - target
            )

        if excess(floor_s) <= 0:
            return floor_s
        high = max(floor_s, self.guess_s())
        while excess(high) > 0:
            high *= 2.0
        return float(optimize.brentq(excess, floor_s, high, rtol=1e-10))
