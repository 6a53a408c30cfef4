"""On-demand audit: seeded random designs inside the validated range, fast model vs one FEM solve.

``python -m tests.tools.audit_random SEED COUNT`` prints one line per design: the pull, target-loss and
ring-loss differences against ``models.fem.solve.solve`` (at ``FEM_REFINE``), the pull's gross/net
ratio (the sum of the split's magnitudes over the net pull; above ~5 the pull is a small
difference of large terms and its relative error is amplified), the pull's own error estimate
(``pull_uncertainty_relative``) and whether it covers the difference; then the share covered and
the median of estimate / |difference| where the difference exceeds 1 %. Not part of the test run
(minutes of FEM time).
"""

from __future__ import annotations

import sys

import numpy as np

from models import design_from_dict, evaluate
from models.errors import DesignError
from models.fem.solve import solve
from tests.conftest import TEST_COIL


def random_design(rng) -> dict:
    """One design dict inside the cross-model range (VALIDATED_RANGE in models.evaluate)."""
    rp = rng.uniform(6.0, 14.0)
    ri = rng.uniform(0.2, 0.6) * rp
    ro = min(rp - 0.5, ri + rng.uniform(1.0, 5.0))
    d = {
        "pole": {
            "radius_mm": rp,
            "length_mm": rng.uniform(25.0, 50.0),
            "relative_permeability": float(np.exp(rng.uniform(np.log(200.0), np.log(5000.0)))),
            "conductivity_S_per_m": 0.0,
        },
        "coil": dict(
            TEST_COIL, inner_radius_mm=rp + 0.5, outer_radius_mm=rp + 12.0, length_mm=20.0
        ),
        "drive": {
            "frequency_Hz": float(np.exp(rng.uniform(np.log(50.0), np.log(5000.0)))),
            "current_A": 3.0,
        },
        "target": {
            "radius_mm": rng.uniform(0.3, 1.5) * rp,
            "thickness_mm": rng.uniform(0.5, 5.0),
            "gap_mm": float(np.exp(rng.uniform(np.log(0.2), np.log(3.0)))),
            "material": str(rng.choice(["aluminium-1350", "copper", "aluminium-6061-t6"])),
        },
    }
    if rng.uniform() < 0.8:
        d["ring"] = {
            "inner_radius_mm": ri,
            "outer_radius_mm": ro,
            "depth_mm": rng.uniform(0.8, 5.0),
            "material": "copper",
        }
    return d


#: Mesh level of the audit's FEM solves (two meshes of the edge set agree to 0.01 % from 1.6 on).
FEM_REFINE = 1.6


def main(seed: int = 7, count: int = 20) -> None:
    rng = np.random.default_rng(seed)
    done = 0
    covered, sharpness = [], []
    while done < count:
        try:
            design = design_from_dict(random_design(rng))
        except DesignError:
            continue
        done += 1
        fast = evaluate(design, isothermal=True)
        fem = solve(design, refine=FEM_REFINE)
        gross = sum(abs(v) for v in fast.pull_by_source_N.values())

        def pct(a, b):
            return 100.0 * (a / b - 1.0) if b else 0.0

        diff = abs(fast.pull_N - fem.pull_N)
        covered.append(diff <= fast.pull_uncertainty_N)
        if diff > 0.01 * abs(fem.pull_N):
            sharpness.append(fast.pull_uncertainty_N / diff)
        print(
            f"{done:3d} pull {pct(fast.pull_N, fem.pull_N):+6.2f} %  target loss "
            f"{pct(fast.target_loss_W, fem.target_loss_W):+6.2f} %  ring loss "
            f"{pct(fast.ring_loss_W, fem.ring_loss_W):+6.2f} %  gross/net "
            f"{gross / abs(fast.pull_N):6.1f}  estimate {100 * fast.pull_uncertainty_relative:5.2f} % "
            f"{'covers' if covered[-1] else 'MISSES'}",
            flush=True,
        )
    median = float(np.median(sharpness)) if sharpness else float("nan")
    print(
        f"estimate covers {sum(covered)} of {len(covered)}; median estimate / |difference| "
        f"{median:.2f} over the {len(sharpness)} differences above 1 %"
    )


if __name__ == "__main__":
    args = [int(a) for a in sys.argv[1:3]]
    main(*args)
