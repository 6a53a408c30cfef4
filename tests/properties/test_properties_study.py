"""Malformed study files and bad study locations through the command line: each gives exit code 2
and one line per problem, each line starting "eddypull: error:" and naming the field, the flag or
the file; never a traceback, a hang, a result or study data (no journal.log, no database).

The files are generated (hypothesis, seeded) from one valid study (the demo study with its design
as an absolute path and every [run] key set) by one mutation of a known kind that makes it wrong
for certain: no generated file is valid, so every test can fail. ``test_the_base_study_is_valid``
checks the starting point itself. Categories: wrong types at every key, tables that are not
tables, missing tables, inverted or equal bounds, negative, zero and absurd sizes, NaN, inf and
huge numbers, unknown keys and tables, wrong units in names, unknown results, broken TOML, binary
garbage, invalid UTF-8 and bad ``design`` paths; part families (``[[parts]]``, from the
sorting demo): wrong types at every part key, bad sizes, unknown keys and fixed cases (names,
roles, [target] beside them, a searched part metal). The tests try about 3,200 inputs (unknown keys,
unknown results and wrong units in result names are marked slow, the rest run by default); the
slow ``test_many_malformed_studies`` draws 2,000 more from six categories at once.

``study status``, ``front`` and ``export`` get bad locations (missing, a file, no journal, a
journal of nothing but damaged records, URLs with a bad scheme; an unreachable server is a fault
at run time, tested in test_journal_damage) and bad ``--trial``/``--best``
against a small real study; ``study run`` gets bad flags. Argparse's own refusals (``--workers
x``) are one line too and leave through SystemExit(2), which is what the console script returns.
"""

from __future__ import annotations

import copy
import math
import tomllib
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from models.design import DESIGN_KEYS
from optim.cli import main
from optim.demo import DEMO_SORTING, DEMO_STUDY
from optim.study.parts import PART_KEYS, ROLES
from optim.study.spec import RUN_MAX, load_study_spec
from tests.conftest import write_counts
from tests.properties.test_properties_files import BREAKERS, UNITS, Raw, _time_box, to_toml

# Hypothesis's failure report trips over a deprecation in a dependency under warnings-as-errors;
# without this a failing example shows as an INTERNALERROR instead of the example.
pytestmark = pytest.mark.filterwarnings(
    "ignore:mypy_extensions.TypedDict is deprecated:DeprecationWarning"
)

QUICK = settings(
    max_examples=200,
    deadline=None,  # the time box guards hangs; hypothesis's deadline only reports late
    derandomize=True,
    database=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
)
PREFIX = "eddypull: error: "

# ------------------------------------------------------------------ the valid starting point
_STUDY = DEMO_STUDY
BASE = tomllib.loads(_STUDY.read_text(encoding="utf-8"))
BASE["design"] = str((_STUDY.parent / BASE["design"]).resolve())
BASE["search"]["ring_depth_mm"]["step"] = 0.5  # 0.5..6.0: 11 steps, so every key has a value
BASE["run"] = {
    "trials": 2,
    "minutes": 1.0,
    "workers": 1,
    "sampler": "nsga2",
    "population": 8,
    "seed": 3,
    "isothermal": True,
}
#: A storage URL that a wrongly accepted file would create: the tests check it never appears.
NEVER_DB = "never_created.db"

#: The searched parameters with a range (the others have choices).
RANGED = [p for p, spec in BASE["search"].items() if "low" in spec]

#: Every key of the study with its kind; "hours" is absent from BASE but a key all the same.
FIELDS: list[tuple[tuple, str]] = [
    (("name",), "name"),
    (("description",), "str"),
    (("design",), "str"),
    *[(("search", p, b), "num") for p in RANGED for b in ("low", "high")],
    *[(("search", p, "choices"), "choices") for p in BASE["search"] if p not in RANGED],
    (("search", "ring_depth_mm", "step"), "num"),
    (("search", "frequency_Hz", "scale"), "enum"),
    *[(("objectives", o), "enum") for o in BASE["objectives"]],
    (("robust", "gap_min_mm"), "pos"),
    (("robust", "gap_max_mm"), "pos"),
    (("robust", "points"), "int"),
    *[(("constraints", c, b), "num") for c, v in BASE["constraints"].items() for b in v],
    (("run", "trials"), "int"),
    (("run", "minutes"), "pos"),
    (("run", "hours"), "pos"),
    (("run", "workers"), "int"),
    (("run", "sampler"), "enum"),
    (("run", "population"), "int"),
    (("run", "seed"), "int0"),
    (("run", "storage"), "url"),
    (("run", "isothermal"), "bool"),
    *[((t, k), DESIGN_KEYS[t][k][0]) for t in ("target", "thermal") for k in BASE[t]],
]
NUMERIC = [(p, k) for p, k in FIELDS if k in ("num", "pos", "int", "int0")]


def _where(path: tuple) -> str:
    return ".".join(path)


def _set(data: dict, path: tuple, value) -> None:
    for part in path[:-1]:
        data = data[part]
    data[path[-1]] = value


