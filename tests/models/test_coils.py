"""Several coils ([[coils]]) and an air core (no [pole]): reading, errors, the fast model's
identities, results per coil, nulls for what needs the steel, keys searchable as coils.N.key."""

from __future__ import annotations

import copy
import json
import math
import tomllib

import pytest

from models.design import design_from_dict, with_value
from models.errors import DesignError
from models.evaluate import evaluate
from models.thermal.network import build_network
from optim.cli import main
from optim.jsonout import to_jsonable
from optim.study.space import build_design, parse_search
from optim.tomlwrite import dumps_toml
from tests.validation.team28 import team28_source


def _as_coils(data: dict, *coils: dict) -> dict:
    """``data`` with its [coil] replaced by [[coils]] tables."""
    out = copy.deepcopy(data)
    del out["coil"]
    out["coils"] = [dict(c) for c in coils]
    return out


def _halves(coil: dict) -> tuple[dict, dict]:
    """The coil cut in two along its length (same sense, same wire, half the turns each)."""
    half = coil["length_mm"] / 2
    top = {**coil, "length_mm": half, "turns": coil["turns"] // 2}
    bottom = {**top, "setback_mm": coil["setback_mm"] + half}
    return top, bottom


def test_one_coil_as_coils_is_the_coil_form_bit_for_bit(demo):
    # The same coil written either way is the same design for the model (no tolerance: the
    # same arithmetic; regression of the [coil] form, issue 29).
    a = evaluate(design_from_dict(demo), isothermal=True)
    b = evaluate(design_from_dict(_as_coils(demo, demo["coil"])), isothermal=True)
    assert b.pull_N == a.pull_N
    assert b.coil_loss_W == a.coil_loss_W
    assert b.coil_loss_by_coil_W == a.coil_loss_by_coil_W == {"0": a.coil_loss_W}


def test_a_coil_cut_in_two_halves_pulls_as_the_whole(demo):
    # Two halves in series carry the whole coil's ampere-turns over the same window: the field
    # and the pull are the whole coil's up to the coil sub-cells' discretisation (the halves
    # get 2 x 2 times as many; 1 % is the fast model's own error against the FEM, DEVELOPERS.md).
    # The resistances add to the whole's (same wire, mean radius, total turns): to round-off.
    whole = evaluate(design_from_dict(demo), isothermal=True)
    split = evaluate(design_from_dict(_as_coils(demo, *_halves(demo["coil"]))), isothermal=True)
    assert split.pull_N == pytest.approx(whole.pull_N, rel=0.01)
    assert split.coil_loss_W == pytest.approx(whole.coil_loss_W, rel=1e-12)
    assert sum(split.coil_loss_by_coil_W.values()) == pytest.approx(split.coil_loss_W, rel=1e-12)
    assert split.ampere_turns_by_coil_A == {"0": 900.0, "1": 900.0}  # 150 turns x 6 A each


def test_reversing_the_only_coil_changes_no_time_average(demo):
    # Every current flips with the coil's: the time averages (pull, losses) are unchanged, to
    # round-off (Re(I_i I_j*) is even in a common sign).
    a = evaluate(design_from_dict(demo), isothermal=True)
    b = evaluate(design_from_dict(_as_coils(demo, {**demo["coil"], "sense": -1})), isothermal=True)
    assert b.pull_N == pytest.approx(a.pull_N, rel=1e-9)
    assert b.ring_loss_W == pytest.approx(a.ring_loss_W, rel=1e-9)
    # the ring's phase is to the terminal current, which keeps its sign: half a turn away
    assert (b.ring_phase_deg - a.ring_phase_deg) % 360.0 == pytest.approx(180.0, abs=1e-6)
    assert b.ampere_turns_by_coil_A == {"0": -1800.0}


def test_opposed_halves_cancel_most_of_the_field(demo):
    # A coil and its twin wound the other way: the two fields nearly cancel (they sit side by
    # side along the axis), so the part feels a small fraction of the one coil's pull.
    top, bottom = _halves(demo["coil"])
    whole = evaluate(design_from_dict(demo), isothermal=True)
    opposed = evaluate(
        design_from_dict(_as_coils(demo, top, {**bottom, "sense": -1})), isothermal=True
    )
    assert abs(opposed.pull_N) < 0.5 * abs(whole.pull_N)


@pytest.mark.parametrize(
    "change, message",
    [
        (lambda d: d["coils"][1].update(sense=0), "coils.1.sense = 0: must be 1 or -1"),
        (lambda d: d["coils"][1].update(sense=True), "coils.1.sense = True: must be 1 or -1"),
        (lambda d: d["coils"][0].update(sense="-1"), "coils.0.sense = '-1': must be 1 or -1"),
        (
            lambda d: d["coils"][1].update(inner_radius_mm=50.0),
            "coils.1: overlaps coils.0 (r 50-95 mm, z -52 to 0 mm against r 27-55 mm, z -52 to "
            "0 mm); coil windows must not overlap",
        ),
        (
            lambda d: d.update(coil=dict(d["coils"][0])),
            "[coil] beside [[coils]]: give one coil as [coil] or several as [[coils]], not both",
        ),
        (lambda d: d.update(coils=[]), "coils = []: must be one or more [[coils]] tables"),
        (
            lambda d: d["coils"][0].update(turn=3),
            "coils.0.turn: unknown key; allowed: inner_radius_mm",
        ),
        (
            lambda d: d["coils"][1].pop("turns"),
            "coils.1.turns: missing; give coils.1.turns, or coils.1.wire_diameter_mm and",
        ),
        (
            lambda d: d.update(ring={"inner_radius_mm": 4, "outer_radius_mm": 7, "depth_mm": 3}),
            "[pole]: missing table; the [ring] sits in a groove",
        ),
        (
            lambda d: d["coils"][0].update(material="unobtainium"),
            "coils.0.material = 'unobtainium'",
        ),
    ],
)
def test_each_mistake_is_one_line_naming_the_coil(change, message):
    data = team28_source()
    change(data)
    with pytest.raises(DesignError) as info:
        design_from_dict(data)
    assert len(info.value.problems) == 1, info.value.problems
    assert info.value.problems[0].startswith(message)


def test_coils_inside_a_pole_are_refused(demo):
    data = _as_coils(demo, {**demo["coil"], "inner_radius_mm": 8.0})
    with pytest.raises(DesignError, match=r"coils.0.inner_radius_mm = 8.0: must be >= pole"):
        design_from_dict(data)


def test_cli_refuses_with_exit_2_and_one_line(tmp_path, capsys):
    data = team28_source()
    data["coils"][1]["sense"] = 2
    path = tmp_path / "bad.toml"
    path.write_text(dumps_toml(data))
    assert main(["evaluate", str(path)]) == 2
    err = capsys.readouterr().err
    assert err.strip() == "eddypull: error: coils.1.sense = 2: must be 1 or -1"


def test_a_coils_design_writes_and_reads_back():
    data = team28_source()
    assert tomllib.loads(dumps_toml(data)) == data


def test_air_core_json_has_nulls_with_their_reason():
    # An air core has no steel: what needs it is null with its reason, never zero (issue 29).
    r = evaluate(design_from_dict(team28_source()), isothermal=True)
    out = json.loads(json.dumps(to_jsonable(r.to_dict()), allow_nan=False))
    for key in ("core_loss_W", "pole_mass_kg", "core_peak_flux_density_T", "core_temperature_C"):
        assert out[key] is None
        assert out[f"{key}_why"].startswith("air core"), key
    assert "core" not in out["temperatures_C"] and "face" not in out["temperatures_C"]
    assert r.n_panels == 0
    assert any("validated only on TEAM Workshop Problem 28" in w for w in r.warnings)
    assert math.isfinite(r.pull_uncertainty_N) and r.pull_uncertainty_N > 0


def test_lumped_coil_node_holds_every_coil():
    design = design_from_dict(team28_source())
    net = build_network(design)
    assert net.nodes == ["coil", "target"]
    one = design_from_dict({**team28_source(), "coils": team28_source()["coils"][:1]})
    two = design_from_dict({**team28_source(), "coils": team28_source()["coils"][1:]})
    cap = net.capacity[0]
    # The heat capacities of the copper add (the one node holds both coils).
    assert cap == pytest.approx(
        build_network(one).capacity[0] + build_network(two).capacity[0], rel=1e-12
    )


def test_any_coil_key_is_a_design_key():
    design = design_from_dict(team28_source())
    moved = with_value(design, "coils.1.turns", 600)
    assert [c.turns for c in moved.windings] == [960, 600]
    with pytest.raises(DesignError, match=r"coils.2.turns: the design has 2 \[\[coils\]\]"):
        with_value(design, "coils.2.turns", 600)
    with pytest.raises(DesignError, match="coils.0.turnz: not a key of a coil"):
        with_value(design, "coils.0.turnz", 600)


def test_a_study_searches_a_coil_key():
    problems: list[str] = []
    params = parse_search({"coils.1.turns": {"low": 400, "high": 700}}, problems)
    assert problems == []
    design = build_design(team28_source(), params, {"coils.1.turns": 500.0}, "t")
    assert [c.turns for c in design.windings] == [960, 500]
    with pytest.raises(DesignError, match=r"search.coils.3.turns: the base design has 2"):
        params = parse_search({"coils.3.turns": {"low": 400, "high": 700}}, [])
        build_design(team28_source(), params, {"coils.3.turns": 500.0}, "t")


def test_the_hand_off_refuses_what_it_cannot_draw(tmp_path):
    from optim.morning.handoff import write_handoff

    design = design_from_dict(team28_source())
    with pytest.raises(DesignError, match="the hand-off .* draws one coil on a pole"):
        write_handoff(design, evaluate(design, isothermal=True), tmp_path / "h", {})
    assert not (tmp_path / "h").exists()


def test_a_pick_map_runs_over_a_coil_key(tmp_path):
    from optim.morning.pickmap import parse_axis

    design = design_from_dict(team28_source())
    axis = parse_axis(design, "coils.1.turns=400..700", points=3)
    assert axis.key == "coils.1.turns"
    assert list(axis.values) == [400.0, 550.0, 700.0]


@pytest.mark.slow
def test_a_bucking_coil_on_a_pole_matches_the_fem(demo):
    # The demo with a second coil outside the first, wound the other way (100 turns): the fast
    # model against one FEM solve. 2 %: the cross-model set holds the pull within 1.2 % and the
    # losses within 2 % (DEVELOPERS.md); measured here 0.08 % (pull), 0.7 % (ring loss).
    from models.fem.solve import solve

    bucking = {**demo["coil"], "inner_radius_mm": 24.0, "outer_radius_mm": 28.0, "turns": 100}
    design = design_from_dict(_as_coils(demo, demo["coil"], {**bucking, "sense": -1}))
    fast = evaluate(design, isothermal=True)
    fem = solve(design)
    assert fast.pull_N == pytest.approx(fem.pull_N, rel=0.02)
    assert fast.ring_loss_W == pytest.approx(fem.ring_loss_W, rel=0.02)
    assert fast.coil_impedance_ohm[1] == pytest.approx(fem.coil_impedance_ohm.imag, rel=0.02)
