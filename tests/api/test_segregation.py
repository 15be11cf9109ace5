"""Periodic segregation and its homogenization, through HTTP."""

from __future__ import annotations

import math
from typing import Any

import pytest
from fastapi.testclient import TestClient

from tests.references import HOMOGENIZATION_SOURCE

CELL: dict[str, Any] = {
    "body": {"shape": "slab"},
    "medium": {"diffusivity": "1e-14 m^2/s"},
    "initial": {"kind": "periodic", "wavelength": "100 um", "amplitude": 0.5, "mean": 1.0},
    "surface": {"kind": "no_flux"},
    "criterion": {"measure": "residual_segregation", "tolerance": 0.01},
}


@pytest.mark.parametrize(
    ("tolerance", "accuracy"), [(0.5, 1e-4), (0.1, 1e-4), (0.01, 1e-4), (0.01, 1e-7)]
)
def test_homogenization_follows_the_published_decay(
    client: TestClient, tolerance: float, accuracy: float
) -> None:
    """δ = exp(−π²Dt/l²) with l = 50 µm, half the 100 µm spacing; the cosine is drawn by
    chords whose sag (within a fifth of the accuracy) is carried in the error estimate."""
    response = client.post(
        "/v1/settling-time",
        json={
            **CELL,
            "criterion": {"measure": "residual_segregation", "tolerance": tolerance},
            "accuracy": accuracy,
        },
    )
    assert response.status_code == 200, response.text
    body = response.json()
    half_wavelength, diffusivity = 50e-6, 1e-14
    expected = half_wavelength**2 * math.log(1 / tolerance) / (math.pi**2 * diffusivity)
    error = abs(body["time_s"] / expected - 1)
    estimate = body["method"]["estimated_relative_error"]
    assert error <= max(estimate, 1e-9), HOMOGENIZATION_SOURCE
    assert estimate <= accuracy
    assert body["characteristic_length_m"] == pytest.approx(25e-6)  # half the cell


@pytest.mark.parametrize(
    ("change", "pointer"),
    [
        ({"body": {"shape": "slab", "thickness": "1 mm"}}, "/body"),
        ({"surface": {"kind": "fixed_value", "value": 1}}, "/surface"),
        (
            {
                "body": {"shape": "slab", "thickness": "1 mm"},
                "initial": {"kind": "uniform", "value": 0},
                "surface": {"kind": "fixed_value", "value": 1},
            },
            "/criterion/measure",
        ),
    ],
)
def test_segregation_errors_name_the_field(
    client: TestClient, change: dict[str, Any], pointer: str
) -> None:
    response = client.post("/v1/settling-time", json={**CELL, **change})
    assert response.status_code == 422, response.text
    assert pointer in [e["pointer"] for e in response.json()["errors"]]
