"""Text parameters of a study (``pole_material = { choices = [...] }``): parsed to a categorical
distribution, checked with one line per problem, stored, resumed, shared between workers, drawn by
every sampler, and carried to the front tables, plots, report, status and hand-off.

No external reference: the checks are the study's own bookkeeping (every stored value is one of
the file's choices, the trial's design is built with the value stored for it) and optuna's
record of the distribution each parameter was drawn from.
"""

from __future__ import annotations

import csv
import json
import multiprocessing as mp
import re
import tomllib

import optuna
import pandas as pd
import pytest

from optim.study.engine import run_worker
from optim.study.records import Outcome, OutcomeState, WorkerConfig
from optim.study.run import prepare, run_study
from optim.study.space import build_design, parse_search
from optim.study.spec import load_study_spec, spec_from_json
from optim.study.storage import load_existing
from tests.conftest import DEMO

STEELS = [
    "electrical-steel-m400",
    "electrical-steel-m270",
    "electrical-steel-thin-020",
    "ferrite-mnzn",
]
BODY = f"""
[search]
pole_material = {{ choices = {json.dumps(STEELS)} }}
ring_depth_mm = {{ low = 0.5, high = 6.0 }}
[objectives]
pull_N = "maximize"
pole_mass_kg = "minimize"
[run]
seed = 5
isothermal = true
"""
QUIET = {"echo": lambda *_: None, "tty": False}


def _study_file(tmp_path, name: str, body: str = BODY, design=DEMO):
    path = tmp_path / f"{name}.toml"
    path.write_text(f'name = "{name}"\ndesign = "{design.as_posix()}"\n{body}', encoding="utf-8")
    return path


def stand_in(spec, values):
    """A two-objective stand-in for the model (the shape of evaluate_trial's outcome), fast
    enough for hundreds of trials: a number scaled to [0, 1] by its bounds, a choice by its place
    in the list; maximise -sum (x - 0.3)^2 and minimise sum (x - 0.7)^2."""
    x = []
    for p in spec.params:
        v = values[p.name]
        if p.categorical:
            x.append(p.choices.index(v) / max(len(p.choices) - 1, 1))
        else:
            x.append((v - p.low) / (p.high - p.low))
    f1 = -sum((xi - 0.3) ** 2 for xi in x)
    f2 = sum((xi - 0.7) ** 2 for xi in x)
    flat = {n: 0.0 for n in spec.result_names} | {"pull_N": f1, "pole_mass_kg": f2}
    return Outcome(
        state=OutcomeState.COMPLETE,
        values=[f1, f2],
        violations={c.name: -1.0 for c in spec.constraints},
        margins={c.name: 1.0 for c in spec.constraints},
        flat=flat,
    )


@pytest.fixture(scope="module")
def cat_study(tmp_path_factory):
    """A small study over the pole material and the ring depth with the model: 6 trials, then
    resumed for 4 more. Returns (study folder, study file)."""
    tmp = tmp_path_factory.mktemp("cat")
    path = _study_file(tmp, "cat")
    spec = load_study_spec(path)
    folder = tmp / "out"
    run_study(spec, folder, workers=1, trials=6, **QUIET)
    run_study(load_study_spec(path), folder, workers=1, trials=4, **QUIET)
    return folder, path


# ------------------------------------------------------------------------------ parse and build
def test_choices_become_a_categorical_distribution_kept_in_the_study_definition(tmp_path):
    spec = load_study_spec(_study_file(tmp_path, "parse"))
    material = spec.params[0]
    assert material.key == "pole.material" and material.choices == tuple(STEELS)
    assert material.distribution() == optuna.distributions.CategoricalDistribution(STEELS)
    # The stored definition rebuilds the same search (what workers and a resumed run read) ...
    again = spec_from_json(spec.to_json())
    assert again.params == spec.params and again.fingerprint() == spec.fingerprint()
    assert spec.to_json()["search"]["pole_material"] == {"choices": STEELS}
    # ... and the order of the choices is part of it (optuna refuses other choices' trials).
    swapped = BODY.replace(json.dumps(STEELS), json.dumps(STEELS[::-1]))
    assert load_study_spec(_study_file(tmp_path, "parse", swapped)).fingerprint() != (
        spec.fingerprint()
    )


