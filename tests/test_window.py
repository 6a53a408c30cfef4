"""The worker's private sampler window: bounded however long the study runs, and resumable."""

from __future__ import annotations

import multiprocessing as mp

from optim.engine import run_worker
from optim.spec import load_study_spec
from optim.storage import load_existing
from optim.study import prepare
from tests.test_study import QUICK, _study_file


def test_window_rolls_over_and_keeps_searching(tmp_path):
    spec = load_study_spec(_study_file(tmp_path, "win", QUICK))
    folder = tmp_path / "win"
    prepare(spec, folder)
    counter = mp.get_context("spawn").Value("q", 0)
    cfg = {
        "spec": spec.to_json(),
        "location": str(folder),
        "trials": 700,
        "seed": 1,
        "window_limit": 100,
        "evaluator": "tests.perf.bench_study:stand_in",
    }
    assert run_worker(cfg, None, None, counter) == 700
    # 700 trials through a window of 100: it rolled over, and never grew past the limit plus the
    # one generation it keeps (population 10 here, plus its parents).
    assert cfg["_window"]["rollovers"] >= 5
    assert cfg["_window"]["size"] <= 100 + 2 * 10
    study, spec_json, _ = load_existing(folder)
    trials = study.get_trials(deepcopy=False)
    assert len(trials) == 700
    # NSGA-II kept selecting after each rollover: the last 100 trials are not a random draw, so
    # their best objective beats the best of the first 100 (random) trials (stand-in model).
    first = max(t.values[0] for t in trials[:100])
    last = max(t.values[0] for t in trials[-100:])
    assert last >= first
    # A resumed worker starts from the latest window of the shared study.
    counter2 = mp.get_context("spawn").Value("q", 0)
    cfg2 = dict(cfg, trials=50, seed=2)
    assert run_worker(cfg2, None, None, counter2) == 50
    assert len(load_existing(folder)[0].get_trials(deepcopy=False)) == 750
