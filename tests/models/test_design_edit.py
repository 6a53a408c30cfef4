"""models.design.edit: the one way a design is changed (file keys and part properties).

The expected values are the edit's own inputs (what was set must be what is read back) and the
demo design file's values; no physics is checked here.
"""

from __future__ import annotations

import dataclasses

import pytest

from models import DesignError, evaluate, load_design
from models.design import design_from_dict, edit, with_gap
from tests.conftest import DEMO


@pytest.fixture(scope="module")
def design():
    return load_design(DEMO)


def test_file_change_equals_the_changed_file(design):
    data = {k: dict(v) if isinstance(v, dict) else v for k, v in design.source.items()}
    data["ring"]["depth_mm"] = 1.7
    data["target"]["gap_mm"] = 1.2
    by_file = design_from_dict(data, name=design.name)
    edited = edit(design, {"ring.depth_mm": 1.7, "gap_mm": 1.2})
    assert edited == by_file
    assert edited.source == by_file.source
    assert design.source["ring"]["depth_mm"] != 1.7  # the original is untouched


def test_properties_survive_dimension_changes_and_are_recorded(design):
    sigma = 0.8 * design.ring.conductivity
    varied = edit(
        design, properties={"ring.conductivity": sigma, "pole.relative_permeability": 900}
    )
    moved = edit(edit(varied, {"ring.depth_mm": 1.5}), {"target.gap_mm": 2.5})
    assert moved.ring.conductivity == sigma and moved.ring.depth == pytest.approx(1.5e-3)
    assert moved.pole.relative_permeability == 900.0
    assert dict(moved.properties) == {
        ("ring", "conductivity"): sigma,
        ("pole", "relative_permeability"): 900.0,
    }
    assert with_gap(varied, 2.5) == edit(varied, {"gap_mm": 2.5})


def test_a_part_set_outside_edit_is_kept_while_its_table_is_untouched(design):
    ring = dataclasses.replace(design.ring, conductivity=1.0e7)
    direct = dataclasses.replace(design, ring=ring)
    assert with_gap(direct, 2.0).ring is ring


def test_another_metal_drops_the_properties_of_the_part(design):
    varied = edit(design, properties={"target.conductivity": 1.0e7})
    assert edit(varied, {"target.radius_mm": 5.0}).target.conductivity == 1.0e7
    other = edit(varied, {"target.material": "copper", "target.conductivity_S_per_m": None})
    assert other.target.conductivity != 1.0e7
    assert ("target", "conductivity") not in dict(other.properties)


def test_edit_changes_the_result_as_the_file_would(design):
    a = evaluate(edit(design, {"target.gap_mm": 1.0}), isothermal=True)
    b = evaluate(
        design_from_dict(
            {**design.source, "target": {**design.source["target"], "gap_mm": 1.0}},
            name=design.name,
        ),
        isothermal=True,
    )
    assert a.pull_N == b.pull_N


@pytest.mark.parametrize(
    ("changes", "properties", "match"),
    [
        ({"ring.depht_mm": 1.0}, None, "depth_mm"),
        ({"target.gap_mm": -1.0}, None, "gap_mm"),
        (None, {"ring.conductance": 1.0}, "not a property"),
        (None, {"ring.conductivity": float("nan")}, "finite"),
    ],
)
def test_bad_edits_name_the_key(design, changes, properties, match):
    with pytest.raises(DesignError, match=match):
        edit(design, changes, properties=properties)
