"""Strict JSON for everything the package prints or writes: the one converter of results to JSON."""

from __future__ import annotations

import json
import math
from pathlib import Path

__all__ = ["to_jsonable", "strict_json"]


def to_jsonable(value):
    """Strict-JSON copy: nan -> None, +-inf -> "inf"/"-inf", complex -> [re, im], numpy scalars and
    arrays -> Python, times -> ISO 8601, paths -> str."""
    if isinstance(value, dict):
        return {str(k): to_jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple, set)):
        return [to_jsonable(v) for v in value]
    if hasattr(value, "tolist") and not isinstance(value, (str, bytes)):  # numpy
        return to_jsonable(value.tolist())
    if isinstance(value, complex):
        return [to_jsonable(value.real), to_jsonable(value.imag)]
    if isinstance(value, bool) or value is None or isinstance(value, (int, str)):
        return value
    if isinstance(value, float):
        if math.isnan(value):
            return None
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return value
    if hasattr(value, "isoformat"):
        return value.isoformat()
    if isinstance(value, Path):
        return str(value)
    return str(value)


def strict_json(obj) -> str:
    """Strict JSON text (infinite values as "inf"/"-inf", NaN as null): what every parser reads."""
    return json.dumps(to_jsonable(obj), allow_nan=False)
