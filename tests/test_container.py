"""The Dockerfile's promises, read from the file (no Docker engine runs on CI's machine)."""

from __future__ import annotations

import re
from pathlib import Path

DOCKERFILE = (Path(__file__).resolve().parents[1] / "Dockerfile").read_text()


def _instructions(name: str) -> list[str]:
    return re.findall(rf"^{name}\s+(.*)$", DOCKERFILE, flags=re.MULTILINE)


def test_slim_python_base() -> None:
    assert _instructions("FROM") == ["python:3.11-slim"]


def test_runs_as_a_non_root_user() -> None:
    users = _instructions("USER")
    assert users and users[-1] not in ("root", "0")
    assert "useradd" in DOCKERFILE


def test_has_a_health_check_on_healthz() -> None:
    assert _instructions("HEALTHCHECK")
    assert "/healthz" in DOCKERFILE


def test_serves_with_several_workers_on_all_interfaces() -> None:
    assert re.search(r"MIXCLOCK_WORKERS=([2-9]|\d\d)", DOCKERFILE)
    assert "MIXCLOCK_HOST=0.0.0.0" in DOCKERFILE
    assert _instructions("CMD") == ['["mixclock", "serve"]']
