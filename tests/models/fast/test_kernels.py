"""The compiled kernels (models.fast.kernels) against general-purpose references and themselves.

References: scipy.special.ellipk / ellipe (the complete elliptic integrals, parameter m) and
scipy.integrate.quad (the integral of a kernel along a panel). Internal identities: the
vectorised block equals the adaptive scalar kernel; a cell's coupling to a panel is the average
of its Gauss nodes'; each compiled function is compiled for one signature.
"""

from __future__ import annotations

import warnings

import numba
import numpy as np
import pytest
from scipy.integrate import IntegrationWarning, quad
from scipy.special import ellipe, ellipk, ellipkm1

from models import evaluate, load_design
from models.fast import kernels as K
from models.fast.filaments import loop_field, mutual, mutual_dz
from optim.demo import DEMO_DESIGN
from tests.models.fast.loops import loop_field as textbook_field
from tests.models.fast.loops import maxwell_mutual


def test_elliptic_integrals_match_scipy():
    """K and E by the series (m < 0.05) and the arithmetic-geometric mean, against scipy, from
    m = 1e-12 to 1 - 1e-14 (1 - m passed exactly, as the kernels form it)."""
    m = np.concatenate([np.logspace(-12, -0.01, 300), 1.0 - np.logspace(-14, -1, 200)])
    p = 1.0 - m
    for mi, pi in zip(m, p, strict=True):
        k, e = K._ellip_ke(pi, mi)
        k_ref = ellipkm1(pi) if pi < 0.5 else ellipk(mi)
        assert k == pytest.approx(k_ref, rel=2e-15, abs=0)
        assert e == pytest.approx(ellipe(mi), rel=1e-14, abs=0)  # E = K (1 - s): eps K


def test_fixed_eight_steps_converge_down_to_the_bound():
    """The vectorised block runs the mean for eight steps; from 1 - m = 1 to _P_FIXED the eighth
    step's c = (a - b) / 2 is below 1e-9 a, so the steps after it change a by below 1e-18 (the
    error after a step is about c^2 / a) and the sum of E by less (King 1924; A&S 17.6)."""
    for p in np.logspace(np.log10(K._P_FIXED), 0.0, 200):
        a, b = 1.0, np.sqrt(p)
        for _ in range(8):
            c = 0.5 * (a - b)
            a, b = 0.5 * (a + b), np.sqrt(a * b)
        assert c <= 1e-9 * a, p


def _random_pairs(rng, n):
    a = rng.uniform(1e-4, 2e-2, n)
    r = rng.uniform(1e-4, 2e-2, n)
    z0 = rng.uniform(-1e-2, 1e-2, n)
    z = rng.uniform(-1e-2, 1e-2, n)
    # nearly coincident, near the axis, in one plane, and a zero radius
    r[:50] = a[:50] * (1.0 + rng.uniform(-1e-6, 1e-6, 50))
    z[:50] = z0[:50] + rng.uniform(-1e-8, 1e-8, 50)
    r[50:100] = a[50:100] * 1e-8
    z[100:150] = z0[100:150]
    r[150] = 0.0
    return a, z0, r, z


def test_vectorised_block_equals_scalar_kernel():
    rng = np.random.default_rng(3)
    a, z0, r, z = _random_pairs(rng, 20000)
    block = [np.empty(a.size) for _ in range(4)]
    K._pairs_block(a, z0, r, z, a.size, *block)
    scalar = np.array([K._pair(*x) for x in zip(a, z0, r, z, strict=True)]).T
    for got, want in zip(block, scalar, strict=True):
        scale = np.maximum(np.abs(want), 1e-12 * np.nanmax(np.abs(want)))
        assert np.nanmax(np.abs(got - want) / scale) < 1e-12
        assert np.array_equal(np.isnan(got), np.isnan(want))


def _panel(r0, z0, r1, z1):
    from types import SimpleNamespace

    length = np.hypot(r1 - r0, z1 - z0)
    return SimpleNamespace(
        start=(np.array([r0]), np.array([z0])),
        end=(np.array([r1]), np.array([z1])),
        mid_r=np.array([0.5 * (r0 + r1)]),
        mid_z=np.array([0.5 * (z0 + z1)]),
        length=np.array([length]),
        tr=np.array([(r1 - r0) / length]),
        tz=np.array([(z1 - z0) / length]),
        n=1,
    )


