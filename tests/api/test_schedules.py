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


# A 200 mm steel section, α = 5e-6 m²/s (an illustrative input): held at a new temperature on
# both faces, its centre is within 1 % of it when (4/π)·exp(−π²·Fo/4) = 0.01 (the slab's first
# series term, Carslaw & Jaeger, Conduction of Heat in Solids, 2nd ed., §3.3; the second term is
# below 1e-18 there), Fo = (4/π²)·ln(400/π) = 1.96431, t = Fo·(0.1 m)²/α = 3928.6 s = 1.0913 h.
# The answer warns when that exceeds a tenth of the soak: soaks of 10.8 h and 11.0 h straddle it.
LAG_THRESHOLD_SOAK_H = 10 * (4 / math.pi**2) * math.log(400 / math.pi) * 0.1**2 / 5e-6 / 3600


@pytest.mark.parametrize(("soak_h", "lags"), [(10.8, True), (11.0, False)])
def test_a_thick_section_lags_the_furnace(client: TestClient, soak_h: float, lags: bool) -> None:
    assert 10.8 < LAG_THRESHOLD_SOAK_H < 11.0
    body = _post(
        client,
        body={"shape": "slab", "thickness": "200 mm"},
        medium={"arrhenius": LAW, "thermal_diffusivity": "5e-6 m^2/s"},
        schedule=[{"start_at": "1100 degC"}, {"hold": f"{soak_h} h", "at": "1100 degC"}],
        criterion={"measure": "fraction_equilibrated", "fraction": 0.01},
    )
    codes = [w["code"] for w in body["warnings"]]
    assert ("furnace_lag" in codes) is lags
    assert any("schedule's temperature at every moment" in a for a in body["assumptions"])


@pytest.mark.parametrize(
    ("change", "pointer"),
    [
        (
            {
                "medium": {"arrhenius": LAW, "thermal_diffusivity": "5e-6 m^2/s"},
                "temperature": "900 degC",
            },
            "/medium/thermal_diffusivity",
        ),
        (
            {"medium": {"diffusivity": "1e-10 m^2/s", "thermal_diffusivity": "5e-6 m^2/s"}},
            "/medium/thermal_diffusivity",
        ),
    ],
)
def test_thermal_diffusivity_goes_with_a_schedule(
    client: TestClient, change: dict[str, Any], pointer: str
) -> None:
    response = client.post("/v1/settling-time", json={**CASE, **change})
    assert response.status_code == 422, response.text
    assert pointer in [e["pointer"] for e in response.json()["errors"]]


@pytest.mark.parametrize(
    ("rate", "minutes"),
    [("10 degC/min", 10.0), ("10 K/min", 10.0), ("10 degF/min", 18.0), ("-600 degC/h", 10.0)],
)
def test_a_ramp_rate_is_a_temperature_difference(
    client: TestClient, rate: str, minutes: float
) -> None:
    """A rate of 10 °C/min is 10 K/min (a difference, not 283 K/min), 10 °F/min is 50/9 K/min
    (°F = 5/9 K); a 100 K ramp then takes 10 or 18 min, and the answer equals the same ramp
    given by its duration."""
    start = [{"start_at": "900 degC"}]
    soak = [{"hold": "20 h", "at": "1000 degC"}]
    by_rate = _post(
        client,
        medium={"arrhenius": LAW},
        schedule=[*start, {"ramp_to": "1000 degC", "rate": rate}, *soak],
    )
    by_duration = _post(
        client,
        medium={"arrhenius": LAW},
        schedule=[*start, {"ramp_to": "1000 degC", "over": f"{minutes} min"}, *soak],
    )
    assert by_rate["time_s"] == pytest.approx(by_duration["time_s"], rel=1e-12)


@pytest.mark.parametrize(
    ("ramp", "pointer"),
    [
        ({"ramp_to": "1000 degC", "rate": "10 degC"}, "/schedule/1/rate"),
        ({"ramp_to": "900 degC", "rate": "10 degC/min"}, "/schedule/1/rate"),
        ({"ramp_to": "1000 degC", "rate": "10 degC/min", "over": "1 h"}, "/schedule/1"),
    ],
)
def test_ramp_rate_errors_name_the_field(
    client: TestClient, ramp: dict[str, Any], pointer: str
) -> None:
    request = {
        **CASE,
        "medium": {"arrhenius": LAW},
        "schedule": [{"start_at": "900 degC"}, ramp, {"hold": "1 h", "at": "1000 degC"}],
    }
    response = client.post("/v1/settling-time", json=request)
    assert response.status_code == 422, response.text
    assert any(e["pointer"].startswith(pointer) for e in response.json()["errors"])
