"""A study judged as built (optim/study/built.py, issue 30): the quantile judgement against an
exact case and a brute Monte Carlo, the study file's errors, the added columns, and a nominal
study unchanged where ``built_probability`` is absent."""

from __future__ import annotations

import copy
import math
import tomllib

import numpy as np
import pytest

from optim.cli import main
from optim.study.built import (
    CAPACITOR_TOLERANCE,
    CURRENT_TOLERANCE,
    built_names,
    judge_built,
    linear_values,
    quantiles_of,
    study_tolerances,
)
from optim.study.engine import evaluate_trial
from optim.study.objectives import Constraint, Objective
from optim.study.spec import spec_from_dict
from tests.conftest import ROOT

DEMO_STUDY = ROOT / "optim" / "demo" / "demo_study.toml"
BASE_VALUES = {  # a feasible-looking middle of the demo's search (series capacitor)
    "ring_outer_fraction": 0.7,
    "ring_inner_fraction": 0.5,
    "ring_depth_mm": 3.0,
    "pole_radius_mm": 10.0,
    "frequency_Hz": 400.0,
    "current_A": 4.0,
    "pole_material": "electrical-steel-m270",
    "drive.compensation": "series",
}


def _study(**robust) -> dict:
    """The demo study with the [robust] keys ``robust`` in place of its built_* keys."""
    data = tomllib.loads(DEMO_STUDY.read_text())
    gaps = {k: v for k, v in data["robust"].items() if not k.startswith("built_")}
    data["robust"] = {**gaps, **robust}
    return data


def _spec(data: dict):
    return spec_from_dict(copy.deepcopy(data), folder=DEMO_STUDY.parent, name="demo")


# ----------------------------------------------------------------------------- the judgement
def test_quantile_of_a_result_linear_in_two_uniform_tolerances_is_exact():
    """x = 2 u1 + 1 u2, u uniform in [-1, 1]: a trapezoidal density (the convolution of two
    boxes, any probability text); its upper tail beyond x in [a - b, a + b] is (a + b - x)^2 /
    (8 a b), so its 95 % quantile is a + b - sqrt(8 a b 0.05) = 3 - sqrt(0.8) = 2.1056 (hand
    computed) and its 5 % quantile the negative by symmetry. 4096 Sobol points: a share within
    ~2/4096 (0.0005); the density there is (a + b - x) / (4 a b) = 0.112, so the quantile within
    0.0005 / 0.112 = 0.005; compared at 0.01."""
    exact = 3.0 - math.sqrt(0.8)
    values = linear_values([0.0, 0.0], [[2.0, 1.0], [2.0, 1.0]])
    out = quantiles_of(
        {"x": values[0], "y": values[1]},
        0.95,
        [Objective("y", "maximize")],
        [Constraint("x", high=exact)],
    )
    assert out["x_built"] == pytest.approx(exact, abs=0.01)
    assert out["objective_built.y"] == pytest.approx(-exact, abs=0.01)
    assert out["built_share.x"] == pytest.approx(0.95, abs=0.002)
    assert out["built_share_all"] == out["built_share.x"]


def test_a_lower_limit_is_judged_at_the_low_quantile_and_refused_magnets_keep_nothing():
    """Four built magnets 1, 2, 3 and one refused (nan): the share keeping x >= 1.5 is 2 of 4;
    the low quantile counts the refused one as the worst (numpy's linear quantile of -inf, 1,
    2, 3 at 0.5 is 1.5, by numpy's definition)."""
    out = quantiles_of(
        {"x": np.array([1.0, 2.0, 3.0, np.nan])}, 0.5 + 1e-12, [], [Constraint("x", low=1.5)]
    )
    assert out["built_share.x"] == 0.5
    assert out["x_built"] == pytest.approx(1.5, abs=1e-9)


def test_the_study_tolerances_follow_the_study():
    """No gap tolerance where the study ranges the gap; the current +-2 % (common practice, no
    source); a fixed capacitor +-5 % (common practice, no source)."""
    spec = _spec(_study(built_probability=0.95))
    from optim.study.space import build_design

    design = build_design(spec.base, spec.params, BASE_VALUES, "x")
    from models.design import with_fixed_capacitor

    tols = {
        t.key: t
        for t in study_tolerances(with_fixed_capacitor(design, 20e-6), spec.built, spec.gaps_mm)
    }
    assert "target.gap_mm" not in tols
    assert tols["drive.current_A"].relative == CURRENT_TOLERANCE
    assert tols["drive.capacitance_uF"].half_width == pytest.approx(20 * CAPACITOR_TOLERANCE)


