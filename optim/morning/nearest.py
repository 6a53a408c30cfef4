"""When nothing is feasible: the trials nearest to feasible, what each breaks and by how much,
and the searched parameters that sit at a bound among them (a bound worth moving).

Nearness is the total violation: the sum over the study's constraints of each one's violation
scaled by its limit (``optim.study.objectives.Constraint.violation``: the excess over the limit
divided by the limit's magnitude where that exceeds 1), plus the design rule's (1.0 for a design
whose linear model is out of its depth, ``design_rule_violations``).
"""

from __future__ import annotations

import math

import numpy as np

from optim.study.objectives import OUT_OF_DEPTH_RULE, Constraint, design_rule_violations

__all__ = ["AT_BOUND_SHARE", "broken_constraints", "nearest_lines", "nearest_trials"]

#: A searched value within this share of its range from a bound sits at that bound (common
#: practice, no source: a sampler rarely lands closer than this by chance).
AT_BOUND_SHARE = 0.02


def _constraints(spec_json: dict) -> list[Constraint]:
    return [
        Constraint(name, b.get("min"), b.get("max"))
        for name, b in (spec_json.get("constraints") or {}).items()
    ]


def broken_constraints(values: dict, spec_json: dict) -> list[dict]:
    """The constraints (and design rules) ``values`` (result name -> number) breaks: a list of
    {name, value, limit, margin, violation}; margin in the result's unit (negative), violation
    scaled by the limit. A result that is not finite breaks its constraint with no margin."""
    out = []
    for c in _constraints(spec_json):
        value = float(values.get(c.name, math.nan))
        if math.isnan(value):
            continue
        violation = c.violation(value)
        if violation > 0:
            high = c.high is not None and (value > c.high or c.low is None)
            out.append(
                {
                    "name": c.name,
                    "value": value,
                    "limit": c.high if high else c.low,
                    "margin": c.margin(value),
                    "violation": violation,
                }
            )
    run = spec_json.get("run") or {}
    for name, violation in design_rule_violations(values, run).items():
        count = float(values.get("out_of_depth", 1.0))
        out.append(
            {"name": name, "value": count, "limit": 0.0, "margin": -count, "violation": violation}
        )
    return out


def _total_violation(df, spec_json: dict) -> np.ndarray:
    """Each row's total scaled violation (inf for a row that cannot be judged)."""
    total = np.zeros(len(df))
    for c in _constraints(spec_json):
        if c.name not in df:
            continue
        values = df[c.name].to_numpy(float)
        v = np.zeros(len(df))
        if c.high is not None:
            v = np.maximum(v, (values - c.high) / max(abs(c.high), 1.0))
        if c.low is not None:
            v = np.maximum(v, (c.low - values) / max(abs(c.low), 1.0))
        v = np.where(np.isfinite(values), v, 1e6)  # as Constraint.violation
        total += np.maximum(v, 0.0)
    run = spec_json.get("run") or {}
    if "out_of_depth" in df and not run.get("allow_out_of_depth", False):
        total += (df["out_of_depth"].to_numpy(float) > 0).astype(float)
    return total


def _at_bound(row, spec_json: dict) -> list[dict]:
    """The searched numeric parameters of ``row`` within AT_BOUND_SHARE of their range from a
    bound: {name, value, bound ("low" or "high"), limit}."""
    out = []
    for name, s in (spec_json.get("search") or {}).items():
        if not isinstance(s, dict) or "low" not in s or name not in row:
            continue
        try:
            value = float(row[name])
        except (TypeError, ValueError):
            continue
        lo, hi = float(s["low"]), float(s["high"])
        if not math.isfinite(value) or hi <= lo:
            continue
        log = s.get("scale") == "log" and lo > 0 and value > 0
        f = (math.log(value / lo) / math.log(hi / lo)) if log else (value - lo) / (hi - lo)
        if f <= AT_BOUND_SHARE:
            out.append({"name": name, "value": value, "bound": "low", "limit": lo})
        elif f >= 1 - AT_BOUND_SHARE:
            out.append({"name": name, "value": value, "bound": "high", "limit": hi})
    return out


def nearest_trials(df, spec_json: dict, count: int = 3) -> list[dict]:
    """The ``count`` completed trials of least total violation (none feasible among them is
    implied: call it when the study has no feasible trial), nearest first: {trial,
    total_violation, broken (``broken_constraints``), at_bound (``_at_bound``)}."""
    if df is None or not len(df) or "state" not in df:
        return []
    done = df[df["state"] == "COMPLETE"]
    if not len(done):
        return []
    total = _total_violation(done, spec_json)
    order = np.argsort(total, kind="stable")[:count]
    out = []
    names = [c.name for c in _constraints(spec_json)] + ["out_of_depth"]
    for i in order:
        row = done.iloc[int(i)]
        values = {n: row[n] for n in names if n in row}
        out.append(
            {
                "trial": int(row["trial"]),
                "total_violation": float(total[i]),
                "broken": broken_constraints(values, spec_json),
                "at_bound": _at_bound(row, spec_json),
            }
        )
    return out


def nearest_lines(nearest: list[dict]) -> list[str]:
    """The nearest trials in words, a few lines each."""
    if not nearest:
        return []
    lines = ["  nearest to feasible (total violation: each constraint's excess over its limit)"]
    for n in nearest:
        lines.append(
            f"    trial {n['trial']}: total violation {n['total_violation']:.3g}; "
            "export it with 'study export DIR --nearest'"
            if n is nearest[0]
            else f"    trial {n['trial']}: total violation {n['total_violation']:.3g}"
        )
        for b in n["broken"]:
            if b["name"] == OUT_OF_DEPTH_RULE:
                lines.append(
                    f"      breaks {b['name']}: the linear model is out of its depth "
                    "([run] allow_out_of_depth = true keeps such designs)"
                )
                continue
            lines.append(
                f"      breaks {b['name']}: {b['value']:.4g} against the limit {b['limit']:g} "
                f"(margin {b['margin']:+.4g})"
            )
        for a in n["at_bound"]:
            lines.append(
                f"      {a['name']} = {a['value']:.4g} sits at its {a['bound']} bound "
                f"{a['limit']:g}: a bound worth moving"
            )
    return lines
