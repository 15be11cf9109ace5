"""Quantities in requests: a number in SI, or a string "number unit", turned into SI floats.

The number is read with a strict pattern and the unit with a small strict grammar
(names, integer powers with ``^`` or ``**``, ``*``, ``/``, parentheses) before pint
ever sees it, so nothing a client sends is evaluated as an expression. pint then
converts the checked unit once; the scale and offset are kept in a bounded cache owned
by one :class:`Units` object, so a repeated unit costs a dictionary look-up.
"""

from __future__ import annotations

import math
import re
import threading
from collections import OrderedDict
from dataclasses import dataclass
from typing import Any

from service.errors import UnitError

__all__ = ["DIMENSIONS", "Dimension", "Units"]

# Longest unit text accepted; real units are a few characters long.
_MAX_UNIT_CHARS = 64
# Deepest parenthesis nesting accepted in a unit.
_MAX_NESTING = 4
# Largest power accepted on a unit factor (m^3, s^-2 ...).
_MAX_POWER = 12
# Converters kept per Units object; unit texts beyond this are re-derived (about 0.3 ms each).
_CACHE_SIZE = 512

_NUMBER = re.compile(
    r"^\s*([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d{1,3})?)(?:\s+|(?=[^\d.eE+-])|$)(.*)$"
)
_TOKEN = re.compile(
    r"\s*(?:(?P<name>[A-Za-z_°µμΩ]+)|(?P<num>\d+)|(?P<pow>\*\*|\^)|(?P<op>[*/])|(?P<neg>-)|(?P<lp>\()|(?P<rp>\)))"
)


@dataclass(frozen=True)
class Dimension:
    """An expected physical dimension: pint's dimensionality text and a human name."""

    pint_text: str
    label: str
    si_unit: str


DIMENSIONS: dict[str, Dimension] = {
    "length": Dimension("[length]", "a length", "m"),
    "time": Dimension("[time]", "a time", "s"),
    "diffusivity": Dimension("[length]**2/[time]", "a diffusivity (length²/time)", "m^2/s"),
    "velocity": Dimension("[length]/[time]", "a transfer coefficient (length/time)", "m/s"),
    "area": Dimension("[length]**2", "an area", "m^2"),
    "rate": Dimension("1/[time]", "a rate constant", "1/s"),
    "temperature": Dimension("[temperature]", "a temperature", "K"),
    # a change of temperature per time: pint reads degC/min as a difference (1/60 K/s)
    "temperature_rate": Dimension("[temperature]/[time]", "a temperature change per time", "K/s"),
    "molar_energy": Dimension(
        "[mass]*[length]**2/[time]**2/[substance]", "an energy per mole", "J/mol"
    ),
    "energy": Dimension("[mass]*[length]**2/[time]**2", "an energy", "J"),
    "volume": Dimension("[length]**3", "a volume", "m^3"),
    "conductivity": Dimension(
        "[mass]*[length]/[time]**3/[temperature]", "a thermal conductivity", "W/(m*K)"
    ),
    "density": Dimension("[mass]/[length]**3", "a density", "kg/m^3"),
    "specific_heat": Dimension(
        "[length]**2/[time]**2/[temperature]", "a specific heat capacity", "J/(kg*K)"
    ),
    "thermal_resistance": Dimension(
        "[temperature]*[time]**3/[mass]", "a thermal resistance per area", "m^2*K/W"
    ),
    "mass_transfer_resistance": Dimension(
        "[time]/[length]", "a mass-transfer resistance per area", "s/m"
    ),
    "heat_transfer_coefficient": Dimension(
        "[mass]/[time]**3/[temperature]", "a heat transfer coefficient", "W/(m^2*K)"
    ),
}


class _Grammar:
    """Recursive-descent check of a unit text; raises ValueError with the reason."""

    def __init__(self, text: str) -> None:
        self.tokens: list[tuple[str, str]] = []
        pos = 0
        while pos < len(text):
            if text[pos:].strip() == "":
                break
            match = _TOKEN.match(text, pos)
            if match is None or match.end() == pos:
                raise ValueError(f"unexpected character {text[pos:].strip()[0]!r}")
            kind = match.lastgroup or ""
            self.tokens.append((kind, match.group(kind)))
            pos = match.end()
        self.index = 0

    def check(self) -> None:
        if not self.tokens:
            raise ValueError("the unit is empty")
        self._product(0)
        if self.index != len(self.tokens):
            raise ValueError(f"unexpected {self.tokens[self.index][1]!r}")

    def _peek(self) -> tuple[str, str]:
        return self.tokens[self.index] if self.index < len(self.tokens) else ("end", "")

    def _product(self, depth: int) -> None:
        self._factor(depth)
        while self._peek()[0] == "op":
            self.index += 1
            self._factor(depth)

    def _factor(self, depth: int) -> None:
        kind, value = self._peek()
        if kind == "name" or (kind == "num" and value == "1"):
            self.index += 1
        elif kind == "lp":
            if depth >= _MAX_NESTING:
                raise ValueError("too many nested parentheses")
            self.index += 1
            self._product(depth + 1)
            if self._peek()[0] != "rp":
                raise ValueError("a parenthesis is not closed")
            self.index += 1
        else:
            raise ValueError(f"expected a unit name, found {value or 'the end'!r}")
        if self._peek()[0] == "pow":
            self.index += 1
            if self._peek()[0] == "neg":
                self.index += 1
            kind, value = self._peek()
            if kind != "num":
                raise ValueError("a power must be a whole number")
            self.index += 1
            if int(value) > _MAX_POWER:
                raise ValueError(f"powers above {_MAX_POWER} are not accepted")


