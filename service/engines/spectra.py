"""Eigenvalues and eigenfunctions of the homogeneous slab, long cylinder and sphere.

Each body has one or two *families* of modes in a dimensionless coordinate ξ: the slab's
symmetric cos(ζξ) and antisymmetric sin(ζξ) over ξ ∈ [−1, 1] (ξ = x/Lc − 1), the
cylinder's J0(ζρ) and the sphere's sin(ζρ)/(ζρ) over ρ ∈ [0, 1]. Every eigenfunction has
sup |φ| = 1. The eigenvalues ζ_n for a surface kind are the roots of one equation in a
known bracket per n:

=========================  ========================  ========================  ==============
family                     held value (Dirichlet)    sealed (no flux)          convective, Bi
=========================  ========================  ========================  ==============
slab, symmetric            (n−½)π                    (n−1)π                    ζ tan ζ = Bi
slab, antisymmetric        nπ                        (n−½)π                    ζ cot ζ = −Bi
cylinder                   J0(ζ) = 0                 J1(ζ) = 0, with ζ = 0     ζ J1/J0 = Bi
sphere                     nπ                        tan ζ = ζ, with ζ = 0     1 − ζ cot ζ = Bi
=========================  ========================  ========================  ==============

References: Crank, *The Mathematics of Diffusion*, 2nd ed. (1975), eqs. 4.17–4.18, 5.22,
6.18–6.20 and §4.3.6, §5.3.2, §6.3.3 (convective surfaces); Carslaw & Jaeger, *Conduction
of Heat in Solids*, 2nd ed. (1959), §3.10, §7.7, §9.9.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from scipy import special

from service.physics import Geometry, SurfaceKind

__all__ = ["FAMILIES", "ModeFamily", "roots"]

FloatArray = NDArray[np.float64]

# Bisection steps for a convective root: the bracket is at most π wide, so 60 halvings
# reach below one unit in the last place.
_BISECTION_STEPS = 60
# Below this |ζ·ξ| the moment integrals use their power series (closed forms cancel there).
_SMALL_ARGUMENT = 0.5
# Terms of those power series: (0.5)^(2k)/(2k)! is below 1e-20 by k = 10.
_SERIES_TERMS = 12


def _bisect(
    equation: Callable[[FloatArray], FloatArray], lower: FloatArray, upper: FloatArray
) -> FloatArray:
    """Vectorised bisection of ``equation`` over brackets with a sign change in each."""
    lower = lower.copy()
    upper = upper.copy()
    sign_lower = np.sign(equation(lower))
    for _ in range(_BISECTION_STEPS):
        middle = 0.5 * (lower + upper)
        sign_middle = np.sign(equation(middle))
        same = sign_middle == sign_lower
        lower = np.where(same, middle, lower)
        upper = np.where(same, upper, middle)
    return 0.5 * (lower + upper)


def _integer_roots(offset: float) -> Callable[[int, float], FloatArray]:
    def generate(count: int, biot: float) -> FloatArray:
        return np.asarray((np.arange(1, count + 1) + offset) * np.pi, dtype=np.float64)

    return generate


def _bessel_zeros(order: int, with_zero: bool) -> Callable[[int, float], FloatArray]:
    def generate(count: int, biot: float) -> FloatArray:
        if with_zero:
            return np.r_[0.0, special.jn_zeros(order, count - 1)] if count > 1 else np.zeros(1)
        return np.asarray(special.jn_zeros(order, count), dtype=float)

    return generate


def _bracketed(
    equation: Callable[[FloatArray, float], FloatArray],
    brackets: Callable[[int], tuple[FloatArray, FloatArray]],
) -> Callable[[int, float], FloatArray]:
    def generate(count: int, biot: float) -> FloatArray:
        lower, upper = brackets(count)
        return _bisect(lambda zeta: equation(zeta, biot), lower, upper)

    return generate


def _interval_brackets(
    lower: float, upper: float
) -> Callable[[int], tuple[FloatArray, FloatArray]]:
    """Brackets ((n + lower)π, (n + upper)π) for n = 0, 1, ..."""

    def brackets(count: int) -> tuple[FloatArray, FloatArray]:
        n = np.arange(count, dtype=np.float64)
        return (n + lower) * np.pi, (n + upper) * np.pi

    return brackets


def _cylinder_brackets(count: int) -> tuple[FloatArray, FloatArray]:
    j1 = np.r_[0.0, special.jn_zeros(1, count - 1)] if count > 1 else np.zeros(1)
    return j1, np.asarray(special.jn_zeros(0, count), dtype=float)


def _sphere_sealed(count: int, biot: float) -> FloatArray:
    if count == 1:
        return np.zeros(1)
    n = np.arange(1, count, dtype=float)
    inner = _bisect(lambda z: z * np.cos(z) - np.sin(z), n * np.pi, (n + 0.5) * np.pi)
    return np.r_[0.0, inner]


@dataclass(frozen=True)
class ModeFamily:
    """One family of eigenfunctions φ(ζξ) on a body, with its moment integrals.

    ``phi_series`` gives the Taylor coefficients c_k of φ(y) = Σ c_k y^(2k + parity);
    ``weight_power`` is the metric m of the weight ξ^m; ``lower`` the coordinate's start.
    """

    name: str
    weight_power: int
    lower: float
    parity: int
    phi: Callable[[FloatArray], FloatArray]
    phi_series: FloatArray
    closed_moments: Callable[[FloatArray, FloatArray], tuple[FloatArray, FloatArray]]
    norm: Callable[[FloatArray], FloatArray]
    roots: dict[SurfaceKind, Callable[[int, float], FloatArray]]
    spacing: float

    @property
    def body_measure(self) -> float:
        """∫ ξ^m dξ over the body: 2 for the slab, 1/(m+1) for radial bodies."""
        power = self.weight_power + 1
        return (1.0 - self.lower**power) / power

    def values(self, zeta: FloatArray, xi: FloatArray) -> FloatArray:
        """Matrix [points, modes] of φ(ζ_n ξ_p)."""
        return self.phi(np.outer(xi, zeta))

    def moments(
        self, zeta: FloatArray, a: FloatArray, b: FloatArray
    ) -> tuple[FloatArray, FloatArray]:
        """∫_a^b ξ^j φ(ζξ) ξ^m dξ for j = 0 and 1, as matrices [intervals, modes]."""
        reach = float(max(np.abs(a).max(), np.abs(b).max()))
        small = zeta * reach <= _SMALL_ARGUMENT
        if not np.any(small):
            return self.closed_moments(zeta[None, :], np.stack([a, b], axis=0)[:, :, None])
        if np.all(small):
            return self._series_moments(zeta, a, b)
        m0, m1 = self.closed_moments(zeta[None, ~small], np.stack([a, b], axis=0)[:, :, None])
        s0, s1 = self._series_moments(zeta[small], a, b)
        out0 = np.empty((a.size, zeta.size))
        out1 = np.empty((a.size, zeta.size))
        out0[:, ~small], out1[:, ~small] = m0, m1
        out0[:, small], out1[:, small] = s0, s1
        return out0, out1

    def _series_moments(
        self, zeta: FloatArray, a: FloatArray, b: FloatArray
    ) -> tuple[FloatArray, FloatArray]:
        # terms until (ζ·reach)^(2k) is below rounding of the first (one term when ζ = 0,
        # the constant mode, which is often the only small one)
        largest = float(zeta.max()) * float(max(np.abs(a).max(), np.abs(b).max()))
        terms = self.phi_series.size
        if largest == 0.0:
            terms = 1
        elif largest < 1.0:
            terms = min(terms, 1 + math.ceil(math.log(1e-17) / (2 * math.log(largest))))
        k = np.arange(terms)
        power = 2 * k + self.parity
        out = []
        for j in (0, 1):
            exponent = power + j + self.weight_power + 1
            span = (b[:, None] ** exponent - a[:, None] ** exponent) / exponent  # [intervals, k]
            zeta_power = zeta[None, :] ** power[:, None]  # [k, modes]
            out.append(span @ (self.phi_series[:terms, None] * zeta_power))
        return out[0], out[1]


def _taylor(kind: str) -> FloatArray:
    k = np.arange(_SERIES_TERMS, dtype=float)
    sign = (-1.0) ** k
    if kind == "cos":
        return sign / special.factorial(2 * k)
    if kind == "sin":
        return sign / special.factorial(2 * k + 1)
    if kind == "j0":
        return sign / (special.factorial(k) ** 2 * 4.0**k)
    return sign / special.factorial(2 * k + 1)  # sin(y)/y


def _cos_moments(zeta: FloatArray, ends: FloatArray) -> tuple[FloatArray, FloatArray]:
    y = zeta * ends
    prim0 = np.sin(y) / zeta
    prim1 = ends * np.sin(y) / zeta - 2.0 * np.sin(0.5 * y) ** 2 / zeta**2
    return prim0[1] - prim0[0], prim1[1] - prim1[0]


def _sin_moments(zeta: FloatArray, ends: FloatArray) -> tuple[FloatArray, FloatArray]:
    y = zeta * ends
    prim0 = 2.0 * np.sin(0.5 * y) ** 2 / zeta
    prim1 = -ends * np.cos(y) / zeta + np.sin(y) / zeta**2
    return prim0[1] - prim0[0], prim1[1] - prim1[0]


def _j0_moments(zeta: FloatArray, ends: FloatArray) -> tuple[FloatArray, FloatArray]:
    y = zeta * ends
    j0, j1 = special.j0(y), special.j1(y)
    prim0 = ends * j1 / zeta
    # ∫ y² J0(y) dy = y² J1(y) + y J0(y) − ∫₀^y J0(t) dt  (the last from scipy's itj0y0,
    # 50 times faster than the equivalent Struve-function form)
    integral_j0, _ = special.itj0y0(y)
    prim1 = (y * y * j1 + y * j0 - integral_j0) / zeta**3
    return prim0[1] - prim0[0], prim1[1] - prim1[0]


def _sinc_moments(zeta: FloatArray, ends: FloatArray) -> tuple[FloatArray, FloatArray]:
    y = zeta * ends
    s, c = np.sin(y), np.cos(y)
    prim0 = (s / zeta**2 - ends * c / zeta) / zeta
    prim1 = (2.0 * ends * s / zeta**2 + (2.0 / zeta**3 - ends**2 / zeta) * c) / zeta
    return prim0[1] - prim0[0], prim1[1] - prim1[0]


def _slab_norm_cos(zeta: FloatArray) -> FloatArray:
    return 0.5 + 0.5 * np.cos(zeta) * np.sinc(zeta / np.pi)


def _slab_norm_sin(zeta: FloatArray) -> FloatArray:
    return 0.5 - 0.5 * np.cos(zeta) * np.sinc(zeta / np.pi)


def _cylinder_norm(zeta: FloatArray) -> FloatArray:
    return special.j0(zeta) ** 2 + special.j1(zeta) ** 2


def _sphere_norm(zeta: FloatArray) -> FloatArray:
    # 3∫ρ² (sin ζρ/(ζρ))² dρ = (3/ζ²)(½ − sin 2ζ/(4ζ)); its ζ → 0 limit is 1.
    small = zeta < 1e-3
    safe = np.where(small, 1.0, zeta)
    exact = 3.0 / safe**2 * (0.5 - np.sin(2 * safe) / (4 * safe))
    return np.where(small, 1.0 - zeta**2 / 5.0, exact)


FAMILIES: dict[Geometry, tuple[ModeFamily, ...]] = {
    Geometry.SLAB: (
        ModeFamily(
            name="symmetric",
            weight_power=0,
            lower=-1.0,
            parity=0,
            phi=np.cos,
            phi_series=_taylor("cos"),
            closed_moments=_cos_moments,
            norm=_slab_norm_cos,
            roots={
                SurfaceKind.FIXED_VALUE: _integer_roots(-0.5),
                SurfaceKind.NO_FLUX: _integer_roots(-1.0),
                SurfaceKind.CONVECTIVE: _bracketed(
                    lambda z, bi: z * np.sin(z) - bi * np.cos(z),
                    _interval_brackets(0.0, 0.5),
                ),
            },
            spacing=np.pi / 2,
        ),
        ModeFamily(
            name="antisymmetric",
            weight_power=0,
            lower=-1.0,
            parity=1,
            phi=np.sin,
            phi_series=_taylor("sin"),
            closed_moments=_sin_moments,
            norm=_slab_norm_sin,
            roots={
                SurfaceKind.FIXED_VALUE: _integer_roots(0.0),
                SurfaceKind.NO_FLUX: _integer_roots(-0.5),
                SurfaceKind.CONVECTIVE: _bracketed(
                    lambda z, bi: z * np.cos(z) + bi * np.sin(z),
                    _interval_brackets(0.5, 1.0),
                ),
            },
            spacing=np.pi / 2,
        ),
    ),
    Geometry.CYLINDER: (
        ModeFamily(
            name="radial",
            weight_power=1,
            lower=0.0,
            parity=0,
            phi=special.j0,
            phi_series=_taylor("j0"),
            closed_moments=_j0_moments,
            norm=_cylinder_norm,
            roots={
                SurfaceKind.FIXED_VALUE: _bessel_zeros(0, with_zero=False),
                SurfaceKind.NO_FLUX: _bessel_zeros(1, with_zero=True),
                SurfaceKind.CONVECTIVE: _bracketed(
                    lambda z, bi: z * special.j1(z) - bi * special.j0(z), _cylinder_brackets
                ),
            },
            spacing=np.pi / 2,
        ),
    ),
    Geometry.SPHERE: (
        ModeFamily(
            name="radial",
            weight_power=2,
            lower=0.0,
            parity=0,
            phi=lambda y: np.sinc(y / np.pi),
            phi_series=_taylor("sinc"),
            closed_moments=_sinc_moments,
            norm=_sphere_norm,
            roots={
                SurfaceKind.FIXED_VALUE: _integer_roots(0.0),
                SurfaceKind.NO_FLUX: _sphere_sealed,
                SurfaceKind.CONVECTIVE: _bracketed(
                    lambda z, bi: np.cos(z) + (bi - 1.0) * np.sinc(z / np.pi),
                    _interval_brackets(0.0, 1.0),
                ),
            },
            spacing=np.pi / 2,
        ),
    ),
}


def roots(geometry: Geometry, kind: SurfaceKind, biot: float, count: int) -> list[FloatArray]:
    """The first ``count`` eigenvalues ζ of each family of ``geometry``."""
    return [family.roots[kind](count, biot) for family in FAMILIES[geometry]]


def slowest_wavenumber(geometry: Geometry, kind: SurfaceKind, biot: float) -> float:
    """Smallest non-zero ζ over all families: the body's slowest mode (dimensionless)."""
    candidates = np.concatenate(roots(geometry, kind, biot, 2))
    return float(np.min(candidates[candidates > 0]))
