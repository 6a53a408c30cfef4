"""The tolerance table and pick map in the hand-off (``study export --tolerance``) and the pick
maps of the picked designs in the study report (optim/morning/robustness.py)."""

from __future__ import annotations

import json
import re

import pandas as pd
import pytest

from optim.cli import main
from optim.morning import robustness
from tests.conftest import DEMO

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # the PNG specification (ISO/IEC 15948), section 5.2


@pytest.fixture(scope="module")
def small_study(tmp_path_factory):
    """A three-trial study of the demo design over frequency (isothermal, random sampler)."""
    root = tmp_path_factory.mktemp("robust")
    spec = root / "small.toml"
    spec.write_text(
        f'name = "small"\ndesign = "{DEMO.as_posix()}"\n'
        "[search]\nfrequency_Hz = { low = 200.0, high = 600.0 }\n"
        '[objectives]\npull_N = "maximize"\n'
        '[run]\ntrials = 3\nisothermal = true\nsampler = "random"\nseed = 2\n',
        encoding="utf-8",
    )
    out = root / "out"
    assert main(["study", "run", str(spec), "--out", str(out)]) == 0
    return out


def test_report_shows_a_pick_map_of_each_picked_design(small_study, monkeypatch, capsys):
    monkeypatch.setattr(robustness, "REPORT_PICK_MAPS", True)  # the default outside the tests
    monkeypatch.setattr(robustness, "REPORT_POINTS", 3)
    assert main(["study", "front", str(small_study)]) == 0
    capsys.readouterr()
    maps = sorted((small_study / "plots").glob("pickmap_trial-*.png"))
    assert len(maps) == 1  # one objective: one pick, its best design
    assert maps[0].read_bytes()[:8] == PNG_SIGNATURE
    assert maps[0].with_suffix(".csv").exists() and maps[0].with_suffix(".svg").exists()
    html = (small_study / "report.html").read_text(encoding="utf-8")
    assert "<h2>Pick maps</h2>" in html
    section = html.split("<h2>Pick maps</h2>", 1)[1].split("<h2>", 1)[0]
    assert (
        len(re.findall(r'<img alt="pickmap_trial-\d+" src="data:image/png;base64,', section)) == 1
    )
    assert "3 x 3 points" in section


def test_no_pick_maps_leaves_them_out(small_study, monkeypatch, tmp_path, capsys):
    monkeypatch.setattr(robustness, "REPORT_PICK_MAPS", True)
    out = tmp_path / "front"
    assert main(["study", "front", str(small_study), "--out", str(out), "--no-pick-maps"]) == 0
    capsys.readouterr()
    assert not list((out / "plots").glob("pickmap_*"))
    assert "<h2>Pick maps</h2>" not in (out / "report.html").read_text(encoding="utf-8")


def test_export_tolerance_writes_the_table_and_the_map(small_study, monkeypatch, capsys):
    monkeypatch.setattr(robustness, "HANDOFF_POINTS", 3)
    monkeypatch.setattr(robustness, "HANDOFF_SAMPLES", 10)
    argv = ["study", "export", str(small_study), "--best", "pull_N", "--out", "tol"]
    assert main([*argv, "--tolerance"]) == 0
    printed = capsys.readouterr().out
    folder = small_study / "tol"
    for name in (
        "design.toml",
        "tolerance.txt",
        "tolerance.json",
        "tolerance_sensitivity.csv",
        "tolerance_spread.csv",
        "tolerance_samples.csv",
        "pickmap_target.radius_mm__target.gap_mm.png",
        "pickmap_target.radius_mm__target.gap_mm.svg",
        "pickmap_target.radius_mm__target.gap_mm.csv",
    ):
        assert (folder / name).stat().st_size > 0, name
        assert name in printed
    doc = json.loads((folder / "tolerance.json").read_text(encoding="utf-8"))
    assert doc["samples"] == 10 and doc["isothermal"] is True  # the study's own setting
    grid = pd.read_csv(folder / "pickmap_target.radius_mm__target.gap_mm.csv")
    assert len(grid) == 9
    # the map is centred on the exported design's own part radius and gap
    design_gap = float(re.search(r"gap_mm = ([0-9.]+)", (folder / "design.toml").read_text())[1])
    assert grid["target.gap_mm"].min() < design_gap < grid["target.gap_mm"].max()
