"""Heat inputs, partition coefficients and the lumped answer, through HTTP."""

from __future__ import annotations

import math
from typing import Any

import pytest
from fastapi.testclient import TestClient

from tests.references import ONE_TERM, ONE_TERM_SOURCE, THERMOCOUPLE_INPUTS, THERMOCOUPLE_TIME


def _post(client: TestClient, request: dict[str, Any]) -> dict[str, Any]:
    response = client.post("/v1/settling-time", json=request)
    assert response.status_code == 200, response.text
    body: dict[str, Any] = response.json()
    return body


def _centre_time_one_term(biot: float, theta: float) -> float:
    """Fo at which the sphere's centre reaches θ by the one-term solution θ0 = C1·e^{−ζ1²Fo},
    with ζ1 and C1 as printed in the textbook table."""
    zeta, coefficient = ONE_TERM[biot][4], ONE_TERM[biot][5]
    return math.log(coefficient / theta) / zeta**2


@pytest.fixture(scope="module")
def heated_sphere(client: TestClient) -> dict[str, Any]:
    """A sphere of R = 5 cm, k = 1 W/(m·K), ρ = 1000 kg/m³, c_p = 1000 J/(kg·K) (α = 1e-6
    m²/s) in a fluid with h = 200 W/(m²·K): Bi = h·R/k = 10. Its centre reaches θ = 0.1 at
    Fo = ln(C1/θ)/ζ1² = 0.368 by the one-term solution, where the second term is below 1e-4
    of the first, so the exact time agrees with it to the table's rounding."""
    return _post(
        client,
        {
            "body": {"shape": "sphere", "radius": "5 cm"},
            "medium": {
                "conductivity": "1 W/(m*K)",
                "density": "1000 kg/m^3",
                "specific_heat": "1 kJ/(kg*K)",
            },
            "initial": {"kind": "uniform", "value": 20},
            "surface": {
                "kind": "convective",
                "heat_transfer_coefficient": "200 W/(m^2*K)",
                "ambient": 120,
            },
            "criterion": {"measure": "value_at", "position": "centre", "tolerance": 0.1},
        },
    )


def test_heat_inputs_derive_diffusivity_and_biot(heated_sphere: dict[str, Any]) -> None:
    # α = k/(ρ·c_p) and Bi = h·R/k, by definition
    assert heated_sphere["diffusivity_m2_per_s"] == pytest.approx(1e-6, rel=1e-12)
    assert heated_sphere["biot"] == pytest.approx(10.0, rel=1e-12)
    assert heated_sphere["final_value"] == pytest.approx(120.0)


def test_heat_inputs_time_matches_the_one_term_table(heated_sphere: dict[str, Any]) -> None:
    # source: ONE_TERM_SOURCE (sphere, Bi = 10); four printed digits of ζ1 move Fo by ≤ 1e-4
    expected_fourier = _centre_time_one_term(10.0, 0.1)
    assert heated_sphere["fourier_number"] == pytest.approx(expected_fourier, rel=5e-4), (
        ONE_TERM_SOURCE
    )
    assert heated_sphere["time_s"] == pytest.approx(expected_fourier * 0.05**2 / 1e-6, rel=5e-4)
    assert heated_sphere["lumped"] is None  # Bi on V/A = 10/3 is far above 0.1


def test_thermal_diffusivity_with_conductivity_takes_a_heat_transfer_coefficient(
    client: TestClient, heated_sphere: dict[str, Any]
) -> None:
    """The same body given as α and k answers the same."""
    body = _post(
        client,
        {
            "body": {"shape": "sphere", "diameter": "100 mm"},
            "medium": {"diffusivity": "1e-6 m^2/s", "conductivity": "1 W/(m*degC)"},
            "initial": {"kind": "uniform", "value": 20},
            "surface": {
                "kind": "convective",
                "heat_transfer_coefficient": "0.02 W/(cm^2*K)",
                "ambient": 120,
            },
            "criterion": {"measure": "value_at", "position": "centre", "tolerance": 0.1},
        },
    )
    assert body["time_s"] == pytest.approx(heated_sphere["time_s"], rel=1e-9)


