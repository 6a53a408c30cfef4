"""The new user's list (issue 27): what broke or misled on a first day, each fixed and held here."""

from __future__ import annotations

import copy
import html
import math
import re

import pandas as pd
import pytest

from models.design import design_from_dict
from models.errors import DesignError
from models.evaluate import evaluate
from optim.cli.main import main
from optim.cli.summary import format_result
from optim.demo import DEMO_DESIGN, DEMO_SORTING, DEMO_STUDY
from optim.morning.cards import CardStates, card_items
from optim.morning.front import DIMENSIONS
from optim.morning.handoff import dumps_toml
from optim.morning.outputs import design_of
from optim.morning.report import render_report
from optim.morning.verify import compare, format_table
from optim.study.objectives import results_of
from optim.study.spec import load_study_spec
from tests.conftest import demo_dict


def test_verify_reads_a_result_with_two_warnings():
    # A gap of 7 mm is outside the FEM-checked range twice (gap, gap / pole radius): the result
    # carries exactly two warnings, a two-item list of texts that is not a complex number.
    d = demo_dict()
    d["target"]["gap_mm"] = 7.0
    fast = evaluate(design_from_dict(d))
    assert len(fast.warnings) == 2
    fem = dict(fast.to_dict())
    fem["pull_N"] = 1.01 * fem["pull_N"]  # a stand-in reference 1 % above the fast model
    rows = compare(fast.to_dict(), fem, {"pull_N": 0.002})
    by_key = {r["key"]: r for r in rows}
    # compare(): difference_rel = (fast - fem) / |fem| = 1/1.01 - 1 for a reference 1 % high.
    assert by_key["pull_N"]["difference_rel"] == pytest.approx(1 / 1.01 - 1, rel=1e-9)
    # The impedance (a [re, im] pair by name) is still split into its two parts.
    re, im = fast.to_dict()["coil_impedance_ohm"]
    assert (by_key["coil_impedance_ohm.re"]["fast"], by_key["coil_impedance_ohm.im"]["fast"]) == (
        re,
        im,
    )
    assert "coil reactance" in format_table(rows, 1.0, 0.01)
    assert not any(k.startswith(("warnings", "thermal_time_constants")) for k in by_key)


def test_verify_refuses_a_malformed_impedance_by_name():
    with pytest.raises(ValueError, match="coil_impedance_ohm must be a complex number"):
        compare({"coil_impedance_ohm": "1+2j"}, {"coil_impedance_ohm": [1.0, 2.0]}, {})
    rows = compare(None, {"coil_impedance_ohm": [1.0, 2.0], "pull_N": 0.01}, {})
    assert all(math.isnan(r["fast"]) for r in rows)


