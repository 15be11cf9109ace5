"""The exceptions mixclock raises, one small tree.

::

    MixclockError          base; never escapes the API as a 500
    ├── InvalidInput       a request value is wrong; carries a JSON pointer → 422
    │   └── UnitError      a quantity cannot be read or has the wrong dimension → 422
    ├── NotApplicable      valid, but the engine or measure asked for cannot answer it → 422
    ├── NumericalFailure   an engine could not reach a trustworthy answer → 422
    └── NotFound           a stored result that does not exist → 404

Each carries ``pointer`` (an RFC 6901 JSON Pointer into the request, possibly empty)
and a ``detail`` that tells the caller what is accepted or what to change.
"""

from __future__ import annotations

__all__ = [
    "InvalidInput",
    "MixclockError",
    "NotApplicable",
    "NotFound",
    "NumericalFailure",
    "UnitError",
]


class MixclockError(Exception):
    """Base of every error mixclock raises on purpose."""

    title = "mixclock error"
    slug = "error"
    status = 422

    def __init__(self, detail: str, pointer: str = "") -> None:
        super().__init__(detail)
        self.detail = detail
        self.pointer = pointer

    def at(self, prefix: str) -> MixclockError:
        """Return this error with ``prefix`` put in front of its pointer."""
        self.pointer = prefix + self.pointer
        return self


class InvalidInput(MixclockError):
    """Raised when a request value is outside what the service accepts."""

    title = "Invalid input"
    slug = "invalid-input"


class UnitError(InvalidInput):
    """Raised when a quantity cannot be parsed, has an unknown unit or the wrong dimension."""

    title = "Invalid quantity"
    slug = "invalid-quantity"


class NotApplicable(MixclockError):
    """Raised when the request is valid but asks for an engine or measure that cannot serve it."""

    title = "Not applicable to this case"
    slug = "not-applicable"


class NumericalFailure(MixclockError):
    """Raised when an engine cannot reach an answer it can vouch for (a root not bracketed,
    a resolution cap reached, a result that is not finite)."""

    title = "No trustworthy answer"
    slug = "numerical-failure"


class NotFound(MixclockError):
    """Raised when a stored result asked for by its id does not exist."""

    title = "Not found"
    slug = "not-found"
    status = 404
