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


def write_counts(request, label: str, counts: dict) -> None:
    """Print how many inputs each category tried, once a module is done (for the record)."""
    reporter = request.config.pluginmanager.get_plugin("terminalreporter")
    capture = request.config.pluginmanager.get_plugin("capturemanager")
    if reporter is not None and capture is not None and counts:
        total = sum(counts.values())
        with capture.global_and_fixture_disabled():
            reporter.write_line(f"\n{label}: {total}: {dict(sorted(counts.items()))}")
