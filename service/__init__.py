"""mixclock: how long until a body is mixed, homogenized or equilibrated."""

from __future__ import annotations

__all__ = ["__version__"]

__version__ = "0.1.0"
