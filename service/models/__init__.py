"""Pydantic request and response contracts (no numerics here)."""

from __future__ import annotations

from service.models.requests import (
    CaseRequest,
    HistoryRequest,
    PositionSpec,
    SettlingRequest,
)
from service.models.responses import (
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
