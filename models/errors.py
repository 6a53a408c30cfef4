"""The one error class of eddypull and its message helpers."""

from __future__ import annotations

import difflib

__all__ = ["DesignError", "nearest"]


class DesignError(ValueError):
    """Input that no model can evaluate: every line of the message names the field, the value and
    what is allowed."""

    def __init__(self, problems):
        if isinstance(problems, str):
            problems = [problems]
        self.problems = [_one_line(p) for p in problems]
        super().__init__("\n".join(self.problems))


def _one_line(text) -> str:
    """``text`` with every unprintable character (newline, carriage return, NUL...) escaped as
    Python would (a field name from a file may hold any of them): one problem, one line."""
    text = str(text)
    if text.isprintable():
        return text
    return "".join(c if c.isprintable() else repr(c)[1:-1] for c in text)


def nearest(name: str, valid) -> str:
    """A ' (did you mean X?)' suffix for the closest valid name, or '': by spelling (difflib),
    else the one valid name that holds the given one as a part ('m400' in
    'electrical-steel-m400'), letter case ignored."""
    valid = list(valid)
    match = difflib.get_close_matches(name, valid, n=1, cutoff=0.5)
    if not match:
        low = str(name).strip().lower()
        parts = [v for v in valid if low and low in str(v).lower()]
        match = parts if len(parts) == 1 else []
    return f" (did you mean {match[0]!r}?)" if match else ""
