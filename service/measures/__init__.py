"""Measures of how far a body is from its final state, each a closed-form sum over modes.

With u = c − c_final, w = r^m (m = 0, 1, 2) and ⟨·⟩ the w-weighted mean over the body,
a solution u = Σ b_k ψ_k e^{−λ_k t} with orthonormal ψ_k gives:

* mean-square deviation ⟨u²⟩ = Σ b_k² e^{−2λ_k t} (Parseval), reported over ⟨u0²⟩;
* the mean ⟨u⟩ = Σ b_k ⟨ψ_k⟩ e^{−λ_k t}, hence the fraction equilibrated
  F = 1 − ⟨u⟩/⟨u0⟩ and the relative standard deviation √(⟨u²⟩ − ⟨u⟩²)/|c_final + ⟨u⟩|;
* the value at a point, Σ b_k ψ_k(x) e^{−λ_k t};
* the largest |u| over the body, sought on samples and refined by a parabola;
* the Dirichlet energy (below).

Dirichlet energy. Define E(t) = ⟨|∂u/∂x|²⟩ + (A/V)(Bi/Lc)·mean_s(u_s²), the surface term
present on convective surfaces (A/V = 1/Lc, 2/Lc, 3/Lc for slab, cylinder, sphere; the mean
over the exposed surfaces). Green's identity with ∂u/∂n = −(Bi/Lc) u_s on a convective
surface, u_s = 0 on a held one and ∂u/∂n = 0 on a sealed one gives E = −⟨u ∇²u⟩, so for
eigenfunctions (∇²ψ_k = −κ_k² ψ_k) E = Σ κ_k² b_k² e^{−2λ_k t} with λ_k = Dκ_k². Then
dE/dt = −2D Σ κ_k⁴ b_k² e^{−2λ_k t} = −(2/D)⟨u_t²⟩ ≤ 0: the energy never increases,
and d⟨u²⟩/dt = −2D E. Without the surface term E would rise from zero on a uniform start.
It is reported as E/(κ_1²⟨u0²⟩), κ_1 the body's slowest wavenumber (each engine's own,
so that the finite-volume ratio keeps the bound below exactly): dimensionless, finite
for t > 0 (E(0) = ∞ for a start with a jump), never below the mean-square ratio (κ_k ≥ κ_1)
and equal to it when only the slowest mode is left.

Layered bodies. There u is the deviation of the potential φ = c/K (T for heat), continuous
across interfaces, and ⟨·⟩ is weighted by each layer's capacity C (K, or ρc_p): the modes
are orthonormal under Σ∫C_i(·)² and the stiffness is Σ∫Λ_i|∇·|² (Λ = D·K, or k). So the
mean square here is Σ∫K_i(φ − φ_f)²/Σ∫K_i(φ0 − φ_f)² and the energy Σ∫D_iK_i|∇φ|² (plus
the film terms): the K-weighted measures on φ, the ones proven never to increase (a plain
∫(c − c_f)² across layers of different K has no such guarantee).

A finite bath. The modes are then orthonormal over body and bath together (the bath as one
node of capacity α times the body's), so the body's own ⟨u²⟩ carries the bath's rank-one
correction (``BathMeanSquare``), and the largest deviation, energy and RSD are not offered.
Across bath exchanges the measures are piecewise in time (``_Exchanged``).

Which measures are monotone. ⟨u²⟩ and E are sums of decaying positive terms. max|u| never
increases by the maximum principle for these surfaces (and its discrete counterpart for
the finite-volume operator). The others can rise before they fall, and the settling time
is the last crossing; each such measure supplies a time after which it is monotone or
settled for good, computed from a bound (see ``settled_after_s``).
"""

from __future__ import annotations

from service.measures.base import AMOUNT_FRACTION, SETTLED_FRACTION, Facts, Measure
from service.measures.build import MEASURES, build_measure, defined_measures
from service.measures.composite import ProductMeasure

__all__ = [
    "AMOUNT_FRACTION",
    "MEASURES",
    "SETTLED_FRACTION",
    "Facts",
    "Measure",
    "ProductMeasure",
    "build_measure",
    "defined_measures",
]
