"""The study engine's worker: one process, one optuna worker on the shared study.

How a worker keeps the storage out of the way of a millisecond model:

* The sampler runs on a private in-memory study (fast ask/tell). The worker writes each finished
  trial to the shared storage as one complete record (optim.study.ledger: the record
  ``Study.add_trial`` would write): one append to the journal, one transaction on a database. The
  worker never holds the shared study: it reads only what was added since it last looked. Nothing is ever left RUNNING in the shared storage, so
  a worker killed with SIGKILL loses only the trial it was evaluating and no heartbeat is needed
  to clean up after it.
* Every ``sync_s`` seconds (and at start, which is how a study resumes) the worker copies the
  trials other workers and machines have finished into its private study, so that its sampler
  learns from the whole study; the private study is a bounded window (optim.study.window), so that
  asking costs the same at 10^2 and at 10^6 trials.
* Each worker's sampler is seeded from (study seed, worker index, run number, restart) by the run
  (optim.study.run), and each rollover of its window from (that seed, rollover number)
  (optim.study.sampler.derive_seed), so that parallel workers do not propose identical trials and
  a study with a seed and one worker proposes the same trials each time.

A trial's record: its parameters; objective values (a failed trial has none); one constraint
value per ``[constraints]`` entry (<= 0 feasible, optuna's convention); and one user attribute
``eddypull`` (one attribute, so that a database writes it in one statement) holding ``results`` (a list aligned with the study attribute ``eddypull_result_names``: compact, for
studies of 10^5-10^6 trials), ``margins`` (constraint -> margin in the result's unit), ``reason``
(why it failed or is infeasible), ``warnings``, ``worker`` and ``eval_s``.

A proposal equal to a finished trial (the same value of every searched parameter, exactly) is
not evaluated again: the model is deterministic, so the worker records a copy of that trial's
values, constraints and results, with ``copy_of`` (the number of the evaluated trial it copies)
and ``eval_s`` 0 in its record. The worker knows the trials of its window and every trial
finished since it started (its own and others'), the most recent `known_limit` of them.
"""

from __future__ import annotations

import importlib
import math
import os
import socket
import time
import uuid
from collections import OrderedDict
from datetime import UTC, datetime

import optuna
from optuna.trial import TrialState

from models.errors import DesignError
from optim.study.built import judge_built, judged
from optim.study.ledger import open_ledger
from optim.study.objectives import (
    design_rule_violations,
    objective_values,
    results_of,
    study_kwargs,
)
from optim.study.records import (
    RECORD_ATTR,
    RESULT_NAMES_ATTR,
    Outcome,
    OutcomeState,
    StoredRecord,
    TrialMessage,
    WorkerConfig,
    WorkerSummary,
    constraint_attrs,
    constraints_of,
)
from optim.study.sampler import choose, derive_seed, make_sampler
from optim.study.space import build_design
from optim.study.spec import spec_from_json
from optim.study.window import SamplerWindow, window_limit

__all__ = ["run_worker", "evaluate_trial", "sync_period"]


def sync_period(n_trials: int) -> float:
    """Seconds between imports of other workers' trials [s]: short while the study is small (the
    sampler's early generations matter), longer as each import reads more."""
    return float(min(60.0, max(2.0, n_trials / 2000.0)))


def evaluate_trial(spec, values: dict) -> Outcome:
    """Evaluate one set of parameter values: the trial's outcome (objective values, constraint
    values and margins, flat results, warnings and the reason it failed or is infeasible)."""
    out = Outcome()
    try:
        design = build_design(spec.base, spec.params, values, spec.name)
    except DesignError as err:
        out.reason = "geometry: " + "; ".join(err.problems)
        return out
    isothermal = bool(spec.run.get("isothermal", False))
    try:
        flat, warnings, binding = results_of(
            design, spec.gaps_mm, isothermal=isothermal, **study_kwargs(spec)
        )
        if getattr(spec, "built", None) is not None:  # issue 30: judged as built
            flat = {**flat, **judge_built(design, spec, flat)}
    except DesignError as err:
        out.reason = "model refused: " + "; ".join(err.problems)
        return out
    except Exception as err:  # a model failure is one failed trial, never a dead study
        out.reason = f"model error: {type(err).__name__}: {err}"[:500]
        return out
    out.flat, out.warnings, out.binding = flat, warnings[:8], binding
    seen_o = seen_c = flat
    if getattr(spec, "built", None) is not None:  # issue 30: judged as built
        seen_o, seen_c = judged(flat, spec)
    try:
        vals = objective_values(seen_o, spec.objectives)
    except KeyError as err:
        out.reason = f"model error: result {err} missing"
        return out
    bad = [o.name for o, v in zip(spec.objectives, vals, strict=True) if not math.isfinite(v)]
    if bad:
        out.reason = "non-finite result: " + ", ".join(bad)
        return out
    for c in spec.constraints:
        value = seen_c.get(c.name, math.nan)
        if math.isnan(value):
            out.reason = f"non-finite result: {c.name}"
            return out
        out.violations[c.name] = c.violation(value)
        out.margins[c.name] = c.margin(value)
    out.violations |= design_rule_violations(flat, spec.run)
    broken = [k for k, v in out.violations.items() if v > 0]
    if broken:
        out.reason = "infeasible: " + ", ".join(broken)
    out.state, out.values = OutcomeState.COMPLETE, vals
    return out


