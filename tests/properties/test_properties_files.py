"""Malformed design files through the command line: each gives exit code 2 and one line per
problem, each line starting "eddypull: error:" and naming the field or the file; never a
traceback, a hang or a result.

Most cases are generated (hypothesis, seeded) from the demo design by one mutation of a known
kind; the others are fixed files (empty, a directory, a missing path, deep nesting...). Every run
is time-boxed with SIGALRM (``_time_box``): a hang fails the test instead of stalling CI.
"""

from __future__ import annotations

import copy
import json
import math
import os
import shutil
import signal
import subprocess
import sys
import tomllib
from contextlib import contextmanager
from pathlib import Path

import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from models.design import DESIGN_KEYS, PLAUSIBLE_LIMITS
from optim.cli import main
from tests.conftest import demo_dict, write_counts

# Hypothesis's failure report trips over a deprecation in a dependency under warnings-as-errors;
# without this a failing example shows as an INTERNALERROR instead of the example.
pytestmark = pytest.mark.filterwarnings(
    "ignore:mypy_extensions.TypedDict is deprecated:DeprecationWarning"
)

#: Validation of a malformed file takes milliseconds; 10 s means a hang, even on a loaded machine
#: (common practice, no source).
TIME_BOX_S = 10

FILES = settings(
    max_examples=400,
    deadline=None,  # the time box below guards hangs; hypothesis's deadline only reports late
    derandomize=True,
    database=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
)

#: Every key of the file with its table and kind, e.g. ("target", "gap_mm", "pos").
FIELDS = [(t, k, kind) for t, keys in DESIGN_KEYS.items() for k, (kind, _) in keys.items()]
NUMERIC = [f for f in FIELDS if f[2] in ("pos", "nonneg", "int")]
REQUIRED_TABLES = ("pole", "coil", "drive", "target")


@contextmanager
def _time_box(seconds=TIME_BOX_S):
    """Raise TimeoutError in the main thread if the block runs longer than ``seconds``."""

    def _alarm(signum, frame):
        raise TimeoutError(f"no answer within {seconds} s: a hang")

    old = signal.signal(signal.SIGALRM, _alarm)
    signal.alarm(seconds)
    try:
        yield
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, old)


# ------------------------------------------------------------------ a small TOML writer
def _string(s: str) -> str:
    # JSON's escapes are TOML basic-string escapes; non-ASCII stays raw (TOML refuses the
    # surrogate pairs JSON would write) and DEL, which JSON leaves raw, is escaped.
    return json.dumps(s, ensure_ascii=False).replace("\x7f", "\\u007f")


def _key(k: str) -> str:
    ok = k and all(c.isascii() and (c.isalnum() or c in "_-") for c in k)
    return k if ok else _string(k)


def _value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return _string(v)
    if isinstance(v, list):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{_key(k)} = {_value(x)}" for k, x in v.items()) + "}"
    if isinstance(v, Raw):
        return v.text
    raise TypeError(type(v))


class Raw:
    """A TOML literal written as is (a date, a time)."""

    def __init__(self, text):
        self.text = text


def to_toml(data: dict) -> str:
    lines = [f"{_key(k)} = {_value(v)}" for k, v in data.items() if not isinstance(v, dict)]
    for k, v in data.items():
        if isinstance(v, dict):
            lines.append(f"[{_key(k)}]")
            lines += [f"{_key(kk)} = {_value(vv)}" for kk, vv in v.items()]
    return "\n".join(lines) + "\n"


def test_writer_round_trips_the_demo():
    # The writer must not be the thing that breaks the files below.
    d = demo_dict()
    assert tomllib.loads(to_toml(d)) == d


# ------------------------------------------------------------------ running the command
@pytest.fixture(scope="module")
def workdir(tmp_path_factory):
    return tmp_path_factory.mktemp("malformed")


COUNTS: dict[str, int] = {}


@pytest.fixture(scope="module", autouse=True)
def _report_counts(request):
    """After the module: how many malformed inputs each category tried (for the record)."""
    yield
    write_counts(request, "malformed inputs tried", COUNTS)


