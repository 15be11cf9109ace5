"""Request contracts for the settling-time and history endpoints.

Quantities are a number in SI (the unit in each field's description) or a string
"number unit" ("4 mm", "1.2 cm^2/h"); they are converted in :mod:`service.api.cases`,
which reports a wrong unit against the field it came from.
"""

from __future__ import annotations

from typing import Annotated, Literal

from pydantic import BaseModel, ConfigDict, Field, model_validator

__all__ = ["CaseRequest", "HistoryRequest", "PositionSpec", "SettlingRequest"]

_QUANTITY_TEXT = Annotated[str, Field(min_length=1, max_length=96, strict=True)]
_FINITE = Annotated[float, Field(allow_inf_nan=False, strict=True)]

Quantity = _FINITE | _QUANTITY_TEXT
Value = Annotated[
    float,
    Field(
        allow_inf_nan=False,
        ge=-1e12,
        le=1e12,
        strict=True,
        description="A concentration, mass fraction or temperature in any one unit; answers "
        "come back in the same unit.",
    ),
]
Tolerance = Annotated[float, Field(gt=0, lt=1, allow_inf_nan=False, strict=True)]


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid")


class PositionSpec(_Strict):
    """A position given by depth below a surface, or by the words centre/surface."""

    depth: Quantity | None = Field(
        None, description="Depth below the surface (m, or 'number unit')."
    )
    at: Literal["centre", "surface"] | None = None
    face: Literal["first", "second", "inner", "outer"] | None = Field(
        None,
        description="Which face 'surface' and 'depth' refer to: a slab's 'first' (x = 0, the "
        "default) or 'second'; a hollow body's 'outer' (the default) or 'inner'.",
    )

    @model_validator(mode="after")
    def _one_form(self) -> PositionSpec:
        if (self.depth is None) == (self.at is None):
            raise ValueError("give exactly one of 'depth' or 'at'")
        return self


Position = Annotated[
    _FINITE | _QUANTITY_TEXT | PositionSpec,
    Field(
        description="A length from the first face (slab, x) or from the centre (r); the words "
        "'centre' or 'surface'; or {'depth': ...} / {'at': ..., 'face': ...}."
    ),
]


class ArrheniusRequest(_Strict):
    """D(T) = D0·exp(−Q/(R·T)) (Q per mole) or exp(−Q/(k_B·T)) (Q per atom, as in eV)."""

    d0: Quantity | None = Field(None, description="Pre-exponential factor D0 (m^2/s).")
    d_ref: Quantity | None = Field(
        None, description="D at the reference temperature t_ref (m^2/s), in place of d0."
    )
    t_ref: Quantity | None = Field(
        None, description="The reference temperature, with a unit ('900 degC', '1173 K')."
    )
    activation_energy: Quantity = Field(
        description="Q with a unit: J/mol, kJ/mol, kcal/mol, or eV (per atom)."
    )

    @model_validator(mode="after")
    def _one_scale(self) -> ArrheniusRequest:
        if (self.d0 is None) == (self.d_ref is None):
            raise ValueError("give exactly one of 'd0' or 'd_ref' (with 't_ref')")
        if (self.d_ref is None) != (self.t_ref is None):
            raise ValueError("'d_ref' and 't_ref' go together")
        return self


class ScheduleStep(_Strict):
    """One step of a temperature schedule: {'start_at': T} first, then {'hold': duration,
    'at': T} or {'ramp_to': T, 'over': duration} or {'ramp_to': T, 'rate': '10 degC/min'}.
    Temperatures carry a unit; a rate is a temperature difference per time."""

    start_at: Quantity | None = None
    hold: Quantity | None = Field(None, description="How long (s, or 'number unit').")
    at: Quantity | None = Field(None, description="The hold's temperature.")
    ramp_to: Quantity | None = Field(None, description="The temperature a ramp ends at.")
    over: Quantity | None = Field(None, description="The ramp's duration.")
    rate: Quantity | None = Field(
        None,
        description="The ramp's rate, in place of 'over': a temperature difference per time "
        "(K/s, or 'number unit' such as '10 degC/min'; its sign is the ramp's direction).",
    )

    @model_validator(mode="after")
    def _one_form(self) -> ScheduleStep:
        forms = {
            "start_at": (self.start_at,),
            "hold": (self.hold, self.at),
            "ramp": (self.ramp_to, self.over),
            "ramp at a rate": (self.ramp_to, self.rate),
        }
        complete = [name for name, fields in forms.items() if all(f is not None for f in fields)]
        given = sum(
            f is not None
            for f in (self.start_at, self.hold, self.at, self.ramp_to, self.over, self.rate)
        )
        if len(complete) != 1 or given != len(forms[complete[0]]):
            raise ValueError(
                "each step is {'start_at': T}, {'hold': duration, 'at': T}, "
                "{'ramp_to': T, 'over': duration} or {'ramp_to': T, 'rate': difference/time}"
            )
        return self


