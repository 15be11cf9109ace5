"""Time stepping where no eigen-expansion exists: a value-dependent diffusivity D(c), and a
diffusivity that follows a temperature schedule behind a surface film (whose Biot number then
changes with D, so reduced time does not separate the problem).

Notes
-----
The same conservative cell-centred finite volumes as the eigen engine (exact shell volumes
and face areas, faces on every break of the start, half a mirror-symmetric slab), with the
flux written through the Kirchhoff transform Φ(c) = ∫₀^c D dc: J = −∇Φ, so across a face
between centres Δx apart the flux is A·(Φ_L − Φ_R)/Δx, and to a held surface A·(Φ_L − Φ_s)/gap.
This is exact for the steady flux between two points whatever D(c) is, conserves the amount,
and makes ∫|∇Φ|² a non-increasing energy of the semi-discrete system. The stiff system
V·dc/dt = F(c) is stepped by the tridiagonal Rosenbrock stepper (``rosenbrock.py``) with the
Jacobian ∂F_i/∂c_j = G·D(c_j) in closed form, and the criterion is located as an event on the
stepper's interpolant (the measures offered here only fall: the mean square and the largest
deviation from a constant final value, the amount's approach, and a value first reached at a
point).

A convective end passes k·(value − c_s) through its film, k = Bi·D_ref/Lc (fixed while D
moves), with the surface value c_s solved each evaluation so that the film's flux equals the
half cell's Kirchhoff flux (``_Film``). Under a schedule the flux is scaled by
s(t) = D(T(t))/D_ref in clock time; the system is then non-autonomous and the stepper adds its
time derivative. Surroundings that follow their own
schedule in clock time set the held value and the films' value at each time.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from scipy import linalg

from service.engines.finite_volume import mirrored_extent
from service.engines.rosenbrock import Tridiagonal, WorkBudget, integrate_to_event
from service.errors import NumericalFailure
from service.physics import Case, NonlinearDiffusivity, SurfaceKind

__all__ = ["SteppedHistory", "SteppedRun", "history_in_time", "step_in_time"]

FloatArray = NDArray[np.float64]

# The stepping stops at this many of the body's slowest time scales (Lc²/D at the final
# value, or through a weak film Lc²/(Bi·D)) without an event.
_HORIZON = 1e4
# Newton steps for a film's surface value (the start is exact for a constant D; a D(c) takes a
# few).
_FILM_NEWTON_STEPS = 30


@dataclass(frozen=True)
class SteppedRun:
    """Where the criterion was met, or with ``met`` false the state at ``until_s``, and by how
    much the criterion's quantity then exceeds its level (``shortfall``, ≤ 0 once met)."""

    time_s: float
    measures: dict[str, float | None]
    cells: int
    met: bool = True
    shortfall: float = 0.0
    # the cell values there (the meshed part: half of a mirror-symmetric slab)
    state: FloatArray | None = None


@dataclass(frozen=True)
class _Line:
    """The stepped system on one grid: its right-hand side and tridiagonal Jacobian, the start
    in cell values, each measure as a function of the cell values, and the grid's facts."""

    rhs: Callable[[float, FloatArray], FloatArray]
    jacobian: Callable[[float, FloatArray], Tridiagonal]
    start: FloatArray
    measure_of: dict[str, Callable[[FloatArray], float]]
    centres: FloatArray
    mirrored: bool
    final: float
    atol_scale: float
    is_autonomous: bool
    cells: int
    # the longest time scale: Lc²/D, or through the weakest film Lc²/(Bi·D) when longer
    slowest_time_s: float
    # (time, cell values) → the surface nodes (position, value) at the inner and outer ends,
    # where a held or filmed surface has one
    surface_nodes: Callable[[float, FloatArray], tuple[list[tuple[float, float]], ...]]

    def measures(self, c: FloatArray) -> dict[str, float]:
        return {name: measure(c) for name, measure in self.measure_of.items()}


