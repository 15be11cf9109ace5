"""The tridiagonal Rosenbrock stepper against closed-form solutions."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import linalg, optimize

from service.engines.rosenbrock import Tridiagonal, WorkBudget, _rodas3_step, integrate_to_event
from service.errors import NotApplicable

# three uncoupled copies of a scalar equation: LAPACK's tridiagonal routines want n ≥ 3
_COPIES = 3
_ZERO = np.zeros(_COPIES - 1)


def _cubic_decay(t: float, y: np.ndarray) -> np.ndarray:
    return -(y**3)


def _cubic_jacobian(t: float, y: np.ndarray) -> Tridiagonal:
    return Tridiagonal(_ZERO, -3 * y**2, _ZERO)


def test_rodas3_step_converges_at_third_order() -> None:
    """y′ = −y³, y(0) = 1 has y = 1/√(1 + 2t); halving a fixed step cuts the error at t = 1
    eightfold (order 3, Sandu et al. 1997)."""
    errors = []
    for steps in (10, 20, 40, 80):
        h = 1.0 / steps
        y = np.ones(_COPIES)
        for i in range(steps):
            y, _ = _rodas3_step(
                _cubic_decay, _cubic_jacobian(0, y), i * h, y, _cubic_decay(0, y), h, None
            )
        errors.append(abs(y[0] - 1 / math.sqrt(3)))
    orders = np.log2(np.array(errors[:-1]) / np.array(errors[1:]))
    assert np.all(np.abs(orders - 3) < 0.15), orders


@pytest.mark.parametrize("rtol", [1e-4, 1e-6, 1e-8])
def test_event_time_of_a_forced_decay(rtol: float) -> None:
    """y′ = −y + cos t, y(0) = 0 has y = (sin t + cos t − e^{−t})/2; the first time y = 0.4,
    found on the stepper's interpolant, within a small multiple of the tolerance."""

    def forced(t: float, y: np.ndarray) -> np.ndarray:
        return -y + math.cos(t)

    exact = optimize.brentq(
        lambda t: (math.sin(t) + math.cos(t) - math.exp(-t)) / 2 - 0.4, 0.0, 1.5, xtol=1e-15
    )
    run = integrate_to_event(
        forced,
        lambda t, y: Tridiagonal(_ZERO, -np.ones(_COPIES), _ZERO),
        np.zeros(_COPIES),
        lambda y: 0.4 - y[0],
        horizon_s=100.0,
        first_step_s=1e-3,
        rtol=rtol,
        atol=rtol * 1e-2,
        is_autonomous=False,
    )
    assert abs(run.time_s - exact) < 10 * rtol


def test_stiff_diffusion_line_against_the_matrix_exponential() -> None:
    """200 cells of a sealed line, a step start; the time the first cell falls to 0.6, against
    the exact solution y(t) = expm(t·A)·y0 of the same linear system (stiffness ratio ~1e5)."""
    cells = 200
    main = np.full(cells, -2.0)
    main[[0, -1]] = -1.0
    off = np.ones(cells - 1)
    matrix = np.diag(main) + np.diag(off, 1) + np.diag(off, -1)
    start = np.where(np.arange(cells) < cells // 10, 1.0, 0.0)

    def exact_first(t: float) -> float:
        return float((linalg.expm(t * matrix) @ start)[0])

    exact = optimize.brentq(lambda t: exact_first(t) - 0.6, 1.0, 1e4, xtol=1e-12)
    run = integrate_to_event(
        lambda t, y: matrix @ y,
        lambda t, y: Tridiagonal(off, main, off),
        start,
        lambda y: y[0] - 0.6,
        horizon_s=1e6,
        first_step_s=1e-6,
        rtol=1e-7,
        atol=1e-9,
    )
    assert abs(run.time_s / exact - 1) < 1e-5


def test_an_event_not_met_within_the_horizon_ends_there() -> None:
    """y′ = −y³ from 1 over 10 s ends at 1/√21, the event (never met) not claimed."""
    run = integrate_to_event(
        _cubic_decay,
        _cubic_jacobian,
        np.ones(_COPIES),
        lambda y: y[0] + 1.0,
        horizon_s=10.0,
        first_step_s=1e-3,
        rtol=1e-8,
        atol=1e-10,
    )
    assert not run.met
    assert run.time_s == pytest.approx(10.0, rel=1e-12)
    assert run.state[0] == pytest.approx(1 / math.sqrt(21), rel=1e-6)


def test_a_spent_budget_stops_the_run() -> None:
    """The steps of every run of a request are charged to one budget; running out is a
    refusal naming the accuracy, not an endless run."""
    budget = WorkBudget(5)
    with pytest.raises(NotApplicable, match="more work"):
        integrate_to_event(
            _cubic_decay,
            _cubic_jacobian,
            np.ones(_COPIES),
            None,
            horizon_s=1e3,
            first_step_s=1e-6,
            rtol=1e-10,
            atol=1e-12,
            budget=budget,
        )
