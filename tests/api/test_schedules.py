"""Arrhenius diffusivity at a temperature or under a schedule, through HTTP."""

from __future__ import annotations

import math
from typing import Any

import pytest
from fastapi.testclient import TestClient

from tests.references import CALLISTER_CARBON_IN_AUSTENITE, CALLISTER_COPPER_IN_ALUMINIUM

CASE: dict[str, Any] = {
    "body": {"shape": "slab", "thickness": "2 mm"},
    "initial": {"kind": "uniform", "value": 0.2},
    "surface": {"kind": "fixed_value", "value": 1.0},
    "criterion": {"measure": "value_at", "position": "centre", "tolerance": 0.5},
}
CARBON = CALLISTER_CARBON_IN_AUSTENITE
LAW = {
    "d0": f"{CARBON['d0_m2_per_s']} m^2/s",
    "activation_energy": f"{CARBON['q_kj_per_mol']} kJ/mol",
}


def _post(client: TestClient, **request: Any) -> Any:
    response = client.post("/v1/settling-time", json={**CASE, **request})
    assert response.status_code == 200, response.text
    return response.json()


@pytest.mark.parametrize(
    ("celsius", "key"), [("900 degC", "d_at_900_c"), ("1100 degC", "d_at_1100_c")]
)
def test_arrhenius_law_gives_the_tabulated_diffusivity(
    client: TestClient, celsius: str, key: str
) -> None:
    body = _post(client, medium={"arrhenius": LAW}, temperature=celsius)
    reference = CARBON[key]
    # the book rounds Q to three figures: its D agree with the law to about 5 %
    assert body["diffusivity_m2_per_s"] == pytest.approx(reference.value, rel=0.05), (
        reference.source
    )


def test_activation_energy_per_atom_in_ev(client: TestClient) -> None:
    """148 kJ/mol is 148e3/(N_A·e) = 1.5339 eV per atom; divided by k_B, not R."""
    per_mole = _post(client, medium={"arrhenius": LAW}, temperature="900 degC")
    electron_volts = 148e3 / (6.02214076e23 * 1.602176634e-19)
    per_atom = _post(
        client,
        medium={"arrhenius": {**LAW, "activation_energy": f"{electron_volts} eV"}},
        temperature="900 degC",
    )
    assert per_atom["diffusivity_m2_per_s"] == pytest.approx(
        per_mole["diffusivity_m2_per_s"], rel=1e-9
    )


def test_equal_diffusion_results_at_two_temperatures(client: TestClient) -> None:
    """D·t is constant for the same diffusion result: the time at 500 °C over that at 600 °C
    is D600/D500, 110.4 h for a 10 h treatment in the textbook's example. The law here runs
    through its two tabulated D (d_ref at 600 °C, Q from their ratio)."""
    data = CALLISTER_COPPER_IN_ALUMINIUM
    t600, t500 = 873.15, 773.15
    q = 8.314462618 * math.log(data["d_at_600_c"] / data["d_at_500_c"]) / (1 / t500 - 1 / t600)
    law = {"d_ref": data["d_at_600_c"], "t_ref": "600 degC", "activation_energy": f"{q} J/mol"}
    hot = _post(client, medium={"arrhenius": law}, temperature="600 degC")
    cold = _post(client, medium={"arrhenius": law}, temperature="500 degC")
    reference = data["hours_at_500_c"]
    ratio = cold["time_s"] / hot["time_s"]
    assert ratio * data["hours_at_600_c"] == pytest.approx(reference.value, rel=1e-3), (
        reference.source
    )


def test_a_hold_at_one_temperature_is_the_constant_diffusivity(client: TestClient) -> None:
    constant = _post(client, medium={"arrhenius": LAW}, temperature="900 degC")
    held = _post(
        client,
        medium={"arrhenius": LAW},
        schedule=[{"start_at": "900 degC"}, {"hold": "100 h", "at": "900 degC"}],
    )
    assert held["time_s"] == pytest.approx(constant["time_s"], rel=1e-12)
    assert held["schedule"]["met_in_segment"] == 0
    reduced = constant["time_s"] * constant["diffusivity_m2_per_s"]
    assert held["schedule"]["integrated_diffusivity_m2"] == pytest.approx(reduced, rel=1e-12)


def test_schedule_ending_first_says_how_much_longer_the_soak_needs(client: TestClient) -> None:
    body = _post(
        client,
        medium={"arrhenius": LAW},
        schedule=[
            {"start_at": "20 degC"},
            {"ramp_to": "900 degC", "over": "2 h"},
            {"hold": "1 h", "at": "900 degC"},
            {"ramp_to": "20 degC", "over": "2 h"},
        ],
    )
    schedule = body["schedule"]
    assert schedule["met_in_segment"] is None
    assert "schedule_too_short" in [w["code"] for w in body["warnings"]]
    assert body["time_s"] == pytest.approx(schedule["schedule_end_s"] + schedule["extra_soak_s"])
    # the extra soak at 900 °C supplies exactly the ∫D dt the schedule lacks
    constant = _post(client, medium={"arrhenius": LAW}, temperature="900 degC")
    d900 = constant["diffusivity_m2_per_s"]
    assert schedule["extra_soak_s"] * d900 < schedule["integrated_diffusivity_m2"]


@pytest.mark.parametrize(
    ("request_change", "pointer"),
    [
        ({"medium": {"arrhenius": LAW}, "temperature": 900}, "/temperature"),
        ({"medium": {"arrhenius": LAW}, "temperature": "10 delta_degC"}, "/temperature"),
        ({"medium": {"arrhenius": LAW}}, "/medium/arrhenius"),
        (
            {
                "medium": {"arrhenius": {**LAW, "activation_energy": 148000}},
                "temperature": "900 degC",
            },
            "/medium/arrhenius/activation_energy",
        ),
        (
            {
                "medium": {"arrhenius": {**LAW, "activation_energy": "148 kJ"}},
                "temperature": "900 degC",
            },
            "/medium/arrhenius/activation_energy",
        ),
        ({"medium": {"diffusivity": 1e-9}, "temperature": "900 degC"}, "/temperature"),
        (
            {
                "medium": {"arrhenius": LAW},
                "schedule": [{"hold": "1 h", "at": "900 degC"}, {"hold": "1 h", "at": "900 degC"}],
            },
            "/schedule/0",
        ),
        (
            {
                "medium": {"arrhenius": LAW},
                "schedule": [{"start_at": "900 degC"}, {"hold": "1 h", "at": "900 degC"}],
                "surface": {"kind": "convective", "biot": 2, "ambient": 1},
            },
            "/surface/biot",
        ),
    ],
)
def test_schedule_errors_name_the_field(
    client: TestClient, request_change: dict[str, Any], pointer: str
) -> None:
    response = client.post("/v1/settling-time", json={**CASE, **request_change})
    assert response.status_code == 422, response.text
    assert pointer in [e["pointer"] for e in response.json()["errors"]]
