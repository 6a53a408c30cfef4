"""Benchmark of search quality: the hypervolume a study reaches, as a share of a reference front,
after 100, 300, 1,000 and 3,000 trials, by sampler, population and workers.

    python tests/perf/bench_quality.py                       # every problem, sampler, 5 seeds
    python tests/perf/bench_quality.py --problems pull-power-loss --trials 300 --seeds 5 \\
        --samplers nsga2:10 nsga2:20 tpe --workers 1 --jobs 2
    python tests/perf/bench_quality.py --table               # the table of the results so far

Problems, reference fronts and the hypervolume: tests/perf/quality_problems.py. Each run is a
real study (``run_study`` on the fast model, isothermal, journal storage in a temporary folder)
in its own process; ``--jobs`` runs that many at once. Each run's feasible points (in trial
order) are appended to ``--results`` (JSON lines), so runs add up over several invocations and
``--table`` re-reads them: the reference front of a problem is the union of its grid front and
every run's points. A sampler is ``kind[:population]``: ``nsga2:20``, ``tpe``, ``random``, or
``default`` (what the engine picks when the study file names no sampler). The table gives the
median share and, in brackets, the lowest and highest share over the seeds. Asserts nothing.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from tests.perf.quality_problems import (  # noqa: E402
    PROBLEMS,
    feasible_losses,
    front,
    hypervolume,
    load_grid,
    reference_point,
    signs,
    study_text,
)

CHECKPOINTS = (100, 300, 1000, 3000)
SAMPLERS = ("nsga2:10", "nsga2:20", "nsga2:40", "tpe", "random", "default")
RESULTS_FILE = ROOT / "tests" / "perf" / "quality_results.jsonl"


def run_points(problem: str, sampler: str, seed: int, workers: int, trials: int) -> dict:
    """Run one study; its feasible points in minimisation form, in trial order, with the number
    of the trial each one was."""
    from optim.study.run import run_study
    from optim.study.spec import load_study_spec
    from optim.study.storage import load_existing

    kind, _, pop = sampler.partition(":")
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "q.toml"
        text = study_text(
            "q", problem, None if kind == "default" else kind, int(pop) if pop else None, seed
        )
        path.write_text(text, encoding="utf-8")
        spec = load_study_spec(path)
        t0 = time.perf_counter()
        run_study(
            spec, Path(tmp) / "q", workers=workers, trials=trials, echo=lambda *_: None, tty=False
        )
        wall = time.perf_counter() - t0
        study, _, _ = load_existing(Path(tmp) / "q")
        points, numbers = [], []
        for t in sorted(study.get_trials(deepcopy=False), key=lambda t: t.number):
            if t.state.name != "COMPLETE" or t.values is None:
                continue
            cons = [v for k, v in t.system_attrs.items() if k.startswith("constraints:")]
            if any(c > 0 for c in cons):
                continue
            points.append(list(np.asarray(t.values, float) * signs(problem)))
            numbers.append(t.number)
    return {
        "problem": problem,
        "sampler": sampler,
        "seed": seed,
        "workers": workers,
        "trials": trials,
        "wall_s": round(wall, 1),
        "numbers": numbers,
        "points": points,
    }


def references(rows: list[dict]) -> dict:
    """problem -> (reference front, reference point, its hypervolume)."""
    grid = load_grid()
    out = {}
    for problem in PROBLEMS:
        grid_front = front(feasible_losses(grid, problem))
        ref = reference_point(grid_front)
        union = [grid_front] + [
            np.asarray(r["points"], float).reshape(-1, len(ref))
            for r in rows
            if r["problem"] == problem
        ]
        best = front(np.vstack(union))
        out[problem] = (best, ref, hypervolume(best, ref), hypervolume(grid_front, ref))
    return out


def table(rows: list[dict]) -> str:
    """The markdown table: median [min-max] share of the reference hypervolume."""
    refs = references(rows)
    groups: dict = {}
    for r in rows:
        groups.setdefault((r["problem"], r["sampler"], r["workers"]), []).append(r)
    lines = [
        "| problem | sampler | workers | seeds | "
        + " | ".join(f"{n} trials" for n in CHECKPOINTS)
        + " |",
        "|---|---|---|---|" + "---|" * len(CHECKPOINTS),
    ]
    for (problem, sampler, workers), runs in sorted(groups.items()):
        _, ref, hv_ref, _ = refs[problem]
        cells = []
        for n in CHECKPOINTS:
            shares = []
            for r in runs:
                if r["trials"] < n:
                    continue
                pts = [p for p, k in zip(r["points"], r["numbers"], strict=True) if k < n]
                pts = np.asarray(pts, float).reshape(-1, len(ref))
                shares.append(100.0 * hypervolume(pts, ref) / hv_ref)
            cells.append(
                f"{np.median(shares):.1f} [{min(shares):.1f}-{max(shares):.1f}]" if shares else "-"
            )
        lines.append(
            f"| {problem} | {sampler} | {workers} | {len(runs)} | " + " | ".join(cells) + " |"
        )
    grid_share = ", ".join(
        f"{p} {100.0 * refs[p][3] / refs[p][2]:.1f} %" for p in PROBLEMS if refs[p][2] > 0
    )
    return "\n".join(lines) + f"\n\nthe 12^3 grid's own front (1,728 designs): {grid_share}"


def read_results(path: Path) -> list[dict]:
    if not path.exists():
        return []
    return [json.loads(line) for line in path.read_text(encoding="utf-8").splitlines() if line]


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--problems", nargs="+", default=list(PROBLEMS))
    ap.add_argument("--samplers", nargs="+", default=list(SAMPLERS))
    ap.add_argument("--workers", nargs="+", type=int, default=[1, 2])
    ap.add_argument("--seeds", type=int, default=5, help="seeds 1..N")
    ap.add_argument("--first-seed", type=int, default=1)
    ap.add_argument("--trials", type=int, default=3000)
    ap.add_argument("--jobs", type=int, default=1, help="runs at once")
    ap.add_argument("--results", type=Path, default=RESULTS_FILE)
    ap.add_argument("--table", action="store_true", help="only print the table")
    ap.add_argument("--one", nargs=5, metavar=("PROBLEM", "SAMPLER", "SEED", "WORKERS", "TRIALS"))
    args = ap.parse_args()
    if args.one:
        p, s, seed, w, n = args.one
        print(json.dumps(run_points(p, s, int(seed), int(w), int(n))))
        return
    if not args.table:
        todo = [
            (p, s, seed, w)
            for p in args.problems
            for s in args.samplers
            for w in args.workers
            for seed in range(args.first_seed, args.first_seed + args.seeds)
        ]
        _run_all(todo, args)
    print(table(read_results(args.results)))


def _run_all(todo: list, args) -> None:
    """Run every (problem, sampler, seed, workers) in its own process, ``--jobs`` at once,
    appending each result to ``--results`` as it ends."""
    running: list = []
    while todo or running:
        while todo and len(running) < args.jobs:
            p, s, seed, w = todo.pop(0)
            cmd = [sys.executable, __file__, "--one", p, s, str(seed), str(w), str(args.trials)]
            out = tempfile.TemporaryFile("w+", encoding="utf-8")  # a pipe would fill and block
            running.append((subprocess.Popen(cmd, stdout=out, text=True), out, (p, s, seed, w)))
        time.sleep(0.5)
        for proc, file, what in list(running):
            if proc.poll() is None:
                continue
            running.remove((proc, file, what))
            file.seek(0)
            out = file.read().strip().splitlines()
            file.close()
            if proc.returncode != 0 or not out:
                print("failed:", what, file=sys.stderr)
                continue
            with args.results.open("a", encoding="utf-8") as f:
                f.write(out[-1] + "\n")
            r = json.loads(out[-1])
            print(f"done {what}: {len(r['points'])} feasible, {r['wall_s']} s", flush=True)


if __name__ == "__main__":
    main()