@pytest.mark.parametrize(
    ("point", "tol"),
    [
        ((8e-3, 40e-3), 3e-3),  # 40 lengths: the one-point (moment radius) rule
        ((8e-3, 10e-3), 1e-4),  # 10 lengths: two Gauss points
        ((8e-3, 3e-3), 1e-5),  # 4 lengths: four Gauss points
        ((6.0e-3, 1.0e-3), 1e-5),  # graded rule
        ((5.3e-3, 0.2e-3), 1e-5),
        ((5.5e-3, 1e-9), 2e-5),  # on the panel (the log singularity)
    ],
    ids=["far", "2-point", "4-point", "graded", "graded, close", "on the panel"],
)
def test_panel_sums_match_quadrature(point, tol):
    """The integral over a face panel (5-6 mm at z = 0, 1 A along it) of the flux linking a
    filament at the point, its z derivative (the closed form of mutual_dz) and the
    panel-averaged tangential field of the filament, against scipy.integrate.quad of the
    filament formulas along the panel; and the panel's field at the point. The tolerance is the
    rule's own at that distance (the model's tiers, models.fast.quadrature)."""
    panel = _panel(5e-3, 0.0, 6e-3, 0.0)
    pr, pz = point
    rho = np.hypot(pr - panel.mid_r[0], pz - panel.mid_z[0]) / panel.length[0]
    src = K.panel_pair_sums(K.SOURCE, panel, [0], [pr], [pz], [rho], 1e-7, 5)[:, 0]
    fld = K.panel_pair_sums(K.FIELD, panel, [0], [pr], [pz], [rho], 1e-7, 5)[:, 0]

    def along(f):
        pts = [min(max(pr, 5e-3 + 1e-12), 6e-3 - 1e-12)] if pz < 1e-3 else None
        with warnings.catch_warnings():  # quad's round-off notes where the kernel is log-singular
            warnings.simplefilter("ignore", IntegrationWarning)
            return quad(f, 5e-3, 6e-3, points=pts, limit=200, epsabs=0, epsrel=1e-9)[0] / 1e-3

    m_ref = along(lambda x: float(mutual(x, 0.0, pr, pz)))
    dz_ref = along(lambda x: float(mutual_dz(pr, pz, x, 0.0)))
    bt_ref = along(lambda x: float(loop_field(pr, pz, x, 0.0)[0]))
    br_ref = along(lambda x: float(loop_field(x, 0.0, pr, pz)[0]))
    bz_ref = along(lambda x: float(loop_field(x, 0.0, pr, pz)[1]))
    assert src[0] == pytest.approx(m_ref, rel=tol)
    assert src[1] == pytest.approx(dz_ref, rel=tol)
    assert src[2] == pytest.approx(bt_ref, rel=tol)
    assert fld[0] == pytest.approx(br_ref, rel=tol)
    assert fld[1] == pytest.approx(bz_ref, rel=tol)


def test_cell_coupling_is_the_average_of_its_gauss_nodes():
    """cell_panel_sums: a cell near a panel is the mean of its 2 x 2 Gauss nodes' sums, a cell
    far from every panel its centre's."""
    panel = _panel(5e-3, 0.0, 6e-3, 0.0)
    rc, zc = np.array([5.4e-3, 30e-3]), np.array([0.6e-3, 60e-3])
    dr, dz = np.array([0.4e-3, 0.4e-3]), np.array([0.3e-3, 0.3e-3])
    got = K.cell_panel_sums(panel, rc, zc, dr, dz, 2, 6.0)
    g = 0.5 / np.sqrt(3.0)
    nr = (rc[0] + dr[0] * np.array([-g, -g, g, g])).tolist()
    nz = (zc[0] + dz[0] * np.array([-g, g, -g, g])).tolist()
    rho = np.hypot(np.array(nr) - 5.5e-3, np.array(nz)) / 1e-3
    near = K.panel_pair_sums(K.SOURCE, panel, [0] * 4, nr, nz, rho, 1e-7, 5).mean(axis=1)
    rho_far = np.hypot(rc[1] - 5.5e-3, zc[1]) / 1e-3
    far = K.panel_pair_sums(K.SOURCE, panel, [0], [rc[1]], [zc[1]], [rho_far], 1e-7, 5)[:, 0]
    np.testing.assert_allclose(got[:, 0, 0], near, rtol=1e-14)
    np.testing.assert_allclose(got[:, 1, 0], far, rtol=1e-14)


def test_mutual_blocks_equal_the_whole_matrix():
    """cell_mutual_matrix, assembled from blocks of each part's cells (cell_mutual within a
    part, cell_mutual_cross between two) and reused from its cache at a second gap (the coil
    does not move), equals cell_mutual on all the cells at once, bit for bit (the same pairs,
    the same arithmetic): an internal identity, no outside reference."""
    from models.design import with_gap
    from models.evaluate import DEFAULT_FINENESS
    from models.fast import circuit

    design = load_design(DEMO_DESIGN)
    for gap_mm in (1.5, 2.25, 1.5):  # the third: every block from the cache
        cells = circuit.build_cells(with_gap(design, gap_mm), DEFAULT_FINENESS)
        rows = cells.part == circuit.TARGET
        M, D = circuit.cell_mutual_matrix(cells, dz_rows=rows)
        M_all, D_all = K.cell_mutual(cells.r0, cells.r1, cells.z0, cells.z1, rows)
        assert np.array_equal(M - np.diag(np.diag(M)), M_all)
        assert np.array_equal(D, D_all)
        assert M.flags.writeable and D.flags.writeable  # the caller's own arrays