def _frozen_trial(params, dists, outcome: Outcome, worker_id, t0, t1, result_names):
    """The stored trial of ``outcome``: one complete record, started at ``t0`` and finished at
    ``t1`` [s since the epoch]."""
    flat = outcome.flat
    results = [flat.get(n, math.nan) for n in result_names] if flat else []
    record = StoredRecord(
        results=outcome.results if outcome.results is not None else results,
        margins=outcome.margins,
        reason=outcome.reason,
        binding_limit=outcome.binding,
        warnings=outcome.warnings,
        worker=worker_id,
        id=uuid.uuid4().hex[:16],
        eval_s=round(t1 - t0, 6),
        copy_of=outcome.copy_of,
    )
    state = TrialState.COMPLETE if outcome.complete else TrialState.FAIL
    frozen = optuna.trial.create_trial(
        state=state,
        params=params,
        distributions=dists,
        values=outcome.values if outcome.complete else None,
        user_attrs={RECORD_ATTR: record.to_attrs()},
        system_attrs=constraint_attrs(outcome.violations),
    )
    frozen.datetime_start = datetime.fromtimestamp(t0, tz=UTC)
    frozen.datetime_complete = datetime.fromtimestamp(t1, tz=UTC)
    return frozen


def run_worker(config: WorkerConfig, queue=None, stop=None, counter=None) -> WorkerSummary:
    """Run one worker until its budget ends. ``counter`` is this worker slot's count of trials
    started, ``stop`` an event, ``queue`` receives one `TrialMessage` per recorded trial."""
    optuna.logging.set_verbosity(optuna.logging.WARNING)
    worker = _Worker(config)
    worker.sync(first=True)
    last_sync = time.monotonic()
    recorded = 0
    try:
        while worker.may_start(stop, counter):
            sync_s = config.sync_s or sync_period(worker.seen + 1)
            if time.monotonic() - last_sync > sync_s:
                worker.sync()
                last_sync = time.monotonic()
            trial, outcome, eval_s = worker.evaluate_and_store()
            recorded += 1
            worker.learn(trial, outcome)
            if queue is not None:
                queue.put(
                    TrialMessage(
                        outcome.state,
                        outcome.feasible,
                        outcome.values,
                        eval_s,
                        outcome.copy_of is not None,
                    )
                )
    except KeyboardInterrupt:
        pass
    window = worker.window
    return WorkerSummary(recorded, window.rollovers, len(window.study.trials))


class _Worker:
    """One worker's view of the study: the shared study it writes to, its private sampler window
    and the number of the newest shared trial it has seen."""

    def __init__(self, config: WorkerConfig):
        self.config = config
        spec = self.spec = spec_from_json(config.spec)
        # never the whole study in memory: whole records written, only new ones read
        self.ledger = open_ledger(config.location, spec.name)
        self.result_names = self.ledger.user_attrs[RESULT_NAMES_ATTR]
        self.dists = {p.name: p.distribution() for p in spec.params}
        self.worker_id = f"{socket.gethostname()}:{os.getpid()}:{uuid.uuid4().hex[:8]}"
        seed = config.seed
        self.window = SamplerWindow(
            spec.directions,
            self.dists,
            lambda k: make_sampler(spec, _rollover_seed(seed, k), k),
            int(config.window_limit or window_limit(choose(spec)[1])),
        )
        self.seen = -1
        self.evaluator = _evaluator(config.evaluator)
        self.known = KnownTrials(known_limit(self.window.limit))
        self.deferred: list = []  # read while a trial was asked: join the window at the next sync

    def sync(self, first: bool = False) -> None:
        """Copy the trials other workers have finished since the last sync into the window (at
        the first, the most recent window of a resumed study)."""
        ledger = self.ledger
        trials = ledger.recent(self.window.limit) if first else ledger.fresh()
        trials, self.deferred = self.deferred + self._remember(trials), []
        fresh = [
            t
            for t in trials
            if t.state == TrialState.COMPLETE
            and StoredRecord.of(t.user_attrs).worker != self.worker_id
        ]
        self.window.add(fresh)

    def _remember(self, trials) -> list:
        """Note the newest trial number seen and each finished trial's parameters."""
        if trials:
            self.seen = max(self.seen, max(t.number for t in trials))
        for t in trials:
            self.known.remember(t)
        return trials

    def _copy_source(self, params: dict):
        """The finished trial ``params`` repeats (None: a new design). A repeat of this worker's
        own last trials, not yet read back with their numbers, reads them first (kept out of the
        window until the next sync: a trial is open in it)."""
        key = params_key(params)
        if self.known.pending(key):
            self.deferred += self._remember(self.ledger.fresh())
        return self.known.get(key)

    def may_start(self, stop, counter) -> bool:
        """Whether to start one more trial: not stopped, before the deadline, within this slot's
        trial budget (counting the trial as started) and the run that started us still there."""
        config = self.config
        if stop is not None and stop.is_set():
            return False
        if config.deadline is not None and time.time() >= config.deadline:
            return False
        if counter is not None:
            with counter.get_lock():
                if config.trials is not None and counter.value >= config.trials:
                    return False
                counter.value += 1
        # the run that started this worker is gone: stop with it
        return config.parent_pid is None or os.getppid() == config.parent_pid

    def evaluate_and_store(self):
        """Ask the window for a trial, evaluate it and write it to the shared study as one
        complete record. Returns (private trial, outcome, evaluation time [s])."""
        trial = self.window.study.ask(self.dists)
        params = dict(trial.params)
        t0 = time.time()
        source = self._copy_source(params)
        if source is None:
            outcome = self.evaluator(self.spec, params)
            t1 = time.time()
            self.known.stored(params, outcome)
        else:
            outcome = copied_outcome(*source)
            t1 = t0  # no evaluation
        frozen = _frozen_trial(
            params, self.dists, outcome, self.worker_id, t0, t1, self.result_names
        )
        try:
            self.ledger.add(frozen, self.worker_id)
        except OSError as err:  # disk full, quota, lost mount: stop, say so, keep the rest
            raise DesignError(
                f"storage write failed ({err.strerror or err}): every trial recorded before "
                "is kept; free space and run the same command again to resume"
            ) from None
        return trial, outcome, t1 - t0

    def learn(self, trial, outcome) -> None:
        """Tell the private study the trial's outcome; roll the window over when it is full."""
        for k, v in outcome.violations.items():
            trial.set_constraint(k, v)
        if outcome.complete:
            self.window.study.tell(trial, outcome.values)
        else:
            self.window.study.tell(trial, state=TrialState.FAIL)
        self.window.maybe_roll()


