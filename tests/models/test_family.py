"""A second part under an evaluated magnet (models/family.py): for the design's own part the
public function repeats the model's own entry point, and models/ stays below optim/.

Reference: ``models.evaluate.evaluate_pick_gaps`` on the same design (the same steps with the
same temperatures, so an identity: 1e-9 relative, far above rounding and far below any change of
the physics). No published values.
"""

from __future__ import annotations

import ast
import math
from pathlib import Path

import pytest

from models.design import edit, load_design, with_gap, with_value
from models.evaluate import evaluate_pick_gaps
from models.family import magnet_temperatures, part_pulls_under_magnet
from tests.conftest import DEMO, ROOT

GAPS = (1.5, 2.25, 3.0)  # the sorting demo's range; 3 mm is the design's own gap


@pytest.mark.parametrize(
    ("edit", "isothermal"),
    [
        ({}, False),
        ({"thermal.hold_gap_mm": 2.0}, False),
        ({"thermal.target_stays": True}, False),
        ({}, True),
    ],
    ids=["as filed", "held at 2 mm", "part stays", "isothermal"],
)
def test_the_own_part_under_its_magnet_is_evaluate_pick_gaps(edit, isothermal):
    design = with_value(load_design(DEMO), "target.thickness_mm", 0.6)
    for key, value in edit.items():
        design = with_value(design, key, value)
    result, pulls = evaluate_pick_gaps(design, GAPS, isothermal=isothermal)
    arrival, hold = part_pulls_under_magnet(design, result, GAPS, isothermal=isothermal)
    assert arrival == pytest.approx(pulls, rel=1e-9)
    assert hold == pytest.approx(result.pull_hold_N, rel=1e-9)


def test_magnet_temperatures_are_the_coil_mean_and_the_ring():
    result, _ = evaluate_pick_gaps(load_design(DEMO))
    temps = magnet_temperatures(result)
    assert temps == {
        "coil": result.temperatures_C["coil_mean"],
        "ring": result.temperatures_C["ring"],
    }
    assert all(math.isfinite(v) for v in temps.values())
    assert magnet_temperatures(result, isothermal=True) == {}


def test_with_gap_keeps_what_was_set_on_the_validated_design():
    """A design read from its file moves to another gap as with_value moves it (equal
    dataclasses); a conductivity set on the validated design by ``edit`` stays (as a tolerance
    table sets it), and the pulls at other gaps follow it."""
    design = load_design(DEMO)
    assert with_gap(design, 2.0) == with_value(design, "target.gap_mm", 2.0)
    half = {
        "ring.conductivity": 0.5 * design.ring.conductivity,
        "target.conductivity": 0.5 * design.target.conductivity,
    }
    varied = edit(design, properties=half)
    ring, target = varied.ring, varied.target
    moved = with_gap(varied, 2.0)
    assert moved.ring == ring and moved.target.conductivity == target.conductivity
    assert moved.target.gap == pytest.approx(2e-3, rel=1e-15)
    _, nominal = evaluate_pick_gaps(design, (2.0,), isothermal=True)
    _, pulls = evaluate_pick_gaps(varied, (2.0,), isothermal=True)
    assert pulls[0] != pytest.approx(nominal[0], rel=1e-3)  # half the conductivities shows


def test_models_never_import_optim():
    """The direction of imports (DEVELOPERS.md): nothing under models/ imports optim."""
    offenders = []
    for path in sorted((ROOT / "models").rglob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
        for node in ast.walk(tree):
            names = []
            if isinstance(node, ast.Import):
                names = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom) and node.module:
                names = [node.module]
            if any(n == "optim" or n.startswith("optim.") for n in names):
                offenders.append(f"{Path(path).relative_to(ROOT)}:{node.lineno}")
    assert offenders == []
