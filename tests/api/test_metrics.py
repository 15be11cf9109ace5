"""Prometheus metrics: per endpoint, per engine, errors by kind, summed over workers."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

from fastapi.testclient import TestClient
from prometheus_client.parser import text_string_to_metric_families

from service.app import create_app
from service.settings import Settings
from tests.conftest import slab_request


def _samples(text: str) -> dict[tuple[str, tuple[tuple[str, str], ...]], float]:
    return {
        (sample.name, tuple(sorted(sample.labels.items()))): sample.value
        for family in text_string_to_metric_families(text)
        for sample in family.samples
    }


def test_requests_engines_and_errors_are_counted(tmp_path: Path) -> None:
    client = TestClient(create_app(Settings(data_dir=tmp_path)))
    client.post("/v1/settling-time", json=slab_request())
    client.post("/v1/settling-time", json=slab_request())
    client.post("/v1/settling-time", json={**slab_request(), "accuracy": 5})
    client.get("/v1/results/0123456789abcdef0123456789abcdef")
    samples = _samples(client.get("/metrics").text)
    ok = (("endpoint", "/v1/settling-time"), ("method", "POST"), ("status", "200"))
    assert samples[("mixclock_requests_total", ok)] == 2
    assert samples[("mixclock_solves_total", (("engine", "series"), ("path", "eigen")))] == 2
    assert samples[("mixclock_solve_seconds_count", (("engine", "series"),))] == 2
    assert samples[("mixclock_errors_total", (("kind", "invalid-request"),))] == 1
    assert samples[("mixclock_errors_total", (("kind", "not-found"),))] == 1
    stored = (("endpoint", "/v1/results/{result_id}"), ("method", "GET"), ("status", "404"))
    assert samples[("mixclock_requests_total", stored)] == 1  # the id is no label


_WORKER = """
import sys
from pathlib import Path
from fastapi.testclient import TestClient
from service.app import create_app
from service.settings import Settings
from tests.conftest import slab_request
client = TestClient(create_app(Settings(data_dir=Path(sys.argv[1]))))
assert client.post("/v1/settling-time", json=slab_request()).status_code == 200
if len(sys.argv) > 2:
    print(client.get("/metrics").text)
"""


def test_metrics_add_up_across_worker_processes(tmp_path: Path) -> None:
    """Two worker processes answer one request each; the third's /metrics reports all three
    (as uvicorn's workers share PROMETHEUS_MULTIPROC_DIR under `mixclock serve --workers`)."""
    folder = tmp_path / "metrics"
    folder.mkdir()
    environment = {**os.environ, "PROMETHEUS_MULTIPROC_DIR": str(folder)}
    root = Path(__file__).resolve().parents[2]
    run = [sys.executable, "-c", _WORKER, str(tmp_path)]
    for _ in range(2):
        subprocess.run(run, env=environment, cwd=root, check=True)
    text = subprocess.run(
        [*run, "--metrics"], env=environment, cwd=root, check=True, capture_output=True, text=True
    ).stdout
    ok = (("endpoint", "/v1/settling-time"), ("method", "POST"), ("status", "200"))
    assert _samples(text)[("mixclock_requests_total", ok)] == 3
