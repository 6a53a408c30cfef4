"""The steel's field map and core losses (models.fast.core).

References: the volume of a cylinder pi R^2 L, less an annular groove pi (r_o^2 - r_i^2) d
(geometry); the field of the cells by the loop formulas written afresh (tests/models/fast/loops.py,
Jackson 1999 eq. 5.37); the loss law's form k_h f B^alpha + k_e (f B)^1.5 (Steinmetz 1892,
Bertotti 1998 eq. 12.26 for the excess term) makes hysteresis scale as I^alpha and excess as
I^1.5 in a linear model; the grade M400-50A loses at most 4.00 W/kg at 1.5 T, 50 Hz (IEC
60404-8-4), of which the sheets' classical eddy part is pi^2 sigma d^2 B^2 f^2 / (6 rho)
(Bertotti 1998 eq. 12.15).
"""

from __future__ import annotations

import copy
import dataclasses
import math

import numpy as np
import pytest

from models.design import design_from_dict
from models.evaluate import DEFAULT_FINENESS, pole_model_for
from models.fast.circuit import assemble_circuit, solve_system
from models.fast.core import core_grid, core_losses, hysteresis_excess_at, radial_flux_fraction
from models.fast.panel_kernels import panel_field
from tests.conftest import demo_dict
from tests.models.fast.loops import loop_field


def _design(with_ring=True):
    data = copy.deepcopy(demo_dict())
    if not with_ring:
        del data["ring"]
    return design_from_dict(data)


@pytest.fixture(scope="module")
def demo():
    design = _design()
    system = assemble_circuit(design, DEFAULT_FINENESS, pole_model_for(design, DEFAULT_FINENESS))
    return design, system, solve_system(system)


@pytest.mark.parametrize("with_ring", [True, False])
def test_core_grid_fills_the_steel(with_ring):
    design = _design(with_ring)
    model = pole_model_for(design, DEFAULT_FINENESS)
    system = assemble_circuit(design, DEFAULT_FINENESS, model)
    grid = core_grid(design, system.cells, model.panels, system.P)
    p, g = design.pole, design.ring
    steel = math.pi * p.radius**2 * p.length  # geometry
    if with_ring:
        steel -= math.pi * (g.outer_radius**2 - g.inner_radius**2) * g.depth
    assert grid.volume.sum() == pytest.approx(steel, rel=1e-12)
    assert np.all(grid.volume > 0.0)
    assert np.all((grid.r > 0.0) & (grid.r < p.radius) & (grid.z < 0.0) & (grid.z > -p.length))
    if with_ring:  # no centre inside the groove
        groove = (grid.r > g.inner_radius) & (grid.r < g.outer_radius) & (grid.z > -g.depth)
        assert not np.any(groove)


def test_core_grid_field_is_the_cells_plus_the_sheets(demo):
    # The map must give the field of the cells' loops (Jackson 5.37, written afresh) plus that of
    # the pole's bound sheet currents; measured equal to 2e-16 of the largest field.
    design, system, sol = demo
    grid = sol.core_grid
    c = sol.cells
    br_c, bz_c = loop_field(c.rc[None, :], c.zc[None, :], grid.r[:, None], grid.z[:, None])
    br_p, bz_p = panel_field(sol.panels, grid.r, grid.z)
    br = br_c @ sol.cell_current + br_p @ sol.panel_current
    bz = bz_c @ sol.cell_current + bz_p @ sol.panel_current
    got_r, got_z = grid.field(sol.cell_current)
    scale = np.abs(bz).max()
    assert np.abs(got_r - br).max() < 1e-12 * scale and np.abs(got_z - bz).max() < 1e-12 * scale


def test_core_losses_are_zero_at_zero_current(demo):
    design, _, sol = demo
    losses = core_losses(
        design.pole, design.drive.frequency, sol.core_grid, 0 * sol.cell_current, 0.0
    )
    assert losses.total == 0.0 and losses.hysteresis == 0.0 and losses.excess == 0.0
    assert np.all(losses.b_hat == 0.0)
    assert losses.eddy_share.sum() == pytest.approx(1.0, rel=1e-12)  # spread evenly, still a share