def _base(tmp: Path) -> dict:
    d = copy.deepcopy(BASE)
    d["run"]["storage"] = f"sqlite:///{tmp / NEVER_DB}"
    return d


_RESULTS: list[str] = []


def result_names() -> list[str]:
    """Every result a study can use (computed once, from the valid base study)."""
    if not _RESULTS:
        _RESULTS.extend(load_study_spec(_STUDY).result_names)
    return _RESULTS


# ------------------------------------------------------------------ running the command
@pytest.fixture(scope="module")
def workdir(tmp_path_factory):
    return tmp_path_factory.mktemp("bad_studies")


COUNTS: dict[str, int] = {}


@pytest.fixture(scope="module", autouse=True)
def _report_counts(request):
    """After the module: how many malformed inputs each category tried (for the record)."""
    yield
    write_counts(request, "bad study inputs tried", COUNTS)


def refused(argv, capsys, category, one_line=False) -> list[str]:
    """Run ``eddypull argv`` in-process; check the refusal; return the error lines."""
    COUNTS[category] = COUNTS.get(category, 0) + 1
    capsys.readouterr()
    with _time_box():
        try:
            code = main([str(a) for a in argv])
        except SystemExit as exit_:  # argparse's refusals
            code = exit_.code
    out, err = capsys.readouterr()
    lines = err.splitlines()
    assert code == 2, (category, argv, out, err)
    assert out == "", out  # no result
    assert "Traceback" not in err
    assert lines and all(line.startswith(PREFIX) for line in lines), err
    assert all(len(line) > len(PREFIX) + 5 for line in lines)
    if one_line:
        assert len(lines) == 1, lines
    return lines


def run_study_file(path, workdir, capsys, category, must_name=None) -> list[str]:
    """``eddypull study run path --trials 1 --out ...`` must refuse and write no study data."""
    out = workdir / "out"
    lines = refused(["study", "run", path, "--trials", "1", "--out", out], capsys, category)
    assert not (out / "journal.log").exists(), lines
    assert not (workdir / NEVER_DB).exists(), lines
    if must_name is not None:
        assert any(must_name in line for line in lines), (must_name, lines)
    return lines


def run_study(data, workdir, capsys, category, must_name=None) -> list[str]:
    path = workdir / "study.toml"
    path.write_text(to_toml(data), encoding="utf-8")
    return run_study_file(path, workdir, capsys, category, must_name)


def test_writer_round_trips_the_base_study(workdir):
    d = _base(workdir)
    assert tomllib.loads(to_toml(d)) == d


def test_the_base_study_is_valid(workdir):
    # the starting point of every mutation is a valid study: what the mutations break is theirs
    path = workdir / "valid.toml"
    path.write_text(to_toml(_base(workdir)), encoding="utf-8")
    spec = load_study_spec(path)
    assert spec.params and spec.objectives and spec.constraints and spec.gaps_mm
    assert {p.name for p in spec.params} == set(BASE["search"])


# ------------------------------------------------------------------ generated categories
_dates = st.sampled_from([Raw("1979-05-27T07:32:00Z"), Raw("07:32:00"), Raw("1979-05-27")])
_lists = st.lists(st.floats(allow_nan=False), max_size=3)
_dicts = st.dictionaries(st.sampled_from(["a", "low", "min"]), st.integers(), max_size=2)
_numbers = st.one_of(st.integers(), st.floats(allow_nan=False))


def _wrong_for(kind):
    """Values of the wrong type for a key of ``kind`` (none of them can pass)."""
    not_number = st.one_of(st.text(max_size=12), st.booleans(), _lists, _dicts, _dates)
    if kind in ("num", "pos", "nonneg", "frac", "unit"):
        return not_number
    if kind in ("int", "int0"):
        whole_float = st.integers(-(10**6), 10**6).map(float)
        return st.one_of(not_number, whole_float, st.floats(0.1, 1e6).filter(lambda x: x % 1))
    if kind == "bool":
        return st.one_of(_numbers, st.text(max_size=8), _lists, _dicts, _dates)
    if kind == "url":  # a string without a scheme is a path, not a URL
        paths = st.text(max_size=12).filter(lambda t: "://" not in t)
        return st.one_of(_numbers, st.booleans(), _lists, _dicts, paths)
    if kind == "enum":  # any value but the few allowed strings
        allowed = {"maximize", "minimize", "linear", "log", "nsga2", "tpe", "random"}
        return st.one_of(_numbers, st.booleans(), _lists, _dates, st.text(max_size=12)).filter(
            lambda v: not isinstance(v, str) or v not in allowed
        )
    if kind == "choices":  # a list of library names: anything else
        return st.one_of(_numbers, st.booleans(), st.text(max_size=12), _lists, _dicts, _dates)
    if kind == "name":  # strings are checked by their characters in test_bad_names
        return st.one_of(_numbers, st.booleans(), _lists, _dicts, _dates)
    return st.one_of(_numbers, st.booleans(), _lists, _dicts, _dates)  # a string key


