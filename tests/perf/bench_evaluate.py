"""Benchmark of the fast model: median time of one evaluate, and time and pull vs discretisation.

Run on demand: ``python tests/perf/bench_evaluate.py``. Prints tables; asserts nothing about time.
"""

from __future__ import annotations

import statistics
import time

from models import evaluate, load_design
from models.evaluate import DEFAULT_FINENESS
from optim.demo import DEMO_DESIGN

DEMO = DEMO_DESIGN


def median_time(fn, repeats=15):
    fn()
    times = []
    for _ in range(repeats):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return statistics.median(times)


def main():
    design = load_design(DEMO)
    t = median_time(lambda: evaluate(design))
    print(f"median evaluate at default fineness: {t * 1e3:.2f} ms (aim <= 20 ms)\n")
    print(
        f"{'fineness':>9s} {'cells':>6s} {'panels':>7s} {'time_ms':>9s} {'pull_mN':>10s} "
        f"{'vs finest':>10s} {'ring_loss_W':>12s} {'target_loss_W':>14s}"
    )
    rows = []
    for f in (0.5, 0.75, 1.0, 1.5, 2.0, 3.0):
        fine = DEFAULT_FINENESS.scaled(f)
        r = evaluate(design, fineness=fine)
        tt = median_time(lambda fine=fine: evaluate(design, fineness=fine), repeats=3)
        rows.append((f, r, tt))
    ref = rows[-1][1].pull_N
    for f, r, tt in rows:
        print(
            f"{f:9.2f} {r.n_cells:6d} {r.n_panels:7d} {tt * 1e3:9.2f} {r.pull_N * 1e3:10.4f} "
            f"{(r.pull_N / ref - 1) * 100:9.2f}% {r.ring_loss_W:12.4g} {r.target_loss_W:14.4g}"
        )


if __name__ == "__main__":
    main()
