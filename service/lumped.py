"""The lumped (uniform-body) answer, given beside the distributed one when it would do.

Notes
-----
When the surface resistance dominates the internal one (the classical Biot number on
Lc = V/A below 0.1, common practice in the heat-transfer textbooks), the body stays nearly
uniform and its deviation from the final state decays as one exponential:

    V·du/dt = −A·k_eff·u  ⇒  u(t) = ū0·e^{−bt},  b = k_eff·A/V = Bi·D/(Lc·(V/A)),

(b = Σ k_i·A_i/V over the exchanging ends when their coefficients differ), with Bi = k_eff·Lc/D
the Biot number on the characteristic length Lc the engines use (k_eff = k_f/K for mass
transfer with a partition coefficient, h/(ρc_p) for heat) and ū0 the mean deviation of the
start (the lumped body starts with the body's amount). Each measure that is defined for a
uniform body then has a closed-form time; the gradient energy and the relative standard
deviation are identically zero for a uniform body, so no lumped time is given for them.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

from service.measures import Facts
from service.physics import Case, Criterion, SurfaceKind

__all__ = ["LUMPED_BIOT", "LumpedAnswer", "lumped_answer"]

# The classical lumped-capacity rule (common practice): Bi on V/A below this and one number
# will do.
LUMPED_BIOT = 0.1


@dataclass(frozen=True)
class LumpedAnswer:
    time_s: float
    rate_per_s: float
    biot_volume_to_area: float


def _end_exchange(case: Case) -> list[tuple[float, float, float]] | None:
    """(Bi, conductivity, r^m) of each exchanging end when every one of them is convective (a
    held surface has no film resistance, so the body cannot stay uniform); None otherwise."""
    body, layers = case.body, case.layers
    ends = (
        (case.faces.inner, body.inner_m, layers[0].conductivity),
        (case.faces.outer, body.extent_m, layers[-1].conductivity),
    )
    exchanging = [
        (end, radius, conductivity)
        for end, radius, conductivity in ends
        if end is not None and end.kind is not SurfaceKind.NO_FLUX
    ]
    if not exchanging or any(end.kind is not SurfaceKind.CONVECTIVE for end, _, _ in exchanging):
        return None
    return [
        (end.biot, conductivity, radius**body.metric) for end, radius, conductivity in exchanging
    ]


def classical_biot(case: Case) -> float | None:
    """Bi on Lc = V/A (area-weighted over the exchanging ends) when every exchanging end is
    convective; None otherwise."""
    exchange = _end_exchange(case)
    if exchange is None:
        return None
    mean_biot = sum(biot * area for biot, _, area in exchange) / case.exchange_area
    return mean_biot * case.volume_to_area_m / case.characteristic_length_m


def _decay_ratio(facts: Facts, criterion: Criterion) -> float | None:
    """The factor e^{−bt} must fall to, per measure; None where a uniform body has no time."""
    mean = abs(facts.mean_start)
    ratios: dict[str, Callable[[], float | None]] = {
        # ū0²e^{−2bt}/⟨u0²⟩ ≤ τ
        "mean_square_deviation": lambda: (
            math.sqrt((criterion.tolerance or 0.0) * facts.mean_square_start) / mean
        ),
        # |ū0|e^{−bt}/max|u0| ≤ τ
        "max_deviation": lambda: (criterion.tolerance or 0.0) * facts.max_abs_start / mean,
        "value_at": lambda: (
            criterion.absolute_tolerance / mean
            if criterion.absolute_tolerance is not None
            else (criterion.tolerance or 0.0) * facts.max_abs_start / mean
        ),
        # 1 − F = e^{−bt} ≤ 1 − f
        "fraction_equilibrated": lambda: 1.0 - (criterion.fraction or 0.0),
        "rsd": lambda: None,
        "dirichlet_energy": lambda: None,
    }
    if mean == 0.0:
        return None
    return ratios[criterion.measure]()


def lumped_answer(case: Case, facts: Facts) -> LumpedAnswer | None:
    """The lumped model's settling time when the classical Biot number is below 0.1 and the
    criterion has a meaning for a uniform body; otherwise None."""
    biot = classical_biot(case)
    criterion = case.criterion
    if biot is None or biot >= LUMPED_BIOT or criterion is None:
        return None
    ratio = _decay_ratio(facts, criterion)
    if ratio is None:
        return None
    exchange = _end_exchange(case)
    assert exchange is not None
    # b = Σ k_i·A_i/(Σ C·V) with k_i = Bi_i·Λ_i/Lc (Λ = D for a homogeneous body, C = 1)
    conductance = sum(biot * conductivity * area for biot, conductivity, area in exchange)
    rate = conductance / (case.characteristic_length_m * case.body_weight)
    time_s = math.log(1.0 / ratio) / rate if ratio < 1.0 else 0.0
    return LumpedAnswer(time_s=time_s, rate_per_s=rate, biot_volume_to_area=biot)