def test_library_names_whatever_the_letter_case_and_any_text_key(tmp_path):
    problems: list[str] = []
    params = parse_search(
        {
            "ring_material": {"choices": [" Copper", "aluminium-1350"]},
            "thermal.orientation": {"choices": ["face-down", "horizontal"]},
        },
        problems,
    )
    assert not problems
    assert params[0].choices == ("copper", "aluminium-1350")
    assert params[1].key == "thermal.orientation"
    spec = load_study_spec(_study_file(tmp_path, "ring"))
    design = build_design(spec.base, params, {p.name: p.choices[1] for p in params}, "r")
    assert design.ring.material == "aluminium-1350" and design.thermal.orientation == "horizontal"


def test_a_chosen_pole_material_replaces_a_pole_given_by_its_permeability(tmp_path):
    """models.design refuses material beside relative_permeability and conductivity_S_per_m: a
    trial that chooses the material drops them, and the base's saturation flux density, which
    belonged to the base's steel."""
    base = DEMO.read_text(encoding="utf-8").replace(
        'material = "electrical-steel-m400"',
        "relative_permeability = 1500.0\nconductivity_S_per_m = 0.0\n"
        "saturation_flux_density_T = 1.2",
    )
    design_file = tmp_path / "permeable.toml"
    design_file.write_text(base, encoding="utf-8")
    assert "relative_permeability" in tomllib.loads(base)["pole"]
    spec = load_study_spec(_study_file(tmp_path, "mu", design=design_file))
    values = {"pole_material": "ferrite-mnzn", "ring_depth_mm": 2.0}
    pole = build_design(spec.base, spec.params, values, "mu").pole
    assert pole.material == "ferrite-mnzn"
    assert pole.relative_permeability == 2000.0  # the library's ferrite, not the base's 1500
    assert pole.saturation_flux_density == pytest.approx(0.49)  # the ferrite's, not 1.2
    assert spec.base["pole"]["relative_permeability"] == 1500.0  # the base itself is kept


# ------------------------------------------------------------------------------- input errors
_MATERIAL = "pole_material = {{ choices = {} }}\n"


