"""Published check values, each with its source, for tests that compare against work we did
not do ourselves.

Certainty: "seen" = read in a reproduction of the source; "memory" = recalled, not re-read
(the edition, table or equation number should be checked before relying on it). Printed
values are compared to their printed digits with a tolerance of one unit in the last digit.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

__all__ = [
    "CALLISTER_CARBON_IN_AUSTENITE",
    "CALLISTER_CARBURIZING",
    "CALLISTER_COPPER_IN_ALUMINIUM",
    "CRANK_F_AT_FOURIER_0_1",
    "CRANK_HALF_TIMES",
    "ERF_HALF",
    "HOMOGENIZATION_SOURCE",
    "NO_FLUX_FIRST_WAVENUMBERS",
    "ONE_TERM",
    "ONE_TERM_SOURCE",
    "THERMOCOUPLE_INPUTS",
    "THERMOCOUPLE_TIME",
    "WATTS_ANTISYMMETRIC_ROOTS",
    "WATTS_SYMMETRIC_ROOTS",
    "Reference",
]


@dataclass(frozen=True)
class Reference:
    value: float
    printed_digits: int
    source: str
    certainty: str

    @property
    def tolerance(self) -> float:
        """One unit in the last printed digit."""
        return 10.0 ** (-self.printed_digits)


# Uptake from a constant surface value, half-times D·t½/L² (L as stated per shape).
CRANK_HALF_TIMES: dict[str, Reference] = {
    # l = FULL thickness of the sheet; Crank's chapter 4 writes the sheet as −l < x < l, so
    # with the half-thickness the number is 4 × 0.04918.
    "slab_full_thickness": Reference(
        0.049,
        3,
        "Crank, The Mathematics of Diffusion, 2nd ed. (1975), chapter on measuring "
        "diffusion coefficients (sorption half-time D·t½/l² = 0.049, l the sheet thickness)",
        "memory",
    ),
    "sphere_radius": Reference(
        0.03055,
        5,
        "Crank (1975) eq. 6.20, F = 1 − (6/π²)Σ n⁻² exp(−Dn²π²t/a²); half-time on a²",
        "seen (series quoted); half-time recomputed",
    ),
    "cylinder_radius": Reference(
        0.06306,
        5,
        "Crank (1975) chapter 5, uptake by a long cylinder (roots of J0); half-time on a²",
        "memory",
    ),
}

# Fraction taken up, F, at D·t/a² = 0.1 (a = half-thickness / radius / radius).
CRANK_F_AT_FOURIER_0_1: dict[str, Reference] = {
    "slab": Reference(
        0.35682,
        5,
        "Crank (1975) eq. 4.18 (sheet series), computed at Dt/a² = 0.1",
        "series seen; value computed from it",
    ),
    "cylinder": Reference(
        0.60582,
        5,
        "Crank (1975) eq. 5.23 (cylinder series), computed at Dt/a² = 0.1",
        "memory (equation number); value computed",
    ),
    "sphere": Reference(
        0.77048,
        5,
        "Crank (1975) eq. 6.20 (sphere series), computed at Dt/a² = 0.1",
        "series seen; value computed",
    ),
}

ONE_TERM_SOURCE = (
    "Çengel, Heat and Mass Transfer, Table 4-2 (seen in a scan); the same values in Incropera "
    "et al., Fundamentals of Heat and Mass Transfer, Table 5.1 (memory)"
)
# Bi → (wall ζ1, wall C1, cylinder ζ1, cylinder C1, sphere ζ1, sphere C1); four printed digits.
# Two printed values are one unit off the correctly rounded root (cylinder ζ1 at Bi = 2 is
# 1.59945, wall C1 at Bi = 5 is 1.24025); the one-digit tolerance covers them.
ONE_TERM: dict[float, tuple[float, float, float, float, float, float]] = {
    0.01: (0.0998, 1.0017, 0.1412, 1.0025, 0.1730, 1.0030),
    0.1: (0.3111, 1.0161, 0.4417, 1.0246, 0.5423, 1.0298),
    0.5: (0.6533, 1.0701, 0.9408, 1.1143, 1.1656, 1.1441),
    1.0: (0.8603, 1.1191, 1.2558, 1.2071, 1.5708, 1.2732),
    2.0: (1.0769, 1.1785, 1.5995, 1.3384, 2.0288, 1.4793),
    5.0: (1.3138, 1.2403, 1.9898, 1.5029, 2.5704, 1.7870),
    10.0: (1.4289, 1.2620, 2.1795, 1.5677, 2.8363, 1.9249),
}

WATTS_SOURCE = (
    "R. G. Watts, Essentials of Applied Mathematics for Scientists and Engineers (2007), App. A"
)
# Roots of ζ tan ζ = C (Table A.1, seen): the slab's symmetric family with Bi = C.
WATTS_SYMMETRIC_ROOTS: dict[float, tuple[float, ...]] = {
    1.0: (0.8603, 3.4256, 6.4373, 9.5293),
    10.0: (1.4289, 4.3058, 7.2281, 10.2003),
}
# Roots of q cot q + C = 0 (Table A.2, seen): the slab's antisymmetric family with Bi = C.
# Printed 11.0856 and 11.3349 are one unit above the rounded roots 11.08554 and 11.33483.
WATTS_ANTISYMMETRIC_ROOTS: dict[float, tuple[float, ...]] = {
    1.0: (2.0288, 4.9132, 7.9787, 11.0856),
    2.0: (2.2889, 5.0870, 8.0962, 11.1727),
    4.0: (2.5704, 5.3540, 8.3029, 11.3349),
}

# First non-zero wavenumber × length of sealed bodies: slab π/thickness (so π/2 on the
# half-thickness); cylinder first zero of J1; sphere first root of tan x = x.
NO_FLUX_FIRST_WAVENUMBERS: dict[str, Reference] = {
    "slab_on_thickness": Reference(
        3.1416, 4, "π/thickness (cosine mode of a sealed sheet)", "common practice"
    ),
    "cylinder": Reference(3.8317, 4, "first zero of J1 (tables of Bessel zeros)", "seen"),
    "sphere": Reference(4.4934, 4, "first positive root of tan x = x (OEIS A115365)", "seen"),
}

# Çengel, Heat and Mass Transfer, Example 4-1 "Temperature Measurement by Thermocouples"
# (lumped system analysis): a 1 mm junction sphere, k = 35 W/(m·°C), ρ = 8500 kg/m³,
# c_p = 320 J/(kg·°C), h = 210 W/(m²·°C); Bi on V/A = 0.001, b = 0.462 s⁻¹, and the junction
# reads 99 % of the initial temperature difference after t = 10 s (printed as 10 s; inputs
# and answer seen quoted in a worked solution and in a port of the book's examples).
THERMOCOUPLE_INPUTS: dict[str, float] = {
    "diameter_m": 1e-3,
    "conductivity": 35.0,
    "density": 8500.0,
    "specific_heat": 320.0,
    "heat_transfer_coefficient": 210.0,
}
THERMOCOUPLE_TIME = Reference(10.0, 2, "Çengel, Heat and Mass Transfer, Example 4-1", "seen quoted")

# Callister, Materials Science and Engineering: An Introduction, diffusion-data table (C in
# γ-Fe row also seen quoted; the rest from memory): D = D0·exp(−Q/RT). The book rounds Q to
# three figures, so its printed D agree with the law to about 5 %.
CALLISTER_CARBON_IN_AUSTENITE: dict[str, Any] = {
    "d0_m2_per_s": 2.3e-5,
    "q_kj_per_mol": 148.0,
    "d_at_900_c": Reference(
        5.9e-12, 2, "Callister, diffusion-data table, C in γ-Fe", "seen quoted"
    ),
    "d_at_1100_c": Reference(5.3e-11, 2, "Callister, diffusion-data table, C in γ-Fe", "memory"),
}
# Callister's worked example on equal diffusion results at two temperatures (D·t constant):
# Cu in Al, D = 5.3e-13 m²/s at 600 °C and 4.8e-14 m²/s at 500 °C; a 10 h treatment at
# 600 °C matches 110.4 h at 500 °C (from memory).
CALLISTER_COPPER_IN_ALUMINIUM: dict[str, Any] = {
    "d_at_600_c": 5.3e-13,
    "d_at_500_c": 4.8e-14,
    "hours_at_600_c": 10.0,
    "hours_at_500_c": Reference(110.4, 4, "Callister, example on D·t = constant", "memory"),
}

# Callister's carburizing example (semi-infinite solid, erf solution): steel at 0.25 wt% C,
# surface held at 1.20 wt%, D = 1.6e-11 m²/s at 950 °C: 0.80 wt% at 0.5 mm after 7.1 h
# (printed; from memory).
CALLISTER_CARBURIZING: dict[str, Any] = {
    "start": 0.25,
    "surface": 1.20,
    "value": 0.80,
    "depth_m": 0.5e-3,
    "diffusivity": 1.6e-11,
    "hours": Reference(7.1, 2, "Callister, carburizing example (erf solution)", "memory"),
}
# erf(0.5) as printed in Callister's error-function table (Table 5.1; seen in a reproduction).
ERF_HALF = Reference(0.5205, 4, "Callister, error-function table", "seen")

# Homogenization of a sinusoidal segregation profile: the amplitude ratio
# δ = exp(−π²·D·t/l²), l the half-wavelength (Porter & Easterling, Phase Transformations in
# Metals and Alloys, homogenization section; memory).
HOMOGENIZATION_SOURCE = "Porter & Easterling, Phase Transformations in Metals and Alloys (memory)"