def run_cli(path, capsys, category):
    """Run ``eddypull evaluate path``; check the refusal; return the error lines."""
    COUNTS[category] = COUNTS.get(category, 0) + 1
    capsys.readouterr()
    with _time_box():
        code = main(["evaluate", str(path)])
    out, err = capsys.readouterr()
    lines = err.splitlines()
    assert code == 2, (category, out, err)
    assert out == "", out  # no result
    assert "Traceback" not in err
    assert lines and all(line.startswith("eddypull: error: ") for line in lines), err
    assert all(len(line) > len("eddypull: error: ") + 5 for line in lines)
    return lines


def run_design(data, workdir, capsys, category, must_name=None):
    path = workdir / "design.toml"
    path.write_text(to_toml(data), encoding="utf-8")
    lines = run_cli(path, capsys, category)
    names = [*DESIGN_KEYS, "design", "name", "description", *(k for _, k, _ in FIELDS)]
    for line in lines:  # each line names a field or a table
        assert any(n in line for n in names), line
    if must_name is not None:
        assert any(must_name in line for line in lines), (must_name, lines)
    return lines


def _demo():
    return copy.deepcopy(_DEMO)


#: The demo design with every optional key of [thermal] and [supply] set (valid values), so that
#: the mutations below reach every key of the file.
_DEMO = demo_dict()
_DEMO["thermal"] = {
    "ambient_C": 30.0,
    "convection_W_per_m2K": 12.0,
    "emissivity": 0.5,
    "duty_cycle": 0.5,
    "period_s": 10.0,
    "hold_time_s": 1.0,
    "coil_insulation_class": "F",
    "ring_limit_C": 200.0,
    "target_limit_C": 120.0,
    "orientation": "face-down",
    "ring_contact_W_per_m2K": 2000.0,
    "winding_conductivity_W_per_mK": 1.0,
}
_DEMO["supply"] = {"max_voltage_V": 230.0, "max_current_A": 10.0, "max_VA": 2000.0}
DEMO_FIELDS = [(t, k) for t, v in _DEMO.items() if isinstance(v, dict) for k in v]
DEMO_NUMERIC = [(t, k) for t, k in DEMO_FIELDS if isinstance(_DEMO[t][k], (int, float))]
#: Numeric keys for which a negative number is always wrong (temperatures may be below 0)
SIZES = [
    (t, k) for t, k in DEMO_NUMERIC if DESIGN_KEYS[t][k][0] in ("pos", "nonneg", "int", "frac")
]
#: Numeric keys with plausible limits (models.design.PLAUSIBLE_LIMITS)
LIMITED = [(t, k) for t, k in DEMO_NUMERIC if any(k.endswith(u) for u in PLAUSIBLE_LIMITS)]


# ------------------------------------------------------------------ generated categories
wrong_type_values = st.one_of(
    st.text(max_size=20),
    st.booleans(),
    st.lists(st.floats(allow_nan=False), max_size=3),
    st.dictionaries(st.sampled_from(["a", "radius_mm"]), st.integers(), max_size=2),
    st.sampled_from([Raw("1979-05-27T07:32:00Z"), Raw("07:32:00"), Raw("1979-05-27")]),
)


@pytest.mark.slow
@FILES
@given(st.sampled_from(DEMO_FIELDS), wrong_type_values)
def test_wrong_types(workdir, capsys, field, value):
    table, key = field
    if DESIGN_KEYS[table][key][0] in ("str", "class"):
        assume(not isinstance(value, str))  # any string is the right type (a material name)
    if DESIGN_KEYS[table][key][0] == "class":
        assume(not isinstance(value, (int, float)))  # a temperature is the right type
    d = _demo()
    d[table][key] = value
    run_design(d, workdir, capsys, "wrong type", must_name=f"{table}.{key}")


@pytest.mark.slow
@FILES
@given(
    st.sampled_from(["pole", "coil", "drive", "target", "ring", "thermal", "supply"]),
    wrong_type_values,
)
def test_tables_that_are_not_tables(workdir, capsys, table, value):
    assume(not isinstance(value, dict))  # a table: another test's business
    d = _demo()
    d[table] = value
    run_design(d, workdir, capsys, "table not a table", must_name=table)


@FILES
@given(st.lists(st.sampled_from(REQUIRED_TABLES), min_size=1, unique=True))
def test_missing_tables(workdir, capsys, tables):
    d = _demo()
    for t in tables:
        del d[t]
    lines = run_design(d, workdir, capsys, "missing table")
    for t in tables:
        assert any(f"[{t}]: missing table" in line for line in lines)


