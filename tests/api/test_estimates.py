"""POST /v1/settling-time through HTTP: examples, answers and every error case."""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

import pytest
from fastapi.testclient import TestClient

from tests.conftest import slab_request

EXAMPLES = sorted(Path(__file__).resolve().parents[2].joinpath("openapi_examples").glob("*.json"))


def _all_numbers_finite(document: Any) -> bool:
    if isinstance(document, float):
        return math.isfinite(document)
    if isinstance(document, dict):
        return all(_all_numbers_finite(v) for v in document.values())
    if isinstance(document, list):
        return all(_all_numbers_finite(v) for v in document)
    return True


def test_examples_exist() -> None:
    assert len(EXAMPLES) >= 6


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_examples_give_sane_answers(client: TestClient, path: Path) -> None:
    example = json.loads(path.read_text())
    endpoint = "/v1/" + path.stem.split(".")[0]
    response = client.post(endpoint, json=example["value"])
    assert response.status_code == 200, response.text
    body = response.json()
    assert _all_numbers_finite(body)
    if endpoint == "/v1/settling-time":
        assert 0 < body["time_s"] < 1e9
        assert body["method"]["estimated_relative_error"] <= 1e-4
        assert body["cautions"]
    elif endpoint == "/v1/depth":
        assert 0 < body["depth_m"] < 1
        assert body["method"]["estimated_relative_error"] <= 1e-4
        assert body["cautions"]
    else:
        assert len(body["times_s"]) == example["value"].get("time_count", len(body["times_s"]))
        assert body["snapshots"]


def test_examples_are_in_openapi(client: TestClient) -> None:
    schema = client.get("/openapi.json").json()
    named = schema["paths"]["/v1/settling-time"]["post"]["requestBody"]["content"][
        "application/json"
    ]["examples"]
    assert "gel-slab-loading" in named
    problem = schema["paths"]["/v1/settling-time"]["post"]["responses"]["422"]["content"]
    assert "application/problem+json" in problem


def test_settling_time_gel_slab_matches_crank_sheet_series(client: TestClient) -> None:
    # Crank (1975) eq. 4.18: F = 0.95 is reached at D·t/l² = 0.2623 (l the full thickness;
    # from the series, 1 − 8/π² e^{−π² T} = 0.95 with T = D t/l² → T = ln(8/(0.05π²))/π²).
    response = client.post("/v1/settling-time", json=slab_request())
    body = response.json()
    expected = math.log(8 / (0.05 * math.pi**2)) / math.pi**2 * 0.004**2 / 7.5e-10
    assert body["time_s"] == pytest.approx(expected, rel=1e-6)
    assert body["characteristic_length_m"] == pytest.approx(0.002)
    assert body["length_convention"] == "half_thickness"
    assert body["time_definition"] == "last_crossing"
    assert body["measures"]["fraction_equilibrated"] == pytest.approx(0.95, abs=1e-9)


def test_settling_time_same_request_same_json(client: TestClient) -> None:
    first = client.post("/v1/settling-time", json=slab_request()).content
    second = client.post("/v1/settling-time", json=slab_request()).content
    assert first == second


def test_settling_time_half_thickness_equals_thickness(client: TestClient) -> None:
    full = client.post("/v1/settling-time", json=slab_request()).json()["time_s"]
    half = client.post(
        "/v1/settling-time", json=slab_request(body={"shape": "slab", "half_thickness": "2 mm"})
    ).json()["time_s"]
    assert half == full


def test_settling_time_echoes_biot_and_warns_when_lumped_would_do(client: TestClient) -> None:
    body = client.post(
        "/v1/settling-time",
        json=slab_request(
            body={"shape": "sphere", "radius": "1 mm"},
            surface={"kind": "convective", "transfer_coefficient": "1e-8 m/s", "ambient": 1},
            criterion={"measure": "mean_square_deviation", "tolerance": 0.01},
        ),
    ).json()
    # Bi = k_f·R/D = 1e-8 · 1e-3 / 7.5e-10; classical Bi on V/A = R/3 is a third of it
    assert body["biot"] == pytest.approx(1e-8 * 1e-3 / 7.5e-10)
    assert "lumped_would_do" in [w["code"] for w in body["warnings"]]


def test_settling_time_interprets_positions(client: TestClient) -> None:
    body = client.post(
        "/v1/settling-time",
        json=slab_request(
            criterion={
                "measure": "value_at",
                "position": {"depth": "1 mm", "face": "second"},
                "tolerance": 0.1,
            }
        ),
    ).json()
    assert body["interpreted_positions_m"]["/criterion/position"] == pytest.approx(0.003)
    assert "value_at" in body["measures"]


