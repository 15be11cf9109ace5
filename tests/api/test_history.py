"""POST /v1/history through HTTP."""

from __future__ import annotations

import math
from itertools import pairwise

import pytest
from fastapi.testclient import TestClient

from tests.conftest import slab_request


def test_history_times_spread_around_settling_time(client: TestClient) -> None:
    settled = client.post("/v1/settling-time", json=slab_request()).json()["time_s"]
    body = client.post("/v1/history", json={**slab_request(), "time_count": 11}).json()
    assert body["times_s"][0] == pytest.approx(1e-3 * settled, rel=1e-9)
    assert body["times_s"][-1] == pytest.approx(2 * settled, rel=1e-9)
    assert len(body["snapshots"]) == 5
    fractions = body["measures"]["fraction_equilibrated"]
    assert all(b >= a for a, b in pairwise(fractions))


def test_history_profiles_match_sheet_series_at_centre(client: TestClient) -> None:
    # Crank (1975) eq. 4.17 (sheet held at 1, initially 0), centre value:
    # 1 − (4/π) Σ (−1)^n/(2n+1) exp(−D(2n+1)²π²t/(4a²)), a the half-thickness.
    request = {**slab_request(), "times": [600.0, 3600.0], "snapshot_count": 2}
    request.pop("criterion")
    body = client.post("/v1/history", json=request).json()
    half, diffusivity = 0.002, 7.5e-10
    for snapshot in body["snapshots"]:
        t = snapshot["time_s"]
        expected = 1 - 4 / math.pi * sum(
            (-1) ** n
            / (2 * n + 1)
            * math.exp(-diffusivity * (2 * n + 1) ** 2 * math.pi**2 * t / (4 * half**2))
            for n in range(200)
        )
        middle = len(snapshot["positions_m"]) // 2
        assert snapshot["positions_m"][middle] == pytest.approx(half)
        assert snapshot["values"][middle] == pytest.approx(expected, abs=1e-8)


@pytest.mark.parametrize(
    ("extra", "pointer"),
    [
        ({"times": [1.0], "time_count": 5}, ""),
        ({"times": [-1.0]}, "/times/0"),
        ({"times": []}, "/times"),
        ({"time_count": 1}, "/time_count"),
        ({"snapshot_count": 99, "times": [1.0]}, "/snapshot_count"),
    ],
)
def test_history_errors_name_the_field(
    client: TestClient, extra: dict[str, object], pointer: str
) -> None:
    response = client.post("/v1/history", json={**slab_request(), **extra})
    assert response.status_code == 422
    assert pointer in [error["pointer"] for error in response.json()["errors"]]


def test_history_time_count_needs_criterion(client: TestClient) -> None:
    request = {**slab_request(), "time_count": 5}
    request.pop("criterion")
    response = client.post("/v1/history", json=request)
    assert response.status_code == 422


def test_history_refuses_times_before_the_resolved_range(client: TestClient) -> None:
    # Fo = 1e-6 here is 1e-6 · (2 mm)² / 7.5e-10 m²/s ≈ 5.3 ms
    response = client.post("/v1/history", json={**slab_request(), "times": [1.0, 1e-4]})
    assert response.status_code == 422
    assert response.json()["errors"][0]["pointer"] == "/times/1"


def test_history_engines_agree_on_profiles_and_measures(client: TestClient) -> None:
    request = {
        **slab_request(
            body={"shape": "cylinder", "radius": "2 mm"},
            surface={"kind": "convective", "biot": 3, "ambient": 1},
        ),
        "times": [300.0, 1500.0, 6000.0],
        "snapshot_count": 3,
    }
    series = client.post("/v1/history", json=request).json()
    volume = client.post("/v1/history", json={**request, "engine": "finite_volume"}).json()
    assert volume["method"]["engine"] == "finite_volume"
    assert series["characteristic_length_m"] == pytest.approx(0.002)
    assert (series["length_convention"], series["biot"]) == ("radius", 3)
    for a, b in zip(series["snapshots"], volume["snapshots"], strict=True):
        assert max(abs(x - y) for x, y in zip(a["values"], b["values"], strict=True)) < 1e-3
    for name, values in series["measures"].items():
        for x, y in zip(values, volume["measures"][name], strict=True):
            assert y == pytest.approx(x, rel=2e-3, abs=1e-6)
