"""Panels of the pole's meridian contour (models.fast.panels), against geometry.

References (geometry, no source needed beyond it): the meridian section of a cylinder of radius
R and length L, cut at the axis, is a path of length R + L + R (face, side, back); a rectangular
groove of depth d cut into the face adds its two walls, 2 d. Panels meshed on that path chain end
to end, and their lengths add up to it. The size function grows geometrically away from corners
(models.fast.panels.build_panels's Notes), so neighbouring panels differ by at most the growth.
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest

from models.errors import DesignError
from models.fast.panels import (
    DEFAULT_GROWTH,
    DEFAULT_PANEL_SIZE,
    PanelSet,
    build_panels,
    build_panels_contour,
    pole_contour,
)

POLE = SimpleNamespace(radius=0.010, length=0.040)
RING = SimpleNamespace(inner_radius=0.004, outer_radius=0.007, depth=0.003)


def _path_length(vertices):
    v = np.asarray(vertices)
    return float(np.hypot(*np.diff(v, axis=0).T).sum())


@pytest.mark.parametrize(("ring", "extra"), [(None, 0.0), (RING, 2 * RING.depth)])
def test_pole_contour_runs_axis_to_axis_round_the_section(ring, extra):
    v = pole_contour(POLE, ring)
    assert v[0] == (0.0, 0.0) and v[-1] == (0.0, -POLE.length)  # face centre to back centre
    assert all(r >= 0.0 for r, _ in v)
    # geometry: R + L + R, plus the groove's two walls
    assert _path_length(v) == pytest.approx(2 * POLE.radius + POLE.length + extra, rel=1e-14)


def test_pole_contour_rejects_a_ring_that_does_not_fit():
    wide = SimpleNamespace(inner_radius=0.004, outer_radius=0.011, depth=0.003)
    with pytest.raises(DesignError, match="outer"):
        pole_contour(POLE, wide)


def _chain(panels: PanelSet):
    (sr, sz), (er, ez) = panels.start, panels.end
    return sr, sz, er, ez


@pytest.mark.parametrize(("ring", "extra"), [(None, 0.0), (RING, 2 * RING.depth)])
def test_build_panels_closes_the_contour_and_keeps_its_length(ring, extra):
    panels = build_panels(POLE, ring, 0.5e-3)
    sr, sz, er, ez = _chain(panels)
    # each panel starts where the last one ended; the chain runs from the face centre to the back
    assert np.allclose(sr[1:], er[:-1], atol=1e-15) and np.allclose(sz[1:], ez[:-1], atol=1e-15)
    assert (sr[0], sz[0]) == pytest.approx((0.0, 0.0), abs=1e-15)
    assert (er[-1], ez[-1]) == pytest.approx((0.0, -POLE.length), abs=1e-15)
    total = 2 * POLE.radius + POLE.length + extra  # geometry: the meridian perimeter
    assert panels.length.sum() == pytest.approx(total, rel=1e-12)
    assert np.allclose(np.hypot(panels.tr, panels.tz), 1.0, atol=1e-14)  # unit tangents
    assert np.allclose(panels.w.sum(axis=1), 1.0, atol=1e-14)
    assert panels.n == panels.length.size == panels.r.shape[0]


def test_build_panels_nodes_lie_on_their_panels():
    panels = build_panels(POLE, RING, 0.5e-3, nodes=3)
    assert panels.r.shape == (panels.n, 3)
    s = (panels.r - panels.start[0][:, None]) * panels.tr[:, None] + (
        panels.z - panels.start[1][:, None]
    ) * panels.tz[:, None]
    # Gauss-Legendre nodes at 0.5 -+ sqrt(3/5)/2 and 0.5 of each panel (A&S 25.4.29, n = 3)
    g = 0.5 + 0.5 * np.array([-np.sqrt(0.6), 0.0, np.sqrt(0.6)])
    assert np.allclose(s / panels.length[:, None], g, atol=1e-12)


def test_panels_are_graded_toward_the_corners_and_the_face():
    h = 0.5e-3
    panels = build_panels(POLE, None, h)
    corner = np.hypot(panels.mid_r - POLE.radius, panels.mid_z)  # distance to the face's edge
    nearest = np.argmin(corner)
    # at the corner the size is corner_size = h / 8 (the default), grown by at most one step
    assert panels.length[nearest] <= DEFAULT_GROWTH * h / 8
    # on the face, sizes only grow away from the corner; down the side, away from the face
    face = np.flatnonzero(np.isclose(panels.mid_z, 0.0))
    side = np.flatnonzero(np.isclose(panels.mid_r, POLE.radius))
    assert np.all(np.diff(panels.length[face][-8:]) <= 1e-15)  # shrinking toward the corner
    assert np.all(np.diff(panels.length[side][:8]) >= -1e-15)  # growing from it
    assert panels.length[side].max() > 4 * panels.length[nearest]


@pytest.mark.parametrize("ring", [None, RING])
def test_neighbouring_panels_differ_by_at_most_the_growth(ring):
    # The size function's slope is growth - 1 (Notes): a panel of length h at distance x is
    # followed by one no longer than h + (g - 1)(h + ...) ~ g h. Measured largest ratio 1.25 here;
    # at a corner the two edges meet with the same size, so the ratio holds across it too.
    panels = build_panels(POLE, ring, 0.5e-3)
    lengths = panels.length
    ratio = np.maximum(lengths[1:] / lengths[:-1], lengths[:-1] / lengths[1:])
    assert ratio.max() <= DEFAULT_GROWTH * 1.05


def test_build_panels_default_size_and_refinement():
    plain = build_panels(POLE, None)
    face = np.isclose(plain.mid_z, 0.0) & (plain.mid_r < 0.5 * POLE.radius)
    assert plain.length[face].max() == pytest.approx(DEFAULT_PANEL_SIZE, rel=0.05)
    # refine: the panel under the point is no longer than the size asked for (docstring)
    point = (POLE.radius, -0.02)  # on the side, far from the face and the corners
    refined = build_panels(POLE, None, refine=[(*point, 0.1e-3)])
    d = np.hypot(refined.mid_r - point[0], refined.mid_z - point[1])
    assert refined.length[np.argmin(d)] <= 0.1e-3 * DEFAULT_GROWTH
    assert refined.n > plain.n


def test_build_panels_contour_orients_either_sense_the_same():
    v = pole_contour(POLE, RING)
    forward = build_panels_contour(v, 1e-3)
    backward = build_panels_contour(v[::-1], 1e-3)
    assert forward.n == backward.n
    assert np.allclose(forward.mid_r, backward.mid_r, atol=1e-15)
    assert np.allclose(forward.tz, backward.tz, atol=1e-15)
    # the body lies to the right of travel: along the face (z = 0) outward the pole is below
    assert forward.tr[0] == pytest.approx(1.0) and forward.mid_z[0] == 0.0
    assert forward.length.sum() == pytest.approx(_path_length(v), rel=1e-12)


def test_build_panels_contour_puts_small_panels_at_sharp_turns_only():
    # A right angle at (R, 0) is a corner (> 20 degrees); a 10-degree bend is not.
    bend = [(0.0, 0.0), (0.01, 0.0), (0.02, -0.0017632698), (0.02, -0.03), (0.0, -0.03)]
    panels = build_panels_contour(bend, 1e-3)
    d_bend = np.hypot(panels.mid_r - 0.01, panels.mid_z)
    d_corner = np.hypot(panels.mid_r - 0.02, panels.mid_z + 0.0017632698)
    assert panels.length[np.argmin(d_bend)] > 0.5e-3
    assert panels.length[np.argmin(d_corner)] <= DEFAULT_GROWTH * 1e-3 / 8


@pytest.mark.parametrize(
    ("kwargs", "words"),
    [
        ({"panel_size": 0.0}, "panel_size"),
        ({"panel_size": -1e-3}, "panel_size"),
        ({"panel_size": 1e-3, "growth": 1.0}, "growth"),
        ({"panel_size": 1e-3, "corner_size": float("nan")}, "corner_size"),
        ({"panel_size": 1e-3, "max_size": 0.0}, "max_size"),
        ({"panel_size": 1e-3, "refine": [(0.0, -0.01, 0.0)]}, "refine size"),
    ],
)
def test_build_panels_rejects_bad_sizes_naming_the_field(kwargs, words):
    with pytest.raises(DesignError, match=words):
        build_panels(POLE, None, **kwargs)
    with pytest.raises(DesignError, match=words):
        build_panels_contour(pole_contour(POLE), **kwargs)


@pytest.mark.parametrize(
    "vertices",
    [
        [(0.0, 0.0), (0.01, 0.0)],
        [(0.001, 0.0), (0.01, 0.0), (0.0, -0.01)],
        [(0.0, 0.0), (-0.01, 0.0), (0.0, -0.01)],
    ],
)
def test_build_panels_contour_rejects_a_contour_off_the_axis(vertices):
    with pytest.raises(DesignError, match="vertices"):
        build_panels_contour(vertices, 1e-3)


def test_build_panels_rejects_a_pole_without_size():
    with pytest.raises(DesignError, match="pole.radius"):
        build_panels(SimpleNamespace(radius=0.0, length=0.04), None, 1e-3)
