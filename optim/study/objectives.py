"""What a study measures on one design: the flat table of results, the objectives and the
constraint margins.

Results are the fast model's fields (``models.result.Result``) flattened to scalars: numbers keep
their names (``pull_N``, ``ring_loss_W``, ``ring_temperature_C`` ...), dictionaries of numbers become
``<field>.<key>`` (``pull_by_source_N.ring``, ``margins.coil_temperature_C``). The study adds:

* ``worst_pull_N``: the smallest pull a part feels over the job: at arrival at each pick gap of a
  range (``gap_min_mm`` .. ``gap_max_mm`` at ``points`` evenly spaced gaps; the design's own
  evaluation is reused where a gap coincides with its own) and at the end of its hold
  (``pull_hold_N``, at the holding gap), the magnet's fixed parts at the design's steady state;
* ``worst_lift_ratio``: ``worst_pull_N`` / target weight.

A study with a family of parts (``[[parts]]``) measures every part instead, under one steady
state of the magnet: ``optim.study.family`` (``parts.<name>.worst_lift_ratio`` ...,
``best_leave_lift_ratio``, ``selectivity_margin``; ``worst_pull_N`` and ``worst_lift_ratio``
over every lift part).

``pole_mass_kg`` and ``core_flux_fraction`` come from the model's result itself.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from models.design import Design
from models.evaluate import evaluate_pick_gaps
from optim.study.family import family_results
from optim.study.flat import flat_result, flatten

__all__ = [
    "OUT_OF_DEPTH_RULE",
    "Objective",
    "Constraint",
    "design_rule_violations",
    "flat_result",
    "results_of",
    "flatten",
    "objective_values",
    "margins",
]

#: The design rule's name among a trial's constraint violations: a design whose linear model is
#: out of its depth (``out_of_depth`` > 0) is infeasible unless ``[run] allow_out_of_depth``.
OUT_OF_DEPTH_RULE = "design_rule.out_of_depth"


@dataclass(frozen=True)
class Objective:
    """Maximise or minimise one result."""

    name: str
    direction: str  # "maximize" | "minimize"


@dataclass(frozen=True)
class Constraint:
    """A limit on one result: ``low <= value <= high`` (either may be None)."""

    name: str
    low: float | None = None
    high: float | None = None

    def violation(self, value: float) -> float:
        """Scaled violation for the sampler (<= 0 feasible): the excess over the limit divided by
        the limit's magnitude where that exceeds 1 (in the result's unit), so that large limits
        in different units weigh alike and a zero limit does not swamp the others."""
        if not math.isfinite(value):
            return 1e6
        worst = -math.inf
        if self.high is not None:
            worst = max(worst, (value - self.high) / max(abs(self.high), 1.0))
        if self.low is not None:
            worst = max(worst, (self.low - value) / max(abs(self.low), 1.0))
        return worst

    def margin(self, value: float) -> float:
        """Distance to the nearer limit in the result's unit, positive = satisfied."""
        out = math.inf
        if self.high is not None:
            out = min(out, self.high - value)
        if self.low is not None:
            out = min(out, value - self.low)
        return out


def results_of(
    design: Design,
    gaps_mm=(),
    isothermal: bool = False,
    parts=(),
    offsets_mm=(),
    lateral: bool | None = None,
):
    """Evaluate ``design`` and return (flat results, warnings, binding limit name or "").

    With ``gaps_mm`` [mm] the part's pull at arrival is also taken at each gap for
    ``worst_pull_N``, with the magnet's parts at the design's own steady state (each extra gap
    costs a circuit assembly and solve, no thermal solve; the pole model is cached). With
    ``offsets_mm`` [mm] (``[robust] offset_max_mm``) each gap's pull is the worst over the part
    at those offsets from the axis (models.fast.offset), at the design's own gap where no gap
    range is given. ``lateral`` as ``models.evaluate.evaluate``'s (True: the centring stiffness
    too). With ``parts`` (a family, optim.study.parts.Part) the design's target is replaced by
    each part in turn and ``gaps_mm`` is not used: ``optim.study.family.family_results``.
    """
    if parts:
        return family_results(design, parts, isothermal=isothermal)
    if len(offsets_mm) and not len(gaps_mm):
        gaps_mm = (design.target.gap * 1e3,)
    result, pulls = evaluate_pick_gaps(
        design, gaps_mm, isothermal=isothermal, lateral=lateral, offsets_mm=offsets_mm
    )
    flat = flat_result(result)
    if len(gaps_mm):
        states = [*pulls, result.pull_hold_N]
        finite = [p for p in states if math.isfinite(p)]
        flat["worst_pull_N"] = float(np.min(finite)) if finite else -math.inf
        flat["worst_lift_ratio"] = flat["worst_pull_N"] / result.target_weight_N
    return flat, list(result.warnings), str(getattr(result, "binding_limit", "") or "")


def design_rule_violations(flat: dict, run: dict) -> dict[str, float]:
    """The design rules a trial breaks, as constraint violations (> 0): ``OUT_OF_DEPTH_RULE``
    (1.0) when the linear model is out of its depth (core past saturation, thermal runaway, a
    current the wire cannot carry) and the study file's ``[run] allow_out_of_depth`` is not
    true. Empty when none is broken: a trial that keeps the rules carries no extra key."""
    if run.get("allow_out_of_depth", False) or not flat.get("out_of_depth", 0.0) > 0:
        return {}
    return {OUT_OF_DEPTH_RULE: 1.0}


def study_kwargs(spec) -> dict:
    """What ``results_of`` takes from a study besides its gaps: its family (``parts``), its
    offsets (``[robust] offset_max_mm``) and ``lateral`` (True where an objective or constraint
    is the centring stiffness); a spec-like object without the last two has none."""
    return {
        "parts": spec.parts,
        "offsets_mm": getattr(spec, "offsets_mm", ()),
        "lateral": getattr(spec, "lateral", None),
    }


def objective_values(flat: dict, objectives) -> list[float]:
    return [flat[o.name] for o in objectives]


def margins(flat: dict, constraints) -> dict[str, float]:
    return {c.name: c.margin(flat[c.name]) for c in constraints}
