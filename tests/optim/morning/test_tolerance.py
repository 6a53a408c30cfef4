"""Tolerance tables (optim/study/tolerance.py, ``eddypull tolerance``): the linear estimate
against the Monte Carlo spread, the central differences, the material keys, the tolerance file's
errors and the files written."""

from __future__ import annotations

import csv
import json
import math
from types import SimpleNamespace

import pandas as pd
import pytest

from models.design import load_design, with_value
from models.evaluate import evaluate
from optim.cli import main
from optim.study.tolerance import (
    DEFAULTS,
    OUTPUTS,
    parse_tolerance_table,
    run_tolerance,
    tolerances_for,
    varied_design,
)
from tests.conftest import DEMO


def _tenth_of_the_defaults(design) -> dict:
    """Every default tolerance at a tenth of its half-width (the drive's current too)."""
    spec = {k: (v / 10, rel) for k, (v, rel) in DEFAULTS.items()}
    spec["drive.current_A"] = (0.002, True)
    return spec


def _linear_stand_in(design, isothermal):
    """A result-like object linear in four keys (a stand-in for the model, ~0.3 ms): its
    sensitivities are exact, so the statistics alone are under test."""
    gap = design.target.gap * 1e3
    depth = design.ring.depth * 1e3
    sigma = design.ring.conductivity / 58e6
    amps = design.drive.current
    value = 3.0 - 0.5 * gap + 0.2 * depth + 0.4 * sigma + 0.1 * amps
    values = {name: value * (k + 1) for k, (name, *_) in enumerate(OUTPUTS)}
    return SimpleNamespace(**values, margins={"coil_temperature_C": value - 3.05})


def test_monte_carlo_spread_of_a_linear_model_matches_the_root_sum_square():
    """A sum of independent uniform effects delta_i u_i has the variance sum delta_i^2 / 3 (a
    textbook identity), the variance of a uniform spread of half-width RSS = sqrt(sum
    delta_i^2). Its 5-95 % span is 1.8 RSS for one term and up to 7.5 % more for a sum (1.075
    for two equal terms, a triangular spread; 1.055 for a normal one: by numerical integration,
    from memory of the shapes), so the span of 2,000 seeded samples lies 0.97-1.11 x the
    linear one (3 %: the percentiles' sampling error at that size)."""
    design = load_design(DEMO)
    spec = {
        "target.gap_mm": (0.2, False),
        "ring.depth_mm": (0.3, False),
        "ring.conductivity_S_per_m": (0.05, True),
        "drive.current_A": (0.02, True),
    }
    tols = [t for t in tolerances_for(design, spec) if t.key in spec]
    study = run_tolerance(design, tols, samples=2000, seed=3, evaluator=_linear_stand_in)
    effects = {s["key"]: s["effect"]["pull_N"] for s in study.sensitivities}
    assert effects["target.gap_mm"] == pytest.approx(-0.5 * 0.2, rel=1e-9)  # the slope x h
    assert effects["ring.depth_mm"] == pytest.approx(0.2 * 0.3, rel=1e-9)
    for name, *_ in OUTPUTS:
        assert 0.97 < study.spread[name]["span_ratio"] < 1.11
        assert not study.spread[name]["disagree"]
    # the limit: margin value - 3.05 >= 0 (nominal value 3.1): the share of samples above it
    kept = [r["outputs"]["pull_N"] >= 3.05 for r in study.samples]
    assert study.limits["coil_temperature_C"] == pytest.approx(sum(kept) / len(kept))
    assert 0.5 < study.limits["coil_temperature_C"] < 0.9


