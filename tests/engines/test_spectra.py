"""Eigenvalues and one-term coefficients against published tables and scipy.special."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import special

from service.engines.series import SeriesEngine
from service.engines.spectra import FAMILIES, roots, slowest_wavenumber
from service.physics import Geometry, SurfaceKind
from tests.factories import make_case
from tests.references import (
    NO_FLUX_FIRST_WAVENUMBERS,
    ONE_TERM,
    WATTS_ANTISYMMETRIC_ROOTS,
    WATTS_SYMMETRIC_ROOTS,
)


def test_roots_cylinder_held_surface_are_zeros_of_j0() -> None:
    # scipy.special.jn_zeros is the reference library here.
    computed = roots(Geometry.CYLINDER, SurfaceKind.FIXED_VALUE, 0.0, 50)[0]
    np.testing.assert_allclose(computed, special.jn_zeros(0, 50), rtol=1e-14)


def test_roots_cylinder_sealed_are_zeros_of_j1() -> None:
    computed = roots(Geometry.CYLINDER, SurfaceKind.NO_FLUX, 0.0, 30)[0]
    np.testing.assert_allclose(computed[1:], special.jn_zeros(1, 29), rtol=1e-14)
    assert computed[0] == 0.0


@pytest.mark.parametrize("biot", [0.01, 0.3, 7.0, 1e4])
def test_roots_cylinder_convective_satisfy_bessel_equation(biot: float) -> None:
    zeta = roots(Geometry.CYLINDER, SurfaceKind.CONVECTIVE, biot, 40)[0]
    residual = zeta * special.j1(zeta) - biot * special.j0(zeta)
    assert np.max(np.abs(residual)) < 1e-10 * max(1.0, biot)
    assert np.all(np.diff(zeta) > 0)


@pytest.mark.parametrize("biot", sorted(ONE_TERM))
def test_roots_first_eigenvalue_matches_textbook_table(biot: float) -> None:
    # Çengel, Heat and Mass Transfer, Table 4-2 (seen); Incropera Table 5.1 (memory).
    wall, _, cylinder, _, sphere, _ = ONE_TERM[biot]
    for geometry, printed in (
        (Geometry.SLAB, wall),
        (Geometry.CYLINDER, cylinder),
        (Geometry.SPHERE, sphere),
    ):
        first = roots(geometry, SurfaceKind.CONVECTIVE, biot, 1)[0][0]
        assert first == pytest.approx(printed, abs=1e-4)


@pytest.mark.parametrize("biot", sorted(ONE_TERM))
def test_series_one_term_coefficient_matches_textbook_table(biot: float) -> None:
    # C1 of θ0 = C1 exp(−ζ1² Fo): the centre amplitude of the first mode for a uniform start.
    # Çengel, Table 4-2 (seen in a scan).
    _, wall, _, cylinder, _, sphere = ONE_TERM[biot]
    engine = SeriesEngine()
    for geometry, printed in (
        (Geometry.SLAB, wall),
        (Geometry.CYLINDER, cylinder),
        (Geometry.SPHERE, sphere),
    ):
        case = make_case(
            geometry, SurfaceKind.CONVECTIVE, biot=biot, surface_value=0.0, start_value=1.0
        )
        solution = engine.solution(case, 0.05)
        centre = case.body.extent_m / 2 if geometry is Geometry.SLAB else 0.0
        first = solution.amplitudes[0] * solution.basis_at(np.array([centre]))[0, 0]
        assert first == pytest.approx(printed, abs=1e-4)


@pytest.mark.parametrize("constant", sorted(WATTS_SYMMETRIC_ROOTS))
def test_roots_slab_symmetric_family_matches_watts_table_a1(constant: float) -> None:
    # Watts (2007) App. A Table A.1, roots of ζ tan ζ = C (seen).
    computed = roots(Geometry.SLAB, SurfaceKind.CONVECTIVE, constant, 4)[0]
    np.testing.assert_allclose(computed, WATTS_SYMMETRIC_ROOTS[constant], atol=1e-4)


@pytest.mark.parametrize("constant", sorted(WATTS_ANTISYMMETRIC_ROOTS))
def test_roots_slab_antisymmetric_family_matches_watts_table_a2(constant: float) -> None:
    # Watts (2007) App. A Table A.2, roots of q cot q + C = 0 (seen); the fourth printed
    # roots for C = 1 and C = 4 are one unit high in the last digit, within atol.
    computed = roots(Geometry.SLAB, SurfaceKind.CONVECTIVE, constant, 4)[1]
    np.testing.assert_allclose(computed, WATTS_ANTISYMMETRIC_ROOTS[constant], atol=1.01e-4)


def test_slowest_wavenumber_sealed_bodies_match_published_values() -> None:
    slab = NO_FLUX_FIRST_WAVENUMBERS["slab_on_thickness"]
    # on the half-thickness the sealed slab's first mode is π/2, i.e. π on the full thickness
    assert 2 * slowest_wavenumber(Geometry.SLAB, SurfaceKind.NO_FLUX, 0.0) == pytest.approx(
        slab.value, abs=slab.tolerance
    )
    for name, geometry in (("cylinder", Geometry.CYLINDER), ("sphere", Geometry.SPHERE)):
        reference = NO_FLUX_FIRST_WAVENUMBERS[name]
        assert slowest_wavenumber(geometry, SurfaceKind.NO_FLUX, 0.0) == pytest.approx(
            reference.value, abs=reference.tolerance
        )


@pytest.mark.parametrize("geometry", [Geometry.SLAB, Geometry.CYLINDER, Geometry.SPHERE])
def test_moments_match_adaptive_quadrature(geometry: Geometry) -> None:
    # ∫_a^b ξ^j φ(ζξ) ξ^m dξ, closed forms and power series, against scipy.integrate.quad.
    from scipy import integrate

    for family in FAMILIES[geometry]:
        zeta = np.array([1e-4, 0.3, 2.0, 7.7, 40.0, 400.0])
        lower = np.array([family.lower, 0.1, 0.6])
        upper = np.array([0.2, 0.5, 1.0])
        m0, m1 = family.moments(zeta, lower, upper)
        for i in range(lower.size):
            for k, z in enumerate(zeta):
                for power, computed in ((0, m0[i, k]), (1, m1[i, k])):
                    expected = integrate.quad(
                        lambda x, z=z, power=power, f=family: (
                            x**power * f.phi(np.array(z * x)) * x**f.weight_power
                        ),
                        lower[i],
                        upper[i],
                        epsabs=1e-14,
                        limit=500,
                    )[0]
                    assert computed == pytest.approx(expected, abs=1e-12)