class DiffusivityExponential(_Strict):
    d0: Quantity = Field(description="D at value 0 (m^2/s).")
    beta: float = Field(
        allow_inf_nan=False, strict=True, ge=-100, le=100, description="Per value unit."
    )


class Medium(_Strict):
    """The body's transport properties: a diffusivity, or for heat the conductivity, density and
    specific heat it follows from (α = k/(ρ·c_p)); the conductivity may also accompany a
    thermal diffusivity, so that a heat transfer coefficient can be turned into a Biot number."""

    diffusivity: Quantity | None = Field(
        None,
        description="Mass diffusivity, or thermal diffusivity for heat (m^2/s, or 'number unit').",
    )
    conductivity: Quantity | None = Field(
        None, description="Thermal conductivity k (W/(m*K), or 'number unit')."
    )
    density: Quantity | None = Field(None, description="Density ρ (kg/m^3, or 'number unit').")
    specific_heat: Quantity | None = Field(
        None, description="Specific heat capacity c_p (J/(kg*K), or 'number unit')."
    )
    diffusivity_table: list[tuple[float, Quantity]] | None = Field(
        None,
        min_length=2,
        max_length=200,
        description="D as a function of the value: [[value, D], ...] with increasing values, "
        "interpolated linearly in log D and flat beyond the ends, in place of 'diffusivity'.",
    )
    diffusivity_exponential: DiffusivityExponential | None = Field(
        None, description="D = d0·exp(beta·value), in place of 'diffusivity'."
    )
    reaction_rate: Quantity | None = Field(
        None,
        description="First-order consumption or binding k (1/s, or 'number unit'): "
        "∂c/∂t = D∇²c − k·c. The body then settles to the steady reaction–diffusion profile.",
    )
    arrhenius: ArrheniusRequest | None = Field(
        None,
        description="A diffusivity that follows the temperature (with a top-level "
        "'temperature' or 'schedule'), in place of 'diffusivity'.",
    )
    thermal_diffusivity: Quantity | None = Field(
        None,
        description="The part's thermal diffusivity α (m^2/s, or 'number unit'), with "
        "'arrhenius' under a 'schedule': the answer then warns when the part's own thermal "
        "settling time is a sizeable fraction of the soak (its interior lags the furnace).",
    )
    partition: float | None = Field(
        None,
        gt=0,
        le=1e6,
        allow_inf_nan=False,
        strict=True,
        description="Partition coefficient K (mass transfer): the body's equilibrium value over "
        "the surroundings' value, in (0, 1e6]; default 1. A convective surface then passes "
        "J = k_f·(ambient − c_s/K) into the body, Bi = k_f·Lc/(K·D), and the body ends at "
        "K·ambient; a fixed_value surface's value is the body-side value.",
    )

    @model_validator(mode="after")
    def _determined(self) -> Medium:
        heat = (self.conductivity, self.density, self.specific_heat)
        nonlinear = [v for v in (self.diffusivity_table, self.diffusivity_exponential) if v]
        if nonlinear:
            if len(nonlinear) > 1 or self.diffusivity is not None or self.arrhenius is not None:
                raise ValueError(
                    "give one of 'diffusivity', 'diffusivity_table', 'diffusivity_exponential' "
                    "or 'arrhenius'"
                )
            return self
        if self.arrhenius is not None:
            if self.diffusivity is not None or self.density is not None:
                raise ValueError(
                    "give 'arrhenius' in place of 'diffusivity' (or the heat inputs), not with it"
                )
            return self
        if self.diffusivity is None and any(v is None for v in heat):
            raise ValueError(
                "give 'diffusivity', or 'conductivity', 'density' and 'specific_heat' (the "
                "thermal diffusivity is then k/(ρ·c_p))"
            )
        if self.diffusivity is not None and (
            self.density is not None or self.specific_heat is not None
        ):
            raise ValueError(
                "give either 'diffusivity' (with 'conductivity' if a heat transfer coefficient "
                "is used) or 'conductivity', 'density' and 'specific_heat', not both: the "
                "diffusivity would be given twice"
            )
        return self