@pytest.mark.slow
def test_linear_estimate_against_a_brute_monte_carlo_on_the_real_model():
    """One demo design: the linear estimate's 95 % quantile of the supply voltage and input
    power must sit where a brute Monte Carlo of 200 seeded real-model samples puts between 90 %
    and 100 % of its magnets below it (0.95 +- 3 sqrt(0.95 0.05 / 200) = +-0.046: the binomial
    spread of a share, rounded out to 0.05; the linearisation adds its own error, which this
    bound must cover for a design this close to linear). The design has no capacitor: at a
    tuned series capacitor the supply voltage is |R + jX| with X = 0 at the nominal point, flat
    to first order, and the linear estimate misses its spread (measured: the linear 95 % value at
    the Monte Carlo's 80th percentile; the note's table shows it on the front). The supply's
    limit is set out of reach so that the design, infeasible in the demo (its lift), is judged."""
    data = _study(built_probability=0.95)
    data["constraints"] = {"supply_voltage_V": {"max": 10000.0}}
    spec = _spec(data)
    from optim.study.built import _as_built, _flat_of
    from optim.study.space import build_design
    from optim.study.tolerance import varied_design

    design = build_design(spec.base, spec.params, BASE_VALUES | {"drive.compensation": "none"}, "x")
    f = _flat_of(spec, False)
    flat = f(design)
    out = judge_built(design, spec, flat)
    built = _as_built(design, flat)
    tols = study_tolerances(built, spec.built, spec.gaps_mm)
    rng = np.random.default_rng(1)
    names = ("supply_voltage_V", "input_power_W")
    draws = {n: [] for n in names}
    for row in rng.uniform(-1, 1, size=(200, len(tols))):
        d = f(
            varied_design(built, {t.key: u * t.half_width for t, u in zip(tols, row, strict=True)})
        )
        for n in names:
            draws[n].append(d[n])
    for n in names:
        below = np.mean(np.asarray(draws[n]) <= out[f"{n}_built"])
        assert 0.90 <= below <= 1.0, (n, below)


