"""The front checked as built (issue 30): a Monte Carlo of a few designs, each sample evaluated
as the study evaluates a trial (``optim.morning.robustness.study_evaluator``).

Used by ``study export --tolerance [--samples N]`` (tolerance.json's ``constraints_held``) and by
``study front``'s report (each pick's count of built magnets keeping each constraint and all of
them; ``CHECK_SAMPLES`` samples per pick). The tolerances are the study's own where it is judged
as built (``optim.study.built.study_tolerances``), else the default tolerances of
``optim.study.tolerance`` (the same as ``eddypull tolerance``); every key uniform within its
half-width.
"""

from __future__ import annotations

from dataclasses import dataclass

from models.errors import DesignError
from optim.morning.robustness import (
    check_tolerances,
    constraints_held,
    study_evaluator,
)
from optim.study.tolerance import DEFAULT_SEED, _capacitor_as_built, run_tolerance

__all__ = [
    "CHECK_SAMPLES",
    "HOLD_SHARE",
    "BuiltCheck",
    "check_picks",
    "check_tolerances",
    "constraints_held",
    "check_pick",
]

#: Monte Carlo samples per pick in the report's check (each a study evaluation: ~0.1-0.3 s for
#: the lifter demo on one core of this 2-core machine, so ~10-30 s per pick).
CHECK_SAMPLES = 100
#: The share of built magnets keeping every constraint for a pick to hold, where the study has
#: no built_probability of its own (the issue's 95 %).
HOLD_SHARE = 0.95


@dataclass(frozen=True)
class BuiltCheck:
    """How many of ``samples`` built magnets of one pick keep each constraint (``kept``:
    name -> count) and all of them (``kept_all``); a refused sample keeps none."""

    samples: int
    kept: dict
    kept_all: int
    need: float = HOLD_SHARE

    @property
    def holds(self) -> bool:
        """True where at least ``need`` of the built magnets keep every constraint."""
        return self.kept_all >= self.need * self.samples

    def words(self) -> str:
        parts = [f"{c}: {k} of {self.samples}" for c, k in self.kept.items()]
        return (
            f"built magnets keeping the constraints ({self.samples} Monte Carlo samples): "
            + "; ".join(parts)
            + f"; all at once: {self.kept_all} of {self.samples}"
        )


def check_pick(spec, design, samples: int = CHECK_SAMPLES, seed: int = DEFAULT_SEED) -> BuiltCheck:
    """Monte Carlo check of one design as built (``samples`` samples, seeded)."""

    isothermal = bool(spec.run.get("isothermal", False))
    design = _capacitor_as_built(design, isothermal, study_evaluator(spec))  # fixed as built
    study = run_tolerance(
        design,
        check_tolerances(spec, design),
        samples=samples,
        seed=seed,
        isothermal=isothermal,
        evaluator=study_evaluator(spec),
    )
    shares = constraints_held(spec, study)
    kept = {c.name: int(round(shares[c.name] * samples)) for c in spec.constraints}
    kept_all = int(round(shares.get("all", 1.0) * samples))
    built = getattr(spec, "built", None)
    need = HOLD_SHARE if built is None else built.probability
    return BuiltCheck(samples, kept, kept_all, need)


def check_picks(spec, front, picks, design_of, samples: int = CHECK_SAMPLES):
    """The report's picks ``(why, trial)`` checked as built (``check_pick``, ``samples`` each),
    those that hold first (in their own order), each ``why`` followed by its counts. Returns
    (picks, lines to print). A pick the model refuses as a whole keeps its place, unchecked."""

    held, rest, lines = [], [], []
    for why, trial in picks:
        row = front[front["trial"] == trial]
        if not len(row):
            rest.append((why, trial))
            continue
        row = row.iloc[0]
        try:
            design = design_of(spec, {p.name: row[p.name] for p in spec.params})
            check = check_pick(spec, design, samples)
        except DesignError:
            rest.append((why, trial))
            continue
        state = "holds as built" if check.holds else "does not hold as built"
        (held if check.holds else rest).append((f"{why}; {state}: {check.words()}", trial))
        lines.append(f"as built      trial {trial}: {state}; {check.words()}")
    return held + rest, lines