class LayerRequest(_Strict):
    """One layer of a laminate, or one shell of a cylinder or sphere (the first is the core)."""

    thickness: Quantity = Field(
        description="The layer's thickness (m); a solid body's first layer is its core, whose "
        "thickness is its radius."
    )
    medium: Medium = Field(
        description="The layer's own properties: diffusivity and partition coefficient (mass), "
        "or conductivity with density and specific heat (heat)."
    )
    interface_resistance: Quantity | None = Field(
        None,
        description="Resistance between this layer and the next, per unit area: for mass, "
        "s/m on the potential c/K (flux = Δ(c/K)/R); for heat, m^2*K/W (flux = ΔT/R).",
    )


Layers = Annotated[list[LayerRequest], Field(min_length=1, max_length=50)]


class SlabBody(_Strict):
    shape: Literal["slab"]
    thickness: Quantity | None = Field(None, description="Full thickness (m); x runs 0..thickness.")
    half_thickness: Quantity | None = Field(None, description="Half the thickness (m).")
    layers: Layers | None = Field(
        None, description="A laminate, from the first face (x = 0) on, in place of a size."
    )
    face_area: Quantity | None = Field(
        None, description="The area of one face (m^2), when a bath is given by its volume."
    )

    @model_validator(mode="after")
    def _one_length(self) -> SlabBody:
        given = [self.thickness, self.half_thickness, self.layers]
        if sum(v is not None for v in given) > 1:
            raise ValueError("give only one of 'thickness', 'half_thickness' or 'layers'")
        return self


class RadialBody(_Strict):
    shape: Literal["cylinder", "sphere"]
    radius: Quantity | None = Field(
        None, description="(Outer) radius (m); r runs 0 (centre), or the inner radius, ..radius."
    )
    diameter: Quantity | None = Field(None, description="(Outer) diameter (m).")
    inner_radius: Quantity | None = Field(
        None, description="Inner radius of a hollow body (m): a tube wall, a shell."
    )
    layers: Layers | None = Field(
        None,
        description="Concentric shells from the centre (or the inner radius) outward, in place "
        "of a size: a coated bead, a tablet coating.",
    )
    length: Quantity | None = Field(
        None, description="A cylinder's length (m), when a bath is given by its volume."
    )

    @model_validator(mode="after")
    def _one_length(self) -> RadialBody:
        if sum(v is not None for v in (self.radius, self.diameter, self.layers)) != 1:
            raise ValueError("give exactly one of 'radius', 'diameter' or 'layers'")
        return self


class SemiInfiniteBody(_Strict):
    """A body deep enough that the far side does not matter (a case-hardened surface layer,
    soil, a thick wall at early times): x runs from the surface inward."""

    shape: Literal["semi_infinite"]
    thickness: Quantity | None = Field(
        None,
        description="The real part's thickness (m), when known: the answer warns if it is too "
        "thin to count as semi-infinite by then.",
    )


class ProductBody(_Strict):
    """A finite body solved as a product of one-dimensional solutions: a long rectangular
    'bar' (two sides), a 'block' (three sides), or a 'short_cylinder' (radius or diameter, and
    length). A uniform start and the same held or convective surface all round."""

    shape: Literal["bar", "block", "short_cylinder"]
    sides: list[Quantity] | None = Field(
        None, description="Full side lengths (m): two for a bar, three for a block."
    )
    radius: Quantity | None = None
    diameter: Quantity | None = None
    length: Quantity | None = Field(None, description="A short cylinder's full length (m).")


Body = Annotated[
    SlabBody | RadialBody | SemiInfiniteBody | ProductBody, Field(discriminator="shape")
]


class UniformStart(_Strict):
    kind: Literal["uniform"]
    value: Value


class BandStart(_Strict):
    kind: Literal["band"]
    between: tuple[Position, Position] = Field(
        description="Two positions in increasing order: a layer of a slab, a shell of a "
        "cylinder or sphere."
    )
    inside: Value
    outside: Value


class ProfileStart(_Strict):
    kind: Literal["profile"]
    positions: list[Position] = Field(
        min_length=2,
        max_length=2000,
        description="Strictly increasing positions; linear between, flat beyond. A jump is two "
        "points close together.",
    )
    values: list[Value] = Field(min_length=2, max_length=2000)

    @model_validator(mode="after")
    def _same_length(self) -> ProfileStart:
        if len(self.positions) != len(self.values):
            raise ValueError("'positions' and 'values' must have the same length")
        return self


