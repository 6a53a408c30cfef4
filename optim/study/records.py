"""The study worker's records, typed: its configuration, a trial's outcome, the messages it sends
its run and the record it stores with each trial, with the names of the stored attributes.

Every stored name lives here once: the study attribute that lists the result names, the trial
attribute that holds eddypull's record and each key inside it, and the prefix under which optuna
keeps a trial's constraint values (``Trial.set_constraint`` writes ``constraints:<name>``; a
test checks the prefix against what optuna writes). The stored record is encoded by
`StoredRecord.to_attrs` (the worker) and decoded by `StoredRecord.of` (the columns reader,
the hand-off, the copy of a repeated trial).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from enum import StrEnum

__all__ = [
    "RESULT_NAMES_ATTR",
    "RECORD_ATTR",
    "CONSTRAINT_PREFIX",
    "Outcome",
    "OutcomeState",
    "StoredRecord",
    "TrialMessage",
    "ErrorMessage",
    "WorkerConfig",
    "WorkerSummary",
    "constraint_attrs",
    "constraints_of",
]

#: Study attribute: the names of a stored record's ``results``, in their order.
RESULT_NAMES_ATTR = "eddypull_result_names"
#: The one user attribute of a trial that holds eddypull's record (one write per trial).
RECORD_ATTR = "eddypull"
#: optuna's system attribute of one constraint value is this prefix and the constraint's name
#: (what ``optuna.trial.Trial.set_constraint`` writes).
CONSTRAINT_PREFIX = "constraints:"


class OutcomeState(StrEnum):
    """How a trial ended: the names of optuna's ``TrialState`` members it is stored as."""

    COMPLETE = "COMPLETE"
    FAIL = "FAIL"


@dataclass
class Outcome:
    """One evaluated (or copied) trial: ``values`` one per objective (None when it failed);
    ``violations`` constraint -> value (<= 0 met, optuna's convention); ``margins`` constraint ->
    margin in the result's unit; ``flat`` the flat results; ``results`` the stored results of a
    copied trial (aligned with `RESULT_NAMES_ATTR`); ``copy_of`` the evaluated trial a copy
    repeats."""

    state: OutcomeState = OutcomeState.FAIL
    values: list | None = None
    violations: dict = field(default_factory=dict)
    margins: dict = field(default_factory=dict)
    flat: dict = field(default_factory=dict)
    warnings: list = field(default_factory=list)
    reason: str = ""
    binding: str = ""
    results: list | None = None
    copy_of: int | None = None

    @property
    def complete(self) -> bool:
        return self.state == OutcomeState.COMPLETE

    @property
    def feasible(self) -> bool:
        """Complete with no reason against it (no constraint broken)."""
        return self.complete and not self.reason


@dataclass
class StoredRecord:
    """eddypull's record of a stored trial: the keys of the ``RECORD_ATTR`` user attribute, in
    the order they are written. ``eval_s`` and ``copy_of`` are NaN / None when absent."""

    results: list = field(default_factory=list)
    margins: dict = field(default_factory=dict)
    reason: str = ""
    binding_limit: str = ""
    warnings: list = field(default_factory=list)
    worker: str = ""
    id: str = ""
    eval_s: float = math.nan
    copy_of: int | None = None

    def to_attrs(self) -> dict:
        """The user attribute's value (``copy_of`` only on a copy)."""
        attrs = {
            "results": self.results,
            "margins": self.margins,
            "reason": self.reason,
            "binding_limit": self.binding_limit,
            "warnings": self.warnings,
            "worker": self.worker,
            "id": self.id,
            "eval_s": self.eval_s,
        }
        if self.copy_of is not None:
            attrs["copy_of"] = int(self.copy_of)
        return attrs

    @classmethod
    def of(cls, user_attrs: dict) -> StoredRecord:
        """The record in a trial's user attributes (every field at its default for a trial
        written by something else)."""
        rec = user_attrs.get(RECORD_ATTR)
        rec = rec if isinstance(rec, dict) else {}
        return cls(
            results=list(rec.get("results") or []),
            margins=dict(rec.get("margins") or {}),
            reason=rec.get("reason", ""),
            binding_limit=rec.get("binding_limit", ""),
            warnings=list(rec.get("warnings") or []),
            worker=rec.get("worker", ""),
            id=rec.get("id", ""),
            eval_s=rec.get("eval_s", math.nan),
            copy_of=rec.get("copy_of"),
        )


def constraint_attrs(violations: dict) -> dict:
    """optuna's system attributes of a trial's constraint values."""
    return {f"{CONSTRAINT_PREFIX}{k}": v for k, v in violations.items()}


def constraints_of(system_attrs: dict) -> dict:
    """Constraint name -> value from a trial's system attributes."""
    n = len(CONSTRAINT_PREFIX)
    return {k[n:]: v for k, v in system_attrs.items() if k.startswith(CONSTRAINT_PREFIX)}


@dataclass(frozen=True)
class TrialMessage:
    """A worker's message to its run: one trial recorded."""

    state: OutcomeState
    feasible: bool
    values: list | None
    eval_s: float
    copied: bool


@dataclass(frozen=True)
class ErrorMessage:
    """A worker's message to its run: it stopped, for this reason (one line)."""

    text: str


@dataclass(frozen=True)
class WorkerConfig:
    """One worker's configuration. ``spec``: ``StudySpec.to_json()``; ``location``: study folder
    or database URL; ``deadline``: ``time.time()`` to stop at (None: none); ``trials``: this
    worker slot's trial budget (None: none); ``sync_s``: seconds between imports of other
    workers' trials (None: `engine.sync_period`); ``evaluator``: "module:function" of a stand-in
    for the model (None: the model); ``parent_pid``: the run's process (the worker stops when it
    is gone; None: not watched); ``window_limit``: the sampler window's size (None: by the
    sampler)."""

    spec: str
    location: str
    index: int = 0
    seed: int | None = None
    deadline: float | None = None
    trials: int | None = None
    sync_s: float | None = None
    evaluator: str | None = None
    parent_pid: int | None = None
    window_limit: int | None = None

    def but(self, **changes) -> WorkerConfig:
        """A copy with ``changes``."""
        return replace(self, **changes)


@dataclass(frozen=True)
class WorkerSummary:
    """What a worker did: trials recorded, and its sampler window's rollovers and final size."""

    recorded: int
    rollovers: int
    window_size: int
