"""Checks and derived parts of a case that span the request: processes in time, product and
semi-infinite bodies, a layered body's reference medium and start."""

from __future__ import annotations

from dataclasses import replace
from typing import TYPE_CHECKING

import numpy as np

from service.api.ranges import DIFFUSIVITY_RANGE_M2_PER_S, SEMI_INFINITE_REFERENCE_M
from service.api.translate_surfaces import _boundary_pointer
from service.errors import InvalidInput
from service.models import requests as rq
from service.physics import (
    Body,
    Case,
    Faces,
    Geometry,
    Medium,
    Product,
    Schedule,
    SemiInfinite,
    Start,
    SurfaceKind,
    characteristic_length,
)

if TYPE_CHECKING:
    from service.api.cases import _Translator


def reference_medium(body: Body) -> Medium:
    """A layered body's reference diffusivity, for its Fourier number and time scales only:
    D_ref = L²/((Σ C_i·t_i)·(Σ t_i/Λ_i)), the wall's capacity times its resistance (exact for
    one layer; the engines use each layer's own properties)."""
    capacity, resistance, lower = 0.0, 0.0, body.inner_m
    for layer in body.layers:
        thickness = layer.outer_m - lower
        capacity += layer.capacity * thickness
        resistance += thickness / layer.conductivity + layer.resistance
        lower = layer.outer_m
    return Medium(body.wall_m**2 / (capacity * resistance))


def in_potential(start: Start, body: Body) -> Start:
    """A layered body's start in the potential φ = c/K, split at the interfaces, each piece
    carrying its layer's capacity; a homogeneous body's start as it is."""
    if not body.layers:
        return start
    lowers = [body.inner_m] + [layer.outer_m for layer in body.layers[:-1]]
    pieces: list[tuple[float, float, float, float]] = []
    capacity: list[float] = []
    for lower, layer in zip(lowers, body.layers, strict=True):
        for x0, x1, v0, v1 in zip(start.x0, start.x1, start.v0, start.v1, strict=True):
            low, high = max(x0, lower), min(x1, layer.outer_m)
            if high <= low:
                continue
            slope = (v1 - v0) / (x1 - x0)
            values = (v0 + slope * (low - x0), v0 + slope * (high - x0))
            pieces.append((low, high, values[0] / layer.partition, values[1] / layer.partition))
            capacity.append(layer.capacity)
    return Start.from_pieces(pieces, capacity)


def _medium_and_schedule(
    translator: _Translator, request: rq.CaseRequest, body: Body
) -> tuple[Medium, Schedule | None]:
    """The medium (a layered body's reference one), and the schedule an Arrhenius medium
    follows; an Arrhenius medium at one temperature is a constant diffusivity."""
    if request.medium is None:
        for name in ("temperature", "schedule"):
            if getattr(request, name) is not None:
                raise InvalidInput(f"'{name}' goes with an Arrhenius medium", f"/{name}")
        return reference_medium(body), None
    law_request = request.medium.arrhenius
    if law_request is None:
        for name in ("temperature", "schedule"):
            if getattr(request, name) is not None:
                raise InvalidInput(f"'{name}' goes with a medium given as 'arrhenius'", f"/{name}")
        return translator.medium(request.medium), None
    law = translator.arrhenius(law_request, "/medium/arrhenius")
    if (request.temperature is None) == (request.schedule is None):
        raise InvalidInput(
            "an Arrhenius medium needs exactly one of 'temperature' or 'schedule'",
            "/medium/arrhenius",
        )
    if request.temperature is not None:
        if request.medium.thermal_diffusivity is not None:
            raise InvalidInput(
                "'thermal_diffusivity' checks how a part follows a furnace 'schedule'; at one "
                "'temperature' there is nothing to follow",
                "/medium/thermal_diffusivity",
            )
        kelvin = translator.temperature(request.temperature, "/temperature")
        return translator.medium(request.medium, diffusivity_given=law.diffusivity(kelvin)), None
    assert request.schedule is not None
    schedule = translator.schedule(request.schedule, law)
    if request.medium.thermal_diffusivity is not None:
        if translator.semi_infinite or translator.periodic_cell_m is not None:
            raise InvalidInput(
                "'thermal_diffusivity' checks how the part's section follows the furnace; a "
                "semi-infinite body or a segregation cell is not the part's section",
                "/medium/thermal_diffusivity",
            )
        alpha = translator.quantity(
            request.medium.thermal_diffusivity,
            "diffusivity",
            DIFFUSIVITY_RANGE_M2_PER_S,
            "/medium/thermal_diffusivity",
        )
        schedule = replace(schedule, thermal_diffusivity_m2_per_s=alpha)
    medium = translator.medium(request.medium, diffusivity_given=schedule.reference_diffusivity)
    return medium, schedule


