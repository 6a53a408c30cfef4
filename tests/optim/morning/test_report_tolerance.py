"""The first pick's tolerance table in the study report (``study front``; ``--no-tolerance``
leaves it out), its samples evaluated as the study evaluates a trial, and a magnet tolerance
reaching every part of a family.

References: the study engine's own margins (``optim.study.engine.evaluate_trial``) and the
model's entry point (``models.evaluate.evaluate_pick_gaps``) on the same designs: identities.
No published values.
"""

from __future__ import annotations

import dataclasses
import re

import pytest

from models.design import load_design
from models.evaluate import evaluate_pick_gaps
from optim.cli import main
from optim.morning import robustness
from optim.morning.outputs import design_of
from optim.study.engine import evaluate_trial
from optim.study.family import family_results, part_design
from optim.study.parts import Part
from optim.study.spec import load_study_spec
from tests.conftest import DEMO

SMALL = (
    "[search]\nfrequency_Hz = { low = 200.0, high = 600.0 }\n"
    '[objectives]\npull_N = "maximize"\n'
    "[constraints]\nring_temperature_C = { max = 180.0 }\nworst_lift_ratio = { min = 1.0 }\n"
    "[robust]\ngap_min_mm = 1.5\ngap_max_mm = 3.0\npoints = 2\n"
    '[run]\ntrials = 3\nisothermal = true\nsampler = "random"\nseed = 2\n'
)


@pytest.fixture(scope="module")
def small_study(tmp_path_factory):
    """A three-trial study of the demo design over frequency (isothermal, two gaps, two
    constraints). Returns (study file, study folder)."""
    root = tmp_path_factory.mktemp("reporttol")
    spec = root / "small.toml"
    spec.write_text(f'name = "small"\ndesign = "{DEMO.as_posix()}"\n{SMALL}', encoding="utf-8")
    out = root / "out"
    assert main(["study", "run", str(spec), "--out", str(out)]) == 0
    return spec, out


def _section(html: str) -> str:
    return html.split("<h2>Tolerances of ", 1)[1].split("<h2>", 1)[0]


def test_the_report_shows_the_first_picks_tolerance_table(small_study, monkeypatch, capsys):
    _, folder = small_study
    monkeypatch.setattr(robustness, "REPORT_TOLERANCE", True)  # the default outside the tests
    monkeypatch.setattr(robustness, "REPORT_SAMPLES", 10)
    assert main(["study", "front", str(folder)]) == 0
    printed = capsys.readouterr().out
    html = (folder / "report.html").read_text(encoding="utf-8")
    picked = re.search(r"<h3>Trial (\d+): ([^<]+)</h3>", html)  # the first pick's card
    assert f"<h2>Tolerances of trial {picked[1]}</h2>" in html
    assert html.index("<h2>Tolerances of") < html.index("<h2>Summary</h2>")
    section = _section(html)
    assert "10 Monte Carlo samples (seed 1" in section
    assert "takes 200 samples" in section  # the hand-off's own count beside it
    assert "largest effect on the lift ratio" in section
    for name in ("target.gap_mm", "pull [mN]", "5 %", "50 %", "95 %"):
        assert name in section, name
    for constraint in ("ring_temperature_C &lt;= 180", "worst_lift_ratio &gt;= 1"):
        assert re.search(rf"{constraint}</td><td>\d+\.\d %</td>", section), constraint
    assert f"tolerances    trial {picked[1]}: 10 samples" in printed


def test_no_tolerance_leaves_it_out(small_study, monkeypatch, tmp_path, capsys):
    _, folder = small_study
    monkeypatch.setattr(robustness, "REPORT_TOLERANCE", True)
    out = tmp_path / "front"
    assert main(["study", "front", str(folder), "--out", str(out), "--no-tolerance"]) == 0
    assert "tolerances " not in capsys.readouterr().out
    assert "<h2>Tolerances of" not in (out / "report.html").read_text(encoding="utf-8")


@pytest.mark.parametrize("command", [["study", "front"], ["demo"]])
def test_no_tolerance_is_in_the_help(command, capsys):
    with pytest.raises(SystemExit) as stop:
        main([*command, "--help"])
    assert stop.value.code == 0
    text = capsys.readouterr().out
    assert "--no-tolerance" in text and "--no-pick-maps" in text


def test_a_sample_is_evaluated_as_the_study_evaluates_a_trial(small_study):
    """The evaluator's constraint margins are the engine's for the same trial (identity: the
    same evaluation), its outputs the model's flat results of those names."""
    spec_path, _ = small_study
    spec = load_study_spec(spec_path)
    values = {"frequency_Hz": 400.0}
    engine = evaluate_trial(spec, values)
    sample = robustness.study_evaluator(spec)(design_of(spec, values), True)
    prefix = robustness.CONSTRAINT_PREFIX
    assert {k[len(prefix) :]: v for k, v in sample.margins.items() if k.startswith(prefix)} == {
        "ring_temperature_C <= 180": engine.margins["ring_temperature_C"],
        "worst_lift_ratio >= 1": engine.margins["worst_lift_ratio"],
    }
    assert sample.pull_N == engine.flat["pull_N"]
    assert sample.margins["coil_temperature_C"] == engine.flat["margins.coil_temperature_C"]


def test_a_magnet_tolerance_reaches_every_part_of_a_family():
    """A ring conductivity moved on the validated design (as a tolerance table moves it) moves
    the leave part's pulls too, to what the model gives that part under that ring (isothermal:
    the same steps, 1e-9)."""
    cap = {"thickness_mm": 0.6, "material": "aluminium-1350"}
    lift = Part("cap10", "lift", {"radius_mm": 5.0, **cap}, (1.5, 3.0))
    leave = Part("cap16", "leave", {"radius_mm": 8.0, **cap}, (1.5, 3.0))
    design = part_design(load_design(DEMO), lift)
    ring = dataclasses.replace(design.ring, conductivity=0.9 * design.ring.conductivity)
    varied = dataclasses.replace(design, ring=ring)
    assert part_design(varied, leave).ring == ring
    flat, _, _ = family_results(varied, (lift, leave), isothermal=True)
    nominal, _, _ = family_results(design, (lift, leave), isothermal=True)
    other = dataclasses.replace(part_design(design, leave), ring=ring)
    result, pulls = evaluate_pick_gaps(other, (1.5, 3.0), isothermal=True)
    best = max(*pulls, result.pull_hold_N)
    assert flat["parts.cap16.best_pull_N"] == pytest.approx(best, rel=1e-9)
    assert abs(flat["parts.cap16.best_pull_N"] - nominal["parts.cap16.best_pull_N"]) > 1e-3 * abs(
        best
    )  # a 10 % change of the ring's conductivity shows (common practice, no source)
