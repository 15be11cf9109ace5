"""Accepted ranges of the translated inputs, and the check that names the field."""

from __future__ import annotations

from service.errors import InvalidInput

# Accepted ranges of the SI inputs; outside them the arithmetic is no longer trustworthy
# (and no real body is that small, large, fast or slow).
LENGTH_RANGE_M = (1e-9, 1e4)
DIFFUSIVITY_RANGE_M2_PER_S = (1e-30, 1e3)
BIOT_RANGE = (0.0, 1e6)
# Thinnest wall of a hollow body, as a fraction of its outer radius.
HOLLOW_WALL_MIN = 1e-6
# Largest magnitude of a value (concentration, temperature), as the request models accept.
VALUE_LIMIT = 1e12
# Interface resistances (s/m for mass, m^2·K/W for heat); zero is no resistance.
RESISTANCE_RANGE = (0.0, 1e12)
# The latest bath exchange accepted (about 3 000 years).
EXCHANGE_LIMIT_S = 1e11
# A bath's volume (m³) and a slab's face area (m²).
VOLUME_RANGE = (1e-24, 1e9)
AREA_RANGE = (1e-18, 1e8)
# First-order rate constants (1/s).
RATE_RANGE = (0.0, 1e9)
# Temperatures (K), durations (s), D0 (m²/s) and activation temperatures Q/R (K).
TEMPERATURE_RANGE_K = (1e-3, 1e5)
DURATION_RANGE_S = (1e-9, 1e11)
# A furnace or bath ramp rate (K/s): from a kelvin in 30 years to 1e6 K/s.
RAMP_RATE_RANGE_K_PER_S = (1e-9, 1e6)
D0_RANGE = (1e-30, 1e10)
ACTIVATION_RANGE_K = (0.0, 1e7)
# Gas constant R and Boltzmann's constant k_B (exact in the 2019 SI).
GAS_CONSTANT = 8.314462618
BOLTZMANN = 1.380649e-23
# The length a semi-infinite body's film Biot number is computed on before the solver
# sizes its slab (it only carries k_eff = Bi·D/length from request to solver).
SEMI_INFINITE_REFERENCE_M = 1e-3
# A periodic start's cosine is drawn with chords whose largest sag is at most this share of
# the accuracy asked (times the amplitude): the fewest, a power of two, between the bounds.
PERIODIC_SAG_PER_ACCURACY = 0.2
PERIODIC_CHORDS = (64, 8192)
# Heat inputs: wider than any real material (aerogels to diamond, gases to metals).
CONDUCTIVITY_RANGE = (1e-6, 1e5)
DENSITY_RANGE = (1e-3, 1e5)
SPECIFIC_HEAT_RANGE = (1.0, 1e6)


def in_range(
    value: float, bounds: tuple[float, float], what: str, unit: str, pointer: str
) -> float:
    low, high = bounds
    if not low <= value <= high:
        raise InvalidInput(
            f"{what} must lie between {low:g} and {high:g} {unit}; got {value:g} {unit}", pointer
        )
    return value