@FILES
@given(st.sampled_from([(t, k) for t, k, _ in FIELDS if DESIGN_KEYS[t][k][1]]))
def test_missing_required_keys(workdir, capsys, field):
    table, key = field
    d = _demo()
    if table not in d:
        return  # a missing key of an absent optional table is not a problem
    d[table].pop(key, None)
    run_design(d, workdir, capsys, "missing key", must_name=f"{table}.{key}")


@pytest.mark.slow
@FILES
@given(
    st.sampled_from(SIZES),
    st.one_of(
        st.just(0.0),
        st.just(0),
        st.just(-0.0),
        st.floats(max_value=-1e-300),
        st.integers(max_value=-1),
    ),
)
def test_negative_and_zero_sizes(workdir, capsys, field, value):
    table, key = field
    kind = DESIGN_KEYS[table][key][0]
    assume(not (kind in ("nonneg", "unit") and value == 0))  # 0 is allowed there
    d = _demo()
    d[table][key] = value
    run_design(d, workdir, capsys, "negative or zero", must_name=f"{table}.{key}")


@st.composite
def absurd_values(draw):
    """A numeric field and a value beyond PLAUSIBLE_LIMITS for its unit (too large or, where
    the field must be > 0, too small)."""
    table, key = draw(st.sampled_from(LIMITED))
    lo, hi = next(v for k, v in PLAUSIBLE_LIMITS.items() if key.endswith(k))
    big = draw(st.one_of(st.floats(hi * 1.001, 1e308), st.integers(int(hi) + 1, 10**40)))
    if DESIGN_KEYS[table][key][0] != "pos" or lo <= 0 or draw(st.booleans()):
        return table, key, big
    return table, key, draw(st.floats(5e-324, lo * 0.999))


@pytest.mark.slow
@FILES
@given(absurd_values())
def test_absurd_sizes(workdir, capsys, case):
    table, key, value = case
    d = _demo()
    d[table][key] = value
    run_design(d, workdir, capsys, "absurd size", must_name=f"{table}.{key}")


@pytest.mark.slow
@FILES
@given(
    st.sampled_from(DEMO_NUMERIC),
    st.sampled_from(
        [
            math.nan,
            math.inf,
            -math.inf,
            1e308,
            -1e308,
            10**30,
            10**400,
            -(10**30),
            1.7976931348623157e308,
        ]
    ),
)
def test_nan_inf_and_huge_numbers(workdir, capsys, field, value):
    table, key = field
    d = _demo()
    d[table][key] = value
    run_design(d, workdir, capsys, "nan, inf or huge", must_name=f"{table}.{key}")


def _not_a_key(table):
    allowed = set(DESIGN_KEYS.get(table, {})) if table else {*DESIGN_KEYS, "name", "description"}
    return st.text(
        st.characters(codec="utf-8", exclude_categories=("Cs",)), min_size=1, max_size=20
    ).filter(lambda k: k not in allowed)


@pytest.mark.slow
@FILES
@given(st.data())
def test_unknown_keys(workdir, capsys, data):
    table = data.draw(st.sampled_from([None, "pole", "coil", "drive", "ring", "target"]))
    key = data.draw(_not_a_key(table))
    d = _demo()
    where = d if table is None else d[table]
    where[key] = data.draw(st.one_of(st.floats(0.1, 10.0), st.text(max_size=5)))
    lines = run_design(d, workdir, capsys, "unknown key")
    assert any("unknown" in line for line in lines)


UNITS = [
    "_in",
    "_cm",
    "_m",
    "_um",
    "_mil",
    "_inch",
    "_kHz",
    "_MHz",
    "_mA",
    "_kV",
    "_mT",
    "_g_per_cm3",
]


@pytest.mark.slow
@FILES
@given(st.sampled_from(DEMO_NUMERIC), st.sampled_from(UNITS))
def test_wrong_units_in_names(workdir, capsys, field, unit):
    table, key = field
    stem = key.rsplit("_", 1)[0] if "_" in key else key
    if key.endswith("_S_per_m") or key.endswith("_kg_per_m3"):
        stem = key.split("_")[0]
    new = stem + unit
    assume(new not in DESIGN_KEYS[table])
    d = _demo()
    d[table][new] = d[table].pop(key)
    # the unknown name is named, with a hint toward the right one where one is close
    run_design(d, workdir, capsys, "wrong unit in name", must_name=f"{table}.{new}")


