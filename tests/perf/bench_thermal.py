"""Benchmark of the electro-thermal coupling: evaluate with and without it on the demo design.

Run on demand: ``python tests/perf/bench_thermal.py``. Prints a table; asserts nothing about time.
"""

from __future__ import annotations

import statistics
import time
import tomllib

from models.design import design_from_dict
from models.evaluate import evaluate
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
    data = tomllib.loads(DEMO.read_text())
    cases = {
        "demo as filed": data,
        "demo, 10 % duty": {**data, "thermal": {"duty_cycle": 0.1, "emissivity": 0.9}},
    }
    print(f"{'case':18s} {'isothermal_ms':>14s} {'coupled_ms':>11s} {'status'}")
    for name, d in cases.items():
        design = design_from_dict(d)
        t_iso = median_time(lambda design=design: evaluate(design, isothermal=True))
        t_cpl = median_time(lambda design=design: evaluate(design))
        status = evaluate(design).thermal_status
        print(f"{name:18s} {t_iso * 1e3:14.1f} {t_cpl * 1e3:11.1f} {status}")


if __name__ == "__main__":
    main()
