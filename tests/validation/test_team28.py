"""TEAM Workshop Problem 28 (electrodynamic levitation device) as a validation of several coils
and an air core: the measured equilibrium height and the FEM's force against height.

Source of every number: TEAM Workshop Problem 28 (electrodynamic levitation device), from the
problem's published definition, values from memory / as given in issue 29 (tests/validation/
team28.py says which and what could not be confirmed: the document was not at hand, and a
search of the stored pages found no copy). The plate is taken without a central hole.
"""

from __future__ import annotations

import pytest

from tests.validation.team28 import (
    MEASURED_HEIGHT_MM,
    WEIGHT_N,
    equilibrium_height_mm,
    fast_force,
    fem_force,
    team28_design,
)


def test_design_is_two_coils_in_opposite_senses_without_a_pole():
    d = team28_design()
    assert d.pole is None
    assert [(c.turns, c.sense) for c in d.windings] == [(960, 1), (576, -1)]  # TEAM 28, issue 29


def test_equilibrium_height_within_0_4_mm_of_the_measured():
    # The measured height 11.3 mm (TEAM 28's table, as given in issue 29); 0.4 mm is the
    # issue's tolerance: published computations put the curve's equilibrium at 11.0-11.1 mm,
    # 0.2-0.3 mm below the measurement.
    h = equilibrium_height_mm()
    assert abs(h - MEASURED_HEIGHT_MM) <= 0.4, h


def test_force_falls_with_height_and_crosses_the_weight():
    # The plate is repelled (levitation force > 0) and less so the higher it sits; the weight
    # 0.107 kg x g (TEAM 28, issue 29) lies between the forces at 8 and 15 mm.
    forces = [fast_force(h) for h in (3.8, 8.0, 15.0, 20.0)]
    assert all(a > b > 0 for a, b in zip(forces, forces[1:], strict=False))
    assert forces[1] > WEIGHT_N > forces[2]


@pytest.mark.slow
@pytest.mark.parametrize("height_mm", [3.8, 7.5, 11.3, 15.0, 20.0])
def test_fast_model_matches_the_fem_within_1_percent(height_mm):
    # The FEM on two meshes (refine 1 and 2) agrees with itself to 0.02 % here (measured), so the
    # 1 % of issue 29 is the fast model's own error (its cells and coil sub-cells).
    coarse, fine = fem_force(height_mm, 1.0), fem_force(height_mm, 2.0)
    assert fine == pytest.approx(coarse, rel=2e-3)
    assert fast_force(height_mm) == pytest.approx(fine, rel=0.01)