# ----------------------------------------------------------------------------- the study file
@pytest.mark.parametrize(
    "robust, tolerances, message",
    [
        (
            {"built_probability": 1.0},
            None,
            "robust.built_probability = 1.0: must be a number between 0.5 and 1",
        ),
        (
            {"built_probability": 0.5},
            None,
            "robust.built_probability = 0.5: must be a number between 0.5 and 1",
        ),
        (
            {"built_probability": 0.9, "built_method": "exact"},
            None,
            "robust.built_method = 'exact'",
        ),
        (
            {"built_probability": 0.9},
            {"ring.dpth_mm": 0.1},
            "tolerances.ring.dpth_mm = 0.1: not a design key",
        ),
        (
            {"built_probability": 0.9},
            {"ring.depth_mm": -0.1},
            "tolerances.ring.depth_mm = -0.1: must be a half-width >= 0",
        ),
        ({}, {"ring.depth_mm": 0.1}, "[tolerances]: needs robust.built_probability"),
    ],
)
def test_a_bad_built_study_is_one_line_and_exit_2(robust, tolerances, message, tmp_path, capsys):
    data = _study(**robust)
    data["design"] = str(DEMO_STUDY.parent / "demo_design.toml")
    if tolerances is not None:
        data["tolerances"] = tolerances
    from optim.tomlwrite import dumps_toml as dumps

    path = tmp_path / "s.toml"
    path.write_text(dumps(data))
    assert main(["study", "results", str(path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and message in err[0], err


# ----------------------------------------------------------------------------- the trial
@pytest.mark.slow
def test_a_built_trial_carries_its_columns_and_is_judged_on_them():
    """Every built column is a result name of the study and is in the trial's flat results;
    the trial's constraint margins are taken at the built quantiles."""
    spec = _spec(_study(built_probability=0.95))
    names = built_names(spec.objectives, spec.constraints)
    assert set(names) <= set(spec.result_names)
    assert "supply_voltage_V_built" in names and "built_share.supply_voltage_V" in names
    assert "built_share_all" in names and "input_power_W_built" in names
    out = evaluate_trial(spec, BASE_VALUES)
    assert out.state == "COMPLETE", out.reason
    assert set(names) <= set(out.flat)
    assert out.margins["supply_voltage_V"] == pytest.approx(
        230.0 - out.flat["supply_voltage_V_built"]
    )
    assert out.flat["supply_voltage_V_built"] >= out.flat["supply_voltage_V"] - 1e-9
    i = [o.name for o in spec.objectives].index("input_power_W")
    assert out.values[i] == out.flat["input_power_W_built"]


def test_a_study_without_built_probability_is_the_nominal_study(tmp_path):
    """Absent ``built_probability``: no built column, no ``built`` key stored, the stored spec
    (and so its fingerprint) as before, and the trial identical to one evaluated from the
    nominal results alone."""
    data = _study()
    spec = _spec(data)
    assert spec.built is None
    assert not [n for n in spec.result_names if "built" in n]
    assert spec.to_json()["robust"] == {"gap_min_mm": 1.5, "gap_max_mm": 3.0, "points": 3}
    assert "tolerances" not in spec.to_json()
    with_built = _spec(_study(built_probability=0.95))
    assert with_built.fingerprint() != spec.fingerprint()
    from optim.study.spec import spec_from_json

    assert spec_from_json(with_built.to_json()).built == with_built.built
    out = evaluate_trial(spec, BASE_VALUES)
    from optim.study.objectives import results_of
    from optim.study.space import build_design

    flat, _, _ = results_of(build_design(spec.base, spec.params, BASE_VALUES, "demo"), spec.gaps_mm)
    assert out.flat == flat
    assert out.values == [flat[o.name] for o in spec.objectives]


def test_columns_names_are_listed_for_every_constraint():
    names = built_names(
        [Objective("a", "maximize")], [Constraint("b", high=1.0), Constraint("a", low=0.0)]
    )
    assert names == ["b_built", "a_built", "built_share.b", "built_share.a", "built_share_all"]


# ----------------------------------------------------------------------------- the study's outputs
@pytest.fixture(scope="module")
def built_study(tmp_path_factory):
    """A three-trial study of the demo design over frequency, judged as built (isothermal)."""
    from tests.conftest import DEMO

    root = tmp_path_factory.mktemp("built")
    spec = root / "small.toml"
    spec.write_text(
        f'name = "small"\ndesign = "{DEMO.as_posix()}"\n'
        "[search]\nfrequency_Hz = { low = 200.0, high = 600.0 }\n"
        '[objectives]\npull_N = "maximize"\n'
        "[constraints]\ninput_power_W = { max = 1e6 }\n"
        "[robust]\nbuilt_probability = 0.9\n"
        '[tolerances]\n"ring.depth_mm" = 0.05\n"drive.frequency_Hz" = "2 %"\n'
        '[run]\ntrials = 3\nisothermal = true\nsampler = "random"\nseed = 2\n',
        encoding="utf-8",
    )
    out = root / "out"
    assert main(["study", "run", str(spec), "--out", str(out)]) == 0
    return out


def test_a_built_study_runs_and_its_tables_carry_the_built_columns(built_study, capsys):
    import pandas as pd

    assert main(["study", "front", str(built_study)]) == 0
    capsys.readouterr()
    trials = pd.read_csv(built_study / "trials.csv")
    for name in (
        "pull_N_built",
        "input_power_W_built",
        "built_share.input_power_W",
        "built_share_all",
    ):
        assert name in trials.columns, name
    done = trials[trials["state"] == "done"]
    assert len(done) and (done["built_share_all"] == 1.0).all()  # a limit of 1 MW always holds
    assert (done["pull_N_built"] <= done["pull_N"] + 1e-12).all()  # maximised: the low quantile
    front = pd.read_csv(built_study / "front.csv")
    assert "pull_N_built" in front.columns and "built_share_all" in front.columns


def test_front_checks_its_picks_as_built(built_study, monkeypatch, tmp_path, capsys):
    from optim.morning import built_check, robustness

    monkeypatch.setattr(robustness, "REPORT_TOLERANCE", True)
    monkeypatch.setattr(robustness, "REPORT_SAMPLES", 10)
    monkeypatch.setattr(built_check, "CHECK_SAMPLES", 10)
    monkeypatch.setattr(built_check.check_picks, "__defaults__", (10,))
    out = tmp_path / "front"
    assert main(["study", "front", str(built_study), "--out", str(out)]) == 0
    printed = capsys.readouterr().out
    assert "holds as built" in printed
    assert "input_power_W: 10 of 10; all at once: 10 of 10" in printed
    html = (out / "report.html").read_text(encoding="utf-8")
    assert "all at once: 10 of 10" in html


def test_export_tolerance_samples_writes_constraints_held(built_study, monkeypatch, capsys):
    from optim.morning import robustness

    monkeypatch.setattr(robustness, "HANDOFF_POINTS", 3)
    argv = ["study", "export", str(built_study), "--best", "pull_N", "--out", "tol"]
    assert main([*argv, "--tolerance", "--samples", "10"]) == 0
    capsys.readouterr()
    import json

    doc = json.loads((built_study / "tol" / "tolerance.json").read_text(encoding="utf-8"))
    assert doc["samples"] == 10
    assert doc["constraints_held"] == {"input_power_W": 1.0, "all": 1.0}
    assert {t["key"] for t in doc["tolerances"]} == {"ring.depth_mm", "drive.frequency_Hz"}


@pytest.mark.parametrize(
    "flags, message",
    [
        (["--samples", "10"], "--samples: needs --tolerance"),
        (["--tolerance", "--samples", "5"], "--samples = 5: must be between 10 and 100000"),
    ],
)
def test_bad_export_samples_exit_2(built_study, flags, message, capsys):
    argv = ["study", "export", str(built_study), "--best", "pull_N", "--out", "bad", *flags]
    assert main(argv) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and message in err[0], err


def test_a_check_fixes_a_tuned_capacitor_and_tolerances_it():
    """A built magnet's capacitor does not retune to its coil: the check's design carries the
    nominal design's tuned capacitance, and the study's tolerances then include it (+-5 %)."""
    from optim.morning.built_check import check_tolerances
    from optim.morning.robustness import study_evaluator
    from optim.study.space import build_design
    from optim.study.tolerance import _capacitor_as_built

    spec = _spec(_study(built_probability=0.95))
    design = build_design(spec.base, spec.params, BASE_VALUES, "x")
    assert design.drive.capacitance is None
    fixed = _capacitor_as_built(design, False, study_evaluator(spec))
    assert fixed.drive.capacitance is not None and fixed.drive.capacitance > 0
    keys = {t.key for t in check_tolerances(spec, fixed)}
    assert "drive.capacitance_uF" in keys and "target.gap_mm" not in keys


def test_the_tolerance_table_is_part_of_the_study_definition():
    """A resumed study must match its definition: another [tolerances] table is another
    study."""
    one = _study(built_probability=0.95)
    two = copy.deepcopy(one)
    one["tolerances"] = {"ring.depth_mm": 0.05}
    two["tolerances"] = {"ring.depth_mm": 0.1}
    assert _spec(one).fingerprint() != _spec(two).fingerprint()


def test_a_trial_infeasible_at_its_nominal_values_is_not_judged():
    """It is infeasible as built too; its built quantiles are its nominal values, its shares
    not estimated (nan), and no tolerance evaluation is made (the stand-in would fail)."""
    spec = _spec(_study(built_probability=0.95))
    flat = {c.name: 0.0 for c in spec.constraints} | {o.name: 1.0 for o in spec.objectives}
    flat["supply_voltage_V"] = 231.0  # past its 230 V limit
    flat["margins.coil_temperature_C"] = 1.0
    flat["worst_lift_ratio"] = 2.0

    def refuse(design):
        raise AssertionError("a tolerance evaluation was made")

    out = judge_built(None, spec, flat, evaluate_flat=refuse)
    assert out["supply_voltage_V_built"] == 231.0 and out["worst_lift_ratio_built"] == 2.0
    assert math.isnan(out["built_share_all"]) and math.isnan(out["built_share.supply_voltage_V"])
