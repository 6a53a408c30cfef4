"""The magnet's envelope and masses, a coil given by its wire and fill factor, numeric keys
searched over choices (standard wire sizes), and the coupling rules a study states."""

from __future__ import annotations

import copy
import math

import pytest

from models import design_from_dict, evaluate
from models.design import DEFAULT_FILL_FACTOR, turns_in_window
from models.errors import DesignError
from models.materials import MATERIALS
from optim.cli import main
from optim.morning.winding import (
    ENAMEL_MAX_OVERALL_MM,
    STANDARD_BARE_DIAMETERS_MM,
    standard_size,
    winding_dict,
)
from optim.study.space import coupling_rules, design_source, parse_search
from optim.study.spec import spec_from_dict
from tests.conftest import demo_dict

WIRES = [0.5, 0.56, 0.63, 0.71, 0.8]  # IEC 60317-0-1 nominal bare diameters (from memory)


def _demo(**coil):
    """The demo design with [coil] keys changed (None deletes one)."""
    d = copy.deepcopy(demo_dict())
    for k, v in coil.items():
        if v is None:
            d["coil"].pop(k, None)
        else:
            d["coil"][k] = v
    return d


# ------------------------------------------------------------------------ the envelope


def test_envelope_and_masses_of_the_demo_from_its_volumes_and_densities():
    # the demo: pole 10 mm x 40 mm, coil 10.5-22 mm x 30 mm with 300 turns of 0.8 mm copper, a
    # copper ring 4-7 mm x 3 mm deep; densities from the library (copper 8890 kg/m^3, IEC 60028;
    # M400-50A 7700 kg/m^3, IEC 60404-8-4), volumes by hand (pi r^2 h)
    r = evaluate(design_from_dict(demo_dict()), isothermal=True)
    copper, steel = MATERIALS["copper"].density, MATERIALS["electrical-steel-m400"].density
    groove = math.pi * (7.0**2 - 4.0**2) * 3.0 * 1e-9  # m^3
    pole = (math.pi * 10.0**2 * 40.0 * 1e-9 - groove) * steel
    winding = 300 * 2 * math.pi * 16.25e-3 * math.pi * (0.4e-3) ** 2 * copper
    assert r.magnet_diameter_mm == pytest.approx(44.0, rel=1e-12)  # 2 x the coil's 22 mm
    assert r.magnet_height_mm == pytest.approx(40.0, rel=1e-12)  # the pole's length
    assert r.coil_copper_mass_kg == pytest.approx(winding, rel=1e-12)
    assert r.pole_mass_kg == pytest.approx(pole, rel=1e-12)
    assert r.magnet_mass_kg == pytest.approx(pole + groove * copper + winding, rel=1e-12)
    d = r.to_dict()  # in the JSON like every result, one block after the fields of before
    names = list(d)
    first = names.index("magnet_diameter_mm")
    assert first > names.index("core_radial_flux_fraction")
    assert names[first : first + 4] == [
        "magnet_diameter_mm",
        "magnet_height_mm",
        "magnet_mass_kg",
        "coil_copper_mass_kg",
    ]


def test_envelope_results_are_study_objectives_and_constraints():
    # a study may bound the envelope and minimise the mass like any result
    data = {
        "name": "envelope",
        **copy.deepcopy(demo_dict()),
        "search": {"pole_radius_mm": {"low": 8.0, "high": 12.0}},
        "objectives": {"pull_N": "maximize", "magnet_mass_kg": "minimize"},
        "constraints": {"magnet_diameter_mm": {"max": 40.0}, "coil_copper_mass_kg": {"max": 1}},
        "run": {"trials": 2, "isothermal": True},
    }
    spec = spec_from_dict(data, name="envelope")
    assert {"magnet_diameter_mm", "magnet_height_mm"} <= set(spec.result_names)
    from optim.study.objectives import margins, results_of
    from optim.study.space import build_design

    design = build_design(spec.base, spec.params, {"pole_radius_mm": 9.0}, "t")
    flat, _, _ = results_of(design, spec.gaps_mm, isothermal=True)
    # the pole radius moves the coil with it (22 - 10 + 9 = 21 mm): a 42 mm magnet, 2 mm over
    assert flat["magnet_diameter_mm"] == pytest.approx(42.0, rel=1e-12)
    assert margins(flat, spec.constraints)["magnet_diameter_mm"] == pytest.approx(-2.0)