class Units:
    """Converts request quantities to SI floats, with a bounded cache of converters.

    One object per application; it is safe to share between threads.
    """

    def __init__(self) -> None:
        self._registry: Any = None
        self._lock = threading.Lock()
        self._cache: OrderedDict[tuple[str, str], tuple[float, float]] = OrderedDict()

    def _ureg(self) -> Any:
        if self._registry is None:
            import pint

            self._registry = pint.UnitRegistry()
        return self._registry

    def to_si(self, raw: float | int | str, dimension: str, pointer: str) -> float:
        """Return ``raw`` in SI units of ``dimension``; a bare number is taken as SI already.

        Raises
        ------
        UnitError
            If the text is not "number unit", the unit is unknown or malformed, the dimension
            differs from ``dimension``, or the converted value is not finite.
        """
        expected = DIMENSIONS[dimension]
        if isinstance(raw, bool):
            raise UnitError(
                f"expected {expected.label}, a number in {expected.si_unit} or a "
                f"string such as '2 {expected.si_unit}'",
                pointer,
            )
        if isinstance(raw, int | float):
            value = float(raw)
        else:
            number_text, unit_text = self._split(raw, expected, pointer)
            scale, offset = self._converter(unit_text, expected, pointer)
            value = float(number_text) * scale + offset
        if not math.isfinite(value):
            raise UnitError(f"{raw!r} is not a finite {expected.label.removeprefix('a ')}", pointer)
        return value

    @staticmethod
    def _split(text: str, expected: Dimension, pointer: str) -> tuple[str, str]:
        match = _NUMBER.match(text)
        if match is None or not match.group(2).strip():
            raise UnitError(
                f"{text!r} is not a quantity: write a number and a unit, such as "
                f"'2 {expected.si_unit}', or a bare number in {expected.si_unit}",
                pointer,
            )
        return match.group(1), match.group(2).strip()

    def _converter(self, unit_text: str, expected: Dimension, pointer: str) -> tuple[float, float]:
        key = (unit_text, expected.pint_text)
        with self._lock:
            cached = self._cache.get(key)
            if cached is not None:
                self._cache.move_to_end(key)
                return cached
        converter = self._derive(unit_text, expected, pointer)
        with self._lock:
            self._cache[key] = converter
            while len(self._cache) > _CACHE_SIZE:
                self._cache.popitem(last=False)
        return converter

    def _derive(self, unit_text: str, expected: Dimension, pointer: str) -> tuple[float, float]:
        if len(unit_text) > _MAX_UNIT_CHARS:
            raise UnitError(f"the unit is longer than {_MAX_UNIT_CHARS} characters", pointer)
        try:
            _Grammar(unit_text).check()
        except ValueError as exc:
            raise UnitError(f"cannot read the unit {unit_text!r}: {exc}", pointer) from exc
        ureg = self._ureg()
        import pint

        try:
            unit = ureg.parse_units(unit_text.replace("^", "**"))
            if unit.dimensionality != ureg.get_dimensionality(expected.pint_text):
                raise UnitError(
                    f"{unit_text!r} is not {expected.label}; use a unit such as {expected.si_unit}",
                    pointer,
                )
            base = ureg.Quantity(1.0, unit).to_base_units()
            zero = ureg.Quantity(0.0, unit).to_base_units()
        except pint.errors.UndefinedUnitError as exc:
            raise UnitError(f"unknown unit in {unit_text!r}", pointer) from exc
        except (pint.errors.PintError, ValueError, TypeError, AttributeError) as exc:
            raise UnitError(f"cannot use the unit {unit_text!r}: {exc}", pointer) from exc
        offset = float(zero.magnitude)
        scale = float(base.magnitude) - offset
        return scale, offset
