"""Bound-current model of the laminated pole (models/fast/pole.py) against analytic and published values."""

import numpy as np
import pytest

from models.design import Pole, Ring
from models.errors import DesignError
from models.fast.filaments import mutual, mutual_dz
from models.fast.pole import (
    MagnetisedPole,
    PanelSet,
    bound_current_operator,
    build_panels,
    build_panels_contour,
    panel_field,
    panel_mutual,
    panel_mutual_dz,
)

MU_R = 1000.0
LAM = (MU_R - 1.0) / (MU_R + 1.0)


def _pole(radius=10e-3, length=40e-3, mu_r=MU_R):
    return Pole(radius=radius, length=length, relative_permeability=mu_r, conductivity=0.0)


RING = Ring(
    inner_radius=4e-3,
    outer_radius=7e-3,
    depth=3e-3,
    conductivity=5.8e7,
    temperature_coefficient=0.0,
)


def _sphere(radius, n_edges):
    th = np.linspace(0.0, np.pi, n_edges + 1)
    v = list(zip(radius * np.sin(th), radius * np.cos(th), strict=True))
    v[0], v[-1] = (0.0, radius), (0.0, -radius)
    return build_panels_contour(v, panel_size=1.0, corner_angle_deg=90.0)


def _shifted(ps, dz):
    return PanelSet(ps.r, ps.z + dz, ps.w, ps.mid_r, ps.mid_z + dz, ps.length, ps.tr, ps.tz)


# ------------------------------------------------------------------------------------------------
def test_panels_follow_the_contour():
    ps = build_panels(_pole(), RING, panel_size=0.25e-3)
    assert np.allclose(ps.w.sum(axis=1), 1.0)
    (r0, z0), (r1, z1) = ps.start, ps.end
    # consecutive panels join (closed polygon apart from the axis), face panels point along +r
    assert np.allclose(r1[:-1], r0[1:]) and np.allclose(z1[:-1], z0[1:])
    assert r0[0] == 0.0 and r1[-1] == 0.0
    assert np.isclose(ps.length.sum(), 2 * 10e-3 + 40e-3 + 2 * 3e-3, rtol=1e-12)
    assert ps.tr[0] == 1.0 and ps.tz[0] == 0.0
    # graded: corner panels are panel_size / 8, the face carries panel_size
    assert ps.length.min() < 0.25e-3 / 7 and ps.length.max() <= 2.5e-3 * 1.0001
    face = (ps.mid_z == 0.0) & (ps.mid_r < 3.5e-3) & (ps.mid_r > 0.5e-3)
    assert np.all(ps.length[face] <= 0.25e-3 * 1.0001)


def test_sphere_in_uniform_field():
    # B_in = 3 mu_r / (mu_r + 2) B0, uniform (Jackson, Classical Electrodynamics, 3rd ed.,
    # sec. 5.11, eq. 5.115). Measured error at the centre, mu_r = 1000: 20 edges 2.6e-3,
    # 40 edges 7.3e-4, 80 edges 3.2e-4, 160 edges 1.1e-4 (second order in the edge length).
    a = 10e-3
    ps = _sphere(a, 80)
    for mu_r in (10.0, MU_R):
        current = MagnetisedPole(ps, mu_r).response(ps.tz * 1.0)  # B0 = 1 T along z
        pts_r, pts_z = np.array([0.0, 3e-3, 5e-3]), np.array([0.0, 2e-3, -6e-3])
        br, bz = panel_field(ps, pts_r, pts_z)
        expected = 3 * mu_r / (mu_r + 2)
        np.testing.assert_allclose(1.0 + bz @ current, expected, rtol=2e-3)
        np.testing.assert_allclose(br @ current, 0.0, atol=2e-3 * expected)


def _block(refine):
    # A flat block 100 mm in radius and depth: 20x the loop radius, 100x its height.
    v = [(0.0, 0.0), (0.1, 0.0), (0.1, -0.1), (0.0, -0.1)]
    return build_panels_contour(v, panel_size=8e-3, corner_size=2e-3, refine=refine)