@pytest.mark.parametrize("scale", [0.5, 2.0, 3.0])
def test_core_losses_scale_with_the_current_by_their_laws(demo, scale):
    design, _, sol = demo
    f, grid, law = design.drive.frequency, sol.core_grid, design.pole.core_loss
    base = core_losses(design.pole, f, grid, sol.cell_current, 0.7)
    more = core_losses(design.pole, f, grid, scale * sol.cell_current, 0.7 * scale**2)
    # linear model: B in proportion to I; hysteresis as B^alpha, excess as B^1.5 (Steinmetz,
    # Bertotti 12.26); the sheets' eddy loss, passed in, as I^2
    assert np.allclose(more.b_hat, scale * base.b_hat, rtol=1e-12)
    assert more.hysteresis == pytest.approx(scale**law.alpha * base.hysteresis, rel=1e-12)
    assert more.excess == pytest.approx(scale**1.5 * base.excess, rel=1e-12)
    assert more.eddy == pytest.approx(scale**2 * base.eddy, rel=1e-15)
    assert np.allclose(more.eddy_share, base.eddy_share, rtol=1e-12)  # a shape, not a size


def test_core_losses_are_not_negative_and_add_up(demo):
    design, _, sol = demo
    losses = sol.core
    assert losses.hysteresis > 0.0 and losses.excess > 0.0 and losses.eddy > 0.0
    assert np.all(losses.hysteresis_at >= 0.0) and np.all(losses.excess_at >= 0.0)
    assert losses.hysteresis == pytest.approx(losses.hysteresis_at.sum(), rel=1e-12)
    assert losses.total == pytest.approx(losses.eddy + losses.hysteresis + losses.excess, rel=1e-15)
    assert losses.eddy_share.sum() == pytest.approx(1.0, rel=1e-12)
    assert np.all(losses.eddy_share >= 0.0)


def test_hysteresis_and_excess_of_a_kilogram_give_the_grade_loss():
    # 1 kg of M400-50A at 1.5 T, 50 Hz: hysteresis + excess + classical eddy = 4.00 W/kg
    # (IEC 60404-8-4; the law is fitted to this point, models/materials.py).
    pole = _design().pole
    h, e = hysteresis_excess_at(pole, 50.0, np.array([1.5]), np.array([1.0 / pole.density]))
    d, sigma, b, f = pole.lamination_thickness, pole.sheet_conductivity, 1.5, 50.0
    classical = math.pi**2 * sigma * d**2 * b**2 * f**2 / (6.0 * pole.density)  # Bertotti 12.15
    assert h[0] + e[0] + classical == pytest.approx(4.00, rel=1e-6)
    assert h[0] > 0.0 and e[0] > 0.0


def test_hysteresis_and_excess_are_per_volume_and_zero_without_a_law():
    pole = _design().pole
    b, vol = np.array([0.2, 0.8, 1.2]), np.array([1e-6, 2e-6, 4e-6])
    h, e = hysteresis_excess_at(pole, 400.0, b, vol)
    h2, e2 = hysteresis_excess_at(pole, 400.0, b, 2.0 * vol)
    assert np.allclose(h2, 2.0 * h, rtol=1e-14) and np.allclose(e2, 2.0 * e, rtol=1e-14)
    # hysteresis is an energy per cycle: in proportion to f; excess as f^1.5 (Bertotti 12.26)
    h8, e8 = hysteresis_excess_at(pole, 800.0, b, vol)
    assert np.allclose(h8, 2.0 * h, rtol=1e-12) and np.allclose(e8, 2.0**1.5 * e, rtol=1e-12)
    lossless = dataclasses.replace(pole, core_loss=None)
    h0, e0 = hysteresis_excess_at(lossless, 400.0, b, vol)
    assert np.all(h0 == 0.0) and np.all(e0 == 0.0) and h0.shape == vol.shape


def test_radial_flux_fraction_is_a_fraction_growing_with_depth(demo):
    design, _, sol = demo
    grid, i = sol.core_grid, sol.cell_current
    depths = [0.0, 1e-3, 3e-3, 10e-3, design.pole.length * 1.01]
    fractions = [radial_flux_fraction(grid, i, d) for d in depths]
    assert fractions[0] == 0.0  # no steel within 0 of the face
    assert all(0.0 <= a <= b <= 1.0 for a, b in zip(fractions, fractions[1:], strict=False))
    # over the whole pole: the radial share of the field energy, computed directly
    br, bz = grid.field(i)
    er = np.abs(br) ** 2 @ grid.volume
    assert fractions[-1] == pytest.approx(er / (er + np.abs(bz) ** 2 @ grid.volume), rel=1e-12)
    # a ratio of energies: independent of the current's size and phase
    assert radial_flux_fraction(grid, (2.0 - 1.0j) * i, 3e-3) == pytest.approx(
        fractions[2], rel=1e-12
    )
    assert radial_flux_fraction(grid, 0.0 * i, 3e-3) == 0.0
