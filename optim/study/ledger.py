"""A worker's line to the shared study that never holds the whole study: it writes each trial as
one whole record and reads only what other workers have added since it last looked.

optuna's own storage objects keep every trial in memory: the journal storage replays the whole
file into trial objects when it is opened (~4 kB a trial: 4 GB and a minute at 10^6 trials), and
the database wrapper caches every trial it has read or written. A worker needs neither: it
writes, and it reads what is new. So:

* **Journal** (``JournalLedger``): one pass over the file at start finds the study and the byte
  offset of each of its trial records (8 bytes a trial); a resumed worker reads only the last
  ``limit`` records of them; afterwards each look reads the bytes appended since the last one. A
  trial is appended as the same record optuna's journal storage writes for a finished trial
  (``Study.add_trial``: one CREATE_TRIAL operation holding state, values, parameters and
  attributes), through optuna's own file backend (``journal_backend``), so any optuna reader of
  the file sees it as its own. Trial numbers are counted as optuna counts them (the order of CREATE_TRIAL
  records of the study).
* **Database** (``DatabaseLedger``): the storage itself, bypassing the caching wrapper; a trial
  is one ``create_new_trial`` with the finished trial as template, and a look reads the trials
  whose id is above the highest seen so far.

A journal that holds operations the engine never writes (a trial asked and told step by step by
another program) cannot be followed this way: ``JournalLedger`` then says so
(``LedgerUnfit``) and the worker falls back to optuna's storage.

**Damaged records** are skipped by the index and read as failed trials in their place, by the
rules of ``optim.study.journal``.
"""

from __future__ import annotations

import json
from array import array
from datetime import UTC, datetime
from pathlib import Path

import optuna
from optuna.distributions import distribution_to_json, json_to_distribution
from optuna.trial import FrozenTrial, TrialState

from optim.study.journal import (
    _STUDY_ID,
    _TRIAL_PREFIX,
    CREATE_STUDY,
    CREATE_TRIAL,
    DELETE_STUDY,
    SET_STUDY_SYSTEM_ATTR,
    SET_STUDY_USER_ATTR,
    decode_trial,
    is_trial_of,
    is_whole,
    journal_backend,
    segments,
    split_line,
)
from optim.study.storage import JOURNAL, is_url, open_storage

__all__ = [
    "DatabaseLedger",
    "JournalIndex",
    "JournalLedger",
    "LedgerUnfit",
    "OptunaLedger",
    "open_ledger",
    "params_of",
    "trial_log",
]


class LedgerUnfit(Exception):
    """The journal holds what a ledger cannot follow; use optuna's storage."""


def trial_log(study_id: int, trial, worker_id: str) -> dict:
    """optuna's journal record of a finished trial (``trial``, a FrozenTrial) created whole:
    the fields optuna's journal storage writes for ``create_new_trial(study_id, template)``."""
    values = trial.values
    log = {
        "op_code": CREATE_TRIAL,
        "worker_id": worker_id,
        "study_id": study_id,
        "state": int(trial.state),
        "value": None if values is not None and len(values) > 1 else trial.value,
        "values": values if values is not None and len(values) > 1 else None,
        "datetime_start": _iso(trial.datetime_start),
    }
    if trial.datetime_complete is not None:
        log["datetime_complete"] = _iso(trial.datetime_complete)

    dists = trial.distributions
    log["distributions"] = {k: distribution_to_json(d) for k, d in dists.items()}
    log["params"] = {k: dists[k].to_internal_repr(v) for k, v in trial.params.items()}
    log["user_attrs"] = trial.user_attrs
    log["system_attrs"] = trial.system_attrs
    log["intermediate_values"] = dict(trial.intermediate_values)
    return log


def _iso(when) -> str | None:
    if when is None:
        return None
    if when.tzinfo is None:
        when = when.astimezone()  # optuna's trials carry local naive times
    return when.astimezone(UTC).isoformat(timespec="microseconds")


def _local(text):
    """A stored time as optuna's journal replay gives it (local, naive)."""
    if text is None:
        return None
    return datetime.fromisoformat(text).astimezone().replace(tzinfo=None)


class _Distributions:
    """Distributions decoded once per distinct JSON text (every record repeats them)."""

    def __init__(self):
        self.cache: dict = {}

    def __call__(self, text):
        d = self.cache.get(text)
        if d is None:
            d = self.cache[text] = json_to_distribution(text)
        return d


def params_of(log: dict, dists: _Distributions) -> tuple[dict, dict]:
    """(distributions, parameter values as the trial sees them) of a CREATE_TRIAL record."""
    distributions = {k: dists(v) for k, v in log.get("distributions", {}).items()}
    params = {k: distributions[k].to_external_repr(p) for k, p in log.get("params", {}).items()}
    return distributions, params


