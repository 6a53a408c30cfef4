"""The runnable examples in the docstrings of the public entry points, run as tests.

Each entry point must carry at least one example, and every example must give what it prints:
the expected values are the model's own (regression values of the demo design), so an example
that drifts from the code fails here rather than misleading a reader.
"""

from __future__ import annotations

import doctest
import importlib

import pytest

#: module -> the public entry points whose examples are run.
ENTRY_POINTS = {
    "models.design": ["load_design", "edit", "with_value"],
    "models.evaluate": ["evaluate"],
    "optim.morning.pickmap": ["evaluate_map"],
}
CASES = [(module, name) for module, names in ENTRY_POINTS.items() for name in names]


@pytest.mark.parametrize(("module", "name"), CASES, ids=[f"{m}.{n}" for m, n in CASES])
def test_docstring_examples_run(module, name):
    mod = importlib.import_module(module)
    func = getattr(mod, name)
    tests = doctest.DocTestFinder(recurse=False).find(func, name, globs=vars(mod).copy())
    examples = sum(len(t.examples) for t in tests)
    assert examples > 0, f"{func.__qualname__} has no runnable example"
    runner = doctest.DocTestRunner(optionflags=doctest.NORMALIZE_WHITESPACE)
    report: list[str] = []
    for t in tests:
        runner.run(t, out=report.append)
    failed, attempted = runner.summarize(verbose=False)
    assert attempted == examples
    assert failed == 0, "".join(report)