BREAKERS = [
    "[pole",
    'x = "unterminated',
    "= 3",
    "[[drive]]",
    "[coil]",
    "gap_mm = 1 2",
    "a = [1, 2",
    "a = {b = 1",
    "a.b. = 1",
    "k = 1979-13-45",
    "k = 0x",
    "k = 1__0",
    "k = +nan_",
    "k = '''",
    "[]",
    "k = \x00",
    "radius_mm = 1.0\nradius_mm = 2.0",
]


@pytest.mark.slow
@FILES
@given(st.data())
def test_broken_toml(workdir, capsys, data):
    lines = to_toml(_demo()).splitlines()
    how = data.draw(st.sampled_from(["insert", "delete", "truncate"]))
    if how == "insert":
        at = data.draw(st.integers(0, len(lines)))
        lines.insert(at, data.draw(st.sampled_from(BREAKERS)))
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
        assume(False)  # still TOML: another test's business (it may even be a valid design)
    except tomllib.TOMLDecodeError:
        pass
    path = workdir / "broken.toml"
    path.write_text(text, encoding="utf-8")
    out = run_cli(path, capsys, "broken TOML")
    assert len(out) == 1 and "not valid TOML" in out[0] and str(path) in out[0]


@pytest.mark.slow
@FILES
@given(st.binary(max_size=400))
def test_binary_garbage(workdir, capsys, blob):
    path = workdir / "garbage.toml"
    path.write_bytes(blob)
    lines = run_cli(path, capsys, "binary garbage")
    # either the file is refused as a whole, or what parsed lacks the design's tables
    assert any(str(path) in line or "missing table" in line for line in lines)


@pytest.mark.slow
@FILES
@given(st.binary(min_size=1, max_size=40))
def test_invalid_utf8(workdir, capsys, blob):
    text = to_toml(_demo()).encode()
    bad = b"\xff" + blob  # 0xff never occurs in UTF-8
    at = len(text) // 2
    path = workdir / "latin.toml"
    path.write_bytes(text[:at] + bad + text[at:])
    (line,) = run_cli(path, capsys, "invalid UTF-8")
    assert "not UTF-8" in line and str(path) in line


# ------------------------------------------------------------------ fixed cases
FIXED = {
    "empty": b"",
    "whitespace": b"   \n\t\n",
    "comment only": b"# nothing here\n",
    "BOM and garbage": b"\xef\xbb\xbf\x00\x01\x02",
    "deep arrays": b"a = " + b"[" * 100_000 + b"]" * 100_000,
    "deep inline tables": b"a = " + b"{b = " * 5_000 + b"1" + b"}" * 5_000,
    "5000-digit integer": b"[pole]\nradius_mm = " + b"9" * 5000 + b"\n",
    "array of tables": b"[[pole]]\nradius_mm = 10\n",
    "NUL bytes": b"\x00" * 64,
    "a JSON file": json.dumps(_DEMO).encode(),
    "python pickle": b"\x80\x04\x95\x10\x00\x00\x00\x00\x00\x00\x00}\x94\x8c\x01a\x94K\x01s.",
}


@pytest.mark.parametrize("name", list(FIXED))
def test_fixed_malformed_files(name, workdir, capsys):
    path = workdir / f"{name.replace(' ', '_')}.toml"
    path.write_bytes(FIXED[name])
    lines = run_cli(path, capsys, "fixed file")
    assert any(str(path) in line or "missing table" in line for line in lines)


def test_directory_instead_of_file(workdir, capsys):
    folder = workdir / "a_folder.toml"
    folder.mkdir(exist_ok=True)
    (line,) = run_cli(folder, capsys, "path")
    assert "cannot be read" in line and str(folder) in line


def test_missing_file(workdir, capsys):
    path = workdir / "no" / "such.toml"
    (line,) = run_cli(path, capsys, "path")
    assert "cannot be read" in line and str(path) in line


@pytest.mark.skipif(os.geteuid() == 0, reason="root reads any file")
def test_unreadable_file(workdir, capsys):
    path = workdir / "locked.toml"
    path.write_text(to_toml(_DEMO))
    path.chmod(0)
    try:
        (line,) = run_cli(path, capsys, "path")
    finally:
        path.chmod(0o600)
    assert "cannot be read" in line