def _build_line(case: Case, faces: FloatArray) -> _Line:
    """The finite volumes between ``faces`` as a stepped system (see the module notes)."""
    reference = case.medium.diffusivity_m2_per_s
    law = case.medium.nonlinear or NonlinearDiffusivity(d0=reference)
    body = case.body
    m = body.metric
    mirrored = mirrored_extent(case) is not None
    centres = 0.5 * (faces[1:] + faces[:-1])
    volumes = (faces[1:] ** (m + 1) - faces[:-1] ** (m + 1)) / (m + 1)
    areas = faces**m
    inner_g = areas[1:-1] / np.diff(centres)
    # the held ends (a sealed end, a symmetry face and a solid body's centre pass nothing)
    ends = (
        (case.faces.inner, 0, centres[0] - faces[0]),
        (case.faces.outer, -1, faces[-1] - centres[-1]),
    )
    held = np.zeros(centres.size)
    films: list[_Film] = []
    for end, index, gap in ends:
        if end is None or (index == -1 and mirrored):
            continue
        if end.kind is SurfaceKind.FIXED_VALUE:
            held[index] += areas[index] / gap
        elif end.biot > 0:
            transfer = end.biot * reference / case.characteristic_length_m
            films.append(
                _Film(index, float(areas[index] / volumes[index]), transfer, gap, end.value)
            )
    final = case.final_value
    phi_surface = float(law.kirchhoff(np.array(final)))
    start = case.start.moments(m, faces[:-1], faces[1:]) / volumes
    total = float(np.sum(volumes))
    deviation0 = start - final
    square0 = float(np.sum(volumes * deviation0**2)) / total
    max0 = float(np.max(np.abs(deviation0)))
    mean0 = float(np.sum(volumes * deviation0)) / total

    # the solver's trial states can stray far outside the values the body ever takes
    # (the maximum principle keeps the solution within them); clip its probes to a wide
    # band around them so that an exponential D cannot overflow
    span = max(
        float(np.max(start)) - float(np.min(start)), abs(final - float(np.mean(start))), 1e-300
    )
    low, high = (
        min(float(np.min(start)), final) - 10 * span,
        max(float(np.max(start)), final) + 10 * span,
    )

    # per unit volume: the conductance of each cell's faces, and of its neighbours' faces
    diagonal_g = -(np.r_[inner_g, 0.0] + np.r_[0.0, inner_g] + held) / volumes
    upper_g = inner_g / volumes[:-1]
    lower_g = inner_g / volumes[1:]
    held_g = held / volumes
    padded = np.zeros(centres.size + 1)  # the flux through every face, the ends passing none

    def bounded(c: FloatArray) -> FloatArray:
        return np.minimum(np.maximum(c, low), high)

    schedule = case.schedule
    if schedule is not None:
        arrhenius = schedule.law

        def scale(t: float) -> float:
            return arrhenius.diffusivity(schedule.temperature_k(t)) / reference
    else:

        def scale(t: float) -> float:
            return 1.0

    surroundings = case.surroundings

    def rhs(t: float, c: FloatArray) -> FloatArray:
        s = scale(t)
        phi = law.kirchhoff(bounded(c))
        padded[1:-1] = inner_g * (phi[:-1] - phi[1:])  # from cell i to i + 1
        held_phi = phi_surface
        if surroundings is not None:
            held_phi = float(law.kirchhoff(np.array(surroundings.value_at(t))))
        out = s * ((padded[:-1] - padded[1:]) / volumes + held_g * (held_phi - phi))
        for film in films:
            value = film.value if surroundings is None else surroundings.value_at(t)
            out[film.cell] += film.flux(law, s, float(c[film.cell]), value)[0]
        return np.asarray(out)

    def jacobian(t: float, c: FloatArray) -> Tridiagonal:
        s = scale(t)
        d = s * law.diffusivity(bounded(c))
        diagonal = diagonal_g * d
        for film in films:
            value = film.value if surroundings is None else surroundings.value_at(t)
            diagonal[film.cell] += film.flux(law, s, float(c[film.cell]), value)[1]
        return Tridiagonal(lower_g * d[:-1], diagonal, upper_g * d[1:])

    weights = volumes / total
    # each measure of a state, as a ratio to its start
    measure_of: dict[str, Callable[[FloatArray], float]] = {
        "mean_square_deviation": lambda c: float(weights @ (c - final) ** 2) / square0,
        "max_deviation": lambda c: float(np.max(np.abs(c - final))) / max0,
    }
    if case.faces.exchanging and mean0 != 0.0:
        measure_of["fraction_equilibrated"] = lambda c: 1.0 - float(weights @ (c - final)) / mean0
    if not films and surroundings is None and schedule is None:
        measure_of["dirichlet_energy"] = _kirchhoff_energy(
            law, inner_g, held, volumes, phi_surface, start
        )

    def surface_nodes(t: float, c: FloatArray) -> tuple[list[tuple[float, float]], ...]:
        value = final if surroundings is None else surroundings.value_at(t)
        nodes: tuple[list[tuple[float, float]], list[tuple[float, float]]] = ([], [])
        for end, index, _ in ends:
            if end is None or (index == -1 and mirrored):
                continue
            side = nodes[0 if index == 0 else 1]
            if end.kind is SurfaceKind.FIXED_VALUE:
                side.append((float(faces[index]), value))
        for film in films:
            side = nodes[0 if film.cell == 0 else 1]
            position = float(faces[0] if film.cell == 0 else faces[-1])
            surface = film.surface_value(law, scale(t), float(c[film.cell]), value)
            side.append((position, surface))
        return nodes

    return _Line(
        rhs=rhs,
        jacobian=jacobian,
        start=start,
        measure_of=measure_of,
        centres=centres,
        mirrored=mirrored,
        final=final,
        atol_scale=max(max0, abs(final), 1e-300),
        is_autonomous=schedule is None and surroundings is None,
        cells=centres.size * (2 if mirrored else 1),
        slowest_time_s=case.diffusion_time_s
        * max([1.0, *(1.0 / e.biot for e in case.faces.exchanging if e.biot > 0)]),
        surface_nodes=surface_nodes,
    )


