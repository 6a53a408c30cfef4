"""Shared fixtures: the demo design as a dict and helpers to vary it."""

from __future__ import annotations

import copy
import os
import tomllib
from pathlib import Path

import pytest

from optim.demo import DEMO_DESIGN

# One BLAS thread, as the CLI runs it (optim/__init__.py): small dense matrices.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

#: Set to 1 for the full run, as ``pytest --full`` (what CI runs).
FULL_ENV = "EDDYPULL_FULL_TESTS"


def pytest_addoption(parser):
    parser.addoption(
        "--full",
        action="store_true",
        help=f"the full run: the tests marked slow too (what CI runs; or {FULL_ENV}=1)",
    )


def pytest_collection_modifyitems(config, items):
    """Leave the tests marked ``slow`` out of the default run (about three minutes on two cores)
    unless ``--full``, ``EDDYPULL_FULL_TESTS=1`` or an explicit ``-m`` expression is given."""
    if config.getoption("--full") or os.environ.get(FULL_ENV) == "1" or config.option.markexpr:
        return
    slow = [item for item in items if item.get_closest_marker("slow") is not None]
    if slow:
        config.hook.pytest_deselected(items=slow)
        items[:] = [item for item in items if item.get_closest_marker("slow") is None]


#: The coil of the test and demo machines (fixed here so tests do not follow edits of the demo).
TEST_COIL = {
    "inner_radius_mm": 10.5,
    "outer_radius_mm": 22.0,
    "setback_mm": 2.0,
    "length_mm": 30.0,
    "turns": 300,
    "wire_diameter_mm": 0.8,
}

ROOT = Path(__file__).resolve().parents[1]
DEMO = DEMO_DESIGN


def demo_dict() -> dict:
    with DEMO.open("rb") as fh:
        return tomllib.load(fh)


@pytest.fixture
def demo():
    return copy.deepcopy(demo_dict())


@pytest.fixture(autouse=True)
def _reports_without_pick_maps(monkeypatch):
    """Study reports leave out the picks' pick maps (about 12 s each) and the first pick's
    tolerance table (about 10 s to a minute) unless a test turns them on
    (tests/optim/morning/test_robustness.py and tests/optim/morning/test_report_tolerance.py do): the tests of fronts and
    reports stay within the default run's budget."""
    from optim.morning import robustness

    monkeypatch.setattr(robustness, "REPORT_PICK_MAPS", False)
    monkeypatch.setattr(robustness, "REPORT_TOLERANCE", False)


def write_counts(request, label: str, counts: dict) -> None:
    """Print how many inputs each category tried, once a module is done (for the record)."""
    reporter = request.config.pluginmanager.get_plugin("terminalreporter")
    capture = request.config.pluginmanager.get_plugin("capturemanager")
    if reporter is not None and capture is not None and counts:
        total = sum(counts.values())
        with capture.global_and_fixture_disabled():
            reporter.write_line(f"\n{label}: {total}: {dict(sorted(counts.items()))}")
