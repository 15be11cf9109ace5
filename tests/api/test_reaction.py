"""First-order consumption or binding, through HTTP."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pytest
from fastapi.testclient import TestClient
from scipy import integrate, optimize, special


def _case(shape: str, rate: str | None) -> dict[str, Any]:
    medium: dict[str, Any] = {"diffusivity": "1e-9 m^2/s"}
    if rate is not None:
        medium["reaction_rate"] = rate
    size = "thickness" if shape == "slab" else "radius"
    return {
        "body": {"shape": shape, size: "2 mm"},
        "medium": medium,
        "initial": {"kind": "uniform", "value": 0},
        "surface": {"kind": "fixed_value", "value": 1},
        "criterion": {"measure": "mean_square_deviation", "tolerance": 0.01},
    }


def _post(client: TestClient, request: dict[str, Any]) -> Any:
    response = client.post("/v1/settling-time", json=request)
    assert response.status_code == 200, response.text
    return response.json()


# The effectiveness factor of a first-order reaction in a body held at its surface (Thiele's
# result, in the chemical-reaction-engineering texts, e.g. Fogler, Elements of Chemical
# Reaction Engineering, internal diffusion chapter; common practice), φ on Lc:
EFFECTIVENESS = {
    "slab": lambda phi: math.tanh(phi) / phi,
    "cylinder": lambda phi: 2 * special.i1(phi) / (phi * special.i0(phi)),
    "sphere": lambda phi: 3 * (phi / math.tanh(phi) - 1) / phi**2,
}


@pytest.mark.parametrize("shape", ["slab", "cylinder", "sphere"])
def test_effectiveness_factor_is_thieles(client: TestClient, shape: str) -> None:
    body = _post(client, _case(shape, "1e-3 1/s"))
    reaction = body["reaction"]
    lc = body["characteristic_length_m"]
    assert reaction["thiele_modulus"] == pytest.approx(lc * math.sqrt(1e-3 / 1e-9), rel=1e-12)
    phi = reaction["thiele_modulus"]
    assert reaction["effectiveness_factor"] == pytest.approx(EFFECTIVENESS[shape](phi), rel=1e-9)
    assert body["final_state"]["kind"] == "reaction_profile"


def test_vanishing_rate_is_the_foundation(client: TestClient) -> None:
    plain = _post(client, _case("sphere", None))
    slow = _post(client, _case("sphere", "1e-15 1/s"))
    assert slow["method"]["engine"] == "series"
    assert slow["time_s"] == pytest.approx(plain["time_s"], rel=1e-9)


def test_reacting_slab_against_its_sine_series(client: TestClient) -> None:
    """An independent reference: the held slab 0 < x < L keeps the modes sin(nπx/L) with their
    rates shifted by k; the deviation from c_f = cosh(m(x − L/2))/cosh(mL/2) starts at −c_f,
    whose coefficients are computed by quadrature; the mean-square ratio is a Parseval sum
    over ⟨c_f²⟩."""
    length, diffusivity, rate = 2e-3, 1e-9, 1e-3
    modulus = math.sqrt(rate / diffusivity)
    n = np.arange(1, 400)

    def final(x: float) -> float:
        return math.cosh(modulus * (x - length / 2)) / math.cosh(modulus * length / 2)

    coefficients = np.array(
        [
            2
            / length
            * integrate.quad(
                lambda x, k=k: final(x) * math.sin(k * math.pi * x / length), 0, length, limit=200
            )[0]
            for k in n
        ]
    )
    rates = diffusivity * (n * math.pi / length) ** 2 + rate

    # ⟨u0²⟩ = ⟨c_f²⟩ exactly (the truncated Parseval sum would miss ~1/n of it)
    start = integrate.quad(lambda x: final(x) ** 2, 0, length, limit=200)[0] / length

    def ratio(time_s: float) -> float:
        return float(0.5 * np.sum(coefficients**2 * np.exp(-2 * rates * time_s)) / start)

    expected = optimize.brentq(lambda t: ratio(t) - 0.01, 1.0, 1e5, xtol=1e-9)
    body = _post(client, _case("slab", f"{rate} 1/s"))
    assert body["method"]["engine"] == "series"
    assert body["time_s"] == pytest.approx(expected, rel=1e-6)


@pytest.mark.parametrize("shape", ["slab", "cylinder", "sphere"])
def test_reacting_series_and_finite_volumes_agree(client: TestClient, shape: str) -> None:
    """Through a film (Bi = 5): the series (the final state's projection in closed form by
    Green's identity) and the finite volumes (their own discrete steady state), within the
    finite volumes' estimate."""
    case = {
        **_case(shape, "2e-3 1/s"),
        "surface": {"kind": "convective", "biot": 5, "ambient": 1},
    }
    series = _post(client, case)
    volumes = _post(client, {**case, "engine": "finite_volume"})
    assert series["method"]["engine"] == "series"
    error = abs(volumes["time_s"] / series["time_s"] - 1)
    assert error <= max(2 * volumes["method"]["estimated_relative_error"], 1e-6)


@pytest.mark.parametrize(
    ("change", "pointer"),
    [
        ({"surface": {"kind": "no_flux"}}, "/surface"),
        ({"body": {"shape": "sphere", "radius": "2 mm", "inner_radius": "1 mm"}}, "/body"),
        ({"criterion": {"measure": "rsd", "tolerance": 0.1}}, "/criterion/measure"),
        ({"medium": {"diffusivity": 1e-9, "reaction_rate": "1 m"}}, "/medium/reaction_rate"),
    ],
)
def test_reaction_errors_name_the_field(
    client: TestClient, change: dict[str, Any], pointer: str
) -> None:
    response = client.post("/v1/settling-time", json={**_case("sphere", "1e-3 1/s"), **change})
    assert response.status_code == 422, response.text
    assert pointer in [e["pointer"] for e in response.json()["errors"]]
