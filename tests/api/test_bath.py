"""A body in a finite, well-stirred bath, through HTTP."""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np
import pytest
from fastapi.testclient import TestClient
from scipy import optimize


def _post(client: TestClient, endpoint: str = "/v1/settling-time", **request: Any) -> Any:
    response = client.post(endpoint, json=request)
    assert response.status_code == 200, response.text
    return response.json()


def _roots(equation: Callable[[float], float], offset: float, count: int = 300) -> np.ndarray:
    """The first roots of a limited-volume eigencondition, one in each interval of π."""
    roots: list[float] = []
    k = 0
    while len(roots) < count:
        low, high = (k + offset) * math.pi + 1e-9, (k + offset + 1) * math.pi - 1e-9
        if equation(low) * equation(high) < 0:
            roots.append(optimize.brentq(equation, low, high, xtol=1e-15))
        k += 1
    return np.array(roots)


def _crank_sphere(alpha: float) -> Callable[[float], float]:
    """M_t/M_∞ of a sphere taking up solute from a stirred solution of limited volume:
    1 − Σ 6α(α+1)·exp(−D q_n² t/a²)/(9 + 9α + q_n²α²), tan q_n = 3q_n/(3 + αq_n²), α the
    bath volume over K times the sphere's (Crank, The Mathematics of Diffusion, 2nd ed.,
    §6.3.4; from memory, the roots computed here)."""
    q = _roots(lambda x: (3 + alpha * x * x) * math.sin(x) - 3 * x * math.cos(x), 0.0)
    weights = 6 * alpha * (alpha + 1) / (9 + 9 * alpha + q * q * alpha * alpha)
    return lambda fourier: 1 - float(np.sum(weights * np.exp(-q * q * fourier)))


def _crank_sheet(alpha: float) -> Callable[[float], float]:
    """The same for a sheet −l < x < l: 1 − Σ 2α(1+α)·exp(−D q_n² t/l²)/(1 + α + α²q_n²),
    tan q_n = −αq_n (Crank, §4.3.5; from memory)."""
    q = _roots(lambda x: math.sin(x) + alpha * x * math.cos(x), 0.5)
    weights = 2 * alpha * (1 + alpha) / (1 + alpha + alpha * alpha * q * q)
    return lambda fourier: 1 - float(np.sum(weights * np.exp(-q * q * fourier)))


def _fourier_at(uptake: Callable[[float], float], fraction: float) -> float:
    return float(optimize.brentq(lambda f: uptake(f) - fraction, 1e-6, 50.0, xtol=1e-14))


def test_sphere_in_limited_volume_matches_crank(client: TestClient) -> None:
    """A 2 mm bead (K = 0.5) in 8.378 mm³ of solution at 3: α = V/(K·V_bead) = 2, so the bead
    ends holding 1/(1+α) = 1/3 of the solute, at K·c_bath,final = 0.5·1 = 1... and reaches 90 %
    of its uptake at the Fourier number Crank's series gives."""
    radius = 1e-3
    volume = 2 * 0.5 * 4 / 3 * math.pi * radius**3
    body = _post(
        client,
        body={"shape": "sphere", "radius": radius},
        medium={"diffusivity": 1e-9, "partition": 0.5},
        initial={"kind": "uniform", "value": 0},
        surface={"kind": "bath"},
        bath={"volume": volume, "value": 3.0},
        criterion={"measure": "fraction_equilibrated", "fraction": 0.9},
    )
    alpha = 2.0
    # the bath falls from 3 to 3·α/(1+α) = 2; the bead ends at K·2 = 1
    assert body["final_value"] == pytest.approx(1.0, rel=1e-12)
    uptake = (body["final_value"] * 4 / 3 * math.pi * radius**3) / (3.0 * volume)
    assert uptake == pytest.approx(1 / (1 + alpha), rel=1e-12)
    assert body["fourier_number"] == pytest.approx(_fourier_at(_crank_sphere(alpha), 0.9), rel=1e-4)


