"""Benchmark of the fast model's speed, as ratios measured in one run.

    python tests/perf/bench_speed.py [--repeats N] [--trials N] [--no-study] [--no-fem] [--cpu]

Prints, on the demo design: one complex dense solve of the design's loop-equation size (the unit
of the ratios), ``evaluate`` of a new pole geometry, ``evaluate`` at a repeated geometry (a gap,
current, frequency and target sweep), a robust trial of the demo study (its gaps, thermal
coupling, the study's own result function), the demo study's trials per second on 1 and 2
workers (real fast model, journal storage) and one solve of the finite-element reference at its
default mesh. Times are medians; each row also shows its ratio to one complex solve, and the FEM
row the ratio FEM / evaluate; ``--cpu`` times them in this process's CPU time (the study rows
stay wall time). Runs on older checkouts too (public interfaces only), so that a
before/after comparison is two runs on one machine:
``PYTHONPATH=/path/to/old/checkout python tests/perf/bench_speed.py``. Asserts nothing.
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
import time
import uuid
from pathlib import Path

if __name__ == "__main__" and not os.environ.get("PYTHONPATH"):
    sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

import numpy as np  # noqa: E402

from models import evaluate, load_design  # noqa: E402
from models.design import with_value  # noqa: E402
from optim.demo import DEMO_DESIGN, DEMO_STUDY  # noqa: E402
from tests.perf.bench_evaluate import median_time  # noqa: E402

#: The clock of the in-process rows: wall time (bench_evaluate's median_time) or, with
#: ``--cpu``, this process's CPU time (time.process_time), which on a machine shared with other
#: work counts the work rather than the wait for a core (BLAS runs one thread: models.threads).
CPU_CLOCK = False


def median_ms(fn, repeats):
    """Median time of ``fn`` [ms] (bench_evaluate's median_time; CPU time with ``--cpu``)."""
    if not CPU_CLOCK:
        return median_time(fn, repeats) * 1e3
    fn()
    times = []
    for _ in range(repeats):
        t = time.process_time()
        fn()
        times.append(time.process_time() - t)
    return float(np.median(times)) * 1e3


class Fresh:
    """Designs that differ from the demo in the ring's depth by a few micrometres each call, so
    that every evaluation meets a pole geometry no cache holds."""

    def __init__(self, design):
        self.design = design
        self.depth = design.ring.depth * 1e3
        self.i = 0

    def __call__(self):
        self.i += 1
        return with_value(self.design, "ring.depth_mm", self.depth + 1e-3 * self.i)


def _robust_trial(design, spec):
    """One trial of the demo study's result function at a design (its gaps, its thermal mode)."""
    from optim.study import objectives

    kwargs = {"isothermal": spec.isothermal} if hasattr(spec, "isothermal") else {}
    if hasattr(spec, "parts"):
        kwargs["parts"] = spec.parts
    return objectives.results_of(design, spec.gaps_mm, **kwargs)


def _study_rate(workers, trials):
    from optim.study.run import run_study
    from optim.study.spec import load_study_spec

    spec = load_study_spec(DEMO_STUDY)
    spec.run.pop("minutes", None)
    spec.name = f"speed-{uuid.uuid4().hex[:8]}"
    with tempfile.TemporaryDirectory() as tmp:
        t0 = time.perf_counter()
        s = run_study(
            spec,
            Path(tmp) / spec.name,
            workers=workers,
            trials=trials,
            echo=lambda *_: None,
            tty=False,
        )
        wall = time.perf_counter() - t0
    return s["trials_this_run"], wall


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=15)
    ap.add_argument("--trials", type=int, default=200, help="trials per demo-study run")
    ap.add_argument("--no-study", action="store_true")
    ap.add_argument("--no-fem", action="store_true")
    ap.add_argument(
        "--cpu", action="store_true", help="time the in-process rows in CPU time (a busy machine)"
    )
    args = ap.parse_args()
    global CPU_CLOCK
    CPU_CLOCK = args.cpu
    design = load_design(DEMO_DESIGN)
    base = evaluate(design)
    n = base.n_cells  # loop equations: of the order of the cells (the coil's are one loop)
    rng = np.random.default_rng(0)
    Z = rng.standard_normal((n, n)) + 1j * rng.standard_normal((n, n))
    rhs = rng.standard_normal(n) + 0j
    rows = []
    solve_ms = median_ms(lambda: np.linalg.solve(Z, rhs), 200)
    rows.append((f"complex solve {n}x{n}", solve_ms))
    fresh = Fresh(design)
    rows.append(("evaluate, new pole geometry", median_ms(lambda: evaluate(fresh()), args.repeats)))
    rows.append(
        (
            "evaluate, new geometry, isothermal",
            median_ms(lambda: evaluate(fresh(), isothermal=True), args.repeats),
        )
    )
    sweeps = {
        "gap": ("target.gap_mm", np.linspace(1.0, 2.0, 7)),
        "current": ("drive.current_A", np.linspace(4.0, 8.0, 7)),
        "frequency": ("drive.frequency_Hz", np.linspace(300.0, 500.0, 7)),
        "target radius": ("target.radius_mm", np.linspace(4.0, 6.0, 7)),
    }
    for name, (key, values) in sweeps.items():
        try:
            designs = [with_value(design, key, float(v)) for v in values]
        except Exception as e:  # a key the design does not have (voltage drive, an old checkout)
            print(f"skipped the {name} sweep: {e}")
            continue
        for d in designs:
            evaluate(d)
        ms = median_ms(lambda ds=designs: [evaluate(d) for d in ds], max(args.repeats // 3, 3))
        rows.append((f"evaluate, repeated geometry ({name} sweep), a point", ms / len(designs)))
    from optim.study.spec import load_study_spec

    spec = load_study_spec(DEMO_STUDY)
    rows.append(
        (
            f"robust trial of the demo study ({len(spec.gaps_mm)} gaps), new geometry",
            median_ms(lambda: _robust_trial(fresh(), spec), args.repeats),
        )
    )
    fem_ms = None
    if not args.no_fem:
        from models.fem.solve import solve

        clock = time.process_time if CPU_CLOCK else time.perf_counter
        t = clock()
        solve(design)
        first = clock() - t
        fem_ms = median_ms(lambda: solve(design), 2)
        rows.append(("FEM reference, default mesh (first call)", first * 1e3))
        rows.append(("FEM reference, default mesh", fem_ms))
    print(
        f"demo design: {base.n_cells} cells, {base.n_panels} panels; "
        f"OPENBLAS_NUM_THREADS={os.environ.get('OPENBLAS_NUM_THREADS', 'unset')}; "
        f"load average {' '.join(f'{x:.2f}' for x in os.getloadavg())}; medians"
        f"{' of CPU time' if CPU_CLOCK else ''}"
    )
    print(f"{'':64s} {'ms':>9s} {'x solve':>8s}")
    for name, ms in rows:
        print(f"{name:64s} {ms:9.2f} {ms / solve_ms:8.1f}")
    new_ms = rows[1][1]
    if fem_ms is not None:
        print(f"FEM / evaluate (new geometry): {fem_ms / new_ms:.0f}x")
    if not args.no_study:
        print(
            f"\ndemo study, fast model, journal, {args.trials} trials a run (wall time with start-up):"
        )
        for workers in (1, 2):
            done, wall = _study_rate(workers, args.trials)
            print(
                f"  {workers} worker(s): {done} trials in {wall:.1f} s, {done / wall:.1f} trials/s"
            )


if __name__ == "__main__":
    main()