@QUICK
@given(st.data())
def test_wrong_types(workdir, capsys, data):
    path, kind = data.draw(st.sampled_from([f for f in FIELDS if f[1] != "class"]))
    value = data.draw(_wrong_for(kind))
    d = _base(workdir)
    _set(d, path, value)
    run_study(d, workdir, capsys, "wrong type", must_name=_where(path))


@QUICK
@given(
    st.sampled_from(["search", "objectives", "robust", "constraints", "run", "target", "thermal"]),
    st.one_of(_numbers, st.booleans(), st.text(max_size=8), _lists, _dates),
)
def test_tables_that_are_not_tables(workdir, capsys, table, value):
    d = _base(workdir)
    d[table] = value
    run_study(d, workdir, capsys, "table not a table", must_name=table)


#: What is removed, and what the refusal must name.
MISSING = {
    ("search",): "[search]",
    ("objectives",): "[objectives]",
    ("design",): "base design",  # the inline tables alone are not a whole design
    ("design", "target", "thermal"): "design: missing",
    ("robust",): "robust.gap_min_mm",  # worst_lift_ratio needs the gap range
}


@pytest.mark.parametrize("keys", list(MISSING), ids=[" ".join(k) for k in MISSING])
def test_missing_tables(workdir, capsys, keys):
    d = _base(workdir)
    for key in keys:
        del d[key]
    run_study(d, workdir, capsys, "missing table", must_name=MISSING[keys])


@QUICK
@given(st.sampled_from(RANGED), st.floats(0.0, 2.0), st.booleans())
def test_inverted_and_equal_search_bounds(workdir, capsys, name, back, equal):
    d = _base(workdir)
    spec = d["search"][name]
    spec.pop("step", None)
    spec["high"] = spec["low"] if equal else spec["low"] - back * spec["low"] - 1e-6
    run_study(d, workdir, capsys, "inverted bounds", must_name=f"search.{name}")


@QUICK
@given(st.sampled_from(["robust", "constraints"]), st.floats(1e-6, 100.0))
def test_inverted_robust_and_constraint_bounds(workdir, capsys, table, by):
    d = _base(workdir)
    if table == "robust":
        d["robust"]["gap_max_mm"] = d["robust"]["gap_min_mm"] * (1 - by / 101.0)
        must = "gap_max_mm"
    else:
        d["constraints"]["ring_temperature_C"] = {"min": 180.0 + by, "max": 180.0}
        must = "constraints.ring_temperature_C"
    run_study(d, workdir, capsys, "inverted bounds", must_name=must)


@st.composite
def bad_sizes(draw):
    """A key and a negative, zero or absurd value for it (outside what the key allows)."""
    which = draw(
        st.sampled_from(["search", "fraction", "step", "robust gap", "points", "run", "run max"])
    )
    low_or_zero = st.one_of(st.just(0), st.just(0.0), st.floats(-1e300, -1e-300))
    if which == "search":  # pole, ring depth, frequency, current: sizes > 0, below a limit
        name = draw(st.sampled_from(["ring_depth_mm", "pole_radius_mm", "current_A"]))
        bound = draw(st.sampled_from(["low", "high", "high-absurd", "low-tiny"]))
        path = ("search", name, "low" if bound.startswith("low") else "high")
        if bound == "low":
            value = draw(low_or_zero)
        elif bound == "low-tiny":  # below 1 um / 1 uA
            value = draw(st.floats(1e-300, 9e-7))
        elif bound == "high-absurd":  # beyond 1 m / 100 kA
            value = draw(st.one_of(st.floats(1.001e5, 1e300), st.integers(10**5 + 1, 10**300)))
        else:
            value = draw(low_or_zero)  # high <= 0 < low: inverted, still named
        return path, value, f"search.{name}"
    if which == "fraction":
        name = draw(st.sampled_from(["ring_outer_fraction", "ring_inner_fraction"]))
        if draw(st.booleans()):
            return ("search", name, "low"), draw(low_or_zero), f"search.{name}"
        return ("search", name, "high"), draw(st.floats(1.0, 1e300)), f"search.{name}"
    if which == "step":  # <= 0, or longer than the range 0.5..6 mm, or not dividing it
        value = draw(
            st.one_of(low_or_zero, st.floats(5.5001, 1e300), st.sampled_from([0.3, 0.7, 2.0]))
        )
        return ("search", "ring_depth_mm", "step"), value, "search.ring_depth_mm.step"
    if which == "robust gap":
        key = draw(st.sampled_from(["gap_min_mm", "gap_max_mm"]))
        value = draw(st.one_of(low_or_zero, st.floats(1000.001, 1e300), st.floats(1e-300, 9e-4)))
        return ("robust", key), value, f"robust.{key}"
    if which == "points":
        value = draw(st.one_of(st.integers(-(10**30), 0), st.integers(51, 10**30)))
        return ("robust", "points"), value, "robust.points"
    key = draw(st.sampled_from(list(RUN_MAX)))
    where = ("run", key)
    if which == "run max":
        most = RUN_MAX[key]
        if key in ("minutes", "hours"):
            return where, draw(st.floats(most * 1.0001, 1e300)), f"run.{key}"
        return where, draw(st.integers(most + 1, 10**300)), f"run.{key}"
    if key in ("minutes", "hours"):
        return where, draw(low_or_zero), f"run.{key}"
    lowest = 0 if key == "seed" else 1
    return where, draw(st.integers(-(10**30), lowest - 1)), f"run.{key}"