# ------------------------------------------------------------------ wire and fill factor


def test_turns_follow_the_window_from_the_wire_and_fill_factor():
    # window (22 - 10.5) x 30 = 345 mm^2; 0.55 x 345 / (pi 0.8^2 / 4) = 377.5 -> 377 whole turns
    d = design_from_dict(_demo(turns=None, fill_factor=0.55))
    assert d.coil.turns == 377 == turns_in_window(345.0, 0.8, 0.55)
    assert d.coil.fill_factor == 0.55
    fill = d.coil.turns * d.coil.wire_area / d.coil.window_area
    assert 0.55 - math.pi * 0.4e-3**2 / d.coil.window_area < fill <= 0.55  # one turn short at most
    # the winding's resistance is that of 377 turns of the named wire, not a rescaled one
    by_turns = design_from_dict(_demo(turns=377))
    assert d.coil.resistance(20.0) == pytest.approx(by_turns.coil.resistance(20.0), rel=1e-12)
    w = winding_dict(d)
    assert w["turns"] == 377 and "coil.fill_factor)" in w["turns_source"]
    assert w["wire_standard_size"] is True


def test_a_wire_without_turns_takes_the_default_fill_and_says_so():
    d = design_from_dict(_demo(turns=None))
    assert d.coil.fill_factor == DEFAULT_FILL_FACTOR == 0.6  # common practice, no source
    assert d.coil.turns == math.floor(0.6 * 345.0 / (math.pi * 0.8**2 / 4))
    assert any("default copper fill 0.6" in n for n in d.notes)
    r = evaluate(d, isothermal=True)
    assert any("default copper fill 0.6" in w for w in r.warnings)


@pytest.mark.parametrize(
    "coil, message",
    [
        (
            {"fill_factor": 0.5},
            r"^coil\.fill_factor = 0\.5: give coil\.turns or coil\.fill_factor \(with "
            r"coil\.wire_diameter_mm; the turns then follow from the window\), not both$",
        ),
        (
            {"turns": None, "fill_factor": 0.95},
            r"^coil\.fill_factor = 0\.95: must be a number > 0 and <= 0\.9 \(copper area",
        ),
        ({"turns": None, "fill_factor": 0.0}, r"^coil\.fill_factor = 0\.0: must be a number > 0"),
        ({"turns": None, "fill_factor": -0.2}, r"^coil\.fill_factor = -0\.2: must be a number > 0"),
        (
            {"turns": None, "wire_diameter_mm": 12.0},
            r"^coil\.wire_diameter_mm = 12\.0: one turn does not fit the window \(11\.5 mm build "
            r"x 30 mm long\); must be <= 11\.5 mm$",
        ),
        (
            {"turns": None, "wire_diameter_mm": 11.0, "fill_factor": 0.2},
            r"^coil\.wire_diameter_mm = 11\.0: at a fill factor of 0\.2 not one turn fits",
        ),
        (
            {"turns": None, "wire_diameter_mm": None, "fill_factor": 0.5},
            r"^coil\.fill_factor = 0\.5: needs coil\.wire_diameter_mm",
        ),
        (
            {"turns": None, "wire_diameter_mm": None},
            r"^coil\.turns: missing; give coil\.turns, or coil\.wire_diameter_mm and "
            r"coil\.fill_factor \(default 0\.6\)",
        ),
    ],
)
def test_bad_windings_one_line_each(coil, message, tmp_path, capsys):
    with pytest.raises(DesignError, match=message) as err:
        design_from_dict(_demo(**coil))
    assert len(err.value.problems) == 1
    from tests.properties.test_properties_files import to_toml

    path = tmp_path / "coil.toml"
    path.write_text(to_toml(_demo(**coil)))
    assert main(["evaluate", str(path)]) == 2
    captured = capsys.readouterr()
    lines = [line for line in captured.err.splitlines() if line.strip()]
    assert len(lines) == 1 and "Traceback" not in captured.err, captured.err


# ------------------------------------------------------------- numeric keys over choices


def _parse(search):
    problems = []
    params = parse_search(search, problems)
    return params, problems


