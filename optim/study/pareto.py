"""The Pareto front of objective vectors: one definition of dominance for the whole study.

A row dominates another when it is at least as good in every objective and better in one; equal
rows do not dominate each other, so all of them are kept. Objectives are turned into their
minimisation form by ``minimisation_signs``. Used by the live front of a run
(``optim.study.run``), the front history (``optim.study.progress``) and the trials table
(``optim.morning.front``).
"""

from __future__ import annotations

import numpy as np

__all__ = ["dominated", "minimisation_signs", "pareto_mask", "with_row"]


def minimisation_signs(directions) -> np.ndarray:
    """+1 for a minimised objective, -1 for a maximised one: ``values * signs`` is minimised."""
    return np.array([1.0 if d == "minimize" else -1.0 for d in directions])


def dominated(front: np.ndarray, row: np.ndarray) -> np.ndarray:
    """Which rows of ``front`` (m x k, minimisation form) ``row`` dominates."""
    return np.all(row <= front, axis=-1) & np.any(row < front, axis=-1)


def with_row(front: np.ndarray, row: np.ndarray) -> np.ndarray:
    """``front`` (m x k, minimisation form, non-dominated) after ``row`` arrives: the same
    object if a row of it dominates ``row`` (callers may test ``is``), else a new array without
    the rows ``row`` dominates and with ``row``."""
    if len(front) and np.any(np.all(front <= row, axis=1) & np.any(front < row, axis=1)):
        return front
    return np.vstack([front[~dominated(front, row)], row[None, :]])


def pareto_mask(values: np.ndarray, directions) -> np.ndarray:
    """Boolean mask of the non-dominated rows of ``values`` (n x k) for the given directions.

    A row is dominated when another is at least as good in every objective and better in one;
    equal rows are all kept. Rows are sorted lexicographically, so that a row can only be
    dominated by one before it. Two objectives: one pass over the sorted rows with the running
    minimum of the second objective, O(n log n) (5e5 rows in well under a second). More
    objectives: blocks of sorted rows are first compared with the whole front found so far at
    once, and only a block's survivors are then checked one by one.
    """
    values = np.asarray(values, float)
    n = values.shape[0]
    if n == 0:
        return np.zeros(0, bool)
    v = values * minimisation_signs(directions)
    order = np.lexsort(v.T[::-1])
    keep = np.zeros(n, bool)
    if v.shape[1] == 1:
        keep[v[:, 0] == v[order[0], 0]] = True
        return keep
    if v.shape[1] == 2:
        keep[order] = _front_of_sorted_pairs(v[order])
        return keep
    front = np.empty((n, v.shape[1]))
    size = 0
    for block in np.array_split(order, max(1, n // _BLOCK)):
        x = v[block]
        f = front[:size]
        if size:
            le = np.all(f[None, :, :] <= x[:, None, :], axis=2)
            lt = np.any(f[None, :, :] < x[:, None, :], axis=2)
            alive = ~np.any(le & lt, axis=1)
        else:
            alive = np.ones(len(block), bool)
        for i, row in zip(block[alive], x[alive], strict=True):
            f = front[:size]
            if size and np.any(np.all(f <= row, axis=1) & np.any(f < row, axis=1)):
                continue
            keep[i] = True
            front[size] = row
            size += 1
    return keep


#: Rows compared with the front at once by ``pareto_mask`` (three or more objectives).
_BLOCK = 256


def _front_of_sorted_pairs(v: np.ndarray) -> np.ndarray:
    """Non-dominated mask of two-objective rows sorted lexicographically (minimisation).

    A row is dominated by an earlier row with a smaller first objective and a second objective
    no larger, or by an earlier row of the same first objective with a smaller second one (the
    first of its group, the group being sorted)."""
    a, b = v[:, 0], v[:, 1]
    starts = np.flatnonzero(np.r_[True, a[1:] != a[:-1]])
    group = np.repeat(starts, np.diff(np.r_[starts, len(a)]))
    before = np.r_[np.inf, np.minimum.accumulate(b)[:-1]]  # min of b over the rows before i
    by_smaller_first = before[group] <= b
    by_same_first = b[group] < b
    return ~(by_smaller_first | by_same_first)
