"""A value-dependent diffusivity (time stepping), through HTTP."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pytest
from fastapi.testclient import TestClient
from scipy import integrate, optimize

from tests.lines import mean_crossing_time


def _post(client: TestClient, request: dict[str, Any]) -> Any:
    response = client.post("/v1/settling-time", json=request)
    assert response.status_code == 200, response.text
    return response.json()


def _boltzmann_eta(beta: float, value: float) -> float:
    """The similarity variable ξ = x/√(D0·t) at which c = value, for D = D0·exp(β·c) on a
    semi-infinite medium held at c = 1 from c = 0: the Boltzmann transform turns the equation
    into −(ξ/2)·c′ = (e^{βc}·c′)′, solved by shooting on the flux at ξ = 0 until c → 0 at
    large ξ (bisection to 1e-14, DOP853 at rtol 1e-13) — an independent reference, in no way
    the engine's method."""

    def d(c: float) -> float:
        return math.exp(beta * max(min(c, 10.0), -10.0))

    xi_max = 14 * math.sqrt(math.exp(beta))

    def shoot(flux: float, dense: bool = False) -> Any:
        def rhs(xi: float, y: list[float]) -> list[float]:
            return [y[1] / d(y[0]), -(xi / 2) * y[1] / d(y[0])]

        def crossed(xi: float, y: list[float]) -> float:
            return y[0]

        crossed.terminal = True  # type: ignore[attr-defined]
        crossed.direction = -1  # type: ignore[attr-defined]
        return integrate.solve_ivp(
            rhs,
            (0, xi_max),
            [1.0, -flux],
            method="DOP853",
            rtol=1e-13,
            atol=1e-15,
            events=crossed,
            dense_output=dense,
        )

    low, high = 1e-3, 1e2
    while high / low - 1 > 1e-14:
        middle = math.sqrt(low * high)
        if shoot(middle).t_events[0].size:
            high = middle
        else:
            low = middle
    solution = shoot(low, dense=True)
    return float(
        optimize.brentq(lambda xi: solution.sol(xi)[0] - value, 0.0, solution.t[-1], xtol=1e-15)
    )


def test_exponential_diffusivity_against_the_boltzmann_similarity_solution(
    client: TestClient,
) -> None:
    """A slab 6 mm thick held at 1 on both faces from 0, D = 1e-10·exp(2c) m²/s: at early
    times each face is a semi-infinite medium, so the point 0.3 mm deep reaches 0.5 when
    x/√(D0·t) = ξ*, t = (x/ξ*)²/D0 (the far face's influence, ~exp(−(3 mm)²/(4·D·t)), is
    below 1e-6 by then)."""
    xi = _boltzmann_eta(2.0, 0.5)
    expected = (0.3e-3 / xi) ** 2 / 1e-10
    body = _post(
        client,
        {
            "body": {"shape": "slab", "thickness": "6 mm"},
            "medium": {"diffusivity_exponential": {"d0": "1e-10 m^2/s", "beta": 2}},
            "initial": {"kind": "uniform", "value": 0},
            "surface": {"kind": "fixed_value", "value": 1},
            "criterion": {"measure": "reaches", "position": {"depth": "0.3 mm"}, "value": 0.5},
        },
    )
    assert body["method"]["path"] == "time_stepping"
    error = abs(body["time_s"] / expected - 1)
    assert error <= 1e-4
    assert error <= max(2 * body["method"]["estimated_relative_error"], 1e-5)


def test_vanishing_dependence_is_the_linear_answer(client: TestClient) -> None:
    common: dict[str, Any] = {
        "body": {"shape": "sphere", "radius": "1 mm"},
        "initial": {"kind": "uniform", "value": 0},
        "surface": {"kind": "fixed_value", "value": 1},
        "criterion": {"measure": "fraction_equilibrated", "fraction": 0.9},
    }
    linear = _post(client, {**common, "medium": {"diffusivity": "1e-9 m^2/s"}})
    flat = _post(
        client,
        {**common, "medium": {"diffusivity_exponential": {"d0": "1e-9 m^2/s", "beta": 1e-9}}},
    )
    assert flat["time_s"] == pytest.approx(linear["time_s"], rel=1e-4)