def test_sheet_in_limited_volume_matches_crank(client: TestClient) -> None:
    """A sheet 2l = 1 mm thick and 4 cm² a face, both faces in 0.8 cm³ of solution:
    α = V/(2l·A) = 2 (K = 1). Its mirror-symmetric start lets the engine mesh one half."""
    body = _post(
        client,
        body={"shape": "slab", "thickness": "1 mm", "face_area": "4 cm^2"},
        medium={"diffusivity": 1e-9},
        initial={"kind": "uniform", "value": 0},
        surface={"kind": "bath"},
        bath={"volume": "0.8 cm^3", "value": 1.0},
        criterion={"measure": "fraction_equilibrated", "fraction": 0.5},
    )
    assert body["length_convention"] == "half_thickness"
    assert body["fourier_number"] == pytest.approx(_fourier_at(_crank_sheet(2.0), 0.5), rel=1e-4)


RELEASE: dict[str, Any] = {
    "body": {"shape": "sphere", "radius": "1 mm"},
    "medium": {"diffusivity": "1e-9 m^2/s"},
    "initial": {"kind": "uniform", "value": 1},
    "surface": {"kind": "bath", "transfer_coefficient": "2e-6 m/s"},
    "bath": {"capacity_ratio": 4.0, "value": 0},
}


def test_body_and_bath_keep_what_they_hold(client: TestClient) -> None:
    """Released solute goes to the bath: body amount + bath amount stay at the start's
    (body M0 = V, bath α·V at the same units), at every time of the history."""
    history = _post(client, "/v1/history", **RELEASE, times=[1.0, 30.0, 300.0, 3000.0])
    remaining = np.array(history["measures"]["remaining_fraction"])
    bath = np.array(history["bath_values"])
    assert remaining + 4.0 * bath == pytest.approx(np.ones(4), abs=1e-9)
    assert remaining[-1] == pytest.approx(1 / 5, rel=1e-3)  # nearly settled at 1/(1+α)


def test_remaining_fraction_and_bath_value_criteria(client: TestClient) -> None:
    rinse = _post(client, **RELEASE, criterion={"measure": "remaining_fraction", "fraction": 0.3})
    assert rinse["measures"]["remaining_fraction"] == pytest.approx(0.3, rel=1e-3)
    bath = _post(
        client, **RELEASE, criterion={"measure": "bath_value", "absolute_tolerance": 0.001}
    )
    # the bath rises toward 1/(1+α) = 0.2; within 0.001 of it is later than 30 % remaining,
    # and the measure reported is the one the criterion compares (absolute, here)
    assert bath["time_s"] > rinse["time_s"]
    assert bath["measures"]["bath_value"] == pytest.approx(0.001, rel=1e-3)


@pytest.mark.parametrize(
    ("change", "pointer"),
    [
        ({"criterion": {"measure": "remaining_fraction", "fraction": 0.1}}, "/criterion/fraction"),
        ({"criterion": {"measure": "max_deviation", "tolerance": 0.1}}, "/criterion/measure"),
        ({"bath": None}, "/surface"),
        ({"surface": {"kind": "no_flux"}}, "/surface"),
        (
            {
                "bath": {"volume": "1 cm^3", "value": 0},
                "body": {"shape": "cylinder", "radius": "1 mm"},
            },
            "/body/length",
        ),
        ({"bath": {"volume": "1 cm^3", "capacity_ratio": 2, "value": 0}}, "/bath"),
        (
            {
                "body": {"shape": "slab", "thickness": "1 mm"},
                "surface": None,
                "faces": {"first": {"kind": "fixed_value", "value": 0}, "second": {"kind": "bath"}},
            },
            "/faces",
        ),
    ],
)
def test_bath_errors_name_the_field(
    client: TestClient, change: dict[str, Any], pointer: str
) -> None:
    request = {**RELEASE, "criterion": {"measure": "fraction_equilibrated", "fraction": 0.9}}
    request.update(change)
    request = {key: value for key, value in request.items() if value is not None}
    response = client.post("/v1/settling-time", json=request)
    assert response.status_code == 422, response.text
    assert pointer in [e["pointer"] for e in response.json()["errors"]]


