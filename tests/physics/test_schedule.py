"""The Arrhenius law and the reduced time of a schedule."""

from __future__ import annotations

import math

import pytest
from scipy import integrate

from service.physics import Arrhenius, Schedule, ScheduleSegment

LAW = Arrhenius(2.3e-5, 148e3 / 8.314462618)


@pytest.mark.parametrize(
    ("start_k", "end_k", "duration_s"),
    [(293.15, 1423.15, 3 * 3600.0), (1423.15, 1173.15, 7200.0), (1173.15, 1173.15 + 1e-9, 60.0)],
)
def test_ramp_closed_form_matches_quadrature(
    start_k: float, end_k: float, duration_s: float
) -> None:
    """∫D dt over a linear ramp through E1 against adaptive quadrature (scipy.integrate.quad
    at its tightest tolerance), to 1e-12."""
    closed = LAW.ramp_integral(start_k, end_k, duration_s)

    def d_of_t(t: float) -> float:
        return LAW.diffusivity(start_k + (end_k - start_k) * t / duration_s)

    reference = integrate.quad(d_of_t, 0.0, duration_s, epsabs=0.0, epsrel=1e-13, limit=500)[0]
    assert closed == pytest.approx(reference, rel=1e-12)


def test_clock_time_inverts_the_reduced_time() -> None:
    schedule = Schedule(
        LAW,
        (
            ScheduleSegment(293.15, 1423.15, 3 * 3600.0, False),
            ScheduleSegment(1423.15, 1423.15, 8 * 3600.0, True),
            ScheduleSegment(1423.15, 1173.15, 2 * 3600.0, False),
        ),
    )
    for clock in (1800.0, 3 * 3600.0 + 10.0, 11 * 3600.0 + 1000.0, 12.5 * 3600.0):
        time_s, segment, extra = schedule.clock_time(schedule.reduced(clock))
        assert time_s == pytest.approx(clock, rel=1e-10)
        assert segment is not None and extra == 0.0
    # beyond the schedule: the soak (the hot hold) is extended
    total = schedule.reduced(schedule.duration_s)
    time_s, segment, extra = schedule.clock_time(total * 1.5)
    assert segment is None
    assert extra == pytest.approx(0.5 * total / LAW.diffusivity(1423.15), rel=1e-12)
    assert time_s == pytest.approx(schedule.duration_s + extra)
    assert math.isclose(schedule.reference_diffusivity, LAW.diffusivity(1423.15))
