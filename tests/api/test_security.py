"""The optional API key and CORS origins."""

from __future__ import annotations

from pathlib import Path

from fastapi.testclient import TestClient

from service.app import create_app
from service.settings import Settings
from tests.conftest import slab_request


def _client(tmp_path: Path, **settings: object) -> TestClient:
    return TestClient(create_app(Settings(data_dir=tmp_path, **settings)))  # type: ignore[arg-type]


def test_a_guarded_service_wants_its_key(tmp_path: Path) -> None:
    client = _client(tmp_path, api_key="s3cret")
    request = {**slab_request(), "store": True}
    missing = client.post("/v1/settling-time", json=request)
    assert missing.status_code == 401
    assert missing.headers["content-type"] == "application/problem+json"
    assert "X-API-Key" in missing.json()["detail"]
    wrong = client.post("/v1/settling-time", json=request, headers={"X-API-Key": "guess"})
    assert wrong.status_code == 401
    good = client.post("/v1/settling-time", json=request, headers={"X-API-Key": "s3cret"})
    assert good.status_code == 200
    identity = good.json()["result_id"]
    assert client.get(f"/v1/results/{identity}").status_code == 401  # stored results too
    fetched = client.get(f"/v1/results/{identity}", headers={"X-API-Key": "s3cret"})
    assert fetched.status_code == 200
    assert client.get("/healthz").status_code == 200  # load balancers need no key


def test_an_unguarded_service_needs_no_key(client: TestClient) -> None:
    assert client.post("/v1/settling-time", json=slab_request()).status_code == 200


def test_cors_answers_an_allowed_dashboard(tmp_path: Path) -> None:
    client = _client(tmp_path, cors_origins=["https://dash.example"], api_key="k")
    preflight = client.options(
        "/v1/settling-time",
        headers={
            "Origin": "https://dash.example",
            "Access-Control-Request-Method": "POST",
            "Access-Control-Request-Headers": "content-type, x-api-key",
        },
    )
    assert preflight.status_code == 200
    assert preflight.headers["access-control-allow-origin"] == "https://dash.example"
    other = client.options(
        "/v1/settling-time",
        headers={"Origin": "https://elsewhere.example", "Access-Control-Request-Method": "POST"},
    )
    assert "access-control-allow-origin" not in other.headers
