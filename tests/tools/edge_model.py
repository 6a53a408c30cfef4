"""The edge set: parts about as wide as the pole, where the pull is a small difference of large
terms, held to a finite-element reference refined until two meshes agree.

``python -m tests.tools.edge_model`` solves every case with the FEM (models.fem.solve at growing
``refine`` until two successive meshes agree to 0.5 % in pull) and rewrites
tests/data/edge_model.csv with the reference columns; tests/validation/test_edge_model.py holds the fast
model (re-evaluated live, a fraction of a second a case) to them.

The cases: a lossless laminated pole of radius 10 mm (mu_r 2000, so that the geometry's error is
seen alone), the cross-model set's coil, 3 A; 12 parts within +-5 % of the pole's radius (4 within
+-1 %) and 3 controls at 0.8 and 1.2 x, discs and washers, aluminium and copper, gaps 0.5-2 mm,
0.1-3 kHz.
"""

from __future__ import annotations

import copy
import csv
import sys
import time
from pathlib import Path

from models.design import design_from_dict
from tests.conftest import TEST_COIL

CSV_PATH = Path(__file__).resolve().parents[1] / "data" / "edge_model.csv"
POLE_RADIUS_MM = 10.0

BASE = {
    "pole": {
        "radius_mm": POLE_RADIUS_MM,
        "length_mm": 40.0,
        "relative_permeability": 2000.0,
        "conductivity_S_per_m": 0.0,
    },
    "coil": TEST_COIL,
    "drive": {"current_A": 3.0},
}

# name: (frequency_Hz, target (radius, thickness, gap, material, inner radius), ring (ri, ro, depth)
# or None); radii, thickness and gap in mm
CASES = {
    "e01-disc-al-r100": (400.0, (10.0, 1.0, 1.0, "aluminium-1350", 0.0), (4.0, 7.0, 3.0)),
    "e02-washer-cu-r100": (1000.0, (10.0, 1.0, 1.0, "copper", 3.0), (3.0, 6.0, 2.0)),
    "e03-disc-cu-r099": (2000.0, (9.9, 0.5, 0.5, "copper", 0.0), (4.0, 7.0, 3.0)),
    "e04-disc-al-r101": (200.0, (10.1, 2.0, 1.5, "aluminium-1350", 0.0), (5.0, 8.0, 2.0)),
    "e05-disc-al-r095": (1000.0, (9.5, 1.0, 0.5, "aluminium-1350", 0.0), (4.0, 7.0, 3.0)),
    "e06-disc-cu-r105": (3000.0, (10.5, 1.0, 2.0, "copper", 0.0), (4.0, 8.0, 4.0)),
    "e07-washer-al-r097": (600.0, (9.7, 1.5, 0.8, "aluminium-1350", 4.0), (4.0, 7.0, 3.0)),
    "e08-washer-cu-r103": (100.0, (10.3, 0.8, 1.2, "copper", 2.0), (3.0, 7.0, 3.0)),
    "e09-disc-cu-r100-plain": (3000.0, (10.0, 1.0, 0.5, "copper", 0.0), None),
    "e10-disc-al-r098": (1500.0, (9.8, 0.6, 2.0, "aluminium-1350", 0.0), (6.0, 9.0, 3.0)),
    "e11-disc-al-r102-thick": (800.0, (10.2, 3.0, 1.0, "aluminium-1350", 0.0), (4.0, 7.0, 3.0)),
    "e12-washer-cu-r1005": (2000.0, (10.05, 1.0, 0.6, "copper", 5.0), (2.0, 5.0, 1.5)),
    "e13-control-disc-al-r080": (1000.0, (8.0, 1.0, 1.0, "aluminium-1350", 0.0), (4.0, 7.0, 3.0)),
    "e14-control-disc-cu-r120": (500.0, (12.0, 1.0, 1.0, "copper", 0.0), (4.0, 7.0, 3.0)),
    "e15-control-washer-cu-r080": (2000.0, (8.0, 1.0, 0.5, "copper", 3.0), (3.0, 6.0, 2.0)),
    # near the sign change: the terms sum to 5-30 x the net
    "e16-washer-al-r100-far": (300.0, (10.0, 1.0, 2.0, "aluminium-1350", 3.0), (3.0, 6.0, 2.0)),
    "e17-washer-al-r100": (1000.0, (10.0, 1.0, 1.0, "aluminium-1350", 3.0), (3.0, 6.0, 2.0)),
    "e18-washer-cu-r104": (300.0, (10.4, 1.0, 1.0, "copper", 3.0), (3.0, 6.0, 2.0)),
    "e19-disc-cu-r104": (300.0, (10.4, 1.0, 1.0, "copper", 0.0), (3.0, 6.0, 2.0)),
    "e20-disc-al-r104": (1000.0, (10.4, 1.0, 1.0, "aluminium-1350", 0.0), (5.0, 8.0, 3.0)),
    "e21-washer-al-r100-3k": (3000.0, (10.0, 1.0, 1.0, "aluminium-1350", 3.0), (5.0, 8.0, 3.0)),
    "e22-washer-cu-r104-near": (1000.0, (10.4, 1.0, 0.5, "copper", 3.0), (5.0, 8.0, 3.0)),
    "e23-washer-cu-r100-3k": (3000.0, (10.0, 1.0, 0.5, "copper", 3.0), (3.0, 6.0, 2.0)),
    "e24-disc-al-r104-far": (300.0, (10.4, 1.0, 2.0, "aluminium-1350", 0.0), (3.0, 6.0, 2.0)),
}

