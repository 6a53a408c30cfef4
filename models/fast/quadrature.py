"""Quadrature over straight panels: Gauss-Legendre rules, graded composite rules and ``_Rule``.

The rule of a (panel, point) pair depends on the point's distance from the panel: the midpoint
(moment radius) far away, 2 or 4 Gauss points nearer, and closer than ``_NEAR`` panel lengths a
composite Gauss rule graded geometrically toward the point of the panel nearest the point.
"""

from __future__ import annotations

import functools

import numpy as np
from scipy.special import ellipe, ellipkm1

# Tiers of the panel integration: a point further than _FAR * length from the panel midpoint uses
# the midpoint; then 2 and 4 Gauss points; closer than _NEAR * length: graded composite rule.
_FAR = 30.0
_MID2 = 6.0
_NEAR = 2.0
_AXIS = 4.0  # panels with mid_r < _AXIS * length never use the midpoint rule
_GRADE = 0.3  # ratio of successive intervals of the graded rule
_GAUSS_GRADED = 5  # Gauss points per interval of the graded rule
_MAX_LEVELS = 14
_EPS_FIELD = 1e-7  # innermost interval of the graded rule (fraction of the panel) for points on it
_TEST_NODES = 5  # Gauss points per panel for the Galerkin average


def _read_only(*arrays):
    for a in arrays:
        a.setflags(write=False)
    return arrays


@functools.cache
def _gauss01_rule(n):
    x, w = np.polynomial.legendre.leggauss(n)
    return _read_only(0.5 * (x + 1.0), 0.5 * w)


def _gauss01(n):
    """Gauss-Legendre nodes on [0, 1] and weights summing to 1 (cached, read-only arrays)."""
    return _gauss01_rule(int(n))


@functools.cache
def _graded01(levels=6, n=3):
    """Composite Gauss rule on [0, 1] graded geometrically toward 0 (for a log singularity).

    Cached; the arrays are read-only.
    """
    x, w = _gauss01(n)
    edges = np.concatenate([[0.0], _GRADE ** np.arange(levels, -1, -1)])
    lo, hi = edges[:-1], edges[1:]
    return _read_only(
        (lo[:, None] + (hi - lo)[:, None] * x).ravel(), ((hi - lo)[:, None] * w).ravel()
    )


def _moment_radius(panels):
    """Radius [m] of the one filament with the panel's dipole moment: r^2 = <r^2> over the panel.

    Used for the one-point (far) rule: the far field of a ribbon is set by its moment
    pi <r^2>, which the midpoint alone misses by pi (length t_r)^2 / 12.
    """
    return np.sqrt(panels.mid_r**2 + (panels.length * panels.tr) ** 2 / 12.0)


# ------------------------------------------------------------------------------------------------
# Integration of a kernel over panels


#: _GRADE ** j for the interval numbers j of the graded rule (the same numbers as the power).
_GRADE_POWERS = _read_only(_GRADE ** np.arange(_MAX_LEVELS + 3))[0]