def _check_separable(request: rq.CaseRequest, case: Case) -> None:
    """Reduced time is exact only while nothing but D changes with temperature: sealed and
    held surfaces and film-free baths, one material, no bath exchanges (clock times). A
    surface film is stepped in time instead, and needs its transfer coefficient (a Biot number
    moves with D); ``_check_stepped_schedule`` checks the rest once the case is whole."""
    if case.bath is not None and case.bath.exchanges_s:
        raise InvalidInput(
            "bath exchanges are not combined with a temperature schedule here",
            "/bath/exchanges",
        )
    _refuse_given_biot(
        request, "under a temperature schedule a film's Biot number k·Lc/D changes with D"
    )


def _refuse_given_biot(request: rq.CaseRequest, why: str) -> None:
    """A film given by its Biot number where D is not one number: its transfer coefficient is
    what stays fixed, so that is what must be given."""
    for pointer, surface in _request_surfaces(request):
        if isinstance(surface, rq.ConvectiveSurface) and surface.biot is not None:
            raise InvalidInput(
                f"{why}: give the film's 'transfer_coefficient' instead", pointer + "/biot"
            )


def _request_surfaces(request: rq.CaseRequest) -> list[tuple[str, rq.Surface]]:
    """Every surface condition the request gives, with its pointer."""
    if request.surface is not None:
        return [("/surface", request.surface)]
    if request.faces is None:
        return []
    names = ("first", "second", "inner", "outer")
    given = ((name, getattr(request.faces, name)) for name in names)
    return [(f"/faces/{name}", surface) for name, surface in given if surface is not None]


def _check_stepped_schedule(request: rq.CaseRequest, case: Case) -> None:
    """A surface film, or surroundings with their own schedule, under a temperature schedule
    are stepped in clock time: one homogeneous body on its own, every exchanging end toward
    one value, judged by a measure the stepping offers."""
    checks = [
        (
            case.bath is not None,
            "a body without a bath (a film to a bath is not stepped here)",
            "/bath",
        ),
        (
            case.semi_infinite is not None
            or case.product is not None
            or case.medium.reaction_per_s > 0,
            "a slab, cylinder or sphere without reaction",
            "/body",
        ),
        (
            len({e.value for e in case.faces.exchanging}) > 1,
            "one surroundings value (a steady profile is not stepped here)",
            _boundary_pointer(request),
        ),
    ]
    for failed, needs, pointer in checks:
        if failed:
            raise InvalidInput(
                "a surface film or changing surroundings under a temperature schedule are "
                f"stepped in time, for {needs}",
                pointer,
            )
    criterion = case.criterion
    offered = [m for m in _NONLINEAR_MEASURES if m != "dirichlet_energy"]
    if criterion is not None and criterion.measure not in offered:
        raise InvalidInput(
            "a surface film or changing surroundings under a temperature schedule are stepped "
            "in time and judged by " + ", ".join(offered),
            "/criterion/measure",
        )


def _semi_infinite(request: rq.CaseRequest, translator: _Translator, case: Case) -> SemiInfinite:
    """What a semi-infinite body needs beyond the provisional slab: its surface's transfer
    coefficient (a Biot number needs a length it has not got) and the real thickness."""
    if request.surface is None or case.faces.outer.kind not in (
        SurfaceKind.FIXED_VALUE,
        SurfaceKind.CONVECTIVE,
    ):
        raise InvalidInput(
            "a semi-infinite body takes one 'surface', held ('fixed_value') or convective",
            "/surface" if request.surface is not None else "/faces",
        )
    surface = request.surface
    if isinstance(surface, rq.ConvectiveSurface) and surface.biot is not None:
        raise InvalidInput(
            "a semi-infinite body has no length for a Biot number: give the surface's "
            "'transfer_coefficient' or 'heat_transfer_coefficient'",
            "/surface/biot",
        )
    if not (case.start.x0.size == 1 and case.start.v0[0] == case.start.v1[0]):
        raise InvalidInput("a semi-infinite body starts uniform here", "/initial")
    criterion = case.criterion
    if criterion is not None and criterion.measure not in ("reaches", "value_at"):
        raise InvalidInput(
            "a semi-infinite body is asked about a point: use 'reaches' or 'value_at'",
            "/criterion/measure",
        )
    outer = case.faces.outer
    transfer = None
    if outer.kind is SurfaceKind.CONVECTIVE:
        transfer = outer.biot * case.medium.diffusivity_m2_per_s / SEMI_INFINITE_REFERENCE_M
    thickness = None
    assert isinstance(request.body, rq.SemiInfiniteBody)
    if request.body.thickness is not None:
        thickness = translator.length(request.body.thickness, "/body/thickness")
    return SemiInfinite(transfer, thickness)