def step_in_time(
    case: Case,
    faces: FloatArray,
    rtol: float,
    until_s: float | None = None,
    *,
    stop_when_met: bool = True,
    budget: WorkBudget | None = None,
) -> SteppedRun:
    """The time the criterion is met, stepping on the cells between ``faces`` (from
    ``finite_volume.build_mesh``) at step tolerance ``rtol``; with ``until_s`` no later than
    that (clock time under a schedule), and with ``stop_when_met`` false always to it. Its
    steps are charged to ``budget``."""
    criterion = case.criterion
    assert criterion is not None
    line = _build_line(case, faces)
    start, final = line.start, line.final
    level, compared = _criterion(
        case, line.centres, faces, final, start, line.mirrored, line.measure_of
    )

    def event(c: FloatArray) -> float:
        return compared(c) - level

    if stop_when_met and event(start) <= 0:
        return SteppedRun(0.0, dict(line.measures(start)), line.cells, state=start)
    run = integrate_to_event(
        line.rhs,
        line.jacobian,
        start,
        event if stop_when_met else None,
        horizon_s=until_s if until_s is not None else _HORIZON * line.slowest_time_s,
        # a millionth of the diffusion time (at D_ref, a schedule's fastest)
        first_step_s=1e-6 * case.diffusion_time_s,
        rtol=rtol,
        atol=rtol * line.atol_scale,
        is_autonomous=line.is_autonomous,
        budget=budget,
    )
    if not run.met and until_s is None:
        raise NumericalFailure(
            f"the time stepping did not reach the criterion within {_HORIZON:g} times the "
            "body's slowest time scale (diffusion, or exchange through its film)"
        )
    reported: dict[str, float | None] = dict(line.measures(run.state))
    if criterion.measure == "reaches":
        reported["reaches"] = 0.0 if run.met else None
    shortfall = 0.0 if run.met and stop_when_met else event(run.state)
    return SteppedRun(
        run.time_s, reported, line.cells, met=run.met, shortfall=shortfall, state=run.state
    )


