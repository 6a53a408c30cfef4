"""A study's trials read straight into columns, for ``study status``, ``front`` and ``export`` on
studies of 10^5-10^6 trials.

optuna's readers make one trial object per trial (~4 kB each, a minute per 10^6 trials just to
make them), and a table built row by row makes one dict per trial on top. Here each stored
record is decoded once and its numbers go into preallocated arrays, its texts (reasons,
warnings, workers: a few distinct values) into arrays of shared strings. A journal study is read
from its file through the ledger's index (optim.study.ledger); any other storage through
optuna's trials, into the same columns.

The columns are those of ``optim.morning.front.trials_table`` before the design dimensions and
the front are added.
"""

from __future__ import annotations

import math
import os
import time
from dataclasses import dataclass, field
from datetime import datetime
from pathlib import Path

import numpy as np
from joblib import Parallel, delayed

from models.errors import DesignError
from optim.study.journal import decode_trial, is_trial_of, segments
from optim.study.ledger import JournalIndex, JournalLedger, LedgerUnfit, _Distributions, params_of
from optim.study.records import RESULT_NAMES_ATTR, StoredRecord, constraints_of
from optim.study.space import parse_search
from optim.study.storage import JOURNAL, SPEC_ATTR, is_url, journal_damage_note, load_existing

__all__ = ["TrialColumns", "StudyReadout", "open_readout"]

_STATES = ("RUNNING", "COMPLETE", "PRUNED", "FAIL", "WAITING")  # optuna TrialState values 0-4


@dataclass
class TrialColumns:
    """Column name -> array (numbers as float64 or int64, texts as object arrays), in trial order."""

    n: int
    data: dict = field(default_factory=dict)


class _Filler:
    """Fills the columns of ``n`` trials one stored trial at a time."""

    def __init__(self, n: int, names: list[str], params: list, constraints: list[str], k: int):
        self.n, self.names, self.constraints, self.k = n, names, constraints, k
        self.i = 0
        self.texts: dict = {}
        obj = lambda: np.full(n, "", dtype=object)  # noqa: E731
        nan = lambda: np.full(n, np.nan)  # noqa: E731
        self.number = np.zeros(n, np.int64)
        self.state = np.zeros(n, np.int8)
        self.completed = nan()
        self.eval_s = nan()
        self.copy_of = nan()  # the evaluated trial a repeat copies (optim.study.engine); nan: none
        self.reason, self.binding, self.worker, self.warnings = obj(), obj(), obj(), obj()
        self.warning_count = np.zeros(n, np.int64)
        self.feasible = np.zeros(n, bool)
        self.params = {p.name: (obj() if p.categorical else nan()) for p in params}
        self.results = np.full((n, len(names)), np.nan)
        self.margins = np.full((n, len(constraints)), np.nan)
        self.values = np.full((n, k), np.nan)

    def _text(self, s) -> str:
        s = str(s)
        return self.texts.setdefault(s, s)

    def add(self, number, state, values, params, user_attrs, system_attrs, completed_s):
        i = self.i
        self.i += 1
        self.number[i] = number
        self.state[i] = state
        self.completed[i] = completed_s
        if values is not None:
            self.values[i, : len(values)] = values
        for name, v in params.items():
            column = self.params.get(name)
            if column is not None:
                column[i] = self._text(v) if column.dtype == object else v
        rec = StoredRecord.of(user_attrs)
        self.eval_s[i] = rec.eval_s
        self.copy_of[i] = math.nan if rec.copy_of is None else rec.copy_of
        self.reason[i] = self._text(rec.reason)
        self.binding[i] = self._text(rec.binding_limit)
        self.worker[i] = self._text(rec.worker)
        warnings = [str(w) for w in rec.warnings]
        self.warning_count[i] = len(warnings)
        self.warnings[i] = self._text(" | ".join(warnings))
        results = rec.results
        m = min(len(results), len(self.names))
        if m:
            self.results[i, :m] = [math.nan if r is None else r for r in results[:m]]
        for j, c in enumerate(self.constraints):
            v = rec.margins.get(c)
            if v is not None:
                self.margins[i, j] = v
        violations = constraints_of(system_attrs).values()
        self.feasible[i] = state == 1 and all(v <= 0 for v in violations)

    def columns(self) -> TrialColumns:
        n = self.i
        data = {
            "trial": self.number[:n],
            "state": np.array(_STATES, dtype=object)[self.state[:n]],
            "completed_at": self.completed[:n],
            "eval_s": self.eval_s[:n],
            "copy_of": self.copy_of[:n],
            "reason": self.reason[:n],
            "binding_limit": self.binding[:n],
            "worker": self.worker[:n],
            "feasible": self.feasible[:n],
        }
        data.update({k: v[:n] for k, v in self.params.items()})
        for j, name in enumerate(self.names):
            data[name] = self.results[:n, j]
        for j, c in enumerate(self.constraints):
            data[f"constraint_margin.{c}"] = self.margins[:n, j]
        data["warning_count"] = self.warning_count[:n]
        data["warnings"] = self.warnings[:n]
        data["_values"] = self.values[:n]
        return TrialColumns(n, data)


def _epoch(text) -> float:
    if text is None:
        return math.nan

    return datetime.fromisoformat(text).timestamp()


