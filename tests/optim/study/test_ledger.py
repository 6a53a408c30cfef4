"""The worker's ledger (optim.study.ledger) against optuna, the reference library whose file it
writes: a trial appended by the ledger reads back through optuna's own journal storage exactly
as a trial added by ``Study.add_trial``; the ledger reads back what optuna wrote, numbers
included; a journal the ledger cannot follow (a trial told step by step) falls back to optuna."""

from __future__ import annotations

from datetime import UTC, datetime

import optuna
import pytest
from optuna.distributions import CategoricalDistribution, FloatDistribution, IntDistribution
from optuna.storages.journal import JournalFileBackend, JournalFileOpenLock, JournalStorage
from optuna.trial import TrialState, create_trial

from optim.study.ledger import JournalLedger, OptunaLedger, open_ledger

DISTS = {
    "x": FloatDistribution(0.0, 1.0),
    "n": IntDistribution(1, 9),
    "steel": CategoricalDistribution(["M250-35A", "M400-50A", "M800-65A"]),
}


def _trial(i: int, state=TrialState.COMPLETE):
    trial = create_trial(
        state=state,
        params={"x": i / 100.0, "n": 1 + i % 9, "steel": DISTS["steel"].choices[i % 3]},
        distributions=DISTS,
        values=[float(i), -0.5 * i] if state == TrialState.COMPLETE else None,
        user_attrs={"eddypull": {"results": [i, 2.5], "worker": f"w{i % 2}", "reason": ""}},
        system_attrs={"constraints:loss": -1.0 + i},
    )
    trial.datetime_start = trial.datetime_complete = datetime(2026, 12, 3, 6, 0, i, tzinfo=UTC)
    return trial


def _storage(path):
    return JournalStorage(JournalFileBackend(str(path), lock_obj=JournalFileOpenLock(str(path))))


def _same(a, b):
    assert a.number == b.number
    assert a.state == b.state
    assert a.values == b.values
    assert a.params == b.params
    assert a.distributions == b.distributions
    assert a.user_attrs == b.user_attrs
    assert a.system_attrs == b.system_attrs
    assert a.datetime_start == b.datetime_start
    assert a.datetime_complete == b.datetime_complete


def test_a_ledger_record_reads_back_through_optuna_as_add_trial_writes_it(tmp_path):
    by_optuna, by_ledger = tmp_path / "a.log", tmp_path / "b.log"
    for path in (by_optuna, by_ledger):
        optuna.create_study(
            study_name="s", storage=_storage(path), directions=["maximize", "minimize"]
        )
    reference = optuna.load_study(study_name="s", storage=_storage(by_optuna))
    ledger = JournalLedger(by_ledger, "s")
    for i in range(7):
        state = TrialState.FAIL if i == 3 else TrialState.COMPLETE
        reference.add_trial(_trial(i, state))
        ledger.add(_trial(i, state), "w")
    expected = optuna.load_study(study_name="s", storage=_storage(by_optuna)).trials
    got = optuna.load_study(study_name="s", storage=_storage(by_ledger)).trials
    assert len(got) == len(expected) == 7
    for a, b in zip(got, expected, strict=True):
        _same(a, b)


def test_the_ledger_reads_what_optuna_wrote_recent_and_fresh(tmp_path):
    path = tmp_path / "j.log"
    study = optuna.create_study(study_name="s", storage=_storage(path), directions=["minimize"] * 2)
    optuna.create_study(study_name="other", storage=_storage(path), directions=["minimize"] * 2)
    other = optuna.load_study(study_name="other", storage=_storage(path))
    for i in range(10):
        study.add_trial(_trial(i))
        other.add_trial(_trial(50 + i))  # another study's records between this one's
    study.set_user_attr("eddypull_result_names", ["pull_N"])
    ledger = JournalLedger(path, "s")
    assert ledger.n_trials == 10
    assert ledger.user_attrs == {"eddypull_result_names": ["pull_N"]}
    assert ledger.directions == ["minimize", "minimize"]
    expected = optuna.load_study(study_name="s", storage=_storage(path)).trials
    recent = ledger.recent(4)
    assert [t.number for t in recent] == [6, 7, 8, 9]
    for a, b in zip(recent, expected[6:], strict=True):
        _same(a, b)
    assert ledger.fresh() == []
    for i in range(10, 13):
        study.add_trial(_trial(i))
    fresh = ledger.fresh()
    assert [t.number for t in fresh] == [10, 11, 12]
    expected = optuna.load_study(study_name="s", storage=_storage(path)).trials
    for a, b in zip(fresh, expected[10:], strict=True):
        _same(a, b)