RINSES: dict[str, Any] = {
    **RELEASE,
    "surface": {"kind": "bath"},
    "bath": {"capacity_ratio": 4.0, "value": 0, "exchanges": ["30 min", "60 min", "90 min"]},
}


def test_well_spaced_rinses_dilute_geometrically(client: TestClient) -> None:
    """With each bath left to equilibrate (30 min is many time constants of a 1 mm bead with
    D = 1e-9 m²/s, R²/(π²D) ≈ 100 s), every bath of α = 4 leaves 1/(1+α) of what the body
    held: after n baths (1/5)^n (the dilution of successive rinses; common practice)."""
    times = [1790.0, 3590.0, 5390.0, 9000.0]
    history = _post(
        client,
        "/v1/history",
        **RINSES,
        times=times,
        criterion={"measure": "remaining_fraction", "fraction": 0.01},
    )
    remaining = history["measures"]["remaining_fraction"]
    assert remaining == pytest.approx([0.2, 0.04, 0.008, 0.0016], rel=1e-6)
    # the bath is fresh after each exchange and takes up what the body gives: 4·c_b = released
    bath = history["bath_values"]
    assert bath[-1] == pytest.approx((0.008 - 0.0016) / 4.0, rel=1e-6)


def test_rinse_answer_says_after_which_exchange(client: TestClient) -> None:
    body = _post(client, **RINSES, criterion={"measure": "remaining_fraction", "fraction": 0.01})
    # 0.2, 0.04 after the first two baths: the criterion is met in the third bath
    assert body["met_after_exchange"] == 2
    assert 3600.0 < body["time_s"] < 5400.0
    assert body["measures"]["remaining_fraction"] == pytest.approx(0.01, rel=1e-3)


def test_history_is_continuous_in_the_body_across_an_exchange(client: TestClient) -> None:
    history = _post(
        client,
        "/v1/history",
        **{**RINSES, "bath": {**RINSES["bath"], "exchanges": ["60 s"]}},
        times=[59.999, 60.0, 60.001],
        criterion={"measure": "remaining_fraction", "fraction": 0.1},
    )
    remaining = history["measures"]["remaining_fraction"]
    # the body holds what it held: continuous into the exchange
    assert remaining[0] == pytest.approx(remaining[1], rel=1e-5)
    # then the fresh bath draws it down again, at first as √t: in Δt = 1 ms a sphere loses
    # at most (3/R)·2·√(DΔt/π) = 3.4e-3 of its mean (surface value at most the mean here)
    assert 0 < (remaining[1] - remaining[2]) / remaining[1] < 3.4e-3
    assert history["bath_values"][1] == pytest.approx(0.0, abs=1e-12)  # fresh at the exchange
    assert history["bath_values"][0] > 0.01


def test_exchanges_are_judged_by_rinse_measures(client: TestClient) -> None:
    response = client.post(
        "/v1/settling-time",
        json={**RINSES, "criterion": {"measure": "mean_square_deviation", "tolerance": 0.01}},
    )
    assert response.status_code == 422
    assert response.json()["errors"][0]["pointer"] == "/criterion/measure"
    response = client.post(
        "/v1/settling-time",
        json={
            **RINSES,
            "bath": {**RINSES["bath"], "exchanges": ["20 min", "10 min"]},
            "criterion": {"measure": "remaining_fraction", "fraction": 0.1},
        },
    )
    assert response.status_code == 422
    assert response.json()["errors"][0]["pointer"] == "/bath/exchanges/1"