class PeriodicStart(_Strict):
    """A periodic segregation pattern c = mean + amplitude·cos(2πx/wavelength), the
    wavelength being the segregation spacing (a dendrite arm spacing, not the casting's
    size). The body is then the half-wavelength cell between a maximum and the next minimum,
    sealed at both faces by symmetry: give the slab no size."""

    kind: Literal["periodic"]
    wavelength: Quantity = Field(description="The segregation spacing (m, or 'number unit').")
    amplitude: Value = Field(description="Half the range, (max − min)/2.")
    mean: Value


Initial = Annotated[
    UniformStart | BandStart | ProfileStart | PeriodicStart, Field(discriminator="kind")
]


class NoFluxSurface(_Strict):
    """Nothing enters or leaves (sealed, insulated)."""

    kind: Literal["no_flux"]


class ValueStep(_Strict):
    """One step of the surroundings' schedule: {'start_at': v} first, then {'hold': duration,
    'at': v} or {'ramp_to': v, 'over': duration}; values in the body's value units."""

    start_at: Value | None = None
    hold: Quantity | None = Field(None, description="How long (s, or 'number unit').")
    at: Value | None = None
    ramp_to: Value | None = None
    over: Quantity | None = Field(None, description="The ramp's duration.")

    @model_validator(mode="after")
    def _one_form(self) -> ValueStep:
        forms = {
            "start_at": (self.start_at,),
            "hold": (self.hold, self.at),
            "ramp": (self.ramp_to, self.over),
        }
        complete = [name for name, fields in forms.items() if all(f is not None for f in fields)]
        given = sum(f is not None for fields in forms.values() for f in fields)
        if len(complete) != 1 or given != len(forms[complete[0]]):
            raise ValueError(
                "each step is {'start_at': v}, {'hold': duration, 'at': v} or "
                "{'ramp_to': v, 'over': duration}"
            )
        return self


# A surface value held constant, or following a schedule of holds and ramps (a furnace ramp,
# a retort's come-up, a chiller's pull-down), applied exactly by superposition in time.
SurfaceValue = Annotated[
    Value | Annotated[list[ValueStep], Field(min_length=2, max_length=200)],
    Field(
        description="A number, or a schedule [{'start_at': v}, {'ramp_to': v, 'over': d}, "
        "{'hold': d, 'at': v}, ...] after which the last value stays."
    ),
]


class FixedValueSurface(_Strict):
    """The body's surface value is held (constant, or following a schedule)."""

    kind: Literal["fixed_value"]
    value: SurfaceValue


class ConvectiveSurface(_Strict):
    """Flux into the body J = k_f·(ambient − c_s/K), K the medium's partition coefficient
    (1 unless given); Bi = k_f·Lc/(K·D). For heat, q = h·(T_ambient − T_s) and Bi = h·Lc/k.
    ``ambient`` is the surroundings' value, in the same value units as the body; the body ends
    at K·ambient."""

    kind: Literal["convective"]
    biot: float | None = Field(
        None,
        gt=0,
        le=1e6,
        allow_inf_nan=False,
        description="Biot number as it enters the body's surface condition (k_f·Lc/(K·D), or "
        "h·Lc/k for heat), in (0, 1e6].",
    )
    transfer_coefficient: Quantity | None = Field(
        None, description="Mass transfer coefficient k_f (m/s, or 'number unit')."
    )
    heat_transfer_coefficient: Quantity | None = Field(
        None,
        description="Heat transfer coefficient h (W/(m^2*K), or 'number unit'); needs the "
        "medium's conductivity.",
    )
    ambient: SurfaceValue

    @model_validator(mode="after")
    def _one_rate(self) -> ConvectiveSurface:
        given = [self.biot, self.transfer_coefficient, self.heat_transfer_coefficient]
        if sum(v is not None for v in given) != 1:
            raise ValueError(
                "give exactly one of 'biot', 'transfer_coefficient' or 'heat_transfer_coefficient'"
            )
        return self


