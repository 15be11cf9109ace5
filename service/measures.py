"""Measures of how far a body is from its final state, each a closed-form sum over modes.

With u = c − c_final, w = r^m (m = 0, 1, 2) and ⟨·⟩ the w-weighted mean over the body,
a solution u = Σ b_k ψ_k e^{−λ_k t} with orthonormal ψ_k gives:

* mean-square deviation ⟨u²⟩ = Σ b_k² e^{−2λ_k t} (Parseval), reported over ⟨u0²⟩;
* the mean ⟨u⟩ = Σ b_k ⟨ψ_k⟩ e^{−λ_k t}, hence the fraction equilibrated
  F = 1 − ⟨u⟩/⟨u0⟩ and the relative standard deviation √(⟨u²⟩ − ⟨u⟩²)/|c_final + ⟨u⟩|;
* the value at a point, Σ b_k ψ_k(x) e^{−λ_k t};
* the largest |u| over the body, sought on samples and refined by a parabola;
* the Dirichlet energy (below).

Dirichlet energy. Define E(t) = ⟨|∂u/∂x|²⟩ + (A/V)(Bi/Lc)·mean_s(u_s²), the surface term
present on convective surfaces (A/V = 1/Lc, 2/Lc, 3/Lc for slab, cylinder, sphere; the mean
over the exposed surfaces). Green's identity with ∂u/∂n = −(Bi/Lc) u_s on a convective
surface, u_s = 0 on a held one and ∂u/∂n = 0 on a sealed one gives E = −⟨u ∇²u⟩, so for
eigenfunctions (∇²ψ_k = −κ_k² ψ_k) E = Σ κ_k² b_k² e^{−2λ_k t} with λ_k = Dκ_k². Then
dE/dt = −2D Σ κ_k⁴ b_k² e^{−2λ_k t} = −(2/D)⟨u_t²⟩ ≤ 0: the energy never increases,
and d⟨u²⟩/dt = −2D E. Without the surface term E would rise from zero on a uniform start.
It is reported as E/(κ_1²⟨u0²⟩), κ_1 the body's slowest wavenumber (each engine's own,
so that the finite-volume ratio keeps the bound below exactly): dimensionless, finite
for t > 0 (E(0) = ∞ for a start with a jump), never below the mean-square ratio (κ_k ≥ κ_1)
and equal to it when only the slowest mode is left.

Layered bodies. There u is the deviation of the potential φ = c/K (T for heat), continuous
across interfaces, and ⟨·⟩ is weighted by each layer's capacity C (K, or ρc_p): the modes
are orthonormal under Σ∫C_i(·)² and the stiffness is Σ∫Λ_i|∇·|² (Λ = D·K, or k). So the
mean square here is Σ∫K_i(φ − φ_f)²/Σ∫K_i(φ0 − φ_f)² and the energy Σ∫D_iK_i|∇φ|² (plus
the film terms): the K-weighted measures on φ, the ones proven never to increase (a plain
∫(c − c_f)² across layers of different K has no such guarantee).

A finite bath. The modes are then orthonormal over body and bath together (the bath as one
node of capacity α times the body's), so the body's own ⟨u²⟩ carries the bath's rank-one
correction (``BathMeanSquare``), and the largest deviation, energy and RSD are not offered.
Across bath exchanges the measures are piecewise in time (``_Exchanged``).

Which measures are monotone. ⟨u²⟩ and E are sums of decaying positive terms. max|u| never
increases by the maximum principle for these surfaces (and its discrete counterpart for
the finite-volume operator). The others can rise before they fall, and the settling time
is the last crossing; each such measure supplies a time after which it is monotone or
settled for good, computed from a bound (see ``settled_after_s``).
"""

from __future__ import annotations

import bisect
import math
from abc import ABC, abstractmethod
from collections.abc import Callable
from dataclasses import dataclass, replace
from functools import cached_property
from typing import ClassVar

import numpy as np
from numpy.typing import NDArray
from scipy import optimize

from service.engines.common import (
    EXCITED_FRACTION,
    Interval,
    ModalSolution,
    TailBound,
    exchange_intervals,
    interval_index,
)
from service.errors import InvalidInput, NumericalFailure
from service.physics import Case, Criterion, SurroundingsSchedule

__all__ = ["MEASURES", "Facts", "Measure", "build_measure", "defined_measures"]

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