def trial_from_log(log: dict, number: int, dists=None):
    """The FrozenTrial optuna's journal replay makes of a CREATE_TRIAL record (trial id = the
    study's trial number: a ledger holds one study)."""

    distributions, params = params_of(log, dists or _Distributions())
    return FrozenTrial(
        number=number,
        trial_id=number,
        state=TrialState(log.get("state", TrialState.RUNNING.value)),
        value=log.get("value"),
        values=log.get("values"),
        datetime_start=_local(log.get("datetime_start")),
        datetime_complete=_local(log.get("datetime_complete")),
        params=params,
        distributions=distributions,
        user_attrs=log.get("user_attrs", {}),
        system_attrs=log.get("system_attrs", {}),
        intermediate_values={int(k): v for k, v in log.get("intermediate_values", {}).items()},
    )


class JournalIndex:
    """What one pass over a journal file finds: its studies (name, directions, attributes), the
    byte offset of every trial record of each, and the damaged records skipped (``damage``:
    (offset, bytes) pairs). ``update()`` reads on from where it stopped; only whole lines are
    read (a record being written is left for the next look).

    A damaged record is skipped and the next record start read on (``split_line``); a damaged
    trial record of a study keeps its place among the study's trials (a failed trial stands in
    for it when read), so no later trial changes its number. Trial records are not decoded here
    (a damaged one that ends like a whole record is found when it is read).

    Raises ``LedgerUnfit`` for operations that change a trial after it was created (optuna's
    step-by-step ask and tell, deletes): the offsets alone no longer describe those trials.
    """

    def __init__(self, path):
        self.path = Path(path)
        self.position = 0
        self.studies: dict[int, dict] = {}
        self.offsets: dict[int, array] = {}
        self.damage: list[tuple[int, int]] = []
        self._next_study = 0

    def update(self) -> None:
        if not self.path.exists():
            return
        with open(self.path, "rb") as fh:
            fh.seek(self.position)
            pos = self.position
            for line in fh:
                if not line.endswith(b"\n"):
                    break
                for k, seg in split_line(line):
                    self._note(pos + k, seg)
                pos += len(line)
            self.position = pos

    def _note(self, pos: int, seg: bytes) -> None:
        """Index one record (a trial's offset, a study's change) or note it as damaged."""
        if seg.startswith(_TRIAL_PREFIX):
            m = _STUDY_ID.search(seg, 0, 400)
            sid = int(m.group(1)) if m else -1
            if sid in self.offsets:
                self.offsets[sid].append(pos)
            if not seg.endswith(b"}\n") and not is_whole(seg):
                self.damage.append((pos, len(seg)))
            return
        try:
            log = json.loads(seg)
        except ValueError:
            self.damage.append((pos, len(seg)))
            return
        if not isinstance(log, dict):
            self.damage.append((pos, len(seg)))
            return
        self._apply(log)

    def _apply(self, log: dict) -> None:
        op = log.get("op_code")
        if op == CREATE_STUDY:
            if any(s["name"] == log["study_name"] for s in self.studies.values()):
                return
            sid = self._next_study
            self._next_study += 1
            self.studies[sid] = {
                "name": log["study_name"],
                "directions": list(log["directions"]),
                "user_attrs": {},
                "system_attrs": {},
            }
            self.offsets[sid] = array("q")
        elif op == SET_STUDY_USER_ATTR and log["study_id"] in self.studies:
            self.studies[log["study_id"]]["user_attrs"].update(log["user_attr"])
        elif op == SET_STUDY_SYSTEM_ATTR and log["study_id"] in self.studies:
            self.studies[log["study_id"]]["system_attrs"].update(log["system_attr"])
        elif op == DELETE_STUDY:
            raise LedgerUnfit("a study was deleted from this journal")
        else:
            raise LedgerUnfit(f"journal operation {op} changes a trial after its creation")

    def study_id(self, name: str) -> int:
        for sid, s in self.studies.items():
            if s["name"] == name:
                return sid
        raise KeyError(name)


