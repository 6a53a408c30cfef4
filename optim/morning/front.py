"""A study's trials as a table, its Pareto front, and the summary ``study status`` prints.

Columns of the trials table (units in the names): ``trial``, ``state``, ``feasible``,
``on_front``, ``completed_at``, ``eval_s``, ``reason``, ``worker``, ``copy_of`` (the evaluated
trial a repeat copies, optim.study.engine; empty for an evaluated trial); the searched parameters
(``frequency_Hz``, ``ring_outer_fraction``...; a text parameter such as ``pole_material`` as
text); the trial design's main dimensions
(``pole_radius_mm``, ``ring_inner_radius_mm``, ``ring_outer_radius_mm``, ``ring_depth_mm``,
``gap_mm``, ``target_radius_mm``, ``frequency_Hz``, ``turns``, ``current_A`` or ``voltage_V``);
every flat result (``pull_N``, ``ring_temperature_C``, ...; ``margins.<limit>`` is the margin to
a physical limit); ``constraint_margin.<constraint>`` (the margin to the study's own constraint,
positive = met); ``warning_count`` and ``warnings`` (the model's warnings, " | " between them).

The front is the set of feasible COMPLETE trials that no other feasible COMPLETE trial
dominates (at least as good in every objective and better in one), each design once (the first
of equal trials). Failed and infeasible trials never enter it.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from models.design import coil_turns
from optim.morning.nearest import nearest_lines, nearest_trials
from optim.study.columns import StudyReadout
from optim.study.pareto import pareto_mask
from optim.study.space import design_source, parse_search

__all__ = [
    "DIMENSIONS",
    "STATE_WORDS",
    "format_status",
    "for_people",
    "pareto_mask",
    "status_summary",
    "trials_table",
]

#: The storage's trial states in the words the tables and the report use.
STATE_WORDS = {
    "COMPLETE": "done",
    "FAIL": "failed",
    "PRUNED": "pruned",
    "RUNNING": "running",
    "WAITING": "waiting",
}


def for_people(df: pd.DataFrame) -> pd.DataFrame:
    """The trials table as written for people (CSV, report): states in our words."""
    if "state" not in df or df.empty:
        return df
    out = df.copy()
    out["state"] = out["state"].map(lambda s: STATE_WORDS.get(s, str(s).lower()))
    return out


#: Design dimensions shown for every trial: column -> (table, key).
DIMENSIONS = {
    "pole_radius_mm": ("pole", "radius_mm"),
    "pole_length_mm": ("pole", "length_mm"),
    "ring_inner_radius_mm": ("ring", "inner_radius_mm"),
    "ring_outer_radius_mm": ("ring", "outer_radius_mm"),
    "ring_depth_mm": ("ring", "depth_mm"),
    "coil_inner_radius_mm": ("coil", "inner_radius_mm"),
    "coil_outer_radius_mm": ("coil", "outer_radius_mm"),
    "turns": ("coil", "turns"),
    "wire_diameter_mm": ("coil", "wire_diameter_mm"),
    "frequency_Hz": ("drive", "frequency_Hz"),
    "current_A": ("drive", "current_A"),
    "voltage_V": ("drive", "voltage_V"),
    "target_radius_mm": ("target", "radius_mm"),
    "target_thickness_mm": ("target", "thickness_mm"),
    "gap_mm": ("target", "gap_mm"),
}


def trials_table(study, spec_json: dict, dimensions: bool = True) -> pd.DataFrame:
    """Every trial of ``study`` (an optuna Study or an ``optim.study.columns.StudyReadout``) as
    one row (see the module docstring for the columns). Built column by column from the stored
    records (optim.study.columns). ``dimensions=False`` leaves out the design dimensions (each
    trial's design, ~10 us a trial: ``study status`` does without them)."""

    readout = study if isinstance(study, StudyReadout) else StudyReadout(study, spec_json, "")
    cols = readout.columns()
    if cols.n == 0:
        return pd.DataFrame(columns=["trial", "state", "feasible", "on_front", "completed_at"])
    data = dict(cols.data)
    values = data.pop("_values")
    ordered: dict = {}
    for key in ("trial", "state", "completed_at", "eval_s", "reason", "binding_limit", "worker"):
        ordered[key] = data.pop(key)
    ordered["copy_of"] = pd.array(data.pop("copy_of"), dtype="Int64")  # empty: evaluated
    ordered["feasible"] = data.pop("feasible")
    names = [p for p in spec_json["search"]]
    for p in names:
        if p in data:
            ordered[p] = data.pop(p)
    if dimensions:
        ordered.update(_dimensions(spec_json, {p: ordered[p] for p in names if p in ordered}))
    ordered.update(data)  # results, constraint margins, warnings (in the columns' order)
    df = pd.DataFrame(ordered)
    df["completed_at"] = pd.to_datetime(df["completed_at"], unit="s", utc=True)
    objectives = list(spec_json["objectives"])
    df["on_front"] = False
    ok = np.array(df["feasible"].to_numpy(bool), copy=True)
    ok &= np.all(np.isfinite(values), axis=1) if values.size else ok
    for o in objectives:
        if o in df:
            ok &= np.isfinite(df[o].to_numpy(float))
    if ok.any() and all(o in df for o in objectives):
        mask = pareto_mask(df.loc[ok, objectives].to_numpy(float), spec_json["objectives"].values())
        df.loc[np.flatnonzero(ok)[mask], "on_front"] = True
        _one_row_per_design(df, names)
    lead = ["trial", "state", "feasible", "on_front"]
    return df[lead + [c for c in df.columns if c not in lead]]


def _one_row_per_design(df: pd.DataFrame, names: list) -> None:
    """Keep one front row per design: of the front's trials with the same searched parameters
    (a repeat and what it copies, or repeats from before copies were recorded), the first."""
    names = [p for p in names if p in df]
    front = df.index[df["on_front"]]
    if len(front) < 2 or not names:
        return
    repeat = df.loc[front, names].astype(str).duplicated(keep="first")
    df.loc[front[repeat.to_numpy()], "on_front"] = False


def _dimensions(spec_json: dict, params: dict) -> dict:
    """The DIMENSIONS columns of every trial whose searched parameters are all set (the design
    each one is: ``design_source``, ~10 us a trial); a column no trial has is left out."""

    search = parse_search(spec_json["search"], [])
    n = len(next(iter(params.values()))) if params else 0
    out = {col: np.full(n, np.nan) for col in DIMENSIONS}
    seen = set()
    if len(params) != len(search) or not n:
        return {}
    base = spec_json["base"]
    columns = [params[p.name] for p in search]
    valid = np.ones(n, bool)
    for c in columns:
        valid &= (c != "") if c.dtype == object else np.isfinite(c)
    for i in np.flatnonzero(valid):
        row = {p.name: c[i] for p, c in zip(search, columns, strict=True)}
        try:
            src = design_source(base, search, row)
        except Exception:  # a geometry that cannot even be assembled: params only
            continue
        for col, (table, key) in DIMENSIONS.items():
            if table in src and key in src[table]:
                out[col][i] = src[table][key]
                seen.add(col)
        if "turns" not in src["coil"] and "wire_diameter_mm" in src["coil"]:
            out["turns"][i] = coil_turns(src["coil"])  # from the wire, fill factor and window
            seen.add("turns")
    out = {col: out[col] for col in DIMENSIONS if col in seen}
    if "turns" in out:  # a count, as the design file has it
        out["turns"] = pd.array(np.round(out["turns"]), dtype="Int64")
    return out


def status_summary(study, spec_json: dict, table: pd.DataFrame | None = None) -> dict:
    """Counts, rate, feasible share, best value per objective (``best``) and the trial that
    reached it with its searched parameters (``best_trials``: objective -> ``trial``,
    ``parameters``; a material as its text), front size, failures and constraints of a study."""
    df = trials_table(study, spec_json, dimensions=False) if table is None else table
    objectives = spec_json["objectives"]
    n = len(df)
    done = df[df["state"].isin(["COMPLETE", "FAIL"])] if n else df
    copies = int(df["copy_of"].notna().sum()) if n and "copy_of" in df else 0
    evaluated = done[done["copy_of"].isna()] if copies else done
    complete = int((df["state"] == "COMPLETE").sum()) if n else 0
    feasible = int(df["feasible"].sum()) if n else 0
    times = evaluated["completed_at"].dropna() if n else pd.Series([], dtype="datetime64[ns, UTC]")
    span = (times.max() - times.min()).total_seconds() if len(times) > 1 else 0.0
    best, best_trials = {}, {}
    for name, direction in objectives.items():
        col = df.loc[df["feasible"], name].astype(float) if n and name in df and feasible else []
        col = col[np.isfinite(col)] if len(col) else col
        if not len(col):
            best[name] = None
            continue
        idx = col.idxmax() if direction == "maximize" else col.idxmin()
        best[name] = float(col[idx])
        best_trials[name] = {
            "trial": int(df.loc[idx, "trial"]),
            "parameters": {
                p: _plain(df.loc[idx, p]) for p in spec_json.get("search", {}) if p in df
            },
        }
    rejected = {}
    for c in spec_json.get("constraints", {}):
        col = f"constraint_margin.{c}"
        if n and col in df:
            margins = df.loc[df["state"] == "COMPLETE", col].astype(float)
            finite = margins[np.isfinite(margins)]
            rejected[c] = {
                "rejected": int((margins < 0).sum() + (~np.isfinite(margins)).sum()),
                "best_margin": float(finite.max()) if len(finite) else None,
            }
    reasons = {}
    if n:
        for r in df.loc[df["state"] == "FAIL", "reason"]:
            key = str(r).split(":")[0] or "unknown"
            reasons[key] = reasons.get(key, 0) + 1

    nearest = nearest_trials(df, spec_json) if n and not feasible else []
    return {
        "name": spec_json["name"],
        "trials": n,
        "complete": complete,
        "failed": int((df["state"] == "FAIL").sum()) if n else 0,
        "running": int((df["state"] == "RUNNING").sum()) if n else 0,
        "feasible": feasible,
        "feasible_share": feasible / len(done) if n and len(done) else 0.0,
        "rate_per_s": (len(times) - 1) / span if span > 0 else 0.0,
        "copies": copies,
        "first": None if not len(times) else times.min().isoformat(),
        "last": None if not len(times) else times.max().isoformat(),
        "front_size": int(df["on_front"].sum()) if n else 0,
        "best": best,
        "best_trials": best_trials,
        "failure_reasons": reasons,
        "constraints": rejected,
        "objectives": dict(objectives),
        "nearest": nearest,
    }


def _plain(value):
    """A table cell as a plain Python value (a number, a text such as a material, or None)."""
    value = value.item() if hasattr(value, "item") else value
    return None if isinstance(value, float) and math.isnan(value) else value


def _values_text(parameters: dict) -> str:
    """``name value`` pairs: numbers to 5 significant digits, text (a material) as it is."""
    return ", ".join(
        f"{k} {v if isinstance(v, str) or v is None else format(v, '.5g')}"
        for k, v in parameters.items()
    )


def format_status(s: dict, where: str) -> str:
    lines = [
        f"study {s['name']} ({where})",
        f"  trials      {s['trials']} ({s['complete']} done, {s['failed']} failed, "
        f"{s['running']} running"
        + (f"; {s['copies']} repeats copied, not evaluated" if s.get("copies") else "")
        + ")",
        f"  feasible    {s['feasible']} ({100 * s['feasible_share']:.1f} % of finished)",
        f"  rate        {s['rate_per_s']:.2f} trials evaluated/s between the first and the last "
        "evaluation "
        f"({s['first']} to {s['last']}; pauses between runs count)",
        f"  front       {s['front_size']} designs",
    ]
    for name, direction in s["objectives"].items():
        b = s["best"][name]
        lines.append(f"  best {name:24s} {'-' if b is None else format(b, '.5g')} ({direction})")
        t = (s.get("best_trials") or {}).get(name)
        if t is not None:
            lines.append(f"       trial {t['trial']}: {_values_text(t['parameters'])}")
    for reason, count in sorted(s["failure_reasons"].items(), key=lambda kv: -kv[1]):
        lines.append(f"  failed: {reason:20s} {count}")
    lines += constraint_lines(s)

    lines += nearest_lines(s.get("nearest") or [])
    return "\n".join(lines)


def constraint_lines(s: dict) -> list[str]:
    """Which constraint rejected how many done trials, and the best margin any reached: the
    reason a study has no feasible design yet."""
    out = []
    for name, c in (s.get("constraints") or {}).items():
        if c["rejected"]:
            best = "-" if c["best_margin"] is None else format(c["best_margin"], "+.4g")
            # a positive best margin was reached by a trial that breaks another constraint
            kept = " (by a trial that breaks another)" if (c["best_margin"] or 0) >= 0 else ""
            out.append(
                f"  constraint {name}: rejected {c['rejected']} done trials; best margin {best}"
                + kept
            )
    return out