def test_loop_above_block_is_its_image():
    # Method of images for a plane of a linear magnetic medium: the field above is that of an
    # image loop carrying lambda I at the mirror position (Jackson 3rd ed., sec. 5.12 / prob. 5.17;
    # Hammond, Electromagnetism for Engineers). Measured with panels h at the face under the
    # loops: h = 0.6, 0.3, 0.15 mm -> mutual -0.48, -0.22, -0.13 %; force -2.5, -1.1, -0.53 %.
    a1, h1, a2, h2 = 5e-3, 1e-3, 3e-3, 2e-3
    ps = _block([(a1, 0.0, 0.1e-3), (a2, 0.0, 0.1e-3)])
    op = MagnetisedPole(ps, MU_R).operator([a1], [h1])[:, 0]
    d_mutual = panel_mutual(ps, [a2], [h2])[0] @ op
    force = panel_mutual_dz(ps, [a1], [h1])[0] @ op  # per A^2, on loop 1 from its own image
    np.testing.assert_allclose(d_mutual, LAM * mutual(a2, h2, a1, -h1), rtol=5e-3)
    np.testing.assert_allclose(force, LAM * mutual_dz(a1, h1, a1, -h1), rtol=1e-2)
    assert force < 0.0  # attraction toward the iron (-z)


def test_long_rod_demagnetisation():
    # Rod, length / diameter = 10, in a uniform axial field, centred at z = 0.
    radius, length = 5e-3, 0.1
    gamma = length / (2 * radius)
    # (1) chi -> 0: to first order the magnetisation is chi H0, uniform; the field at the centre
    # of a uniformly magnetised cylinder is -M (1 - gamma / sqrt(gamma^2 + 1)) (two charged end
    # discs; exact, e.g. Chen, Brug & Goldfarb, IEEE Trans. Magn. 27, 3601 (1991), chi = 0).
    # Measured: 0.004964 vs 0.0049628 (0.03 %).
    mu_r = 1.001
    ps = _shifted(
        build_panels(_pole(radius, length, mu_r), panel_size=1e-3, max_size=2e-3), length / 2
    )
    current = MagnetisedPole(ps, mu_r).response(ps.tz * 1.0)
    b_centre = 1.0 + panel_field(ps, [0.0], [0.0])[1] @ current
    n_centre = 1.0 - gamma / np.sqrt(gamma**2 + 1.0)
    np.testing.assert_allclose((b_centre[0] - 1.0) / (mu_r - 1.0), 1.0 - n_centre, rtol=2e-4)
    # (2) mu_r = 1000: fluxmetric factor from the mid-plane flux, B_avg / B0 = mu_r / (1 + N_f chi).
    # Measured N_f = 0.01481 (1 mm panels), 0.01497 (0.5 mm). Bracket: below the prolate spheroid
    # of the same aspect ratio, N = (ln(2 gamma) - 1) / gamma^2 ~ 0.0203 (Osborn, Phys. Rev. 67,
    # 351 (1945), exact value 0.02029), which a cylinder at high chi does not reach; and within
    # 10 % of Bozorth's high-permeability cylinder fit (4.02 log10(gamma) - 0.92) / (2 gamma^2)
    # = 0.0155 (Bozorth, Ferromagnetism, 1951; from memory; chi = 1000 is not infinite).
    mu_r = MU_R
    ps = _shifted(
        build_panels(_pole(radius, length, mu_r), panel_size=1e-3, max_size=2e-3), length / 2
    )
    current = MagnetisedPole(ps, mu_r).response(ps.tz * 1.0)
    flux = np.pi * radius**2 + panel_mutual(ps, [radius], [0.0])[0] @ current
    n_f = (mu_r * np.pi * radius**2 / flux - 1.0) / (mu_r - 1.0)
    assert 0.012 < n_f < 0.02029
    np.testing.assert_allclose(n_f, (4.02 * np.log10(gamma) - 0.92) / (2 * gamma**2), rtol=0.1)


# Filaments around the grooved pole: above the face (target), in the groove 0.05 mm from its walls
# (ring cells), beside the pole 0.2 mm from the side (coil), above the post.
SRC_R = np.array([5.5e-3, 4.05e-3, 6.95e-3, 5.5e-3, 10.2e-3, 2e-3])
SRC_Z = np.array([0.5e-3, -1.5e-3, -2.95e-3, -2.9e-3, -10e-3, 1e-3])