@pytest.mark.parametrize(
    ("entry", "expected"),
    [
        (
            _MATERIAL.format('["electrical-steel-m40"]'),
            r"search\.pole_material\.choices\[0\] = 'electrical-steel-m40': not in the material "
            r"library; allowed: .*ferrite-mnzn \(did you mean 'electrical-steel-m400'\?\)",
        ),
        (
            _MATERIAL.format('["ferrite-mnzn", "copper"]'),
            r"search\.pole_material\.choices\[1\] = 'copper': not a magnetic material; allowed: ",
        ),
        (
            _MATERIAL.format('["steel-1010"]'),
            r"choices\[0\] = 'steel-1010': a solid \(conductive\) steel; the fast model covers "
            "laminated poles only",
        ),
        (
            'ring_material = { choices = ["ferrite-mnzn"] }\n',
            r"search\.ring_material\.choices\[0\] = 'ferrite-mnzn': not a conductor",
        ),
        (
            _MATERIAL.format("[]"),
            r"search\.pole_material\.choices = \[\]: must be a non-empty list",
        ),
        (
            _MATERIAL.format('"ferrite-mnzn"'),
            r"search\.pole_material\.choices = 'ferrite-mnzn': must be a non-empty list of strings",
        ),
        (
            _MATERIAL.format('["ferrite-mnzn", 3]'),
            r"search\.pole_material\.choices\[1\] = 3: must be a string",
        ),
        (
            _MATERIAL.format('["ferrite-mnzn", "Ferrite-MnZn"]'),
            r"search\.pole_material\.choices\[1\] = 'Ferrite-MnZn': repeats choices\[0\]",
        ),
        (
            'pole_material = { choices = ["ferrite-mnzn"], low = 1, high = 2 }\n',
            r"search\.pole_material\.low: choices cannot be combined with low, high",
        ),
        (
            'pole_material = { choices = ["ferrite-mnzn"], scale = "log" }\n',
            r"search\.pole_material\.scale: choices cannot be combined with scale",
        ),
        (
            "pole_material = { low = 1, high = 2 }\n",
            r"search\.pole_material: pole\.material is text, not a number \(low, high given\); "
            "give its choices",
        ),
        (
            'pole_radius_mm = { choices = ["12"] }\n',
            # a number's choices are numbers (optim.study.space: numeric keys over choices)
            r"search\.pole_radius_mm\.choices\[0\] = '12': must be a finite number",
        ),
        (
            '"thermal.orientation" = { choices = ["face-down", "upside"] }\n',
            r"search\.thermal\.orientation\.choices\[1\] = 'upside': the design at the middle of "
            r"the search space cannot be built with it \(thermal\.orientation = 'upside'",
        ),
        (
            _MATERIAL.format('["ferrite-mnzn"]')
            + '"pole.relative_permeability" = { low = 1000, high = 3000 }\n',
            r"search\.pole\.relative_permeability: pole\.relative_permeability is set by "
            r"pole\.material \(searched by search\.pole_material\)",
        ),
    ],
)
def test_bad_choices_give_one_line_each_and_exit_2(tmp_path, entry, expected, capsys):
    from optim.cli import main

    body = f'[search]\n{entry}[objectives]\npull_N = "maximize"\n'
    path = _study_file(tmp_path, "bad", body)
    code = main(["study", "run", str(path), "--trials", "1", "--out", str(tmp_path / "o")])
    err = capsys.readouterr().err
    assert code == 2, err
    lines = err.strip().splitlines()
    assert all(line.startswith("eddypull: error: ") for line in lines), err
    assert len(lines) == 1, err
    assert re.search(expected, lines[0]), err
    assert not (tmp_path / "o" / "journal.log").exists()


# ------------------------------------------------------------------- storage, resume, workers
def test_the_study_stores_resumes_and_builds_each_trial_with_its_material(cat_study):
    folder, _ = cat_study
    study, spec_json, _ = load_existing(folder)
    spec = spec_from_json(spec_json)
    trials = study.get_trials(deepcopy=False)
    assert len(trials) == 10 and all(t.state.name == "COMPLETE" for t in trials)
    assert {w["worker"] for w in (t.user_attrs["eddypull"] for t in trials)}  # recorded
    for t in trials:
        assert t.params["pole_material"] in STEELS
        assert t.distributions["pole_material"] == spec.params[0].distribution()
        assert (
            build_design(spec.base, spec.params, t.params, "x").pole.material
            == (t.params["pole_material"])
        )
    assert len({t.params["pole_material"] for t in trials}) >= 2  # 10 draws of 4 choices
    # The resumed run went on from the first (its own seeds), it did not repeat it.
    assert len({tuple(sorted(t.params.items())) for t in trials}) == 10


