"""Panel integrals of models.fast.panel_kernels against direct integration outside the project.

References: the mutual inductance of two coaxial loops (Maxwell's formula, Smythe 1950 sec. 7.10,
Jackson 1999 eq. 5.37 for the field of a loop) written afresh with scipy's complete elliptic
integrals (tests/models/fast/loops.py) and integrated along one panel by
scipy.integrate.quad (a general-purpose library); dM/dz by a central difference (calculus); on a
sheet the field jumps by mu_0 K across it and the kernels return the mean of the two sides
(principal value; Jackson 1999 eq. 5.86).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.constants import mu_0
from scipy.integrate import quad

from models.errors import DesignError
from models.fast.panel_kernels import (
    panel_field,
    panel_mutual,
    panel_mutual_dz,
    source_tangential_field,
)
from models.fast.panels import PanelSet
from models.fast.quadrature import gauss01
from tests.models.fast.loops import loop_field, maxwell_mutual


def _panel(r0, z0, r1, z1, q=4):
    """One straight panel from (r0, z0) to (r1, z1) [m]."""
    length = math.hypot(r1 - r0, z1 - z0)
    s, w = gauss01(q)
    one = np.ones(1)
    return PanelSet(
        r=(r0 + (r1 - r0) * s)[None, :],
        z=(z0 + (z1 - z0) * s)[None, :],
        w=w[None, :].copy(),
        mid_r=one * 0.5 * (r0 + r1),
        mid_z=one * 0.5 * (z0 + z1),
        length=one * length,
        tr=one * (r1 - r0) / length,
        tz=one * (z1 - z0) / length,
    )


def _along(panel, f):
    """Mean of f(r, z) over the panel's length (scipy quad, uniform current along it)."""
    r0, z0 = panel.start[0][0], panel.start[1][0]
    dr, dz = panel.length[0] * panel.tr[0], panel.length[0] * panel.tz[0]
    val, _ = quad(lambda s: f(r0 + s * dr, z0 + s * dz), 0.0, 1.0, epsabs=0.0, epsrel=1e-11)
    return val


SLANTED = _panel(4e-3, -1e-3, 5e-3, -2.5e-3)
# points at 0.26, 1.2, 3.7 and 37 panel lengths from the midpoint: every tier of the rule
POINTS = [(4.9e-3, -1.5e-3), (6.5e-3, -1.0e-3), (4.5e-3, 5.0e-3), (30e-3, 60e-3)]


@pytest.mark.parametrize("point", POINTS)
def test_panel_mutual_is_maxwell_averaged_over_the_panel(point):
    r, z = point
    expected = _along(SLANTED, lambda a, z0: maxwell_mutual(a, z0, r, z))
    # measured 4e-9 or less near, 4.6e-7 with the far one-point rule at the moment radius
    assert panel_mutual(SLANTED, [r], [z])[0, 0] == pytest.approx(expected, rel=2e-6)


@pytest.mark.parametrize("point", POINTS[:3])
def test_panel_mutual_dz_is_the_derivative_of_panel_mutual(point):
    r, z = point
    h = 1e-7
    up = _along(SLANTED, lambda a, z0: maxwell_mutual(a, z0, r, z + h))
    down = _along(SLANTED, lambda a, z0: maxwell_mutual(a, z0, r, z - h))
    # central difference: error ~ h^2 M''' (calculus), far below the tolerance at h = 0.1 um
    assert panel_mutual_dz(SLANTED, [r], [z])[0, 0] == pytest.approx(
        (up - down) / (2 * h), rel=1e-4
    )


@pytest.mark.parametrize("point", POINTS[:3])
def test_panel_field_is_the_loop_field_averaged_over_the_panel(point):
    r, z = point
    br, bz = panel_field(SLANTED, [r], [z])
    exp_r = _along(SLANTED, lambda a, z0: loop_field(a, z0, r, z)[0])
    exp_z = _along(SLANTED, lambda a, z0: loop_field(a, z0, r, z)[1])
    scale = math.hypot(exp_r, exp_z)
    # measured 2e-8 of |B| or less
    assert abs(br[0, 0] - exp_r) < 1e-6 * scale and abs(bz[0, 0] - exp_z) < 1e-6 * scale


def test_panel_field_on_the_sheet_is_the_mean_of_its_two_sides():
    # An axial panel (a cylindrical sheet): B_z jumps by mu_0 K = mu_0 / length across it
    # (Jackson 5.86); on it the kernel returns the mean of the two sides.
    sheet = _panel(5e-3, 0.0, 5e-3, -2e-3)
    eps = 1e-9
    _, on = panel_field(sheet, [5e-3], [-1e-3])
    _, inside = panel_field(sheet, [5e-3 - eps], [-1e-3])
    _, outside = panel_field(sheet, [5e-3 + eps], [-1e-3])
    assert inside[0, 0] - outside[0, 0] == pytest.approx(mu_0 / 2e-3, rel=1e-3)
    assert on[0, 0] == pytest.approx(0.5 * (inside[0, 0] + outside[0, 0]), rel=1e-4)


@pytest.mark.parametrize("point", POINTS[1:3])
def test_source_tangential_field_is_the_filament_field_along_the_panel(point):
    # The field of a 1 A filament at the point, projected on the panel's tangent and averaged
    # over the panel (docstring).
    r, z = point
    t_r, t_z = SLANTED.tr[0], SLANTED.tz[0]

    def tangential(rp, zp):
        br, bz = loop_field(r, z, rp, zp)
        return br * t_r + bz * t_z

    expected = _along(SLANTED, tangential)
    got = source_tangential_field(SLANTED, [r], [z])[0, 0]
    # measured 7e-9 apart or less
    assert got == pytest.approx(expected, rel=1e-6)


def test_shapes_several_points_and_panels_and_read_only_results():
    panels = PanelSet(
        *(
            np.concatenate([getattr(SLANTED, f), getattr(_panel(0, 0, 3e-3, 0), f)])
            for f in ("r", "z", "w", "mid_r", "mid_z", "length", "tr", "tz")
        )
    )
    r, z = np.array([1e-3, 6e-3, 8e-3]), np.array([1e-3, -1e-3, 2e-3])
    m = panel_mutual(panels, r, z)
    assert m.shape == (3, 2)
    # column by column equals the one-panel call (each pair integrated on its own)
    assert m[1, 0] == pytest.approx(panel_mutual(SLANTED, r[1:2], z[1:2])[0, 0], rel=1e-14)
    assert source_tangential_field(panels, r, z).shape == panel_mutual_dz(panels, r, z).shape
    assert all(a.shape == (3, 2) for a in panel_field(panels, r, z))
    with pytest.raises(ValueError):
        m[0, 0] = 1.0  # the kept results are shared: read-only


def test_mismatched_points_are_refused_naming_the_fields():
    with pytest.raises(DesignError, match="r, z"):
        panel_mutual(SLANTED, [1e-3, 2e-3], [0.0])
