"""The study worker's typed records (optim.study.records): the names stored are the ones optuna
and the readers use."""

import math

import optuna

from optim.study.records import (
    CONSTRAINT_PREFIX,
    RECORD_ATTR,
    StoredRecord,
    constraint_attrs,
    constraints_of,
)


def test_the_constraint_prefix_is_what_optuna_writes():
    """optuna's public ``Trial.set_constraint`` stores each value under the prefix and the name
    (optuna, the library itself, is the reference)."""
    optuna.logging.set_verbosity(optuna.logging.WARNING)
    study = optuna.create_study()
    trial = study.ask()
    trial.set_constraint("ring_temperature_C", 1.5)
    study.tell(trial, 0.0)
    stored = study.trials[0].system_attrs
    assert stored == constraint_attrs({"ring_temperature_C": 1.5})
    assert f"{CONSTRAINT_PREFIX}ring_temperature_C" in stored
    assert constraints_of(stored | {"nsga2:generation": 3}) == {"ring_temperature_C": 1.5}


def test_a_stored_record_reads_back_what_was_written():
    """Identity: encode then decode gives the same record; a copy keeps ``copy_of``."""
    rec = StoredRecord(
        [1.0, math.inf], {"c": 0.5}, "infeasible: c", "c", ["w"], "h:1", "ab", 0.25, 7
    )
    assert StoredRecord.of({RECORD_ATTR: rec.to_attrs()}) == rec
    plain = StoredRecord(eval_s=0.1)
    assert "copy_of" not in plain.to_attrs()
    assert StoredRecord.of({RECORD_ATTR: plain.to_attrs()}).copy_of is None


def test_a_trial_written_by_something_else_has_an_empty_record():
    """A trial without eddypull's attribute (or with another value there) decodes to defaults."""
    for attrs in ({}, {RECORD_ATTR: "text"}):
        rec = StoredRecord.of(attrs)
        assert rec.results == [] and rec.reason == "" and math.isnan(rec.eval_s)
