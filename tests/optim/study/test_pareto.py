"""optim.study.pareto: the one definition of dominance (a row at least as good in every objective
and better in one; the definition of Pareto dominance, common practice, no source)."""

from __future__ import annotations

import numpy as np

from optim.study.pareto import dominated, minimisation_signs, pareto_mask, with_row


def _brute_front(v: np.ndarray) -> np.ndarray:
    n = len(v)
    return np.array(
        [not any(np.all(v[j] <= v[i]) and np.any(v[j] < v[i]) for j in range(n)) for i in range(n)]
    )


def test_minimisation_signs():
    assert minimisation_signs(["minimize", "maximize"]).tolist() == [1.0, -1.0]


def test_dominated_rows():
    front = np.array([[1.0, 3.0], [2.0, 2.0], [3.0, 1.0], [2.0, 2.0]])
    assert dominated(front, np.array([2.0, 2.0])).tolist() == [False, False, False, False]
    assert dominated(front, np.array([1.0, 1.0])).tolist() == [True, True, True, True]
    assert dominated(front, np.array([1.5, 2.0])).tolist() == [False, True, False, True]


def test_with_row_builds_the_front_of_a_stream():
    rng = np.random.default_rng(5)
    v = rng.integers(0, 6, size=(300, 3)).astype(float)  # many ties and repeats
    front = np.zeros((0, 3))
    for row in v:
        grown = with_row(front, row)
        assert (grown is front) == bool(
            len(front) and np.any(np.all(front <= row, axis=1) & np.any(front < row, axis=1))
        )
        front = grown
    expected = v[_brute_front(v)]
    as_set = lambda a: sorted(map(tuple, a))  # noqa: E731
    assert as_set(front) == as_set(expected)
    assert np.array_equal(pareto_mask(v, ["minimize"] * 3), _brute_front(v))
