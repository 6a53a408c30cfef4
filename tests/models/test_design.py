"""Design-file reading and validation: one line per problem naming field, value and what is allowed."""

from __future__ import annotations

import math

import pytest

from models.design import design_from_dict, load_design, with_value
from models.errors import DesignError
from tests.conftest import DEMO


def test_demo_design_loads_in_si():
    d = load_design(DEMO)
    assert d.pole.radius == pytest.approx(10e-3)
    assert d.target.gap == pytest.approx(3.0e-3)
    assert d.ring.conductivity == pytest.approx(58.0e6)  # IEC 60028: annealed copper, 58 MS/m
    assert d.drive.current == 6.0
    assert d.pole.laminated


def test_coil_resistance_from_wire():
    d = load_design(DEMO)
    c = d.coil
    # R = rho N 2 pi r_mean / (pi d^2 / 4), rho = 1/58e6 Ohm m (IEC 60028) -- Ohm's law for a wire
    expected = 300 * 2 * math.pi * 16.25e-3 / (58e6 * math.pi * 0.8e-3**2 / 4)
    assert c.resistance() == pytest.approx(expected, rel=1e-12)
    # rho(T) = rho20 (1 + 0.00393 (T - 20)) (IEC 60028)
    assert c.resistance(120.0) == pytest.approx(expected * 1.393, rel=1e-12)


@pytest.mark.parametrize(
    "table, key, value, message",
    [
        (
            "ring",
            "outer_radius_mm",
            9.9,
            r"ring\.outer_radius_mm = 9\.9: must be <= pole\.radius_mm",
        ),
        ("ring", "inner_radius_mm", 0.0, r"ring\.inner_radius_mm = 0\.0: must be a number > 0"),
        ("ring", "depth_mm", 50.0, r"ring\.depth_mm = 50\.0: must be < pole\.length_mm"),
        (
            "coil",
            "inner_radius_mm",
            8.0,
            r"coil\.inner_radius_mm = 8\.0: must be >= pole\.radius_mm",
        ),
        ("coil", "turns", 2.5, r"coil\.turns = 2\.5: must be a whole number >= 1"),
        ("coil", "turns", 0, r"coil\.turns = 0: must be a whole number >= 1"),
        ("target", "gap_mm", -0.1, r"target\.gap_mm = -0\.1: must be a number > 0"),
        ("target", "gap_mm", 0.0, r"target\.gap_mm = 0\.0: must be a number > 0"),
        ("drive", "frequency_Hz", 0.0, r"drive\.frequency_Hz = 0\.0: must be a number > 0"),
        ("target", "radius_mm", "big", r"target\.radius_mm = 'big': must be a number > 0"),
        ("target", "material", "unobtainium", r"target\.material = 'unobtainium': not in the"),
    ],
)
def test_violation_names_field_value_and_range(demo, table, key, value, message):
    demo[table][key] = value
    with pytest.raises(DesignError, match=message) as info:
        design_from_dict(demo)
    assert all("\n" not in p for p in info.value.problems)


def test_unknown_key_suggests_nearest(demo):
    demo["target"]["gap"] = 0.5
    with pytest.raises(DesignError, match=r"target\.gap: unknown key.*did you mean 'gap_mm'"):
        design_from_dict(demo)


def test_unknown_table_suggests_nearest(demo):
    demo["rings"] = demo.pop("ring")
    with pytest.raises(DesignError, match=r"rings: unknown table.*did you mean 'ring'"):
        design_from_dict(demo)


def test_every_violation_reported_at_once(demo):
    demo["target"]["gap_mm"] = -1.0
    demo["coil"]["turns"] = -3
    with pytest.raises(DesignError) as info:
        design_from_dict(demo)
    assert len(info.value.problems) == 2


def test_drive_needs_exactly_one_of_current_and_voltage(demo):
    demo["drive"]["voltage_V"] = 12.0
    with pytest.raises(DesignError, match=r"drive: give exactly one of current_A.*both"):
        design_from_dict(demo)
    del demo["drive"]["voltage_V"], demo["drive"]["current_A"]
    with pytest.raises(DesignError, match=r"neither"):
        design_from_dict(demo)


def test_material_or_conductivity_not_both(demo):
    demo["target"]["conductivity_S_per_m"] = 3e7
    with pytest.raises(
        DesignError, match=r"target\.conductivity_S_per_m = 30000000\.0: give either"
    ):
        design_from_dict(demo)


def test_explicit_conductivity_needs_density(demo):
    del demo["target"]["material"]
    demo["target"]["conductivity_S_per_m"] = 3e7
    with pytest.raises(DesignError, match=r"target\.density_kg_per_m3: missing"):
        design_from_dict(demo)
    demo["target"]["density_kg_per_m3"] = 2700.0
    assert design_from_dict(demo).target.conductivity == 3e7


def test_wire_that_does_not_fit_is_refused(demo):
    demo["coil"]["wire_diameter_mm"] = 2.0
    with pytest.raises(DesignError, match=r"coil\.wire_diameter_mm = 2\.0: 300 turns do not fit"):
        design_from_dict(demo)


def test_plain_pole_without_ring(demo):
    del demo["ring"]
    assert design_from_dict(demo).ring is None


def test_missing_file_and_bad_toml(tmp_path):
    with pytest.raises(DesignError, match=r"cannot be read"):
        load_design(tmp_path / "nope.toml")
    bad = tmp_path / "bad.toml"
    bad.write_text("[pole\nradius_mm = 3\n")
    with pytest.raises(DesignError, match=r"not valid TOML"):
        load_design(bad)


def test_with_value_bare_and_dotted_keys():
    d = load_design(DEMO)
    assert with_value(d, "gap_mm", 1.5).target.gap == pytest.approx(1.5e-3)
    assert with_value(d, "ring.depth_mm", 2.0).ring.depth == pytest.approx(2e-3)
    with pytest.raises(DesignError, match=r"radius_mm: ambiguous"):
        with_value(d, "radius_mm", 3.0)
    with pytest.raises(DesignError, match=r"gapp_mm: not a design key.*gap_mm"):
        with_value(d, "gapp_mm", 3.0)
