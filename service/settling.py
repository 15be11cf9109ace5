"""The settling-time search on one solution: t* = inf{t : the criterion holds for all s ≥ t}.

For a measure that never increases the answer is its only crossing: bracket it, then
root-find (Newton steps on the logarithm where the measure has a closed-form slope, Brent's
method otherwise). Otherwise the measure supplies T*, a time after which it never increases or holds
for good (:meth:`service.measures.Measure.settled_after_s`). If the criterion fails at T*,
the answer lies beyond it and is again a single crossing. If it holds at T*, the search
walks down from T* in steps of 10^(1/32) in time until the first sample where it fails,
and root-finds between that sample and the one above: that is the last crossing. Local
maxima of the measure between the answer and T* that come within 5 % of the level are
refined; one that breaks through moves the answer later, one that nearly touches is
reported as ``near_tangent`` (the time then jumps with small changes of the inputs).
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
from scipy import optimize

from service.engines.common import ROOT_RTOL, Crossing
from service.errors import InvalidInput, NumericalFailure
from service.measures import Measure

__all__ = ["find_settling_time"]

# Scan density for last-crossing searches, samples per decade of time.
_SAMPLES_PER_DECADE = 32
# Samples evaluated per vectorised call while scanning down.
_CHUNK = 32
# A local maximum within this fraction of the level is refined and, if it stays below, flagged.
_TANGENT_FRACTION = 0.05
# Newton steps before falling back to Brent's method.
_NEWTON_STEPS = 30
# First bracket step around a time found on another grid (then squared at each step).
_NEAR_STEP = 1.02
# Bracket expansion: factor per step and the most steps before giving up.
_EXPAND = 2.0
_MAX_EXPANSIONS = 2000


def find_settling_time(measure: Measure, floor_s: float, near_s: float | None = None) -> Crossing:
    """Settling time of ``measure`` on its solution, searching no earlier than ``floor_s``;
    ``near_s``, a time close to the answer (found on another grid), narrows the bracket of
    a monotone measure."""
    if measure.first_crossing:
        crossing = _first_crossing(measure, floor_s)
    elif measure.is_monotone:
        crossing = _monotone(measure, floor_s, near_s)
    else:
        crossing = _last_crossing(measure, floor_s)
    if crossing.time_s > 0 and not measure.extrapolable_at(crossing.time_s):
        return replace(crossing, extrapolable=False)
    return crossing


def _excess(measure: Measure, time_s: float) -> float:
    return measure.value(time_s) - measure.level


def _root(measure: Measure, lower_s: float, upper_s: float) -> float:
    """The crossing in [lower, upper] (the criterion fails at lower and holds at upper):
    safeguarded Newton steps on ln(value) where the measure has a closed-form slope (ln of a
    sum of exponentials is nearly straight in t, so a few steps reach round-off), Brent's
    method otherwise or if Newton stalls."""
    newton = _newton(measure, lower_s, upper_s)
    if newton is not None:
        return newton
    try:
        return float(
            optimize.brentq(
                lambda t: _excess(measure, t),
                lower_s,
                upper_s,
                xtol=ROOT_RTOL * lower_s,
                rtol=ROOT_RTOL,
            )
        )
    except (ValueError, RuntimeError) as exc:
        raise NumericalFailure(f"the settling root-find failed: {exc}") from exc


def _newton(measure: Measure, lower_s: float, upper_s: float) -> float | None:
    if not measure.level > 0:
        return None  # a signed measure crossing zero: Brent's method
    target = math.log(measure.level)
    time_s = upper_s
    for _ in range(_NEWTON_STEPS):
        evaluated = measure.log_rate(time_s)
        if evaluated is None or evaluated[0] <= 0 or evaluated[1] >= 0:
            return None
        value, slope = evaluated
        excess = math.log(value) - target
        if excess > 0:
            lower_s = time_s
        else:
            upper_s = time_s
        step = -excess / slope
        following = time_s + step
        if not lower_s < following < upper_s:
            following = math.sqrt(lower_s * upper_s)
        if abs(following - time_s) <= ROOT_RTOL * following:
            return following
        time_s = following
    return None


def _beyond(measure: Measure, start_s: float) -> float:
    """The crossing after ``start_s``, where the measure is known to be monotone and fails."""
    lower = start_s
    guess = measure.guess_s()
    upper = guess if guess > start_s else start_s * _EXPAND
    factor = _NEAR_STEP
    for _ in range(_MAX_EXPANSIONS):
        if _excess(measure, upper) <= 0:
            return _root(measure, lower, upper)
        lower, upper = upper, upper * factor
        factor = min(factor * factor, _EXPAND)
        if not math.isfinite(upper):
            break
    raise NumericalFailure("the criterion is never met: the measure does not fall to the level")


def _monotone(measure: Measure, floor_s: float, near_s: float | None) -> Crossing:
    if _excess(measure, floor_s) <= 0:
        return Crossing(time_s=floor_s, definition="monotone", hit_floor=True)
    factor = _NEAR_STEP if near_s else _EXPAND
    guess = max(near_s or measure.guess_s(), floor_s)
    if _excess(measure, guess) > 0:
        lower, upper = guess, guess * factor
        for _ in range(_MAX_EXPANSIONS):
            if _excess(measure, upper) <= 0:
                return Crossing(_root(measure, lower, upper), "monotone", hit_floor=False)
            factor = min(factor * factor, _EXPAND)
            lower, upper = upper, upper * factor
        raise NumericalFailure("the criterion is never met: the measure does not fall to the level")
    upper, lower = guess, guess / factor
    while lower > floor_s and _excess(measure, lower) <= 0:
        factor = min(factor * factor, _EXPAND)
        upper, lower = lower, lower / factor
    return Crossing(_root(measure, max(lower, floor_s), upper), "monotone", hit_floor=False)


def _first_crossing(measure: Measure, floor_s: float) -> Crossing:
    """The first time the measure falls to its level (a value reached at a point): scan up in
    log t from the floor, then root-find the first bracket. The measure tends to a value
    below its level (the caller checks that it does), so the scan ends."""
    if _excess(measure, floor_s) <= 0:
        return Crossing(floor_s, "first_crossing", hit_floor=True, holds_throughout=True)
    # a point that ends short of the value can reach it only in a swing, before the measure
    # turns monotone; one that ends past it surely does
    eventually = measure.passes_for_good
    horizon = math.inf if eventually else max(measure.settled_after_s(floor_s), floor_s)
    step = 10.0 ** (1.0 / _SAMPLES_PER_DECADE)
    current = floor_s
    for _ in range(_MAX_EXPANSIONS):
        times = current * step ** np.arange(1, _CHUNK + 1)
        reached = np.flatnonzero(measure.values(times) <= measure.level)
        if reached.size:
            first = int(reached[0])
            lower = float(times[first - 1]) if first > 0 else current
            return Crossing(_root(measure, lower, float(times[first])), "first_crossing", False)
        current = float(times[-1])
        if current > horizon:
            raise InvalidInput(
                "the point never reaches that value: it tends to the other side of it, and no "
                "swing on the way gets there",
                "/criterion/value",
            )
    raise NumericalFailure("the value is never reached")


def _last_crossing(measure: Measure, floor_s: float) -> Crossing:
    settled_after = max(measure.settled_after_s(floor_s), floor_s)
    if _excess(measure, settled_after) > 0:
        return Crossing(_beyond(measure, settled_after), "last_crossing", hit_floor=False)

    step = 10.0 ** (1.0 / _SAMPLES_PER_DECADE)
    upper_times = [settled_after]
    upper_values = [measure.value(settled_after)]
    current = settled_after
    while current > floor_s:
        times = current / step ** np.arange(1, _CHUNK + 1)
        if times[-1] <= floor_s:
            times = np.r_[times[times > floor_s], floor_s]
        values = measure.values(times)
        failing = np.flatnonzero(values > measure.level)
        if failing.size:
            first = int(failing[0])
            upper = times[first - 1] if first > 0 else current
            upper_times.extend(times[:first].tolist())
            upper_values.extend(values[:first].tolist())
            answer = _root(measure, float(times[first]), float(upper))
            return _check_tangents(measure, answer, upper_times, upper_values)
        upper_times.extend(times.tolist())
        upper_values.extend(values.tolist())
        current = float(times[-1])
    # met at every sample: a maximum between samples may still break through or nearly touch
    checked = _check_tangents(measure, floor_s, upper_times, upper_values)
    if checked.time_s > floor_s:
        return checked
    return Crossing(
        time_s=floor_s,
        definition="last_crossing",
        hit_floor=True,
        near_tangent=checked.near_tangent,
        holds_throughout=True,
    )


def _check_tangents(
    measure: Measure, answer_s: float, times: list[float], values: list[float]
) -> Crossing:
    """Refine local maxima of the scanned samples that approach the level."""
    t = np.asarray(times)
    v = np.asarray(values)
    order = np.argsort(t)
    t, v = t[order], v[order]
    near = False
    last = t.size - 1
    for i in range(1, t.size):
        # the latest sample counts too: the measure never increases after it
        right = min(i + 1, last)
        if not (v[i] >= v[i - 1] and v[i] >= v[right]):
            continue
        if v[i] < (1 - _TANGENT_FRACTION) * measure.level:
            continue
        found = optimize.minimize_scalar(
            lambda log_t: -measure.value(math.exp(log_t)),
            bounds=(math.log(t[i - 1]), math.log(t[right])),
            method="bounded",
            options={"xatol": 1e-10},
        )
        peak_time = math.exp(float(found.x))
        if -float(found.fun) > measure.level and peak_time < t[right]:
            later = _root(measure, peak_time, float(t[right]))
            answer_s = max(answer_s, later)
        else:
            near = True
    return Crossing(time_s=answer_s, definition="last_crossing", hit_floor=False, near_tangent=near)
