"""Reliability: seeded random designs across (and beyond) the validated range either evaluate to a
finite, energy-consistent result or are refused with a one-line DesignError -- never a traceback,
never a NaN."""

from __future__ import annotations

import math

import numpy as np
import pytest

from models import design_from_dict, evaluate
from models.errors import DesignError


def _random_design(rng):
    rp = rng.uniform(2.0, 30.0)
    ri = rng.uniform(0.05, 0.9) * rp
    d = {
        "pole": {
            "radius_mm": rp,
            "length_mm": rng.uniform(5.0, 80.0),
            "relative_permeability": float(np.exp(rng.uniform(0.0, np.log(2e4)))),
            "conductivity_S_per_m": 0.0,
        },
        "coil": {
            "inner_radius_mm": rp + rng.uniform(0.0, 3.0),
            "outer_radius_mm": rp + rng.uniform(3.5, 20.0),
            "setback_mm": rng.uniform(0.0, 5.0),
            "length_mm": rng.uniform(2.0, 40.0),
            "turns": int(rng.integers(1, 2000)),
        },
        "drive": {"frequency_Hz": float(np.exp(rng.uniform(np.log(5.0), np.log(5e4))))},
        "target": {
            "radius_mm": rng.uniform(0.5, 3.0) * rp,
            "thickness_mm": rng.uniform(0.05, 10.0),
            "gap_mm": float(np.exp(rng.uniform(np.log(0.05), np.log(20.0)))),
            "material": str(rng.choice(["copper", "aluminium-1350", "brass-c26000"])),
        },
    }
    if rng.uniform() < 0.5:
        d["drive"]["current_A"] = rng.uniform(0.1, 20.0)
    else:
        d["drive"]["voltage_V"] = rng.uniform(1.0, 400.0)
    if rng.uniform() < 0.7:
        d["ring"] = {
            "inner_radius_mm": ri,
            "outer_radius_mm": ri + rng.uniform(0.2, 10.0),
            "depth_mm": rng.uniform(0.2, 10.0),
            "material": "copper",
        }
    return d


@pytest.mark.slow
@pytest.mark.parametrize("seed", range(12))
def test_random_design_evaluates_or_is_refused(seed):
    rng = np.random.default_rng(1000 + seed)
    try:
        design = design_from_dict(_random_design(rng))
    except DesignError as err:
        assert all("\n" not in p and " = " in p or ":" in p for p in err.problems)
        return
    r = evaluate(design)
    values = [
        r.pull_N,
        r.target_loss_W,
        r.ring_loss_W,
        r.coil_loss_W,
        r.coil_voltage_V,
        r.core_peak_flux_density_T,
        r.pole_flux_density_T,
        *r.pull_by_source_N.values(),
    ]
    assert all(math.isfinite(v) for v in values)
    assert min(r.target_loss_W, r.ring_loss_W, r.coil_loss_W) >= 0.0
    # Energy balance (internal identity; laminated iron is lossless): 1e-7 relative
    total = r.target_loss_W + r.ring_loss_W + r.coil_loss_W
    assert r.input_power_W == pytest.approx(total, rel=1e-7)
