"""The pull's error bar (models.fast.uncertainty.pull_uncertainty).

References: two independent parts add in quadrature, sqrt(a^2 + b^2) (common practice, e.g. the
GUM, JCGM 100:2008 eq. 10 for uncorrelated inputs); Richardson's estimate of a discretisation
error from two levels, |p_coarse - p| / (s^p - 1) (common practice, no source); the cover on the
cross-model set is measured against the stored FEM pulls (tests/data/cross_model.csv).
"""

from __future__ import annotations

import csv
import math

import pytest

from models import evaluate
from models.fast.uncertainty import (
    COARSE_FACTOR,
    DISCRETISATION_FACTOR,
    TERM_ERROR,
    pull_uncertainty,
)
from tests.tools.cross_model import CASES, CSV_PATH, case_design

SPLIT = {"coil": 3.0, "ring": -1.2, "pole": 0.4}


def test_uncertainty_is_the_quadrature_sum_of_its_two_parts():
    pull, coarse = 2.2, 2.35
    discretisation = DISCRETISATION_FACTOR * abs(coarse - pull)
    terms = TERM_ERROR * (3.0 + 1.2 + 0.4)  # magnitudes, so cancellation does not hide them
    expected = math.sqrt(discretisation**2 + terms**2)  # GUM eq. 10, uncorrelated parts
    assert pull_uncertainty(pull, coarse, SPLIT) == pytest.approx(expected, rel=1e-14)


def test_each_part_alone():
    # No split: the discretisation part alone; coarse equal to the pull: the terms' part alone.
    assert pull_uncertainty(1.0, 1.3, {}) == pytest.approx(DISCRETISATION_FACTOR * 0.3, rel=1e-14)
    assert pull_uncertainty(2.2, 2.2, SPLIT) == pytest.approx(TERM_ERROR * 4.6, rel=1e-14)
    assert pull_uncertainty(0.0, 0.0, {}) == 0.0


@pytest.mark.parametrize("pull", [-3.0, 0.0, 0.01, 5.0])
@pytest.mark.parametrize("coarse", [-1.0, 0.0, 5.5])
def test_uncertainty_is_not_negative_and_symmetric_in_the_two_levels(pull, coarse):
    u = pull_uncertainty(pull, coarse, SPLIT)
    assert u >= 0.0
    assert pull_uncertainty(coarse, pull, SPLIT) == pytest.approx(u, rel=1e-14)


@pytest.mark.parametrize("k", [0.5, 3.0, -2.0])
def test_uncertainty_scales_with_the_forces(k):
    # Every part is a magnitude of a force difference or a force: scaling all forces by k scales
    # the bar by |k| (homogeneous of degree 1, module docstring's formula).
    u = pull_uncertainty(2.2, 2.35, SPLIT)
    scaled = pull_uncertainty(k * 2.2, k * 2.35, {s: k * v for s, v in SPLIT.items()})
    assert scaled == pytest.approx(abs(k) * u, rel=1e-13)


def test_terms_grow_with_cancellation_not_with_the_net():
    # Same net pull (2.2 N), larger opposing terms: a larger bar (module docstring).
    small = pull_uncertainty(2.2, 2.2, {"coil": 2.2, "ring": 0.0, "pole": 0.0})
    large = pull_uncertainty(2.2, 2.2, {"coil": 12.2, "ring": -10.0, "pole": 0.0})
    assert large == pytest.approx(small * 22.2 / 2.2, rel=1e-14)


@pytest.mark.parametrize("bad", [math.nan, math.inf, -math.inf])
def test_a_non_finite_pull_has_an_infinite_bar(bad):
    assert pull_uncertainty(bad, 1.0, SPLIT) == math.inf
    assert pull_uncertainty(1.0, bad, SPLIT) == math.inf


def test_the_constants_are_in_their_range():
    # The second level is coarser (every size times 1 / COARSE_FACTOR > 1); the factors positive.
    assert 0.0 < COARSE_FACTOR < 1.0
    assert DISCRETISATION_FACTOR > 0.0 and 0.0 < TERM_ERROR < 0.1


@pytest.mark.slow
def test_the_bar_covers_the_stored_cross_model_differences():
    # Module docstring: the bar covers |fast - FEM| on at least 90 % of the cross-model set
    # (stored FEM pulls, tests/data/cross_model.csv; measured 22 of 22).
    with CSV_PATH.open() as fh:
        rows = {r["case"]: r for r in csv.DictReader(line for line in fh if line[0] != "#")}
    covered = []
    for name in CASES:
        fast = evaluate(case_design(name), isothermal=True)
        assert fast.pull_uncertainty_N >= 0.0
        covered.append(
            abs(fast.pull_N - float(rows[name]["fem_pull_N"])) <= fast.pull_uncertainty_N
        )
    assert sum(covered) >= 0.9 * len(covered), covered
