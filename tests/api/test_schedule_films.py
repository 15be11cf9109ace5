"""A surface film under a temperature schedule: its Biot number moves with D, so the case is
stepped in clock time (``method.path: "time_stepping"``), through HTTP."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pytest
from fastapi.testclient import TestClient

from tests.lines import mean_crossing_time

# D(T) = D_ref·exp(−(Q/R)(1/T − 1/T_ref)); a 10 mm sheet loading from 0.2 toward 1 through a
# film of k = 2e-8 m/s (Bi = 10 at 1000 °C on the 5 mm half-thickness).
D_REF, T_REF, Q_J_PER_MOL, R = 1e-11, 1273.15, 140e3, 8.314462618
FILM_M_PER_S = 2e-8
CASE: dict[str, Any] = {
    "body": {"shape": "slab", "thickness": "10 mm"},
    "medium": {
        "arrhenius": {
            "d_ref": f"{D_REF} m^2/s",
            "t_ref": "1000 degC",
            "activation_energy": f"{Q_J_PER_MOL / 1e3} kJ/mol",
        }
    },
    "initial": {"kind": "uniform", "value": 0.2},
    "surface": {"kind": "convective", "transfer_coefficient": f"{FILM_M_PER_S} m/s", "ambient": 1},
    "criterion": {"measure": "fraction_equilibrated", "fraction": 0.5},
}
RAMP_AND_SOAK = [
    {"start_at": "800 degC"},
    {"ramp_to": "1000 degC", "over": "5 h"},
    {"hold": "400 h", "at": "1000 degC"},
]


def _post(client: TestClient, **change: Any) -> Any:
    response = client.post("/v1/settling-time", json={**CASE, **change})
    assert response.status_code == 200, response.text
    return response.json()


def test_a_hold_at_one_temperature_is_the_constant_diffusivity(client: TestClient) -> None:
    """Stepped under a one-hold schedule, the exact series answer at that D."""
    stepped = _post(
        client, schedule=[{"start_at": "1000 degC"}, {"hold": "1000 h", "at": "1000 degC"}]
    )
    constant = _post(client, medium={"diffusivity": f"{D_REF} m^2/s"})
    assert stepped["method"]["path"] == "time_stepping"
    assert constant["method"]["path"] == "eigen"
    assert stepped["time_s"] == pytest.approx(constant["time_s"], rel=2e-4)


def test_a_very_fast_film_is_the_held_surface(client: TestClient) -> None:
    """k = 1e-3 m/s (Bi = 5e5 at 1000 °C): the stepped answer approaches the held surface's,
    found exactly in reduced time."""
    fast = {"kind": "convective", "transfer_coefficient": "1e-3 m/s", "ambient": 1}
    stepped = _post(client, schedule=RAMP_AND_SOAK, surface=fast)
    held = _post(client, schedule=RAMP_AND_SOAK, surface={"kind": "fixed_value", "value": 1})
    assert held["method"]["path"] == "eigen"
    assert stepped["time_s"] == pytest.approx(held["time_s"], rel=2e-4)


def _method_of_lines_time(cells: int) -> float:
    """An independent reference: the half-sheet on a uniform grid, D(T(t)) from the schedule,
    the film in series with the last half cell, stepped by scipy's BDF at rtol 1e-10 with the
    mean's crossing as an event."""
    half = 5e-3
    h = half / cells
    activation = Q_J_PER_MOL / R

    def temperature(t: float) -> float:
        ramp = 5 * 3600.0
        return 1073.15 + 200.0 * min(t / ramp, 1.0)

    def diffusivity(t: float) -> float:
        return D_REF * math.exp(-activation * (1 / temperature(t) - 1 / T_REF))

    def rhs(t: float, c: np.ndarray) -> np.ndarray:
        d = diffusivity(t)
        flux = d * (c[:-1] - c[1:]) / h
        net = np.zeros(cells)
        net[:-1] -= flux
        net[1:] += flux
        net[-1] += (1.0 - c[-1]) / (1 / FILM_M_PER_S + (h / 2) / d)
        return net / h

    # half of the way from 0.2 to 1
    return mean_crossing_time(rhs, np.full(cells, 0.2), 0.6, 400 * 3600.0)


def test_ramp_and_soak_against_an_independent_method_of_lines(client: TestClient) -> None:
    """The method-of-lines time on 200 and 400 cells, extrapolated (second order), against the
    stepped answer within its accuracy."""
    coarse, fine = _method_of_lines_time(200), _method_of_lines_time(400)
    reference = fine + (fine - coarse) / 3
    body = _post(client, schedule=RAMP_AND_SOAK)
    assert body["method"]["path"] == "time_stepping"
    assert body["schedule"]["met_in_segment"] == 1
    error = abs(body["time_s"] / reference - 1)
    assert error <= 1e-4
    assert error <= max(2 * body["method"]["estimated_relative_error"], 1e-6)


def test_a_short_schedule_says_how_long_the_soak_must_grow(client: TestClient) -> None:
    """A 10 h soak is too short; lengthened by the soak time the answer names, the schedule
    meets the criterion at its end."""
    short = [
        *RAMP_AND_SOAK[:2],
        {"hold": "10 h", "at": "1000 degC"},
        {"ramp_to": "700 degC", "over": "3 h"},
    ]
    body = _post(client, schedule=short)
    extra_h = body["schedule"]["extra_soak_s"] / 3600
    assert "schedule_too_short" in [w["code"] for w in body["warnings"]]
    assert extra_h > 0
    longer = [*short[:2], {"hold": f"{10 + extra_h} h", "at": "1000 degC"}, short[3]]
    again = _post(client, schedule=longer)
    end_s = (5 + 10 + extra_h + 3) * 3600
    assert again["time_s"] == pytest.approx(end_s, rel=5e-4)
    assert body["time_s"] == pytest.approx(end_s, rel=1e-9)


def test_surroundings_ramping_under_a_one_hold_schedule_is_the_exact_superposition(
    client: TestClient,
) -> None:
    """Under a one-hold temperature schedule, surroundings ramping 0 → 1 over 20 h are stepped
    in clock time; at the hold's constant D the eigen path applies the same ramp exactly by
    superposition in time (Duhamel) — two independent routes."""
    ramped = {
        "kind": "convective",
        "transfer_coefficient": f"{FILM_M_PER_S} m/s",
        "ambient": [{"start_at": 0}, {"ramp_to": 1, "over": "20 h"}],
    }
    held = {"kind": "fixed_value", "value": [{"start_at": 0}, {"ramp_to": 1, "over": "20 h"}]}
    criterion = {"measure": "mean_square_deviation", "tolerance": 1e-3}
    for surface in (ramped, held):
        stepped = _post(
            client,
            surface=surface,
            criterion=criterion,
            schedule=[{"start_at": "1000 degC"}, {"hold": "2000 h", "at": "1000 degC"}],
        )
        exact = _post(
            client, surface=surface, criterion=criterion, medium={"diffusivity": f"{D_REF} m^2/s"}
        )
        assert stepped["method"]["path"] == "time_stepping"
        assert exact["method"]["path"] == "eigen"
        assert stepped["time_s"] == pytest.approx(exact["time_s"], rel=2e-4)
