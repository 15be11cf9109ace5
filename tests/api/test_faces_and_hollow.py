"""Each face its own condition, and hollow cylinders and spheres, through HTTP."""

from __future__ import annotations

from typing import Any

import pytest
from fastapi.testclient import TestClient

BASE: dict[str, Any] = {
    "medium": {"diffusivity": "1e-9 m^2/s"},
    "initial": {"kind": "uniform", "value": 0},
    "criterion": {"measure": "mean_square_deviation", "tolerance": 0.01},
}


def _post(client: TestClient, **request: Any) -> dict[str, Any]:
    response = client.post("/v1/settling-time", json={**BASE, **request})
    assert response.status_code == 200, response.text
    body: dict[str, Any] = response.json()
    return body


@pytest.mark.parametrize(
    "surface",
    [
        {"kind": "fixed_value", "value": 1},
        {"kind": "convective", "biot": 2, "ambient": 1},
    ],
)
def test_one_sealed_face_is_half_a_slab_twice_as_thick(
    client: TestClient, surface: dict[str, Any]
) -> None:
    """A sealed face is a plane of symmetry: a slab of thickness L sealed at x = 0 behaves as
    either half of a slab 2L thick with the same condition on both faces (exact, by symmetry),
    and its Lc is the full thickness (the echo says so). The Biot number is on each body's Lc,
    which is L in both."""
    sealed = _post(
        client,
        body={"shape": "slab", "thickness": "2 mm"},
        faces={"first": {"kind": "no_flux"}, "second": surface},
    )
    doubled = _post(client, body={"shape": "slab", "thickness": "4 mm"}, surface=surface)
    assert sealed["method"]["engine"] == "finite_volume"
    assert doubled["method"]["engine"] == "series"
    assert (sealed["characteristic_length_m"], sealed["length_convention"]) == (0.002, "thickness")
    assert doubled["characteristic_length_m"] == pytest.approx(0.002)
    assert sealed["time_s"] == pytest.approx(doubled["time_s"], rel=1e-4)
    assert sealed["slowest_rate_per_s"] == pytest.approx(doubled["slowest_rate_per_s"], rel=1e-3)


def test_faces_with_different_biot_numbers_lie_between_the_alike_cases(client: TestClient) -> None:
    """Raising the transfer at one face can only speed the approach (more exchange, same final
    value): the time lies between the slab with the slower and with the faster face on both
    sides."""
    slow = {"kind": "convective", "biot": 0.5, "ambient": 1}
    fast = {"kind": "convective", "biot": 5, "ambient": 1}
    body = {"shape": "slab", "thickness": "2 mm"}
    mixed = _post(client, body=body, faces={"first": slow, "second": fast})
    both_slow = _post(client, body=body, surface=slow)
    both_fast = _post(client, body=body, surface=fast)
    assert both_fast["time_s"] < mixed["time_s"] < both_slow["time_s"]
    assert mixed["biot"] is None  # no single Biot number: the faces differ


@pytest.mark.parametrize("shape", ["cylinder", "sphere"])
def test_thin_sealed_core_behaves_like_the_solid_body(client: TestClient, shape: str) -> None:
    """A hollow body whose sealed core is a thousandth of its radius is the solid body to
    within the core's share of the volume (below 1e-3 of the amount for either shape)."""
    hollow = _post(
        client,
        body={"shape": shape, "radius": "1 mm", "inner_radius": "1 um"},
        faces={"inner": {"kind": "no_flux"}, "outer": {"kind": "fixed_value", "value": 1}},
    )
    solid = _post(
        client, body={"shape": shape, "radius": "1 mm"}, surface={"kind": "fixed_value", "value": 1}
    )
    assert hollow["length_convention"] == "wall_thickness"
    assert hollow["time_s"] == pytest.approx(solid["time_s"], rel=1e-3)


def test_tube_wall_exchanging_on_both_surfaces_uses_half_the_wall(client: TestClient) -> None:
    tube = _post(
        client,
        body={"shape": "cylinder", "diameter": "10 mm", "inner_radius": "4 mm"},
        surface={"kind": "fixed_value", "value": 1},
    )
    assert tube["length_convention"] == "half_wall_thickness"
    assert tube["characteristic_length_m"] == pytest.approx(0.5e-3)
    # a thin wall behaves nearly like a plane sheet of the same thickness held on both faces
    # (curvature corrections of order wall/radius = 0.2 here)
    sheet = _post(
        client,
        body={"shape": "slab", "thickness": "1 mm"},
        surface={"kind": "fixed_value", "value": 1},
    )
    assert tube["time_s"] == pytest.approx(sheet["time_s"], rel=0.1)