@pytest.mark.slow
def test_linear_estimate_agrees_with_monte_carlo_for_small_tolerances():
    """The demo design under a tenth of every default tolerance: the fast model is close to
    linear over such small changes, so the root-sum-square of the central differences, as a
    uniform spread, gives the Monte Carlo 5-95 % span of 200 seeded samples within 15 % (the
    percentiles of 200 samples carry about 7 % sampling error; a sum of uniform effects spreads
    up to 7.5 % wider than the one uniform spread of the same variance)."""
    design = load_design(DEMO)
    tols = tolerances_for(design, _tenth_of_the_defaults(design))
    study = run_tolerance(design, tols, samples=200, seed=1)
    assert study.refused == 0
    for name, *_ in OUTPUTS:
        ratio = study.spread[name]["span_ratio"]
        assert math.isfinite(ratio) and abs(ratio - 1.0) < 0.15, (name, ratio)


def test_central_differences_are_the_models_own(tmp_path):
    """The gap's sensitivity is (f(g + h) - f(g - h)) / 2 of two evaluations of the fast model
    with the gap moved by hand; the same seed draws the same samples."""
    design = load_design(DEMO)
    tols = [t for t in tolerances_for(design) if t.key in ("target.gap_mm", "drive.current_A")]
    a = run_tolerance(design, tols, samples=10, seed=5, isothermal=True)
    gap = design.target.gap * 1e3
    plus = evaluate(with_value(design, "target.gap_mm", gap + 0.2), isothermal=True)
    minus = evaluate(with_value(design, "target.gap_mm", gap - 0.2), isothermal=True)
    s = next(s for s in a.sensitivities if s["key"] == "target.gap_mm")
    assert s["effect"]["pull_N"] == pytest.approx((plus.pull_N - minus.pull_N) / 2, rel=1e-12)
    assert s["sided"] == "central"
    b = run_tolerance(design, tols, samples=10, seed=5, isothermal=True)
    assert [r["deltas"] for r in a.samples] == [r["deltas"] for r in b.samples]
    assert all(abs(r["deltas"]["target.gap_mm"]) <= 0.2 for r in a.samples)


def test_conductivity_and_permeability_are_varied_with_the_material_kept():
    """A ring named by its material keeps the name (its heat capacity and melting point) while
    its conductivity moves; the file cannot say both, so the design itself is varied."""
    design = load_design(DEMO)
    moved = varied_design(
        design,
        {
            "ring.conductivity_S_per_m": 0.05 * 58e6,
            "pole.relative_permeability": -400.0,
            "ring.depth_mm": 0.05,
        },
    )
    assert moved.ring.material == "copper"
    assert moved.ring.conductivity == pytest.approx(1.05 * 58e6)  # IEC 60028 copper, +5 %
    assert moved.ring.depth == pytest.approx(3.05e-3)
    assert moved.pole.relative_permeability == pytest.approx(
        design.pole.relative_permeability - 400
    )
    assert moved.pole.material == design.pole.material
    r = evaluate(moved, isothermal=True)
    assert not any("not named" in w for w in r.warnings)


def test_a_tolerance_file_overrides_the_defaults():
    design = load_design(DEMO)
    spec = parse_tolerance_table(
        {"ring.depth_mm": 0.1, "drive.frequency_Hz": "1 %", "target.gap_mm": 0}, design
    )
    tols = {t.key: t for t in tolerances_for(design, spec)}
    assert tols["ring.depth_mm"].half_width == 0.1 and tols["ring.depth_mm"].origin != "default"
    assert tols["drive.frequency_Hz"].half_width == pytest.approx(4.0)  # 1 % of 400 Hz
    assert "target.gap_mm" not in tols  # zero: no tolerance
    assert tols["pole.radius_mm"].half_width == 0.02  # a default kept