def test_a_table_matching_an_exponential_gives_its_answer(client: TestClient) -> None:
    """D = 1e-10·exp(2c) is exactly linear in log D, so a two-point table from 0 to 1 is the
    same law inside [0, 1], where this body's values stay."""
    common: dict[str, Any] = {
        "body": {"shape": "slab", "thickness": "1 mm"},
        "initial": {"kind": "uniform", "value": 0},
        "surface": {"kind": "fixed_value", "value": 1},
        "criterion": {"measure": "mean_square_deviation", "tolerance": 0.01},
    }
    exponential = _post(
        client, {**common, "medium": {"diffusivity_exponential": {"d0": 1e-10, "beta": 2}}}
    )
    table = _post(
        client,
        {**common, "medium": {"diffusivity_table": [[0, 1e-10], [1, 1e-10 * math.exp(2.0)]]}},
    )
    assert table["time_s"] == pytest.approx(exponential["time_s"], rel=1e-9)


DRYING: dict[str, Any] = {
    "body": {"shape": "slab", "thickness": "4 mm"},
    "initial": {"kind": "uniform", "value": 1.0},
    "surface": {"kind": "convective", "transfer_coefficient": "1e-7 m/s", "ambient": 0.0},
    "criterion": {"measure": "fraction_equilibrated", "fraction": 0.9},
}


def test_a_film_with_vanishing_dependence_is_the_linear_series(client: TestClient) -> None:
    """A drying sheet through a film, D(c) = 1e-10·exp(1e-9·c): the exact series at D = 1e-10
    with the same transfer coefficient."""
    flat = _post(
        client, {**DRYING, "medium": {"diffusivity_exponential": {"d0": 1e-10, "beta": 1e-9}}}
    )
    linear = _post(client, {**DRYING, "medium": {"diffusivity": 1e-10}})
    assert (flat["method"]["path"], linear["method"]["engine"]) == ("time_stepping", "series")
    error = abs(flat["time_s"] / linear["time_s"] - 1)
    assert error <= 1e-4
    assert error <= max(2 * flat["method"]["estimated_relative_error"], 1e-6)


def _drying_lines(cells: int) -> float:
    """An independent reference for the drying sheet with D = 1e-10·exp(3c): the half sheet on
    a uniform grid, D at each face taken at the mean of its two cells (not the Kirchhoff
    flux), the surface value c_s solved by Brent's method from k·(0 − c_s) = −D((c_s + c_N)/2)·
    (c_s − c_N)/(h/2) at every evaluation, stepped by scipy's BDF at rtol 1e-10 to 90 % of the
    loss."""
    half, k = 2e-3, 1e-7
    h = half / cells

    def d(c: Any) -> Any:
        return 1e-10 * np.exp(3.0 * c)

    def rhs(t: float, c: np.ndarray) -> np.ndarray:
        flux = d(0.5 * (c[:-1] + c[1:])) * (c[:-1] - c[1:]) / h
        net = np.zeros(cells)
        net[:-1] -= flux
        net[1:] += flux
        last = float(c[-1])

        def balance(surface: float) -> float:
            return k * surface - float(d(0.5 * (surface + last))) * (last - surface) / (h / 2)

        surface = optimize.brentq(balance, 0.0, max(last, 1e-300), xtol=1e-15)
        net[-1] -= k * surface
        return net / h

    return mean_crossing_time(rhs, np.ones(cells), 0.1, 1e7)


def test_a_weak_film_is_stepped_past_many_diffusion_times(client: TestClient) -> None:
    """k = 1e-12 m/s: exchange through the film (~Lc/k) is far slower than diffusion, and the
    body nearly uniform; the stepped time is the lumped one, ln(10)·Lc/k for 90 % of the
    loss, within the small internal resistance (Bi ≈ 5e-6)."""
    body = _post(
        client,
        {
            **DRYING,
            "medium": {"diffusivity_exponential": {"d0": 1e-10, "beta": 1e-9}},
            "surface": {"kind": "convective", "transfer_coefficient": "1e-12 m/s", "ambient": 0},
        },
    )
    lumped = math.log(10) * 2e-3 / 1e-12
    assert body["time_s"] == pytest.approx(lumped, rel=1e-4)


def test_drying_through_a_film_against_an_independent_method_of_lines(
    client: TestClient,
) -> None:
    """The method of lines on 100 and 200 cells, extrapolated at second order."""
    coarse, fine = _drying_lines(100), _drying_lines(200)
    reference = fine + (fine - coarse) / 3
    body = _post(
        client, {**DRYING, "medium": {"diffusivity_exponential": {"d0": 1e-10, "beta": 3}}}
    )
    error = abs(body["time_s"] / reference - 1)
    assert error <= 1e-4
    assert error <= max(2 * body["method"]["estimated_relative_error"], 1e-6)


