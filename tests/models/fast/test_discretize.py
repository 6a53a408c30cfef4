"""Cell division: graded edges, skin depth, and cells that tile each conductor exactly."""

from __future__ import annotations

import numpy as np
import pytest

from models.design import load_design
from models.fast.circuit import RING, TARGET, build_cells
from models.fast.discretize import Fineness, coil_filaments, graded_edges
from models.materials import skin_depth
from tests.conftest import DEMO


def test_skin_depth_of_copper_at_mains_frequencies():
    # delta = sqrt(2 / (omega mu0 sigma)) (Jackson, Classical Electrodynamics, eq. 5.165);
    # annealed copper 58 MS/m (IEC 60028): 9.35 mm at 50 Hz, 8.53 mm at 60 Hz -- the handbook
    # figures "about 9.3 mm / 8.5 mm" (from memory).
    assert skin_depth(50.0, 58.0e6) == pytest.approx(9.346e-3, rel=1e-3)
    assert skin_depth(60.0, 58.0e6) == pytest.approx(8.532e-3, rel=1e-3)
    # delta scales as f^-1/2 (definition)
    assert skin_depth(200.0, 58.0e6) == pytest.approx(skin_depth(50.0, 58.0e6) / 2, rel=1e-12)


@pytest.mark.parametrize(
    "h_a, h_b, focus",
    [(1e-4, 1e-4, ()), (None, 1e-4, ()), (1e-4, None, ()), (5e-5, 5e-5, ((2e-3, 2e-5),))],
)
def test_graded_edges_properties(h_a, h_b, focus):
    e = graded_edges(0.0, 4e-3, h_a, h_b, 1e-3, 1.5, 3, 200, focus=focus)
    sizes = np.diff(e)
    assert e[0] == 0.0 and e[-1] == 4e-3
    assert np.all(sizes > 0)
    assert sizes.max() <= 1e-3 * 1.05  # never much above h_max (discrete rounding)
    assert np.all(sizes[1:] / sizes[:-1] < 1.5**1.6)  # smooth grading
    assert np.all(sizes[:-1] / sizes[1:] < 1.5**1.6)
    if h_a is not None:
        assert sizes[0] < 2.0 * h_a
    if h_b is not None:
        assert sizes[-1] < 2.0 * h_b
    for xf, hf in focus:
        k = np.searchsorted(e, xf) - 1
        assert sizes[k] < 3.0 * hf


def test_graded_edges_respects_cell_counts():
    assert np.diff(graded_edges(0.0, 1.0, None, None, 10.0, 1.5, 5, 100)).size == 5
    assert np.diff(graded_edges(0.0, 1.0, 1e-6, 1e-6, 1e-3, 1.5, 2, 24)).size == 24


def test_cells_tile_ring_and_target_exactly():
    d = load_design(DEMO)
    cells = build_cells(d, Fineness())
    for label, area in (
        (RING, (d.ring.outer_radius - d.ring.inner_radius) * d.ring.depth),
        (TARGET, (d.target.radius - d.target.inner_radius) * d.target.thickness),
    ):
        sel = cells.part == label
        assert cells.area[sel].sum() == pytest.approx(area, rel=1e-12)
    # a ring cell's loop resistance: R = 2 pi / (sigma dz ln(r1/r0)) (Ohm's law for an annulus)
    sel = np.flatnonzero(cells.part == RING)[0]
    r0, r1, dz = cells.r0[sel], cells.r1[sel], cells.dz[sel]
    expected = 2 * np.pi / (58.0e6 * dz * np.log(r1 / r0))
    assert cells.resistance()[sel] == pytest.approx(expected, rel=1e-12)


def test_coil_filaments_tile_the_coil_window():
    # geometry: the sub-cells cover the window (r_i..r_o) x (z_back..z_front) exactly, coil_r x
    # coil_z of them, each inside it
    coil = load_design(DEMO).windings[0]
    fineness = Fineness()
    rc, zc, dr, dz = coil_filaments(coil, fineness)
    assert rc.size == fineness.coil_r * fineness.coil_z
    window = (coil.outer_radius - coil.inner_radius) * coil.length
    assert float(dr @ dz) == pytest.approx(window, rel=1e-12)
    assert np.all(rc - dr / 2 >= coil.inner_radius - 1e-15)
    assert np.all(rc + dr / 2 <= coil.outer_radius + 1e-15)
    assert np.all(zc - dz / 2 >= coil.z_back - 1e-15) and np.all(
        zc + dz / 2 <= coil.z_front + 1e-15
    )
    assert len(set(zip(rc.round(12), zc.round(12), strict=True))) == rc.size  # no two alike