@pytest.mark.parametrize("shape", ["slab", "sphere"])
def test_a_huge_bath_is_a_held_surface(client: TestClient, shape: str) -> None:
    """With α = 1e6 the bath hardly moves, so the body sees a held surface: the settling time
    is the fixed_value case's (from the series engine) to about 1/α."""
    size = {"thickness": "2 mm"} if shape == "slab" else {"radius": "1 mm"}
    common: dict[str, Any] = {
        "body": {"shape": shape, **size},
        "medium": {"diffusivity": "1e-9 m^2/s"},
        "initial": {"kind": "uniform", "value": 0},
        "criterion": {"measure": "fraction_equilibrated", "fraction": 0.95},
    }
    in_bath = _post(
        client, **common, surface={"kind": "bath"}, bath={"capacity_ratio": 1e6, "value": 1.0}
    )
    held = _post(client, **common, surface={"kind": "fixed_value", "value": 1.0})
    assert held["method"]["engine"] == "series"
    assert in_bath["time_s"] == pytest.approx(held["time_s"], rel=1e-4)


def _dense_sheet_in_bath(
    thickness: float, diffusivity: float, alpha: float, band: tuple[float, float], cells: int
) -> Callable[[float], float]:
    """An independent reference for a sheet in one bath on both faces: the whole sheet on a
    uniform grid, the bath one more unknown joined to both end cells (no longer tridiagonal),
    solved by a dense eigendecomposition. Returns the body's amount over time as a fraction of
    its equilibrium change, F(t)."""
    h = thickness / cells
    x = (np.arange(cells) + 0.5) * h
    c0 = ((x > band[0]) & (x < band[1])).astype(float)
    n = cells + 1
    conductance = np.zeros((n, n))
    for i in range(cells - 1):
        conductance[i, i + 1] = conductance[i + 1, i] = diffusivity / h
    for end in (0, cells - 1):  # each face held to the bath through half a cell
        conductance[end, cells] = conductance[cells, end] = diffusivity / (h / 2)
    stiffness = np.diag(conductance.sum(axis=1)) - conductance
    capacity = np.r_[np.full(cells, h), alpha * thickness]
    scale = 1 / np.sqrt(capacity)
    rates, vectors = np.linalg.eigh(scale[:, None] * stiffness * scale[None, :])
    start = np.r_[c0, 0.0]
    coefficients = vectors.T @ (np.sqrt(capacity) * start)
    body_start = float(h * c0.sum())
    final_body = body_start / (1 + alpha)

    def fraction(time_s: float) -> float:
        state = scale * (vectors @ (coefficients * np.exp(-rates * time_s)))
        return (h * float(state[:cells].sum()) - body_start) / (final_body - body_start)

    return fraction


def test_off_centre_start_in_a_two_faced_bath(client: TestClient) -> None:
    """A band near one face of a sheet in one bath on both faces: the engine solves the
    start's symmetric part (with the bath, half the sheet) and antisymmetric part (bath-free)
    apart; the reference solves the whole sheet and bath together (dense)."""
    thickness, diffusivity, alpha = 1e-3, 1e-9, 1.5
    body = _post(
        client,
        body={"shape": "slab", "thickness": thickness},
        medium={"diffusivity": diffusivity},
        initial={"kind": "band", "between": [0.0, 0.25e-3], "inside": 1, "outside": 0},
        surface={"kind": "bath"},
        bath={"capacity_ratio": alpha, "value": 0.0},
        criterion={"measure": "fraction_equilibrated", "fraction": 0.9},
    )
    reference = _dense_sheet_in_bath(thickness, diffusivity, alpha, (0.0, 0.25e-3), 800)
    time_s = optimize.brentq(lambda t: reference(t) - 0.9, 1e-3, 1e4, xtol=1e-10)
    # the reference's own grid error is of order (1/800)² ≈ 2e-6
    assert body["time_s"] == pytest.approx(time_s, rel=1e-4)