#: Two successive FEM meshes agree to this in pull before the finer one is kept [-].
FEM_AGREEMENT = 0.005
#: refine levels of models.fem.solve tried in turn.
FEM_LEVELS = (1.6, 2.5, 4.0, 6.0)


def case_design(name: str):
    freq, target, ring = CASES[name]
    d = copy.deepcopy(BASE)
    d["name"] = name
    d["drive"]["frequency_Hz"] = freq
    d["target"] = {
        "radius_mm": target[0],
        "thickness_mm": target[1],
        "gap_mm": target[2],
        "material": target[3],
    }
    if target[4] > 0:
        d["target"]["inner_radius_mm"] = target[4]
    if ring is not None:
        d["ring"] = {
            "inner_radius_mm": ring[0],
            "outer_radius_mm": ring[1],
            "depth_mm": ring[2],
            "material": "copper",
        }
    return design_from_dict(d)


def fem_pull(design):
    """Pull [N] of the finest mesh, its change from the mesh before [-], the refine level and the
    solve time [s], refining until two meshes agree to FEM_AGREEMENT."""
    from models.fem.solve import solve

    previous = None
    t = time.perf_counter()
    for level in FEM_LEVELS:
        pull = solve(design, refine=level).pull_N
        if previous is not None:
            change = abs(pull - previous) / abs(pull)
            if change <= FEM_AGREEMENT:
                return pull, change, level, time.perf_counter() - t
        previous = pull
    return pull, change, level, time.perf_counter() - t


def read_rows() -> dict:
    """The kept rows of tests/data/edge_model.csv by case (empty if there is none)."""
    if not CSV_PATH.exists():
        return {}
    with CSV_PATH.open() as fh:
        return {
            r["case"]: r for r in csv.DictReader(line for line in fh if not line.startswith("#"))
        }


def main(names=None) -> None:
    """FEM of the named cases (all by default), merged into the kept table (rows of other cases
    kept, rows of cases no longer in CASES dropped)."""
    from models import evaluate

    names = names or list(CASES)
    kept = read_rows()
    rows = []
    for name in names:
        design = case_design(name)
        pull, change, level, seconds = fem_pull(design)
        fast = evaluate(design, isothermal=True)
        row = {
            "case": name,
            "target_over_pole_radius": design.target.radius / design.pole.radius,
            "fem_pull_N": pull,
            "fem_mesh_change": change,
            "fem_refine": level,
            "fem_time_s": seconds,
            "fast_pull_N_when_written": fast.pull_N,
            "pull_cancellation": fast.pull_cancellation,
        }
        rows.append(row)
        print(
            f"{name:28s} fem {pull:+.5e} (mesh change {100 * change:.3f} %, refine {level}) fast "
            f"{fast.pull_N:+.5e} ({100 * (fast.pull_N - pull) / abs(pull):+.2f} %), terms/net "
            f"{fast.pull_cancellation:.1f}",
            flush=True,
        )
    fresh = {row["case"]: row for row in rows}
    rows = [fresh.get(name) or kept[name] for name in CASES if name in fresh or name in kept]
    with CSV_PATH.open("w", newline="") as fh:
        fh.write(
            "# FEM pull of the edge set (tests/tools/edge_model.py): models.fem.solve refined until two\n"
            "# successive meshes agree to 0.5 %. Produced by `python -m tests.tools.edge_model`.\n"
        )
        w = csv.DictWriter(fh, fieldnames=list(rows[0]))
        w.writeheader()
        for row in rows:
            w.writerow({k: (f"{v:.8g}" if isinstance(v, float) else v) for k, v in row.items()})


if __name__ == "__main__":
    main(sys.argv[1:] or None)
