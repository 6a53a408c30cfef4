"""Front measures over a study's trials: the front's progress (front size and hypervolume).

Plain numpy/pandas, no plotting: `optim.morning.plots` draws what these compute. Trial tables and objective
lists follow `optim.morning.plots` (columns ``trial``, ``state``, ``feasible``, ``on_front``,
``completed_at``; objectives ``(column, "maximize" | "minimize")``).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from models.errors import DesignError
from optim.study.pareto import pareto_mask, with_row

__all__ = ["front_history", "check_objectives", "as_min", "trial_flags", "column"]


def check_objectives(trials: pd.DataFrame, objectives) -> list[tuple[str, str]]:
    """The objectives as a list of (column, direction); a dict {column: direction} is accepted.

    A column the table lacks (a study whose trials all failed records no results) reads as NaN.

    Raises
    ------
    DesignError
        A direction other than "maximize"/"minimize", or no objective.
    """
    if isinstance(objectives, dict):
        objectives = list(objectives.items())
    out = []
    for name, direction in objectives:
        if direction not in ("maximize", "minimize"):
            raise DesignError(
                f"objective {name!r} direction = {direction!r}: must be 'maximize' or 'minimize'"
            )
        out.append((str(name), direction))
    if not out:
        raise DesignError("objectives = []: give at least one (name, direction)")
    return out


def column(trials: pd.DataFrame, name: str) -> np.ndarray:
    """A column as floats (non-numbers and a missing column read as NaN)."""
    if name not in trials.columns:
        return np.full(len(trials), np.nan)
    return pd.to_numeric(trials[name], errors="coerce").to_numpy(float)


def as_min(trials: pd.DataFrame, objectives) -> np.ndarray:
    """Objective values as an (n, k) float array in minimisation form (maximised ones negated)."""
    cols = [column(trials, n) * (-1 if d == "maximize" else 1) for n, d in objectives]
    return np.column_stack(cols) if cols else np.empty((len(trials), 0))


def trial_flags(trials: pd.DataFrame):
    """Boolean arrays: complete, feasible (complete and feasible), on_front."""
    n = len(trials)
    state = trials["state"].astype(str).to_numpy() if "state" in trials else np.full(n, "COMPLETE")
    complete = state == "COMPLETE"
    feasible = complete & _bool(trials, "feasible", True)
    front = feasible & _bool(trials, "on_front", False)
    return complete, feasible, front


def _bool(trials, col, default):
    if col not in trials:
        return np.full(len(trials), default)
    return trials[col].fillna(False).astype(bool).to_numpy()


def _hv2(points: np.ndarray, ref: float) -> float:
    """Exact area dominated by 2-D points (minimisation) up to the reference point (ref, ref)."""
    pts = points[np.argsort(points[:, 0], kind="stable")]
    area, prev_y = 0.0, ref
    for x, y in pts:
        if y < prev_y:
            area += (ref - x) * (prev_y - y)
            prev_y = y
    return area


#: Finished trials above which ``front_history`` gives the front at HISTORY_POINTS counts only.
HISTORY_LIMIT = 5000
HISTORY_POINTS = 2000


def front_history(
    trials: pd.DataFrame, objectives, samples: int = 20000, points: int | None = None
) -> pd.DataFrame:
    """Size and normalised hypervolume of the feasible front after each finished trial (of more
    than HISTORY_LIMIT: after each of ``points`` evenly spaced counts, HISTORY_POINTS by
    default, the last one the whole study; the values at those counts are the same).

    Parameters
    ----------
    trials : pandas.DataFrame
        All trials; finished ones (COMPLETE or FAIL) are taken in ``completed_at`` order (trial
        number for ties and missing times).
    objectives : list of (str, str)
    samples : int
        Seeded Monte-Carlo points for three or more objectives.

    Returns
    -------
    pandas.DataFrame
        Columns ``finished`` (count), ``trial``, ``completed_at``, ``front_size``,
        ``hypervolume`` (fraction of the reference box) and, for one objective, ``best``.

    Notes
    -----
    Objectives are put in minimisation form and scaled to [0, 1] over all feasible trials of the
    study; the reference point is 1.1 in each (common practice, no source). The hypervolume is the
    dominated share of the box [0, 1.1]^k: exact for 2 objectives (staircase area), otherwise a
    fixed seeded sample of the box, the same for every step, so the curve never decreases. One
    objective: the best value so far and hypervolume = its scaled improvement on the reference.
    """
    objectives = check_objectives(trials, objectives)
    complete, feasible, _ = trial_flags(trials)
    state = (
        trials["state"].astype(str).to_numpy() if "state" in trials else np.full(len(trials), "")
    )
    finished = complete | (state == "FAIL")
    t = trials.assign(_v=list(as_min(trials, objectives)), _feas=feasible)[finished]
    if "completed_at" in t:
        t = t.assign(_when=pd.to_datetime(t["completed_at"], errors="coerce"))
        t = t.sort_values(["_when", "trial"] if "trial" in t else ["_when"], kind="stable")
    v_all = np.array([v for v, ok in zip(t["_v"], t["_feas"], strict=True) if ok]).reshape(
        -1, len(objectives)
    )
    v_all = v_all[np.all(np.isfinite(v_all), axis=1)]
    lo = v_all.min(axis=0) if len(v_all) else np.zeros(len(objectives))
    hi = v_all.max(axis=0) if len(v_all) else np.ones(len(objectives))
    span = np.where(hi > lo, hi - lo, 1.0)
    ref, k = 1.1, len(objectives)
    rng = np.random.default_rng(20261202)
    box = rng.uniform(0.0, ref, size=(samples, k)) if k >= 3 else None
    covered = np.zeros(samples, bool) if k >= 3 else None
    if points is None and len(t) > HISTORY_LIMIT:
        points = HISTORY_POINTS
    if points is not None:
        return _history_at_counts(t, objectives, lo, span, ref, box, points)
    front = np.zeros((0, k))
    rows = []
    for count, (_, row) in enumerate(t.iterrows(), start=1):
        v = np.asarray(row["_v"], float)
        if row["_feas"] and np.all(np.isfinite(v)):
            u = (v - lo) / span
            grown = with_row(front, u)
            if grown is not front:  # u is on the front now
                front = grown
                if k >= 3:
                    covered |= np.all(box >= u, axis=1)
        if not len(front):
            hv = 0.0
        elif k == 1:
            hv = (ref - front[:, 0].min()) / ref
        elif k == 2:
            hv = _hv2(front, ref) / ref**2
        else:
            hv = float(covered.mean())
        out = {
            "finished": count,
            "trial": row.get("trial", count - 1),
            "completed_at": row.get("completed_at", pd.NaT),
            "front_size": len(front),
            "hypervolume": hv,
        }
        if k == 1:
            sign = -1.0 if objectives[0][1] == "maximize" else 1.0
            out["best"] = sign * (front[:, 0].min() * span[0] + lo[0]) if len(front) else math.nan
        rows.append(out)
    cols = ["finished", "trial", "completed_at", "front_size", "hypervolume"]
    return pd.DataFrame(rows, columns=cols + (["best"] if k == 1 else []))


def _history_at_counts(t, objectives, lo, span, ref, box, points: int) -> pd.DataFrame:
    """``front_history`` at ``points`` evenly spaced counts of finished trials: the front is
    carried from one count to the next as the non-dominated set of itself and the block of
    trials between them (``pareto_mask``: equal points kept, as above)."""
    k = len(objectives)
    n = len(t)
    v = np.vstack(t["_v"].to_numpy()).reshape(n, k) if n else np.zeros((0, k))
    ok = t["_feas"].to_numpy(bool) & np.all(np.isfinite(v), axis=1)
    u_all = (v - lo) / span
    counts = np.unique(np.linspace(1, n, min(points, n)).round().astype(int))
    trial = t["trial"].to_numpy() if "trial" in t else np.arange(n)
    when = t["completed_at"].to_numpy() if "completed_at" in t else np.full(n, pd.NaT)
    covered = np.zeros(len(box), bool) if box is not None else None
    front = np.zeros((0, k))
    rows, done = [], 0
    for c in counts:
        block = u_all[done:c][ok[done:c]]
        done = c
        if len(block):
            both = np.vstack([front, block])
            front = both[pareto_mask(both, ["minimize"] * k)]
            if covered is not None:
                for u in front:
                    covered |= np.all(box >= u, axis=1)
        if not len(front):
            hv = 0.0
        elif k == 1:
            hv = (ref - front[:, 0].min()) / ref
        elif k == 2:
            hv = _hv2(front, ref) / ref**2
        else:
            hv = float(covered.mean())
        out = {
            "finished": int(c),
            "trial": trial[c - 1],
            "completed_at": when[c - 1],
            "front_size": len(front),
            "hypervolume": hv,
        }
        if k == 1:
            sign = -1.0 if objectives[0][1] == "maximize" else 1.0
            best = front[:, 0].min() * span[0] + lo[0] if len(front) else math.nan
            out["best"] = sign * best
        rows.append(out)
    cols = ["finished", "trial", "completed_at", "front_size", "hypervolume"]
    return pd.DataFrame(rows, columns=cols + (["best"] if k == 1 else []))
