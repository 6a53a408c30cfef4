"""A small TOML writer for design files: tables of scalars, strings and lists (TOML v1.0.0).

Floats are written with ``repr``, the shortest decimal that reads back to the same double, so a
design written here and read by ``tomllib`` is bit for bit the design that was written.
"""

from __future__ import annotations

import math
import numbers
import re

import numpy as np

from models.errors import DesignError

__all__ = ["dumps_toml"]

_BARE_KEY = re.compile(r"^[A-Za-z0-9_-]+$")
_ESCAPES = {
    '"': '\\"',
    "\\": "\\\\",
    "\b": "\\b",
    "\t": "\\t",
    "\n": "\\n",
    "\f": "\\f",
    "\r": "\\r",
}


def _toml_key(key) -> str:
    key = str(key)
    return key if _BARE_KEY.match(key) else _toml_str(key)


def _toml_str(s: str) -> str:
    out = []
    for ch in s:
        if ch in _ESCAPES:
            out.append(_ESCAPES[ch])
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04X}")
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


def _toml_value(value, where: str) -> str:
    if isinstance(value, (bool, np.bool_)):
        return "true" if value else "false"
    if isinstance(value, numbers.Integral):  # int and numpy integers
        return str(int(value))
    if isinstance(value, numbers.Real):  # float and numpy floats (repr of float, not of numpy)
        value = float(value)
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)  # shortest string that reads back to the same double
    if isinstance(value, str):
        return _toml_str(value)
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_toml_value(v, where) for v in value) + "]"
    raise DesignError(
        f"{where} = {value!r}: cannot be written to TOML; must be a number, string, bool or list"
    )


def _array_of_tables(value) -> bool:
    """A non-empty list of tables (written as ``[[name]]`` sections)."""
    return isinstance(value, list) and bool(value) and all(isinstance(v, dict) for v in value)


def dumps_toml(data: dict, header: str = "") -> str:
    """TOML text of a dict of scalars, strings, lists and nested tables.

    Floats are written with ``repr`` (the shortest decimal that reads back to the same IEEE double),
    so ``tomllib.loads(dumps_toml(d)) == d`` for every finite value (TOML v1.0.0: floats,
    basic strings with escapes, ``[a.b]`` table headers, ``[[a]]`` arrays of tables of scalars).

    Parameters
    ----------
    data : dict
    header : str
        Comment lines put on top (each prefixed with ``# ``).
    """
    lines = [f"# {line}".rstrip() for line in header.splitlines()]

    def table(d: dict, prefix: tuple[str, ...]):
        arrays = [(k, v) for k, v in d.items() if _array_of_tables(v)]
        scalars = [(k, v) for k, v in d.items() if not isinstance(v, dict)]
        scalars = [(k, v) for k, v in scalars if not _array_of_tables(v)]
        tables = [(k, v) for k, v in d.items() if isinstance(v, dict)]
        if prefix and (scalars or not (tables or arrays)):
            if lines:
                lines.append("")
            lines.append("[" + ".".join(_toml_key(p) for p in prefix) + "]")
        for k, v in scalars:
            lines.append(f"{_toml_key(k)} = {_toml_value(v, '.'.join([*prefix, str(k)]))}")
        for k, v in tables:
            table(v, (*prefix, str(k)))
        for k, items in arrays:  # [[k]]: an array of tables of scalars ([[coils]])
            name = ".".join(_toml_key(p) for p in (*prefix, str(k)))
            for n, item in enumerate(items):
                if lines:
                    lines.append("")
                lines.append(f"[[{name}]]")
                for kk, vv in item.items():
                    where = f"{name}.{n}.{kk}"
                    lines.append(f"{_toml_key(kk)} = {_toml_value(vv, where)}")

    table(data, ())
    return "\n".join(lines) + "\n"
