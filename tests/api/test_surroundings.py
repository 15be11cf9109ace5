"""Surroundings that follow a schedule (superposition in time), through HTTP."""

from __future__ import annotations

from typing import Any

import numpy as np
import pytest
from fastapi.testclient import TestClient
from scipy import integrate, sparse

BASE: dict[str, Any] = {
    "body": {"shape": "slab", "thickness": "2 mm"},
    "medium": {"diffusivity": "1e-9 m^2/s"},
    "initial": {"kind": "uniform", "value": 0},
    "criterion": {"measure": "mean_square_deviation", "tolerance": 0.01},
}


def _post(client: TestClient, **request: Any) -> Any:
    response = client.post("/v1/settling-time", json={**BASE, **request})
    assert response.status_code == 200, response.text
    return response.json()


def test_a_held_then_stepped_surface_is_the_step_delayed(client: TestClient) -> None:
    """Held at the body's own value for 100 s, then stepped: nothing happens in the first
    100 s, so the answer is the plain step's plus 100 s (superposition in time, exactly)."""
    step = _post(client, surface={"kind": "fixed_value", "value": 1})
    delayed = _post(
        client,
        surface={
            "kind": "fixed_value",
            "value": [{"start_at": 0}, {"hold": "100 s", "at": 0}, {"hold": "1 h", "at": 1}],
        },
    )
    assert delayed["time_s"] == pytest.approx(step["time_s"] + 100.0, rel=1e-12)


def test_a_very_fast_ramp_is_a_step(client: TestClient) -> None:
    step = _post(client, surface={"kind": "fixed_value", "value": 1})
    ramp = _post(
        client,
        surface={"kind": "fixed_value", "value": [{"start_at": 0}, {"ramp_to": 1, "over": "1 ms"}]},
    )
    # a 1 ms ramp acts as a step in its middle, 0.5 ms late
    assert ramp["time_s"] == pytest.approx(step["time_s"] + 0.5e-3, abs=1e-6)


def _ramped_reference(cells: int) -> float:
    """Method of lines on a fine uniform grid: a slab 2 mm thick, D = 1e-9 m²/s, both faces
    through a film with Bi = 2 on the half-thickness (k/D = 2000 /m) to an ambient rising
    from 0 to 1 over 600 s, then held; stopped when ⟨(c − 1)²⟩ falls to 1 % of its start."""
    length, diffusivity, film = 2e-3, 1e-9, 2.0 / 1e-3
    h = length / cells
    conductance = np.full(cells - 1, 1.0 / h)
    end = 1.0 / (h / 2 + 1.0 / film)
    diagonal = np.r_[conductance, 0.0] + np.r_[0.0, conductance]
    diagonal[[0, -1]] += end
    operator = diffusivity / h * sparse.diags([conductance, -diagonal, conductance], [-1, 0, 1])

    def ambient(t: float) -> float:
        return min(t / 600.0, 1.0)

    def rhs(t: float, y: np.ndarray) -> np.ndarray:
        forcing = np.zeros(cells)
        forcing[[0, -1]] = diffusivity / h * end * ambient(t)
        return operator @ y + forcing

    def event(t: float, y: np.ndarray) -> float:
        return float(np.mean((y - 1.0) ** 2)) - 0.01

    event.terminal = True  # type: ignore[attr-defined]
    event.direction = -1  # type: ignore[attr-defined]
    result = integrate.solve_ivp(
        rhs,
        (0.0, 1e5),
        np.zeros(cells),
        method="BDF",
        events=event,
        rtol=1e-10,
        atol=1e-13,
        jac_sparsity=sparse.diags([1.0, 1.0, 1.0], [-1, 0, 1], shape=(cells, cells)),
        max_step=60.0,
    )
    return float(result.t_events[0][0])


def test_a_ramped_ambient_against_method_of_lines(client: TestClient) -> None:
    surface = {
        "kind": "convective",
        "biot": 2,
        "ambient": [{"start_at": 0}, {"ramp_to": 1, "over": "10 min"}],
    }
    series = _post(client, surface=surface)
    volume = _post(client, surface=surface, engine="finite_volume")
    reference = _ramped_reference(400)  # its grid error is of order (1/400)² ≈ 6e-6
    assert series["time_s"] == pytest.approx(reference, rel=1e-4)
    assert volume["time_s"] == pytest.approx(series["time_s"], rel=1e-5)


@pytest.mark.parametrize(
    ("change", "pointer"),
    [
        (
            {
                "surface": None,
                "faces": {
                    "first": {
                        "kind": "fixed_value",
                        "value": [{"start_at": 0}, {"ramp_to": 1, "over": 10}],
                    },
                    "second": {"kind": "no_flux"},
                },
            },
            "/faces",
        ),
        (
            {
                "surface": {
                    "kind": "fixed_value",
                    "value": [{"start_at": 0}, {"ramp_to": 1, "over": 10}],
                },
                "criterion": {"measure": "rsd", "tolerance": 0.1},
            },
            "/criterion/measure",
        ),
        (
            {
                "surface": {
                    "kind": "fixed_value",
                    "value": [{"ramp_to": 1, "over": 10}, {"hold": 5, "at": 1}],
                }
            },
            "/surface/value/0",
        ),
    ],
)
def test_surroundings_errors_name_the_field(
    client: TestClient, change: dict[str, Any], pointer: str
) -> None:
    request = {**BASE, **change}
    request = {key: value for key, value in request.items() if value is not None}
    response = client.post("/v1/settling-time", json=request)
    assert response.status_code == 422, response.text
    assert pointer in [e["pointer"] for e in response.json()["errors"]]
