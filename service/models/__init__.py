"""Pydantic request and response contracts (no numerics here)."""

from __future__ import annotations

from service.models.requests import (
    CaseRequest,
    DepthRequest,
    HistoryRequest,
    PositionSpec,
    SettlingRequest,
)
from service.models.responses import (
    DepthResponse,
    FinalStateOut,
    HistoryResponse,
    LumpedOut,
    Method,
    Problem,
    ProblemItem,
    SettlingResponse,
    SnapshotOut,
    WarningOut,
)

__all__ = [
    "CaseRequest",
    "DepthRequest",
    "DepthResponse",
    "FinalStateOut",
    "HistoryRequest",
    "HistoryResponse",
    "LumpedOut",
    "Method",
    "PositionSpec",
    "Problem",
    "ProblemItem",
    "SettlingRequest",
    "SettlingResponse",
    "SnapshotOut",
    "WarningOut",
]
