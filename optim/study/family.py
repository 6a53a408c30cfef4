"""What a study measures on one design for a family of parts (``[[parts]]``): every part's pull
over its gap range, with one steady state of the magnet.

Which evaluation is the design's own: the **first lift part at the design's own gap**
(``target.gap_mm`` of the base design, the holding gap by default). Its full result gives every
flat field of ``models.result.Result`` (``pull_N``, ``lift_ratio``, the losses, the
temperatures, the margins), exactly as a study with a ``[target]`` of that part does; its pulls
at its gaps are ``models.evaluate.evaluate_pick_gaps``'s.

Every other part is put under the same magnet (``models.family.part_pulls_under_magnet``): the
fixed parts (coil, ring, core, face) stay at that evaluation's duty-averaged steady state, since
the magnet does not change with the part in front of it. A part's pull at arrival at each of its
gaps is one circuit assembly and solve with the coil and the ring at those temperatures and the
part at its arrival temperature (as ``evaluate_pick_gaps`` takes further gaps); its end of the
hold is one more solve at the holding gap with the part warmed for ``thermal.hold_time_s``, the
warming taken from the part's own node of the thermal network (its neighbours within a fraction
of a kelvin of the first lift part's steady state: the part's own loss is small next to the
magnet's).

Results added to the model's (``parts.<name>.*`` per part, the rest over the family):

* ``parts.<name>.worst_pull_N`` / ``best_pull_N``: the smallest / largest pull [N] on that part
  over its gaps at arrival and at the end of the hold;
* ``parts.<name>.worst_lift_ratio`` / ``best_lift_ratio``: the same over the part's weight;
* ``worst_pull_N``, ``worst_lift_ratio``: the smallest over every lift part (a family of one lift
  part: the same values as the study of its ``[target]`` and ``[robust]`` range);
* ``best_leave_lift_ratio``: the largest lift ratio of any leave part, any gap, arrival or hold
  (only with a leave part);
* ``selectivity_margin``: ``worst_lift_ratio - best_leave_lift_ratio``: positive when every lift
  part is lifted harder, relative to its weight, than any leave part (a leave part pushed away,
  lift ratio < 0, only adds to it).
"""

from __future__ import annotations

import math

from models.checks import gap_warnings
from models.design import Design, edit
from models.evaluate import evaluate_pick_gaps
from models.family import part_pulls_under_magnet
from optim.study.flat import flat_result
from optim.study.parts import Part, part_source

__all__ = ["family_results", "part_design", "FAMILY_RESULTS"]

#: The results over a family (beside the per-part ``parts.<name>.*``).
FAMILY_RESULTS = ("worst_pull_N", "worst_lift_ratio", "best_leave_lift_ratio", "selectivity_margin")
#: What each part adds, as ``parts.<name>.<key>``.
PART_RESULTS = ("worst_pull_N", "best_pull_N", "worst_lift_ratio", "best_lift_ratio")


def part_design(design: Design, part: Part) -> Design:
    """``design`` with ``part`` in the place of its target (the design's gap kept); ``design``
    itself when its target is already that part. The magnet's pole and ring are ``design``'s own
    validated ones, so that a property varied on them (a tolerance table's ring conductivity or
    pole permeability, ``optim.study.tolerance.MATERIAL_KEYS``) reaches every part."""
    target = part_source(design.source, part)["target"]
    if target == design.source.get("target"):
        return design
    changes = {f"target.{k}": None for k in design.source.get("target", {}) if k not in target}
    return edit(design, changes | {f"target.{k}": v for k, v in target.items()})


def family_results(design: Design, parts, isothermal: bool = False):
    """Evaluate a family of parts under one design; (flat results, warnings, binding limit).

    Parameters
    ----------
    design : models.design.Design
        The trial's design (its own target is replaced by each part in turn).
    parts : sequence of optim.study.parts.Part
        The family, at least one with role "lift"; the first lift part is the design's own
        evaluation (module docstring).
    isothermal : bool
        As ``models.evaluate.evaluate``.

    Returns
    -------
    (dict, list, str)
        Flat results (the first lift part's model result flattened, and the results of the
        module docstring), that evaluation's warnings and binding limit.
    """
    own_part = next(p for p in parts if p.role == "lift")
    own = part_design(design, own_part)
    result, pulls = evaluate_pick_gaps(own, _gaps(own, own_part), isothermal=isothermal)
    flat = flat_result(result)
    per_part = {own_part.name: ([*pulls, result.pull_hold_N], result.target_weight_N)}
    warnings = list(result.warnings)
    for part in parts:
        if part.name in per_part:
            continue
        other = part_design(design, part)
        warnings += gap_warnings(other, _gaps(other, part), f"part {part.name}: pick gap")
        arrival, hold = part_pulls_under_magnet(other, result, _gaps(other, part), isothermal)
        per_part[part.name] = ([*arrival, hold], _weight(other))
    lift_pulls, lift_ratios, leave_ratios = [], [], []
    for part in parts:
        states, weight = per_part[part.name]
        worst, best = _worst_and_best(states)
        key = f"parts.{part.name}."
        flat |= {key + "worst_pull_N": worst, key + "best_pull_N": best}
        flat |= {key + "worst_lift_ratio": worst / weight, key + "best_lift_ratio": best / weight}
        if part.role == "lift":
            lift_pulls.append(worst)
            lift_ratios.append(worst / weight)
        else:
            leave_ratios.append(best / weight)
    flat["worst_pull_N"] = min(lift_pulls)
    flat["worst_lift_ratio"] = min(lift_ratios)
    if leave_ratios:
        flat["best_leave_lift_ratio"] = max(leave_ratios)
        flat["selectivity_margin"] = flat["worst_lift_ratio"] - flat["best_leave_lift_ratio"]
    return flat, warnings, str(getattr(result, "binding_limit", "") or "")


def _gaps(design: Design, part: Part) -> tuple:
    """A part's gaps [mm]: its range, or the design's own gap."""
    return part.gaps_mm or (design.target.gap * 1e3,)


def _weight(design: Design) -> float:
    """The part's weight [N] (its mass times standard gravity, as the model's
    ``target_weight_N``)."""
    return float(design.target.weight)


def _worst_and_best(states) -> tuple[float, float]:
    """The smallest and the largest finite pull [N] (-inf and +inf when none is finite: a
    design that gives no pull lifts nothing and leaves nothing for certain)."""
    finite = [float(p) for p in states if math.isfinite(p)]
    if not finite:
        return -math.inf, math.inf
    return min(finite), max(finite)
