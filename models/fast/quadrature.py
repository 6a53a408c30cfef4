"""Quadrature over straight panels: the tiers, Gauss-Legendre rules and the graded rule.

The rule of a (panel, point) pair depends on the point's distance from the panel's midpoint in
panel lengths, rho: the midpoint at the moment radius (``moment_radius``) beyond ``FAR``
(except for panels near the axis, ``AXIS``), 2 Gauss points down to ``MID2``, 4 down to
``NEAR``, and nearer a composite Gauss rule graded geometrically toward the point s of the panel
nearest the point: on each side of s the innermost interval is t = max(d, eps) (d the point's
distance from the panel, in panel lengths), the next ones end at a_side * GRADE^j (a_side the
panel's extent on that side), with ceil(ln(t / a_side) / ln(GRADE)) intervals (1 to
``MAX_LEVELS``), each with ``GAUSS_GRADED`` points; the rule is symmetric about a point on the
panel, so the principal value of a sheet's own 1/rho part is taken exactly. The rules are applied
by the compiled kernels (models.fast.kernels).
"""

from __future__ import annotations

import functools

import numpy as np

__all__ = [
    "AXIS", "EPS_FIELD", "FAR", "GAUSS_GRADED", "GRADE", "MAX_LEVELS", "MID2", "NEAR", "TEST_NODES",
    "gauss01", "graded01", "moment_radius", "read_only",
]  # fmt: skip

# Tiers of the panel integration: a point further than FAR * length from the panel midpoint uses
# the midpoint; then 2 and 4 Gauss points; closer than NEAR * length: graded composite rule.
FAR = 30.0
MID2 = 6.0
NEAR = 2.0
AXIS = 4.0  # panels with mid_r < AXIS * length never use the midpoint rule
GRADE = 0.3  # ratio of successive intervals of the graded rule
GAUSS_GRADED = 5  # Gauss points per interval of the graded rule
MAX_LEVELS = 14
EPS_FIELD = 1e-7  # innermost interval of the graded rule (fraction of the panel) for points on it
TEST_NODES = 5  # Gauss points per panel for the Galerkin average


def read_only(*arrays):
    for a in arrays:
        a.setflags(write=False)
    return arrays


@functools.cache
def _gauss01_rule(n):
    x, w = np.polynomial.legendre.leggauss(n)
    return read_only(0.5 * (x + 1.0), 0.5 * w)


def gauss01(n):
    """Gauss-Legendre nodes on [0, 1] and weights summing to 1 (cached, read-only arrays)."""
    return _gauss01_rule(int(n))


@functools.cache
def graded01(levels=6, n=3):
    """Composite Gauss rule on [0, 1] graded geometrically toward 0 (for a log singularity).

    Cached; the arrays are read-only.
    """
    x, w = gauss01(n)
    edges = np.concatenate([[0.0], GRADE ** np.arange(levels, -1, -1)])
    lo, hi = edges[:-1], edges[1:]
    return read_only(
        (lo[:, None] + (hi - lo)[:, None] * x).ravel(), ((hi - lo)[:, None] * w).ravel()
    )


def moment_radius(panels):
    """Radius [m] of the one filament with the panel's dipole moment: r^2 = <r^2> over the panel.

    Used for the one-point (far) rule: the far field of a ribbon is set by its moment
    pi <r^2>, which the midpoint alone misses by pi (length t_r)^2 / 12.
    """
    return np.sqrt(panels.mid_r**2 + (panels.length * panels.tr) ** 2 / 12.0)
