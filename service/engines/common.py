"""What every engine returns: a modal solution, a sum of decaying exponentials.

Both engines reduce the linear problem to u(x, t) = Σ_k b_k ψ_k(x) exp(−λ_k t), with
u = c − c_final and ψ_k orthonormal under the body's weighted mean ⟨f⟩ = ∫ f r^m dr / ∫ r^m dr.
The series engine's ψ_k are the exact eigenfunctions (truncated); the finite-volume engine's
are the eigenvectors of its semi-discrete operator. Every measure is then a closed-form sum
of exponentials, and a settling time is a root-find rather than time stepping.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from functools import cached_property
from typing import Protocol

import numpy as np
from numpy.typing import NDArray

from service.physics import Case

__all__ = [
    "EXCITED_FRACTION",
    "FOURIER_FLOOR",
    "ROOT_RTOL",
    "Crossing",
    "Engine",
    "EngineRun",
    "Interval",
    "ModalSolution",
    "TailBound",
    "exchange_intervals",
    "interval_index",
]

# A mode counts as excited when its amplitude exceeds this fraction of the largest.
EXCITED_FRACTION = 1e-12
# Earliest Fourier number any engine searches or resolves; a criterion still met there is
# met at once (or, if not met by the start, reported with that time as a bound).
FOURIER_FLOOR = 1e-6
# Relative tolerance every settling root-find is run to (added to the series' error estimate).
ROOT_RTOL = 1e-12

FloatArray = NDArray[np.float64]


@dataclass(frozen=True)
class TailBound:
    """Upper bounds on what truncation leaves out at one time: sup|u|, ⟨u²⟩ and the energy."""

    sup: float
    square: float
    energy: float


@dataclass(frozen=True)
class ModalSolution:
    """u(x, t) = Σ_k amplitudes[k] · ψ_k(x) · exp(−rates_per_s[k] · t).

    Attributes
    ----------
    rates_per_s : decay rates λ_k = D·κ_k², ascending (κ_k the wavenumber in 1/m).
    amplitudes : b_k = ⟨u0, ψ_k⟩.
    mode_means : ⟨ψ_k⟩, so that ⟨u⟩ = Σ b_k ⟨ψ_k⟩ e^{−λ_k t}.
    basis_at : positions in metres → matrix [positions, modes] of ψ_k values.
    sample_positions_m : where the largest |u| is sought (``sample_basis`` holds ψ_k there).
    refine_max : whether a maximum found between samples is refined by a parabola.
    slowest_rate_per_s : the body's slowest non-constant mode in this solution (1/s).
    valid_from_s : earliest time at which truncation stays below the accuracy asked.
    tail : bounds on what truncation leaves out at a time (None when nothing is left out).
    bath_basis : ψ_k at a finite bath coupled to the body (None without one). The modes are
        then orthonormal over body and bath together (the bath weighted by its capacity
        ratio α), so the body's own mean square is Σ b_k b_l (δ_kl − α ψ_bk ψ_bl) e^{−(λk+λl)t}.
    bath_ratio : that capacity ratio α.
    """

    engine: str
    resolution: int
    diffusivity_m2_per_s: float
    rates_per_s: FloatArray
    amplitudes: FloatArray
    mode_means: FloatArray
    basis_at: Callable[[FloatArray], FloatArray]
    sample_positions_m: FloatArray
    refine_max: bool
    valid_from_s: float
    slowest_rate_per_s: float
    tail: Callable[[float], TailBound] | None = None
    sample_basis_of: Callable[[], FloatArray] | None = None
    bath_basis: FloatArray | None = None
    bath_ratio: float = 0.0
    # (elapsed time, fresh bath value) → the solution after the bath is replaced then, and the
    # final value it tends to: the same modes, amplitudes projected from the state at that
    # time with the bath reset (None without a bath)
    restart: Callable[[float, float], tuple[ModalSolution, float]] | None = None

    @cached_property
    def sample_basis(self) -> FloatArray:
        """ψ_k at the sample positions, made on first use (only the largest-deviation measure
        and profiles need it) by the engine's own shortcut or by ``basis_at``."""
        if self.sample_basis_of is not None:
            return self.sample_basis_of()
        return self.basis_at(self.sample_positions_m)

    @cached_property
    def slowest_excited_rate_per_s(self) -> float:
        """Rate of the slowest mode whose amplitude exceeds 1e-12 of the largest."""
        amplitudes = np.abs(self.amplitudes)
        excited = amplitudes > EXCITED_FRACTION * float(amplitudes.max())
        return float(self.rates_per_s[np.argmax(excited)])

    def decay(self, times_s: FloatArray) -> FloatArray:
        """Matrix [times, modes] of exp(−λ_k t)."""
        return np.exp(-np.outer(np.asarray(times_s, dtype=float), self.rates_per_s))

    def weighted(self, times_s: FloatArray) -> FloatArray:
        """Matrix [times, modes] of b_k exp(−λ_k t)."""
        return self.decay(times_s) * self.amplitudes

    def values_at(self, positions_m: FloatArray, times_s: FloatArray) -> FloatArray:
        """u at positions (columns) and times (rows)."""
        return self.weighted(times_s) @ self.basis_at(np.asarray(positions_m, dtype=float)).T


