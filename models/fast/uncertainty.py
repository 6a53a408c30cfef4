"""The pull's own error bar: how far the fast model's pull may be from a converged reference.

Two parts, added in quadrature:

* **discretisation**: the pull with the cells at a coarser level of fineness (``COARSE_FACTOR``;
  the pole's panels as they are, so that the second level reuses the pole model) beside the
  default; with an error shrinking like h^p the default's error is |p_coarse - p| / (s^p - 1),
  s = 1 / COARSE_FACTOR. ``DISCRETISATION_FACTOR`` stands for 1 / (s^p - 1) at the p measured;
* **terms**: what a second level cannot see, the error the model keeps as it is refined (its
  panels and cells converge, to a value a fraction of a per cent off the FEM in each term; at a
  part's edge facing the pole's corner more): ``TERM_ERROR`` times the sum of the terms'
  magnitudes, so that it grows with the cancellation between them.

The constants were chosen on the edge set (tests/tools/edge_model.py, 24 cases) and the cross-model
set (tests/tools/cross_model.py, 22 cases) so that |fast - FEM| <= estimate on at least 90 % of each:
measured 23 of 24 and 22 of 22, with the median of estimate / |fast - FEM| 2.1 where the
difference exceeds 1 % (7 cases; 1.9 when the second level also coarsened the panels, which it
no longer does: same coverage, no second pole geometry). The terms' part dominates near a sign change; the second level
is what covers the low-cancellation designs (without it, 18 of 22 on the cross-model set). On
designs it was not fitted to, the random audit (``python -m tests.tools.audit_random 11 30``): covers 27
of 30 (28 with coarser panels too), median estimate / |difference| 2.9 over the 4 differences
above 1 %.
"""

from __future__ import annotations

import math

__all__ = [
    "COARSE_FACTOR",
    "DISCRETISATION_FACTOR",
    "TERM_ERROR",
    "pull_uncertainty",
]

#: The second level: every size of the default fineness times 1 / COARSE_FACTOR.
COARSE_FACTOR = 0.67
#: The default's discretisation error per unit of |p_coarse - p_default| [-].
DISCRETISATION_FACTOR = 1.0
#: Error of each pull term that refinement does not remove, relative to the sum of the terms'
#: magnitudes [-].
TERM_ERROR = 0.005


def pull_uncertainty(pull: float, pull_coarse: float, split: dict) -> float:
    """Error estimate of ``pull`` [N] from the pull at the coarser level [N] and the pull's
    split by source (``pull_by_source_N``): sqrt(discretisation^2 + terms^2) (module docstring)."""
    if not (math.isfinite(pull) and math.isfinite(pull_coarse)):
        return math.inf
    discretisation = DISCRETISATION_FACTOR * abs(pull_coarse - pull)
    terms = TERM_ERROR * sum(abs(v) for v in split.values())
    return math.hypot(discretisation, terms)
