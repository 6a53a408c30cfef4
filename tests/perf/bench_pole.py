"""Benchmark of the magnetised-pole model (models/fast/pole.py): median time of each stage and of evaluate.

Run on demand: ``OPENBLAS_NUM_THREADS=1 python tests/perf/bench_pole.py [--compare OLD_POLE_PY]``.
With ``--compare`` another copy of ``models/fast/pole.py`` (e.g. the version before a change) is timed
in the same process, interleaved with the current one so that both see the same machine load.
Prints a table; asserts nothing about time.
"""

from __future__ import annotations

import argparse
import importlib.util
import os
import statistics
import sys
import time

import models.fast.pole
from models import load_design
from models.fast.circuit import build_cells

try:
    from models.fast.circuit import iron_nodes
except ImportError:  # older circuit: the cell centres are the points
    iron_nodes = None
from models.evaluate import DEFAULT_FINENESS, evaluate
from models.pole_cache import _panel_size
from optim.demo import DEMO_DESIGN

DEMO = DEMO_DESIGN


def _load(path):
    spec = importlib.util.spec_from_file_location("pole_compare", path)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def _stages(pole, design):
    """name -> zero-argument callable for each stage, using the implementation ``pole``."""
    panels = pole.build_panels(
        design.pole, design.ring, panel_size=_panel_size(design, DEFAULT_FINENESS)
    )
    mp = pole.MagnetisedPole(panels, design.pole.relative_permeability)
    cells = build_cells(design, DEFAULT_FINENESS)
    rc, zc = cells.rc, cells.zc  # cell centres as the source / field points
    if (
        iron_nodes is not None
    ):  # the points models.fast.circuit couples to the panels, if it has them
        rc, zc, _ = iron_nodes(cells, panels, getattr(DEFAULT_FINENESS, "iron_nodes", 1))
    bt = mp.applied_tangential_field(rc, zc)

    def run_evaluate():
        saved = sys.modules["models.fast.pole"]
        sys.modules["models.fast.pole"] = pole
        try:
            evaluate(design)
        finally:
            sys.modules["models.fast.pole"] = saved

    def cold(fn):
        # Each stage on its own: drop the (point, panel) rules that an earlier stage cached.
        cache = getattr(pole, "_PAIR_RULES", None)

        def run():
            if cache is not None:
                cache.clear()
            return fn()

        return run

    def cells_stage():
        # As in models.fast.circuit.solve_circuit: operator, mutual inductance, derivative, same points.
        cold(lambda: None)()
        mp.operator(rc, zc)
        pole.panel_mutual(panels, rc, zc)
        pole.panel_mutual_dz(panels, rc, zc)

    return (
        {
            "build_panels": lambda: pole.build_panels(
                design.pole, design.ring, panel_size=_panel_size(design, DEFAULT_FINENESS)
            ),
            "MagnetisedPole()": lambda: pole.MagnetisedPole(
                panels, design.pole.relative_permeability
            ),
            "applied_tangential_field": cold(lambda: mp.applied_tangential_field(rc, zc)),
            "response": lambda: mp.response(bt),
            "operator": cold(lambda: mp.operator(rc, zc)),
            "panel_mutual": cold(lambda: pole.panel_mutual(panels, rc, zc)),
            "panel_mutual_dz": cold(lambda: pole.panel_mutual_dz(panels, rc, zc)),
            "panel_field": cold(lambda: pole.panel_field(panels, rc, zc)),
            "operator+mutual+mutual_dz": cells_stage,
            "evaluate": run_evaluate,
        },
        panels.n,
        rc.size,
    )


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--compare", help="path of another models/fast/pole.py to time alongside")
    parser.add_argument("--repeats", type=int, default=20)
    args = parser.parse_args()
    design = load_design(DEMO)
    impls = {"current": models.fast.pole}
    if args.compare:
        impls = {"compare": _load(args.compare), **impls}
    stages = {}
    for name, mod in impls.items():
        stages[name], n_panels, n_points = _stages(mod, design)
    times = {name: {k: [] for k in s} for name, s in stages.items()}
    for fns in stages.values():  # warm-up
        for fn in fns.values():
            fn()
    for _ in range(args.repeats):
        for name, fns in stages.items():
            for stage, fn in fns.items():
                t = time.perf_counter()
                fn()
                times[name][stage].append(time.perf_counter() - t)
    print(
        f"demo design: {n_panels} panels, {n_points} source/field points; "
        f"OPENBLAS_NUM_THREADS={os.environ.get('OPENBLAS_NUM_THREADS', 'unset')}; "
        f"load average {' '.join(f'{x:.2f}' for x in os.getloadavg())}; "
        f"median of {args.repeats} runs [ms]"
    )
    names = list(impls)
    print(
        f"{'stage':<26s}"
        + "".join(f"{n:>10s}" for n in names)
        + ("   speed-up" if args.compare else "")
    )
    for stage in stages["current"]:
        med = [statistics.median(times[n][stage]) * 1e3 for n in names]
        line = f"{stage:<26s}" + "".join(f"{m:10.2f}" for m in med)
        if args.compare:
            line += f"{med[0] / med[1]:10.1f}x"
        print(line)


if __name__ == "__main__":
    main()
