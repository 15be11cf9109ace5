"""The translator's shared state and its quantity readers (lengths, temperatures, durations)."""

from __future__ import annotations

from service.api.ranges import (
    DURATION_RANGE_S,
    LENGTH_RANGE_M,
    TEMPERATURE_RANGE_K,
    in_range,
)
from service.errors import InvalidInput
from service.physics import (
    SurroundingsSchedule,
)
from service.units import DIMENSIONS, Units


class TranslatorBase:
    """Units, the positions read so far, and what the request turned out to be."""

    def __init__(self, units: Units) -> None:
        self.units = units
        self.positions: dict[str, float] = {}
        self.semi_infinite = False
        # half the wavelength of a periodic start: the cell a segregation pattern is solved on
        self.periodic_cell_m: float | None = None
        # a schedule of the surroundings' value, and the field it came from
        self.surroundings: tuple[SurroundingsSchedule, str] | None = None

    def length(self, raw: float | str, pointer: str) -> float:
        value = self.units.to_si(raw, "length", pointer)
        return in_range(value, LENGTH_RANGE_M, "a length", "m", pointer)

    def quantity(
        self, raw: float | str, dimension: str, bounds: tuple[float, float], pointer: str
    ) -> float:
        value = self.units.to_si(raw, dimension, pointer)
        label = DIMENSIONS[dimension]
        return in_range(value, bounds, label.label.removeprefix("a "), label.si_unit, pointer)

    def temperature(self, raw: float | str, pointer: str) -> float:
        """An absolute temperature in kelvin; it must carry its unit (900 could be °C or K)."""
        if not isinstance(raw, str) or "delta" in raw:
            raise InvalidInput(
                "give a temperature with its unit, such as '900 degC' or '1173 K' (a bare "
                "number could be either; a temperature difference is not a temperature)",
                pointer,
            )
        return self.quantity(raw, "temperature", TEMPERATURE_RANGE_K, pointer)

    def _duration(self, raw: float | str, pointer: str) -> float:
        value = self.units.to_si(raw, "time", pointer)
        return in_range(value, DURATION_RANGE_S, "a duration", "s", pointer)
