"""Independent references for the time-stepped path: a plain method of lines, written as a
practitioner would (uniform cells, scipy's BDF with the band's sparsity, the mean's crossing as
a terminal event) and used by tests only, never by the service."""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
from scipy import integrate, sparse


def mean_crossing_time(
    rhs: Callable[[float, np.ndarray], np.ndarray],
    start: np.ndarray,
    level: float,
    horizon_s: float,
) -> float:
    """The first time the cells' mean crosses ``level``, stepping dc/dt = rhs(t, c) from
    ``start`` by BDF at rtol 1e-10 with a tridiagonal sparsity pattern."""
    cells = start.size

    def event(t: float, c: np.ndarray) -> float:
        return float(np.mean(c)) - level

    event.terminal = True  # type: ignore[attr-defined]
    result = integrate.solve_ivp(
        rhs,
        (0.0, horizon_s),
        start,
        method="BDF",
        events=event,
        rtol=1e-10,
        atol=1e-12,
        jac_sparsity=sparse.diags([1.0, 1.0, 1.0], [-1, 0, 1], shape=(cells, cells)),
    )
    return float(result.t_events[0][0])
