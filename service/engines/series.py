"""The series engine: exact eigenfunction expansions for a homogeneous body.

Notes
-----
With u = c − c_final the deviation and ξ the dimensionless coordinate of
:mod:`service.engines.spectra`, the solution of ∂u/∂t = D∇²u with one linear condition on
every exposed surface is

    u(ξ, t) = Σ_n b_n ψ_n(ξ) exp(−D ζ_n² t / Lc²),   ψ_n = φ_n / ⟨φ_n²⟩^½,

with b_n = ⟨u0, ψ_n⟩ (Crank 1975, eqs. 4.17, 5.22, 6.18; Carslaw & Jaeger 1959, §3.10).
The projections of the piecewise-linear start are exact closed forms per segment. The
series is truncated after K modes per family; the part left out is bounded, at a time t,
by A Σ_{j≥1} (1 + jδ/ζ_K) exp(−(ζ_K + jδ)² Fo), δ the least root spacing of the family and
A the largest amplitude among the last computed modes (a generous allowance for growth).
K is chosen so that this bound is below 1e-4·accuracy of the largest start deviation at
the earliest time asked for.

References
----------
J. Crank, *The Mathematics of Diffusion*, 2nd ed., Oxford (1975), chapters 4–6.
"""

from __future__ import annotations

import math
import threading
from collections import OrderedDict
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from service.engines.common import (
    FOURIER_FLOOR,
    ROOT_RTOL,
    Crossing,
    EngineRun,
    ModalSolution,
    TailBound,
)
from service.engines.spectra import FAMILIES, ModeFamily
from service.errors import NotApplicable, NumericalFailure
from service.physics import Case, Geometry, SurfaceKind

__all__ = ["SeriesEngine"]

FloatArray = NDArray[np.float64]

# First guess of the earliest time needed, as a Fourier number; refined when the answer is earlier.
_FIRST_FOURIER = 0.02
# Truncation target relative to the largest start deviation, per unit of requested accuracy.
_TRUNCATION_FRACTION = 1e-4
# Fewest and most modes per family.
_MIN_MODES = 8
_MAX_MODES = 40_000
# How much earlier the next solution reaches when a search ran into the validity floor.
_REACH_FACTOR = 30.0
# Points across the body where the largest deviation is sought.
_SAMPLES = {Geometry.SLAB: 257, Geometry.CYLINDER: 129, Geometry.SPHERE: 129}
# Eigenvalue caches kept per engine.
_CACHE_SIZE = 256


def _power_sums(ratio: float) -> tuple[float, float, float, float]:
    """Σ_{j≥1} j^p r^j for p = 0..3 (closed forms of the polylogarithm at integer order)."""
    r = ratio
    one = 1.0 - r
    return (r / one, r / one**2, r * (1 + r) / one**3, r * (1 + 4 * r + r * r) / one**4)


def _tail_sum(zeta_last: float, spacing: float, fourier: float, growth: int) -> float:
    """Bound on Σ_{j≥1} (1 + jδ/ζ_K)^growth exp(−(ζ_K + jδ)² Fo), growth 1 or 3."""
    if fourier <= 0:
        return math.inf
    ratio = math.exp(-2.0 * zeta_last * spacing * fourier)
    if ratio >= 1.0:
        return math.inf
    s0, s1, s2, s3 = _power_sums(ratio)
    x = spacing / max(zeta_last, spacing)
    polynomial = s0 + x * s1 if growth == 1 else s0 + 3 * x * s1 + 3 * x * x * s2 + x**3 * s3
    return math.exp(-zeta_last * zeta_last * fourier) * polynomial


