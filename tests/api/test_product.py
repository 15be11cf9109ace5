"""Finite bodies as products of one-dimensional solutions, through HTTP."""

from __future__ import annotations

import math
from typing import Any

import pytest
from fastapi.testclient import TestClient

from tests.references import ONE_TERM, ONE_TERM_SOURCE

COMMON: dict[str, Any] = {
    "medium": {"diffusivity": "1e-6 m^2/s", "conductivity": "1 W/(m*K)"},
    "initial": {"kind": "uniform", "value": 120},
    "surface": {"kind": "convective", "heat_transfer_coefficient": "20 W/(m^2*K)", "ambient": 20},
}


def _post(client: TestClient, **request: Any) -> Any:
    response = client.post("/v1/settling-time", json={**COMMON, **request})
    assert response.status_code == 200, response.text
    return response.json()


def test_short_cylinder_centre_is_the_product_of_the_one_term_solutions(
    client: TestClient,
) -> None:
    """R = 5 cm and half-length 5 cm with h/k = 20 /m: Bi = 1 both ways. At Fo > 0.2 the
    centre's θ = C1w·C1c·exp(−(ζ1w² + ζ1c²)·Fo), with ζ1 and C1 from the table."""
    body = _post(
        client,
        body={"shape": "short_cylinder", "radius": "5 cm", "length": "10 cm"},
        criterion={"measure": "value_at", "position": "centre", "tolerance": 0.05},
    )
    wall_zeta, wall_c, cyl_zeta, cyl_c = ONE_TERM[1.0][:4]
    fourier = math.log(wall_c * cyl_c / 0.05) / (wall_zeta**2 + cyl_zeta**2)
    assert fourier > 0.2
    assert body["time_s"] == pytest.approx(fourier * 0.05**2 / 1e-6, rel=5e-4), ONE_TERM_SOURCE


def test_bar_with_a_very_long_side_is_the_slab(client: TestClient) -> None:
    criterion = {"measure": "value_at", "position": "centre", "tolerance": 0.2}
    bar = _post(client, body={"shape": "bar", "sides": ["4 cm", "4 m"]}, criterion=criterion)
    slab = _post(client, body={"shape": "slab", "thickness": "4 cm"}, criterion=criterion)
    assert bar["time_s"] == pytest.approx(slab["time_s"], rel=1e-6)


def test_cube_mean_is_the_cube_of_the_slab_mean(client: TestClient) -> None:
    """∫ over a cube of Π θ_i is Π of the slabs' means: 1 − F_cube = (1 − F_slab)³."""
    cube = _post(
        client,
        body={"shape": "block", "sides": ["4 cm", "4 cm", "4 cm"]},
        criterion={"measure": "fraction_equilibrated", "fraction": 0.9},
    )
    slab = _post(
        client,
        body={"shape": "slab", "thickness": "4 cm"},
        criterion={"measure": "fraction_equilibrated", "fraction": 1 - 0.1 ** (1 / 3)},
    )
    assert cube["time_s"] == pytest.approx(slab["time_s"], rel=1e-7)


@pytest.mark.parametrize(
    ("change", "pointer"),
    [
        ({"body": {"shape": "block", "sides": ["1 cm", "2 cm"]}}, "/body/sides"),
        (
            {
                "body": {"shape": "bar", "sides": ["1 cm", "2 cm"]},
                "surface": {"kind": "convective", "biot": 1, "ambient": 20},
            },
            "/surface/biot",
        ),
        (
            {
                "body": {"shape": "bar", "sides": ["1 cm", "2 cm"]},
                "criterion": {"measure": "rsd", "tolerance": 0.1},
            },
            "/criterion/measure",
        ),
        (
            {
                "body": {"shape": "bar", "sides": ["1 cm", "2 cm"]},
                "criterion": {"measure": "value_at", "position": "2 mm", "tolerance": 0.1},
            },
            "/criterion/position",
        ),
        ({"body": {"shape": "short_cylinder", "radius": "1 cm"}}, "/body"),
    ],
)
def test_product_errors_name_the_field(
    client: TestClient, change: dict[str, Any], pointer: str
) -> None:
    request = {
        **COMMON,
        "criterion": {"measure": "value_at", "position": "centre", "tolerance": 0.1},
        **change,
    }
    response = client.post("/v1/settling-time", json=request)
    assert response.status_code == 422, response.text
    assert pointer in [e["pointer"] for e in response.json()["errors"]]


def test_block_history_is_the_product_of_its_slab_histories(client: TestClient) -> None:
    """A 4 × 6 × 8 cm block: its centre's deviation, mean square and unexchanged fraction at
    each time are the products of three slabs' (each its own history on the eigen path), and
    its profile along the first side through the centre is the first slab's profile scaled by
    the other two centres' θ."""
    times = [60.0, 600.0, 3000.0]
    sides = ["4 cm", "6 cm", "8 cm"]

    def history(body: dict[str, Any]) -> Any:
        request = {**COMMON, "body": body, "times": times, "snapshot_count": 3}
        response = client.post("/v1/history", json=request)
        assert response.status_code == 200, response.text
        return response.json()

    block = history({"shape": "block", "sides": sides})
    slabs = [history({"shape": "slab", "thickness": side}) for side in sides]
    for i in range(len(times)):
        centre = math.prod(s["measures"]["max_deviation"][i] for s in slabs)
        square = math.prod(s["measures"]["mean_square_deviation"][i] for s in slabs)
        left = math.prod(1 - s["measures"]["fraction_equilibrated"][i] for s in slabs)
        assert block["measures"]["max_deviation"][i] == pytest.approx(centre, rel=1e-6)
        assert block["measures"]["mean_square_deviation"][i] == pytest.approx(square, rel=1e-6)
        assert 1 - block["measures"]["fraction_equilibrated"][i] == pytest.approx(left, rel=1e-6)
        others = math.prod(s["measures"]["max_deviation"][i] for s in slabs[1:])
        first = [(v - 20) / 100 for v in slabs[0]["snapshots"][i]["values"]]
        expected = [20 + 100 * theta * others for theta in first]
        assert block["snapshots"][i]["positions_m"] == slabs[0]["snapshots"][i]["positions_m"]
        assert block["snapshots"][i]["values"] == pytest.approx(expected, rel=1e-6, abs=1e-9)
