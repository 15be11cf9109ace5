"""POST /v1/depth: the depth at which a value is reached at a given time."""

from __future__ import annotations

import math
from typing import Any

import pytest
from fastapi.testclient import TestClient
from scipy import optimize, special

from tests.references import CALLISTER_CARBURIZING

DATA = CALLISTER_CARBURIZING
CASE: dict[str, Any] = {
    "body": {"shape": "semi_infinite"},
    "medium": {"diffusivity": DATA["diffusivity"]},
    "initial": {"kind": "uniform", "value": DATA["start"]},
    "surface": {"kind": "fixed_value", "value": DATA["surface"]},
    "at": f"{DATA['hours'].value} h",
    "value": DATA["value"],
}


def _post(client: TestClient, **change: Any) -> Any:
    response = client.post("/v1/depth", json={**CASE, **change})
    assert response.status_code == 200, response.text
    return response.json()


def _erf_depth(diffusivity: float, time_s: float) -> float:
    """x = 2·√(Dt)·erf⁻¹((c − c_s)/(c0 − c_s)) from c = c_s + (c0 − c_s)·erf(x/(2√(Dt))),
    with scipy.special.erfinv."""
    ratio = (DATA["value"] - DATA["surface"]) / (DATA["start"] - DATA["surface"])
    return 2 * math.sqrt(diffusivity * time_s) * float(special.erfinv(ratio))


def test_carburized_case_depth_of_the_worked_example(client: TestClient) -> None:
    """At the book's 7.1 h the 0.80 wt% C front is at the book's 0.5 mm (its time printed to
    two figures, ~1 %), and at the erf solution's depth to 1e-9."""
    body = _post(client)
    assert body["measured_from"] == "surface"
    assert body["depth_m"] == pytest.approx(DATA["depth_m"], rel=0.01), DATA["hours"].source
    exact = _erf_depth(float(DATA["diffusivity"]), body["time_s"])
    assert body["depth_m"] == pytest.approx(exact, rel=1e-9)
    assert body["method"]["estimated_relative_error"] <= 1e-4


def test_convective_surface_depth_matches_the_erfc_solution(client: TestClient) -> None:
    """θ = erfc(η) − exp(Hx + H²Dt)·erfc(η + H√(Dt)), η = x/(2√(Dt)), H = k/D (Carslaw &
    Jaeger, Conduction of Heat in Solids, 2nd ed., §2.7; from memory), solved for x."""
    transfer, diffusivity, hours = 2e-7, float(DATA["diffusivity"]), 20.0
    body = _post(
        client,
        surface={
            "kind": "convective",
            "transfer_coefficient": transfer,
            "ambient": DATA["surface"],
        },
        at=f"{hours} h",
    )
    root, h = math.sqrt(diffusivity * hours * 3600), transfer / diffusivity
    target = (DATA["value"] - DATA["start"]) / (DATA["surface"] - DATA["start"])

    def theta(x: float) -> float:
        eta = x / (2 * root)
        return float(special.erfc(eta) - math.exp(-eta * eta) * special.erfcx(eta + h * root))

    exact = optimize.brentq(lambda x: theta(x) - target, 0.0, 10 * root, xtol=1e-16)
    assert body["depth_m"] == pytest.approx(exact, rel=1e-8)


def test_a_thick_slab_early_has_the_semi_infinite_depth(client: TestClient) -> None:
    semi = _post(client)
    slab = _post(client, body={"shape": "slab", "thickness": "20 mm"})
    assert slab["measured_from"] == "first_face"
    assert slab["depth_m"] == pytest.approx(semi["depth_m"], rel=1e-9)


def test_finite_volume_depth_agrees_with_the_series(client: TestClient) -> None:
    """A 5 mm rod: the exact series and the three-grid finite volumes, within the accuracy."""
    rod = {"shape": "cylinder", "radius": "5 mm"}
    series = _post(client, body=rod)
    volumes = _post(client, body=rod, engine="finite_volume")
    assert (series["method"]["engine"], volumes["method"]["engine"]) == ("series", "finite_volume")
    assert series["measured_from"] == "outer_surface"
    error = abs(volumes["depth_m"] / series["depth_m"] - 1)
    assert error <= 1e-4
    assert error <= max(2 * volumes["method"]["estimated_relative_error"], 1e-9)


def test_a_value_reached_nowhere_has_no_depth(client: TestClient) -> None:
    body = _post(client, value=1.5)
    assert body["depth_m"] is None
    assert body["profile_range"][1] == pytest.approx(DATA["surface"])


@pytest.mark.parametrize(
    ("change", "pointer"),
    [
        ({"at": "1e-9 s", "body": {"shape": "slab", "thickness": "20 mm"}}, "/at"),
        ({"at": "7 kg"}, "/at"),
        (
            {"surface": {"kind": "no_flux"}, "body": {"shape": "slab", "thickness": "2 mm"}},
            "/surface",
        ),
        ({"criterion": {"measure": "max_deviation", "tolerance": 0.1}}, "/criterion"),
    ],
)
def test_depth_errors_name_the_field(
    client: TestClient, change: dict[str, Any], pointer: str
) -> None:
    response = client.post("/v1/depth", json={**CASE, **change})
    assert response.status_code == 422, response.text
    assert any(e["pointer"].startswith(pointer) for e in response.json()["errors"])
