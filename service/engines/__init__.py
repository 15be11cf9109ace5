"""Engines: each turns a case into modal solutions (see :mod:`service.engines.common`)."""

from __future__ import annotations

from service.engines.common import Crossing, Engine, EngineRun, ModalSolution, TailBound
from service.engines.finite_volume import FiniteVolumeEngine
from service.engines.series import SeriesEngine

__all__ = [
    "Crossing",
    "Engine",
    "EngineRun",
    "FiniteVolumeEngine",
    "ModalSolution",
    "SeriesEngine",
    "TailBound",
    "make_engines",
]


def make_engines() -> dict[str, Engine]:
    """One instance of each engine, by the name a request uses; each owns its caches."""
    return {"series": SeriesEngine(), "finite_volume": FiniteVolumeEngine()}
