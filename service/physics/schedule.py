"""Arrhenius diffusivity under a temperature schedule, and the reduced time it gives.

Notes
-----
D(T) = D0·exp(−a/T) with a = Q/R (Q per mole) or Q/k_B (Q per atom, as in eV). While the
whole body follows the schedule's temperature and the problem is otherwise linear (sealed or
held surfaces), the diffusion equation in the reduced time τ(t) = ∫0^t D(T(s)) ds is the
constant-D one with D = 1, so a settling time found at any reference diffusivity D_ref maps
exactly to τ* = D_ref·t_ref and the clock time is where τ(t) = τ*.

Per segment: a hold at T adds D(T)·Δt. A linear ramp T(s) = T1 + r·s adds
(D0/r)·[F(T2) − F(T1)] with F(T) = T·e^{−a/T} − a·E1(a/T) (dF/dT = e^{−a/T}), E1 the
exponential integral; F is evaluated as T·e^{−x}·(1 − x·e^{x}·E1(x)), x = a/T, whose bracket
scipy's ``exp1`` gives to round-off for every x where e^{−x} does not underflow.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

from scipy import optimize, special

__all__ = ["Arrhenius", "Schedule", "ScheduleSegment"]

# Below this relative temperature change a ramp is integrated as a hold at its mean.
_FLAT_RAMP = 1e-12


@dataclass(frozen=True)
class Arrhenius:
    """D(T) = d0·exp(−a/T), ``a`` the activation temperature (Q/R or Q/k_B) in kelvin."""

    d0_m2_per_s: float
    activation_k: float

    def diffusivity(self, temperature_k: float) -> float:
        return self.d0_m2_per_s * math.exp(-self.activation_k / temperature_k)

    def _antiderivative(self, temperature_k: float) -> float:
        """F(T) = T·e^{−a/T} − a·E1(a/T), with dF/dT = e^{−a/T} (see the module notes)."""
        x = self.activation_k / temperature_k
        if x > 700.0:
            return 0.0  # e^{−x} underflows; so does everything this ramp contributes
        bracket = 1.0 - x * math.exp(x) * float(special.exp1(x))
        return temperature_k * math.exp(-x) * bracket

    def ramp_integral(self, start_k: float, end_k: float, duration_s: float) -> float:
        """∫ D(T(s)) ds over a linear ramp from ``start_k`` to ``end_k`` in ``duration_s``."""
        if abs(end_k - start_k) <= _FLAT_RAMP * max(start_k, end_k):
            return self.diffusivity(0.5 * (start_k + end_k)) * duration_s
        rate = (end_k - start_k) / duration_s
        span = self._antiderivative(end_k) - self._antiderivative(start_k)
        return self.d0_m2_per_s * span / rate


@dataclass(frozen=True)
class ScheduleSegment:
    """A stretch of the schedule: from ``start_k`` to ``end_k`` (equal for a hold) over
    ``duration_s``; ``hold`` says whether it was given as a hold."""

    start_k: float
    end_k: float
    duration_s: float
    hold: bool


@dataclass(frozen=True)
class Schedule:
    """A temperature schedule and the Arrhenius law the body's diffusivity follows; the part's
    thermal diffusivity, when known, says how closely it can follow the furnace."""

    law: Arrhenius
    segments: tuple[ScheduleSegment, ...]
    thermal_diffusivity_m2_per_s: float | None = None

    @property
    def duration_s(self) -> float:
        return sum(segment.duration_s for segment in self.segments)

    def segment_integrals(self) -> list[float]:
        """∫D dt over each segment (m²)."""
        return [self.law.ramp_integral(s.start_k, s.end_k, s.duration_s) for s in self.segments]

    @property
    def reference_diffusivity(self) -> float:
        """D at the schedule's hottest temperature: the engines' time unit."""
        hottest = max(max(s.start_k, s.end_k) for s in self.segments)
        return self.law.diffusivity(hottest)

    @property
    def soak(self) -> int:
        """The hottest hold (the soak), by index; the hottest segment when none is a hold."""
        holds = [i for i, s in enumerate(self.segments) if s.hold] or list(
            range(len(self.segments))
        )
        return max(holds, key=lambda i: self.segments[i].end_k)

    def temperature_k(self, clock_s: float) -> float:
        """The schedule's temperature at ``clock_s`` (the last held beyond its end)."""
        elapsed = 0.0
        for segment in self.segments:
            if clock_s <= elapsed + segment.duration_s:
                share = (clock_s - elapsed) / segment.duration_s
                return segment.start_k + max(share, 0.0) * (segment.end_k - segment.start_k)
            elapsed += segment.duration_s
        return self.segments[-1].end_k

    def segment_at(self, clock_s: float) -> int | None:
        """The segment ``clock_s`` falls in (the first of two it ends and starts), or None
        beyond the schedule's end."""
        elapsed = 0.0
        for index, segment in enumerate(self.segments):
            elapsed += segment.duration_s
            if clock_s <= elapsed:
                return index
        return None

    def with_soak_extended(self, extra_s: float) -> Schedule:
        """The same schedule with its soak (``soak``) held ``extra_s`` longer, the later
        segments shifted (a soak that is a ramp is followed by a hold at its end instead)."""
        segments = list(self.segments)
        soak = segments[self.soak]
        if soak.hold:
            segments[self.soak] = replace(soak, duration_s=soak.duration_s + extra_s)
        else:
            segments.insert(
                self.soak + 1, ScheduleSegment(soak.end_k, soak.end_k, extra_s, hold=True)
            )
        return replace(self, segments=tuple(segments))

    def reduced(self, clock_s: float) -> float:
        """∫D dt from the schedule's start to ``clock_s`` (the last segment's end temperature
        held beyond the schedule)."""
        total, elapsed = 0.0, 0.0
        for segment in self.segments:
            if clock_s <= elapsed + segment.duration_s:
                part = clock_s - elapsed
                rate = (segment.end_k - segment.start_k) / segment.duration_s
                return (
                    total
                    + self.law.ramp_integral(segment.start_k, segment.start_k + rate * part, part)
                    if part > 0
                    else total
                )
            total += self.law.ramp_integral(segment.start_k, segment.end_k, segment.duration_s)
            elapsed += segment.duration_s
        return total + self.law.diffusivity(self.segments[-1].end_k) * (clock_s - elapsed)

    def clock_time(self, reduced_m2: float) -> tuple[float, int | None, float]:
        """The clock time at which ∫D dt reaches ``reduced_m2``, the segment it falls in, and
        the hold time the soak would need beyond the schedule when the schedule ends first
        (then the time given is the schedule's end plus that extra hold, the later segments
        shifted by it)."""
        elapsed, total = 0.0, 0.0
        integrals = self.segment_integrals()
        for index, (segment, integral) in enumerate(zip(self.segments, integrals, strict=True)):
            if total + integral >= reduced_m2 and integral > 0:
                needed = reduced_m2 - total
                return elapsed + self._time_within(segment, needed), index, 0.0
            total += integral
            elapsed += segment.duration_s
        soak = self.segments[self.soak]
        extra = (reduced_m2 - total) / self.law.diffusivity(soak.end_k)
        return elapsed + extra, None, extra

    def _time_within(self, segment: ScheduleSegment, needed_m2: float) -> float:
        """Time into ``segment`` at which its own ∫D dt reaches ``needed_m2``."""
        if needed_m2 <= 0.0:
            return 0.0
        law = self.law
        if segment.hold or segment.start_k == segment.end_k:
            return needed_m2 / law.diffusivity(segment.end_k)
        rate = (segment.end_k - segment.start_k) / segment.duration_s

        def gained(time_s: float) -> float:
            return law.ramp_integral(segment.start_k, segment.start_k + rate * time_s, time_s)

        return float(
            optimize.brentq(
                lambda t: gained(t) - needed_m2,
                0.0,
                segment.duration_s,
                xtol=1e-12 * segment.duration_s,
                rtol=1e-14,
            )
        )