@QUICK
@given(bad_sizes())
def test_negative_zero_and_absurd_sizes(workdir, capsys, case):
    path, value, must = case
    d = _base(workdir)
    _set(d, path, value)
    run_study(d, workdir, capsys, "negative, zero or absurd", must_name=must)


@QUICK
@given(
    st.sampled_from(NUMERIC),
    st.sampled_from([math.nan, math.inf, -math.inf, 10**400, -(10**400), 2**1030]),
)
def test_nan_inf_and_huge_numbers(workdir, capsys, field, value):
    path, _ = field
    d = _base(workdir)
    _set(d, path, value)
    run_study(d, workdir, capsys, "nan, inf or huge", must_name=_where(path))


@QUICK
@given(st.sampled_from([p for p, _ in NUMERIC if p[0] in ("search", "robust", "run")]))
def test_largest_float(workdir, capsys, path):
    # 1.8e308 is finite, but no bound, gap or budget may be that large
    d = _base(workdir)
    _set(d, path, 1.7976931348623157e308)
    must = _where(path[:2]) if path[0] == "search" else _where(path)  # "search.x: low = ..."
    run_study(d, workdir, capsys, "nan, inf or huge", must_name=must)


_TOP = {
    "name",
    "description",
    "design",
    "search",
    "objectives",
    "robust",
    "constraints",
    "run",
    "parts",
}
_keys = st.text(st.characters(codec="utf-8", exclude_categories=("Cs",)), min_size=1, max_size=16)


@pytest.mark.slow
@QUICK
@given(st.data())
def test_unknown_keys_and_tables(workdir, capsys, data):
    where = data.draw(
        st.sampled_from(["top", "table", "search entry", "run", "robust", "constraint", "inline"])
    )
    d = _base(workdir)
    value = data.draw(st.one_of(st.floats(0.1, 10.0), st.text(max_size=5), _dicts))
    if where in ("top", "table"):
        key = data.draw(_keys.filter(lambda k: k not in _TOP and k not in DESIGN_KEYS))
        d[key] = value if where == "top" else {"x": value}
        must = key if key.isprintable() and len(repr(key)) == len(key) + 2 else "unknown"
    elif where == "search entry":
        key = data.draw(_keys.filter(lambda k: k not in ("low", "high", "scale", "step")))
        d["search"]["current_A"][key] = value
        must = "search.current_A"
    elif where == "run":
        key = data.draw(_keys.filter(lambda k: k not in ("hours", *d["run"])))
        d["run"][key] = value
        must = "run."
    elif where == "robust":
        key = data.draw(_keys.filter(lambda k: k not in d["robust"]))
        d["robust"][key] = value
        must = "robust."
    elif where == "constraint":
        key = data.draw(_keys.filter(lambda k: k not in ("min", "max")))
        d["constraints"]["ring_temperature_C"][key] = value
        must = "constraints.ring_temperature_C."
    else:
        key = data.draw(_keys.filter(lambda k: k not in DESIGN_KEYS["target"]))
        d["target"][key] = value
        must = "target."
    lines = run_study(d, workdir, capsys, "unknown key or table", must_name=must)
    assert any("unknown" in line for line in lines)


SEARCH_NAMES = ["ring_depth_mm", "pole_radius_mm", "frequency_Hz", "current_A"]


@QUICK
@given(st.sampled_from(["search", "robust", "inline"]), st.data())
def test_wrong_units_in_names(workdir, capsys, where, data):
    _wrong_unit(workdir, capsys, where, data)


@pytest.mark.slow
@settings(QUICK, max_examples=12)  # each reaches the model (0.4 s): few, but every run
@given(st.sampled_from(["objective", "constraint"]), st.data())
def test_wrong_units_in_result_names(workdir, capsys, where, data):
    _wrong_unit(workdir, capsys, where, data)


