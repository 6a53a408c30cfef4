"""Time-averaged axial force on the target and its split by source.

For rms phasors the time-averaged axial force on filament i from filament j is
Re(I_i conj(I_j)) dM_ij/dz_i (the Lorentz force on loop i, e.g. Smythe 1950 sec. 8.02, averaged
over a period). The pull is the force toward the pole face (-z)::

    pull = - sum_{i in target} sum_{j not in target} Re(I_i conj(I_j)) dM_ij/dz_i

Target-internal pairs cancel (Newton's third law). The sum over j splits by source: the coil, the
shading ring and the magnetised pole (its bound sheet currents).
"""

from __future__ import annotations

import numpy as np

from models.fast.circuit import COIL, RING, TARGET, WINDING, CircuitSolution

__all__ = ["net_pull", "pull_by_source"]


def pull_by_source(sol: CircuitSolution) -> dict[str, float]:
    """Pull [N] on the target from each source: {"coil", "ring", "pole"}; positive toward the face."""
    part = sol.cells.part
    tgt = part == TARGET
    i_t = sol.cell_current[tgt]
    out = {}
    for name, labels in (("coil", (COIL,)), ("ring", (RING, WINDING))):
        src = np.isin(part, labels)
        if not np.any(src):
            out[name] = 0.0
            continue
        pair = np.real(i_t[:, None] * np.conj(sol.cell_current[src])[None, :])
        out[name] = float(-(pair * sol.dMdz[np.ix_(tgt, src)]).sum())
    if sol.panel_dMdz is not None and sol.panel_current.size:
        pair = np.real(i_t[:, None] * np.conj(sol.panel_current)[None, :])
        out["pole"] = float(-(pair * sol.panel_dMdz[tgt]).sum())
    else:
        out["pole"] = 0.0
    return out


def net_pull(sol: CircuitSolution) -> float:
    """The net pull [N] on the target: the sum of ``pull_by_source``'s terms (positive toward
    the face)."""
    return float(sum(pull_by_source(sol).values()))