@dataclass(frozen=True)
class _ModeTable:
    """Eigenvalues of one family with what does not depend on the start: √⟨φ²⟩ and ⟨ψ⟩."""

    zeta: FloatArray
    root_norm: FloatArray
    mean: FloatArray
    samples: FloatArray

    @classmethod
    def of(cls, family: ModeFamily, zeta: FloatArray, samples: int) -> _ModeTable:
        """The table for ``zeta``, with ψ at ``samples`` points evenly spread over the family's
        coordinate (the same for every body size, so it is cached with the eigenvalues)."""
        root_norm = np.sqrt(family.norm(zeta))
        whole, _ = family.moments(zeta, np.array([family.lower]), np.array([1.0]))
        xi = np.linspace(family.lower, 1.0, samples)
        return cls(
            zeta,
            root_norm,
            whole[0] / family.body_measure / root_norm,
            family.values(zeta, xi) / root_norm,
        )

    def head(self, count: int) -> _ModeTable:
        return _ModeTable(
            self.zeta[:count], self.root_norm[:count], self.mean[:count], self.samples[:, :count]
        )


@dataclass(frozen=True)
class _Spectrum:
    """The first ``count`` modes of every family of a body, merged in ascending order: what a
    query needs besides the projections of its own start."""

    tables: tuple[_ModeTable, ...]
    order: NDArray[np.intp]
    zeta: FloatArray
    owner: NDArray[np.intp]
    root_norm: FloatArray
    mean: FloatArray
    samples: FloatArray
    slowest_zeta: float
    unit_samples: FloatArray

    @classmethod
    def of(cls, tables: tuple[_ModeTable, ...]) -> _Spectrum:
        zeta = np.concatenate([table.zeta for table in tables])
        order = np.argsort(zeta, kind="stable")
        owner = np.concatenate([np.full(t.zeta.size, i) for i, t in enumerate(tables)])[order]
        return cls(
            tables=tables,
            order=order,
            zeta=zeta[order],
            owner=owner,
            root_norm=np.concatenate([t.root_norm for t in tables])[order],
            mean=np.concatenate([t.mean for t in tables])[order],
            samples=np.concatenate([t.samples for t in tables], axis=1)[:, order],
            slowest_zeta=float(np.min(zeta[zeta > 0])),
            unit_samples=np.linspace(0.0, 1.0, tables[0].samples.shape[0]),
        )