def _periodic_cell(translator: _Translator, request: rq.CaseRequest) -> float | None:
    """Half the wavelength of a periodic start, after checking that the body is the sealed
    slab cell it implies."""
    initial = request.initial
    if not isinstance(initial, rq.PeriodicStart):
        return None
    body = request.body
    if not isinstance(body, rq.SlabBody) or any(
        v is not None for v in (body.thickness, body.half_thickness, body.layers)
    ):
        raise InvalidInput(
            "a periodic start is solved on its half-wavelength cell: give the body as "
            "{'shape': 'slab'} with no size (the wavelength sets it)",
            "/body",
        )
    if request.surface is None or not isinstance(request.surface, rq.NoFluxSurface):
        raise InvalidInput(
            "the faces of a periodic cell are planes of symmetry: the surface is 'no_flux'",
            "/surface" if request.surface is not None else "/faces",
        )
    wavelength = translator.length(initial.wavelength, "/initial/wavelength")
    return wavelength / 2


def _check_reacting(request: rq.CaseRequest, case: Case) -> None:
    """First-order reaction is solved for a homogeneous solid cylinder or sphere, or a slab,
    with the same held or convective condition on every surface."""
    reasons = [
        (request.surface is None, "the same surface on every face", "/faces"),
        (case.body.layers != () or case.body.inner_m > 0, "a solid, homogeneous body", "/body"),
        (case.bath is not None or case.schedule is not None, "unchanging surroundings", "/bath"),
        (case.semi_infinite is not None, "a finite body", "/body"),
        (
            case.faces.outer.kind not in (SurfaceKind.FIXED_VALUE, SurfaceKind.CONVECTIVE),
            "a held or convective surface (a sealed body would only decay to zero)",
            "/surface",
        ),
    ]
    for failed, needs, pointer in reasons:
        if failed:
            raise InvalidInput(f"a reacting medium is solved here for {needs}", pointer)


_PRODUCT_MEASURES = (
    "value_at",
    "reaches",
    "max_deviation",
    "mean_square_deviation",
    "fraction_equilibrated",
)


def _product(request: rq.CaseRequest, translator: _Translator, case: Case) -> Product:
    """A finite body as a product of one-dimensional cases, after checking that the product
    rule holds: a uniform start, the same held or convective surface on every face (one
    ambient), a homogeneous medium, nothing else that couples the directions."""
    assert isinstance(request.body, rq.ProductBody)
    checks = [
        (request.surface is None, "the same surface on every face ('surface')", "/faces"),
        (
            case.faces.outer.kind not in (SurfaceKind.FIXED_VALUE, SurfaceKind.CONVECTIVE),
            "a held or convective surface",
            "/surface",
        ),
        (
            not (case.start.x0.size == 1 and case.start.v0[0] == case.start.v1[0]),
            "a uniform start",
            "/initial",
        ),
        (
            case.bath is not None or case.schedule is not None or case.medium.reaction_per_s > 0,
            "unchanging surroundings without reaction",
            "/body",
        ),
    ]
    for failed, needs, pointer in checks:
        if failed:
            raise InvalidInput(
                f"a {request.body.shape} is solved as a product of one-dimensional solutions, "
                f"which holds only for {needs}",
                pointer,
            )
    criterion = case.criterion
    if criterion is not None:
        if criterion.measure not in _PRODUCT_MEASURES:
            raise InvalidInput(
                "a product body answers " + ", ".join(_PRODUCT_MEASURES), "/criterion/measure"
            )
        centre = case.body.extent_m / 2 if case.body.geometry is Geometry.SLAB else 0.0
        if criterion.position_m is not None and criterion.position_m != centre:
            raise InvalidInput(
                "a product body is asked about its centre ('centre') or as a whole",
                "/criterion/position",
            )
    surface = request.surface
    if isinstance(surface, rq.ConvectiveSurface) and surface.biot is not None:
        raise InvalidInput(
            "a product body's directions have their own lengths: give the surface's "
            "'transfer_coefficient' or 'heat_transfer_coefficient' rather than a Biot number",
            "/surface/biot",
        )
    # the film's coefficient over D, from the Biot number on the case's own Lc
    film = case.faces.outer.biot / case.characteristic_length_m
    directions = []
    names = []
    for name, body in translator.product_directions(request.body):
        alike = Faces.alike(body, case.faces.outer)
        length, _ = characteristic_length(body, alike)
        end = replace(case.faces.outer, biot=film * length) if film > 0 else case.faces.outer
        start = Start.uniform(body.extent_m, float(case.start.v0[0]))
        directions.append(
            replace(case, body=body, start=start, faces=Faces.alike(body, end), criterion=None)
        )
        names.append(name)
    return Product(tuple(directions), tuple(names))


