"""Layered bodies (laminates, coated beads), through HTTP."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pytest
from fastapi.testclient import TestClient
from scipy import optimize

CRITERION = {"measure": "mean_square_deviation", "tolerance": 0.01}


def _post(client: TestClient, endpoint: str = "/v1/settling-time", **request: Any) -> Any:
    response = client.post(endpoint, json=request)
    assert response.status_code == 200, response.text
    return response.json()


@pytest.mark.parametrize(
    ("shape", "size"), [("slab", "thickness"), ("cylinder", "radius"), ("sphere", "radius")]
)
@pytest.mark.parametrize(
    "medium",
    [
        {"diffusivity": "1e-9 m^2/s", "partition": 3},
        {"conductivity": "0.5 W/(m*K)", "density": "1000 kg/m^3", "specific_heat": "500 J/(kg*K)"},
    ],
)
def test_layers_of_one_material_are_the_homogeneous_body(
    client: TestClient, shape: str, size: str, medium: dict[str, Any]
) -> None:
    surface = {"kind": "convective", "biot": 2, "ambient": 1}
    initial = {"kind": "uniform", "value": 0}
    homogeneous = _post(
        client,
        body={"shape": shape, size: "2 mm"},
        medium=medium,
        initial=initial,
        surface=surface,
        criterion=CRITERION,
    )
    layered = _post(
        client,
        body={
            "shape": shape,
            "layers": [
                {"thickness": "0.7 mm", "medium": medium},
                {"thickness": "1.3 mm", "medium": medium},
            ],
        },
        initial=initial,
        surface=surface,
        criterion=CRITERION,
    )
    assert layered["method"]["engine"] == "finite_volume"
    assert layered["time_s"] == pytest.approx(homogeneous["time_s"], rel=1e-5)
    assert layered["diffusivity_m2_per_s"] == pytest.approx(homogeneous["diffusivity_m2_per_s"])


def _composite_slowest_rate(
    first: tuple[float, float, float], second: tuple[float, float, float], resistance: float
) -> float:
    """The slowest rate λ of a two-layer plane wall sealed at x = 0 and held at x = a + d, from
    its eigencondition (composite media: the potential φ = c/K continuous up to the interface
    resistance R, the flux Λφ′ continuous, Λ = D·K; Carslaw & Jaeger and Crank treat composite
    walls this way — the condition is derived here, not looked up):
        Λ2β2·cos(β1a)·cos(β2d) − Λ1β1·sin(β1a)·(sin(β2d) + R·Λ2β2·cos(β2d)) = 0,
    φ1 = cos(β1x), φ2 ∝ sin(β2(a + d − x)), β_i = √(λ/D_i). (a, D, K) per layer."""
    a, d1, k1 = first
    d, d2, k2 = second
    l1, l2 = d1 * k1, d2 * k2

    def condition(rate: float) -> float:
        b1, b2 = math.sqrt(rate / d1), math.sqrt(rate / d2)
        return l2 * b2 * math.cos(b1 * a) * math.cos(b2 * d) - l1 * b1 * math.sin(b1 * a) * (
            math.sin(b2 * d) + resistance * l2 * b2 * math.cos(b2 * d)
        )

    upper = (math.pi / 2) ** 2 * max(d1, d2) / min(a, d) ** 2 * 4
    grid = np.geomspace(upper * 1e-6, upper, 4000)
    values = [condition(g) for g in grid]
    first_sign_change = next(i for i in range(len(grid) - 1) if values[i] * values[i + 1] < 0)
    return float(
        optimize.brentq(
            condition, grid[first_sign_change], grid[first_sign_change + 1], xtol=1e-14, rtol=1e-13
        )
    )


@pytest.mark.parametrize("resistance", [0.0, 2e5])
def test_two_layer_wall_slowest_rate_matches_its_eigencondition(
    client: TestClient, resistance: float
) -> None:
    first = (0.6e-3, 1e-9, 1.0)  # thickness, D, K
    second = (0.4e-3, 2e-10, 4.0)
    layers: list[dict[str, Any]] = [
        {"thickness": first[0], "medium": {"diffusivity": first[1], "partition": first[2]}},
        {"thickness": second[0], "medium": {"diffusivity": second[1], "partition": second[2]}},
    ]
    if resistance:
        layers[0]["interface_resistance"] = f"{resistance} s/m"
    body = _post(
        client,
        body={"shape": "slab", "layers": layers},
        initial={"kind": "uniform", "value": 0},
        faces={"first": {"kind": "no_flux"}, "second": {"kind": "fixed_value", "value": 2}},
        criterion=CRITERION,
        accuracy=1e-6,
    )
    expected = _composite_slowest_rate(first, second, resistance)
    # the engine's own slowest eigenvalue, on its finest grid (second order in the cells)
    assert body["slowest_rate_per_s"] == pytest.approx(expected, rel=1e-4)
    # the held face's value is the second layer's: c = 2 there, so the potential c/K is 0.5
    # and the first layer ends at K1·0.5
    assert body["final_state"]["layer_values"] == pytest.approx([0.5, 2.0])


def test_sealed_layered_body_keeps_its_amount(client: TestClient) -> None:
    """Sealed all round, the potential ends at Σ K_i∫c0/K_i / Σ K_i V_i: the amount (∫c) is
    kept, shared between the layers in proportion to K_i·V_i (sphere volumes r³/3)."""
    request: dict[str, Any] = {
        "body": {
            "shape": "sphere",
            "layers": [
                {"thickness": "1 mm", "medium": {"diffusivity": "1e-9 m^2/s"}},
                {
                    "thickness": "0.05 mm",
                    "medium": {"diffusivity": "1e-11 m^2/s", "partition": 0.2},
                },
            ],
        },
        "initial": {"kind": "band", "between": ["0 mm", "0.5 mm"], "inside": 1, "outside": 0},
        "surface": {"kind": "no_flux"},
        "criterion": CRITERION,
    }
    answer = _post(client, **request)
    amount = 0.5**3 / 3
    capacity = 1.0**3 / 3 + 0.2 * (1.05**3 - 1.0) / 3
    potential = amount / capacity
    assert answer["final_state"]["value"] == pytest.approx(potential, rel=1e-12)
    assert answer["final_state"]["layer_values"] == pytest.approx([potential, 0.2 * potential])
    history = _post(
        client,
        "/v1/history",
        **{**request, "times": [1e4], "snapshot_count": 1, "criterion": None},
    )
    snapshot = history["snapshots"][0]
    positions = np.array(snapshot["positions_m"])
    values = np.array(snapshot["values"])
    in_core = positions < 1e-3
    assert values[in_core] == pytest.approx(potential, rel=1e-6)
    assert values[positions > 1e-3] == pytest.approx(0.2 * potential, rel=1e-6)


@pytest.mark.parametrize(
    ("layers", "extra", "pointer"),
    [
        (
            [
                {"thickness": 1e-3, "medium": {"diffusivity": 1e-9}},
                {"thickness": 1e-3, "medium": {"diffusivity": 1e-7, "conductivity": 0.5}},
            ],
            {},
            "/body/layers/1/medium",
        ),
        (
            [
                {
                    "thickness": 1e-3,
                    "medium": {"diffusivity": 1e-7, "conductivity": 0.5, "partition": 2},
                },
            ],
            {},
            "/body/layers/0/medium/partition",
        ),
        (
            [{"thickness": 1e-3, "medium": {"diffusivity": 1e-9}, "interface_resistance": 10}],
            {},
            "/body/layers/0/interface_resistance",
        ),
        (
            [
                {"thickness": 1e-3, "medium": {"diffusivity": 1e-9}, "interface_resistance": "1 m"},
                {"thickness": 1e-3, "medium": {"diffusivity": 1e-9}},
            ],
            {},
            "/body/layers/0/interface_resistance",
        ),
        (
            [{"thickness": "1 kg", "medium": {"diffusivity": 1e-9}}],
            {},
            "/body/layers/0/thickness",
        ),
        (
            [{"thickness": 1e-3, "medium": {"diffusivity": 1e-9}}],
            {"medium": {"diffusivity": 1e-9}},
            "/medium",
        ),
    ],
)
def test_layer_errors_name_the_field(
    client: TestClient, layers: list[dict[str, Any]], extra: dict[str, Any], pointer: str
) -> None:
    request = {
        "body": {"shape": "slab", "layers": layers},
        "initial": {"kind": "uniform", "value": 0},
        "surface": {"kind": "fixed_value", "value": 1},
        "criterion": CRITERION,
        **extra,
    }
    request = {key: value for key, value in request.items() if value is not None}
    response = client.post("/v1/settling-time", json=request)
    assert response.status_code == 422, response.text
    assert pointer in [e["pointer"] for e in response.json()["errors"]]


def test_composite_wall_settles_to_the_resistance_network(client: TestClient) -> None:
    """Heat through a plane wall of two layers — 20 mm of k = 0.8 W/(m·K) and 50 mm of
    insulation, k = 0.04 — between air at 20 °C (h = 10 W/(m²·K)) and −5 °C (h = 25), with a
    contact resistance of 0.01 m²·K/W between them. In series: R = 1/10 + 0.02/0.8 + 0.01 +
    0.05/0.04 + 1/25 = 1.425 m²·K/W, q = 25/1.425 W/m², and each surface and interface sits
    at the temperature the running sum of resistances gives (the thermal-resistance network
    of steady conduction; common practice in the heat-transfer textbooks)."""
    body = _post(
        client,
        body={
            "shape": "slab",
            "layers": [
                {
                    "thickness": "20 mm",
                    "medium": {"conductivity": 0.8, "density": 1800, "specific_heat": 900},
                    "interface_resistance": "0.01 m^2*K/W",
                },
                {
                    "thickness": "50 mm",
                    "medium": {"conductivity": 0.04, "density": 30, "specific_heat": 1400},
                },
            ],
        },
        initial={"kind": "uniform", "value": 20},
        faces={
            "first": {"kind": "convective", "heat_transfer_coefficient": 10, "ambient": 20},
            "second": {"kind": "convective", "heat_transfer_coefficient": 25, "ambient": -5},
        },
        criterion={"measure": "max_deviation", "tolerance": 0.01},
    )
    q = 25.0 / (1 / 10 + 0.02 / 0.8 + 0.01 + 0.05 / 0.04 + 1 / 25)
    inner_surface = 20 - q / 10
    before_contact = inner_surface - q * 0.02 / 0.8
    after_contact = before_contact - q * 0.01
    outer_surface = after_contact - q * 0.05 / 0.04
    state = body["final_state"]
    assert state["kind"] == "steady_profile"
    assert state["end_values"] == pytest.approx([inner_surface, outer_surface], rel=1e-12)
    first, second = state["pieces"]
    assert first["a"] + first["b"] * 0.02 == pytest.approx(before_contact, rel=1e-12)
    assert second["a"] + second["b"] * 0.02 == pytest.approx(after_contact, rel=1e-12)
    assert outer_surface == pytest.approx(-5 + q / 25, rel=1e-12)


def test_layers_of_one_material_between_two_surroundings_are_the_membrane(
    client: TestClient,
) -> None:
    faces = {
        "first": {"kind": "fixed_value", "value": 1},
        "second": {"kind": "convective", "biot": 1.5, "ambient": 0},
    }
    medium = {"diffusivity": "1e-9 m^2/s"}
    common: dict[str, Any] = {
        "initial": {"kind": "uniform", "value": 0},
        "faces": faces,
        "criterion": CRITERION,
    }
    membrane = _post(client, body={"shape": "slab", "thickness": "1 mm"}, medium=medium, **common)
    layered = _post(
        client,
        body={
            "shape": "slab",
            "layers": [
                {"thickness": "0.3 mm", "medium": medium},
                {"thickness": "0.7 mm", "medium": medium},
            ],
        },
        **common,
    )
    assert layered["time_s"] == pytest.approx(membrane["time_s"], rel=1e-5)
    assert layered["final_state"]["end_values"] == pytest.approx(
        membrane["final_state"]["end_values"], rel=1e-12
    )