def test_a_numeric_key_is_searched_over_its_choices_as_numbers():
    params, problems = _parse({"coil.wire_diameter_mm": {"choices": WIRES}})
    assert problems == []
    (p,) = params
    assert p.choices == tuple(WIRES) and not p.categorical  # numbers, not words
    import optuna.distributions as od

    assert isinstance(p.distribution(), od.CategoricalDistribution)
    base = _demo(turns=None, fill_factor=0.5)
    src = design_source(base, params, {"coil.wire_diameter_mm": 0.63})
    assert src["coil"]["wire_diameter_mm"] == 0.63 and isinstance(
        src["coil"]["wire_diameter_mm"], float
    )
    # each wire its own turns, from the window: 0.5 x 345 / (pi 0.63^2 / 4) = 553.4 -> 553
    assert design_from_dict(src).coil.turns == 553
    turns, problems = _parse({"turns": {"choices": [200, 250, 300]}})
    assert problems == [] and turns[0].choices == (200, 250, 300) and turns[0].integer


@pytest.mark.parametrize(
    "search, message",
    [
        ({"coil.wire_diameter_mm": {"choices": []}}, "must be a non-empty list of numbers"),
        ({"coil.wire_diameter_mm": {"choices": [0.5, "thin"]}}, r"choices\[1\] = 'thin'"),
        ({"coil.wire_diameter_mm": {"choices": [0.5, 0.5]}}, r"choices\[1\] = 0\.5: repeats"),
        ({"coil.wire_diameter_mm": {"choices": [0.5, -0.1]}}, r"choices\[1\] = -0\.1: must be"),
        ({"coil.wire_diameter_mm": {"choices": [0.5], "low": 0.1}}, r"\.low: choices cannot"),
        ({"turns": {"choices": [100, 150.5]}}, r"choices\[1\] = 150\.5: must be a whole number"),
        ({"coil.fill_factor": {"choices": [0.5, 0.95]}}, r"choices\[1\] = 0\.95: must lie"),
        ({"ring_outer_fraction": {"choices": [0.5]}}, r"is a fraction; give a range"),
    ],
)
def test_bad_numeric_choices_one_line_each(search, message):
    _, problems = _parse(search)
    assert len(problems) == 1 and __import__("re").search(message, problems[0]), problems


def test_a_searched_turn_count_keeps_the_wire():
    # before, the wire was rescaled as sqrt(N_base / N) (0.8 mm at 300 turns -> 0.9238 mm at 225,
    # a size no one sells); now it stays the base design's 0.8 mm
    params, _ = _parse({"turns": {"low": 100, "high": 400}})
    src = design_source(demo_dict(), params, {"turns": 225})
    assert src["coil"]["turns"] == 225 and src["coil"]["wire_diameter_mm"] == 0.8
    # too many turns of that wire for the window: the trial is refused by the design rules
    too_many = design_source(demo_dict(), params, {"turns": 2000})
    with pytest.raises(DesignError, match=r"2000 turns do not fit the 345 mm\^2 window"):
        design_from_dict(too_many)


def test_standard_wire_sizes():
    # IEC 60317-0-1 nominal diameters, the R20 series of ISO 3: neighbours in the ratio
    # 10^(1/20) = 1.122 (ISO 3), within the 2 % its rounding to three figures moves them
    s = STANDARD_BARE_DIAMETERS_MM
    assert all(abs(b / a / 10 ** (1 / 20) - 1) < 0.02 for a, b in zip(s, s[1:], strict=False))
    assert set(ENAMEL_MAX_OVERALL_MM) <= set(s)  # one table of sizes, the enamel's a subset
    assert standard_size(1.0386) == standard_size(1.0386) | {
        "wire_standard_size": False,
        "wire_standard_below_mm": 1.0,
        "wire_standard_above_mm": 1.12,
    }


# ------------------------------------------------------------------- coupling rules


def test_study_results_states_the_coupling_rules(capsys):
    from optim.demo import DEMO_STUDY

    assert main(["study", "results", str(DEMO_STUDY)]) == 0
    out = capsys.readouterr().out
    assert "magnet_diameter_mm" in out and "coil_copper_mass_kg" in out
    assert "what follows the searched parameters (coupling rules):" in out
    assert "the coil follows the pole: a searched pole radius moves coil.inner_radius_mm" in out


