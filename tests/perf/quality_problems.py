"""Problems of the search-quality benchmark, their brute-force reference fronts and hypervolume.

Every problem is a study of the demo design (``optim/demo/demo_design.toml``), isothermal, over the
same 3-parameter space (ring outer radius as a fraction of the pole radius, ring depth, frequency
on a log scale). Its reference is the feasible Pareto front of a 12 x 12 x 12 grid of that space
(1,728 designs, evaluated by the project's own ``evaluate_trial``), cached in
``tests/data/quality_grid.csv`` with every result a problem needs::

    python tests/perf/quality_problems.py --grid      # recompute the cached grid (~5 min, 2 cores)

The reference front of a problem is the non-dominated union of the grid's feasible designs and
of every design the benchmark's runs found (a run may beat the grid between its points), so a
share of 100 % means "as good as everything ever seen". Hypervolume is measured in minimisation
form (a maximised objective negated) against a fixed reference point per problem: the nadir of
the grid's front pushed out by 10 % of the front's range in each objective.
"""

from __future__ import annotations

import argparse
import csv
import sys
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

GRID_FILE = ROOT / "tests" / "data" / "quality_grid.csv"
GRID_N = 12
SPACE = {
    "ring_outer_fraction": (0.4, 0.95, False),
    "ring_depth_mm": (0.5, 6.0, False),
    "frequency_Hz": (100.0, 3000.0, True),
}
RESULTS = ("pull_N", "input_power_W", "ring_loss_W", "coil_voltage_V", "target_loss_W")

SEARCH = """
[search]
ring_outer_fraction = { low = 0.4, high = 0.95 }
ring_depth_mm = { low = 0.5, high = 6.0 }
frequency_Hz = { low = 100.0, high = 3000.0, scale = "log" }
"""

#: name -> (objectives {result: direction}, constraints {result: {min/max}})
PROBLEMS = {
    # The problem: pull against input power, one loss constraint.
    "pull-power-loss": (
        {"pull_N": "maximize", "input_power_W": "minimize"},
        {"ring_loss_W": {"max": 3.0}},
    ),
    # The same without a constraint.
    "pull-power": ({"pull_N": "maximize", "input_power_W": "minimize"}, {}),
    # Three objectives, with a voltage constraint.
    "pull-power-volts": (
        {"pull_N": "maximize", "input_power_W": "minimize", "coil_voltage_V": "minimize"},
        {"ring_loss_W": {"max": 3.0}},
    ),
}


def study_text(
    name: str, problem: str, sampler: str | None, population: int | None, seed: int
) -> str:
    """The study file of ``problem`` (sampler None: the engine's default)."""
    objectives, constraints = PROBLEMS[problem]
    design = (ROOT / "optim" / "demo" / "demo_design.toml").as_posix()
    lines = [f'name = "{name}"', f'design = "{design}"', SEARCH, "[objectives]"]
    lines += [f'{k} = "{v}"' for k, v in objectives.items()]
    if constraints:
        lines.append("[constraints]")
        for k, b in constraints.items():
            inner = ", ".join(f"{bk} = {bv!r}" for bk, bv in b.items())
            lines.append(f"{k} = {{ {inner} }}")
    lines += ["[run]", f"seed = {seed}", "isothermal = true"]
    if sampler is not None:
        lines.append(f'sampler = "{sampler}"')
    if population is not None:
        lines.append(f"population = {population}")
    return "\n".join(lines) + "\n"


def grid_points(n: int = GRID_N) -> list[dict]:
    """The n x n x n grid of SPACE (log-spaced where the parameter has a log scale)."""
    axes = []
    for lo, hi, log in SPACE.values():
        axes.append(np.geomspace(lo, hi, n) if log else np.linspace(lo, hi, n))
    mesh = np.meshgrid(*axes, indexing="ij")
    return [
        {k: float(m.flat[i]) for k, m in zip(SPACE, mesh, strict=True)} for i in range(mesh[0].size)
    ]


def _spec_for_grid():
    import tempfile

    from optim.study.spec import load_study_spec

    folder = Path(tempfile.mkdtemp())
    path = folder / "grid.toml"
    path.write_text(study_text("grid", "pull-power", None, None, 0), encoding="utf-8")
    return load_study_spec(path)


def evaluate_point(values: dict) -> dict:
    """Every result of RESULTS at one point (NaN when the trial fails)."""
    from optim.study.engine import evaluate_trial

    out = evaluate_trial(_SPEC[0], values)
    row = dict(values)
    for r in RESULTS:
        row[r] = out.flat.get(r, float("nan")) if out.complete else float("nan")
    return row


_SPEC: list = []


def _init():
    _SPEC.append(_spec_for_grid())