@pytest.mark.parametrize(
    "text, message",
    [
        ('"ring.depht_mm" = 0.1', "tolerances.ring.depht_mm = 0.1: not a design key"),
        ('"ring.depth_mm" = -0.1', "tolerances.ring.depth_mm = -0.1: must be a half-width >= 0"),
        ('"drive.frequency_Hz" = "1 percent"', "tolerances.drive.frequency_Hz = '1 percent'"),
        ('"drive.frequency_Hz" = "100 %"', "(0 to less than 100 %)"),
        ('"ring.material" = 0.1', "tolerances.ring.material = 0.1: ring.material is not a"),
        ('"coil.turns" = 2', "tolerances.coil.turns = 2: coil.turns is a whole number"),
        ('"drive.voltage_V" = "2 %"', "tolerances.drive.voltage_V = '2 %': the design has no"),
        ("radius_mm = 0.1", "tolerances.radius_mm = 0.1: ambiguous; write one of pole.radius_mm"),
        ("gapp_mm = 0.1", "tolerances.gapp_mm = 0.1: not a design key"),
        ('"ring.depth_mm" = true', "tolerances.ring.depth_mm = True"),
    ],
)
def test_a_bad_tolerance_file_is_one_line_and_exit_2(text, message, tmp_path, capsys):
    spec = tmp_path / "tol.toml"
    spec.write_text(f"[tolerances]\n{text}\n", encoding="utf-8")
    assert main(["tolerance", str(DEMO), "--spec", str(spec)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("eddypull: error: "), err
    assert message in err[0]


@pytest.mark.parametrize(
    "text, message",
    [
        ("[tolerance]\nx = 1\n", "tolerance: unknown table or key in the tolerance file"),
        ("", "[tolerances]: missing table"),
        ("name = 'x'\n", "name: unknown table or key in the tolerance file"),
        ("[tolerances\n", "not valid TOML"),
    ],
)
def test_a_malformed_tolerance_file_is_one_line_and_exit_2(text, message, tmp_path, capsys):
    spec = tmp_path / "tol.toml"
    spec.write_text(text, encoding="utf-8")
    assert main(["tolerance", str(DEMO), "--spec", str(spec)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and message in err[0]


@pytest.mark.parametrize(
    "flags, message",
    [(["--samples", "3"], "--samples = 3"), (["--seed", "-1"], "--seed = -1")],
)
def test_bad_tolerance_flags_exit_2(flags, message, capsys):
    assert main(["tolerance", str(DEMO), *flags]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and message in err[0]


def test_cli_writes_text_json_and_csv_that_parse(tmp_path, capsys):
    out = tmp_path / "tol"
    assert main(["tolerance", str(DEMO), "--samples", "10", "--out", str(out), "--json"]) == 0
    doc = json.loads(capsys.readouterr().out, parse_constant=lambda c: pytest.fail(c))
    assert doc["samples"] == 10 and doc["defaults_source"] == "common practice, no source"
    assert {t["key"] for t in doc["tolerances"]} >= {"target.gap_mm", "drive.current_A"}
    lift = [abs(s["effect"]["lift_ratio"]) for s in doc["sensitivities"]]
    assert lift == sorted(lift, reverse=True)  # ranked by the effect on lift ratio
    assert set(doc["limits_kept"]) >= {"coil_temperature_C", "all limits"}
    on_disk = json.loads((out / "tolerance.json").read_text(encoding="utf-8"))
    assert on_disk["spread"].keys() == doc["spread"].keys()
    text = (out / "tolerance.txt").read_text(encoding="utf-8")
    assert "common practice, no source" in text and "limits kept" in text
    sens = pd.read_csv(out / "tolerance_sensitivity.csv")
    assert len(sens) == len(doc["tolerances"]) and "lift_ratio" in sens.columns
    spread = pd.read_csv(out / "tolerance_spread.csv")
    assert list(spread["output"]) == [name for name, *_ in OUTPUTS]
    with (out / "tolerance_samples.csv").open(encoding="utf-8") as fh:
        assert len(list(csv.DictReader(fh))) == 10


def test_text_table_names_every_tolerance_and_output(capsys):
    assert main(["tolerance", str(DEMO), "--samples", "10", "--isothermal"]) == 0
    text = capsys.readouterr().out
    for key in ("ring.depth_mm", "pole.relative_permeability", "drive.frequency_Hz"):
        assert key in text
    for _, words, *_ in OUTPUTS:
        assert words in text
