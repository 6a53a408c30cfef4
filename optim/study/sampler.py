"""A worker's sampler: which one, with which population, and its seed.

* ``derive_seed(*parts)``: a seed in [0, 2**31) from whole numbers (study seed, worker index, run
  number, restart, window rollover), mixed by numpy's SeedSequence so that neighbouring inputs give
  unrelated streams (``seed + index`` would give run 2 of seed 7 the streams of run 1 of seed 8).
* ``choose(spec, rollover)``: the sampler and population of ``[run] sampler`` / ``population``,
  or, when the file names no sampler ("auto"), the default chosen from the measurements of
  tests/perf/bench_quality.py (table in DEVELOPERS.md): see ``choose``.
"""

from __future__ import annotations

import numpy as np

__all__ = ["derive_seed", "choose", "make_sampler", "DEFAULT_POPULATION"]

#: NSGA-II's population when the file names the sampler "nsga2" but no population.
DEFAULT_POPULATION = 40


def derive_seed(*parts: int) -> int:
    """A seed in [0, 2**31) that depends on every one of ``parts`` (whole numbers >= 0)."""
    state = np.random.SeedSequence([int(p) for p in parts]).generate_state(1)
    return int(state[0] % 2**31)


def choose(spec, rollover: int = 0) -> tuple[str, int]:
    """(sampler kind, NSGA-II population) of a worker's window number ``rollover``.

    ``[run] sampler`` names it; "auto" (the default, when the file names none) is the
    multi-objective TPE for a worker's first window (``window_limit``: 1,000 trials, migrants
    included), then NSGA-II of ``[run] population`` (default 40) bred from the best of that window.
    Measured (DEVELOPERS.md, search quality): on the 3-parameter problem TPE is ahead of NSGA-II of
    every population at 100 and 300 trials; TPE's ask grows with the trials it holds, NSGA-II's
    does not, and NSGA-II is the sampler the window keeps generations for.
    """
    kind = spec.run.get("sampler", "auto")
    population = int(spec.run.get("population") or DEFAULT_POPULATION)
    if kind == "auto":
        kind = "tpe" if rollover == 0 else "nsga2"
    return kind, population


def make_sampler(spec, seed: int | None, rollover: int = 0):
    """The optuna sampler ``choose`` names for window ``rollover``, seeded ``seed`` (None:
    optuna's own randomness). Constraints reach every sampler through the trials
    (``Trial.set_constraint``)."""
    import optuna

    kind, population = choose(spec, rollover)
    if kind == "random":
        return optuna.samplers.RandomSampler(seed=seed)
    if kind == "tpe":
        return optuna.samplers.TPESampler(seed=seed, multivariate=True)
    return optuna.samplers.NSGAIISampler(population_size=population, seed=seed)
