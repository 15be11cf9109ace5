"""Pictures of an answer: the decay of its measures over time, and profiles across the body.

Notes
-----
matplotlib is imported on the first picture, not at start-up, and drawn through its object
API (a ``Figure`` with its own canvas, no pyplot state). Output is deterministic: SVG with a
fixed hash salt for its element ids and no date; PNG without its software stamp. Text is kept
as SVG text (``svg.fonttype = 'none'``), so labels are searchable and scale with the page, and
the elements a reader (or a test) looks for carry ids: ``settling-time`` (the marker),
``settling-time-label``, ``tolerance``, ``measure-<name>``, ``profile-<i>``, ``final-state``.
The rc settings are applied per picture under the plotter's lock, since matplotlib keeps them
process-wide. Each picture is a plain dataclass, so later pictures (a design chart, an
uncertainty band, a fitted curve) add a dataclass and a drawing function beside these.
"""

from __future__ import annotations

import io
import threading
from dataclasses import dataclass
from typing import Any

__all__ = ["DecayPicture", "Plotter", "ProfilesPicture", "time_unit"]

# Picture size (inches) and resolution of PNGs (dots per inch).
_SIZE_IN = (7.0, 4.4)
_PNG_DPI = 110
_RC: dict[str, Any] = {
    "svg.hashsalt": "mixclock",
    "svg.fonttype": "none",
    "font.family": "DejaVu Sans",
    "font.size": 9.5,
    "axes.titlesize": 10.5,
}
# Time units for axes: the largest that keeps the span's end at or above one of it.
_TIME_UNITS = (("d", 86400.0), ("h", 3600.0), ("min", 60.0), ("s", 1.0))


def time_unit(time_s: float) -> tuple[str, float]:
    """A readable unit for times up to ``time_s``: (name, seconds in one)."""
    for name, seconds in _TIME_UNITS:
        if time_s >= 2 * seconds:
            return name, seconds
    return "s", 1.0


@dataclass(frozen=True)
class DecayPicture:
    """Each measure over time (ratios to the start, the criterion's drawn bold), the level the
    criterion asks and the settling time."""

    title: str
    times_s: list[float]
    series: dict[str, list[float | None]]
    chosen: str
    level: float
    settled_s: float
    settled_text: str


@dataclass(frozen=True)
class ProfilesPicture:
    """Profiles across the body at a few times, with the start and the final state."""

    title: str
    position_label: str
    value_label: str
    positions_m: list[float]
    profiles: list[tuple[float, list[float]]]
    start: list[float]
    final: list[float]


class Plotter:
    """Draws pictures to SVG or PNG bytes; one per application (it owns the lock that keeps
    matplotlib's process-wide settings to one picture at a time)."""

    def __init__(self) -> None:
        self._lock = threading.Lock()

    def decay(self, picture: DecayPicture, image_format: str = "svg") -> bytes:
        return self._render(_draw_decay, picture, image_format)

    def profiles(self, picture: ProfilesPicture, image_format: str = "svg") -> bytes:
        return self._render(_draw_profiles, picture, image_format)

    def _render(self, draw: Any, picture: Any, image_format: str) -> bytes:
        import matplotlib
        from matplotlib.figure import Figure

        with self._lock, matplotlib.rc_context(_RC):  # type: ignore[arg-type]
            figure = Figure(figsize=_SIZE_IN, layout="constrained")
            draw(figure, picture)
            buffer = io.BytesIO()
            if image_format == "png":
                figure.savefig(buffer, format="png", dpi=_PNG_DPI, metadata={"Software": None})
            else:
                figure.savefig(buffer, format="svg", metadata={"Date": None})
            return buffer.getvalue()


def _readable(name: str) -> str:
    return name.replace("_", " ")


def _draw_decay(figure: Any, picture: DecayPicture) -> None:
    axes = figure.add_subplot()
    unit, seconds = time_unit(max(picture.times_s))
    times = [t / seconds for t in picture.times_s]
    for name, values in picture.series.items():
        points = [(t, v) for t, v in zip(times, values, strict=True) if v is not None and v > 0]
        if not points:
            continue
        is_chosen = name == picture.chosen
        axes.plot(
            [t for t, _ in points],
            [v for _, v in points],
            label=_readable(name),
            linewidth=2.2 if is_chosen else 1.0,
            alpha=1.0 if is_chosen else 0.35,
            color="#1f4e79" if is_chosen else None,
            gid=f"measure-{name}",
            zorder=3 if is_chosen else 2,
        )
    axes.set_yscale("log")
    axes.axhline(
        picture.level, color="#b03a2e", linestyle="--", linewidth=1.0, gid="tolerance", zorder=4
    )
    settled = picture.settled_s / seconds
    axes.axvline(settled, color="#b03a2e", linewidth=0.8, alpha=0.6, zorder=4)
    axes.plot(
        [settled],
        [picture.level],
        marker="o",
        markersize=7,
        color="#b03a2e",
        linestyle="none",
        gid="settling-time",
        zorder=5,
    )
    axes.annotate(
        f"settled: {picture.settled_text}",
        xy=(settled, picture.level),
        xytext=(8, 10),
        textcoords="offset points",
        color="#b03a2e",
        gid="settling-time-label",
    )
    axes.set_xlabel(f"time ({unit})")
    axes.set_ylabel("ratio to the start (–, log scale)")
    axes.set_title(picture.title)
    axes.grid(True, which="major", alpha=0.25)
    axes.legend(loc="lower left", fontsize=8, frameon=False)


def _draw_profiles(figure: Any, picture: ProfilesPicture) -> None:
    axes = figure.add_subplot()
    positions_mm = [x * 1e3 for x in picture.positions_m]
    axes.plot(positions_mm, picture.start, color="#7f7f7f", linestyle=":", label="start")
    longest = max((time for time, _ in picture.profiles), default=1.0)
    unit, seconds = time_unit(longest)
    for index, (time_s, values) in enumerate(picture.profiles):
        axes.plot(
            positions_mm,
            values,
            label=f"{time_s / seconds:.3g} {unit}",
            gid=f"profile-{index}",
        )
    axes.plot(
        positions_mm,
        picture.final,
        color="black",
        linestyle="--",
        linewidth=1.2,
        label="final state",
        gid="final-state",
    )
    axes.set_xlabel(picture.position_label)
    axes.set_ylabel(picture.value_label)
    axes.set_title(picture.title)
    axes.grid(True, alpha=0.25)
    axes.legend(fontsize=8, frameon=False)
