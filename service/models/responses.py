"""Response contracts, including RFC 9457 problem details."""

from __future__ import annotations

from typing import Any

from pydantic import BaseModel, Field

__all__ = [
    "FinalStateOut",
    "HistoryResponse",
    "LumpedOut",
    "Method",
    "Problem",
    "ProblemItem",
    "ProfilePieceOut",
    "ReactionOut",
    "ScheduleOut",
    "SettlingResponse",
    "SnapshotOut",
    "WarningOut",
]


class Method(BaseModel):
    engine: str = Field(description="'series' or 'finite_volume': the engine that ran.")
    path: str = Field(
        description="'eigen': solved through the eigen-expansion in time; 'time_stepping': "
        "stepped in time (a value-dependent diffusivity)."
    )
    resolution: int = Field(description="Modes kept (series) or cells (finite_volume).")
    estimated_relative_error: float | None = Field(
        None,
        description="Estimated relative error of time_s: the truncation bound plus the root-finder "
        "tolerance (series), or the difference from a coarser grid (finite_volume).",
    )


class WarningOut(BaseModel):
    code: str
    message: str


class ProfilePieceOut(BaseModel):
    from_m: float
    to_m: float
    a: float
    b: float


class FinalStateOut(BaseModel):
    """The state the body settles to, which every measure compares it with."""

    kind: str = Field(description="'uniform', or 'steady_profile' between two different ends.")
    value: float | None = Field(
        None,
        description="The uniform final value; for a layered body, the uniform potential c/K "
        "(the surroundings' equivalent value).",
    )
    layer_values: list[float] | None = Field(
        None, description="A layered body's final value in each layer (K_i times the potential)."
    )
    profile: str | None = Field(
        None,
        description="The steady profile's form: 'a + b·x' (slab, x in m), 'a + b·ln(r / 1 m)' "
        "(cylinder) or 'a − b/r' (sphere, r in m).",
    )
    reaction_profile: dict[str, float] | None = Field(
        None,
        description="With a reaction: c_f = scale·h(modulus·(r − centre)), h = cosh (slab), "
        "I0 (cylinder) or sinh(x)/x (sphere); keys scale, modulus_per_m, centre_m.",
    )
    pieces: list[ProfilePieceOut] | None = Field(
        None, description="The profile's coefficients on each layer (one piece if homogeneous)."
    )
    end_values: list[float] | None = Field(
        None,
        description="The profile's values at the first (inner) and second (outer) end, in the "
        "potential c/K of the end layers (c itself when homogeneous).",
    )


class ScheduleOut(BaseModel):
    """Where in a temperature schedule the criterion is met (time_s is the clock time)."""

    integrated_diffusivity_m2: float = Field(
        description="∫D dt needed, exact per segment (ramps in closed form with E1)."
    )
    met_in_segment: int | None = Field(
        description="Index of the hold or ramp (after start_at, from 0) it is met in; null "
        "when the schedule ends first."
    )
    schedule_end_s: float
    extra_soak_s: float = Field(
        description="When the schedule ends first: how much longer its soak (hottest hold) "
        "would need; 0 otherwise."
    )


class ReactionOut(BaseModel):
    """First-order consumption or binding: how far it lets the solute in."""

    thiele_modulus: float = Field(description="Lc·√(k/D), on the echoed Lc.")
    effectiveness_factor: float | None = Field(
        description="The body's mean final value over the surface-side value: the reaction "
        "rate achieved over the rate with all of the body at that value."
    )


class LumpedOut(BaseModel):
    """The lumped (uniform-body) model's answer, given when the classical Biot number on V/A
    is below 0.1: the body then stays nearly uniform and one exponential describes it."""

    time_s: float
    time_text: str
    rate_per_s: float = Field(description="b = Bi·D/(Lc·(V/A)): the lumped body's decay rate.")
    biot_volume_to_area: float = Field(description="The classical Biot number, on Lc = V/A.")