def _wrong_unit(workdir, capsys, where, data):
    unit = data.draw(st.sampled_from(UNITS))
    d = _base(workdir)
    if where == "search":
        name = data.draw(st.sampled_from(SEARCH_NAMES))
        new = name.rsplit("_", 1)[0] + unit
        d["search"][new] = d["search"].pop(name)
        must = f"search.{new}"
    elif where == "robust":
        name = data.draw(st.sampled_from(["gap_min_mm", "gap_max_mm"]))
        new = name.rsplit("_", 1)[0] + unit
        d["robust"][new] = d["robust"].pop(name)
        must = f"robust.{new}"
    elif where == "inline":
        new = "gap" + unit
        d["target"][new] = d["target"].pop("gap_mm")
        must = f"target.{new}"
    else:
        names = [n for n in result_names() if "_" in n and not n.startswith("margins.")]
        name = data.draw(st.sampled_from(names))
        new = name.rsplit("_", 1)[0] + unit
        if new in result_names():
            new = new + "_x"  # still a wrong name, never a result
        table = "objectives" if where == "objective" else "constraints"
        d[table][new] = "maximize" if table == "objectives" else {"max": 1.0}
        must = f"{table}.{new}"
    run_study(d, workdir, capsys, "wrong unit in name", must_name=must)


@pytest.mark.slow
@settings(QUICK, max_examples=12)  # each reaches the model (0.4 s): few, but every run
@given(st.sampled_from(["objectives", "constraints"]), _keys)
def test_unknown_results(workdir, capsys, table, name):
    if name in result_names():
        name += "_unknown"
    d = _base(workdir)
    d[table][name] = "minimize" if table == "objectives" else {"min": 0.0}
    lines = run_study(d, workdir, capsys, "unknown result")
    assert any("not a result of the model" in line for line in lines), lines


@QUICK
@given(st.sampled_from(["search", "objective", "run"]), st.text(min_size=1, max_size=12))
def test_bad_enumerations(workdir, capsys, where, text):
    d = _base(workdir)
    if where == "search":
        if text in ("linear", "log"):
            text += "!"
        d["search"]["frequency_Hz"]["scale"] = text
        must = "search.frequency_Hz.scale"
    elif where == "objective":
        if text in ("maximize", "minimize"):
            text = text.upper()
        d["objectives"]["input_power_W"] = text
        must = "objectives.input_power_W"
    else:
        if text in ("nsga2", "tpe", "random"):
            text += "2"
        d["run"]["sampler"] = text
        must = "run.sampler"
    run_study(d, workdir, capsys, "bad choice", must_name=must)


@QUICK
@given(st.text(max_size=120))
def test_bad_names(workdir, capsys, name):
    import re

    if re.fullmatch(r"[A-Za-z0-9][A-Za-z0-9._-]{0,99}", name):
        name = "../" + name  # a folder name that leaves the studies folder
    d = _base(workdir)
    d["name"] = name
    run_study(d, workdir, capsys, "bad name", must_name="name")


FIXED_STUDIES = {
    "fractions and radii both": lambda d: d["search"].update(
        {"ring.inner_radius_mm": {"low": 1.0, "high": 2.0}}
    ),
    "alias and key both": lambda d: d["search"].update({"drive.current_A": {"low": 1, "high": 2}}),
    "scale log with step": lambda d: d["search"]["frequency_Hz"].update(step=100.0),
    "log from zero": lambda d: d["search"].update(
        {"coil.setback_mm": {"low": 0.0, "high": 1.0, "scale": "log"}}
    ),
    "turns step not dividing": lambda d: d["search"].update(
        {"turns": {"low": 100, "high": 400, "step": 7}}
    ),
    "turns step not whole": lambda d: d["search"].update(
        {"turns": {"low": 100, "high": 400, "step": 1.5}}
    ),
    "turns bounds not whole": lambda d: d["search"].update({"turns": {"low": 1.5, "high": 400}}),
    "missing low": lambda d: d["search"]["current_A"].pop("low"),
    "empty search": lambda d: d.update(search={}),
    "empty objectives": lambda d: d.update(objectives={}),
    "empty constraint": lambda d: d["constraints"].update(ring_temperature_C={}),
    "objective table with bad key": lambda d: d["objectives"].update(
        input_power_W={"direction": "minimize", "gap_mm": 2.0}
    ),
    "storage without scheme": lambda d: d["run"].update(storage="some/folder"),
    "description a table": lambda d: d.update(description={"a": 1}),
    "ring fractions without a ring": lambda d: d.update(ring="none"),
}


@pytest.mark.parametrize("name", list(FIXED_STUDIES))
def test_fixed_malformed_studies(name, workdir, capsys):
    d = _base(workdir)
    FIXED_STUDIES[name](d)
    run_study(d, workdir, capsys, "fixed study")


# ------------------------------------------------------------------ unreadable files
@QUICK
@given(st.data())
def test_broken_toml(workdir, capsys, data):
    lines = to_toml(_base(workdir)).splitlines()
    how = data.draw(st.sampled_from(["insert", "delete", "truncate"]))
    if how == "insert":
        at = data.draw(st.integers(0, len(lines)))
        lines.insert(at, data.draw(st.sampled_from([*BREAKERS, "[search]", "[run]"])))
        text = "\n".join(lines)
    else:
        text = "\n".join(lines)
        at = data.draw(st.integers(1, len(text) - 1))
        if how == "delete":
            n = data.draw(st.integers(1, 5))
            text = text[:at] + text[at + n :]
        else:
            text = text[:at]
    try:
        tomllib.loads(text)
    except tomllib.TOMLDecodeError:
        pass
    else:  # still TOML: change it into a certain TOML error rather than drop the example
        text += "\n[run\n"
    path = workdir / "broken.toml"
    path.write_text(text, encoding="utf-8")
    (line,) = run_study_file(path, workdir, capsys, "broken TOML")
    assert "not valid TOML" in line and str(path) in line


