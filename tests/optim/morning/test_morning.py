"""The morning after, end to end: a finished study's front files, report and hand-off, and the
demo command (the README's main job)."""

from __future__ import annotations

import csv
import json
import math
from html.parser import HTMLParser

import ezdxf
import numpy as np
import pandas as pd
import pytest

from models.design import load_design
from models.evaluate import evaluate
from optim.cli import main
from optim.demo import DEMO_STUDY
from optim.morning.outputs import design_of
from optim.study.records import RESULT_NAMES_ATTR, StoredRecord
from optim.study.run import run_study
from optim.study.spec import load_study_spec, spec_from_json
from optim.study.storage import load_existing


@pytest.fixture(scope="module")
def finished(tmp_path_factory):
    """The demo study (thermal coupling, worst pull over three gaps), 40 trials, 2 workers."""
    folder = tmp_path_factory.mktemp("morning") / "study"
    spec = load_study_spec(DEMO_STUDY)
    run_study(spec, folder, workers=2, trials=40, echo=lambda *_: None, tty=False, salt=0)
    return folder


@pytest.mark.slow
def test_front_files_hold_exactly_the_feasible_non_dominated_trials(finished, capsys):
    assert main(["study", "front", str(finished)]) == 0
    study, spec_json, _ = load_existing(finished)
    # Reference: optuna's constrained Pareto front of the stored trials, each design once (the
    # first of equal trials: a repeat is copied, optim.study.engine).
    seen, expected = set(), set()
    for t in sorted(study.best_trials, key=lambda t: t.number):
        key = tuple(sorted(t.params.items()))
        if key not in seen:
            seen.add(key)
            expected.add(t.number)
    front = pd.read_csv(finished / "front.csv")
    assert set(front["trial"]) == expected
    assert (
        front["feasible"].all() and (front["state"] == "done").all()
    )  # our words, not the storage's
    parquet = pd.read_parquet(finished / "front.parquet")
    assert list(parquet["trial"]) == list(front["trial"])
    for column in (
        "worst_lift_ratio",
        "input_power_W",
        "ring_depth_mm",
        "frequency_Hz",
        "pole_radius_mm",
        "ring_temperature_C",
        "constraint_margin.core_flux_fraction",
    ):
        assert column in front.columns
    html = (finished / "report.html").read_text(encoding="utf-8")

    class Rows(HTMLParser):
        def __init__(self):
            super().__init__()
            self.cells, self.in_td = [], False

        def handle_starttag(self, tag, attrs):
            self.in_td = tag == "td"

        def handle_data(self, data):
            if self.in_td:
                self.cells.append(data.strip())

    parser = Rows()
    parser.feed(html)
    for t in expected:
        assert str(t) in parser.cells
    assert "licensed" in html and "implant" in html  # the cautions
    pngs = sorted(p.name for p in (finished / "plots").glob("*.png"))
    assert any(p.startswith("front_") for p in pngs) and "pull_vs_gap.png" in pngs
    assert len(list((finished / "plots").glob("*.svg"))) == len(pngs)
    # What the morning reads has the journal's mode (the umask's), not owner-only.
    mode = (finished / "journal.log").stat().st_mode & 0o777
    for path in (
        "front.csv",
        "front.parquet",
        "trials.csv",
        "report.html",
        *(finished / "plots").iterdir(),
    ):
        assert (finished / path).stat().st_mode & 0o777 == mode, path