def compute_grid(n: int = GRID_N, processes: int = 2) -> list[dict]:
    """Evaluate the grid (in ``processes`` processes)."""
    import multiprocessing as mp

    with mp.get_context("spawn").Pool(processes, initializer=_init) as pool:
        return pool.map(evaluate_point, grid_points(n), chunksize=8)


def load_grid() -> list[dict]:
    """The cached grid: one dict per design (parameters and RESULTS, NaN where it failed)."""
    with GRID_FILE.open(encoding="utf-8") as f:
        rows = list(csv.DictReader(line for line in f if not line.startswith("#")))
    return [{k: float(v) for k, v in r.items()} for r in rows]


def signs(problem: str) -> np.ndarray:
    objectives, _ = PROBLEMS[problem]
    return np.array([-1.0 if d == "maximize" else 1.0 for d in objectives.values()])


def feasible_losses(rows: list[dict], problem: str) -> np.ndarray:
    """The feasible points of ``rows`` in minimisation form (one row per point)."""
    objectives, constraints = PROBLEMS[problem]
    keep = []
    for r in rows:
        v = [r[k] for k in objectives]
        if not np.all(np.isfinite(v)):
            continue
        ok = all(
            ("min" not in b or r[k] >= b["min"]) and ("max" not in b or r[k] <= b["max"])
            for k, b in constraints.items()
        )
        if ok:
            keep.append(v)
    return np.array(keep, float).reshape(-1, len(objectives)) * signs(problem)


def front(points: np.ndarray) -> np.ndarray:
    """The non-dominated rows of ``points`` (minimisation), duplicates dropped. In lexicographic
    order a point can only be dominated by one before it, so one pass against the kept ones."""
    pts = np.unique(np.asarray(points, float), axis=0)  # sorted lexicographically
    kept: list = []
    for p in pts:
        if kept:
            k = np.asarray(kept)
            if np.any(np.all(k <= p, axis=1) & np.any(k < p, axis=1)):
                continue
        kept.append(p)
    return np.asarray(kept, float).reshape(-1, pts.shape[1] if pts.ndim == 2 else 0)


def reference_point(grid_front: np.ndarray) -> np.ndarray:
    """The nadir of the grid front pushed out by 10 % of its range."""
    lo, hi = grid_front.min(axis=0), grid_front.max(axis=0)
    return hi + 0.1 * np.maximum(hi - lo, 1e-12)


def hypervolume(points: np.ndarray, ref: np.ndarray) -> float:
    """Hypervolume dominated by ``points`` (minimisation) up to ``ref``: exact, by sorting in 2-D
    and by slicing along the first objective (a 2-D hypervolume per slice) in 3-D."""
    pts = np.asarray(points, float)
    pts = pts[np.all(pts < ref, axis=1)] if len(pts) else pts
    if len(pts) == 0:
        return 0.0
    pts = front(pts)
    if pts.shape[1] == 1:
        return float(ref[0] - pts[:, 0].min())
    if pts.shape[1] == 2:
        pts = pts[np.argsort(pts[:, 0])]
        ys = np.minimum.accumulate(pts[:, 1])
        xs = np.append(pts[1:, 0], ref[0])
        return float(np.sum((xs - pts[:, 0]) * (ref[1] - ys)))
    order = np.argsort(pts[:, 0])
    pts = pts[order]
    total = 0.0
    for i in range(len(pts)):
        x_next = pts[i + 1, 0] if i + 1 < len(pts) else ref[0]
        if x_next > pts[i, 0]:
            total += (x_next - pts[i, 0]) * hypervolume(pts[: i + 1, 1:], ref[1:])
    return float(total)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--grid", action="store_true", help="recompute the cached grid")
    ap.add_argument("--processes", type=int, default=2)
    args = ap.parse_args()
    if args.grid:
        rows = compute_grid(GRID_N, args.processes)
        GRID_FILE.parent.mkdir(parents=True, exist_ok=True)
        with GRID_FILE.open("w", encoding="utf-8", newline="") as f:
            f.write(
                f"# {GRID_N}^3 grid of tests/perf/quality_problems.py SPACE on the demo design, "
                "isothermal, by optim.study.engine.evaluate_trial "
                "(python tests/perf/quality_problems.py --grid)\n"
            )
            w = csv.DictWriter(f, fieldnames=[*SPACE, *RESULTS])
            w.writeheader()
            for r in rows:
                w.writerow({k: repr(v) for k, v in r.items()})
    rows = load_grid()
    for p in PROBLEMS:
        f = front(feasible_losses(rows, p))
        print(p, "grid front", len(f), "hv", hypervolume(f, reference_point(f)))


if __name__ == "__main__":
    main()
