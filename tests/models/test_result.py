"""The result's grouping (models.result): electrical and thermal parts, flattened to the public
fields. Internal identities of the project's own data structure, no outside source needed."""

from __future__ import annotations

import dataclasses
import inspect
import json
import math
import pickle
import re

import numpy as np
import pytest

from models import evaluate, load_design
from models.result import (
    FIELDS,
    FLAT_FIELDS,
    Electrical,
    Envelope,
    Result,
    ThermalResults,
    field_names,
    flat_for_checks,
    null_reason,
    unit_of,
    words_of,
)
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
    for group, cls in (
        ("electrical", Electrical),
        ("thermal", ThermalResults),
        ("envelope", Envelope),
    ):
        assert {n for g, n in FLAT_FIELDS if g == group} == _public(cls)
    own = {f.name for f in dataclasses.fields(Result)} - {"electrical", "thermal", "envelope"}
    assert {n for g, n in FLAT_FIELDS if g == ""} == own


def test_flat_attributes_read_the_groups(result):
    d = result.to_dict()
    assert list(d) == [n for _, n in FLAT_FIELDS]
    for group, name in FLAT_FIELDS:
        value = getattr(result, name)
        if isinstance(value, float) and math.isnan(value):  # no closing part of a solid ring
            assert math.isnan(getattr(getattr(result, group), name)) and math.isnan(d[name])
            continue
        if group:
            assert value is getattr(getattr(result, group), name)
        # assert_equal: nan equals nan (a centring stiffness not asked for is nan)
        np.testing.assert_equal(d[name], list(value) if isinstance(value, tuple) else value)
    json.dumps(d, allow_nan=True)
    with pytest.raises(AttributeError, match="no attribute 'pull_mN'"):
        _ = result.pull_mN


def test_each_temperature_is_stored_once(result):
    th = result.thermal
    stored = {f.name for f in dataclasses.fields(ThermalResults)}
    assert "coil_temperature_C" not in stored and "ring_temperature_C" not in stored
    assert th.coil_temperature_C == th.temperatures_C["coil"]
    assert th.ring_temperature_C == th.temperatures_C["ring"]
    assert th.target_hold_temperature_C == th.temperatures_C["target_hold"]


def test_no_measured_looking_defaults():
    # A thermal part needs every value given: no coil at 20 degC before any thermal solve.
    for cls in (Electrical, ThermalResults):
        for f in dataclasses.fields(cls):
            assert f.default is dataclasses.MISSING and f.default_factory is dataclasses.MISSING


def test_pickles_and_stays_frozen(result):
    back = pickle.loads(pickle.dumps(result))
    # compared as text: a solid ring's closing voltage is nan, and nan != nan
    assert json.dumps(back.to_dict()) == json.dumps(result.to_dict())
    with pytest.raises(dataclasses.FrozenInstanceError):
        result.electrical.pull_N = 0.0  # type: ignore[misc]


_STORED_AS = {
    "float": (float, int),
    "int": (int,),
    "dict": (dict,),
    "list": (list,),
    "text": (str,),
}


def test_each_field_is_stored_as_its_row_says(result):
    """models.result.FIELDS: a row's ``stored`` kind is the type of the value to_dict gives."""
    d = result.to_dict()
    for row in FIELDS:
        value = d[row.name]
        assert isinstance(value, _STORED_AS[row.stored]), (row.name, type(value))
        assert row.words and row.group in ("", "electrical", "thermal", "envelope")
    assert field_names() == tuple(d)
    assert unit_of("pull_N") == "N" and words_of("pull_N") == "pull at pick"


def test_null_reasons_are_those_the_json_writer_gives():
    """The table's reason for a null (null_reason) is the one optim.jsonout writes beside it."""
    from optim.jsonout import _why

    for row in FIELDS:
        for sign, reason in row.null:
            value = {"nan": math.nan, "inf": math.inf, "-inf": -math.inf}[sign]
            assert null_reason(row.name, sign) == reason == _why(row.name, "", value), row.name
    assert null_reason("pull_N", "nan") is None


def test_the_checks_view_is_the_checked_rows(result):
    """flat_for_checks holds every value models.checks reads by name, from the checked rows."""
    import models.checks

    flat = flat_for_checks(result.electrical, result.thermal)
    assert set(flat) == {row.name for row in FIELDS if row.checked}
    read = set(re.findall(r'result\["(\w+)"\]', inspect.getsource(models.checks)))
    assert read and read <= set(flat)
    for name, value in flat.items():
        assert value == getattr(result, name) or (
            math.isnan(value) and math.isnan(getattr(result, name))
        )
