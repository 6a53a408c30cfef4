"""Reference evaluation of a design by the FEM, with its own uncertainty from a refinement study.

The reference proves itself by convergence: `reference` solves a design on two meshes and with two
far-boundary distances (`models.fem.solve.solve`) and reports the changes as its uncertainty.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass

from models.errors import DesignError
from models.fem.mesh import MeshOptions
from models.fem.results import CORE_KEYS, RESULT_KEYS, FemResult
from models.fem.solve import solve

__all__ = ["ReferenceResult", "reference"]


def _flatten(d: dict) -> dict:
    """Scalar view of a result dict (the fast model's keys and the FEM's core keys): [re, im] pairs
    become ``key.re`` and ``key.im``."""
    out = {}
    for k in RESULT_KEYS + CORE_KEYS:
        v = d.get(k)
        if isinstance(v, (list, tuple)):
            out[k + ".re"], out[k + ".im"] = float(v[0]), float(v[1])
        else:
            out[k] = math.nan if v is None else float(v)
    return out


def _change(a: dict, b: dict, scale: dict) -> tuple[dict, dict]:
    """Absolute and relative change of every flattened quantity from ``a`` to ``b``."""
    absolute, relative = {}, {}
    for k in scale:
        x, y, s = a[k], b[k], scale[k]
        if math.isnan(x) or math.isnan(y):
            absolute[k], relative[k] = math.nan, math.nan
            continue
        dx = y - x
        if k == "ring_phase_deg":
            dx = (dx + 180.0) % 360.0 - 180.0
        absolute[k] = abs(dx)
        relative[k] = 0.0 if dx == 0.0 else abs(dx) / abs(s) if s != 0.0 else math.inf
    return absolute, relative


@dataclass(frozen=True)
class ReferenceResult:
    """Finest solution of a refinement study and its own uncertainty.

    Attributes
    ----------
    result : FemResult
        Finest mesh and farthest boundary.
    uncertainty : dict
        Relative uncertainty [-] per flattened quantity (``coil_impedance_ohm.re`` ...): the change
        under mesh refinement plus the change under moving the far boundary out.
    uncertainty_abs : dict
        The same in the quantity's own unit (degrees for the phase).
    mesh_change, domain_change : dict
        The two relative contributions.
    runs : tuple of FemResult
        (coarse, fine, fine with far boundary moved out).
    run_time_s : float
        Wall time of the whole study [s].
    """

    result: FemResult
    uncertainty: dict
    uncertainty_abs: dict
    mesh_change: dict
    domain_change: dict
    runs: tuple
    run_time_s: float

    def to_dict(self) -> dict:
        def clean(d):
            return {k: (None if math.isnan(v) else v) for k, v in d.items()}

        return {
            "result": self.result.to_dict(),
            "uncertainty": clean(self.uncertainty),
            "uncertainty_abs": clean(self.uncertainty_abs),
            "mesh_change": clean(self.mesh_change),
            "domain_change": clean(self.domain_change),
            "runs": [
                {
                    "refine": r.refine,
                    "far_factor": r.far_factor,
                    "n_dofs": r.n_dofs,
                    "run_time_s": r.run_time_s,
                }
                for r in self.runs
            ],
            "run_time_s": self.run_time_s,
        }


def reference(
    design,
    refine: float = 1.0,
    far_factor: float = 1.0,
    refine_ratio: float = 1.6,
    far_ratio: float = 1.6,
    options: MeshOptions | None = None,
) -> ReferenceResult:
    """Reference solution with its own uncertainty from a small convergence study.

    Three solves: (refine, far_factor), (refine_ratio refine, far_factor) and
    (refine_ratio refine, far_ratio far_factor). The last one is returned.

    Parameters
    ----------
    design : models.design.Design
    refine, far_factor : float
        Coarse level of the study.
    refine_ratio, far_ratio : float
        Steps of the study (> 1).
    options : MeshOptions, optional

    Returns
    -------
    ReferenceResult

    Notes
    -----
    The uncertainty of a quantity q is |q_fine - q_coarse| / |q| + |q_far - q_fine| / |q|. With an
    error shrinking like h^p (p about 2 to 4 for these biquadratic elements, see tests/models/fem/test_fem.py)
    the mesh term is the error of the coarse mesh times (1 - refine_ratio^-p), larger than the error
    of the fine one: the estimate is conservative. Relative figures of quantities that are zero in
    every run are 0.
    """
    for name, value in (("refine_ratio", refine_ratio), ("far_ratio", far_ratio)):
        if not (value > 1.0 and math.isfinite(value)):
            raise DesignError(f"{name} = {value!r}: must be a finite number > 1")
    t0 = time.perf_counter()
    coarse = solve(design, refine, far_factor, options)
    fine = solve(design, refine * refine_ratio, far_factor, options)
    far = solve(design, refine * refine_ratio, far_factor * far_ratio, options)
    fc, ff, fr = (_flatten(x.to_dict()) for x in (coarse, fine, far))
    mesh_abs, mesh_rel = _change(fc, ff, fr)
    dom_abs, dom_rel = _change(ff, fr, fr)
    unc = {k: mesh_rel[k] + dom_rel[k] for k in fr}
    unc_abs = {k: mesh_abs[k] + dom_abs[k] for k in fr}
    return ReferenceResult(
        result=far,
        uncertainty=unc,
        uncertainty_abs=unc_abs,
        mesh_change=mesh_rel,
        domain_change=dom_rel,
        runs=(coarse, fine, far),
        run_time_s=time.perf_counter() - t0,
    )
