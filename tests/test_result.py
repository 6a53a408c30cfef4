"""The result's grouping (models.result): electrical and thermal parts, flattened to the public
fields. Internal identities of the project's own data structure, no outside source needed."""

from __future__ import annotations

import dataclasses
import inspect
import json
import pickle

import numpy as np
import pytest

from models import evaluate, load_design
from models.result import FLAT_FIELDS, Electrical, Result, Thermal
from optim.demo import DEMO_DESIGN

DEMO = DEMO_DESIGN


@pytest.fixture(scope="module")
def result():
    return evaluate(load_design(DEMO))


def _public(cls) -> set:
    names = {f.name for f in dataclasses.fields(cls)}
    names |= {n for n, v in inspect.getmembers(cls) if isinstance(v, property)}
    return names


def test_every_group_field_is_flattened_once():
    names = [n for _, n in FLAT_FIELDS]
    assert len(names) == len(set(names))
    for group, cls in (("electrical", Electrical), ("thermal", Thermal)):
        assert {n for g, n in FLAT_FIELDS if g == group} == _public(cls)
    own = {f.name for f in dataclasses.fields(Result)} - {"electrical", "thermal"}
    assert {n for g, n in FLAT_FIELDS if g == ""} == own


def test_flat_attributes_read_the_groups(result):
    d = result.to_dict()
    assert list(d) == [n for _, n in FLAT_FIELDS]
    for group, name in FLAT_FIELDS:
        value = getattr(result, name)
        if group:
            assert value is getattr(getattr(result, group), name)
        # assert_equal: nan equals nan (a centring stiffness not asked for is nan)
        np.testing.assert_equal(d[name], list(value) if isinstance(value, tuple) else value)
    json.dumps(d, allow_nan=True)
    with pytest.raises(AttributeError, match="no attribute 'pull_mN'"):
        _ = result.pull_mN


def test_each_temperature_is_stored_once(result):
    th = result.thermal
    stored = {f.name for f in dataclasses.fields(Thermal)}
    assert "coil_temperature_C" not in stored and "ring_temperature_C" not in stored
    assert th.coil_temperature_C == th.temperatures_C["coil"]
    assert th.ring_temperature_C == th.temperatures_C["ring"]
    assert th.target_hold_temperature_C == th.temperatures_C["target_hold"]


def test_no_measured_looking_defaults():
    # A thermal part needs every value given: no coil at 20 degC before any thermal solve.
    for cls in (Electrical, Thermal):
        for f in dataclasses.fields(cls):
            assert f.default is dataclasses.MISSING and f.default_factory is dataclasses.MISSING


def test_pickles_and_stays_frozen(result):
    back = pickle.loads(pickle.dumps(result))
    np.testing.assert_equal(back.to_dict(), result.to_dict())  # nan equals nan
    with pytest.raises(dataclasses.FrozenInstanceError):
        result.electrical.pull_N = 0.0  # type: ignore[misc]