def test_a_migrant_with_a_categorical_parameter_joins_another_worker(tmp_path):
    """Worker A's trials are imported by worker B (its first sync, as a resumed or parallel
    worker does), each with its material, and B's next trial draws from the same choices."""
    from optim.study.engine import _Worker

    spec = load_study_spec(_study_file(tmp_path, "mig"))
    folder = tmp_path / "mig"
    prepare(spec, folder)
    cfg = WorkerConfig(
        spec=spec.to_json(),
        location=str(folder),
        trials=6,
        seed=1,
        evaluator="tests.optim.study.test_study_categorical:stand_in",
    )
    counter = mp.get_context("spawn").Value("q", 0)
    assert run_worker(cfg, None, None, counter).recorded == 6
    other = _Worker(cfg.but(seed=2))
    other.sync(first=True)
    imported = other.window.study.get_trials(deepcopy=False)
    assert len(imported) == 6
    stored = load_existing(folder)[0].get_trials(deepcopy=False)
    assert [t.params for t in imported] == [t.params for t in stored]
    trial, outcome, _ = other.evaluate_and_store()
    assert trial.params["pole_material"] in STEELS and outcome.complete
    # A trial drawn from other choices belongs to another search: never imported.
    foreign = optuna.trial.create_trial(
        params={"pole_material": "copper", "ring_depth_mm": 1.0},
        distributions={
            "pole_material": optuna.distributions.CategoricalDistribution(["copper"]),
            "ring_depth_mm": optuna.distributions.FloatDistribution(0.5, 6.0),
        },
        values=[0.0, 0.0],
    )
    assert not other.window.fits(foreign) and other.window.add([foreign]) == 0


@pytest.mark.parametrize("sampler", ["tpe", "nsga2", "auto"])
def test_every_sampler_draws_the_choices_across_a_window_rollover(tmp_path, sampler):
    """60 stand-in trials through a window of 30, rolled over: every sampler carries the
    categorical trials over and draws every choice ("auto" is TPE for these windows)."""
    body = BODY.replace("seed = 5", f'seed = 5\nsampler = "{sampler}"\npopulation = 8')
    spec = load_study_spec(_study_file(tmp_path, f"s-{sampler}", body))
    folder = tmp_path / sampler
    prepare(spec, folder)
    counter = mp.get_context("spawn").Value("q", 0)
    cfg = WorkerConfig(
        spec=spec.to_json(),
        location=str(folder),
        trials=60,
        seed=3,
        window_limit=30,
        evaluator="tests.optim.study.test_study_categorical:stand_in",
    )
    summary = run_worker(cfg, None, None, counter)
    assert summary.recorded == 60 and summary.rollovers >= 1
    trials = load_existing(folder)[0].get_trials(deepcopy=False)
    assert {t.params["pole_material"] for t in trials} == set(STEELS)


# --------------------------------------------------------------------------- morning outputs
def test_front_tables_report_and_status_carry_the_material(cat_study, tmp_path, monkeypatch):
    """front.csv, front.parquet, trials.csv, report.html (the front table and the picks' cards)
    name each design's material. The plots are left out here (they take most
    of the time; test_coupling_plot_draws_a_text_parameter_as_categories draws them)."""
    from optim.morning import outputs

    folder, _ = cat_study
    study, spec_json, where = load_existing(folder)
    monkeypatch.setattr(outputs, "_write_plots", lambda *a, **k: [])
    out = tmp_path / "front"
    result = outputs.write_front(study, spec_json, where, out)
    by_trial = {t.number: t.params["pole_material"] for t in study.get_trials(deepcopy=False)}
    front = result["front"]
    assert len(front) >= 1
    for table in (pd.read_csv(out / "front.csv"), pd.read_parquet(out / "front.parquet")):
        assert list(table["trial"]) == list(front["trial"])
        assert [by_trial[t] for t in table["trial"]] == list(table["pole_material"])
    every = pd.read_csv(out / "trials.csv")
    assert [by_trial[t] for t in every["trial"]] == list(every["pole_material"])
    report = (out / "report.html").read_text(encoding="utf-8")
    first = front.iloc[0]
    assert f'data-v="{first["pole_material"]}">{first["pole_material"]}</td>' in report
    assert f'<th class="text">pole material</th><td>{first["pole_material"]}</td>' in report


def test_status_names_the_best_trial_and_its_material(cat_study, capsys):
    from optim.cli import main

    folder, _ = cat_study
    study, _, _ = load_existing(folder)
    assert main(["study", "status", str(folder)]) == 0
    text = capsys.readouterr().out
    best = max(study.get_trials(deepcopy=False), key=lambda t: t.values[0])
    line = f"trial {best.number}: pole_material {best.params['pole_material']}, ring_depth_mm "
    assert line in text, text
    assert main(["study", "status", str(folder), "--json"]) == 0
    status = json.loads(capsys.readouterr().out)
    assert (
        status["best_trials"]["pull_N"]["parameters"]["pole_material"]
        == (best.params["pole_material"])
    )