def test_partition_enters_biot_and_final_value(client: TestClient) -> None:
    """A bead (R = 1 mm, D = 1e-10 m²/s, K = 5) in a medium at 2 with k_f = 1e-6 m/s:
    Bi = k_f·R/(K·D) = 2 and the bead ends at K·2 = 10. Its centre comes within 10 % of that
    at Fo = ln(C1/0.1)/ζ1² with the table's sphere ζ1, C1 at Bi = 2."""
    body = _post(
        client,
        {
            "body": {"shape": "sphere", "radius": "1 mm"},
            "medium": {"diffusivity": "1e-10 m^2/s", "partition": 5},
            "initial": {"kind": "uniform", "value": 0},
            "surface": {"kind": "convective", "transfer_coefficient": "1e-6 m/s", "ambient": 2},
            "criterion": {"measure": "value_at", "position": "centre", "tolerance": 0.1},
        },
    )
    assert body["biot"] == pytest.approx(2.0, rel=1e-12)
    assert body["final_value"] == pytest.approx(10.0, rel=1e-12)
    expected = _centre_time_one_term(2.0, 0.1)  # ONE_TERM_SOURCE, sphere, Bi = 2
    assert body["fourier_number"] == pytest.approx(expected, rel=5e-4)


def test_partition_of_one_reproduces_the_foundation(client: TestClient) -> None:
    request: dict[str, Any] = {
        "body": {"shape": "slab", "thickness": "4 mm"},
        "medium": {"diffusivity": "7.5e-10 m^2/s"},
        "initial": {"kind": "uniform", "value": 0},
        "surface": {"kind": "convective", "transfer_coefficient": "2e-7 m/s", "ambient": 1},
        "criterion": {"measure": "fraction_equilibrated", "fraction": 0.9},
    }
    plain = _post(client, request)
    with_one = _post(client, {**request, "medium": {**request["medium"], "partition": 1}})
    assert with_one == plain


def test_fixed_value_is_the_body_side_value(client: TestClient) -> None:
    body = _post(
        client,
        {
            "body": {"shape": "slab", "thickness": "4 mm"},
            "medium": {"diffusivity": "7.5e-10 m^2/s", "partition": 3},
            "initial": {"kind": "uniform", "value": 0},
            "surface": {"kind": "fixed_value", "value": 1.5},
            "criterion": {"measure": "fraction_equilibrated", "fraction": 0.9},
        },
    )
    assert body["final_value"] == pytest.approx(1.5)


def test_thermocouple_lumped_time_matches_the_worked_example(client: TestClient) -> None:
    example = THERMOCOUPLE_INPUTS
    body = _post(
        client,
        {
            "body": {"shape": "sphere", "diameter": example["diameter_m"]},
            "medium": {
                "conductivity": example["conductivity"],
                "density": example["density"],
                "specific_heat": example["specific_heat"],
            },
            "initial": {"kind": "uniform", "value": 150},
            "surface": {
                "kind": "convective",
                "heat_transfer_coefficient": example["heat_transfer_coefficient"],
                "ambient": 50,
            },
            "criterion": {"measure": "fraction_equilibrated", "fraction": 0.99},
        },
    )
    reference = THERMOCOUPLE_TIME
    lumped = body["lumped"]
    assert lumped is not None
    assert lumped["biot_volume_to_area"] == pytest.approx(0.001, rel=1e-9)  # h·(D/6)/k
    # printed to two figures (10 s): within half a unit of the last printed digit
    assert abs(lumped["time_s"] - reference.value) <= 0.5, reference.source
    assert abs(body["time_s"] - reference.value) <= 0.5, reference.source
    # at Bi = 0.001 the body is nearly uniform: the two answers agree to a fraction of Bi
    assert body["time_s"] == pytest.approx(lumped["time_s"], rel=1e-3)
    assert "lumped_would_do" in [w["code"] for w in body["warnings"]]


@pytest.mark.parametrize("measure", ["rsd", "dirichlet_energy"])
def test_no_lumped_time_for_measures_a_uniform_body_lacks(client: TestClient, measure: str) -> None:
    body = _post(
        client,
        {
            "body": {"shape": "cylinder", "radius": "2 mm"},
            "medium": {"diffusivity": "1e-9 m^2/s"},
            "initial": {"kind": "uniform", "value": 1},
            "surface": {"kind": "convective", "biot": 0.05, "ambient": 2},
            "criterion": {"measure": measure, "tolerance": 0.01},
        },
    )
    assert body["lumped"] is None


