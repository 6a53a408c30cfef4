"""Inputs outside what the fast model has been validated for give a warning in the result, never
silence: extreme frequency, a gap much larger than the pole, saturation, tiny and huge targets,
unusual steels. The validated range is models.checks.VALIDATED_RANGE (the cross-model set of
tests/tools/cross_model.py: a 10 mm pole, 50 Hz to 5 kHz, gaps of 0.05 to 6 mm, mu_r 200 to 5000).
"""

from __future__ import annotations

import copy

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from models import design_from_dict, evaluate
from models.checks import TYPICAL_SATURATION_T, VALIDATED_RANGE
from optim.cli import main
from tests.conftest import demo_dict
from tests.properties.test_properties_design import COMMON, valid_designs

pytestmark = pytest.mark.filterwarnings(
    "ignore:mypy_extensions.TypedDict is deprecated:DeprecationWarning"
)


def _demo(**changes):
    """The demo design with {"table.key": value} changes (None deletes the key)."""
    d = copy.deepcopy(demo_dict())
    for where, value in changes.items():
        table, key = where.split(".")
        if value is None:
            d[table].pop(key, None)
        else:
            d.setdefault(table, {})[key] = value
    return d


def _warnings(data):
    return evaluate(design_from_dict(data), isothermal=True).warnings


def test_the_demo_is_inside_the_range():
    # the reference point of every case below: no warning to begin with
    assert _warnings(_demo()) == []


@pytest.mark.parametrize(
    "changes, expected",
    [
        # extreme frequency, both ends
        ({"drive.frequency_Hz": 5.0}, "frequency_Hz = 5 is outside"),
        ({"drive.frequency_Hz": 1e5}, "frequency_Hz = 1e+05 is outside"),
        ({"drive.frequency_Hz": 1e8}, "frequency_Hz = 1e+08 is outside"),
        # a gap much larger than the pole: by size and against the pole
        ({"target.gap_mm": 30.0}, "gap_mm = 30 is outside"),
        ({"target.gap_mm": 30.0}, "gap / pole radius = 3 is outside"),
        ({"target.gap_mm": 0.02}, "gap_mm = 0.02 is outside"),
        # tiny and huge targets
        ({"target.radius_mm": 0.5}, "target radius / pole radius = 0.05 is outside"),
        ({"target.radius_mm": 200.0}, "target radius / pole radius = 20 is outside"),
        ({"target.thickness_mm": 0.02}, "target thickness_mm = 0.02 is outside"),
        ({"target.thickness_mm": 60.0}, "target thickness_mm = 60 is outside"),
        # saturation: 20x the demo's current drives the linear core far past 1.5 T
        ({"drive.current_A": 120.0}, "exceeds the steel's linear limit"),
        # sheets thick against their skin depth
        ({"drive.frequency_Hz": 2e4}, "skin depths thick at 20000 Hz"),
    ],
)
def test_out_of_range_warns(changes, expected):
    warnings = _warnings(_demo(**changes))
    assert any(expected in w for w in warnings), warnings


def _small_pole(gap_mm):
    """A 2 mm pole (coil and ring fitted to it) and the demo's target at ``gap_mm``."""
    return _demo(
        **{
            "pole.radius_mm": 2.0,
            "coil.inner_radius_mm": 2.5,
            "ring.inner_radius_mm": 0.5,
            "ring.outer_radius_mm": 1.5,
            "ring.depth_mm": 1.0,
            "target.radius_mm": 2.0,
            "target.gap_mm": gap_mm,
        }
    )


def test_gap_larger_than_the_pole_warns_inside_the_absolute_gap_range():
    # 2.5 mm is inside the checked gaps (0.05 to 6 mm) but those were all checked with a 10 mm
    # pole; on a 2 mm pole the gap is 1.25 pole radii, far beyond the 0.6 of the checked set.
    # This was silent before the "gap / pole radius" range existed.
    lo, hi = VALIDATED_RANGE["gap_mm"]
    assert lo < 2.5 < hi
    warnings = _warnings(_small_pole(2.5))
    assert any("gap / pole radius = 1.25 is outside" in w for w in warnings), warnings
    # and the same pole at a checked ratio (0.2 mm / 2 mm = 0.1) says nothing about the gap
    assert not any("gap" in w for w in _warnings(_small_pole(0.2)))