class SettlingResponse(BaseModel):
    result_id: str | None = Field(
        None,
        description="The stored answer's id (when stored): a hash of the request and the "
        "service version; GET /v1/results/{result_id}.",
    )
    ref: str | None = Field(None, description="The caller's reference, as given.")
    time_s: float = Field(description="Earliest time after which the criterion holds for good.")
    time_text: str
    time_definition: str = Field(
        description="'monotone', 'last_crossing', or 'first_crossing' (a value reached)."
    )
    fourier_number: float = Field(description="D·t/Lc².")
    characteristic_length_m: float
    length_convention: str = Field(
        description="'half_thickness', 'thickness' (one face sealed), 'radius', "
        "'half_wall_thickness' or 'wall_thickness' (hollow bodies)."
    )
    final_value: float | None = Field(
        description="The uniform final value; null when the body ends in a steady profile."
    )
    final_state: FinalStateOut
    slowest_rate_per_s: float | None = Field(
        description="D·λ1², the body's slowest mode (null for a semi-infinite body)."
    )
    slowest_excited_rate_per_s: float | None = Field(
        description="The slowest mode the start excites."
    )
    time_constant_s: float | None = Field(description="1/slowest_excited_rate_per_s.")
    measures: dict[str, float | None] = Field(
        description="Each measure defined for the case at time_s, as its criterion compares it "
        "(fraction_equilibrated as F itself); null where not finite."
    )
    method: Method
    diffusivity_m2_per_s: float = Field(
        description="The diffusivity used: as given, or k/(ρ·c_p) from heat inputs."
    )
    biot: float | None = Field(
        None,
        description="Biot number on Lc as it enters the surface condition, when the convective "
        "surfaces share one.",
    )
    biot_by_face: dict[str, float] | None = Field(
        None,
        description="Each convective face's Biot number on Lc, by face name, when 'faces' was "
        "given.",
    )
    reaction: ReactionOut | None = Field(
        None, description="With a reaction rate: the Thiele modulus and effectiveness factor."
    )
    schedule: ScheduleOut | None = Field(
        None, description="With a temperature schedule: the reduced time and where it is met."
    )
    met_after_exchange: int | None = Field(
        None,
        description="With bath exchanges: how many exchanges had happened when the criterion "
        "came to hold (0: in the first bath).",
    )
    lumped: LumpedOut | None = Field(
        None,
        description="The lumped model's time beside this one, when the classical Biot number "
        "is below 0.1 and the criterion means something for a uniform body.",
    )
    interpreted_positions_m: dict[str, float] = Field(
        default_factory=dict, description="Every position in the request, in metres, by pointer."
    )
    warnings: list[WarningOut]
    assumptions: list[str]
    cautions: list[str]


class DepthResponse(BaseModel):
    depth_m: float | None = Field(
        description="The shallowest depth below the surface named in 'measured_from' where the "
        "value is reached at that time; null when it is reached nowhere."
    )
    time_s: float
    value: float
    measured_from: str = Field(
        description="The surface the depth is measured from: 'surface' (semi-infinite), "
        "'first_face' or 'second_face' (slab), 'outer_surface' (cylinder, sphere)."
    )
    profile_range: tuple[float, float] = Field(
        description="The lowest and highest value across the body at that time (for a "
        "semi-infinite body, down to 6·√(D·t))."
    )
    fourier_number: float = Field(description="D·t/Lc² (∫D dt/Lc² under a schedule).")
    characteristic_length_m: float = Field(
        description="The body's Lc; for a semi-infinite body the depth found (or √(D·t))."
    )
    length_convention: str
    diffusivity_m2_per_s: float
    method: Method
    warnings: list[WarningOut]
    assumptions: list[str]
    cautions: list[str]


class StoredResultOut(BaseModel):
    result_id: str
    kind: str = Field(description="Which endpoint answered: 'settling-time'.")
    version: str = Field(description="The service version that answered.")
    stored_at: str = Field(description="When it was stored (ISO 8601, UTC).")
    request: dict[str, Any]
    answer: dict[str, Any]


class SnapshotOut(BaseModel):
    time_s: float
    positions_m: list[float]
    values: list[float]


class HistoryResponse(BaseModel):
    times_s: list[float]
    measures: dict[str, list[float | None]]
    snapshots: list[SnapshotOut]
    bath_values: list[float] | None = Field(
        None, description="The bath's value at each time, when there is a bath."
    )
    final_value: float | None
    final_state: FinalStateOut
    characteristic_length_m: float
    length_convention: str
    diffusivity_m2_per_s: float
    biot: float | None = None
    method: Method
    interpreted_positions_m: dict[str, float] = Field(default_factory=dict)
    cautions: list[str]


class ProblemItem(BaseModel):
    pointer: str = Field(description="JSON Pointer (RFC 6901) into the request body.")
    detail: str


class Problem(BaseModel):
    """RFC 9457 problem details, served as application/problem+json."""

    type: str
    title: str
    status: int
    detail: str
    errors: list[ProblemItem] = Field(default_factory=list)