@QUICK
@given(st.binary(max_size=400))
def test_binary_garbage(workdir, capsys, blob):
    path = workdir / "garbage.toml"
    path.write_bytes(blob)
    lines = run_study_file(path, workdir, capsys, "binary garbage")
    # the file is refused as a whole, or what parsed lacks the study's tables
    assert any(str(path) in line or "[search]" in line for line in lines), lines


@QUICK
@given(st.binary(min_size=1, max_size=40))
def test_invalid_utf8(workdir, capsys, blob):
    text = to_toml(_base(workdir)).encode()
    at = len(text) // 2
    path = workdir / "latin.toml"
    path.write_bytes(text[:at] + b"\xff" + blob + text[at:])  # 0xff never occurs in UTF-8
    (line,) = run_study_file(path, workdir, capsys, "invalid UTF-8")
    assert "not UTF-8" in line and str(path) in line


@QUICK
@given(
    st.sampled_from(
        ["missing", "directory", "garbage", "not utf-8", "a study", "empty", "relative"]
    ),
    st.binary(max_size=200),
)
def test_bad_design_paths(workdir, capsys, how, blob):
    d = _base(workdir)
    target = workdir / "designs" / how.replace(" ", "_")
    target.parent.mkdir(exist_ok=True)
    if how == "directory":
        target.mkdir(exist_ok=True)
    elif how == "garbage":
        target.write_bytes(b"[pole\n" + blob)  # never TOML: an unclosed table header
    elif how == "not utf-8":
        target.write_bytes(b"\xff" + blob)
    elif how == "a study":  # a study file is no design file (unknown tables [search], ...)
        target.write_text(to_toml(_base(workdir)), encoding="utf-8")
    elif how == "empty":
        d["design"] = ""  # the study's own folder
    elif how == "relative":
        d["design"] = "no_such_design.toml"  # beside the study file
    if how not in ("empty", "relative"):
        d["design"] = str(target)
    for t in ("target", "thermal"):
        d.pop(t)  # only the design file counts
    run_study(d, workdir, capsys, "bad design path", must_name="design")


# ------------------------------------------------------------------ all categories at once
_CATEGORIES = st.sampled_from(["wrong type", "size", "nan", "unknown key", "name", "garbage"])


@pytest.mark.slow
@settings(QUICK, max_examples=2000)
@given(_CATEGORIES, st.data())
def test_many_malformed_studies(workdir, capsys, category, data):
    if category == "garbage":
        path = workdir / "garbage.toml"
        path.write_bytes(data.draw(st.binary(max_size=2000)))
        run_study_file(path, workdir, capsys, f"slow: {category}")
        return
    d = _base(workdir)
    if category == "wrong type":
        path, kind = data.draw(st.sampled_from([f for f in FIELDS if f[1] != "class"]))
        value, must = data.draw(_wrong_for(kind)), _where(path)
    elif category == "size":
        path, value, must = data.draw(bad_sizes())
    elif category == "nan":
        path, _ = data.draw(st.sampled_from(NUMERIC))
        value = data.draw(st.sampled_from([math.nan, math.inf, -math.inf, 10**400, -(10**400)]))
        must = _where(path)
    elif category == "unknown key":
        key = data.draw(_keys.filter(lambda k: k not in _TOP and k not in DESIGN_KEYS))
        path, value, must = (key,), 1.0, None
    else:
        value = data.draw(st.text(min_size=101, max_size=200) | st.text().map(lambda t: "." + t))
        path, must = ("name",), "name"  # too long, or starting with '.'
    _set(d, path, value)
    run_study(d, workdir, capsys, f"slow: {category}", must_name=must)


# ------------------------------------------------------------------ flags of study run
@pytest.fixture(scope="module")
def valid_study(workdir):
    path = workdir / "flags.toml"
    path.write_text(to_toml(_base(workdir)), encoding="utf-8")
    return path


BAD_FLAGS = [
    (["--workers", "0"], "--workers"),
    (["--workers", "-3"], "--workers"),
    (["--workers", "65"], "--workers"),
    (["--workers", "x"], "--workers"),
    (["--trials", "-1"], "--trials"),
    (["--trials", "0"], "--trials"),
    (["--trials", "1.5"], "--trials"),
    (["--minutes", "0"], "--minutes"),
    (["--minutes", "-1"], "--minutes"),
    (["--minutes", "nan"], "--minutes"),
    (["--minutes", "inf"], "--minutes"),
    (["--minutes", "1e9"], "--minutes"),
    (["--hours", "nan"], "--hours"),
    (["--hours", "-inf"], "--hours"),
    (["--hours", "1e308"], "--hours"),
    (["--hours", "0"], "--hours"),
    (["--hours", "ten"], "--hours"),
    (["--hours", "1", "--minutes", "2"], "--minutes"),
    (["--seed", "-1"], "--seed"),
    (["--seed", str(2**40)], "--seed"),
    (["--storage", "relative/folder"], "--storage"),
    (["--storage", ""], "--storage"),
    (["--no-such-flag"], "--no-such-flag"),
]