def _graded_nodes(ar, az, br, bz, pr, pz, eps, n_gauss=_GAUSS_GRADED):
    """Composite Gauss rule on segments a -> b graded toward the point of each nearest to p.

    Returns node (r, z), weight (fraction of the segment length) and the owning pair index.
    The innermost interval on each side of the nearest point has the size max(d, eps) (relative
    to the segment), d the relative distance of p from the segment, so the rule is symmetric
    about a point on the segment.
    """
    dr, dz = br - ar, bz - az
    length = np.hypot(dr, dz)
    s = np.clip(((pr - ar) * dr + (pz - az) * dz) / length**2, 0.0, 1.0)
    d = np.hypot(pr - (ar + s * dr), pz - (az + s * dz)) / length
    t = np.maximum(d, eps)
    sides = np.stack([s, 1.0 - s], axis=1)  # (n, 2): extent of the panel on each side of s
    ln_g = np.log(_GRADE)
    ratio = t[:, None] / np.maximum(sides, t[:, None])
    lev = np.where(
        sides > t[:, None], np.clip(np.ceil(np.log(ratio) / ln_g), 1, _MAX_LEVELS), 0
    ).astype(int)
    count = np.where(sides > 0.0, lev + 1, 0)  # graded intervals + innermost
    owner_side = np.repeat(np.arange(2 * len(s)), count.ravel())
    pair = owner_side // 2
    side = owner_side % 2
    start = np.concatenate([[0], np.cumsum(count.ravel())[:-1]])
    j = np.arange(owner_side.size) - np.repeat(start, count.ravel())
    a = sides.ravel()[owner_side]
    n_lev = lev.ravel()[owner_side]
    tt = t[pair]
    hi = a * _GRADE_POWERS[j]  # a * _GRADE**j
    lo = np.where(j == n_lev - 1, tt, a * _GRADE_POWERS[j + 1])
    inner = j == n_lev  # innermost [0, t]; also the single interval [0, a] when a <= t
    hi = np.where(inner, np.where(n_lev == 0, a, tt), hi)
    lo = np.where(inner, 0.0, lo)
    x, w = _gauss01(n_gauss)
    u = lo[:, None] + (hi - lo)[:, None] * x[None, :]
    sgn = np.where(side == 0, -1.0, 1.0)
    sn = s[pair][:, None] + sgn[:, None] * u
    node_r = ar[pair][:, None] + dr[pair][:, None] * sn
    node_z = az[pair][:, None] + dz[pair][:, None] * sn
    weight = (hi - lo)[:, None] * w[None, :]
    own = np.repeat(pair, x.size)
    return node_r.ravel(), node_z.ravel(), weight.ravel(), own


def _geometry(panels):
    """Per-panel arrays used by the rules: ends, end differences and the (n_panels, n) nodes of
    the 1-, 2- and 4-point rules (the 1-point rule at the moment radius, ``_moment_radius``)."""
    (r0, z0), (r1, z1) = panels.start, panels.end
    dr, dz = r1 - r0, z1 - z0
    nodes = {}
    for n in (1, 2, 4):
        x, _ = _gauss01(n)
        nz = z0[:, None] + dz[:, None] * x[None, :]
        if n == 1:
            nr = _moment_radius(panels)[:, None]
        else:
            nr = r0[:, None] + dr[:, None] * x[None, :]
        nodes[n] = nr, nz
    return r0, z0, r1, z1, dr, dz, nodes


class _Rule:
    """Quadrature nodes of a set of (panel, point) pairs, as flat arrays.

    The kernel is evaluated between each node (node_r, node_z) and the point of pair ``owner``;
    ``segments`` say how the weighted values are summed per pair: ("gauss", sel, lo, hi, w) for
    pairs ``sel`` whose nodes lo:hi form a (len(sel), len(w)) block of a Gauss rule, and
    ("graded", sel, lo, hi, (local_owner, weight)) for the graded composite rules.
    """

    __slots__ = ("node_r", "node_z", "owner", "n_pairs", "segments")

    def __init__(self, node_r, node_z, owner, n_pairs, segments):
        self.node_r, self.node_z, self.owner = node_r, node_z, owner
        self.n_pairs, self.segments = n_pairs, segments

    def apply(self, values):
        """Per-pair sums of weight * value, for each array of kernel values at the nodes."""
        out = []
        for v in values:
            o = np.zeros(self.n_pairs)
            for kind, sel, lo, hi, w in self.segments:
                if kind == "gauss":
                    o[sel] = v[lo:hi].reshape(sel.size, w.size) @ w
                else:
                    own, weight = w
                    o[sel] = np.bincount(own, weights=weight * v[lo:hi], minlength=sel.size)
            out.append(o)
        return out