@pytest.mark.parametrize(
    ("change", "pointer"),
    [
        ({"surface": {"kind": "convective", "biot": 1, "ambient": 1}}, "/surface/biot"),
        (
            {"medium": {"diffusivity_exponential": {"d0": 1e-12, "beta": 100}}},
            "/medium/diffusivity_exponential",
        ),
        (
            {"surface": {"kind": "bath"}, "bath": {"capacity_ratio": 2, "value": 1}},
            "/surface",
        ),
        ({"criterion": {"measure": "rsd", "tolerance": 0.1}}, "/criterion/measure"),
        ({"medium": {"diffusivity_table": [[1, 1e-10], [0, 1e-9]]}}, "/medium/diffusivity_table/1"),
    ],
)
def test_nonlinear_errors_name_the_field(
    client: TestClient, change: dict[str, Any], pointer: str
) -> None:
    request = {
        "body": {"shape": "slab", "thickness": "1 mm"},
        "medium": {"diffusivity_exponential": {"d0": 1e-10, "beta": 2}},
        "initial": {"kind": "uniform", "value": 0},
        "surface": {"kind": "fixed_value", "value": 1},
        "criterion": {"measure": "mean_square_deviation", "tolerance": 0.01},
        **change,
    }
    response = client.post("/v1/settling-time", json=request)
    assert response.status_code == 422, response.text
    assert pointer in [e["pointer"] for e in response.json()["errors"]]


def test_history_of_a_flat_law_is_the_linear_history(client: TestClient) -> None:
    """The drying sheet with β → 0, stepped, against the exact eigen history: every measure at
    each time and the profiles, within 1e-4 of the range."""
    times = [600.0, 3600.0, 20000.0, 80000.0]

    def history(medium: dict[str, Any]) -> Any:
        request = {**DRYING, "medium": medium, "times": times, "snapshot_count": 2}
        response = client.post("/v1/history", json=request)
        assert response.status_code == 200, response.text
        return response.json()

    stepped = history({"diffusivity_exponential": {"d0": 1e-10, "beta": 1e-9}})
    exact = history({"diffusivity": 1e-10})
    assert stepped["method"]["path"] == "time_stepping"
    for name in ("mean_square_deviation", "max_deviation", "fraction_equilibrated"):
        assert np.allclose(stepped["measures"][name], exact["measures"][name], atol=1e-4), name
    for ours, theirs in zip(stepped["snapshots"], exact["snapshots"], strict=True):
        assert ours["time_s"] == theirs["time_s"]
        assert np.allclose(ours["values"], theirs["values"], atol=1e-4)


def test_history_crosses_the_criterion_at_the_settling_time(client: TestClient) -> None:
    medium = {"diffusivity_exponential": {"d0": 1e-10, "beta": 3}}
    settled = _post(client, {**DRYING, "medium": medium})["time_s"]
    request = {**DRYING, "medium": medium, "times": [settled], "snapshot_count": 1}
    response = client.post("/v1/history", json=request)
    assert response.status_code == 200, response.text
    assert response.json()["measures"]["fraction_equilibrated"][0] == pytest.approx(0.9, abs=1e-4)


@pytest.mark.parametrize(
    ("surface", "initial"),
    [
        ({"kind": "fixed_value", "value": 1}, {"kind": "uniform", "value": 0}),
        (
            {"kind": "no_flux"},
            {"kind": "band", "between": ["0 mm", "0.3 mm"], "inside": 1, "outside": 0},
        ),
    ],
)
def test_kirchhoff_energy_criterion_with_a_flat_law_is_the_dirichlet_energy(
    client: TestClient, surface: dict[str, Any], initial: dict[str, Any]
) -> None:
    """With β → 0, Φ = D·c and ∫|∇Φ|² over λ1·∫(Φ0 − Φ_ref)² is the Dirichlet energy ratio the
    exact series reports: held (Φ_ref the surface's) and sealed (Φ_ref the mean)."""
    common = {
        "body": {"shape": "slab", "thickness": "1 mm"},
        "initial": initial,
        "surface": surface,
        "criterion": {"measure": "dirichlet_energy", "tolerance": 0.01},
    }
    flat = _post(
        client, {**common, "medium": {"diffusivity_exponential": {"d0": 1e-10, "beta": 1e-9}}}
    )
    exact = _post(client, {**common, "medium": {"diffusivity": 1e-10}})
    assert (flat["method"]["path"], exact["method"]["engine"]) == ("time_stepping", "series")
    error = abs(flat["time_s"] / exact["time_s"] - 1)
    assert error <= 1e-4
    assert error <= max(2 * flat["method"]["estimated_relative_error"], 1e-6)
