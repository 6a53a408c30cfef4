"""Design files with several mistakes: every problem of every table in one load, none a
follow-on of another; a valid file loads exactly as before."""

from __future__ import annotations

import pytest

from models.design import (
    DESIGN_KEYS,
    Coil,
    Design,
    Drive,
    Pole,
    Ring,
    Target,
    ThermalSettings,
    design_from_dict,
    load_design,
)
from models.errors import DesignError
from models.materials import MATERIALS
from optim.cli import main
from tests.conftest import DEMO, demo_dict

#: Four mistakes in four tables: an unknown key ([pole]), a wrong type ([coil]), a negative
#: value ([target]) and an unknown material ([ring]).
MISTAKES = {
    "length_mm = 40.0": "length_mm = 40.0\nlenght_mm = 40.0",
    "turns = 300": 'turns = "300"',
    "gap_mm = 3.0": "gap_mm = -0.6",
    'material = "copper"': 'material = "coper"',
}
EXPECTED = [
    "pole.lenght_mm: unknown key; allowed: "
    + ", ".join(DESIGN_KEYS["pole"])
    + " (did you mean 'length_mm'?)",
    "coil.turns = '300': must be a whole number >= 1",
    "target.gap_mm = -0.6: must be a number > 0",
    "ring.material = 'coper': not in the material library; allowed: "
    + ", ".join(MATERIALS)
    + " (did you mean 'copper'?)",
]


def _write(tmp_path, replacements: dict) -> object:
    text = DEMO.read_text()
    for old, new in replacements.items():
        assert text.count(old) == 1, old
        text = text.replace(old, new)
    path = tmp_path / "four_mistakes.toml"
    path.write_text(text)
    return path


def test_four_mistakes_in_four_tables_reported_in_one_load(tmp_path):
    with pytest.raises(DesignError) as info:
        load_design(_write(tmp_path, MISTAKES))
    assert info.value.problems == EXPECTED
    assert str(info.value) == "\n".join(EXPECTED)


def test_cli_lists_the_four_mistakes_one_line_each(tmp_path, capsys):
    assert main(["evaluate", str(_write(tmp_path, MISTAKES))]) == 2
    out, err = capsys.readouterr()
    assert out == ""
    assert "Traceback" not in err
    assert err.strip().splitlines() == [f"eddypull: error: {p}" for p in EXPECTED]


def test_every_stage_reports_in_the_same_pass(demo):
    # An unknown table (the top-level check), a refused value (the key check), a material (a
    # table's parser) and a size rule across tables (the geometry): four problems, one pass.
    demo["rings"] = {}
    demo["drive"]["frequency_Hz"] = "fast"
    demo["target"]["material"] = "electrical-steel-m400"
    demo["coil"]["inner_radius_mm"] = 9.0
    with pytest.raises(DesignError) as info:
        design_from_dict(demo)
    problems = info.value.problems
    assert len(problems) == 4, problems
    assert problems[0].startswith("rings: unknown table or key")
    assert "drive.frequency_Hz = 'fast': must be a number > 0" in problems
    assert any(
        p.startswith("target.material = 'electrical-steel-m400': conductivity is 0")
        for p in problems
    )
    assert any(
        p.startswith("coil.inner_radius_mm = 9.0: must be >= pole.radius_mm") for p in problems
    )


@pytest.mark.parametrize(
    "table, key, value, message",
    [
        # the coil and ring rules need the pole radius: skipped, not compared with a guess
        ("pole", "radius_mm", "ten", "pole.radius_mm = 'ten': must be a number > 0"),
        ("pole", "length_mm", -40.0, "pole.length_mm = -40.0: must be a number > 0"),
        ("coil", "turns", 10**400, "coil.turns = 1000"),
        ("coil", "inner_radius_mm", 0.0, "coil.inner_radius_mm = 0.0: must be a number > 0"),
        ("ring", "inner_radius_mm", [4], "ring.inner_radius_mm = [4]: must be a number > 0"),
        ("ring", "material", 3, "ring.material = 3: must be a string"),
        ("drive", "current_A", -6.0, "drive.current_A = -6.0: must be a number > 0"),
        ("target", "radius_mm", True, "target.radius_mm = True: must be a number > 0"),
        ("target", "material", 1350, "target.material = 1350: must be a string"),
        ("thermal", "ambient_C", "warm", "thermal.ambient_C = 'warm': must be a number"),
    ],
)
def test_a_refused_value_brings_no_follow_on_problem(demo, table, key, value, message):
    demo[table][key] = value
    # below the demo's ambient: without a valid ambient the limit is not compared with a default
    demo["thermal"]["ring_limit_C"] = 20.0 if key == "ambient_C" else 200.0
    with pytest.raises(DesignError) as info:
        design_from_dict(demo)
    assert len(info.value.problems) == 1, info.value.problems
    assert info.value.problems[0].startswith(message)


def test_a_table_that_is_not_a_table_skips_its_rules(demo):
    demo["pole"] = 3
    with pytest.raises(DesignError) as info:
        design_from_dict(demo)
    assert info.value.problems == ["pole = 3: must be a table [pole]"]


def test_a_valid_file_loads_as_before(tmp_path):
    steel, copper, alu = (
        MATERIALS[k] for k in ("electrical-steel-m400", "copper", "aluminium-1350")
    )
    mm = 1e-3
    expected = Design(
        pole=Pole(
            radius=10.0 * mm,
            length=40.0 * mm,
            relative_permeability=steel.relative_permeability,
            conductivity=steel.conductivity,
            material="electrical-steel-m400",
            saturation_flux_density=steel.saturation_flux_density,
            lamination_thickness=steel.lamination_thickness,
            sheet_conductivity=steel.sheet_conductivity,
            core_loss=steel.core_loss,
            density=steel.density,
        ),
        coil=Coil(
            inner_radius=10.5 * mm,
            outer_radius=22.0 * mm,
            setback=2.0 * mm,
            length=30.0 * mm,
            turns=300,
            wire_diameter=0.8 * mm,
            conductivity=copper.conductivity,
            temperature_coefficient=copper.temperature_coefficient,
            material="copper",
        ),
        drive=Drive(frequency=400.0, current=6.0),
        target=Target(
            radius=5.0 * mm,
            thickness=1.0 * mm,
            gap=3.0 * mm,
            conductivity=alu.conductivity,
            temperature_coefficient=alu.temperature_coefficient,
            density=alu.density,
            inner_radius=0.0,
            material="aluminium-1350",
        ),
        ring=Ring(
            inner_radius=4.0 * mm,
            outer_radius=7.0 * mm,
            depth=3.0 * mm,
            conductivity=copper.conductivity,
            temperature_coefficient=copper.temperature_coefficient,
            material="copper",
            density=copper.density,
        ),
        name="harrowgate-cap-lifter",
        thermal=ThermalSettings(
            emissivity=0.9,
            duty_cycle=0.1,
            period=5.0,
            hold_time=0.5,
            coil_class_C=155.0,
            coil_class="F",
        ),
        supply=None,
    )
    design = load_design(DEMO)
    assert design == expected
    assert repr(design) == repr(expected)
    assert design.source == demo_dict()
    copy = tmp_path / "copy.toml"
    copy.write_text(DEMO.read_text())
    assert load_design(copy) == design