@pytest.mark.slow
def test_export_reproduces_the_stored_numbers(finished, tmp_path, capsys):
    out = tmp_path / "handoff"
    assert (
        main(["study", "export", str(finished), "--best", "worst_lift_ratio", "--out", str(out)])
        == 0
    )
    info = json.loads((out / "handoff.json").read_text())
    study, spec_json, _ = load_existing(finished)
    trial = study.trials[info["study"]["trial"]]
    # The trial's own design still reproduces the stored numbers (the model did not change) ...
    stored = dict(
        zip(
            study.user_attrs[RESULT_NAMES_ATTR],
            StoredRecord.of(trial.user_attrs).results,
            strict=True,
        )
    )
    unrounded = evaluate(design_of(spec_from_json(spec_json), trial.params))
    for name in ("pull_N", "input_power_W", "ring_loss_W", "coil_temperature_C"):
        assert math.isclose(getattr(unrounded, name), stored[name], rel_tol=1e-12), name
    assert info["study"]["stored_results_match"] is True
    # ... and the hand-off is that design rounded to 0.01 mm, with its own results: design.toml
    # re-evaluates exactly to handoff.json's predicted numbers (the study ran with coupling).
    again = evaluate(load_design(out / "design.toml"))
    for name in ("pull_N", "input_power_W", "ring_loss_W", "coil_temperature_C"):
        # handoff.json states its results to 4 significant digits (STATED_RESOLUTION)
        assert info["predicted"][name] == pytest.approx(getattr(again, name), rel=5e-4), name
    rounding = info["rounding"]
    assert rounding["resolution_mm"] == 0.01
    assert rounding["constraints_met"] == all(
        m >= 0 for m in rounding["constraint_margins"].values()
    )
    assert set(rounding["constraint_margins"]) == set(spec_json["constraints"])
    with (out / "parameters.csv").open(encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    by_name = {r["name"]: r for r in rows}
    assert by_name["ring_depth_mm"]["unit"] == "mm"
    depth = float(by_name["ring_depth_mm"]["value"])
    assert abs(depth - trial.params["ring_depth_mm"]) <= 0.005 + 1e-12  # nearest 0.01 mm
    assert len(repr(depth).split(".")[1]) <= 2
    doc = ezdxf.readfile(out / "profile.dxf")
    assert {"POLE", "RING", "COIL", "TARGET", "AXIS"} <= {layer.dxf.name for layer in doc.layers}
    assert doc.header["$INSUNITS"] == 4  # millimetres


@pytest.mark.slow
def test_export_refuses_a_failed_or_missing_trial(finished, capsys):
    assert main(["study", "export", str(finished), "--trial", "100000"]) == 2
    assert "--trial 100000: must be a trial number" in capsys.readouterr().err
    assert main(["study", "export", str(finished), "--best", "pull_N"]) == 2
    assert "--best 'pull_N': must be one of the objectives" in capsys.readouterr().err


@pytest.mark.slow
def test_demo_command_runs_the_main_job(tmp_path, capsys):
    assert main(["demo", "--trials", "16", "--workers", "1", "--out", str(tmp_path)]) == 0
    out = capsys.readouterr().out
    assert "report" in out and (tmp_path / "report.html").exists()
    assert (tmp_path / "front.csv").exists() and (tmp_path / "journal.log").exists()
    if "no feasible design yet" not in out:
        # the hand-off folder has the name `study export` gives it: handoff-trial-N
        (dxf,) = tmp_path.glob("handoff-trial-*/profile.dxf")
        assert f"{dxf.parent}" in out
    assert "licensed professional" in out


def test_a_large_trials_table_is_written_by_arrow_and_reads_back_the_same(tmp_path, monkeypatch):
    """trials.csv above LARGE_TABLE rows goes through pyarrow's CSV writer: pandas reads it
    back as it reads the pandas-written file (times compared as times: Arrow writes a "Z")."""
    import optim.morning.outputs as outputs

    rng = np.random.default_rng(4)
    n = 500
    df = pd.DataFrame({f"r{i}": rng.random(n) for i in range(4)})
    df.loc[::7, "r1"] = np.nan
    df["state"] = np.where(rng.random(n) < 0.5, "done", "failed")
    df["feasible"] = rng.random(n) < 0.5
    df["completed_at"] = pd.to_datetime(rng.random(n) * 1e9, unit="s", utc=True)
    df["turns"] = pd.array(rng.integers(1, 500, n), dtype="Int64")
    df.loc[5, "turns"] = pd.NA
    df["warnings"] = np.where(rng.random(n) < 0.2, 'below range, "cold" | pull small', "")
    monkeypatch.setattr(outputs, "LARGE_TABLE", 10)
    outputs._write_trials_csv(tmp_path / "arrow.csv", df)
    monkeypatch.setattr(outputs, "LARGE_TABLE", 10**9)
    outputs._write_trials_csv(tmp_path / "pandas.csv", df)
    a, b = pd.read_csv(tmp_path / "arrow.csv"), pd.read_csv(tmp_path / "pandas.csv")
    for frame in (a, b):
        frame["completed_at"] = pd.to_datetime(frame["completed_at"], utc=True)
    pd.testing.assert_frame_equal(a, b)