def test_saturation_warns_without_a_steel_grade():
    # A pole given by its permeability alone has no saturation flux density; the linear model
    # must still say when its core runs past where electrical steels saturate (was silent).
    data = _demo(
        **{
            "pole.material": None,
            "pole.relative_permeability": 2000.0,
            "pole.conductivity_S_per_m": 0.0,
            "drive.current_A": 120.0,
        }
    )
    r = evaluate(design_from_dict(data), isothermal=True)
    assert r.core_peak_flux_density_T > TYPICAL_SATURATION_T
    assert any("pole.saturation_flux_density_T is not given" in w for w in r.warnings)
    # at the demo's current it stays linear and quiet about it
    data["drive"]["current_A"] = 6.0
    r = evaluate(design_from_dict(data), isothermal=True)
    assert r.core_peak_flux_density_T < TYPICAL_SATURATION_T
    assert not any("saturat" in w for w in r.warnings)


@pytest.mark.parametrize("mu_r, shown", [(50.0, "50"), (2e4, "2e+04")])
def test_unusual_permeability_warns(mu_r, shown):
    data = _demo(
        **{
            "pole.material": None,
            "pole.relative_permeability": mu_r,
            "pole.conductivity_S_per_m": 0.0,
        }
    )
    assert any(f"pole relative_permeability = {shown} is outside" in w for w in _warnings(data))


def test_the_command_line_shows_the_warning(tmp_path, capsys):
    from tests.properties.test_properties_files import to_toml

    path = tmp_path / "far.toml"
    path.write_text(to_toml(_demo(**{"target.gap_mm": 30.0})))
    assert main(["evaluate", str(path)]) == 0
    out = capsys.readouterr().out
    assert "WARNING: gap_mm = 30 is outside" in out


def _outside(design) -> list[str]:
    """The VALIDATED_RANGE quantities of ``design`` that lie outside their range."""
    values = {
        "frequency_Hz": design.drive.frequency,
        "target radius / pole radius": design.target.radius / design.pole.radius,
        "gap_mm": design.target.gap * 1e3,
        "gap / pole radius": design.target.gap / design.pole.radius,
        "target thickness_mm": design.target.thickness * 1e3,
        "pole relative_permeability": design.pole.relative_permeability,
    }
    assert set(values) == set(VALIDATED_RANGE)  # a new range needs its value here too
    return [k for k, v in values.items() if not VALIDATED_RANGE[k][0] <= v <= VALIDATED_RANGE[k][1]]


@pytest.mark.slow
@settings(max_examples=60, **COMMON)
@given(valid_designs())
def test_every_quantity_outside_its_range_is_named(data):
    # Generated designs (most of them outside somewhere): each quantity outside its checked range
    # has its own warning, so nothing outside is silent.
    design = design_from_dict(data)
    warnings = evaluate(design, isothermal=True).warnings
    for key in _outside(design):
        assert any(w.startswith(f"{key} = ") for w in warnings), (key, warnings)


@settings(max_examples=20, **COMMON)
@given(st.floats(1.0, 10.0))
def test_saturation_warning_follows_the_current(scale):
    # The linear model's flux density grows with the current: past the steel's limit the warning
    # appears, below it does not (definition of the check, no source needed).
    data = _demo(**{"drive.current_A": 6.0 * scale})
    r = evaluate(design_from_dict(data), isothermal=True)
    warned = any("exceeds the steel's linear limit" in w for w in r.warnings)
    assert warned == (r.core_peak_flux_density_T > 1.5)  # M400: 1.5 T (models/materials.py)
