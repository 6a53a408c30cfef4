"""Facts of the trade on the demo geometry (common practice, no source): a target clearly larger
than the pole face is pushed away with a plain pole and, as a rule, stays pushed with the ring; a
small target at a gap where the plain pole pushes it is pulled once the ring is inlaid -- target
size is critical. Also Lenz's law: with no iron and no ring every target is pushed."""

from __future__ import annotations

import copy

import pytest

from models import design_from_dict, evaluate
from models.design import with_value
from tests.conftest import demo_dict


def _plain(d: dict) -> dict:
    d = copy.deepcopy(d)
    del d["ring"]
    return d


def _pull(d: dict, **keys) -> float:
    design = design_from_dict(d)
    for k, v in keys.items():
        design = with_value(design, k.replace("__", "."), v)
    return evaluate(design, isothermal=True).pull_N


@pytest.mark.parametrize("radius_mm", [14.0, 16.0])
def test_large_target_is_pushed_with_and_without_ring(radius_mm):
    # pole radius 10 mm: a 14-16 mm target overhangs the face (common practice, no source)
    d = demo_dict()
    assert _pull(_plain(d), target__radius_mm=radius_mm) < 0
    assert _pull(d, target__radius_mm=radius_mm) < 0


@pytest.mark.parametrize("radius_mm", [3.0, 5.0, 8.0])
def test_small_target_pushed_by_plain_pole_is_pulled_with_ring(radius_mm):
    # demo gap 3 mm (common practice, no source: the ring turns push into pull for small parts)
    d = demo_dict()
    assert _pull(_plain(d), target__radius_mm=radius_mm) < 0
    assert _pull(d, target__radius_mm=radius_mm) > 0


def test_target_size_is_critical():
    # Sweeping the target radius at the demo gap, the pull changes sign: small parts pulled,
    # large parts pushed (common practice, no source).
    d = demo_dict()
    pulls = [_pull(d, target__radius_mm=r) for r in (3.0, 6.0, 9.0, 12.0, 15.0)]
    assert pulls[0] > 0 and pulls[-1] < 0
    signs = [p > 0 for p in pulls]
    assert signs == sorted(signs, reverse=True), pulls  # one change of sign, from pull to push


def test_no_iron_no_ring_always_pushes():
    # Lenz's law: induced currents oppose the coil's flux, so a conductor above an air-cored coil is
    # repelled at every frequency (e.g. Thomson's jumping ring).
    d = _plain(demo_dict())
    d["pole"] = {
        "radius_mm": 10.0,
        "length_mm": 40.0,
        "relative_permeability": 1.0,
        "conductivity_S_per_m": 0.0,
    }
    for f in (50.0, 400.0, 5000.0):
        d["drive"]["frequency_Hz"] = f
        split = evaluate(design_from_dict(d), isothermal=True).pull_by_source_N
        assert split["coil"] < 0 and split["pole"] == 0.0 and split["ring"] == 0.0