def test_handoff_carries_the_chosen_material(cat_study, tmp_path):
    from optim.morning.outputs import export_trial

    folder, _ = cat_study
    study, spec_json, where = load_existing(folder)
    paths = export_trial(study, spec_json, where, folder, best="pole_mass_kg", out=tmp_path / "h")
    meta = json.loads(paths["handoff.json"].read_text(encoding="utf-8"))
    trial = study.get_trials(deepcopy=False)[meta["study"]["trial"]]
    chosen = trial.params["pole_material"]
    assert meta["study"]["parameters"]["pole_material"] == chosen
    assert meta["design"]["materials"]["pole"]["material"] == chosen
    design = tomllib.loads(paths["design.toml"].read_text(encoding="utf-8"))
    assert design["pole"]["material"] == chosen
    with open(paths["parameters.csv"], newline="", encoding="utf-8") as fh:
        rows = {r["name"]: r for r in csv.DictReader(fh)}
    assert rows["pole_material"]["value"] == chosen and rows["pole_material"]["unit"] == ""


def test_coupling_plot_draws_a_text_parameter_as_categories(tmp_path):
    """A text column in the coupling plots: coded by its choices (a value that is none of them
    is left out), or by its values in alphabetical order when no choices are given."""
    from optim.morning.plots import plot_parameter_coupling

    front = pd.DataFrame(
        {
            "pole_material": ["ferrite-mnzn", "electrical-steel-m270", "ferrite-mnzn", "other"],
            "ring_depth_mm": [1.0, 2.0, 3.0, 4.0],
            "frequency_Hz": [200.0, 400.0, 800.0, 1600.0],
            "pull_N": [0.01, 0.02, 0.03, 0.04],
        }
    )
    params = ["pole_material", "ring_depth_mm", "frequency_Hz"]
    for k, choices in enumerate(({"pole_material": STEELS}, None)):
        paths = plot_parameter_coupling(
            front,
            params,
            tmp_path / str(k),
            color_by="pull_N",
            log=["frequency_Hz"],
            choices=choices,
        )
        assert sorted(p.name for p in paths) == [
            "coupling_matrix.png",
            "coupling_matrix.svg",
            "coupling_parallel.png",
            "coupling_parallel.svg",
        ]
        svg = (tmp_path / str(k) / "coupling_matrix.svg").read_text(encoding="utf-8")
        assert "ferrite-mnzn" in svg and "electrical-steel-m270" in svg


@pytest.mark.slow
def test_command_line_run_resume_front_and_export_with_a_material(tmp_path, capsys):
    """The whole path through the command line, plots included: run, resume, front, export."""
    from optim.cli import main

    path = _study_file(tmp_path, "cli")
    out = tmp_path / "out"
    for budget in (["--trials", "5"], ["--more", "3"]):  # the study's total, then 3 more
        assert main(["study", "run", str(path), *budget, "--out", str(out)]) == 0
    assert main(["study", "front", str(out)]) == 0
    assert main(["study", "export", str(out), "--best", "pull_N"]) == 0
    capsys.readouterr()
    study, _, _ = load_existing(out)
    assert len(study.get_trials(deepcopy=False)) == 8
    front = pd.read_csv(out / "front.csv")
    assert set(front["pole_material"]) <= set(STEELS)
    assert (out / "plots" / "coupling_matrix.png").exists()
    (handoff,) = out.glob("handoff-trial-*")
    number = int(handoff.name.rsplit("-", 1)[1])
    chosen = study.get_trials(deepcopy=False)[number].params["pole_material"]
    design = tomllib.loads((handoff / "design.toml").read_text(encoding="utf-8"))
    assert design["pole"]["material"] == chosen
    assert chosen in (out / "report.html").read_text(encoding="utf-8")
