"""A worker's private sampler study, kept small however large the shared study grows.

optuna's samplers look at every trial of the study they run on: NSGA-II counts each trial's
generation over all of them on every ask, TPE fits its densities to all of them. On a study of
10^5 trials that makes each ask cost more than the model. A worker therefore runs its sampler on a
private in-memory study that holds a window of the search, not all of it:

* Trials finished elsewhere (other workers, other machines, earlier runs) join the generation
  being filled, as migrants: NSGA-II weighs them in its next selection of parents like its own.
* When the private study holds more than ``limit`` trials it is rolled over: a new private study
  starts from the current generation and its parents (for NSGA-II exactly the set from which the
  next parents are chosen, so the search goes on where it was), or from the most recent half of
  the window for the other samplers.
* A resumed study starts from the most recent ``limit`` trials of the shared study, all in one
  generation: the next parents are the best of them.
"""

from __future__ import annotations

import optuna
from optuna.trial import TrialState

from optim.study.records import constraint_attrs, constraints_of

__all__ = ["SamplerWindow", "window_limit"]


def window_limit(population: int) -> int:
    """Trials a private study holds before it rolls over."""
    return max(1000, 20 * population)


class SamplerWindow:
    """The private study of one worker. ``make_sampler(k)`` builds the k-th sampler (a fresh one
    per rollover, with its own seed)."""

    def __init__(self, directions, dists: dict, make_sampler, limit: int):
        self.directions = directions
        self.dists = dists
        self.make_sampler = make_sampler
        self.limit = limit
        self.rollovers = 0
        self.study = self._new()

    def _new(self):

        sampler = self.make_sampler(self.rollovers)
        key = getattr(sampler, "_get_generation_key", None)
        self.generation_key = key() if callable(key) else None
        self.sampler = sampler
        return optuna.create_study(directions=self.directions, sampler=sampler)

    def _complete(self):

        return self.study.get_trials(deepcopy=False, states=(TrialState.COMPLETE,))

    def current_generation(self) -> int:
        if self.generation_key is None:
            return 0
        return max(
            (t.system_attrs.get(self.generation_key, 0) for t in self._complete()), default=0
        )

    def _copy(self, trial, generation):
        """A trial for the private study: parameters, values, constraints, and the generation
        it joins (the sampler's other marks stay with the study they were made in)."""

        system = constraint_attrs(constraints_of(trial.system_attrs))
        if self.generation_key is not None:
            system[self.generation_key] = generation
        return optuna.trial.create_trial(
            state=trial.state,
            params=trial.params,
            distributions={k: self.dists[k] for k in trial.params},
            values=trial.values,
            system_attrs=system,
        )

    def fits(self, trial) -> bool:
        """Whether a trial from elsewhere belongs to this search: finished with values, and each
        of its parameters drawn from this window's own distribution (the same range, the same
        choices in the same order)."""
        if trial.values is None or set(trial.params) != set(self.dists):
            return False
        return all(trial.distributions.get(k) == d for k, d in self.dists.items())

    def add(self, trials) -> int:
        """Add finished trials from elsewhere to the generation being filled (those that
        ``fits``)."""
        usable = [t for t in trials if self.fits(t)]
        if not usable:
            return 0
        generation = self.current_generation()
        for t in usable:
            self.study.add_trial(self._copy(t, generation))
        self.maybe_roll()
        return len(usable)

    def maybe_roll(self) -> bool:
        """Roll over when the private study has outgrown its limit."""
        if len(self.study.get_trials(deepcopy=False)) <= self.limit:
            return False
        complete = self._complete()
        if self.generation_key is not None and complete:
            g = self.current_generation()
            keep = [t for t in complete if t.system_attrs.get(self.generation_key) == g]
            if g > 0:
                parents = self.sampler.get_parent_population(self.study, g)
                ids = {t._trial_id for t in keep}
                keep += [t for t in parents if t._trial_id not in ids]
        else:
            keep = complete[-self.limit // 2 :]
        self.rollovers += 1
        self.study = self._new()
        for t in keep:
            self.study.add_trial(self._copy(t, 0))
        return True
