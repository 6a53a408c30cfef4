"""Benchmark of a family of parts (``[[parts]]``): the cost of one trial's results by family size.

Run on demand: ``python tests/perf/bench_parts.py [--trials N]``. For each case it evaluates the
same seeded random designs of the sorting demo's search space (a new pole geometry each, as in a
study, the pole models built cold for each case) and prints the median time of one
trial's ``results_of`` and its ratio to today's one part over three gaps. The case "3 parts, each
on its own" evaluates every part with its own thermal steady state (``evaluate_pick_gaps`` per
part), which is what sharing the magnet's steady state saves. Asserts nothing about time.
"""

from __future__ import annotations

import argparse
import random
import statistics
import time

from models.evaluate import clear_pole_cache, evaluate_pick_gaps
from optim.demo import DEMO_SORTING
from optim.study.family import part_design
from optim.study.objectives import results_of
from optim.study.parts import Part
from optim.study.space import build_design
from optim.study.spec import load_study_spec

GAPS = (1.5, 2.25, 3.0)
CAP = {"thickness_mm": 0.6, "material": "aluminium-1350"}
CAP8 = Part("cap8", "lift", {"radius_mm": 4.0, **CAP}, GAPS)
CAP10 = Part("cap10", "lift", {"radius_mm": 5.0, **CAP}, GAPS)
CAP16 = Part("cap16", "leave", {"radius_mm": 8.0, **CAP}, GAPS)


def _designs(spec, n: int, seed: int):
    """``n`` buildable designs drawn uniformly from the study's search space (seeded)."""
    rng = random.Random(seed)
    out = []
    while len(out) < n:
        values = {}
        for p in spec.params:
            values[p.name] = rng.choice(p.choices) if p.categorical else rng.uniform(p.low, p.high)
        try:
            out.append(build_design(spec.base, spec.params, values, spec.name))
        except ValueError:
            continue
    return out


def _each_on_its_own(design, parts):
    for part in parts:
        evaluate_pick_gaps(part_design(design, part), part.gaps_mm)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--trials", type=int, default=12, help="designs per case (default 12)")
    args = parser.parse_args()
    spec = load_study_spec(DEMO_SORTING)
    designs = _designs(spec, args.trials, seed=5)
    cases = {
        "1 part x 3 gaps ([target]/[robust])": lambda d: results_of(d, GAPS),
        "1 part x 3 gaps ([[parts]])": lambda d: results_of(d, parts=(CAP10,)),
        "2 parts x 3 gaps (sorting demo)": lambda d: results_of(d, parts=(CAP10, CAP16)),
        "3 parts x 3 gaps": lambda d: results_of(d, parts=(CAP10, CAP8, CAP16)),
        "3 parts x 3 gaps, each on its own": lambda d: _each_on_its_own(d, (CAP10, CAP8, CAP16)),
    }
    print(f"{len(designs)} designs of the sorting demo's search space, median per trial")
    print(f"{'case':38s} {'ms':>8s} {'x today':>8s}")
    times: dict[str, list[float]] = {name: [] for name in cases}
    for design in designs:  # the cases interleaved, so that a busy machine slows them alike
        for name, fn in cases.items():
            clear_pole_cache()  # each trial of a study meets a new pole geometry
            t = time.perf_counter()
            fn(design)
            times[name].append(time.perf_counter() - t)
    first = None
    for name, ts in times.items():
        ms = statistics.median(ts) * 1e3
        first = first or ms
        print(f"{name:38s} {ms:8.1f} {ms / first:8.2f}")


if __name__ == "__main__":
    main()