def _check_surroundings(request: rq.CaseRequest, case: Case) -> None:
    """A schedule of the surroundings is applied by superposition in time on one linear body
    with the same surface all round, judged against where it ends."""
    checks = [
        (request.surface is None, "the same surface on every face ('surface')", "/faces"),
        (
            case.bath is not None or case.semi_infinite is not None or case.product is not None,
            "a slab, cylinder or sphere without a bath",
            "/surface",
        ),
    ]
    for failed, needs, pointer in checks:
        if failed:
            raise InvalidInput(
                f"a schedule of the surroundings is applied here to {needs}", pointer
            )
    criterion = case.criterion
    if criterion is not None and criterion.measure not in _SURROUNDED_MEASURES:
        raise InvalidInput(
            "with changing surroundings the body is judged by "
            + ", ".join(_SURROUNDED_MEASURES)
            + " (against where it ends)",
            "/criterion/measure",
        )


_SURROUNDED_MEASURES = (
    "mean_square_deviation",
    "max_deviation",
    "value_at",
    "fraction_equilibrated",
)


_NONLINEAR_MEASURES = (
    "mean_square_deviation",
    "max_deviation",
    "fraction_equilibrated",
    "reaches",
    "dirichlet_energy",
)


def _nonlinear_case(request: rq.CaseRequest, case: Case) -> Case:
    """A value-dependent diffusivity is solved by stepping in time on one homogeneous body,
    sealed, held or behind a film given by its transfer coefficient (a Biot number would need
    a D to be on); its time scale is D at the final value."""
    checks = [
        (request.surface is None and request.faces is None, "a surface", "/surface"),
        (
            any(
                e.kind not in (SurfaceKind.NO_FLUX, SurfaceKind.FIXED_VALUE, SurfaceKind.CONVECTIVE)
                for e in case.faces.ends
            ),
            "sealed, held or convective surfaces",
            "/surface" if request.surface is not None else "/faces",
        ),
        (
            case.bath is not None
            or case.schedule is not None
            or case.surroundings is not None
            or case.semi_infinite is not None
            or case.product is not None
            or case.medium.reaction_per_s > 0,
            "a body on its own, in unchanging surroundings",
            "/medium",
        ),
        (
            len({e.value for e in case.faces.exchanging}) > 1,
            "one surroundings value (a steady profile would need D(c) solved across the body)",
            "/faces",
        ),
    ]
    for failed, needs, pointer in checks:
        if failed:
            raise InvalidInput(f"a value-dependent diffusivity is solved here for {needs}", pointer)
    criterion = case.criterion
    if criterion is not None and criterion.measure not in _NONLINEAR_MEASURES:
        raise InvalidInput(
            "with a value-dependent diffusivity the body is judged by "
            + ", ".join(_NONLINEAR_MEASURES),
            "/criterion/measure",
        )
    if (
        criterion is not None
        and criterion.measure == "dirichlet_energy"
        and any(e.kind is SurfaceKind.CONVECTIVE for e in case.faces.ends)
    ):
        raise InvalidInput(
            "with a value-dependent diffusivity the energy ∫|∇Φ|² (Φ = ∫D dc) is the one that "
            "never rises for held or sealed surfaces; behind a film judge by another measure",
            "/criterion/measure",
        )
    _refuse_given_biot(
        request, "with a value-dependent diffusivity a Biot number k·Lc/D has no one D to be on"
    )
    law = case.medium.nonlinear
    assert law is not None
    low, high = case.start.value_range
    values = np.array([low, high, case.final_value])
    with np.errstate(over="ignore"):
        reached = law.diffusivity(values)
    bottom, top = DIFFUSIVITY_RANGE_M2_PER_S
    outside = ~((reached >= bottom) & (reached <= top))
    if np.any(outside):
        index = int(np.argmax(outside))
        raise InvalidInput(
            f"D(c) reaches {float(reached[index]):.3g} m^2/s at the value "
            f"{float(values[index]):.6g} this body takes; accepted is {bottom:g} to {top:g} "
            "m^2/s over the values between the start and the final state",
            "/medium/diffusivity_exponential"
            if request.medium is not None and request.medium.diffusivity_exponential is not None
            else "/medium/diffusivity_table",
        )
    scale = float(law.diffusivity(np.array(case.final_value)))
    # the films' Biot numbers were taken on the placeholder D; k = Bi·D/Lc stays as given
    ratio = case.medium.diffusivity_m2_per_s / scale
    inner = case.faces.inner
    faces = Faces(
        None if inner is None else replace(inner, biot=inner.biot * ratio),
        replace(case.faces.outer, biot=case.faces.outer.biot * ratio),
    )
    return replace(case, medium=replace(case.medium, diffusivity_m2_per_s=scale), faces=faces)