class StudyReadout:
    """One stored study as ``study status``, ``front`` and ``export`` read it: its attributes,
    its columns, and one trial by number. ``source`` is a ``JournalLedger`` or an optuna Study."""

    def __init__(self, source, spec_json: dict, where: str, notes=()):
        self.source = source
        self.spec_json = spec_json
        self.where = where
        self.user_attrs = source.user_attrs
        self._storage = getattr(source, "_storage", None)
        #: lines on what was skipped in the storage (damaged records, a torn last one)
        self.notes = [n for n in notes if n]
        self._snapshot = None

    def _trials(self) -> list:
        """A database study's trials as read once (workers may add trials meanwhile: every
        count, column and trial of this readout comes from this one snapshot)."""
        if self._snapshot is None:
            self._snapshot = list(self.source.get_trials(deepcopy=False))
        return self._snapshot

    @property
    def n_trials(self) -> int:
        if hasattr(self.source, "n_trials"):
            return self.source.n_trials
        return len(self._trials())

    def trial(self, number: int):
        """The stored trial ``number`` (a FrozenTrial)."""
        if hasattr(self.source, "trial"):
            return self.source.trial(number)
        return self._trials()[number]

    def get_trials(self, deepcopy: bool = False):
        """Every trial as a FrozenTrial (small studies, tests)."""
        if hasattr(self.source, "recent"):
            return self.source.recent(self.source.n_trials)
        return self._trials()

    def columns(self) -> TrialColumns:
        spec = self.spec_json
        shape = (
            list(self.user_attrs.get(RESULT_NAMES_ATTR, [])),
            spec["search"],
            list(spec.get("constraints", {})),
            len(spec["objectives"]),
        )
        if isinstance(self.source, JournalLedger):
            return _journal_columns(self.source, shape)
        trials = self._trials()
        filler = _filler(len(trials), shape)
        for t in trials:
            done = t.datetime_complete
            filler.add(
                t.number,
                int(t.state),
                t.values,
                t.params,
                t.user_attrs,
                t.system_attrs,
                done.timestamp() if done is not None else math.nan,
            )
        return filler.columns()


def _filler(n: int, shape) -> _Filler:

    names, search, constraints, k = shape
    return _Filler(n, names, parse_search(search, []), constraints, k)


#: Journal studies of more trials than this are decoded by several processes at once.
PARALLEL_ABOVE = 50_000


def _journal_columns(ledger, shape) -> TrialColumns:
    """The columns of a journal study: its records decoded in contiguous ranges, one process
    per core for a large study (the decoding of 10^6 records is most of the time)."""
    n = ledger.n_trials
    offsets = ledger.index.offsets[ledger.study_id]
    jobs = min(os.cpu_count() or 1, 8) if n > PARALLEL_ABOVE else 1
    bounds = np.linspace(0, n, jobs + 1).astype(int)
    ranges = [
        (ledger.path, ledger.study_id, int(offsets[a]), int(a), int(b), shape)
        for a, b in zip(bounds[:-1], bounds[1:], strict=True)
        if b > a
    ]
    if len(ranges) <= 1:
        parts = [_decode_range(*r) for r in ranges]
    else:
        parts = Parallel(n_jobs=len(ranges))(delayed(_decode_range)(*r) for r in ranges)
    if not parts:
        return _filler(0, shape).columns()
    data = {k: np.concatenate([p.data[k] for p in parts]) for k in parts[0].data}
    return TrialColumns(sum(p.n for p in parts), data)


def _decode_range(path, study_id: int, offset: int, first: int, end: int, shape) -> TrialColumns:
    """Decode the study's trial records ``first`` to ``end`` - 1, the first at byte ``offset``."""

    filler = _filler(end - first, shape)
    dists = _Distributions()
    number = first
    with open(path, "rb") as fh:
        for pos, seg in segments(fh, offset):
            if number >= end:
                break
            if not is_trial_of(seg, study_id):
                continue
            log = decode_trial(seg, pos, study_id)  # a damaged one: a failed trial in its place
            _, params = params_of(log, dists)
            values = log.get("values")
            if values is None and log.get("value") is not None:
                values = [log["value"]]
            filler.add(
                number,
                log.get("state", 0),
                values,
                params,
                log.get("user_attrs", {}),
                log.get("system_attrs", {}),
                _epoch(log.get("datetime_complete")),
            )
            number += 1
    return filler.columns()


def tail_note(path, index, settle_s: float = 0.3) -> str | None:
    """One line when the journal ends in bytes that are not a whole line (a record being
    written, or a torn one); None when it ends whole or the bytes grow within ``settle_s``
    (a writer at work)."""
    size = os.path.getsize(path)
    if size <= index.position:
        return None
    with open(path, "rb") as fh:
        fh.seek(max(index.position, size - 1))
        if fh.read(1) == b"\n":  # whole records written since the index was read
            return None
    time.sleep(settle_s)
    if os.path.getsize(path) != size:
        return None
    return (
        f"storage {os.path.basename(path)}: its last {size - index.position} bytes (from byte "
        f"{index.position}) are not a whole record and are not read: a torn last record (the "
        "next 'study run' sets it aside, as does 'eddypull study repair')"
    )


def open_readout(location, name: str | None = None) -> StudyReadout:
    """The study at ``location`` (folder or URL; ``name`` picks one of several) for reading: a
    journal through the ledger's index when it can follow it, else optuna's storage."""

    if not is_url(str(location)):
        path = Path(location) / JOURNAL
        if path.exists():
            try:
                index = JournalIndex(path)
                index.update()
                names = [s["name"] for s in index.studies.values()]
                if name is None and len(names) == 1:
                    name = names[0]
                if name in names:
                    ledger = JournalLedger(path, name, index=index)
                    spec = ledger.user_attrs.get(SPEC_ATTR)
                    if spec is None:
                        raise DesignError(
                            f"study {name!r} in {str(path)!r}: not an eddypull study "
                            "(no definition)"
                        )
                    notes = (journal_damage_note(path, index.damage), tail_note(path, index))
                    return StudyReadout(ledger, spec, str(path), notes)
            except LedgerUnfit:
                pass
    study, spec, where = load_existing(location, name)
    return StudyReadout(study, spec, where)
