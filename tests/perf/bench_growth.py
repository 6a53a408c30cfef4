"""Growth benchmark: a study of up to 10^6 trials on the journal, pre-filled by a bulk loader,
then resumed by workers; what a worker holds, how long a restart takes, how long ``study
status`` and ``study front`` take.

    python tests/perf/bench_growth.py --trials 1000000            # journal in a temporary folder
    python tests/perf/bench_growth.py --trials 100000 --keep /tmp/g   # keep the study folder

The loader appends the records the workers write themselves (optim.study.ledger.trial_log) for
stand-in trials of the demo study (results drawn from the parameters, as bench_study's
stand-in; about 70 % feasible), through the same file, in batches. Then:

* **resume**: ``run_study`` with 2 workers and the stand-in model for ``--resume`` trials: the
  wall time until the first trial of the run is recorded (the parent reading the study, the
  workers starting and reading their window) and the largest worker's peak memory (its maximum
  resident set, from the operating system's accounting of finished child processes);
* **status**, **front**: ``eddypull study status`` and ``eddypull study front --no-pick-maps``
  as separate processes: wall time and peak memory.

Prints a table; asserts nothing. Timings are of this machine in this run; compare ratios.
"""

from __future__ import annotations

import argparse
import json
import math
import resource
import subprocess
import sys
import tempfile
import time
from datetime import UTC, datetime
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from optim.demo import DEMO_STUDY  # noqa: E402
from optim.study.ledger import JournalLedger, trial_log  # noqa: E402
from optim.study.records import RECORD_ATTR  # noqa: E402
from optim.study.run import prepare, run_study  # noqa: E402
from optim.study.spec import load_study_spec  # noqa: E402
from optim.study.storage import JOURNAL  # noqa: E402


def bulk_fill(spec, folder: Path, n: int, batch: int = 20000, seed: int = 5) -> float:
    """Append ``n`` stand-in trials to the study in ``folder``; returns the seconds taken."""
    import optuna

    ledger, _ = prepare(spec, folder)
    names = ledger.user_attrs["eddypull_result_names"]
    dists = {p.name: p.distribution() for p in spec.params}
    rng = np.random.default_rng(seed)
    t0 = time.perf_counter()
    path = folder / JOURNAL
    done = 0
    while done < n:
        k = min(batch, n - done)
        lines = []
        for _ in range(k):
            params = {}
            for name, d in dists.items():
                if hasattr(d, "choices"):
                    params[name] = d.choices[int(rng.integers(len(d.choices)))]
                elif getattr(d, "step", None) == 1 and isinstance(d.low, int):
                    params[name] = int(rng.integers(d.low, d.high + 1))
                else:
                    params[name] = float(d.low + (d.high - d.low) * rng.random())
            x = rng.random(len(spec.objectives) + 1)
            flat = dict.fromkeys(names, 0.0)
            values = [float(v) for v in x[:-1]]
            for o, v in zip(spec.objectives, values, strict=True):
                flat[o.name] = v
            violations = {c.name: float(x[-1] - 0.7) for c in spec.constraints}
            record = {
                "results": [flat.get(k_, math.nan) for k_ in names],
                "margins": {c: -v for c, v in violations.items()},
                "reason": "" if all(v <= 0 for v in violations.values()) else "infeasible: x",
                "binding_limit": "",
                "warnings": [],
                "worker": "bulk",
                "id": f"{done:016x}",
                "eval_s": 0.0001,
            }
            trial = optuna.trial.create_trial(
                state=optuna.trial.TrialState.COMPLETE,
                params=params,
                distributions=dists,
                values=values,
                user_attrs={RECORD_ATTR: record},
                system_attrs={f"constraints:{k_}": v for k_, v in violations.items()},
            )
            trial.datetime_start = trial.datetime_complete = datetime.now(tz=UTC)
            log = trial_log(ledger.study_id, trial, "bulk")
            lines.append(json.dumps(log, separators=(",", ":")))
            done += 1
        with open(path, "ab") as fh:
            fh.write(("\n".join(lines) + "\n").encode())
    return time.perf_counter() - t0


def _child_peak_mb() -> float:
    return resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024.0


#: Runs a command as its own child and prints that child's peak resident set [kB].
_PEAK = (
    "import resource, subprocess, sys; c = subprocess.run(sys.argv[1:], capture_output=True)"
    "; print(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss, c.returncode)"
)


def timed_command(args: list[str]) -> tuple[float, float, int]:
    """(wall s, peak MB, exit code) of ``eddypull ARGS`` in a fresh process."""
    t0 = time.perf_counter()
    out = subprocess.run(
        [sys.executable, "-c", _PEAK, sys.executable, "-m", "optim.cli", *args],
        capture_output=True,
        text=True,
    ).stdout.split()
    return time.perf_counter() - t0, int(out[0]) / 1024.0, int(out[1])


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--trials", type=int, default=1_000_000)
    ap.add_argument(
        "--resume",
        type=int,
        default=2,
        help="trials the resumed run adds (one per worker: its wall time is the restart time)",
    )
    ap.add_argument("--keep", type=Path, help="study folder to keep (default: temporary)")
    ap.add_argument(
        "--reuse", action="store_true", help="use the study already in --keep (no bulk fill)"
    )
    args = ap.parse_args()
    spec = load_study_spec(DEMO_STUDY)
    spec.run.pop("minutes", None)
    spec.name = "growth"
    with tempfile.TemporaryDirectory() as tmp:
        folder = args.keep or Path(tmp) / "growth"
        folder.mkdir(parents=True, exist_ok=True)
        if not args.reuse:
            fill_s = bulk_fill(spec, folder, args.trials)
            print(f"bulk fill: {args.trials} trials in {fill_s:.0f} s")
        size_mb = (folder / JOURNAL).stat().st_size / 1e6
        n = JournalLedger(folder / JOURNAL, spec.name).n_trials
        print(f"study: {n} trials, journal {size_mb:.0f} MB")
        rows = []
        t0 = time.perf_counter()
        run_study(
            spec,
            folder,
            workers=2,
            trials=args.resume,
            echo=lambda *_: None,
            tty=False,
            evaluator="tests.perf.bench_study:stand_in",
        )
        wall = time.perf_counter() - t0
        rows.append(("resume, 2 workers", wall, _child_peak_mb(), f"{args.resume} trials added"))
        print(f"{'step':22s} {'wall_s':>8s} {'peak_MB':>8s}  note")
        print(f"{rows[0][0]:22s} {rows[0][1]:8.1f} {rows[0][2]:8.0f}  {rows[0][3]}", flush=True)
        for name, cmd in (
            ("study status", ["study", "status", str(folder)]),
            ("study front", ["study", "front", str(folder), "--no-pick-maps"]),
        ):
            s, mb, code = timed_command(cmd)
            rows.append((name, s, mb, f"exit {code}"))
            print(f"{name:22s} {s:8.1f} {mb:8.0f}  exit {code}", flush=True)
        print("(resume: the parent reading the study, two workers started, each reading its")
        print(" window and recording one trial; peak MB of resume: the larger worker's)")


if __name__ == "__main__":
    main()
