"""Shared fixtures: the demo design as a dict and helpers to vary it."""

from __future__ import annotations

import copy
import tomllib
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "studies" / "demo_design.toml"


def demo_dict() -> dict:
    with DEMO.open("rb") as fh:
        return tomllib.load(fh)


@pytest.fixture
def demo():
    return copy.deepcopy(demo_dict())
