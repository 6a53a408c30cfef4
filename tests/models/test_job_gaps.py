"""The gaps of a job: the range checked against the FEM (0.05-6 mm), every pick and holding gap
outside it named in a warning, the fineness at thin gaps, and pick maps whose gap axis takes in
the gaps a design is judged at."""

from __future__ import annotations

import copy
import csv

import pytest

from models import design_from_dict, evaluate
from models.checks import VALIDATED_RANGE
from models.evaluate import DEFAULT_FINENESS, evaluate_pick_gaps
from models.fast.discretize import Fineness, resolved_gap
from optim.morning.pickmap import around_axes
from tests.conftest import demo_dict
from tests.tools.cross_model import BASE, CASES, CSV_PATH, case_design
from tests.validation.test_cross_model import BAR


def _demo(**changes):
    d = copy.deepcopy(demo_dict())
    for where, value in changes.items():
        table, key = where.split(".")
        d.setdefault(table, {})[key] = value
    return d


def test_the_checked_gap_range_is_the_cross_model_sets():
    # the range a result is held to is the span of the FEM cases (tests/tools/cross_model.py), on
    # their 10 mm pole: a case at each end of it, none outside
    gaps = [target[2] for _, _, target, _ in CASES.values()]
    assert (min(gaps), max(gaps)) == VALIDATED_RANGE["gap_mm"] == (0.05, 6.0)
    radius = BASE["pole"]["radius_mm"]
    assert VALIDATED_RANGE["gap / pole radius"] == (min(gaps) / radius, max(gaps) / radius)
    for gap in (0.05, 0.1, 4.0, 6.0):  # the job's gaps the issue names: each a case
        assert gap in gaps


def test_the_thin_gap_cases_are_in_the_stored_table_within_the_bar():
    # the cross-model table (tests/data/cross_model.csv, FEM reference of models/fem) holds the
    # job's gaps, and the fast model at today's fineness meets the table's bar against it
    with CSV_PATH.open() as fh:
        rows = {r["case"]: r for r in csv.DictReader(line for line in fh if line[0] != "#")}
    for name in ("g01-400Hz-held-0.05mm", "g05-1kHz-wide-0.05mm", "g02-1kHz-m400-0.1mm-cu"):
        fem = float(rows[name]["fem_pull_N"])
        fast = evaluate(case_design(name), isothermal=True).pull_N
        assert abs(fast - fem) <= BAR * abs(fem), (name, fast, fem)


def test_the_gap_floor_keeps_thin_gaps_affordable():
    # below gap_floor x pole radius (0.2 mm on the 10 mm pole) cells and panels stop shrinking:
    # a part at 0.05 mm costs what one at 0.2 mm does (measured: 1040 cells and 476 panels
    # without the floor, tests/perf/bench_thin_gap.py)
    assert resolved_gap(0.05e-3, 10e-3, DEFAULT_FINENESS) == pytest.approx(0.2e-3)
    assert resolved_gap(1.0e-3, 10e-3, DEFAULT_FINENESS) == 1.0e-3
    assert DEFAULT_FINENESS.scaled(2.0).gap_floor == DEFAULT_FINENESS.gap_floor / 2
    design = case_design("g01-400Hz-held-0.05mm")
    floored = evaluate(design, isothermal=True)
    unfloored = evaluate(design, isothermal=True, fineness=Fineness(gap_floor=0.0))
    assert floored.n_cells < unfloored.n_cells and floored.n_panels < unfloored.n_panels


def test_a_pick_gap_outside_the_checked_range_is_named():
    design = design_from_dict(_demo())
    result, _ = evaluate_pick_gaps(design, (0.02, 0.1, 3.0, 4.0, 8.0), isothermal=True)
    outside = [w for w in result.warnings if w.startswith("pick gap")]
    assert any("pick gap: gap_mm = 0.02 is outside" in w for w in outside), outside
    assert any("pick gap: gap_mm = 8 is outside" in w for w in outside), outside
    assert any("pick gap: gap / pole radius = 0.8 is outside" in w for w in outside), outside
    assert not any(f"gap_mm = {g} " in w for g in ("0.1", "4") for w in outside), outside


def test_a_holding_gap_outside_the_checked_range_is_named():
    # a part held at contact through a 0.03 mm film: below the checked 0.05 mm, so it warns; at
    # 0.1 mm (inside the range now) it does not
    low = evaluate(design_from_dict(_demo(**{"thermal.hold_gap_mm": 0.03})), isothermal=True)
    assert any(
        "holding gap (thermal.hold_gap_mm): gap_mm = 0.03 is outside" in w for w in low.warnings
    ), low.warnings
    inside = evaluate(design_from_dict(_demo(**{"thermal.hold_gap_mm": 0.1})), isothermal=True)
    assert not any("holding gap" in w for w in inside.warnings), inside.warnings


def test_a_family_part_gap_outside_the_range_is_named():
    from optim.study.objectives import results_of
    from optim.study.spec import spec_from_dict
    from tests.conftest import DEMO

    data = {
        "name": "fam",
        "design": str(DEMO),
        "parts": [
            {"name": "cap10", "radius_mm": 5.0, "thickness_mm": 0.6, "material": "aluminium-1350"},
            {
                "name": "slug",
                "radius_mm": 4.0,
                "thickness_mm": 1.0,
                "material": "copper",
                "gap_min_mm": 3.0,
                "gap_max_mm": 7.0,
                "points": 2,
            },
        ],
        "search": {"frequency_Hz": {"low": 300.0, "high": 500.0}},
        "objectives": {"worst_lift_ratio": "maximize"},
        "run": {"trials": 2, "isothermal": True},
    }
    spec = spec_from_dict(data, name="fam")
    _, warnings, _ = results_of(design_from_dict(_demo()), isothermal=True, parts=spec.parts)
    assert any("part slug: pick gap: gap_mm = 7 is outside" in w for w in warnings), warnings


def test_the_pick_map_gap_axis_takes_in_the_judged_gaps():
    design = design_from_dict(_demo(**{"thermal.hold_gap_mm": 0.1}))
    _, y = around_axes(design, 7)
    assert y.values[0] == pytest.approx(0.1) and y.values[-1] == pytest.approx(4.5)  # 1.5 x 3
    _, y = around_axes(design, 7, gaps_mm=(2.0, 6.0))
    assert y.values[0] == pytest.approx(0.1) and y.values[-1] == pytest.approx(6.0)
    plain = design_from_dict(_demo())
    _, y = around_axes(plain, 7, gaps_mm=())
    assert (y.values[0], y.values[-1]) == pytest.approx((0.75, 4.5))  # 0.25 and 1.5 x 3 mm


def test_the_error_bar_keeps_the_pole_model_at_a_thin_gap():
    # the error bar's coarser level keeps the fine level's panels (and so its pole model) below
    # the gap floor too: one pole model for the whole evaluation
    import sys

    module = sys.modules["models.pole_cache"]
    module.clear_pole_cache()
    evaluate(case_design("g01-400Hz-held-0.05mm"), isothermal=True)
    assert module._cached_pole_model.cache_info().misses == 1
