"""Bodies between two different surroundings: the steady profile they settle to, and how long
they take, through HTTP."""

from __future__ import annotations

import math
from typing import Any

import pytest
from fastapi.testclient import TestClient


def _post(client: TestClient, endpoint: str = "/v1/settling-time", **request: Any) -> Any:
    response = client.post(endpoint, json=request)
    assert response.status_code == 200, response.text
    return response.json()


def _profile(state: dict[str, Any], shape: str, r: float) -> float:
    """The final state's profile at r, from the piece (layer) that holds it."""
    g = {"slab": r, "cylinder": math.log(r), "sphere": -1.0 / r}[shape]
    piece = next(p for p in state["pieces"] if p["from_m"] <= r <= p["to_m"])
    return float(piece["a"] + piece["b"] * g)


HELD = {
    "inner": {"kind": "fixed_value", "value": 80.0},
    "outer": {"kind": "fixed_value", "value": 20.0},
}


@pytest.mark.parametrize(
    ("shape", "expected"),
    [
        # T(r) = T2 + (T1 − T2)·ln(r/r2)/ln(r1/r2): the textbook's steady conduction through a
        # cylindrical wall with its surfaces held (Incropera et al., Fundamentals of Heat and
        # Mass Transfer, chapter 3, the radial-systems section; common practice, from memory)
        ("cylinder", lambda r: 20 + 60 * math.log(r / 2e-3) / math.log(1e-3 / 2e-3)),
        # T(r) = T1 − (T1 − T2)·(1 − r1/r)/(1 − r1/r2): the same for a spherical shell (ibid.)
        ("sphere", lambda r: 80 - 60 * (1 - 1e-3 / r) / (1 - 1e-3 / 2e-3)),
    ],
)
def test_held_hollow_bodies_settle_to_the_textbook_profile(
    client: TestClient, shape: str, expected: Any
) -> None:
    body = _post(
        client,
        body={"shape": shape, "radius": "2 mm", "inner_radius": "1 mm"},
        medium={"diffusivity": "1e-7 m^2/s"},
        initial={"kind": "uniform", "value": 20},
        faces=HELD,
        criterion={"measure": "max_deviation", "tolerance": 0.01},
    )
    state = body["final_state"]
    assert state["kind"] == "steady_profile" and body["final_value"] is None
    assert state["end_values"] == pytest.approx([80.0, 20.0], rel=1e-12)
    for r in (1.2e-3, 1.5e-3, 1.9e-3):
        assert _profile(state, shape, r) == pytest.approx(expected(r), rel=1e-12)


def test_convective_wall_matches_the_resistance_network(client: TestClient) -> None:
    """A plane wall 10 mm thick, k = 0.5 W/(m·K), between fluids at 60 °C (h = 40 W/(m²·K))
    and 10 °C (h = 10 W/(m²·K)). In series, R = 1/h1 + L/k + 1/h2 = 0.025 + 0.02 + 0.1 =
    0.145 m²·K/W, so q = 50/0.145 = 344.8 W/m² and the surfaces sit at 60 − q/h1 = 51.38 °C
    and 10 + q/h2 = 44.48 °C (the thermal-resistance network of steady one-dimensional
    conduction; common practice in the heat-transfer textbooks)."""
    body = _post(
        client,
        body={"shape": "slab", "thickness": "10 mm"},
        medium={"diffusivity": "2.5e-7 m^2/s", "conductivity": "0.5 W/(m*K)"},
        initial={"kind": "uniform", "value": 10},
        faces={
            "first": {"kind": "convective", "heat_transfer_coefficient": 40, "ambient": 60},
            "second": {"kind": "convective", "heat_transfer_coefficient": 10, "ambient": 10},
        },
        criterion={"measure": "mean_square_deviation", "tolerance": 0.01},
    )
    flux = 50.0 / (1 / 40 + 0.01 / 0.5 + 1 / 10)
    assert body["final_state"]["end_values"] == pytest.approx(
        [60 - flux / 40, 10 + flux / 10], rel=1e-12
    )
    assert body["length_convention"] == "half_thickness"


def test_membrane_time_is_the_held_sphere_time(client: TestClient) -> None:
    """An exact identity: a sheet 0 < x < L held at 1 and 0, starting at 0, has the deviation
    u = −(1 − x/L) = −Σ (2/nπ) sin(nπx/L), so ⟨u²⟩(t)/⟨u²⟩(0) = Σ 6/(n²π²)·e^{−2n²π²Dt/L²}:
    term by term the mean-square ratio of a solid sphere of radius R = L held at its surface
    from a uniform start (whose r·u is a sheet's sine series, Crank ch. 6). The membrane runs
    on the finite-volume engine, the sphere on the series engine, so the two times are
    computed independently."""
    criterion = {"measure": "mean_square_deviation", "tolerance": 0.01}
    medium = {"diffusivity": "1e-9 m^2/s"}
    membrane = _post(
        client,
        body={"shape": "slab", "thickness": "1 mm"},
        medium=medium,
        initial={"kind": "uniform", "value": 0},
        faces={
            "first": {"kind": "fixed_value", "value": 1},
            "second": {"kind": "fixed_value", "value": 0},
        },
        criterion=criterion,
    )
    sphere = _post(
        client,
        body={"shape": "sphere", "radius": "1 mm"},
        medium=medium,
        initial={"kind": "uniform", "value": 0},
        surface={"kind": "fixed_value", "value": 1},
        criterion=criterion,
    )
    assert (membrane["method"]["engine"], sphere["method"]["engine"]) == ("finite_volume", "series")
    assert membrane["time_s"] == pytest.approx(sphere["time_s"], rel=2e-4)


def test_history_approaches_the_steady_profile(client: TestClient) -> None:
    history = _post(
        client,
        "/v1/history",
        body={"shape": "cylinder", "radius": "2 mm", "inner_radius": "1 mm"},
        medium={"diffusivity": "1e-7 m^2/s"},
        initial={"kind": "uniform", "value": 20},
        faces=HELD,
        times=[0.5, 200.0],
        snapshot_count=2,
    )
    state = history["final_state"]
    late = history["snapshots"][-1]
    for r, value in zip(late["positions_m"], late["values"], strict=True):
        assert value == pytest.approx(_profile(state, "cylinder", r), abs=1e-6)
    early = history["snapshots"][0]
    assert (
        max(
            abs(v - _profile(state, "cylinder", r))
            for r, v in zip(early["positions_m"], early["values"], strict=True)
        )
        > 1.0
    )


def test_rsd_is_refused_against_a_steady_profile(client: TestClient) -> None:
    response = client.post(
        "/v1/settling-time",
        json={
            "body": {"shape": "slab", "thickness": "1 mm"},
            "medium": {"diffusivity": 1e-9},
            "initial": {"kind": "uniform", "value": 0},
            "faces": {
                "first": {"kind": "fixed_value", "value": 2},
                "second": {"kind": "fixed_value", "value": 1},
            },
            "criterion": {"measure": "rsd", "tolerance": 0.01},
        },
    )
    assert response.status_code == 422
    assert response.json()["errors"][0]["pointer"] == "/criterion/measure"