class SeriesEngine:
    """Exact eigen-expansions; eigenvalues cached by shape, surface kind and Biot number."""

    name = "series"

    def __init__(self) -> None:
        self._lock = threading.Lock()
        self._tables: OrderedDict[tuple[Geometry, SurfaceKind, float, int], _ModeTable] = (
            OrderedDict()
        )
        self._spectra: OrderedDict[tuple[Geometry, SurfaceKind, float, int], _Spectrum] = (
            OrderedDict()
        )

    def check(self, case: Case) -> None:
        """The expansions here are for solid cylinders and spheres and for slabs with the same
        condition on both faces; hollow bodies and slabs whose faces differ go to the
        finite-volume engine."""
        if case.medium.reaction_per_s > 0 and case.faces.outer.kind not in (
            SurfaceKind.FIXED_VALUE,
            SurfaceKind.CONVECTIVE,
        ):
            raise NotApplicable(
                "the series engine covers a reacting body with held or convective surfaces; a "
                "sealed one is solved by the finite_volume engine"
            )
        if case.bath is not None:
            raise NotApplicable(
                "the series engine covers bodies in unchanging surroundings; a finite bath is "
                "solved by the finite_volume engine"
            )
        if case.body.layers:
            raise NotApplicable(
                "the series engine covers homogeneous bodies; a layered body is solved by the "
                "finite_volume engine"
            )
        if case.body.inner_m > 0.0:
            raise NotApplicable(
                "the series engine covers solid cylinders and spheres; a hollow body is solved "
                "by the finite_volume engine"
            )
        if not case.faces.is_alike:
            raise NotApplicable(
                "the series engine covers a slab with the same condition on both faces; faces "
                "with different conditions are solved by the finite_volume engine"
            )

    def _modes(self, case: Case, index: int, family: ModeFamily, count: int) -> _ModeTable:
        """The first ``count`` modes of one family (ζ, norm and mean), grown by doubling."""
        surface = case.faces.outer
        biot = surface.biot if surface.kind is SurfaceKind.CONVECTIVE else 0.0
        key = (case.body.geometry, surface.kind, biot, index)
        with self._lock:
            cached = self._tables.get(key)
            if cached is not None and cached.zeta.size >= count:
                self._tables.move_to_end(key)
                return cached.head(count)
        size = max(count, 2 * (cached.zeta.size if cached is not None else 0))
        table = _ModeTable.of(
            family, family.roots[surface.kind](size, biot), _SAMPLES[case.body.geometry]
        )
        with self._lock:
            self._tables[key] = table
            while len(self._tables) > _CACHE_SIZE:
                self._tables.popitem(last=False)
        return table.head(count)

    def _spectrum(self, case: Case, count: int) -> _Spectrum:
        """The merged first ``count`` modes of every family, cached like the tables."""
        surface = case.faces.outer
        biot = surface.biot if surface.kind is SurfaceKind.CONVECTIVE else 0.0
        key = (case.body.geometry, surface.kind, biot, count)
        with self._lock:
            cached = self._spectra.get(key)
            if cached is not None:
                self._spectra.move_to_end(key)
                return cached
        families = FAMILIES[case.body.geometry]
        spectrum = _Spectrum.of(
            tuple(self._modes(case, index, family, count) for index, family in enumerate(families))
        )
        with self._lock:
            self._spectra[key] = spectrum
            while len(self._spectra) > _CACHE_SIZE:
                self._spectra.popitem(last=False)
        return spectrum

    def slowest_wavenumber(self, case: Case) -> float:
        """The body's smallest non-zero ζ over all families (dimensionless, on Lc), cached."""
        return self._spectrum(case, 2).slowest_zeta

    def solution(self, case: Case, earliest_time_s: float) -> ModalSolution:
        """A truncated expansion whose left-out part is negligible for t ≥ earliest_time_s."""
        diffusion_time = case.diffusion_time_s
        fourier = max(earliest_time_s / diffusion_time, FOURIER_FLOOR)
        target = _TRUNCATION_FRACTION * case.accuracy
        zeta_needed = math.sqrt(math.log(100.0 / target) / fourier)
        count = max(_MIN_MODES, math.ceil(zeta_needed / np.pi) + 2)
        while True:
            solution = self._build(case, count, fourier * diffusion_time)
            scale = case.final_state.max_abs_deviation(case.start)
            assert solution.tail is not None
            if solution.tail(solution.valid_from_s).sup <= target * scale or count >= _MAX_MODES:
                return solution
            count = min(_MAX_MODES, 2 * count)

    def _build(self, case: Case, count: int, valid_from_s: float) -> ModalSolution:
        body = case.body
        length = case.characteristic_length_m
        diffusivity = case.medium.diffusivity_m2_per_s
        final = case.final_value
        start = case.start
        to_xi = _coordinate(body.geometry, length)
        xi0, xi1 = to_xi(start.x0), to_xi(start.x1)
        slope = (start.v1 - start.v0) / (xi1 - xi0)
        intercept = (start.v0 - final) - slope * xi0

        spectrum = self._spectrum(case, count)
        families = FAMILIES[body.geometry]
        reaction = case.medium.reaction_per_s
        # reaction: the final state c_f solves ∇²c_f = φ²·c_f (φ² = k·Lc²/D, in ξ) with the
        # surface condition of the value v it is held or filmed toward, and Green's identity
        # with ∇²ψ = −ζ²·ψ gives ⟨c_f, ψ⟩ = v·⟨ψ⟩·ζ²/(ζ² + φ²): the uniform value's projection,
        # shrunk; the deviation's modes then decay at D·ζ²/Lc² + k
        modulus_squared = reaction * length**2 / diffusivity
        surface_value = case.faces.outer.value
        amplitudes = []
        tails: list[tuple[float, float, float, float]] = []
        is_uniform = start.x0.size == 1 and start.v0[0] == start.v1[0]
        for family, table in zip(families, spectrum.tables, strict=True):
            zeta, root_norm = table.zeta, table.root_norm
            if is_uniform:
                # ⟨u0, ψ⟩ = u0·⟨ψ⟩ for a uniform start: the cached means are the projections
                amplitude = np.where(zeta > 0, (start.v0[0] - final) * table.mean, 0.0)
            else:
                m0, m1 = family.moments(zeta, xi0, xi1)
                projection = (intercept @ m0 + slope @ m1) / family.body_measure
                amplitude = np.where(zeta > 0, projection / root_norm, 0.0)
            if reaction > 0:
                shrink = zeta**2 / (zeta**2 + modulus_squared)
                amplitude = amplitude + np.where(
                    zeta > 0, table.mean * (final - surface_value * shrink), 0.0
                )
            amplitudes.append(amplitude)
            last = slice(zeta.size // 2, None)
            tails.append(
                (
                    float(zeta[-1]),
                    family.spacing,
                    float((np.abs(amplitude[last]) / root_norm[last]).max()),
                    float(np.abs(amplitude[last]).max()),
                )
            )
        zeta_sorted = spectrum.zeta
        root_norm_all = spectrum.root_norm
        owner_all = spectrum.owner

        def basis_at(positions_m: FloatArray) -> FloatArray:
            xi = to_xi(np.asarray(positions_m, dtype=float))
            out = np.empty((xi.size, zeta_sorted.size))
            for index, family in enumerate(families):
                chosen = owner_all == index
                out[:, chosen] = family.values(zeta_sorted[chosen], xi)
            return out / root_norm_all

        def tail(time_s: float) -> TailBound:
            fourier = time_s * diffusivity / length**2
            # every mode's reaction factor e^{−k·t} (its square in the squared sums)
            consumed = math.exp(-reaction * time_s)
            sup = square = energy = 0.0
            for zeta_last, spacing, sup_amplitude, amplitude in tails:
                sup += sup_amplitude * _tail_sum(zeta_last, spacing, fourier, 1)
                square += amplitude**2 * _tail_sum(zeta_last, spacing, 2 * fourier, 1)
                energy += (amplitude * zeta_last / length) ** 2 * _tail_sum(
                    zeta_last, spacing, 2 * fourier, 3
                )
            return TailBound(
                sup=sup * consumed,
                square=square * consumed**2,
                energy=energy * consumed**2,
            )

        samples = spectrum.unit_samples * body.extent_m
        return ModalSolution(
            engine=self.name,
            resolution=int(zeta_sorted.size),
            diffusivity_m2_per_s=diffusivity,
            rates_per_s=diffusivity * (zeta_sorted / length) ** 2 + reaction,
            amplitudes=np.concatenate(amplitudes)[spectrum.order],
            mode_means=spectrum.mean,
            basis_at=basis_at,
            sample_positions_m=samples,
            refine_max=True,
            valid_from_s=valid_from_s,
            slowest_rate_per_s=diffusivity * (spectrum.slowest_zeta / length) ** 2 + reaction,
            tail=tail,
            sample_basis_of=lambda: spectrum.samples,
        )

    def settle(
        self,
        case: Case,
        search: Callable[[ModalSolution, float, float | None], Crossing],
        truncation_error: Callable[[ModalSolution, float], float],
    ) -> EngineRun:
        """Search on successively longer expansions until the crossing lies where the
        truncation is negligible."""
        floor_s = FOURIER_FLOOR * case.diffusion_time_s
        earliest = max(floor_s, _FIRST_FOURIER * case.diffusion_time_s)
        for _ in range(12):
            solution = self.solution(case, earliest)
            crossing = search(solution, max(floor_s, solution.valid_from_s), None)
            if crossing.hit_floor and solution.valid_from_s > floor_s * (1 + 1e-9):
                earliest = max(floor_s, solution.valid_from_s / _REACH_FACTOR)
                continue
            error = truncation_error(solution, crossing.time_s) + ROOT_RTOL
            return EngineRun(solution=solution, crossing=crossing, estimated_relative_error=error)
        raise NumericalFailure("the series did not reach the times this criterion needs")


def _coordinate(geometry: Geometry, length_m: float) -> Callable[[FloatArray], FloatArray]:
    """Map physical positions to the families' ξ: x/Lc − 1 on a slab, r/R on radial bodies."""
    offset = 1.0 if geometry is Geometry.SLAB else 0.0

    def to_xi(positions_m: FloatArray) -> FloatArray:
        return np.asarray(positions_m, dtype=float) / length_m - offset

    return to_xi