@dataclass(frozen=True)
class Interval:
    """One stretch of time between bath exchanges: from ``start_s`` on, u = φ − final_value
    follows ``solution`` in the time since ``start_s``."""

    start_s: float
    solution: ModalSolution
    final_value: float


def exchange_intervals(
    solution: ModalSolution, final_value: float, exchanges_s: tuple[float, ...], fresh: float
) -> list[Interval]:
    """The intervals a bath's exchanges cut time into, each restarted from the state the one
    before left, with the bath replaced by fresh fluid."""
    intervals = [Interval(0.0, solution, final_value)]
    for time_s in exchanges_s:
        last = intervals[-1]
        assert last.solution.restart is not None
        following, final = last.solution.restart(time_s - last.start_s, fresh)
        intervals.append(Interval(time_s, following, final))
    return intervals


def interval_index(intervals: list[Interval], times_s: FloatArray) -> NDArray[np.intp]:
    """Which interval each time falls in (an exchange time belongs to the interval it opens)."""
    starts = np.array([interval.start_s for interval in intervals])
    return np.asarray(np.searchsorted(starts, times_s, side="right") - 1, dtype=np.intp)


@dataclass(frozen=True)
class Crossing:
    """What a settling search found on one solution."""

    time_s: float
    definition: str
    hit_floor: bool
    near_tangent: bool = False
    holds_throughout: bool = False
    # whether the time's grid error is smooth in the cell size (Measure.extrapolable_at)
    extrapolable: bool = True


@dataclass(frozen=True)
class EngineRun:
    """An engine's final solution, the crossing found on it and the error estimate of its time."""

    solution: ModalSolution
    crossing: Crossing
    estimated_relative_error: float
    warnings: tuple[tuple[str, str], ...] = ()


class Engine(Protocol):
    """An engine turns a case into modal solutions and refines them until a time is trusted."""

    name: str

    def check(self, case: Case) -> None:
        """Raise NotApplicable if this engine cannot do ``case``."""

    def solution(self, case: Case, earliest_time_s: float) -> ModalSolution:
        """A solution accurate for every t ≥ earliest_time_s."""

    def settle(
        self,
        case: Case,
        search: Callable[[ModalSolution, float, float | None], Crossing],
        truncation_error: Callable[[ModalSolution, float], float],
    ) -> EngineRun:
        """Refine until the crossing ``search`` finds is accurate to ``case.accuracy``;
        ``search(solution, floor_s, near_s)`` may be told a time near the answer."""
