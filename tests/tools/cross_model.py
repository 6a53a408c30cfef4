"""The cross-model test set: geometries on which the fast model is held to the FEM reference.

``python -m tests.tools.cross_model`` re-runs every case and rewrites tests/data/cross_model.csv (the table
kept in the repository); tests/validation/test_cross_model.py runs the same cases live.

The set spans frequency 50 Hz - 5 kHz, target radius 0.3 - 1.5 x pole radius, gap 0.05 - 6 mm,
target thickness 0.5 - 5 mm, with and without ring, ring width and depth, mu_r 200 - 5000, aluminium
and copper targets. The base machine is the demo's pole and coil. The c cases' poles are given by
mu_r alone (lossless); the k cases (1 - 5 kHz) name a library grade, whose sheets' eddy currents,
hysteresis and excess losses both models carry (``core_*`` columns). The g cases are the gaps of
a job: a part held at contact through a wear plate (0.05 and 0.1 mm: g01, g02, g05, the last
with its edge beyond the pole's corner) and picks from far below (4 and 6 mm: g03, g04).
"""

from __future__ import annotations

import copy
import csv
import sys
import time
from pathlib import Path

from models.design import design_from_dict
from tests.conftest import TEST_COIL

CSV_PATH = Path(__file__).resolve().parents[1] / "data" / "cross_model.csv"

BASE = {
    "pole": {"radius_mm": 10.0, "length_mm": 40.0, "conductivity_S_per_m": 0.0},
    "coil": TEST_COIL,
    "drive": {"current_A": 3.0},
}

# name: (frequency_Hz, mu_r or a pole material, target (radius, thickness, gap, material[, inner]),
#        ring (ri, ro, depth) or None)
CASES = {
    "c01-50Hz-small-al": (50.0, 2000.0, (3.0, 1.0, 0.5, "aluminium-1350"), (4.0, 7.0, 3.0)),
    "c02-demo-400Hz": (400.0, 2000.0, (4.0, 1.0, 0.6, "aluminium-1350"), (4.0, 7.0, 3.0)),
    "c03-400Hz-large-al": (400.0, 2000.0, (15.0, 1.0, 1.0, "aluminium-1350"), (4.0, 7.0, 3.0)),
    "c04-1kHz-plain-cu-thin": (1000.0, 1000.0, (8.0, 0.5, 0.2, "copper"), None),
    "c05-5kHz-far-cu": (5000.0, 5000.0, (6.0, 2.0, 3.0, "copper"), (3.0, 5.0, 2.0)),
    "c06-200Hz-thick-6061": (200.0, 200.0, (10.0, 5.0, 1.5, "aluminium-6061-t6"), (5.0, 8.0, 4.0)),
    "c07-2kHz-wide-ring": (2000.0, 500.0, (5.0, 1.5, 0.3, "aluminium-1350"), (2.0, 6.0, 1.5)),
    "c08-50Hz-plain-large-cu": (50.0, 2000.0, (12.0, 3.0, 2.0, "copper"), None),
    "c09-800Hz-deep-ring": (800.0, 3000.0, (7.0, 0.8, 0.8, "aluminium-1350"), (4.0, 8.0, 5.0)),
    "c10-3kHz-small-cu": (3000.0, 2000.0, (3.0, 1.0, 0.4, "copper"), (1.5, 3.5, 2.0)),
    "c11-100Hz-outer-ring": (100.0, 1500.0, (9.0, 2.0, 1.0, "aluminium-1350"), (6.0, 9.0, 3.0)),
    "c12-600Hz-washer": (600.0, 2000.0, (5.0, 1.0, 0.5, "aluminium-1350", 1.5), (4.0, 7.0, 3.0)),
    "c13-1500Hz-far-thick": (1500.0, 800.0, (4.5, 4.0, 2.5, "aluminium-6061-t6"), (3.0, 6.0, 2.5)),
    "c14-400Hz-plain-small": (400.0, 2000.0, (4.0, 1.0, 0.6, "aluminium-1350"), None),
    "k01-1kHz-m400": (
        1000.0,
        "electrical-steel-m400",
        (4.0, 1.0, 0.6, "aluminium-1350"),
        (4.0, 7.0, 3.0),
    ),
    "k02-2kHz-m400-large": (
        2000.0,
        "electrical-steel-m400",
        (8.0, 1.0, 1.0, "aluminium-1350"),
        (4.0, 7.0, 3.0),
    ),
    "k03-5kHz-m400-cu": (
        5000.0,
        "electrical-steel-m400",
        (6.0, 2.0, 1.5, "copper"),
        (3.0, 5.0, 2.0),
    ),
    "k04-1500Hz-m270": (
        1500.0,
        "electrical-steel-m270",
        (5.0, 1.0, 0.5, "aluminium-1350"),
        (2.0, 6.0, 1.5),
    ),
    "k05-3kHz-m270-plain": (3000.0, "electrical-steel-m270", (8.0, 0.5, 0.4, "copper"), None),
    "k06-4kHz-thin": (
        4000.0,
        "electrical-steel-thin-020",
        (7.0, 0.8, 0.8, "aluminium-1350"),
        (4.0, 8.0, 5.0),
    ),
    "k07-2500Hz-thin-washer": (
        2500.0,
        "electrical-steel-thin-020",
        (5.0, 1.0, 0.5, "aluminium-1350", 1.5),
        (4.0, 7.0, 3.0),
    ),
    "k08-1kHz-ferrite": (
        1000.0,
        "ferrite-mnzn",
        (4.0, 1.0, 0.6, "aluminium-1350"),
        (4.0, 7.0, 3.0),
    ),
    "g01-400Hz-held-0.05mm": (400.0, 2000.0, (5.0, 1.0, 0.05, "aluminium-1350"), (4.0, 7.0, 3.0)),
    "g02-1kHz-m400-0.1mm-cu": (
        1000.0,
        "electrical-steel-m400",
        (8.0, 0.5, 0.1, "copper"),
        (3.0, 5.0, 2.0),
    ),
    "g03-400Hz-pick-4mm": (400.0, 2000.0, (6.0, 1.0, 4.0, "aluminium-1350"), (4.0, 7.0, 3.0)),
    "g04-200Hz-m400-pick-6mm-cu": (200.0, "electrical-steel-m400", (8.0, 2.0, 6.0, "copper"), None),
    "g05-1kHz-wide-0.05mm": (1000.0, 1000.0, (12.0, 1.0, 0.05, "aluminium-1350"), None),
}