@dataclass(frozen=True)
class SteppedHistory:
    """Every measure at each time asked, and the profile at chosen times."""

    measures: dict[str, list[float]]
    profiles: list[FloatArray]
    cells: int


def history_in_time(
    case: Case,
    faces: FloatArray,
    rtol: float,
    times_s: FloatArray,
    profile_times: list[int],
    positions_m: FloatArray,
    budget: WorkBudget | None = None,
) -> SteppedHistory:
    """One stepped run through ``times_s`` (ascending): each measure at every time, and the
    body-side profile at ``positions_m`` for the times indexed by ``profile_times`` (linear
    between cell centres, and toward a held or filmed surface to its surface value; flat
    toward a sealed end; read from the mirror image beyond half a mirror-symmetric slab)."""
    line = _build_line(case, faces)
    run = integrate_to_event(
        line.rhs,
        line.jacobian,
        line.start,
        None,
        horizon_s=float(np.max(times_s)),
        first_step_s=1e-6 * case.diffusion_time_s,
        rtol=rtol,
        atol=rtol * line.atol_scale,
        is_autonomous=line.is_autonomous,
        outputs_s=times_s,
        budget=budget,
    )
    assert run.outputs is not None
    measures = {
        name: [measure(state) for state in run.outputs]
        for name in line.measure_of
        for measure in (line.measure_of[name],)
    }
    extent = case.body.extent_m
    points = np.minimum(positions_m, extent - positions_m) if line.mirrored else positions_m
    profiles = []
    for index in profile_times:
        state = run.outputs[index]
        before, after = line.surface_nodes(float(times_s[index]), state)
        nodes = np.r_[[x for x, _ in before], line.centres, [x for x, _ in after]]
        values = np.r_[[v for _, v in before], state, [v for _, v in after]]
        potential = np.interp(points, nodes, values)
        profiles.append(np.asarray(potential * case.partition_at(positions_m)))
    return SteppedHistory(measures, profiles, line.cells)


def _kirchhoff_energy(
    law: NonlinearDiffusivity,
    inner_g: FloatArray,
    held: FloatArray,
    volumes: FloatArray,
    phi_surface: float,
    start: FloatArray,
) -> Callable[[FloatArray], float]:
    """The grid's E = Σ_faces g·(ΔΦ)² (held surfaces' gaps included), which never rises
    (tests/engines/test_stepping.py), over λ1·Σ V·(Φ0 − Φ_ref)²: λ1 the grid's own slowest
    non-zero rate of the operator with D = 1 (as the eigen engines normalise the Dirichlet
    energy), Φ_ref the held surface's Φ, or for a sealed body the volume mean of Φ. By the
    grid's Poincaré inequality the ratio is never below Σ V·(Φ − Φ_ref)²/Σ V·(Φ0 − Φ_ref)²."""
    scale = np.sqrt(volumes)
    diagonal = (np.r_[inner_g, 0.0] + np.r_[0.0, inner_g] + held) / volumes
    off = -inner_g / (scale[:-1] * scale[1:])
    sealed = not held.any()
    rates = linalg.eigh_tridiagonal(
        diagonal, off, eigvals_only=True, select="i", select_range=(0, 1)
    )
    slowest = float(rates[1] if sealed else rates[0])
    phi0 = law.kirchhoff(start)
    reference = float(volumes @ phi0) / float(np.sum(volumes)) if sealed else phi_surface
    norm = slowest * float(volumes @ (phi0 - reference) ** 2)

    def ratio(c: FloatArray) -> float:
        phi = law.kirchhoff(c)
        energy = float(inner_g @ np.diff(phi) ** 2) + float(held @ (phi - phi_surface) ** 2)
        return energy / norm

    return ratio


