"""An adaptive, linearly implicit time stepper for stiff systems whose Jacobian is tridiagonal.

Notes
-----
One finite-volume line couples each cell to its two neighbours only, so every implicit
solve is tridiagonal. scipy's BDF spends about 150 µs of Python per step on a sparse LU
whatever the size; here each step factors ``I/(γh) − J`` once with LAPACK's ``dgttrf`` and
solves its four stages with ``dgttrs``, a few microseconds each.

The method is RODAS3: a Rosenbrock method with four stages, order 3, L-stable and stiffly
accurate, with an embedded order-2 solution for the step-size control. In the form
(Sandu et al. 1997)::

    G = I/(γh) − J(y₀),    Y_i = y₀ + Σ_j a_ij K_j,
    G·K_i = F(t₀ + α_i·h, Y_i) + Σ_j (c_ij/h)·K_j + γ_i·h·∂F/∂t,
    y₁ = y₀ + Σ_j m_j K_j,   error = Σ_j e_j K_j,

with γ = ½ and the coefficients below. L-stability matters here: a start that jumps at a held
surface excites the grid's fastest modes, which the method damps at once rather than carrying
them as slowly decaying oscillations. Between accepted steps the state is the cubic Hermite
interpolant of (y₀, F₀, y₁, F₁), third order like the method; the criterion's event is located
on it, so a step never has to land on the answer.

References
----------
A. Sandu, J. G. Verwer, J. G. Blom, E. J. Spee, G. R. Carmichael and F. A. Potra,
"Benchmarking stiff ODE solvers for atmospheric chemistry problems II: Rosenbrock solvers",
Atmospheric Environment 31 (1997) 3459–3472 (RODAS3).
E. Hairer and G. Wanner, *Solving Ordinary Differential Equations II*, 2nd ed., Springer
(1996), §IV.7 (Rosenbrock methods, step-size control).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from scipy.linalg import lapack
from scipy.optimize import brentq

from service.errors import NotApplicable, NumericalFailure

__all__ = ["StepperRun", "Tridiagonal", "integrate_to_event"]

FloatArray = NDArray[np.float64]

# RODAS3 (Sandu et al. 1997), γ = ½: a21 = 0, a31 = 2, a32 = 0, a41 = 2, a42 = 0, a43 = 1;
# c21 = 4, c31 = 1, c32 = −1, c41 = 1, c42 = −1, c43 = −8/3; m = (2, 0, 1, 1), e = (0, 0, 0, 1);
# stage times α = (0, 0, 1, 1), time-derivative weights γ_i = (½, 3/2, 0, 0). The stages are
# written out in ``_rodas3_step``.
_GAMMA = 0.5
_GAMMA_I = (0.5, 1.5)
# The embedded solution is order 2: the error of a step falls as h³.
_ERROR_ORDER = 3

# Step-size control (Hairer & Wanner §IV.8): a safety factor and the bounds on one change.
_SAFETY = 0.9
_GROW_AT_MOST = 6.0
_SHRINK_AT_MOST = 0.2
# A cap on the work of one run: accepted and rejected steps together.
_MAX_STEPS = 20_000


@dataclass(frozen=True)
class Tridiagonal:
    """A tridiagonal matrix by its three diagonals (``lower[i]`` is row i + 1, column i)."""

    lower: FloatArray
    diagonal: FloatArray
    upper: FloatArray


@dataclass
class WorkBudget:
    """The steps (accepted and rejected) that all the runs of one request may still take;
    made afresh for each request."""

    steps_left: int

    def spend(self) -> None:
        self.steps_left -= 1
        if self.steps_left < 0:
            raise NotApplicable(
                "the time stepping needed more work than one request is allowed; ask a lower "
                "accuracy or an earlier criterion",
                "/accuracy",
            )


@dataclass(frozen=True)
class StepperRun:
    """Where the event was met (``met``), or the end of the horizon when it was not: the time
    and state there, and the work it took."""

    time_s: float
    state: FloatArray
    steps: int
    rejected: int
    met: bool = True
    # the states at the output times asked for, one row each (on the interpolant)
    outputs: FloatArray | None = None


Rhs = Callable[[float, FloatArray], FloatArray]
Jacobian = Callable[[float, FloatArray], Tridiagonal]
Event = Callable[[FloatArray], float]


def integrate_to_event(
    rhs: Rhs,
    jacobian: Jacobian,
    start: FloatArray,
    event: Event | None,
    horizon_s: float,
    first_step_s: float,
    rtol: float,
    atol: float,
    is_autonomous: bool = True,
    outputs_s: FloatArray | None = None,
    budget: WorkBudget | None = None,
) -> StepperRun:
    """Step dy/dt = rhs(t, y) from ``start`` at t = 0 until ``event(y)`` first falls to zero
    or below, or to ``horizon_s`` (then the run says it was not ``met``). Without an event the
    run goes to the horizon.

    The local error of every accepted step is within ``atol + rtol·|y|`` in the largest
    component. A non-autonomous ``rhs`` gets its time derivative by a one-sided difference.
    ``outputs_s`` (ascending, within the horizon) are times whose states are returned, read
    from the interpolant of the step that covers each. Every step is charged to ``budget``
    when one is given, and no run takes more than ``_MAX_STEPS``.
    """
    y = np.asarray(start, dtype=float)
    t = 0.0
    h = first_step_s
    f0 = rhs(t, y)
    wanted = np.asarray([] if outputs_s is None else outputs_s, dtype=float)
    outputs = np.empty((wanted.size, y.size))
    filled = int(np.searchsorted(wanted, 0.0, side="right"))
    outputs[:filled] = y
    if event is not None and event(y) <= 0.0:
        return StepperRun(0.0, y, 0, 0, outputs=outputs if outputs_s is not None else None)
    steps = rejected = 0
    while t < horizon_s * (1 - 1e-13):
        if steps + rejected >= _MAX_STEPS:
            raise NotApplicable(
                "the time stepping needed more work than one request is allowed; ask a lower "
                "accuracy or an earlier criterion",
                "/accuracy",
            )
        if budget is not None:
            budget.spend()
        h = min(h, horizon_s - t)
        matrix = jacobian(t, y)
        dfdt = None if is_autonomous else _time_derivative(rhs, t, y, f0, h)
        y1, error = _rodas3_step(rhs, matrix, t, y, f0, h, dfdt)
        scale = atol + rtol * np.maximum(np.abs(y), np.abs(y1))
        norm = float(np.max(np.abs(error) / scale))
        if not math.isfinite(norm):
            rejected += 1
            h *= _SHRINK_AT_MOST
            continue
        factor = _SAFETY * max(norm, 1e-10) ** (-1.0 / _ERROR_ORDER)
        if norm > 1.0:
            rejected += 1
            h *= max(_SHRINK_AT_MOST, factor)
            if h < 1e-14 * max(t, first_step_s):
                raise NumericalFailure(f"the time step fell below rounding at t = {t:.3g} s")
            continue
        steps += 1
        f1 = rhs(t + h, y1)
        covered = int(np.searchsorted(wanted, t + h, side="right"))
        for index in range(filled, covered):
            outputs[index] = _hermite(y, f0, y1, f1, h, float(wanted[index]) - t)
        filled = covered
        after = 1.0 if event is None else event(y1)
        if event is not None and after <= 0.0:
            when = _locate(event, y, f0, y1, f1, h, after)
            return StepperRun(
                t + when,
                _hermite(y, f0, y1, f1, h, when),
                steps,
                rejected,
                outputs=outputs if outputs_s is not None else None,
            )
        t, y, f0 = t + h, y1, f1
        h *= min(_GROW_AT_MOST, factor)
    outputs[filled:] = y
    return StepperRun(
        t, y, steps, rejected, met=False, outputs=outputs if outputs_s is not None else None
    )


def _rodas3_step(
    rhs: Rhs,
    matrix: Tridiagonal,
    t: float,
    y: FloatArray,
    f0: FloatArray,
    h: float,
    dfdt: FloatArray | None,
) -> tuple[FloatArray, FloatArray]:
    """One step: (the order-3 solution, its difference from the embedded order-2 one).

    With the coefficients above the stages read: K1 from F(y); K2 from F(y) + 4·K1/h (the same
    point, so no new evaluation); K3 from F(y + 2·K1) + (K1 − K2)/h; K4 from F(y + 2·K1 + K3)
    + (K1 − K2 − 8/3·K3)/h; then y₁ = y + 2·K1 + K3 + K4, and K4 is the error estimate.
    """
    dl, d, du, du2, pivots, info = lapack.dgttrf(
        -matrix.lower, 1.0 / (_GAMMA * h) - matrix.diagonal, -matrix.upper
    )
    if info != 0:
        raise NumericalFailure("the implicit system of a time step is singular")

    def solve(right: FloatArray) -> FloatArray:
        stage, failed = lapack.dgttrs(dl, d, du, du2, pivots, right)
        if failed != 0:
            raise NumericalFailure("a stage of a time step could not be solved")
        return np.asarray(stage)

    first, second = f0, f0
    if dfdt is not None:
        first, second = f0 + _GAMMA_I[0] * h * dfdt, f0 + _GAMMA_I[1] * h * dfdt
    k1 = solve(first)
    k2 = solve(second + (4.0 / h) * k1)
    third = y + 2.0 * k1
    k3 = solve(rhs(t + h, third) + (k1 - k2) / h)
    fourth = third + k3
    k4 = solve(rhs(t + h, fourth) + (k1 - k2 - (8.0 / 3.0) * k3) / h)
    return fourth + k4, k4


def _time_derivative(rhs: Rhs, t: float, y: FloatArray, f0: FloatArray, h: float) -> FloatArray:
    """∂F/∂t by a forward difference over a small fraction of the step."""
    dt = 1e-7 * max(h, 1e-300) + 1e-12 * t
    return (rhs(t + dt, y) - f0) / dt


def _hermite(
    y0: FloatArray, f0: FloatArray, y1: FloatArray, f1: FloatArray, h: float, when: float
) -> FloatArray:
    """The cubic Hermite interpolant through (y0, f0) at 0 and (y1, f1) at h, at ``when``."""
    s = when / h
    h00 = (1 + 2 * s) * (1 - s) ** 2
    h10 = s * (1 - s) ** 2
    h01 = s * s * (3 - 2 * s)
    h11 = s * s * (s - 1)
    return np.asarray(h00 * y0 + h10 * h * f0 + h01 * y1 + h11 * h * f1)


def _locate(
    event: Event,
    y0: FloatArray,
    f0: FloatArray,
    y1: FloatArray,
    f1: FloatArray,
    h: float,
    after: float,
) -> float:
    """Where within the step the event's value first falls to zero, on the interpolant."""
    if after == 0.0:
        return h

    def value(when: float) -> float:
        return event(_hermite(y0, f0, y1, f1, h, when))

    return float(brentq(value, 0.0, h, xtol=1e-14 * h))
