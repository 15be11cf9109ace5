"""Prometheus metrics: requests and latency per endpoint, the engine used and its solve time,
errors by kind.

Notes
-----
Each application owns its registry (no process-wide default registry, so tests can build many
apps). With several worker processes, ``mixclock serve`` points ``PROMETHEUS_MULTIPROC_DIR`` at a
fresh folder before the workers start: prometheus_client then keeps every process's values in
files there, and ``/metrics`` adds them up across the workers, whichever worker answers.
Endpoints are labelled by route (a stored result's id is not a label), so the label sets stay
few.
"""

from __future__ import annotations

import os
import time
from typing import Any

from prometheus_client import (
    CONTENT_TYPE_LATEST,
    CollectorRegistry,
    Counter,
    Histogram,
    generate_latest,
)

__all__ = ["CONTENT_TYPE_LATEST", "Metrics", "MetricsMiddleware"]

# Latency buckets (s): answers take from a fraction of a millisecond to seconds.
_BUCKETS = (0.0005, 0.001, 0.002, 0.005, 0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1.0, 2.0, 5.0)
# Routes whose paths carry an id, labelled by their template.
_TEMPLATES = (
    ("/v1/results/", "/plot.svg", "/v1/results/{result_id}/plot.svg"),
    ("/v1/results/", "", "/v1/results/{result_id}"),
)
_KNOWN = {
    "/",
    "/healthz",
    "/metrics",
    "/docs",
    "/openapi.json",
    "/v1/settling-time",
    "/v1/history",
    "/v1/depth",
    "/v1/plots/decay",
    "/v1/plots/profiles",
}


class Metrics:
    """The application's counters and histograms, and their exposition."""

    def __init__(self) -> None:
        self.registry = CollectorRegistry(auto_describe=True)
        self.requests = Counter(
            "mixclock_requests_total",
            "HTTP requests by endpoint, method and status.",
            ["endpoint", "method", "status"],
            registry=self.registry,
        )
        self.latency = Histogram(
            "mixclock_request_seconds",
            "HTTP request latency by endpoint.",
            ["endpoint"],
            buckets=_BUCKETS,
            registry=self.registry,
        )
        self.solves = Counter(
            "mixclock_solves_total",
            "Settling-time answers by engine and path (eigen or time stepping).",
            ["engine", "path"],
            registry=self.registry,
        )
        self.solve_seconds = Histogram(
            "mixclock_solve_seconds",
            "Compute time of a settling-time answer by engine.",
            ["engine"],
            buckets=_BUCKETS,
            registry=self.registry,
        )
        self.errors = Counter(
            "mixclock_errors_total",
            "Refused or failed requests by kind (the problem type's last word).",
            ["kind"],
            registry=self.registry,
        )

    def observe_solve(self, engine: str, path: str, seconds: float) -> None:
        self.solves.labels(engine=engine, path=path).inc()
        self.solve_seconds.labels(engine=engine).observe(seconds)

    def exposition(self) -> bytes:
        """The text exposition: this process's registry, or every worker's values when the
        service runs several (``PROMETHEUS_MULTIPROC_DIR``)."""
        folder = os.environ.get("PROMETHEUS_MULTIPROC_DIR")
        if not folder:
            return bytes(generate_latest(self.registry))
        from prometheus_client import multiprocess

        combined = CollectorRegistry()
        multiprocess.MultiProcessCollector(combined, path=folder)
        return bytes(generate_latest(combined))


def endpoint_label(path: str) -> str:
    """The route a path belongs to, as a label."""
    if path in _KNOWN:
        return path
    for prefix, suffix, template in _TEMPLATES:
        if path.startswith(prefix) and path.endswith(suffix):
            return template
    return "other"


class MetricsMiddleware:
    """Counts every HTTP request and its latency by endpoint (a pure ASGI middleware)."""

    def __init__(self, app: Any, metrics: Metrics) -> None:
        self.app = app
        self.metrics = metrics

    async def __call__(self, scope: dict[str, Any], receive: Any, send: Any) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        started = time.perf_counter()
        status = [500]

        async def sending(message: dict[str, Any]) -> None:
            if message["type"] == "http.response.start":
                status[0] = int(message["status"])
            await send(message)

        try:
            await self.app(scope, receive, sending)
        finally:
            endpoint = endpoint_label(scope["path"])
            self.metrics.requests.labels(endpoint, scope["method"], str(status[0])).inc()
            self.metrics.latency.labels(endpoint).observe(time.perf_counter() - started)