def test_settling_time_sealed_radial_body_states_assumption(client: TestClient) -> None:
    body = client.post(
        "/v1/settling-time",
        json=slab_request(
            body={"shape": "cylinder", "radius": "3 mm"},
            surface={"kind": "no_flux"},
            initial={"kind": "band", "between": ["0 mm", "1 mm"], "inside": 1, "outside": 0},
            criterion={"measure": "mean_square_deviation", "tolerance": 0.01},
        ),
    ).json()
    assert any("radially symmetric" in sentence for sentence in body["assumptions"])
    assert "fraction_equilibrated" not in body["measures"]


def _post_raw(client: TestClient, content: str) -> Any:
    return client.post(
        "/v1/settling-time", content=content, headers={"content-type": "application/json"}
    )


def test_errors_malformed_json_is_400(client: TestClient) -> None:
    response = _post_raw(client, '{"body": {"shape": "slab", ')
    assert response.status_code == 400
    assert response.headers["content-type"] == "application/problem+json"
    assert response.json()["status"] == 400


def test_errors_nan_literal_is_422_at_its_field(client: TestClient) -> None:
    text = json.dumps(slab_request()).replace('"value": 0', '"value": NaN')
    response = _post_raw(client, text)
    assert response.status_code == 422
    assert "/initial/value" in [e["pointer"] for e in response.json()["errors"]]


ERROR_CASES: list[tuple[str, dict[str, Any], str]] = [
    ("missing medium", {"medium": None}, "/medium"),
    (
        "both lengths",
        {"body": {"shape": "slab", "thickness": "4 mm", "half_thickness": "2 mm"}},
        "/body",
    ),
    ("no length", {"body": {"shape": "sphere"}}, "/body"),
    ("unknown shape", {"body": {"shape": "torus", "radius": "1 mm"}}, "/body/shape"),
    (
        "extra field",
        {"body": {"shape": "slab", "thickness": "4 mm", "colour": "red"}},
        "/body/colour",
    ),
    ("wrong dimension", {"body": {"shape": "slab", "thickness": "4 kg"}}, "/body/thickness"),
    ("expression", {"body": {"shape": "slab", "thickness": "9**9**9 m"}}, "/body/thickness"),
    ("overflow", {"medium": {"diffusivity": "1e400 m^2/s"}}, "/medium/diffusivity"),
    ("inf text", {"medium": {"diffusivity": "inf m^2/s"}}, "/medium/diffusivity"),
    ("unknown unit", {"medium": {"diffusivity": "3 furlongs^2/s"}}, "/medium/diffusivity"),
    ("boolean quantity", {"medium": {"diffusivity": True}}, "/medium/diffusivity"),
    ("negative diffusivity", {"medium": {"diffusivity": -1e-9}}, "/medium/diffusivity"),
    ("tiny length", {"body": {"shape": "sphere", "radius": "1e-15 m"}}, "/body/radius"),
    ("zero length", {"body": {"shape": "sphere", "diameter": 0}}, "/body/diameter"),
    (
        "biot too large",
        {"surface": {"kind": "convective", "biot": 1e7, "ambient": 1}},
        "/surface/biot",
    ),
    (
        "biot and coefficient",
        {
            "surface": {
                "kind": "convective",
                "biot": 1,
                "transfer_coefficient": "1 m/s",
                "ambient": 1,
            }
        },
        "/surface",
    ),
    (
        "coefficient gives huge Bi",
        {"surface": {"kind": "convective", "transfer_coefficient": "1 m/s", "ambient": 1}},
        "/surface/transfer_coefficient",
    ),
    ("unknown surface", {"surface": {"kind": "porous"}}, "/surface/kind"),
    ("value too large", {"initial": {"kind": "uniform", "value": 1e300}}, "/initial/value"),
    (
        "band reversed",
        {"initial": {"kind": "band", "between": ["3 mm", "1 mm"], "inside": 1, "outside": 0}},
        "/initial/between",
    ),
    (
        "band outside",
        {"initial": {"kind": "band", "between": ["1 mm", "5 mm"], "inside": 1, "outside": 0}},
        "/initial/between/1",
    ),
    (
        "profile not increasing",
        {
            "initial": {
                "kind": "profile",
                "positions": ["0 mm", "2 mm", "2 mm"],
                "values": [0, 1, 2],
            }
        },
        "/initial/positions/2",
    ),
    (
        "profile lengths differ",
        {"initial": {"kind": "profile", "positions": [0, 0.001], "values": [0, 1, 2]}},
        "/initial",
    ),
    ("start already final", {"initial": {"kind": "uniform", "value": 1}}, "/initial"),
    (
        "tolerance above one",
        {"criterion": {"measure": "max_deviation", "tolerance": 1.5}},
        "/criterion/tolerance",
    ),
    ("tolerance zero", {"criterion": {"measure": "rsd", "tolerance": 0}}, "/criterion/tolerance"),
    (
        "fraction one",
        {"criterion": {"measure": "fraction_equilibrated", "fraction": 1}},
        "/criterion/fraction",
    ),
    (
        "unknown measure",
        {"criterion": {"measure": "entropy", "tolerance": 0.1}},
        "/criterion/measure",
    ),
    (
        "two tolerances",
        {
            "criterion": {
                "measure": "value_at",
                "position": "centre",
                "tolerance": 0.1,
                "absolute_tolerance": 0.1,
            }
        },
        "/criterion",
    ),
    (
        "position outside",
        {"criterion": {"measure": "value_at", "position": "5 mm", "tolerance": 0.1}},
        "/criterion/position",
    ),
    (
        "depth too deep",
        {"criterion": {"measure": "value_at", "position": {"depth": "7 mm"}, "tolerance": 0.1}},
        "/criterion/position/depth",
    ),
    (
        "face on a sphere",
        {
            "body": {"shape": "sphere", "radius": "2 mm"},
            "criterion": {
                "measure": "value_at",
                "position": {"at": "surface", "face": "second"},
                "tolerance": 0.1,
            },
        },
        "/criterion/position/face",
    ),
    (
        "rsd mixed signs",
        {
            "initial": {"kind": "uniform", "value": -1},
            "criterion": {"measure": "rsd", "tolerance": 0.1},
        },
        "/criterion/measure",
    ),
    (
        "rsd zero final",
        {
            "surface": {"kind": "fixed_value", "value": 0},
            "initial": {"kind": "uniform", "value": 1},
            "criterion": {"measure": "rsd", "tolerance": 0.1},
        },
        "/criterion/measure",
    ),
    (
        "fraction sealed",
        {
            "surface": {"kind": "no_flux"},
            "initial": {"kind": "band", "between": [0, 0.001], "inside": 1, "outside": 0},
        },
        "/criterion/measure",
    ),
    ("accuracy too tight", {"accuracy": 1e-14}, "/accuracy"),
    ("unknown engine", {"engine": "monte_carlo"}, "/engine"),
]