@pytest.mark.parametrize(
    ("duty", "period", "hold", "on"),
    [(0.3, 2.0, 1.0, "0.6 s"), (0.2, 2.0, 0.9, "0.4 s")],  # the two cases
)
def test_a_hold_longer_than_the_on_time_is_refused(duty, period, hold, on, capsys, tmp_path):
    d = demo_dict()
    d["thermal"].update(duty_cycle=duty, period_s=period, hold_time_s=hold)
    with pytest.raises(DesignError, match=rf"thermal.hold_time_s = {hold}: .* = {on} "):
        design_from_dict(d)
    path = tmp_path / "d.toml"
    path.write_text(dumps_toml(d), encoding="utf-8")
    assert main(["evaluate", str(path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "thermal.hold_time_s" in err[0]
    # Equal to the on-time is a hold that ends as the magnet switches off: accepted.
    d["thermal"]["hold_time_s"] = duty * period
    design_from_dict(d)


def test_the_demo_studies_hold_within_their_on_time():
    for path in (DEMO_STUDY, DEMO_SORTING):
        spec = load_study_spec(path)  # refused (DesignError) were the hold longer
        t = spec.base["thermal"]
        assert t["hold_time_s"] <= t["duty_cycle"] * t["period_s"]


def _demo_row(params: dict):
    """One front row of the demo study as the trials table has it: parameters then results."""
    spec = load_study_spec(DEMO_STUDY)
    design = design_of(spec, params)
    flat, _, limit = results_of(design, spec.gaps_mm)
    dims = {c: design.source.get(t, {}).get(k) for c, (t, k) in DIMENSIONS.items()}
    row = {"trial": 7, **params, **dims, **flat, "binding_limit": limit}
    return spec, design, pd.Series(row)


def _card_text(html_text: str) -> dict:
    """label -> value of the first pick card of a report page."""
    start = html_text.index('<div class="card">')
    card = html_text[start : html_text.index("</table></div>", start)]
    pairs = re.findall(r'<th class="text">(.*?)</th><td>(.*?)</td>', card)
    return {html.unescape(k): html.unescape(v) for k, v in pairs}


def test_pick_cards_name_the_gap_and_state_of_every_pull():
    params = {
        "ring_outer_fraction": 0.61,
        "ring_inner_fraction": 0.48,
        "ring_depth_mm": 1.55,
        "pole_radius_mm": 10.7,
        "frequency_Hz": 580.0,
        "current_A": 3.65,
        "pole_material": "electrical-steel-m400",
        "drive.compensation": "none",
    }
    spec, design, row = _demo_row(params)
    states = CardStates(gaps_mm=spec.gaps_mm)
    page = render_report(
        {"study": "demo"}, pd.DataFrame([row]), [], {}, [], picks=[("best", 7)], states=states
    )
    card = _card_text(page)
    # The card's pull at the design's own gap is evaluate()'s at that gap (same design, same
    # 2.00 mm): the fast model's own number, printed to 4 significant digits.
    own = evaluate(design)
    assert design.target.gap == pytest.approx(2.0e-3)
    assert card["pull at 2.00 mm, arriving at 30 degC"] == f"{1e3 * own.pull_N:.4g} mN"
    assert card["lift ratio at 2.00 mm, arriving at 30 degC"] == f"{own.lift_ratio:.4g}"
    assert card["pull after a 0.5 s hold at 2.00 mm"] == f"{1e3 * own.pull_hold_N:.4g} mN"
    # The worst value says what it is the worst of, and is evaluate()'s smallest over the gaps
    # and the hold (evaluate() at each gap re-solves the magnet's steady state, which the study
    # keeps at the design's own: the 4 digits shown agree, the coil's losses barely move with
    # the gap).
    worst = min(
        [evaluate(design_from_dict(_with_gap(design.source, g))).pull_N for g in spec.gaps_mm]
        + [own.pull_hold_N]
    )
    label = "worst pull over 1.5-3 mm (3 gaps) arriving, and after a 0.5 s hold at 2.00 mm"
    assert card[label] == f"{1e3 * worst:.4g} mN"
    # No pull or lift ratio on the card is left without its gap or state.
    for key in card:
        if "pull" in key or "lift ratio" in key:
            assert " mm" in key or "hold" in key, key


def _with_gap(source: dict, gap_mm: float) -> dict:
    d = copy.deepcopy(source)
    d["target"]["gap_mm"] = gap_mm
    return d


def _printed(d: dict, isothermal: bool = False) -> tuple:
    design = design_from_dict(d)
    result = evaluate(design, isothermal=isothermal)
    return result, format_result(design, result)


def test_a_runaway_prints_no_negative_time_nan_or_infinite_temperature():
    d = demo_dict()
    d["drive"]["current_A"] = 20.0  # 1 kW in the demo's coil: its hot spot runs away
    result, text = _printed(d)
    assert result.thermal_status.startswith("runaway")
    # From cold the coil cannot reach its limit before it is switched on (seconds >= 0).
    assert all(t >= 0.0 for t in result.time_to_limit_s.values())
    assert "coil at switch-on" in text
    times = next(x for x in text.splitlines() if "time to limit" in x)
    assert " -" not in times
    for nonsense in ("nan", "inf degC", "-inf", "(part at inf"):
        assert nonsense not in text, nonsense
    assert "after the hold     n/a: no pull after a 0.5 s hold (runaway" in text


def test_a_pole_given_by_permeability_has_no_saturation_to_compare():
    d = demo_dict()
    d["pole"] = {
        "radius_mm": 10.0,
        "length_mm": 40.0,
        "relative_permeability": 2000.0,
        "conductivity_S_per_m": 0.0,
    }
    result, text = _printed(d)
    assert math.isnan(result.core_saturation_T)
    assert "nan" not in text
    assert "core flux vs saturation n/a" in text


def test_an_isothermal_run_says_its_temperatures_are_not_coupled():
    _, text = _printed(demo_dict(), isothermal=True)
    line = next(x for x in text.splitlines() if x.strip().startswith("temperatures"))
    assert "not coupled (every resistivity held at 20 degC" in line
    assert "isothermal" in next(x for x in text.splitlines() if "after the hold" in x)


REPEATS = """
[search]
turns = { low = 200, high = 202 }
pole_material = { choices = ["electrical-steel-m400", "electrical-steel-m270"] }
[objectives]
pull_N = "maximize"
input_power_W = "minimize"
[run]
sampler = "random"
seed = 3
"""


def _repeat_study(tmp_path, trials: int):
    """A search of 3 x 2 = 6 designs run for more trials than that, by one worker in this process."""
    import multiprocessing as mp

    from optim.study.engine import run_worker
    from optim.study.records import WorkerConfig
    from optim.study.run import prepare

    path = tmp_path / "repeats.toml"
    path.write_text(
        f'name = "repeats"\ndesign = "{DEMO_DESIGN.as_posix()}"\n{REPEATS}', encoding="utf-8"
    )
    spec = load_study_spec(path)
    folder = tmp_path / "repeats"
    prepare(spec, folder)
    cfg = WorkerConfig(spec=spec.to_json(), location=str(folder), trials=trials, seed=3)
    counter = mp.get_context("spawn").Value("q", 0)
    assert run_worker(cfg, None, None, counter).recorded == trials
    return spec, folder


def test_a_repeated_design_is_copied_not_evaluated(tmp_path):
    from optim.morning.front import status_summary, trials_table
    from optim.study.records import StoredRecord
    from optim.study.storage import load_existing

    spec, folder = _repeat_study(tmp_path, 20)
    study, spec_json, _ = load_existing(folder)
    trials = study.get_trials(deepcopy=False)
    first: dict = {}
    for t in trials:
        key = tuple(sorted(t.params.items()))
        rec = StoredRecord.of(t.user_attrs)
        if key not in first:  # the first of a design is evaluated
            first[key] = t
            assert rec.copy_of is None and rec.eval_s > 0
        else:  # every later one copies it: its numbers, no evaluation
            original = first[key]
            assert rec.copy_of == original.number and rec.eval_s == 0
            assert t.values == original.values
            assert rec.results == StoredRecord.of(original.user_attrs).results
    assert len(first) <= 6 < len(trials)  # 3 turns x 2 steels: repeats are certain
    df = trials_table(study, spec_json)
    copies = df["copy_of"].notna()
    assert int(copies.sum()) == len(trials) - len(first)
    assert str(df["copy_of"].dtype) == "Int64"  # a trial number, empty for an evaluated trial
    front = df[df["on_front"]]
    assert not front[["turns", "pole_material"]].astype(str).duplicated().any()
    assert front["copy_of"].isna().all()
    # The rate counts evaluated trials only: (evaluated - 1) / their span.
    s = status_summary(study, spec_json, df)
    times = df.loc[~copies, "completed_at"]
    span = (times.max() - times.min()).total_seconds()
    assert s["copies"] == int(copies.sum())
    assert s["rate_per_s"] == pytest.approx((len(first) - 1) / span)


def test_a_ring_without_its_own_limit_is_held_to_the_coil_beside_it():
    d = demo_dict()  # class F coil (the demo's [thermal]), copper ring, no ring_limit_C
    assert d["thermal"]["coil_insulation_class"] == "F" and "ring_limit_C" not in d["thermal"]
    result = evaluate(design_from_dict(d))
    a = result.thermal_assumptions
    assert a["ring_limit_C"] == 155.0  # IEC 60085 class F
    assert a["ring_limit_source"].startswith("the coil's insulation class F")
    # A limit of the user's own still wins.
    d["thermal"]["ring_limit_C"] = 250.0
    assert evaluate(design_from_dict(d)).thermal_assumptions["ring_limit_C"] == 250.0


@pytest.mark.parametrize(
    ("sigma", "metal"),
    # conductivities at 20 degC (IEC 60028 copper 58 MS/m; aluminium about 35 MS/m, from memory)
    [(5.8e7, "copper"), (3.5e7, "aluminium")],
)
def test_an_unnamed_conductor_takes_one_metal_for_every_property(sigma, metal):
    from models.design import nearest_metal

    d = demo_dict()
    d["target"].pop("material", None)
    d["target"].update(conductivity_S_per_m=sigma, density_kg_per_m3=2700.0)
    design = design_from_dict(d)
    near = nearest_metal(sigma)
    assert near.name.startswith(metal)
    result = evaluate(design)
    # the temperature coefficient and the melting point are the same metal's
    assert design.target.temperature_coefficient == near.temperature_coefficient
    assert result.thermal_assumptions["target_limit_C"] == near.max_temperature_C
    assert near.name in result.thermal_assumptions["target_limit_source"]
    assert any(f"melting point of {near.name}" in w for w in result.warnings)


def test_the_reports_model_validity_note_speaks_of_the_core_losses_modelled():
    from optim.morning.outputs import _notes

    spec = load_study_spec(DEMO_STUDY)
    first = _notes(spec, pd.DataFrame({"state": []}), pd.DataFrame())[0]
    assert "no hysteresis" not in first
    assert "hysteresis and excess from a loss law" in first


def test_british_spellings_of_the_directions_are_the_same_study(tmp_path):
    text = DEMO_STUDY.read_text(encoding="utf-8")
    british = text.replace('= "maximize"', '= "maximise"').replace('= "minimize"', '= "minimise"')
    assert british != text
    path = tmp_path / "demo_study.toml"
    path.write_text(
        british.replace('design = "demo_design.toml"', f'design = "{DEMO_DESIGN.as_posix()}"'),
        encoding="utf-8",
    )
    ours, theirs = load_study_spec(path), load_study_spec(DEMO_STUDY)
    assert ours.directions == theirs.directions == ["maximize", "minimize"]
    assert ours.fingerprint() == theirs.fingerprint()


def _significant(v: float) -> int:
    """Significant digits of a float as Python writes it (repr: the shortest round trip)."""
    digits = repr(abs(v)).split("e")[0].replace(".", "").lstrip("0")
    return len(digits.rstrip("0")) or 1


def _floats(value, path=()):
    if isinstance(value, dict):
        for k, v in value.items():
            yield from _floats(v, (*path, str(k)))
    elif isinstance(value, list):
        for v in value:
            yield from _floats(v, path)
    elif isinstance(value, float):
        yield path, value


def test_a_hand_off_states_every_number_at_its_resolution(tmp_path):
    import csv
    import json

    from optim.morning.handoff import write_handoff
    from optim.morning.rounding import round_design

    d = demo_dict()
    d["ring"]["depth_mm"] = 0.9132379628928807  # a study's 16 digits
    d["drive"].update(frequency_Hz=1200.8715316975965, current_A=5.166308101283111)
    design, changed = round_design(design_from_dict(d))
    # the drive as an inverter is set: 1 Hz and 0.01 A (rounding.DRIVE_RESOLUTION)
    assert design.source["drive"] == {"frequency_Hz": 1201.0, "current_A": 5.17}
    assert {"drive.frequency_Hz", "drive.current_A", "ring.depth_mm"} <= set(changed)
    paths = write_handoff(design, evaluate(design), tmp_path, {"trial": 3})
    data = json.loads(paths["handoff.json"].read_text(encoding="utf-8"))
    assert data["resolution"]["lengths_mm"] == 0.001
    for path, v in _floats({k: v for k, v in data.items() if k != "design"}):
        limit = 6 if path[0] in ("study", "rounding", "resolution") else 4
        assert _significant(v) <= limit, (path, v)
    for path, v in _floats({k: v for k, v in data["design"].items() if k != "file"}):
        if path[-1].endswith("_mm") or path[0] in ("dimensions_mm", "section_mm"):
            assert abs(v * 1000 - round(v * 1000)) < 1e-6, (path, v)  # 0.001 mm
        else:
            assert _significant(v) <= 6, (path, v)
    with open(paths["parameters.csv"], newline="", encoding="utf-8") as fh:
        for row in csv.DictReader(fh):
            if row["unit"]:  # a number (texts have no unit)
                assert _significant(float(row["value"])) <= 6, row


def test_the_dxf_marks_the_sheets_and_letters_at_print_size(tmp_path):
    import ezdxf

    from optim.morning.dxf import write_profile_dxf

    design = design_from_dict(demo_dict())  # a laminated electrical-steel pole
    doc = ezdxf.readfile(write_profile_dxf(design, tmp_path / "p.dxf"))
    msp = doc.modelspace()
    lines = [e for e in msp if e.dxf.layer == "LAMINATIONS" and e.dxftype() == "LINE"]
    rp, length = design.source["pole"]["radius_mm"], design.source["pole"]["length_mm"]
    assert lines and all(e.dxf.start[0] == e.dxf.end[0] for e in lines)  # parallel to the axis
    assert all(-rp < e.dxf.start[0] < 0 and e.dxf.start[1] == -length for e in lines)
    (label,) = [e for e in msp if e.dxf.layer == "LAMINATIONS" and e.dxftype() == "MTEXT"]
    assert "sheets ∥ axis" in label.plain_text()
    # ISO 3098-0: 2.5 mm is the smallest standard lettering for dimensions at 1:1.
    dims = [e for e in msp if e.dxftype() == "DIMENSION"]
    assert min(e.get_dxf_attrib("char_height") for e in msp if e.dxftype() == "MTEXT") >= 2.5
    assert dims and all(e.override().get("dimtxt") >= 2.5 for e in dims)
    # A ferrite pole has no sheets: nothing on the layer.
    d = demo_dict()
    d["pole"]["material"] = "ferrite-mnzn"
    doc = ezdxf.readfile(write_profile_dxf(design_from_dict(d), tmp_path / "f.dxf"))
    assert not [e for e in doc.modelspace() if e.dxf.layer == "LAMINATIONS"]


@pytest.mark.slow
def test_verify_and_its_hand_off_on_a_design_with_two_warnings(tmp_path):
    import json

    from optim.morning.handoff import write_handoff
    from optim.morning.verify import run_verify

    d = demo_dict()
    d["target"]["gap_mm"] = 3.5  # outside the FEM-checked range twice: two warnings
    design = design_from_dict(d)
    # refine 0.5: the FEM's coarse level (as tests/optim/morning/test_handoff.py's real verification)
    checked = run_verify(design, refine=0.5)
    paths = write_handoff(design, evaluate(design), tmp_path, {"trial": 0}, verify=checked)
    data = json.loads(paths["handoff.json"].read_text(encoding="utf-8"))
    keys = {r["key"] for r in data["verify"]["rows"]}
    assert {"pull_N", "coil_impedance_ohm.re", "coil_impedance_ohm.im"} <= keys
    assert "FEM" in paths["verify.txt"].read_text(encoding="utf-8")


def test_pick_cards_show_the_pick_in_time_with_its_units():
    # issue 31: the cards carry the ripple, the chatter margin and the lift, each with its state
    # and its unit from the result field table (models.result.FIELDS); the values are the
    # trial's own row (no physics checked here)
    row = pd.Series(
        {
            "trial": 3,
            "gap_mm": 2.0,
            "pull_N": 0.01,
            "pull_ripple_N": 0.012,
            "hold_chatter_margin_N": -0.004,
            "pick_time_ms": 21.5,
            "contact_speed_m_per_s": 0.26,
            "centring_stiffness_N_per_m": float("nan"),
            "lateral_force_N": 0.0,
            "thermal_assumptions.hold_gap_mm": 0.1,
            "thermal_assumptions.hold_time_s": 0.3,
        }
    )
    items = dict(card_items(row, CardStates()))
    assert items["pull's swing at twice the frequency at 2.00 mm, arriving"] == "12 mN"
    key = "chatter margin (pull - swing - weight) held at 0.10 mm, the worse of arrival and the end"
    assert items[key + " of the hold"] == "-4 mN"
    assert items["lift time from 2.00 mm to 0.10 mm"] == "21.5 ms"
    assert items["speed at contact to 0.10 mm"] == "0.26 m/s"
    assert not any("centring" in k or "lateral" in k for k in items)  # not asked for, no offset