def test_coupling_rules_name_the_wire_rules():
    params, _ = _parse({"coil.wire_diameter_mm": {"choices": WIRES}})
    rules = coupling_rules(_demo(turns=None, fill_factor=0.5), params)
    assert any("its turns are the whole turns of coil.wire_diameter_mm" in r for r in rules)
    params, _ = _parse({"turns": {"low": 100, "high": 400}})
    assert any("keeps the wire" in r for r in coupling_rules(demo_dict(), params))
    bare = _demo(wire_diameter_mm=None)
    assert any("a diameter no one may sell" in r for r in coupling_rules(bare, params))
    params, _ = _parse({"frequency_Hz": {"low": 100, "high": 1000}})
    assert coupling_rules(demo_dict(), params) == ["none: every searched key moves alone"]


def test_a_study_gives_the_coil_by_wire_and_fill_over_a_design_with_turns(tmp_path):
    # the study's [coil] override naming fill_factor replaces the file's turns (a coil is given
    # one way); a searched fill factor replaces them too
    from optim.study.space import build_design
    from tests.conftest import DEMO

    data = {
        "name": "wire",
        "design": str(DEMO),
        "coil": {"fill_factor": 0.5},
        "search": {"coil.wire_diameter_mm": {"choices": WIRES}},
        "objectives": {"pull_N": "maximize"},
        "run": {"trials": 2, "isothermal": True},
    }
    spec = spec_from_dict(data, name="wire")
    assert "turns" not in spec.base["coil"]
    design = build_design(spec.base, spec.params, {"coil.wire_diameter_mm": 0.71}, "t")
    assert (
        design.coil.turns == turns_in_window(345.0, 0.71, 0.5) == 435
    )  # 0.5 x 345 / (pi 0.71^2 / 4) = 435.7
    params, _ = _parse({"coil.fill_factor": {"low": 0.3, "high": 0.6}})
    src = design_source(demo_dict(), params, {"coil.fill_factor": 0.4})
    assert "turns" not in src["coil"]
    assert design_from_dict(src).coil.turns == 274  # 0.4 x 345 / (pi 0.8^2 / 4) = 274.5


@pytest.mark.slow
def test_a_study_searches_standard_wires_end_to_end(tmp_path):
    # a seeded study over wire sizes and pole radius: every trial's wire is one of the choices,
    # its turns the window's, the envelope bounded as a constraint; the front keeps the wire as
    # a number
    import pandas as pd

    from tests.conftest import DEMO

    (tmp_path / "demo_design.toml").write_text(DEMO.read_text())
    (tmp_path / "wire.toml").write_text(
        'name = "wire"\ndesign = "demo_design.toml"\n[coil]\nfill_factor = 0.5\n[search]\n'
        f'"coil.wire_diameter_mm" = {{ choices = {WIRES} }}\n'
        "pole_radius_mm = { low = 8.0, high = 12.0 }\n"
        '[objectives]\npull_N = "maximize"\nmagnet_mass_kg = "minimize"\n'
        "[constraints]\nmagnet_diameter_mm = { max = 46.0 }\n"
        "[run]\ntrials = 6\nworkers = 1\nseed = 3\nisothermal = true\n"
    )
    assert main(["study", "run", str(tmp_path / "wire.toml")]) == 0
    folder = tmp_path / "studies" / "wire"
    assert main(["study", "front", str(folder), "--no-pick-maps", "--no-tolerance"]) == 0
    trials = pd.read_csv(folder / "trials.csv")
    assert len(trials) == 6 and trials["coil.wire_diameter_mm"].dtype == float
    assert set(trials["coil.wire_diameter_mm"]) <= set(WIRES)
    for _, row in trials.iterrows():
        build = 22.0 - 10.5  # the coil follows the pole: its build and length are the base's
        turns = turns_in_window(build * 30.0, row["coil.wire_diameter_mm"], 0.5)
        assert row["turns"] == turns  # the front's turns column: the window's, not blank
        copper = turns * 2 * math.pi * (row["pole_radius_mm"] + 6.25) * 1e-3
        copper *= math.pi * (row["coil.wire_diameter_mm"] * 1e-3) ** 2 / 4 * 8890.0  # IEC 60028
        assert row["coil_copper_mass_kg"] == pytest.approx(copper, rel=1e-9)
        # a magnet wider than the bound is infeasible; one within it may still break a design
        # rule (models.checks.out_of_depth: a wire carrying more than its current density)
        if row["magnet_diameter_mm"] > 46.0:
            assert not row["feasible"]
        if row["feasible"]:
            assert row["magnet_diameter_mm"] <= 46.0
