"""The fast model, and its error bar, where designs are chosen: parts about as wide as the pole.

Reference: the finite-element pull of tests/data/edge_model.csv (tests/tools/edge_model.py: models.fem
refined until two meshes agree to 0.5 %). The fast model is evaluated live (a fraction of a second
a case). Bars, from the accuracy issue's targets:

* the pull within 3 % of the FEM where its terms sum to at most 10 x the net, within 10 % up to 30 x;
* the error estimate covers the difference (|fast - FEM| <= pull_uncertainty_N) on at least 90 %
  of the cases, and is sharp: the median of estimate / |fast - FEM| is at most 3 where the
  difference exceeds 1 %.
"""

from __future__ import annotations

import functools

import numpy as np
import pytest

from models import evaluate
from tests.tools.edge_model import CASES, FEM_AGREEMENT, case_design, read_rows

ROWS = read_rows()


@functools.cache
def _fast(name):
    return evaluate(case_design(name), isothermal=True)


def test_the_table_covers_the_set_and_its_reference_converged():
    assert set(ROWS) == set(CASES)
    near = [n for n in CASES if abs(case_design(n).target.radius / 10e-3 - 1) <= 0.05]
    assert (
        len(near) >= 12
        and sum(abs(float(ROWS[n]["target_over_pole_radius"]) - 1) <= 0.01 for n in near) >= 4
    )
    for row in ROWS.values():
        assert float(row["fem_mesh_change"]) <= FEM_AGREEMENT


#: Cases that miss the bar, as measured (strict: a fix makes them pass and the mark must go).
KNOWN_MISSES = {
    "e21-washer-al-r100-3k": "3.7 % at terms 8.2 x the net (bar 3 %); converges slowly with every "
    "fineness (2.5 % at twice the default), no one term at fault",
}


@pytest.mark.parametrize(
    "name",
    [
        pytest.param(n, marks=pytest.mark.xfail(reason=KNOWN_MISSES[n], strict=True))
        if n in KNOWN_MISSES
        else n
        for n in CASES
    ],
)
def test_pull_within_the_bar_for_its_cancellation(name):
    r, fem = _fast(name), float(ROWS[name]["fem_pull_N"])
    error = abs(r.pull_N - fem) / abs(fem)
    assert r.pull_cancellation <= 30.0, "the set stays within the issue's range of cancellation"
    bar = 0.03 if r.pull_cancellation <= 10.0 else 0.10
    assert error <= bar, (name, error, r.pull_cancellation)


def test_error_bar_covers_the_difference_and_is_sharp():
    covered, ratio = [], []
    for name in CASES:
        r, fem = _fast(name), float(ROWS[name]["fem_pull_N"])
        diff = abs(r.pull_N - fem)
        covered.append(diff <= r.pull_uncertainty_N)
        if diff > 0.01 * abs(fem):
            ratio.append(r.pull_uncertainty_N / diff)
    assert np.mean(covered) >= 0.9, covered
    assert ratio and np.median(ratio) <= 3.0, ratio


def test_a_study_can_hold_the_error_bar_as_a_constraint():
    # The accuracy issue's example: pull_uncertainty_relative = { max = 0.1 } in [constraints];
    # the study's results carry it, and its margin is the limit minus the value.
    import tomllib

    from models.design import load_design
    from optim.demo import DEMO_DESIGN, DEMO_STUDY
    from optim.study.objectives import margins, results_of
    from optim.study.spec import spec_from_dict

    data = tomllib.loads(DEMO_STUDY.read_text(encoding="utf-8"))
    data["constraints"]["pull_uncertainty_relative"] = {"max": 0.1}
    spec = spec_from_dict(data, folder=DEMO_STUDY.parent)
    flat, _, _ = results_of(load_design(DEMO_DESIGN), isothermal=True)
    assert 0.0 < flat["pull_uncertainty_relative"] < 0.1
    assert flat["pull_uncertainty_N"] == pytest.approx(
        flat["pull_uncertainty_relative"] * abs(flat["pull_N"]), rel=1e-12
    )
    (limit,) = [c for c in spec.constraints if c.name == "pull_uncertainty_relative"]
    assert margins(flat, [limit])["pull_uncertainty_relative"] == pytest.approx(
        0.1 - flat["pull_uncertainty_relative"]
    )