@pytest.mark.parametrize("flags,must", BAD_FLAGS, ids=[" ".join(f) for f, _ in BAD_FLAGS])
def test_bad_run_flags(valid_study, workdir, capsys, flags, must):
    out = workdir / "flag_out"
    argv = ["study", "run", valid_study, "--trials", "1", "--out", out, *flags]
    if "--trials" in flags:
        argv = ["study", "run", valid_study, "--out", out, *flags]
    (line,) = refused(argv, capsys, "bad flag", one_line=True)
    assert must in line, line
    assert not (out / "journal.log").exists()
    assert not (workdir / NEVER_DB).exists()


# ------------------------------------------------------------------ status, front, export
@pytest.fixture(scope="module")
def small_study(tmp_path_factory):
    """A real 4-trial study (isothermal, two objectives): what export reads from."""
    tmp = tmp_path_factory.mktemp("small_study")
    d = copy.deepcopy(BASE)
    d["name"] = "small"
    d["objectives"] = {"pull_N": "maximize", "input_power_W": "minimize"}
    d["constraints"] = {}
    del d["robust"]
    d["search"] = {"ring_depth_mm": {"low": 1.0, "high": 4.0}, "current_A": {"low": 2, "high": 6}}
    d["run"] = {"trials": 4, "workers": 1, "seed": 1, "isothermal": True}
    path = tmp / "small.toml"
    path.write_text(to_toml(d), encoding="utf-8")
    folder = tmp / "small"
    code = main(
        ["study", "run", str(path), "--trials", "4", "--workers", "1", "--out", str(folder)]
    )
    assert code == 0
    assert (folder / "journal.log").exists()
    return folder


def _locations(root: Path) -> dict:
    (root / "a_file").write_text("not a study\n")
    (root / "empty_folder").mkdir(exist_ok=True)
    damaged = root / "damaged"
    damaged.mkdir(exist_ok=True)
    (damaged / "journal.log").write_bytes(b"\x00\xffnot json\n{\n")
    blank = root / "blank"
    blank.mkdir(exist_ok=True)
    (blank / "journal.log").write_bytes(b"")
    return {
        "missing folder": (root / "no_such_folder", "no_such_folder"),
        "a file": (root / "a_file", "a_file"),
        "folder without journal": (root / "empty_folder", "journal.log"),
        "damaged journal": (damaged, "journal.log"),
        "empty journal": (blank, "no study"),
        "bad scheme": ("nosuchdb://host/db", "nosuchdb"),
        "ftp": ("ftp://127.0.0.1/x", "ftp"),
        "sqlite folder missing": (f"sqlite:///{root}/no/such/dir/x.db", "sqlite"),
    }


@pytest.mark.parametrize("command", ["status", "front", "export"])
@pytest.mark.parametrize(
    "where",
    [
        "missing folder",
        "a file",
        "folder without journal",
        "damaged journal",
        "empty journal",
        "bad scheme",
        "ftp",
        "sqlite folder missing",
    ],
)
def test_bad_locations(workdir, capsys, command, where):
    location, must = _locations(workdir)[where]
    argv = ["study", command, location]
    if command == "export":
        argv += ["--trial", "0"]
    (line,) = refused(argv, capsys, "bad location", one_line=True)
    assert must in line, line
    assert "s3cret" not in line  # a password is never printed
    if where == "missing folder":
        assert not Path(location).exists()  # reading a study never creates its folder


def test_export_with_neither_or_both(small_study, capsys):
    for extra in ([], ["--trial", "0", "--best", "pull_N"]):
        (line,) = refused(["study", "export", small_study, *extra], capsys, "bad export", True)
        assert "--trial" in line and "--best" in line


@pytest.mark.parametrize(
    "flags,must",
    [
        (["--trial", "-1"], "-1"),
        (["--trial", "4"], "4"),
        (["--trial", str(10**30)], "--trial"),
        (["--trial", "x"], "--trial"),
        (["--best", "no_such_N"], "no_such_N"),
        (["--best", "ring_temperature_C"], "ring_temperature_C"),  # a result, not an objective
        (["--best", ""], "--best"),
        (["--name", "other"], "other"),
    ],
)
def test_bad_export_choices(small_study, capsys, flags, must):
    argv = ["study", "export", small_study, *flags]
    if "--name" in flags:
        argv += ["--trial", "0"]
    (line,) = refused(argv, capsys, "bad export", one_line=True)
    assert must in line, line


@pytest.mark.parametrize("command", ["status", "front"])
def test_bad_study_name(small_study, capsys, command):
    (line,) = refused(["study", command, small_study, "--name", "x"], capsys, "bad name", True)
    assert "--name" in line


