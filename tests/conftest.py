from __future__ import annotations

from collections.abc import Iterator
from typing import Any

import pytest
from fastapi.testclient import TestClient

from service.app import create_app
from service.settings import Settings
from service.solver import Solver


@pytest.fixture(scope="session")
def client(tmp_path_factory: pytest.TempPathFactory) -> Iterator[TestClient]:
    settings = Settings(data_dir=tmp_path_factory.mktemp("data"))
    with TestClient(create_app(settings)) as test_client:
        yield test_client


@pytest.fixture(scope="session")
def solver() -> Solver:
    return Solver()


def slab_request(**overrides: Any) -> dict[str, Any]:
    """A valid settling-time request (a 4 mm gel slab loading from a buffer) to vary in tests."""
    request: dict[str, Any] = {
        "body": {"shape": "slab", "thickness": "4 mm"},
        "medium": {"diffusivity": "7.5e-10 m^2/s"},
        "initial": {"kind": "uniform", "value": 0},
        "surface": {"kind": "fixed_value", "value": 1},
        "criterion": {"measure": "fraction_equilibrated", "fraction": 0.95},
    }
    request.update(overrides)
    return request
