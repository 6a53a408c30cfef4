"""The built judgement (optim.study.built, issue 30) against a Monte Carlo of the same designs.

    python tests/perf/built_vs_monte_carlo.py FRONT.csv [--designs 10] [--samples 1000]
        [--method linear|sample] [--study optim/demo/demo_study.toml]

FRONT.csv: a study's front.csv (``study front`` writes it); its first ``--designs`` rows are
rebuilt from their search parameters with the study file's (``built_probability`` = 0.95 added
where it has none). For each design: the estimate's share of built magnets keeping each
constraint and its 95 % quantile of the constrained result, beside a Monte Carlo of
``--samples`` seeded uniform draws within the same tolerances (the capacitor fixed at its nominal
value, each sample evaluated as the study evaluates a trial), and the time of each. Prints a
table; asserts nothing.
"""

from __future__ import annotations

import argparse
import math
import sys
import time
import tomllib
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from optim.study.built import _as_built, _flat_of, judge_built, study_tolerances  # noqa: E402
from optim.study.space import build_design  # noqa: E402
from optim.study.spec import spec_from_dict  # noqa: E402
from optim.study.tolerance import varied_design  # noqa: E402


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("front")
    ap.add_argument("--designs", type=int, default=10)
    ap.add_argument("--samples", type=int, default=1000)
    ap.add_argument("--method", default="linear")
    ap.add_argument("--study", default=str(ROOT / "optim/demo/demo_study.toml"))
    args = ap.parse_args()
    path = Path(args.study)
    data = tomllib.loads(path.read_text())
    data.setdefault("robust", {}).setdefault("built_probability", 0.95)
    data["robust"]["built_method"] = args.method
    spec = spec_from_dict(data, folder=path.parent, name=path.stem)
    p = spec.built.probability
    front = pd.read_csv(args.front).head(args.designs)
    f = _flat_of(spec, bool(spec.run.get("isothermal", False)))
    print(
        f"{args.method} estimate vs Monte Carlo ({args.samples} samples), p = {p}; "
        "share: of built magnets keeping the constraint; q: the judged quantile of its result"
    )
    print(
        f"{'trial':>6s} {'constraint':28s} {'nominal':>9s} {'est q':>9s} {'MC q':>9s} "
        f"{'est share':>9s} {'MC share':>9s}"
    )
    times = []
    for _, row in front.iterrows():
        values = {q.name: row[q.name] for q in spec.params}
        for q in spec.params:
            if not q.choices:
                values[q.name] = float(values[q.name])
        design = build_design(spec.base, spec.params, values, spec.name)
        flat = f(design)
        t0 = time.perf_counter()
        est = judge_built(design, spec, flat)
        t_est = time.perf_counter() - t0
        built = _as_built(design, flat)
        tols = study_tolerances(built, spec.built, spec.gaps_mm)
        rng = np.random.default_rng(1)
        t0 = time.perf_counter()
        draws = {c.name: [] for c in spec.constraints}
        for u in rng.uniform(-1, 1, size=(args.samples, len(tols))):
            deltas = {t.key: float(x * t.half_width) for t, x in zip(tols, u, strict=True)}
            try:
                d = f(varied_design(built, deltas))
            except Exception:  # a refused sample keeps nothing
                d = {}
            for c in spec.constraints:
                draws[c.name].append(d.get(c.name, math.nan))
        t_mc = time.perf_counter() - t0
        times.append((t_est, t_mc))
        every = np.ones(args.samples, bool)
        for c in spec.constraints:
            v = np.asarray(draws[c.name], float)
            ok = np.isfinite(v)
            keep = ok.copy()
            if c.low is not None:
                keep &= np.where(ok, v, -np.inf) >= c.low
            if c.high is not None:
                keep &= np.where(ok, v, np.inf) <= c.high
            every &= keep
            if c.high is not None:
                q = np.quantile(np.where(ok, v, np.inf), p)
            else:
                q = np.quantile(np.where(ok, v, -np.inf), 1 - p)
            print(
                f"{int(row['trial']):6d} {c.name:28s} {flat[c.name]:9.4g} "
                f"{est[c.name + '_built']:9.4g} {q:9.4g} "
                f"{est['built_share.' + c.name]:9.3f} {np.mean(keep):9.3f}"
            )
        print(
            f"{int(row['trial']):6d} {'all at once':28s} {'':9s} {'':9s} {'':9s} "
            f"{est['built_share_all']:9.3f} {np.mean(every):9.3f}"
        )
        sys.stdout.flush()
    t = np.asarray(times)
    print(
        f"median time per design: estimate {np.median(t[:, 0]):.2f} s, Monte Carlo {np.median(t[:, 1]):.1f} s"
    )


if __name__ == "__main__":
    main()