class BathSurface(_Strict):
    """In contact with the case's finite, well-stirred 'bath': held at its (body-side) value,
    or through a film when a coefficient or Biot number is given."""

    kind: Literal["bath"]
    biot: float | None = Field(
        None, gt=0, le=1e6, allow_inf_nan=False, description="The film's Biot number on Lc."
    )
    transfer_coefficient: Quantity | None = Field(
        None, description="The film's mass transfer coefficient k_f (m/s, or 'number unit')."
    )
    heat_transfer_coefficient: Quantity | None = Field(
        None, description="The film's heat transfer coefficient h (W/(m^2*K))."
    )

    @model_validator(mode="after")
    def _at_most_one_rate(self) -> BathSurface:
        given = [self.biot, self.transfer_coefficient, self.heat_transfer_coefficient]
        if sum(v is not None for v in given) > 1:
            raise ValueError(
                "give at most one of 'biot', 'transfer_coefficient' or 'heat_transfer_coefficient'"
            )
        return self


SurfaceRequest = NoFluxSurface | FixedValueSurface | ConvectiveSurface | BathSurface
Surface = Annotated[SurfaceRequest, Field(discriminator="kind")]


class MeanSquareCriterion(_Strict):
    """⟨u²⟩(t)/⟨u²⟩(0) ≤ tolerance (the variance ratio with no-flux surfaces)."""

    measure: Literal["mean_square_deviation"]
    tolerance: Tolerance


class MaxDeviationCriterion(_Strict):
    """max|u(t)|/max|u(0)| ≤ tolerance ('95 % homogeneous' is 0.05)."""

    measure: Literal["max_deviation"]
    tolerance: Tolerance


class RsdCriterion(_Strict):
    """Relative standard deviation √⟨(c−⟨c⟩)²⟩/|⟨c⟩| ≤ tolerance (an absolute level)."""

    measure: Literal["rsd"]
    tolerance: Tolerance


class EnergyCriterion(_Strict):
    """Gradient (Dirichlet) energy over κ_1²⟨u²⟩(0) ≤ tolerance."""

    measure: Literal["dirichlet_energy"]
    tolerance: Tolerance


class FractionCriterion(_Strict):
    """|1 − F| ≤ 1 − fraction, F the fraction of the amount change completed."""

    measure: Literal["fraction_equilibrated"]
    fraction: Annotated[float, Field(gt=0, lt=1, allow_inf_nan=False)]


class ValueAtCriterion(_Strict):
    """|u(position)| ≤ tolerance·max|u(0)|, or ≤ absolute_tolerance in value units."""

    measure: Literal["value_at"]
    position: Position
    tolerance: Tolerance | None = None
    absolute_tolerance: float | None = Field(None, gt=0, le=1e12, allow_inf_nan=False)

    @model_validator(mode="after")
    def _one_tolerance(self) -> ValueAtCriterion:
        if (self.tolerance is None) == (self.absolute_tolerance is None):
            raise ValueError("give exactly one of 'tolerance' or 'absolute_tolerance'")
        return self


class BathValueCriterion(_Strict):
    """|bath − its final value| ≤ tolerance·|its starting deviation|, or ≤ absolute_tolerance
    in the bath's value units."""

    measure: Literal["bath_value"]
    tolerance: Tolerance | None = None
    absolute_tolerance: float | None = Field(None, gt=0, le=1e12, allow_inf_nan=False)

    @model_validator(mode="after")
    def _one_tolerance(self) -> BathValueCriterion:
        if (self.tolerance is None) == (self.absolute_tolerance is None):
            raise ValueError("give exactly one of 'tolerance' or 'absolute_tolerance'")
        return self


class ReachesCriterion(_Strict):
    """The first time the point reaches ``value`` (a centre temperature that must be
    attained, a case depth's carbon content); answered as a first crossing."""

    measure: Literal["reaches"]
    position: Position
    value: Value


class ResidualSegregationCriterion(_Strict):
    """(max − min)/(max0 − min0) ≤ tolerance: the index of residual segregation."""

    measure: Literal["residual_segregation"]
    tolerance: Tolerance


class RemainingFractionCriterion(_Strict):
    """M(t)/M(0) ≤ fraction: the share of its starting amount the body still holds (amounts
    counted from zero of the value units)."""

    measure: Literal["remaining_fraction"]
    fraction: Annotated[float, Field(gt=0, lt=1, allow_inf_nan=False)]


Criterion = Annotated[
    MeanSquareCriterion
    | MaxDeviationCriterion
    | RsdCriterion
    | EnergyCriterion
    | FractionCriterion
    | ValueAtCriterion
    | BathValueCriterion
    | RemainingFractionCriterion
    | ReachesCriterion
    | ResidualSegregationCriterion,
    Field(discriminator="measure"),
]


class Faces(_Strict):
    """A condition for each end: a slab's ``first`` (x = 0) and ``second`` (x = thickness)
    face, or a hollow cylinder's or sphere's ``inner`` and ``outer`` surface. A solid body's
    centre is a symmetry point, never a boundary."""

    first: Surface | None = None
    second: Surface | None = None
    inner: Surface | None = None
    outer: Surface | None = None