def _rollover_seed(seed: int | None, k: int) -> int | None:
    """The seed of a worker's k-th window (k = 0: the worker's own seed)."""
    if seed is None or k == 0:
        return seed
    return derive_seed(seed, k)


def _evaluator(name: str | None):
    """The function that evaluates a trial: the model, or the stand-in tests and benchmarks
    name ("module:function", returning an `Outcome`)."""
    if not name:
        return evaluate_trial
    module, _, func = name.partition(":")
    return getattr(importlib.import_module(module), func)


def params_key(params: dict) -> tuple:
    """A design's identity in a study: every searched parameter's exact value (repr keeps every
    digit of a float; a choice is its text)."""
    return tuple(sorted((str(k), repr(v)) for k, v in params.items()))


def known_limit(window: int) -> int:
    """How many finished trials a worker remembers for repeats: twice its window (the proposals
    of NSGA-II and TPE repeat the trials they learn from, which are in the window)."""
    return 2 * int(window)


class KnownTrials:
    """Finished trials by parameters (`params_key`), the most recent ``limit``: each key maps to
    the evaluated trial (a copy's key to the trial it copies). ``stored`` marks a key this worker
    has just written and not yet read back with its number (``pending``)."""

    def __init__(self, limit: int):
        self.limit = limit
        self.trials: OrderedDict = OrderedDict()
        self.waiting: set = set()

    def remember(self, trial) -> None:
        if (
            trial.state != TrialState.COMPLETE
            or not isinstance(trial.user_attrs.get(RECORD_ATTR), dict)
            or not trial.user_attrs[RECORD_ATTR]
            or trial.values is None
        ):
            return
        key = params_key(trial.params)
        self.waiting.discard(key)
        if key in self.trials:
            self.trials.move_to_end(key)
            return
        copy_of = StoredRecord.of(trial.user_attrs).copy_of
        self.trials[key] = (int(trial.number if copy_of is None else copy_of), trial)
        if len(self.trials) > self.limit:
            self.trials.popitem(last=False)

    def stored(self, params: dict, outcome: Outcome) -> None:
        if outcome.complete:
            self.waiting.add(params_key(params))

    def pending(self, key) -> bool:
        return key in self.waiting and key not in self.trials

    def get(self, key):
        """(number of the evaluated trial, a stored trial with its results) or None."""
        return self.trials.get(key)


def copied_outcome(number: int, trial) -> Outcome:
    """The outcome of a repeat of stored trial ``trial`` (evaluated as trial ``number``): its
    values, constraints, margins, results, warnings and reason, and ``copy_of``."""
    rec = StoredRecord.of(trial.user_attrs)
    return Outcome(
        state=OutcomeState.COMPLETE,
        values=list(trial.values),
        violations=constraints_of(trial.system_attrs),
        margins=rec.margins,
        results=rec.results,
        warnings=rec.warnings,
        reason=rec.reason,
        binding=rec.binding_limit,
        copy_of=number,
    )