@dataclass(frozen=True)
class _Film:
    """A convective end: its cell, face area over that cell's volume, the film's transfer
    coefficient k (m/s, on the body-side value), the gap from the surface to the cell's centre
    and the body-side value the film leads toward (its surroundings' value times K)."""

    cell: int
    area_per_volume: float
    transfer: float
    gap: float
    value: float

    def surface_value(
        self, law: NonlinearDiffusivity, s: float, inside: float, value: float
    ) -> float:
        """c_s where the film's flux k·(value − c_s) equals the half cell's s·(Φ(c_s) −
        Φ(c_cell))/gap: s·Φ(c_s) + gap·k·c_s = s·Φ(c_cell) + gap·k·value, whose left side
        rises with c_s; Newton from the root with D frozen at the cell's value (exact for a
        constant D), kept between the cell's value and ``value``."""
        k, gap = self.transfer, self.gap
        d_inside = s * law.diffusivity_at(inside)
        surface = (d_inside * inside / gap + k * value) / (d_inside / gap + k)
        low, high = min(inside, value), max(inside, value)
        target = s * law.kirchhoff_at(inside) + gap * k * value
        scale = abs(target) + gap * k * (abs(value) + abs(inside)) + 1e-300
        for _ in range(_FILM_NEWTON_STEPS):
            residual = s * law.kirchhoff_at(surface) + gap * k * surface - target
            if abs(residual) <= 1e-14 * scale:
                break
            slope = s * law.diffusivity_at(surface) + gap * k
            surface = min(max(surface - residual / slope, low), high)
        return surface

    def flux(
        self, law: NonlinearDiffusivity, s: float, inside: float, value: float
    ) -> tuple[float, float]:
        """(the film's flux into the cell per unit volume, its derivative by the cell's value:
        −A/V·k·dc_s/dc_cell, dc_s/dc_cell = s·D(c_cell)/(s·D(c_s) + gap·k))."""
        surface = self.surface_value(law, s, inside, value)
        k = self.transfer
        d_inside = s * law.diffusivity_at(inside)
        d_surface = s * law.diffusivity_at(surface)
        per_volume = self.area_per_volume * k
        return (
            per_volume * (value - surface),
            -per_volume * d_inside / (d_surface + self.gap * k),
        )


def _criterion(
    case: Case,
    centres: FloatArray,
    faces: FloatArray,
    final: float,
    start: FloatArray,
    mirrored: bool,
    measure_of: dict[str, Callable[[FloatArray], float]],
) -> tuple[float, Callable[[FloatArray], float]]:
    """(level, compared(c)) for the criterion: the compared quantity falls to the
    level."""
    criterion = case.criterion
    assert criterion is not None
    name = criterion.measure
    if name == "reaches":
        assert criterion.position_m is not None and criterion.value is not None
        extent = case.body.extent_m
        point = criterion.position_m
        if mirrored:
            point = min(point, extent - point)
        # held surfaces are nodes too, at the final value
        nodes, prefix, suffix = centres, [], []
        inner, outer = case.faces.inner, case.faces.outer
        if inner is not None and inner.kind is SurfaceKind.FIXED_VALUE:
            prefix = [faces[0]]
        if outer.kind is SurfaceKind.FIXED_VALUE and not mirrored:
            suffix = [faces[-1]]
        nodes = np.r_[prefix, centres, suffix]
        target = criterion.value
        sign = math.copysign(1.0, float(np.interp(point, centres, start)) - target)

        def reach(c: FloatArray) -> float:
            values = np.r_[[final] * len(prefix), c, [final] * len(suffix)]
            return sign * (float(np.interp(point, nodes, values)) - target)

        return 0.0, reach
    if name == "fraction_equilibrated":
        level = 1.0 - (criterion.fraction or 0.0)
        equilibrated = measure_of["fraction_equilibrated"]
        return level, lambda c: 1.0 - equilibrated(c)
    assert criterion.tolerance is not None
    return criterion.tolerance, measure_of[name]