# ------------------------------------------------------------------ as a process
def _command():
    exe = shutil.which("eddypull")
    return [exe] if exe else [sys.executable, "-m", "optim.cli"]


@pytest.mark.slow
@pytest.mark.parametrize(
    "content",
    [b"\xff\xfe garbage", b"[pole]\nradius_mm = nan\n", b"a = " + b"[" * 50_000, None],
    ids=["binary", "nan", "deep", "directory"],
)
def test_console_script_exit_code_2(content, tmp_path):
    path = tmp_path / "design.toml"
    if content is None:
        path.mkdir()
    else:
        path.write_bytes(content)
    proc = subprocess.run(
        [*_command(), "evaluate", str(path)],
        capture_output=True,
        text=True,
        check=False,
        timeout=120,  # interpreter start and imports on a loaded machine; a hang fails here
    )
    assert proc.returncode == 2, proc.stderr
    assert proc.stdout == ""
    assert "Traceback" not in proc.stderr
    assert proc.stderr.startswith("eddypull: error: ")


# ------------------------------------------------------------------ no code from user files
ROOT = Path(__file__).resolve().parents[2]
#: Modules that turn bytes into objects or run code: none may be imported by the package.
UNSAFE_MODULES = {
    "pickle",
    "cPickle",
    "_pickle",
    "dill",
    "cloudpickle",
    "marshal",
    "shelve",
    "yaml",
    "jsonpickle",
}
UNSAFE_BUILTINS = {"eval", "exec", "compile", "__import__", "breakpoint"}
UNSAFE_ATTRIBUTES = {"read_pickle", "to_pickle", "loads_pickle", "system", "popen"}
#: The one dynamic import, with why it is safe. optim/study/engine.py: benchmarks swap the model for a
#: stand-in named by a Python keyword argument of run_study (tests/perf/bench_study.py); no study
#: or design file can set it.
ALLOWED_DYNAMIC_IMPORTS = {"optim/study/engine.py"}


def _unsafe_uses(root) -> list[str]:
    """Unsafe uses in the package's sources under ``root``, found in their syntax trees (so
    comments and strings do not count): unpickling, eval or exec, a shell, a dynamic import
    outside the allowed place."""
    import ast

    found = []
    sources = sorted(p for d in ("models", "optim") for p in (root / d).rglob("*.py"))
    for path in sources:
        rel = path.relative_to(root).as_posix()
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"), filename=rel)):
            if isinstance(node, ast.Import):
                names = [a.name.split(".")[0] for a in node.names]
            elif isinstance(node, ast.ImportFrom):
                names = [(node.module or "").split(".")[0]]
            else:
                names = []
            found += [f"{rel}:{node.lineno}: import {n}" for n in names if n in UNSAFE_MODULES]
            if isinstance(node, ast.Call):
                f = node.func
                if isinstance(f, ast.Name) and f.id in UNSAFE_BUILTINS:
                    found.append(f"{rel}:{node.lineno}: {f.id}()")
                if isinstance(f, ast.Attribute) and f.attr in UNSAFE_ATTRIBUTES:
                    found.append(f"{rel}:{node.lineno}: .{f.attr}()")
                if (
                    isinstance(f, ast.Attribute)
                    and f.attr == "import_module"
                    and rel not in ALLOWED_DYNAMIC_IMPORTS
                ):
                    found.append(f"{rel}:{node.lineno}: import_module()")
                for kw in node.keywords:
                    unsafe = kw.arg in ("allow_pickle", "shell") and not (
                        isinstance(kw.value, ast.Constant) and kw.value.value is False
                    )
                    if unsafe:
                        found.append(f"{rel}:{node.lineno}: {kw.arg}=")
    return found


def test_package_never_loads_pickles_or_evaluates_code():
    assert _unsafe_uses(ROOT) == []


def test_the_static_check_sees_what_it_looks_for(tmp_path):
    # The check above must be able to fail: a package with each unsafe use, and a comment.
    for d in ("models", "optim"):
        (tmp_path / d).mkdir()
    (tmp_path / "optim" / "bad.py").write_text(
        "import pickle  # eval(\nimport numpy as np\n"
        "x = eval('1')\ny = np.load('f', allow_pickle=True)\n"
        "import importlib\nz = importlib.import_module('os')\n"
    )
    found = "\n".join(_unsafe_uses(tmp_path))
    for what in ("1: import pickle", "3: eval()", "4: allow_pickle=", "6: import_module()"):
        assert what in found
    assert len(found.splitlines()) == 4


