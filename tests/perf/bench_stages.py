"""Benchmark of the stages of one fast-model evaluation (models.evaluate.evaluate) on the demo.

Run on demand: ``OPENBLAS_NUM_THREADS=1 python tests/perf/bench_stages.py [--repeats N]``. Each
stage is timed on its own (caches that an earlier stage would have filled are cleared first), so
the stage times need not add up to the evaluate time. Prints a table; asserts nothing about time.
"""

from __future__ import annotations

import argparse
import importlib
import os
import statistics
import time

import numpy as np

import models.fast.pole as pole
from models import load_design
from models.evaluate import DEFAULT_FINENESS
from models.fast import circuit, core, flux
from models.fast.circuit import TARGET, build_cells, cell_mutual_matrix, solve_circuit
from models.fast.kernels import cell_panel_sums
from optim.demo import DEMO_DESIGN

# models/__init__ exports the function evaluate, which hides the module of that name.
ev = importlib.import_module("models.evaluate")

DEMO = DEMO_DESIGN


def _clear_caches():
    """Forget every cached rule, pole model and part's block, so that a stage is timed from
    cold."""
    pole._PAIR_RULES.clear()
    for kept in ("_PANEL_ROWS", "_BLOCKS"):  # a part's blocks (absent in older checkouts)
        getattr(circuit, kept, {}).clear()
    cache_clear = getattr(ev, "clear_pole_cache", None)
    if cache_clear is not None:
        cache_clear()


def sol_P(design, fine, mp):
    """The bound-current operator of the demo's cells (panels x cells)."""
    return circuit.assemble_circuit(design, fine, mp).P


def _stages(design):
    fine = DEFAULT_FINENESS
    cells = build_cells(design, fine)
    mp = ev.pole_model_for(design, fine)
    panels = mp.panels
    coupling = (cells.rc, cells.zc, cells.dr, cells.dz, fine.iron_nodes, fine.iron_reach)
    applied = cell_panel_sums(panels, *coupling)[2].T.copy()
    sol = solve_circuit(design, fine, mp)
    result = ev.evaluate(design)
    P = sol_P(design, fine, mp)
    temps = {"coil": 20.0, "ring": 20.0, "target": 20.0}
    n = cells.n - int((cells.part == circuit.COIL).sum()) + 1
    rng = np.random.default_rng(0)
    Z = rng.standard_normal((n, n)) + 1j * rng.standard_normal((n, n))
    rhs = rng.standard_normal(n) + 0j

    def cold(fn):
        def run():
            _clear_caches()
            return fn()

        return run

    return {
        "build_cells": lambda: build_cells(design, fine),
        "cell_mutual_matrix": lambda: cell_mutual_matrix(cells, dz_rows=cells.part == TARGET),
        "build_panels": lambda: pole.build_panels(
            design.pole, design.ring, panel_size=ev._panel_size(design, fine)
        ),
        "MagnetisedPole()": lambda: pole.MagnetisedPole(panels, design.pole.relative_permeability),
        "pole_model_for (cold)": cold(lambda: ev.pole_model_for(design, fine)),
        "pole_model_for (warm)": lambda: ev.pole_model_for(design, fine),
        "cell_panel_sums": lambda: cell_panel_sums(panels, *coupling),
        "operator solve": lambda: mp.response(applied),
        "complex solve": lambda: np.linalg.solve(Z, rhs),
        "solve_circuit (warm pole)": cold(lambda: solve_circuit(design, fine, mp)),
        "pull_by_source": lambda: ev.pull_by_source(sol),
        "core_peak_flux_density": lambda: flux.core_peak_flux_density(design, sol),
        "pole_flux_density": lambda: flux.pole_flux_density(design, sol),
        "core_grid": lambda: core.core_grid(design, cells, panels, P),
        "error bar (cold)": cold(
            lambda: ev._with_error_bar(result.electrical, design, fine, temps)
        ),
        "evaluate (cold)": cold(lambda: ev.evaluate(design)),
        "evaluate (warm pole)": lambda: ev.evaluate(design),
    }, (cells.n, panels.n)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=20)
    args = parser.parse_args()
    design = load_design(DEMO)
    stages, (n_cells, n_panels) = _stages(design)
    times = {k: [] for k in stages}
    for fn in stages.values():  # warm-up
        fn()
    for _ in range(args.repeats):
        for stage, fn in stages.items():
            t = time.perf_counter()
            fn()
            times[stage].append(time.perf_counter() - t)
    print(
        f"demo design: {n_cells} cells, {n_panels} panels; "
        f"OPENBLAS_NUM_THREADS={os.environ.get('OPENBLAS_NUM_THREADS', 'unset')}; "
        f"load average {' '.join(f'{x:.2f}' for x in os.getloadavg())}; "
        f"median of {args.repeats} runs [ms]"
    )
    for stage, t in times.items():
        print(f"{stage:<28s}{statistics.median(t) * 1e3:10.2f}")


if __name__ == "__main__":
    main()