# ------------------------------------------------------------------ part families ([[parts]])
#: The sorting demo (two parts, one lift, one leave) as the valid starting point.
_SORTING = tomllib.loads(DEMO_SORTING.read_text(encoding="utf-8"))
_SORTING["design"] = str((DEMO_SORTING.parent / _SORTING["design"]).resolve())
_SORTING["run"] = {"trials": 2, "workers": 1, "seed": 3, "isothermal": True}
#: Every key a part can take, with its kind (models.design.DESIGN_KEYS for the part's own).
PART_FIELDS = {
    "name": "name",
    "role": "role",
    **{k: DESIGN_KEYS["target"][k][0] for k in PART_KEYS},
    "gap_min_mm": "pos",
    "gap_max_mm": "pos",
    "points": "int",
}


def _sorting(tmp: Path) -> dict:
    d = copy.deepcopy(_SORTING)
    d["run"]["storage"] = f"sqlite:///{tmp / NEVER_DB}"
    return d


def test_the_sorting_study_is_valid(workdir):
    path = workdir / "sorting.toml"
    path.write_text(to_toml(_sorting(workdir)), encoding="utf-8")
    spec = load_study_spec(path)
    assert [p.role for p in spec.parts] == ["lift", "leave"]


@QUICK
@given(st.integers(0, 1), st.sampled_from(sorted(PART_FIELDS)), st.data())
def test_wrong_types_in_parts(workdir, capsys, i, key, data):
    kind = PART_FIELDS[key]
    if kind == "role":
        value = data.draw(
            st.one_of(_numbers, st.booleans(), _lists, _dates, st.text(max_size=8)).filter(
                lambda v: v not in ROLES
            )
        )
    else:
        value = data.draw(_wrong_for(kind))
    d = _sorting(workdir)
    d["parts"][i][key] = value
    run_study(d, workdir, capsys, "part: wrong type", must_name=f"parts[{i}].{key}")


@QUICK
@given(
    st.integers(0, 1),
    st.sampled_from(["radius_mm", "thickness_mm", "gap_min_mm", "gap_max_mm"]),
    st.one_of(st.just(0.0), st.floats(-1e300, -1e-300), st.floats(1000.001, 1e300)),
)
def test_negative_zero_and_absurd_part_sizes(workdir, capsys, i, key, value):
    d = _sorting(workdir)
    d["parts"][i][key] = value
    if key.startswith("gap_"):  # the other end of the range, so that only this one is wrong
        other = "gap_max_mm" if key == "gap_min_mm" else "gap_min_mm"
        d["parts"][i][other] = d["robust"][other]
    run_study(d, workdir, capsys, "part: negative, zero or absurd", must_name=f"parts[{i}]")


@QUICK
@given(st.integers(0, 1), _keys.filter(lambda k: k not in PART_FIELDS))
def test_unknown_keys_in_parts(workdir, capsys, i, key):
    d = _sorting(workdir)
    d["parts"][i][key] = 1.0
    lines = run_study(d, workdir, capsys, "part: unknown key", must_name=f"parts[{i}]")
    assert any("unknown key" in line for line in lines), lines


FIXED_FAMILIES = {
    "same names": (lambda d: d["parts"][1].update(name="cap10"), "parts[1].name"),
    "no lift part": (lambda d: d["parts"][0].update(role="leave"), "role = 'lift'"),
    "empty": (lambda d: d.update(parts=[]), "parts = an empty array"),
    "not tables": (lambda d: d.update(parts=[1.0, "cap"]), "parts = [1.0, 'cap']"),
    "a table, not an array": (lambda d: d.update(parts={"name": "cap10"}), "parts ="),
    "with [target]": (lambda d: d.update(target={"gap_mm": 2.0}), "target: a [target] table"),
    "searched part metal": (
        lambda d: d["search"].update(target_material={"choices": ["copper"]}),
        "search.target_material",
    ),
    "inner radius beyond the part": (
        lambda d: d["parts"][1].update(inner_radius_mm=9.0),
        "parts[1].inner_radius_mm = 9.0: must be < parts[1].radius_mm",
    ),
    "metal and conductivity": (
        lambda d: d["parts"][0].update(conductivity_S_per_m=3.5e7),
        "parts[0].conductivity_S_per_m",
    ),
    "conductivity without density": (
        lambda d: d["parts"][0].pop("material") and d["parts"][0].update(conductivity_S_per_m=3e7),
        "parts[0].density_kg_per_m3: missing",
    ),
    "leave results without a leave part": (
        lambda d: d["parts"].pop(1),
        "objectives.selectivity_margin: needs a part with role = 'leave'",
    ),
}


@pytest.mark.parametrize("name", list(FIXED_FAMILIES))
def test_fixed_malformed_families(name, workdir, capsys):
    edit, must = FIXED_FAMILIES[name]
    d = _sorting(workdir)
    edit(d)
    run_study(d, workdir, capsys, "part: fixed case", must_name=must)