def test_panel_rows_by_part_equal_one_call():
    """The circuit's cell-panel sums, taken part by part and reused from its cache, equal one
    cell_panel_sums call on all the cells, bit for bit (each row is computed on its own): an
    internal identity, no outside reference."""
    import importlib

    from models.design import with_gap
    from models.fast import circuit

    ev = importlib.import_module("models.evaluate")
    design = load_design(DEMO_DESIGN)
    fine = ev.DEFAULT_FINENESS
    panels = ev.pole_model_for(design, fine).panels
    for gap_mm in (1.5, 2.25, 1.5):
        cells = circuit.build_cells(with_gap(design, gap_mm), fine)
        got = circuit._cell_panel_rows(panels, cells, fine.iron_nodes, fine.iron_reach)
        want = K.cell_panel_sums(
            panels, cells.rc, cells.zc, cells.dr, cells.dz, fine.iron_nodes, fine.iron_reach
        )
        for g, w in zip(got, want, strict=True):
            assert np.array_equal(g, w)


def test_each_kernel_compiled_once():
    """After an evaluation every compiled function holds one signature (a second one would mean
    an argument of another type, and a second compilation on every fresh install)."""
    evaluate(load_design(DEMO_DESIGN))
    for name in dir(K):
        f = getattr(K, name)
        if isinstance(f, numba.core.registry.CPUDispatcher):
            assert len(f.signatures) <= 1, (name, f.signatures)


# ------------------------------------------------------------------------------------------------
# The flat kernels on their own, against the loop formulas written afresh
# (tests/models/fast/loops.py: Maxwell's M, Smythe 1950 sec. 7.10; the loop field, Jackson 1999
# eq. 5.37) and against a product Gauss-Legendre rule (numpy, a general-purpose library).

_RNG_POINTS = np.random.default_rng(7).uniform(
    [1e-3, -5e-3, 1e-3, -5e-3], [20e-3, 5e-3, 20e-3, 5e-3], (40, 4)
)


def test_coaxial_pair_is_maxwells_mutual_and_its_derivative():
    r1, z1, r2, z2 = (np.ascontiguousarray(c) for c in _RNG_POINTS.T)
    m, dmdz = K.coaxial_pair(r1, z1, r2, z2)
    np.testing.assert_allclose(m, maxwell_mutual(r2, z2, r1, z1), rtol=1e-10)
    h = 1e-8  # central difference in z1 (calculus), error ~ h^2 M''' far below 1e-5
    fd = (maxwell_mutual(r2, z2, r1, z1 + h) - maxwell_mutual(r2, z2, r1, z1 - h)) / (2 * h)
    np.testing.assert_allclose(dmdz, fd, rtol=1e-5, atol=1e-12 * np.abs(fd).max())


def test_loop_field_flat_is_the_loop_field():
    a, z0, r, z = (np.ascontiguousarray(c) for c in _RNG_POINTS.T)
    br, bz = K.loop_field_flat(a, z0, r, z)
    er, ez = textbook_field(a, z0, r, z)
    scale = np.hypot(er, ez)
    assert np.all(np.abs(br - er) < 1e-10 * scale) and np.all(np.abs(bz - ez) < 1e-10 * scale)


def _log_mean_by_gauss(rect1, rect2, n=10):
    """Mean of ln|p - q| over two rectangles ((r0, r1), (z0, z1)) by a 4-D Gauss product rule."""
    x, w = np.polynomial.legendre.leggauss(n)
    x, w = 0.5 * (x + 1.0), 0.5 * w

    def nodes(lo, hi):
        return lo + (hi - lo) * x

    (a1, b1), (c1, d1) = rect1
    (a2, b2), (c2, d2) = rect2
    pr, pz, qr, qz = np.meshgrid(
        nodes(a1, b1), nodes(c1, d1), nodes(a2, b2), nodes(c2, d2), indexing="ij"
    )
    ww = np.einsum("i,j,k,l->ijkl", w, w, w, w)
    return float((ww * 0.5 * np.log((pr - qr) ** 2 + (pz - qz) ** 2)).sum())


@pytest.mark.parametrize(
    ("rect1", "rect2"),
    [
        (((1e-3, 2e-3), (0.0, 0.5e-3)), ((4e-3, 5e-3), (1e-3, 2e-3))),
        (((1e-3, 1.5e-3), (0.0, 3e-3)), ((1e-3, 1.5e-3), (5e-3, 6e-3))),
    ],
)
def test_rect_log_mean_flat_is_the_mean_log_distance(rect1, rect2):
    # Separated rectangles: ln rho is smooth on them, and a 10^4-point Gauss product rule is
    # exact to far below the tolerance; the derivative by a central difference in z1.
    args = [np.array([v]) for v in (*rect1[0], *rect1[1], *rect2[0], *rect2[1])]
    ln_g, d_ln_g = K.rect_log_mean_flat(*args)
    assert ln_g[0] == pytest.approx(_log_mean_by_gauss(rect1, rect2), abs=1e-9)
    h = 1e-7
    up = ((rect1[0]), (rect1[1][0] + h, rect1[1][1] + h))
    down = ((rect1[0]), (rect1[1][0] - h, rect1[1][1] - h))
    fd = (_log_mean_by_gauss(up, rect2) - _log_mean_by_gauss(down, rect2)) / (2 * h)
    assert d_ln_g[0] == pytest.approx(fd, rel=1e-5)
