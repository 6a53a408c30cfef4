"""Cost and error of the fast model at thin gaps, with and without the gap floor.

``python tests/perf/bench_thin_gap.py`` evaluates the thin-gap cross-model cases (g01, g02, g05
of tests/tools/cross_model.py, and g01's geometry at 0.1 and 0.2 mm) isothermally at the default
fineness, once as before the floor (``Fineness(gap_floor=0)``: cells and panels shrink with
the gap without end) and once with the default ``gap_floor``, and prints cells, panels, the
median time of three evaluations (repeated pole geometry after a first call) and the error of
pull, part loss and ring loss against the FEM reference stored in tests/data/cross_model.csv
(run ``python -m tests.tools.cross_model`` first after a change; the 0.1 and 0.2 mm variants of g01
have no stored FEM row, their error column is left empty). Times are this machine's, under its
load of the moment: compare the two columns of one run, not runs.
"""

from __future__ import annotations

import csv
import statistics
import sys
import time

from models import evaluate
from models.design import with_value
from models.evaluate import DEFAULT_FINENESS
from models.fast.discretize import Fineness
from tests.tools.cross_model import CSV_PATH, case_design

CASES = (
    ("g01-400Hz-held-0.05mm", None),
    ("g01-400Hz-held-0.05mm", 0.1),
    ("g01-400Hz-held-0.05mm", 0.2),
    ("g02-1kHz-m400-0.1mm-cu", None),
    ("g05-1kHz-wide-0.05mm", None),
)
QUANTITIES = ("pull_N", "target_loss_W", "ring_loss_W")


def _fem_rows() -> dict:
    with CSV_PATH.open() as fh:
        return {r["case"]: r for r in csv.DictReader(line for line in fh if line[0] != "#")}


def _run(design, fineness: Fineness):
    evaluate(design, isothermal=True, fineness=fineness)  # pole model built and cached
    times, result = [], None
    for _ in range(3):
        t = time.perf_counter()
        result = evaluate(design, isothermal=True, fineness=fineness)
        times.append(time.perf_counter() - t)
    return result, statistics.median(times)


def main() -> None:
    fem = _fem_rows()
    before = Fineness(gap_floor=0.0)
    print(
        "| case | gap [mm] | fineness | cells | panels | time [ms] | "
        + " | ".join(f"{q} vs FEM [%]" for q in QUANTITIES)
        + " |"
    )
    print("|" + "---|" * (6 + len(QUANTITIES)))
    for name, gap in CASES:
        design = case_design(name)
        if gap is not None:
            design = with_value(design, "target.gap_mm", gap)
        row = fem.get(name) if gap is None else None
        for label, fineness in (("before (no floor)", before), ("gap floor", DEFAULT_FINENESS)):
            r, t = _run(design, fineness)
            errors = []
            for q in QUANTITIES:
                ref = float(row[f"fem_{q}"]) if row else float("nan")
                value = getattr(r, q)
                errors.append(f"{100 * (value - ref) / abs(ref):+.2f}" if row and ref else "")
            print(
                f"| {name} | {design.target.gap * 1e3:g} | {label} | {r.n_cells} | {r.n_panels} "
                f"| {1e3 * t:.0f} | " + " | ".join(errors) + " |",
                flush=True,
            )


if __name__ == "__main__":
    sys.exit(main())