def _rule(panels, pidx, pr, pz, eps=_EPS_FIELD, n_gauss=_GAUSS_GRADED, geometry=None, rho=None):
    """Quadrature rule (``_Rule``) of every (panel ``pidx[k]``, point (pr[k], pz[k])) pair.

    The rule per pair depends on the distance of the point from the panel: the midpoint (moment
    radius) further than ``_FAR`` lengths, 2 and 4 Gauss points down to ``_MID2`` and ``_NEAR``
    lengths, nearer the graded rule of ``_graded_nodes``. ``rho`` may be given: the distance of
    each point from its panel's midpoint in panel lengths.
    """
    r0, z0, r1, z1, dr, dz, nodes = _geometry(panels) if geometry is None else geometry
    if rho is None:
        rho = np.hypot(pr - panels.mid_r[pidx], pz - panels.mid_z[pidx]) / panels.length[pidx]
    # Near the axis the flux of a panel grows as r^2 along it: the midpoint alone is not enough.
    axis = (panels.mid_r < _AXIS * panels.length)[pidx]
    rho = np.where((rho >= _FAR) & axis, _FAR * 0.999, rho)
    node_r, node_z, owner, segments, n_nodes = [], [], [], [], 0
    for lo, hi, n in ((_FAR, np.inf, 1), (_MID2, _FAR, 2), (_NEAR, _MID2, 4)):
        sel = np.flatnonzero((rho >= lo) & (rho < hi))
        if sel.size == 0:
            continue
        w = _gauss01(n)[1]
        p = pidx[sel]
        nr, nz = nodes[n][0][p], nodes[n][1][p]
        node_r.append(nr.ravel())
        node_z.append(nz.ravel())
        owner.append(np.repeat(sel, n))
        segments.append(("gauss", sel, n_nodes, n_nodes + nz.size, w))
        n_nodes += nz.size
    sel = np.flatnonzero(rho < _NEAR)
    if sel.size:
        p = pidx[sel]
        nr, nz, nw, own = _graded_nodes(r0[p], z0[p], r1[p], z1[p], pr[sel], pz[sel], eps, n_gauss)
        node_r.append(nr)
        node_z.append(nz)
        owner.append(sel[own])
        segments.append(("graded", sel, n_nodes, n_nodes + nz.size, (own, nw)))
    if not segments:
        empty = np.zeros(0)
        return _Rule(empty, empty, np.zeros(0, dtype=np.intp), pidx.size, [])
    return _Rule(
        np.concatenate(node_r), np.concatenate(node_z), np.concatenate(owner), pidx.size, segments
    )


def _integrate(panels, pidx, pr, pz, kernel, eps=_EPS_FIELD, n_gauss=_GAUSS_GRADED):
    """Sum over panel nodes of w * kernel(node_r, node_z, point_r, point_z) for each pair.

    ``pidx`` are panel indices and (pr, pz) points, all 1-D of equal length. ``kernel`` returns a
    tuple of arrays. The rule per pair depends on the distance of the point from the panel.
    """
    pidx = np.asarray(pidx)
    pr = np.asarray(pr, dtype=float)
    pz = np.asarray(pz, dtype=float)
    rule = _rule(panels, pidx, pr, pz, eps, n_gauss)
    return rule.apply(kernel(rule.node_r, rule.node_z, pr[rule.owner], pz[rule.owner]))


# Closer than this (1 - m = alpha^2 / beta^2 below it) the kernels are re-evaluated with
# K(m) from ``ellipkm1(1 - m)``, 1 - m formed without cancellation, so that a point within
# 1e-8 radii of a filament keeps its digits.
_P_NEAR = 1e-2


def _near_parts(a, z0, r, z):
    """alpha^2, beta^2, p = 1 - m, m, K, E for coaxial geometry, accurate for p -> 0."""
    zeta2 = (z - z0) ** 2
    alpha2 = (a - r) ** 2 + zeta2
    beta2 = (a + r) ** 2 + zeta2
    p = alpha2 / beta2
    m = 1.0 - p
    return alpha2, beta2, p, m, ellipkm1(p), ellipe(m)
