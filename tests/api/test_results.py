"""Stored answers through HTTP: ids, the stored request and answer, the picture, 404s."""

from __future__ import annotations

import hashlib
import json
from pathlib import Path
from typing import Any

from fastapi.testclient import TestClient

from service.app import create_app
from service.settings import Settings

EXAMPLES = Path(__file__).resolve().parents[2] / "openapi_examples"
CASE: dict[str, Any] = json.loads(
    (EXAMPLES / "settling-time.sample-vial-to-bath.json").read_text()
)["value"]


def test_a_stored_answer_is_returned_with_its_request(client: TestClient) -> None:
    answer = client.post("/v1/settling-time", json={**CASE, "store": True, "ref": "LIMS-1"}).json()
    identity = answer["result_id"]
    assert answer["ref"] == "LIMS-1"
    assert len(identity) == 32
    stored = client.get(f"/v1/results/{identity}")
    assert stored.status_code == 200, stored.text
    body = stored.json()
    assert body["answer"] == answer
    assert body["kind"] == "settling-time"
    # the request is kept canonical: the defaults in force filled in, the caller's ref and the
    # store flag left out (the ref is in the answer), so the id can be recomputed from it
    assert "ref" not in body["request"] and "store" not in body["request"]
    assert body["request"]["accuracy"] == 1e-4
    canonical = json.dumps(body["request"], separators=(",", ":"))
    version = client.get("/healthz").json()["version"]
    assert hashlib.sha256(f"{version}\n{canonical}".encode()).hexdigest()[:32] == identity


def test_the_id_is_the_request_not_the_callers_reference(client: TestClient) -> None:
    first = client.post("/v1/settling-time", json={**CASE, "store": True, "ref": "a"}).json()
    second = client.post("/v1/settling-time", json={**CASE, "store": True, "ref": "b"}).json()
    other = client.post("/v1/settling-time", json={**CASE, "store": True, "accuracy": 1e-6}).json()
    assert first["result_id"] == second["result_id"] != other["result_id"]


def test_unstored_answers_have_no_id(client: TestClient) -> None:
    assert client.post("/v1/settling-time", json=CASE).json()["result_id"] is None


def test_a_stored_picture_for_an_img_tag(client: TestClient) -> None:
    identity = client.post("/v1/settling-time", json={**CASE, "store": True}).json()["result_id"]
    picture = client.get(f"/v1/results/{identity}/plot.svg")
    assert picture.status_code == 200
    assert picture.headers["content-type"].startswith("image/svg+xml")
    assert b'id="settling-time"' in picture.content


def test_an_unknown_id_is_a_404_problem(client: TestClient) -> None:
    for path in ("/v1/results/0123456789abcdef", "/v1/results/0123456789abcdef/plot.svg"):
        response = client.get(path)
        assert response.status_code == 404
        assert response.headers["content-type"].startswith("application/problem+json")
        assert "no stored result" in response.json()["detail"]


def test_store_all_keeps_every_answer(tmp_path: Path) -> None:
    with TestClient(create_app(Settings(data_dir=tmp_path, store_all=True))) as client:
        identity = client.post("/v1/settling-time", json=CASE).json()["result_id"]
        assert identity is not None
        assert client.get(f"/v1/results/{identity}").status_code == 200
    assert (tmp_path / "results.sqlite3").exists()