def test_a_journal_told_step_by_step_falls_back_to_optuna(tmp_path):
    storage = _storage(tmp_path / "journal.log")
    study = optuna.create_study(study_name="s", storage=storage)
    study.optimize(lambda t: t.suggest_float("x", 0, 1), n_trials=3)  # ask, set param, tell
    ledger = open_ledger(tmp_path, "s")
    assert isinstance(ledger, OptunaLedger)
    assert ledger.n_trials == 3
    assert [t.number for t in ledger.recent(2)] == [1, 2]


def test_an_unknown_study_name_is_a_key_error(tmp_path):
    path = tmp_path / "j.log"
    optuna.create_study(study_name="s", storage=_storage(path))
    with pytest.raises(KeyError):
        JournalLedger(path, "t")


def test_the_trials_table_from_the_journal_equals_the_one_from_optuna(tmp_path):
    """The table ``study status``/``front`` read from the journal's records (the ledger's
    index) is the one built from optuna's own trials of the same file, cell for cell."""
    from optim.cli import main
    from optim.morning.front import trials_table
    from optim.study.columns import open_readout
    from optim.study.storage import load_existing
    from tests.optim.study.test_study import QUICK, _study_file

    path = _study_file(tmp_path, "tbl", QUICK)
    folder = tmp_path / "tbl"
    assert main(["study", "run", str(path), "--trials", "12", "--out", str(folder)]) == 0
    readout = open_readout(folder)
    assert type(readout.source).__name__ == "JournalLedger"
    study, spec_json, _ = load_existing(folder)
    lean = trials_table(readout, spec_json)
    full = trials_table(study, spec_json)
    assert list(lean.columns) == list(full.columns)
    assert len(lean) == 12 and lean["on_front"].any()
    import pandas as pd

    pd.testing.assert_frame_equal(lean, full)
    assert readout.trial(5).params == study.trials[5].params


def test_a_database_ledger_writes_and_reads_as_optuna_does(tmp_path):
    """The same on a database (SQLite through optuna's RDBStorage, the class PostgreSQL uses):
    trials added by the ledger are read back by optuna as add_trial's; recent and fresh read
    only what they should."""
    from optim.study.ledger import DatabaseLedger

    url = f"sqlite:///{tmp_path / 'db.sqlite'}"
    storage = optuna.storages.RDBStorage(url)
    optuna.create_study(study_name="s", storage=storage, directions=["maximize", "minimize"])
    ledger = DatabaseLedger(optuna.storages.RDBStorage(url), "s")
    assert ledger.directions == ["maximize", "minimize"]
    for i in range(6):
        ledger.add(_trial(i), "w")
    reference = optuna.load_study(study_name="s", storage=optuna.storages.RDBStorage(url))
    stored = reference.trials
    assert [t.number for t in ledger.recent(2)] == [4, 5]
    assert ledger.fresh() == []
    reference.add_trial(_trial(6))
    fresh = ledger.fresh()
    assert [t.number for t in fresh] == [6]
    for a, b in zip(stored, [_trial(i) for i in range(6)], strict=True):
        assert (a.params, a.values, a.user_attrs, a.system_attrs) == (
            b.params,
            b.values,
            b.user_attrs,
            b.system_attrs,
        )
    ledger.set_user_attr("k", 3)
    assert reference._storage.get_study_user_attrs(reference._study_id)["k"] == 3


def test_columns_decoded_in_parallel_ranges_equal_the_serial_ones(tmp_path, monkeypatch):
    """A large journal study is decoded in ranges by several processes: the same table."""
    import pandas as pd

    import optim.study.columns as columns
    from optim.cli import main
    from optim.morning.front import trials_table
    from tests.optim.study.test_study import QUICK, _study_file

    path = _study_file(tmp_path, "par", QUICK)
    folder = tmp_path / "par"
    assert main(["study", "run", str(path), "--trials", "9", "--out", str(folder)]) == 0
    readout = columns.open_readout(folder)
    serial = trials_table(readout, readout.spec_json)
    monkeypatch.setattr(columns, "PARALLEL_ABOVE", 2)
    monkeypatch.setattr(columns.os, "cpu_count", lambda: 3)
    parallel = trials_table(readout, readout.spec_json)
    pd.testing.assert_frame_equal(serial, parallel)
