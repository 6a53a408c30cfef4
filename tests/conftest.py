"""Shared fixtures: the demo design as a dict and helpers to vary it."""

from __future__ import annotations

import copy
import os
import tomllib
from pathlib import Path

import pytest

# One BLAS thread, as the CLI runs it (optim/__init__.py): small dense matrices.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "studies" / "demo_design.toml"


def demo_dict() -> dict:
    with DEMO.open("rb") as fh:
        return tomllib.load(fh)


@pytest.fixture
def demo():
    return copy.deepcopy(demo_dict())