def _coupling(panel_size):
    ps = build_panels(_pole(), RING, panel_size=panel_size)
    op = MagnetisedPole(ps, MU_R).operator(SRC_R, SRC_Z)
    return ps, panel_mutual(ps, SRC_R, SRC_Z) @ op, panel_mutual_dz(ps, SRC_R, SRC_Z) @ op


def test_reciprocity_of_the_iron_coupling():
    # M_ij via the iron equals M_ji (linear reciprocal medium). The Galerkin scheme is not
    # symmetric by construction; measured max |D - D^T| / sqrt(D_ii D_jj): 0.45 % (1 mm panels),
    # 0.24 % (0.5), 0.13 % (0.25), 0.09 % (0.125): it falls with the panel size.
    _, d, _ = _coupling(0.25e-3)
    scale = np.sqrt(np.outer(np.diag(d), np.diag(d)))
    assert np.max(np.abs(d - d.T) / scale) < 3e-3
    assert np.all(np.diag(d) > 0.0)  # the iron raises every self-inductance


@pytest.mark.slow
def test_grooved_pole_converges_with_panel_size():
    # Measured (mu_r = 1000, pole 10 x 40 mm, groove 4-7 mm x 3 mm), target loop (5.5, +0.5) mm:
    #   panel_size [mm]   panels   dM_self [nH]   dM/dz self [uH/m]   coil->target [nH]
    #   1.0                 87      9.683          -3.4283             3.6665
    #   0.5                111      9.660          -3.4170             3.6464
    #   0.25               145      9.648          -3.4113             3.6182
    #   0.125              195      9.641          -3.4086             3.6089
    # Ring-cell filaments 0.05 mm from the wall are not resolved by panels of 0.25 mm (+-4 %
    # scatter): refine there (``refine=``) when it matters.
    values = []
    for h in (0.5e-3, 0.25e-3, 0.125e-3):
        _, d, dz = _coupling(h)
        values.append((d[0, 0], dz[0, 0], d[0, 4]))
    values = np.array(values)
    steps = np.abs(np.diff(values, axis=0)) / np.abs(values[-1])
    assert np.all(steps[1] < steps[0] + 1e-4)  # contracting
    assert np.all(steps[-1] < 5e-3)  # target terms settled to well under 1 %


def test_bound_current_operator_wrapper_and_symmetry_of_flat_face():
    ps = build_panels(_pole(), None, panel_size=0.5e-3)
    op = bound_current_operator(ps, MU_R, [3e-3], [1e-3])
    np.testing.assert_allclose(op, MagnetisedPole(ps, MU_R).operator([3e-3], [1e-3]))
    # mu_r = 1: no magnetisation
    assert np.all(bound_current_operator(ps, 1.0, [3e-3], [1e-3]) == 0.0)


def test_panel_mutual_matches_filament_sum_far_away():
    ps = build_panels(_pole(), RING, panel_size=0.5e-3)
    r, z = np.array([20e-3, 3e-3]), np.array([30e-3, 20e-3])
    direct = np.einsum(
        "pq,npq->np", ps.w, mutual(ps.r[None], ps.z[None], r[:, None, None], z[:, None, None])
    )
    # one-point rule beyond 30 panel lengths (moment-preserving radius): error ~ (L / d)^2 / 4
    np.testing.assert_allclose(panel_mutual(ps, r, z), direct, rtol=1e-3)
    # near a panel the graded rule stays finite and continuous across it (log singularity)
    m_on = panel_mutual(ps, [10e-3], [-20e-3])
    m_off = panel_mutual(ps, [10.001e-3], [-20e-3])
    assert np.all(np.isfinite(m_on)) and np.allclose(m_on, m_off, rtol=1e-2, atol=1e-12)


def test_input_errors():
    ps = build_panels(_pole(), None, panel_size=0.5e-3)
    with pytest.raises(DesignError, match="relative_permeability"):
        MagnetisedPole(ps, 0.5)
    with pytest.raises(DesignError, match="panel_size"):
        build_panels(_pole(), RING, panel_size=-1.0)
    bad = Ring(
        inner_radius=4e-3,
        outer_radius=11e-3,
        depth=3e-3,
        conductivity=1.0,
        temperature_coefficient=0.0,
    )
    with pytest.raises(DesignError, match="ring"):
        build_panels(_pole(), bad)
