"""The ASGI application: ``create_app()`` wires routers, error handlers and shared objects."""

from __future__ import annotations

import json
from collections.abc import AsyncIterator
from contextlib import asynccontextmanager
from pathlib import Path
from typing import Any

from fastapi import FastAPI
from fastapi.middleware.cors import CORSMiddleware

from service import __version__
from service.answers import WARNING_CODES
from service.api import depths, estimates, health, history, page, plots, results
from service.api.problems import MEDIA_TYPE as PROBLEM_MEDIA_TYPE
from service.api.problems import install_problem_handlers
from service.api.security import API_KEY_HEADER, ApiKeyGuard
from service.metrics import Metrics, MetricsMiddleware
from service.plots import Plotter
from service.settings import Settings, get_settings
from service.solver import Solver
from service.store import ResultStore
from service.units import Units

__all__ = ["app", "create_app", "load_examples"]

EXAMPLES_DIR = Path(__file__).resolve().parent.parent / "openapi_examples"
# Request files are named <endpoint>.<scenario>.json; the endpoint part maps to a path.
_EXAMPLE_PATHS = {
    "settling-time": "/v1/settling-time",
    "history": "/v1/history",
    "depth": "/v1/depth",
}

_DESCRIPTION = (
    """\
How long until a slab, long cylinder or sphere is mixed, homogenized or equilibrated, for
diffusion or heat conduction, computed from exact eigen-expansions or a finite-volume
operator solved exactly in time.

Warning codes: """
    + "; ".join(f"`{code}`: {text}" for code, text in WARNING_CODES.items())
    + """.

Every answer is a planning estimate, not a validated process: verify by measurement where
safety or quality depends on it; local codes, specifications and licensed practice govern.
"""
)


def load_examples(directory: Path = EXAMPLES_DIR) -> dict[str, dict[str, dict[str, Any]]]:
    """Named OpenAPI examples per path, from ``directory`` (empty if it is absent)."""
    examples: dict[str, dict[str, dict[str, Any]]] = {}
    if not directory.is_dir():
        return examples
    for path in sorted(directory.glob("*.json")):
        endpoint, _, scenario = path.stem.partition(".")
        if endpoint not in _EXAMPLE_PATHS or not scenario:
            continue
        document = json.loads(path.read_text(encoding="utf-8"))
        examples.setdefault(_EXAMPLE_PATHS[endpoint], {})[scenario] = document
    return examples


def _customise_openapi(app: FastAPI, examples: dict[str, dict[str, dict[str, Any]]]) -> None:
    """Named request examples, and problem details declared as application/problem+json."""

    def openapi() -> dict[str, Any]:
        if app.openapi_schema:
            return app.openapi_schema
        from fastapi.openapi.utils import get_openapi

        schema = get_openapi(
            title=app.title, version=app.version, description=app.description, routes=app.routes
        )
        for path, named in examples.items():
            content = schema["paths"][path]["post"]["requestBody"]["content"]["application/json"]
            content["examples"] = named
        for operations in schema["paths"].values():
            for operation in operations.values():
                for status in ("400", "422"):
                    content = operation.get("responses", {}).get(status, {}).get("content", {})
                    if "application/json" in content:
                        content[PROBLEM_MEDIA_TYPE] = content.pop("application/json")
        app.openapi_schema = schema
        return schema

    app.openapi = openapi  # type: ignore[method-assign]


def create_app(settings: Settings | None = None) -> FastAPI:
    """A new application with its own engines (and their caches) and unit converter."""
    settings = settings or get_settings()

    @asynccontextmanager
    async def lifespan(app: FastAPI) -> AsyncIterator[None]:
        yield
        app.state.store.close()  # write what is queued before the process ends

    app = FastAPI(
        title="mixclock", version=__version__, description=_DESCRIPTION, lifespan=lifespan
    )
    app.state.settings = settings
    app.state.store = (
        ResultStore(settings.store_url, settings.retention_days)
        if settings.store_url
        else ResultStore.in_folder(settings.data_dir, settings.retention_days)
    )
    app.state.solver = Solver()
    app.state.units = Units()
    app.state.plotter = Plotter()
    app.state.metrics = Metrics()
    app.include_router(estimates.router)
    app.include_router(history.router)
    app.include_router(depths.router)
    app.include_router(plots.router)
    app.include_router(results.router)
    app.include_router(page.router)
    app.include_router(health.router)
    install_problem_handlers(app)
    # the last added runs first: CORS outermost, so a browser's preflight needs no key and a
    # refusal still carries the CORS headers
    if settings.api_key is not None:
        app.add_middleware(ApiKeyGuard, key=settings.api_key.get_secret_value())
    if settings.cors_origins:
        app.add_middleware(
            CORSMiddleware,
            allow_origins=settings.cors_origins,
            allow_methods=["GET", "POST"],
            allow_headers=["content-type", API_KEY_HEADER],
        )
    app.add_middleware(MetricsMiddleware, metrics=app.state.metrics)
    _customise_openapi(app, load_examples())
    return app


app = create_app()