def test_positions_on_a_hollow_body(client: TestClient) -> None:
    response = client.post(
        "/v1/settling-time",
        json={
            **BASE,
            "body": {"shape": "sphere", "radius": "2 mm", "inner_radius": "1 mm"},
            "surface": {"kind": "fixed_value", "value": 1},
            "criterion": {
                "measure": "value_at",
                "position": {"depth": "0.25 mm", "face": "inner"},
                "tolerance": 0.05,
            },
        },
    )
    assert response.status_code == 200, response.text
    assert response.json()["interpreted_positions_m"]["/criterion/position"] == pytest.approx(
        1.25e-3
    )


@pytest.mark.parametrize(
    ("body", "boundary", "pointer"),
    [
        # a solid body's centre is never a boundary
        (
            {"shape": "sphere", "radius": "1 mm"},
            {"faces": {"inner": {"kind": "no_flux"}, "outer": {"kind": "no_flux"}}},
            "/faces/inner",
        ),
        (
            {"shape": "cylinder", "radius": "1 mm"},
            {"faces": {"outer": {"kind": "no_flux"}}},
            "/faces",
        ),
        # names that do not fit the shape, a missing end, both forms, neither
        (
            {"shape": "slab", "thickness": "1 mm"},
            {"faces": {"inner": {"kind": "no_flux"}, "outer": {"kind": "no_flux"}}},
            "/faces/inner",
        ),
        (
            {"shape": "slab", "thickness": "1 mm"},
            {"faces": {"first": {"kind": "no_flux"}}},
            "/faces/second",
        ),
        (
            {"shape": "sphere", "radius": "2 mm", "inner_radius": "1 mm"},
            {"faces": {"first": {"kind": "no_flux"}, "second": {"kind": "no_flux"}}},
            "/faces/first",
        ),
        (
            {"shape": "slab", "thickness": "1 mm"},
            {"surface": {"kind": "no_flux"}, "faces": {}},
            "",
        ),
        ({"shape": "slab", "thickness": "1 mm"}, {}, ""),
        # the hollow body's own size
        (
            {"shape": "sphere", "radius": "1 mm", "inner_radius": "1 mm"},
            {"surface": {"kind": "fixed_value", "value": 1}},
            "/body/inner_radius",
        ),
        (
            {"shape": "sphere", "radius": "1 mm", "inner_radius": "1 s"},
            {"surface": {"kind": "fixed_value", "value": 1}},
            "/body/inner_radius",
        ),
        # a coefficient on one face is named with its face
        (
            {"shape": "slab", "thickness": "1 mm"},
            {
                "faces": {
                    "first": {"kind": "no_flux"},
                    "second": {"kind": "convective", "transfer_coefficient": "1 m", "ambient": 1},
                }
            },
            "/faces/second/transfer_coefficient",
        ),
    ],
)
def test_face_errors_name_the_field(
    client: TestClient, body: dict[str, Any], boundary: dict[str, Any], pointer: str
) -> None:
    request = {
        "body": body,
        "medium": {"diffusivity": 1e-9},
        "initial": {"kind": "uniform", "value": 0},
        "criterion": {"measure": "max_deviation", "tolerance": 0.05},
        **boundary,
    }
    response = client.post("/v1/settling-time", json=request)
    assert response.status_code == 422, response.text
    assert pointer in [e["pointer"] for e in response.json()["errors"]]


def test_centre_of_a_hollow_body_is_refused(client: TestClient) -> None:
    response = client.post(
        "/v1/settling-time",
        json={
            **BASE,
            "body": {"shape": "cylinder", "radius": "2 mm", "inner_radius": "1 mm"},
            "surface": {"kind": "fixed_value", "value": 1},
            "criterion": {"measure": "value_at", "position": "centre", "tolerance": 0.05},
        },
    )
    assert response.status_code == 422
    assert response.json()["errors"][0]["pointer"] == "/criterion/position"


def test_series_engine_asked_for_a_hollow_body_says_why(client: TestClient) -> None:
    response = client.post(
        "/v1/settling-time",
        json={
            **BASE,
            "body": {"shape": "cylinder", "radius": "2 mm", "inner_radius": "1 mm"},
            "surface": {"kind": "fixed_value", "value": 1},
            "engine": "series",
        },
    )
    assert response.status_code == 422
    assert response.json()["errors"][0]["pointer"] == "/engine"


def test_each_convective_face_echoes_its_biot_number(client: TestClient) -> None:
    body = _post(
        client,
        body={"shape": "slab", "thickness": "2 mm"},
        faces={
            "first": {"kind": "convective", "transfer_coefficient": "1e-6 m/s", "ambient": 1},
            "second": {"kind": "fixed_value", "value": 1},
        },
    )
    # Bi = k_f·Lc/D on the half-thickness (both faces exchange): 1e-6 · 1e-3 / 1e-9 = 1
    assert body["biot_by_face"] == {"first": pytest.approx(1.0, rel=1e-12)}
    assert body["biot"] == pytest.approx(1.0, rel=1e-12)