class BathRequest(_Strict):
    """A finite, well-stirred bath the body exchanges with (through the surfaces of kind
    'bath')."""

    volume: Quantity | None = Field(
        None,
        description="The bath's volume (m^3, or 'number unit'); a slab then needs "
        "'body.face_area', a cylinder 'body.length'.",
    )
    capacity_ratio: float | None = Field(
        None,
        gt=0,
        le=1e9,
        allow_inf_nan=False,
        strict=True,
        description="Crank's α = V_bath/(K·V_body), or (ρc)_bath·V_bath/((ρc)_body·V_body) for "
        "heat, in place of 'volume' (K is then not applied again).",
    )
    value: Value = Field(description="The bath's starting value (concentration or temperature).")
    exchanges: list[Quantity] | None = Field(
        None,
        max_length=200,
        description="Times (s, or 'number unit') at which the bath is replaced by fresh fluid at "
        "its starting value (buffer changes, rinses), in increasing order.",
    )

    @model_validator(mode="after")
    def _one_size(self) -> BathRequest:
        if (self.volume is None) == (self.capacity_ratio is None):
            raise ValueError("give exactly one of 'volume' or 'capacity_ratio'")
        return self


class CaseRequest(_Strict):
    body: Body
    medium: Medium | None = Field(
        None, description="The body's properties (a layered body gives them per layer instead)."
    )
    initial: Initial
    surface: Surface | None = Field(
        None, description="One condition on every exposed surface (give this or 'faces')."
    )
    faces: Faces | None = Field(
        None, description="A condition for each face or surface (give this or 'surface')."
    )
    bath: BathRequest | None = Field(
        None, description="A finite, well-stirred bath touching the surfaces of kind 'bath'."
    )
    temperature: Quantity | None = Field(
        None, description="The temperature of an Arrhenius medium, with a unit ('900 degC')."
    )
    schedule: list[ScheduleStep] | None = Field(
        None,
        min_length=2,
        max_length=200,
        description="A temperature schedule for an Arrhenius medium: {'start_at': T}, then "
        "holds and ramps. The time asked is the clock time in the schedule.",
    )
    engine: Literal["auto", "series", "finite_volume"] = Field(
        "auto", description="'auto' runs the exact series where it applies."
    )
    accuracy: float = Field(
        1e-4,
        ge=1e-10,
        le=1e-2,
        allow_inf_nan=False,
        description="Target relative accuracy of time_s.",
    )

    @model_validator(mode="after")
    def _one_boundary(self) -> CaseRequest:
        if (self.surface is None) == (self.faces is None):
            raise ValueError("give exactly one of 'surface' or 'faces'")
        return self


class SettlingRequest(CaseRequest):
    criterion: Criterion
    store: bool = Field(
        False,
        description="Store the answer; it then carries 'result_id', and GET "
        "/v1/results/{result_id} returns it (with its request) later.",
    )
    ref: str | None = Field(
        None,
        max_length=200,
        description="The caller's own reference, echoed back (not part of the result id).",
    )


class DepthRequest(CaseRequest):
    """At a given time, how deep below the surface a value is reached (a case depth)."""

    at: Quantity = Field(
        description="The time (s, or 'number unit'); under a 'schedule', clock time in it."
    )
    value: float = Field(
        allow_inf_nan=False,
        description="The value whose depth is asked, in the body's value units (body-side).",
    )


class HistoryRequest(CaseRequest):
    criterion: Criterion | None = None
    times: list[Annotated[float, Field(gt=0, allow_inf_nan=False, le=1e15)]] | None = Field(
        None, min_length=1, max_length=2000, description="Times in seconds, each > 0."
    )
    time_count: int | None = Field(
        None,
        ge=2,
        le=2000,
        description="Times spread log-uniformly from 1/1000 of the settling time to twice it.",
    )
    snapshot_count: int = Field(
        5, ge=0, le=50, description="Profiles returned, spread over the times."
    )

    @model_validator(mode="after")
    def _one_time_source(self) -> HistoryRequest:
        if (self.times is None) == (self.time_count is None):
            raise ValueError("give exactly one of 'times' or 'time_count'")
        if self.time_count is not None and self.criterion is None:
            raise ValueError(
                "'time_count' spreads times around the settling time, so it needs a 'criterion'"
            )
        return self