class JournalLedger:
    """One worker's line to a study in a journal file (module docstring)."""

    def __init__(self, path, name: str, index: JournalIndex | None = None):
        self.path = str(path)
        self.index = index or JournalIndex(path)
        self.index.update()
        self.study_id = self.index.study_id(name)
        self.user_attrs = self.index.studies[self.study_id]["user_attrs"]
        self.directions = _direction_names(self.index.studies[self.study_id]["directions"])
        self.backend = journal_backend(self.path)
        self.dists = _Distributions()
        self.read_to = len(self.index.offsets[self.study_id])  # trials handed out so far

    @property
    def n_trials(self) -> int:
        return len(self.index.offsets[self.study_id])

    def recent(self, limit: int) -> list:
        """The last ``limit`` trials of the study (a resumed worker's window)."""
        offsets = self.index.offsets[self.study_id]
        first = max(0, len(offsets) - limit)
        return self._read(first, len(offsets))

    def fresh(self) -> list:
        """The trials added to the study since the last look (by anyone, this worker too)."""
        self.index.update()
        end = self.n_trials
        out = self._read(self.read_to, end)
        self.read_to = end
        return out

    def trial(self, number: int):
        """The study's trial ``number`` (0 <= number < n_trials)."""
        return self._read(number, number + 1)[0]

    def _read(self, first: int, end: int) -> list:
        offsets = self.index.offsets[self.study_id]
        out = []
        if first >= end:
            return out
        with open(self.path, "rb") as fh:
            records = segments(fh, offsets[first])
            for number in range(first, end):
                # other records may lie between two of this study's trials
                pos, seg = next((p, r) for p, r in records if is_trial_of(r, self.study_id))
                out.append(
                    trial_from_log(decode_trial(seg, pos, self.study_id), number, self.dists)
                )
        return out

    def add(self, trial, worker_id: str) -> None:
        """Append one finished trial as a whole record (optuna's backend: its lock, fsync)."""
        self.backend.append_logs([trial_log(self.study_id, trial, worker_id)])

    def set_user_attr(self, key: str, value) -> None:
        """Set a study attribute (the record optuna's journal storage writes for it)."""
        log = {"op_code": SET_STUDY_USER_ATTR, "worker_id": "eddypull", "study_id": self.study_id}
        self.backend.append_logs([{**log, "user_attr": {key: value}}])
        self.user_attrs[key] = value


def _direction_names(directions) -> list[str]:
    """Stored directions (optuna's StudyDirection values: 1 minimise, 2 maximise) as words."""
    return ["minimize" if int(d) == 1 else "maximize" for d in directions]


class DatabaseLedger:
    """One worker's line to a study in a database (module docstring)."""

    def __init__(self, storage, name: str):
        self.storage = getattr(storage, "_backend", storage)  # past optuna's caching wrapper
        self.study_id = self.storage.get_study_id_from_name(name)
        self.user_attrs = self.storage.get_study_user_attrs(self.study_id)
        self.directions = [d.name.lower() for d in self.storage.get_study_directions(self.study_id)]
        self.last_id = -1

    def set_user_attr(self, key: str, value) -> None:
        self.storage.set_study_user_attr(self.study_id, key, value)
        self.user_attrs[key] = value

    @property
    def n_trials(self) -> int:
        return self.storage.get_n_trials(self.study_id)

    def _trials(self, greater_than: int) -> list:
        # The storage's own incremental read (what its caching wrapper uses): trials whose id
        # is above ``greater_than``, in id order.
        trials = self.storage._get_trials(self.study_id, None, set(), greater_than)
        if trials:
            self.last_id = max(self.last_id, max(t._trial_id for t in trials))
        return trials

    def recent(self, limit: int) -> list:
        n = self.n_trials
        if n == 0:
            return []
        first = max(0, n - limit)
        start_id = self.storage.get_trial_id_from_study_id_trial_number(self.study_id, first)
        return self._trials(start_id - 1)

    def fresh(self) -> list:
        return self._trials(self.last_id)

    def add(self, trial, worker_id: str) -> None:
        self.storage.create_new_trial(self.study_id, template_trial=trial)


class OptunaLedger:
    """The same line through optuna's own storage (it holds every trial): for a journal that a
    ``JournalLedger`` cannot follow."""

    def __init__(self, location, name: str):

        storage, _ = open_storage(location, repair=False, notes=[])  # the run's parent says it
        self.study = optuna.load_study(study_name=name, storage=storage)
        self.user_attrs = self.study.user_attrs
        self.directions = [d.name.lower() for d in self.study.directions]
        self.seen = -1

    def set_user_attr(self, key: str, value) -> None:
        self.study.set_user_attr(key, value)
        self.user_attrs[key] = value

    @property
    def n_trials(self) -> int:
        return len(self.study.get_trials(deepcopy=False))

    def recent(self, limit: int) -> list:
        trials = self.study.get_trials(deepcopy=False)
        if trials:
            self.seen = max(self.seen, trials[-1].number)
        return trials[-limit:]

    def fresh(self) -> list:
        trials = [t for t in self.study.get_trials(deepcopy=False) if t.number > self.seen]
        if trials:
            self.seen = max(t.number for t in trials)
        return trials

    def add(self, trial, worker_id: str) -> None:
        self.study.add_trial(trial)


def open_ledger(location, name: str):
    """The ledger of study ``name`` at ``location`` (a study folder or a database URL): a
    ``DatabaseLedger``, a ``JournalLedger``, or an ``OptunaLedger`` when the journal holds what a
    journal ledger cannot follow."""

    if is_url(str(location)):
        storage, _ = open_storage(str(location), repair=False, create=False)
        return DatabaseLedger(storage, name)
    try:
        return JournalLedger(Path(location) / JOURNAL, name)
    except LedgerUnfit:
        return OptunaLedger(Path(location), name)