@pytest.mark.parametrize(
    ("overrides", "pointer"),
    [(o, p) for _, o, p in ERROR_CASES],
    ids=[name for name, _, _ in ERROR_CASES],
)
def test_errors_name_the_field(client: TestClient, overrides: dict[str, Any], pointer: str) -> None:
    request = slab_request(**overrides)
    request = {key: value for key, value in request.items() if value is not None}
    response = client.post("/v1/settling-time", json=request)
    assert response.status_code == 422, response.text
    assert response.headers["content-type"] == "application/problem+json"
    problem = response.json()
    assert problem["status"] == 422
    assert pointer in [error["pointer"] for error in problem["errors"]], problem
    assert all(error["detail"] for error in problem["errors"])


def test_healthz(client: TestClient) -> None:
    response = client.get("/healthz")
    assert response.status_code == 200
    assert response.json()["status"] == "ok"


def test_errors_profile_too_fine_for_finite_volume_names_engine(client: TestClient) -> None:
    count = 1500
    positions = [4e-3 * i / (count - 1) for i in range(count)]
    values = [float(i % 5) for i in range(count)]
    request = slab_request(
        initial={"kind": "profile", "positions": positions, "values": values},
        surface={"kind": "no_flux"},
        criterion={"measure": "max_deviation", "tolerance": 0.05},
        engine="finite_volume",
    )
    response = client.post("/v1/settling-time", json=request)
    assert response.status_code == 422
    assert response.json()["errors"][0]["pointer"] == "/engine"
    # the series engine answers the same case
    request["engine"] = "series"
    assert client.post("/v1/settling-time", json=request).status_code == 200


def test_errors_unrepresentable_biot_is_422_not_500(client: TestClient) -> None:
    response = client.post(
        "/v1/settling-time",
        json=slab_request(
            surface={"kind": "convective", "biot": 1e-300, "ambient": 1},
            engine="finite_volume",
            criterion={"measure": "mean_square_deviation", "tolerance": 0.01},
        ),
    )
    assert response.status_code == 422