@pytest.mark.parametrize(
    ("medium", "surface", "pointer"),
    [
        ({"conductivity": "1 W/(m*K)"}, None, "/medium"),
        ({"diffusivity": 1e-9, "density": 1000}, None, "/medium"),
        (
            {"diffusivity": 1e-9},
            {"kind": "convective", "heat_transfer_coefficient": 100, "ambient": 1},
            "/surface/heat_transfer_coefficient",
        ),
        (
            {"diffusivity": 1e-9, "conductivity": 0.5, "partition": 2},
            {"kind": "convective", "heat_transfer_coefficient": 100, "ambient": 1},
            "/medium/partition",
        ),
        (
            {"diffusivity": 1e-9},
            {"kind": "convective", "biot": 1, "transfer_coefficient": 1e-6, "ambient": 1},
            "/surface",
        ),
        (
            {"conductivity": "1 W/m", "density": 1000, "specific_heat": 4000},
            None,
            "/medium/conductivity",
        ),
        (
            {"conductivity": 1, "density": "1000 kg/m^2", "specific_heat": 4000},
            None,
            "/medium/density",
        ),
        ({"diffusivity": 1e-9, "partition": 0}, None, "/medium/partition"),
        (
            {"diffusivity": 1e-9, "partition": 1e6},
            {"kind": "convective", "biot": 1, "ambient": 1e9},
            "/medium/partition",
        ),
        (
            {"conductivity": 1e-9, "density": 1000, "specific_heat": 4000},
            None,
            "/medium/conductivity",
        ),
    ],
)
def test_heat_and_partition_errors_name_the_field(
    client: TestClient, medium: dict[str, Any], surface: dict[str, Any] | None, pointer: str
) -> None:
    request = {
        "body": {"shape": "slab", "thickness": "4 mm"},
        "medium": medium,
        "initial": {"kind": "uniform", "value": 0},
        "surface": surface or {"kind": "fixed_value", "value": 1},
        "criterion": {"measure": "mean_square_deviation", "tolerance": 0.01},
    }
    response = client.post("/v1/settling-time", json=request)
    assert response.status_code == 422, response.text
    assert pointer in [e["pointer"] for e in response.json()["errors"]]


def test_reaches_is_the_first_time_a_point_attains_a_value(
    client: TestClient, heated_sphere: dict[str, Any]
) -> None:
    """The same sphere's centre (20 °C into 120 °C) reaches 110 °C when θ = 0.1: the
    one-term table's Fourier number again, now as a first crossing; the finite-volume engine
    agrees with the series."""
    request: dict[str, Any] = {
        "body": {"shape": "sphere", "radius": "5 cm"},
        "medium": {
            "conductivity": "1 W/(m*K)",
            "density": "1000 kg/m^3",
            "specific_heat": "1 kJ/(kg*K)",
        },
        "initial": {"kind": "uniform", "value": 20},
        "surface": {
            "kind": "convective",
            "heat_transfer_coefficient": "200 W/(m^2*K)",
            "ambient": 120,
        },
        "criterion": {"measure": "reaches", "position": "centre", "value": 110},
    }
    series = _post(client, request)
    volume = _post(client, {**request, "engine": "finite_volume"})
    assert series["time_definition"] == "first_crossing"
    assert series["fourier_number"] == pytest.approx(_centre_time_one_term(10.0, 0.1), rel=5e-4)
    assert volume["time_s"] == pytest.approx(series["time_s"], rel=1e-4)
    assert series["time_s"] == pytest.approx(heated_sphere["time_s"], rel=1e-9)


def test_reaches_is_refused_for_a_value_never_attained(client: TestClient) -> None:
    response = client.post(
        "/v1/settling-time",
        json={
            "body": {"shape": "sphere", "radius": "5 cm"},
            "medium": {"diffusivity": 1e-6},
            "initial": {"kind": "uniform", "value": 20},
            "surface": {"kind": "fixed_value", "value": 120},
            "criterion": {"measure": "reaches", "position": "centre", "value": 130},
        },
    )
    assert response.status_code == 422
    assert response.json()["errors"][0]["pointer"] == "/criterion/value"