def case_design(name: str):
    freq, mu_r, target, ring = CASES[name]
    d = copy.deepcopy(BASE)
    d["name"] = name
    if isinstance(mu_r, str):
        del d["pole"]["conductivity_S_per_m"]
        d["pole"]["material"] = mu_r
    else:
        d["pole"]["relative_permeability"] = mu_r
    d["drive"]["frequency_Hz"] = freq
    d["target"] = {
        "radius_mm": target[0],
        "thickness_mm": target[1],
        "gap_mm": target[2],
        "material": target[3],
    }
    if len(target) > 4:
        d["target"]["inner_radius_mm"] = target[4]
    if ring is not None:
        d["ring"] = {
            "inner_radius_mm": ring[0],
            "outer_radius_mm": ring[1],
            "depth_mm": ring[2],
            "material": "copper",
        }
    return design_from_dict(d)


QUANTITIES = (
    "pull_N",
    "target_loss_W",
    "ring_loss_W",
    "pole_flux_density_T",
    "core_loss_W",
    "core_eddy_loss_W",
    "core_hysteresis_loss_W",
    "core_excess_loss_W",
)


def run_case(name: str):
    """Fast model and FEM reference of one case: a flat dict row for the CSV."""
    from models import evaluate
    from models.fem.reference import reference

    design = case_design(name)
    t = time.perf_counter()
    fast = evaluate(design, isothermal=True)
    fast_time = time.perf_counter() - t
    ref = reference(design)
    fem = ref.result.to_dict()
    row = {"case": name, "fast_time_s": fast_time, "fem_time_s": ref.run_time_s}
    for q in QUANTITIES:
        f, r = getattr(fast, q), fem[q]
        row[f"fast_{q}"] = f
        row[f"fem_{q}"] = r
        row[f"fem_unc_{q}"] = ref.uncertainty.get(q, float("nan"))
        row[f"diff_pct_{q}"] = 100.0 * (f - r) / abs(r) if r != 0 else float("nan")
    return row


def main(names=None) -> None:
    """Run the named cases (all by default); only a run of all cases rewrites the CSV."""
    write = not names
    names = names or list(CASES)
    rows = []
    for name in names:
        row = run_case(name)
        rows.append(row)
        print(
            f"{name:26s} pull {row['fast_pull_N']:+.4e} vs {row['fem_pull_N']:+.4e} "
            f"({row['diff_pct_pull_N']:+.2f} %, unc {100 * row['fem_unc_pull_N']:.2f} %)  "
            f"target loss {row['diff_pct_target_loss_W']:+.2f} %  ring loss "
            f"{row['diff_pct_ring_loss_W']:+.2f} %  core loss {row['diff_pct_core_loss_W']:+.2f} %",
            flush=True,
        )
    if not write:
        return
    CSV_PATH.parent.mkdir(exist_ok=True)
    with CSV_PATH.open("w", newline="") as fh:
        fh.write(
            "# Fast multi-loop model vs the FEM reference (models/fem/reference.py: reference(), finest of a\n"
            "# two-mesh, two-boundary study). Produced by `python -m tests.tools.cross_model`.\n"
        )
        w = csv.DictWriter(fh, fieldnames=list(rows[0]))
        w.writeheader()
        for row in rows:
            w.writerow({k: (f"{v:.6g}" if isinstance(v, float) else v) for k, v in row.items()})


if __name__ == "__main__":
    main(sys.argv[1:] or None)
