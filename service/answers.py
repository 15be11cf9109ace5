"""What an answer carries: the result types, the warning codes, the cautions, and the
sentences that say what was assumed."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray

from service.lumped import LumpedAnswer
from service.measures import (
    Facts,
)
from service.physics import (
    Case,
    Geometry,
    SurfaceKind,
)

FloatArray = NDArray[np.float64]
# Positions across the body in each history snapshot.
SNAPSHOT_POINTS = 101

WARNING_CODES: dict[str, str] = {
    "lumped_would_do": "the classical Biot number on V/A is below 0.1: a lumped (uniform-body) "
    "model would give nearly the same time",
    "near_tangent": "a local maximum of the measure nearly touches the tolerance after the "
    "answer: a small change of the inputs can move the time a lot",
    "settles_immediately": "the criterion is met from the start (or from t → 0, as at a point on "
    "a held surface) and keeps being met",
    "settles_before_resolved_time": "the criterion is met before Fo = 1e-6, the earliest time "
    "searched; the time given is that upper bound",
    "resolution_capped": "the finite-volume grid reached its cell cap before its estimated error "
    "fell to the accuracy asked",
    "schedule_too_short": "a temperature schedule ends before the criterion is met; the answer "
    "extends its soak (its hottest hold) by the time given",
    "semi_infinite_beyond_validity": "D·t over the real thickness squared is above 0.05: the "
    "far side already matters and a slab of that thickness should be used",
    "furnace_lag": "the part's own thermal settling time is a sizeable fraction of the soak: its "
    "interior lags the furnace, so the diffusion in it runs behind the schedule",
}

BASE_ASSUMPTIONS = (
    "No flow, stirring or convection inside the body; any of these would make the real time "
    "shorter.",
)
HOMOGENEOUS = (
    "Transport by diffusion or conduction only, in a homogeneous body with constant properties."
)
LAYERED = (
    "Transport by diffusion or conduction only, each layer homogeneous with constant "
    "properties, in contact at its interfaces (through the interface resistance if given)."
)
STEADY_SURROUNDINGS = "The surroundings do not change over time."
SCHEDULED_SURROUNDINGS = (
    "The surroundings follow the schedule given, in clock time; the body is judged against "
    "the value they end at, and the time is the first at which the criterion is met."
)


def surroundings_assumption(case: Case) -> str:
    if case.bath is not None:
        return STIRRED_BATH
    return STEADY_SURROUNDINGS if case.surroundings is None else SCHEDULED_SURROUNDINGS


SEMI_INFINITE_ASSUMPTION = (
    "The body is semi-infinite: deep enough that its far side does not matter by the answer "
    "(the erfc solution)."
)

STIRRED_BATH = (
    "The bath is well stirred (uniform at every instant) and exchanges with nothing but the "
    "body; at each exchange it is replaced at once by fresh fluid at its starting value."
)
RADIAL_SEALED = (
    "For a sealed cylinder or sphere the answer is for a radially symmetric start; a start that "
    "varies around or along the body can decay more slowly than this radial answer."
)
CAUTIONS = (
    "This is a planning estimate, not a validated process. Where safety or quality depends on the "
    "time (food safety, heat treatment of structural parts, drug release, diagnostics), verify it "
    "by measurement on the real part or product.",
    "Local codes, product specifications and licensed professional practice govern over this "
    "estimate.",
)


@dataclass(frozen=True)
class ScheduleAnswer:
    """Where in a temperature schedule the criterion is met."""

    integrated_diffusivity_m2: float
    met_in_segment: int | None
    schedule_end_s: float
    extra_soak_s: float


@dataclass(frozen=True)
class SettlingAnswer:
    time_s: float
    definition: str
    fourier_number: float
    final_value: float | None
    slowest_rate_per_s: float | None
    slowest_excited_rate_per_s: float | None
    measures: dict[str, float | None]
    engine: str
    resolution: int
    estimated_relative_error: float
    biot: float | None
    lumped: LumpedAnswer | None = None
    met_after_exchange: int | None = None
    schedule: ScheduleAnswer | None = None
    # first-order reaction: (Thiele modulus Lc·√(k/D), effectiveness factor ⟨c_f⟩/c_surface)
    reaction: tuple[float, float] | None = None
    # how the time was found: through the eigen-expansion, or by stepping in time
    path: str = "eigen"
    warnings: list[tuple[str, str]] = field(default_factory=list)
    assumptions: list[str] = field(default_factory=list)
    cautions: list[str] = field(default_factory=list)


@dataclass(frozen=True)
class Snapshot:
    time_s: float
    positions_m: list[float]
    values: list[float]


@dataclass(frozen=True)
class DepthAnswer:
    """How deep a value is reached at one time (``depth_m`` None when nowhere)."""

    depth_m: float | None
    measured_from: str
    profile_range: tuple[float, float]
    fourier_number: float
    # the echoed Lc and its convention (a semi-infinite body's is the depth found, or the
    # diffusion length √(D·t) when the value is reached nowhere)
    length_m: float
    length_convention: str
    engine: str
    resolution: int
    estimated_relative_error: float | None
    warnings: list[tuple[str, str]]
    assumptions: list[str]


@dataclass(frozen=True)
class HistoryAnswer:
    times_s: list[float]
    measures: dict[str, list[float | None]]
    snapshots: list[Snapshot]
    bath_values: list[float] | None
    final_value: float | None
    engine: str
    resolution: int
    path: str = "eigen"


def format_time(time_s: float) -> str:
    """Three significant figures in s, min, h or d."""
    for unit, seconds, limit in (("s", 1.0, 120.0), ("min", 60.0, 7200.0), ("h", 3600.0, 172800.0)):
        if time_s < limit:
            return f"{_three_figures(time_s / seconds)} {unit}"
    return f"{_three_figures(time_s / 86400.0)} d"


def _three_figures(value: float) -> str:
    if value == 0:
        return "0"
    if 1e-3 <= abs(value) < 1e6:
        digits = max(0, 2 - math.floor(math.log10(abs(value))))
        return f"{value:.{digits}f}"
    return f"{value:.2e}"


def assumptions_for(case: Case, facts: Facts) -> list[str]:
    assumptions = [LAYERED if case.body.layers else HOMOGENEOUS, *BASE_ASSUMPTIONS]
    assumptions.append(surroundings_assumption(case))
    if not case.faces.exchanging and case.body.geometry is not Geometry.SLAB:
        assumptions.append(RADIAL_SEALED)
    if case.medium.partition != 1.0 and any(
        end.kind is SurfaceKind.CONVECTIVE for end in case.faces.ends
    ):
        assumptions.append(
            f"Partition equilibrium at the surface with K = {case.medium.partition:.6g}: the "
            "body ends at K times the surroundings' value."
        )
    if case.start.representation_error > 0:
        assumptions.append(
            "The start's curve is drawn with straight chords, within "
            f"{case.start.representation_error:.2g} of its amplitude (included in the error "
            "estimate)."
        )
    assumptions.append(describe_final_state(case))
    return assumptions


# The steady profiles' forms, per metric exponent (x and r in metres).
PROFILE_FORMS = {0: "a + b·x", 1: "a + b·ln(r / 1 m)", 2: "a − b/r"}
REACTION_FORMS = {
    0: "scale·cosh(modulus·(x − centre))",
    1: "scale·I0(modulus·r)",
    2: "scale·sinh(modulus·r)/(modulus·r)",
}


def describe_final_state(case: Case) -> str:
    """One sentence on the state the body settles to."""
    state = case.final_state
    if state.is_uniform:
        return f"The final state is uniform at {state.value:.6g}."
    body = case.body
    if state.reaction is not None:
        return (
            "The final state is the steady reaction–diffusion profile "
            f"c = {REACTION_FORMS[body.metric]}; the measures compare the body with it."
        )
    ends = state.values(np.array([body.inner_m, body.extent_m]))
    return (
        f"The final state is not uniform: the steady profile c = {PROFILE_FORMS[body.metric]} "
        f"(a, b per layer), from {ends[0]:.6g} at the first or inner end to {ends[1]:.6g} at "
        "the second or outer end; the measures compare the body with this profile."
    )


def final_value_of(case: Case) -> float | None:
    """The uniform final value in value units; None when the body ends in a profile or, being
    layered with different partition coefficients, at a different value in each layer."""
    state = case.final_state
    partitions = {layer.partition for layer in case.layers}
    if not state.is_uniform or len(partitions) > 1:
        return None
    return state.value * partitions.pop()


def common_biot(case: Case) -> float | None:
    """The Biot number of the convective ends when they share one; None otherwise."""
    values = {end.biot for end in case.faces.ends if end.kind is SurfaceKind.CONVECTIVE}
    return values.pop() if len(values) == 1 else None


def finite_or_none(value: float) -> float | None:
    return value if math.isfinite(value) else None
