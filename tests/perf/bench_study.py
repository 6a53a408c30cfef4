"""Benchmark of the study engine: trials per second by storage, workers and study size.

    python tests/perf/bench_study.py                   # model stand-in, journal + PostgreSQL
    python tests/perf/bench_study.py --model fast      # the real fast model
    python tests/perf/bench_study.py --grow 100000     # rate as a study grows (stand-in model)

PostgreSQL is used when EDDYPULL_TEST_POSTGRES_URL is set (.ci/postgres start DIR PORT prints
one). The stand-in model returns results drawn from the parameters in ~0.1 ms, so the table shows
what the engine, the sampler and the storage cost by themselves. Prints a table; asserts nothing.
"""

from __future__ import annotations

import argparse
import math
import os
import sys
import tempfile
import time
import uuid
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from optim.demo import DEMO_STUDY  # noqa: E402
from optim.study.records import Outcome, OutcomeState  # noqa: E402
from optim.study.run import run_study  # noqa: E402
from optim.study.spec import load_study_spec  # noqa: E402


def stand_in(spec, values):
    """A model stand-in with the shape of evaluate_trial's outcome (results from the params)."""
    flat = {n: 0.0 for n in spec.result_names}
    x = [float(v) for v in values.values() if not isinstance(v, str)]  # a material: no number
    s = sum(x)
    flat.update({o.name: math.sin(s + i) for i, o in enumerate(spec.objectives)})
    for c in spec.constraints:
        flat[c.name] = math.cos(s)
    violations = {c.name: c.violation(flat[c.name]) for c in spec.constraints}
    margins = {c.name: c.margin(flat[c.name]) for c in spec.constraints}
    return Outcome(
        state=OutcomeState.COMPLETE,
        values=[flat[o.name] for o in spec.objectives],
        violations=violations,
        margins=margins,
        flat=flat,
    )


def one(spec, storage, workers, trials, model, folder):
    spec.name = f"bench-{uuid.uuid4().hex[:8]}"
    t0 = time.perf_counter()
    s = run_study(
        spec,
        folder / spec.name,
        storage_url=storage,
        workers=workers,
        trials=trials,
        echo=lambda *_: None,
        tty=False,
        evaluator=None if model == "fast" else "tests.perf.bench_study:stand_in",
    )
    wall = time.perf_counter() - t0
    return s["trials_this_run"], wall


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--model", choices=["stand-in", "fast"], default="stand-in")
    ap.add_argument("--trials", type=int, default=2000)
    ap.add_argument("--grow", type=int, default=0, help="grow one study to this many trials")
    args = ap.parse_args()
    spec = load_study_spec(DEMO_STUDY)
    spec.run.pop("minutes", None)
    pg = os.environ.get("EDDYPULL_TEST_POSTGRES_URL")
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        if args.grow:
            spec.name = f"grow-{uuid.uuid4().hex[:8]}"
            step = max(args.grow // 10, 1000)
            print(f"{'trials in study':>16s} {'trials/s (2 workers, journal)':>30s}")
            done = 0
            while done < args.grow:
                t0 = time.perf_counter()
                s = run_study(
                    spec,
                    folder / spec.name,
                    workers=2,
                    trials=step,
                    echo=lambda *_: None,
                    tty=False,
                    evaluator="tests.perf.bench_study:stand_in",
                )
                wall = time.perf_counter() - t0
                done += s["trials_this_run"]
                print(f"{done:16d} {s['trials_this_run'] / wall:30.1f}", flush=True)
            return
        rows = []
        for storage_name, storage in (("journal", None), ("postgresql", pg)):
            if storage_name == "postgresql" and not pg:
                continue
            for workers in (1, 2):
                n, wall = one(spec, storage, workers, args.trials, args.model, folder)
                rows.append((storage_name, workers, n, wall, n / wall))
        print(f"model: {args.model}; {args.trials} trials per run; wall time includes start-up")
        print(f"{'storage':12s} {'workers':>7s} {'trials':>7s} {'wall_s':>8s} {'trials/s':>9s}")
        for r in rows:
            print(f"{r[0]:12s} {r[1]:7d} {r[2]:7d} {r[3]:8.1f} {r[4]:9.1f}")


if __name__ == "__main__":
    main()