PAYLOADS = [
    "__import__('os').system('touch {marker}')",
    "!!python/object/apply:os.system ['touch {marker}']",
    "$(touch {marker})",
    "`touch {marker}`",
    "{{{{ ''.__class__.__mro__[1].__subclasses__() }}}}; open('{marker}', 'w')",
]


@pytest.mark.parametrize("payload", PAYLOADS)
def test_code_in_a_design_file_is_never_run(payload, tmp_path, capsys):
    marker = tmp_path / "ran"
    text = payload.format(marker=marker)
    # as a material (refused: unknown) and as the free-text name and description (accepted and
    # evaluated as plain text): the marker file must never appear
    bad = _demo()
    bad["target"]["material"] = text
    path = tmp_path / "bad.toml"
    path.write_text(to_toml(bad), encoding="utf-8")
    (line,) = run_cli(path, capsys, "code payload")
    assert "target.material" in line
    ok = _demo()
    ok["name"], ok["description"] = text, text
    path.write_text(to_toml(ok), encoding="utf-8")
    capsys.readouterr()
    with _time_box(60):
        assert main(["evaluate", str(path), "--json", "--isothermal"]) == 0
    capsys.readouterr()
    assert not marker.exists()


# ------------------------------------------------------------------ the rules added for these
@pytest.mark.parametrize(
    "table, key, value, message",
    [
        # the face panels of a 10 mm pole would number in the millions (MemoryError before)
        ("target", "gap_mm", 0.005, r"target.gap_mm = 0.005: must be >= pole.radius_mm / 1000"),
        ("target", "radius_mm", 0.01, r"target.radius_mm = 0.01: must be >= pole.radius_mm / 500"),
        ("ring", "depth_mm", 0.01, r"ring.depth_mm = 0.01: must be >= pole.radius_mm / 500"),
        # overflowed inside the model (OverflowError before)
        (
            "drive",
            "current_A",
            1e300,
            r"drive.current_A = 1e\+300: must be between 1e-06 and 100000$",
        ),
        # a denormal frequency made the skin depth divide by zero
        ("drive", "frequency_Hz", 5e-324, r"drive.frequency_Hz = 5e-324: must be between 0.001"),
        ("coil", "setback_mm", 1e-9, r"coil.setback_mm = 1e-09: must be 0 or between 0.001"),
        ("coil", "turns", 10**400, r"coil.turns = 1000+: must be between 1 and 1e\+06"),
    ],
)
def test_design_rules_for_absurd_values(table, key, value, message):
    from models.design import design_from_dict
    from models.errors import DesignError

    d = _demo()
    d[table][key] = value
    with pytest.raises(DesignError, match=message):
        design_from_dict(d)


def test_long_thin_pole_is_refused():
    from models.design import design_from_dict
    from models.errors import DesignError

    d = _demo()
    d["pole"].update(radius_mm=2.0, length_mm=500.0)
    del d["ring"]
    with pytest.raises(DesignError, match=r"pole.length_mm = 500.0: must be <= 100 x pole.radius"):
        design_from_dict(d)


def test_problem_lines_never_break():
    # A key with a line break in it (found by test_unknown_keys): the problem stays one line.
    from models.design import design_from_dict
    from models.errors import DesignError

    d = _demo()
    d["pole"]["radius\r\nmm"] = 1.0
    with pytest.raises(DesignError) as info:
        design_from_dict(d)
    assert info.value.problems == [
        "pole.radius\\r\\nmm: unknown key; allowed: "
        + ", ".join(DESIGN_KEYS["pole"])
        + " (did you mean 'radius_mm'?)"
    ]


@pytest.mark.parametrize("name", ["5000-digit integer", "deep arrays", "BOM and garbage"])
def test_read_toml_names_what_it_reads(name, workdir):
    # The one reader of TOML files (models.design.read_toml) for any file a user names: the
    # problem line says which kind of file and which path.
    from models.design import read_toml
    from models.errors import DesignError

    path = workdir / "any.toml"
    path.write_bytes(FIXED[name])
    with pytest.raises(DesignError, match=r"^study file '.*any\.toml': not valid TOML \(") as info:
        read_toml(path, "study file")
    assert len(info.value.problems) == 1
