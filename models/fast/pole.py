"""Linear magnetisable (laminated, non-conducting) pole as bound azimuthal sheet currents.

The magnetised iron is replaced by an azimuthal surface current K on its meridian contour (the
boundary of the pole in the r-z half plane), split into straight panels with a constant K on each.
A panel with total current I_p = K_p * length_p is a continuous ribbon of coaxial filaments; the
functions here give its field, its mutual inductance with a filament and the derivative of that
mutual inductance, integrated accurately even when the filament is close to the panel.

Conventions: axis z, pole face z = 0, core z < 0. The contour runs from the axis on the face,
along the face (down and round the groove), down the side, along the back and back to the axis.
Each panel carries the unit tangent t = phi x n (n the outward normal), which is the direction of
travel along that contour; on the face t = +r. Everything is SI: lengths [m], currents [A],
inductance [H], field per ampere [T/A].

Notes
-----
Integral equation (derived here from the interface conditions). Across a sheet of azimuthal
current K with outward normal n, the tangential flux density jumps by B_t,out - B_t,in = mu0 K;
continuity of H_t with B_in = mu_r mu0 H_in gives B_t,in = mu_r B_t,out. Writing B_t,avg for
(B_t,out + B_t,in)/2, which is the tangential field at the boundary point of all currents (sources
and every sheet, the sheet's own principal value included)::

    mu0 K = (1 - mu_r) B_t,out = -2 lambda B_t,avg,      lambda = (mu_r - 1) / (mu_r + 1)

(the same second-kind boundary integral equation as for the magnetic surface charge of a
magnetisable body, e.g. Jackson, *Classical Electrodynamics*, 3rd ed., sec. 5.9-5.12, written for
the equivalent current). With piecewise-constant K and Galerkin testing (the equation averaged over
each panel)::

    (mu0 / length_i) I_i + 2 lambda sum_p G_ip I_p = -2 lambda <B_t,source>_i

G_ip is the panel-averaged tangential field on panel i of panel p carrying 1 A. The field of a loop
is that of Smythe (``models.fast.filaments.loop_field``). Near and self terms are integrated with
composite Gauss-Legendre rules graded geometrically toward the point of the panel nearest the field
point; the grading is symmetric about a point on the panel itself, so the principal value of the
1/rho (two-dimensional) part is taken exactly and the log singularity of a curved sheet is
integrated.

Implementation (speed only; the numbers are those of the direct evaluation): every rule is built
once as flat arrays of nodes and each kernel is evaluated once over them, in cache-sized blocks;
the rule of a set of points is kept (by content) for the next call with the same points, since the
circuit asks for the operator, ``panel_mutual`` and ``panel_mutual_dz`` at the same filaments, and
the last two come from one pass that shares the near-range terms.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np
from scipy.constants import mu_0
from scipy.linalg import lu_factor, lu_solve
from scipy.special import ellipe, ellipkm1

from models.errors import DesignError
from models.fast.filaments import loop_field, mutual_pair

__all__ = [
    "PanelSet",
    "MagnetisedPole",
    "build_panels",
    "build_panels_contour",
    "bound_current_operator",
    "panel_field",
    "panel_mutual",
    "panel_mutual_dz",
    "DEFAULT_PANEL_SIZE",
]

#: Panel size at the pole face [m] recommended for design searches (measured in tests/test_pole.py).
DEFAULT_PANEL_SIZE = 0.25e-3
#: Geometric growth of panel size away from corners and the face (ratio of neighbours) [-].
DEFAULT_GROWTH = 1.25
#: Corner panel size as a fraction of the face panel size [-].
DEFAULT_CORNER_FRACTION = 0.125

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


@dataclass(frozen=True)
class PanelSet:
    """Straight panels of the meridian contour, each a ribbon of coaxial filaments.

    Attributes
    ----------
    r, z : ndarray, shape (n_panels, q)
        Gauss-Legendre nodes along each panel [m]: the panel as q filaments.
    w : ndarray, shape (n_panels, q)
        Fraction of the panel current at each node (each row sums to 1).
    mid_r, mid_z : ndarray, shape (n_panels,)
        Panel midpoints [m].
    length : ndarray, shape (n_panels,)
        Panel lengths [m].
    tr, tz : ndarray, shape (n_panels,)
        Unit tangent t = phi x n (n the outward normal) [-]; also the direction of the contour.

    Notes
    -----
    The q-node representation is adequate for a filament further than about one panel length
    from the panel; closer, use ``panel_mutual``, ``panel_mutual_dz`` and ``panel_field``.
    """

    r: np.ndarray
    z: np.ndarray
    w: np.ndarray
    mid_r: np.ndarray
    mid_z: np.ndarray
    length: np.ndarray
    tr: np.ndarray
    tz: np.ndarray

    @property
    def n(self) -> int:
        """Number of panels."""
        return int(self.length.shape[0])

    @property
    def start(self) -> tuple[np.ndarray, np.ndarray]:
        """(r, z) of each panel's first end [m]."""
        return self.mid_r - 0.5 * self.length * self.tr, self.mid_z - 0.5 * self.length * self.tz

    @property
    def end(self) -> tuple[np.ndarray, np.ndarray]:
        """(r, z) of each panel's second end [m]."""
        return self.mid_r + 0.5 * self.length * self.tr, self.mid_z + 0.5 * self.length * self.tz


# ------------------------------------------------------------------------------------------------
# Meshing


def _check_positive(name, value):
    if not (isinstance(value, (int, float, np.floating)) and np.isfinite(value) and value > 0):
        raise DesignError(f"{name} = {value!r}: must be a number > 0 [m]")
    return float(value)


def _panels_from_nodes(node_r, node_z, q):
    """PanelSet from the ordered contour nodes (panel ends)."""
    r0, z0, r1, z1 = node_r[:-1], node_z[:-1], node_r[1:], node_z[1:]
    length = np.hypot(r1 - r0, z1 - z0)
    tr = (r1 - r0) / length
    tz = (z1 - z0) / length
    s, w = _gauss01(q)
    r = r0[:, None] + (r1 - r0)[:, None] * s[None, :]
    z = z0[:, None] + (z1 - z0)[:, None] * s[None, :]
    return PanelSet(
        r=r,
        z=z,
        w=np.broadcast_to(w, r.shape).copy(),
        mid_r=0.5 * (r0 + r1),
        mid_z=0.5 * (z0 + z1),
        length=length,
        tr=tr,
        tz=tz,
    )


@functools.lru_cache(maxsize=1)
def _edge_parameter():
    """Parameter values along an edge at which the size function is sampled (cached, read-only)."""
    g = np.geomspace(1e-9, 1.0, 400)
    return _read_only(np.unique(np.concatenate([np.linspace(0.0, 1.0, 2001), g, 1.0 - g])))[0]


def _split_edge(a, b, size_fn):
    """Points along the segment a -> b spaced by the local size function (ends included)."""
    length = float(np.hypot(b[0] - a[0], b[1] - a[1]))
    s = _edge_parameter()
    pr = a[0] + (b[0] - a[0]) * s
    pz = a[1] + (b[1] - a[1]) * s
    h = size_fn(pr, pz)
    inv = 1.0 / h
    cum = np.concatenate([[0.0], np.cumsum(0.5 * (inv[1:] + inv[:-1]) * np.diff(s) * length)])
    n = max(1, int(np.ceil(cum[-1] - 1e-9)))
    sn = np.interp(np.linspace(0.0, cum[-1], n + 1), cum, s)
    sn[0], sn[-1] = 0.0, 1.0
    return a[0] + (b[0] - a[0]) * sn, a[1] + (b[1] - a[1]) * sn


def _mesh(vertices, size_fn, q):
    nr, nz = [vertices[0][0]], [vertices[0][1]]
    for a, b in zip(vertices[:-1], vertices[1:], strict=True):
        er, ez = _split_edge(a, b, size_fn)
        nr.extend(er[1:])
        nz.extend(ez[1:])
    return _panels_from_nodes(np.asarray(nr), np.asarray(nz), q)


def _size_function(panel_size, growth, max_size, corners, face_z=None):
    """h(r, z) = min(max_size, h_c + (g - 1) |x - c| over corners, face term) [m]."""
    slope = growth - 1.0

    def size(pr, pz):
        h = np.full(np.shape(pr), max_size, dtype=float)
        if h.size == 0:
            return h
        # A term that is above max_size at every point (judged from the points' bounding box,
        # with a margin far above rounding) cannot lower h and is skipped.
        r_lo, r_hi, z_lo, z_hi = np.min(pr), np.max(pr), np.min(pz), np.max(pz)

        def reaches(h0, dist):
            return h0 + slope * (1.0 - 1e-9) * dist <= max_size

        if face_z is not None and reaches(panel_size, max(0.0, z_lo - face_z, face_z - z_hi)):
            h = np.minimum(h, panel_size + slope * np.abs(pz - face_z))
        for (cr, cz), hc in corners:
            box = float(np.hypot(max(0.0, r_lo - cr, cr - r_hi), max(0.0, z_lo - cz, cz - z_hi)))
            if reaches(hc, box):
                h = np.minimum(h, hc + slope * np.hypot(pr - cr, pz - cz))
        return h

    return size


def build_panels_contour(
    vertices,
    panel_size,
    corner_size=None,
    growth=DEFAULT_GROWTH,
    max_size=None,
    nodes=4,
    corner_angle_deg=20.0,
    refine=(),
):
    """Panels on a closed polygonal meridian contour.

    Parameters
    ----------
    vertices : sequence of (r, z)
        Polygon vertices [m] from the axis (r = 0) at the front, round the body, back to the axis;
        the body lies to the right of the direction of travel (either sense is accepted and
        oriented). The closing segment on the axis is not a panel.
    panel_size : float
        Largest panel length [m] (unless ``max_size`` is given, which then caps it).
    corner_size : float, optional
        Panel length [m] at vertices where the contour turns by more than ``corner_angle_deg``;
        default ``panel_size / 8``. Sizes grow geometrically by ``growth`` away from corners.
    growth : float
        Ratio of neighbouring panel lengths away from corners (> 1).
    max_size : float, optional
        Cap on the panel length [m]; default ``panel_size``.
    nodes : int
        Gauss-Legendre nodes per panel in ``PanelSet.r, z, w``.
    refine : sequence of (r, z, size)
        Extra local sizes [m]: the panel length is at most size + (growth - 1) * distance from
        (r, z), e.g. under a source filament close to the body.

    Returns
    -------
    PanelSet
    """
    panel_size = _check_positive("panel_size", panel_size)
    v = [(float(a), float(b)) for a, b in vertices]
    if len(v) < 3:
        raise DesignError(f"vertices = {vertices!r}: need at least 3 (r, z) points")
    if abs(v[0][0]) > 0 or abs(v[-1][0]) > 0 or any(p[0] < 0 for p in v):
        raise DesignError(
            f"vertices = {vertices!r}: must start and end on the axis (r = 0) and have r >= 0"
        )
    rr = np.array([p[0] for p in v])
    zz = np.array([p[1] for p in v])
    area = 0.5 * np.sum(rr * np.roll(zz, -1) - np.roll(rr, -1) * zz)
    if area > 0:  # counter-clockwise in (r, z): reverse so the body is on the right
        v = v[::-1]
    max_size = panel_size if max_size is None else _check_positive("max_size", max_size)
    corner_size = panel_size / 8.0 if corner_size is None else corner_size
    corner_size = _check_positive("corner_size", corner_size)
    if not growth > 1.0:
        raise DesignError(f"growth = {growth!r}: must be > 1")
    corners = []
    for k in range(1, len(v) - 1):
        d1 = np.subtract(v[k], v[k - 1])
        d2 = np.subtract(v[k + 1], v[k])
        cosang = np.dot(d1, d2) / (np.linalg.norm(d1) * np.linalg.norm(d2))
        if np.degrees(np.arccos(np.clip(cosang, -1.0, 1.0))) > corner_angle_deg:
            corners.append((v[k], corner_size))
    corners += [((float(r), float(z)), _check_positive("refine size", h)) for r, z, h in refine]
    size = _size_function(panel_size, growth, min(max_size, panel_size), corners)
    return _mesh(v, size, nodes)


def pole_contour(pole, ring=None):
    """Vertices (r, z) [m] of the pole's meridian contour, groove included, axis to axis."""
    R, L = float(pole.radius), float(pole.length)
    v = [(0.0, 0.0)]
    if ring is not None:
        ri, ro, d = float(ring.inner_radius), float(ring.outer_radius), float(ring.depth)
        if not (0.0 < ri < ro < R and 0.0 < d < L):
            raise DesignError(
                f"ring = (inner {ri!r}, outer {ro!r}, depth {d!r}) m: must satisfy "
                f"0 < inner < outer < pole radius (= {R!r}) and 0 < depth < pole length (= {L!r})"
            )
        v += [(ri, 0.0), (ri, -d), (ro, -d), (ro, 0.0)]
    v += [(R, 0.0), (R, -L), (0.0, -L)]
    return v


def build_panels(
    pole,
    ring=None,
    panel_size=None,
    *,
    corner_size=None,
    growth=DEFAULT_GROWTH,
    max_size=None,
    back_corner_size=None,
    nodes=4,
    refine=(),
):
    """Panels on the contour of a finite pole, with the ring's groove cut into its face.

    Parameters
    ----------
    pole : models.design.Pole
        Uses ``radius`` and ``length`` [m].
    ring : models.design.Ring, optional
        The groove r_i <= r <= r_o, -depth <= z <= 0 that the ring fills.
    panel_size : float, optional
        Panel length at the face [m]; default ``DEFAULT_PANEL_SIZE``.
    corner_size : float, optional
        Panel length [m] at the face corners (pole edge, groove edges) and the groove bottom
        corners; default ``panel_size / 8``.
    growth : float
        Ratio of neighbouring panel lengths away from the face and the corners.
    max_size : float, optional
        Largest panel [m] (far down the side and on the back); default
        ``max(panel_size, min(pole.radius / 4, 2.5 mm))``.
    back_corner_size : float, optional
        Panel length at the back corner [m]; default ``min(max_size, 4 panel_size)``.
    nodes : int
        Gauss-Legendre nodes per panel in ``PanelSet.r, z, w``.
    refine : sequence of (r, z, size)
        Extra local sizes [m] (see ``build_panels_contour``): a source filament at distance d
        from the iron is resolved when the panels under it are no longer than about 2 d.

    Returns
    -------
    PanelSet

    Notes
    -----
    Panel sizes follow h(x) = min(max_size, panel_size + (g - 1)|z|, h_c + (g - 1)|x - c|) over
    the corners c, i.e. a geometric growth with ratio g away from the face and the corners.
    """
    panel_size = DEFAULT_PANEL_SIZE if panel_size is None else panel_size
    panel_size = _check_positive("panel_size", panel_size)
    _check_positive("pole.radius", pole.radius)
    _check_positive("pole.length", pole.length)
    if not growth > 1.0:
        raise DesignError(f"growth = {growth!r}: must be > 1")
    if max_size is None:
        max_size = max(panel_size, min(pole.radius / 4.0, 2.5e-3))
    max_size = _check_positive("max_size", max_size)
    corner_size = panel_size / 8.0 if corner_size is None else corner_size
    corner_size = _check_positive("corner_size", corner_size)
    if back_corner_size is None:
        back_corner_size = min(max_size, 4.0 * panel_size)
    back_corner_size = _check_positive("back_corner_size", back_corner_size)
    v = pole_contour(pole, ring)
    R, L = float(pole.radius), float(pole.length)
    corners = [((R, 0.0), corner_size), ((R, -L), back_corner_size)]
    if ring is not None:
        corners += [(p, corner_size) for p in v[1:5]]
    corners += [((float(r), float(z)), _check_positive("refine size", h)) for r, z, h in refine]
    size = _size_function(panel_size, growth, max_size, corners, face_z=0.0)
    return _mesh(v, size, nodes)


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


#: mu0 / (2 pi) [H/m], the prefactor of Smythe's loop field.
_C_LOOP = (0.5e0 / np.pi) * mu_0
#: Kernels on flat arrays are evaluated in blocks of this many elements (temporaries stay in cache).
_BLOCK = 16384


def _blocked(kernel, n_out, *arrays):
    """``kernel(*arrays)`` for 1-D arrays of equal length, evaluated block by block."""
    n = arrays[0].size
    if n <= _BLOCK or any(a.ndim != 1 or a.size != n for a in arrays):
        return kernel(*arrays)
    out = [np.empty(n) for _ in range(n_out)]
    for lo in range(0, n, _BLOCK):
        hi = lo + _BLOCK
        for o, v in zip(out, kernel(*(a[lo:hi] for a in arrays)), strict=True):
            o[lo:hi] = v
    return out


def _loop_field(a, z0, r, z):
    """Smythe's loop field per ampere [T/A], as ``models.fast.filaments.loop_field``, with K(m) from
    ``ellipkm1(alpha^2 / beta^2)`` so that points within 1e-8 radii of the loop keep their digits.

    Off the axis only (r > 1e-6 a); points nearer the axis use ``loop_field``'s expansion.
    """
    args = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (a, z0, r, z)))
    shape = args[0].shape
    br, bz = _blocked(_loop_field_block, 2, *(x.ravel() for x in args))
    return br.reshape(shape), bz.reshape(shape)


def _loop_field_block(a, z0, r, z):
    # The operations (and their order) are those of the formula in the docstring of _loop_field,
    # written in place to spare temporaries.
    zeta = z - z0
    zeta2 = zeta * zeta
    a2 = a * a
    r2 = r * r
    a2r2 = a2 + r2
    beta2 = 2.0 * a
    beta2 *= r
    beta2 += a2r2  # a^2 + r^2 + 2 a r
    beta2 += zeta2
    alpha2 = a - r
    np.multiply(alpha2, alpha2, out=alpha2)
    alpha2 += zeta2
    p = alpha2 / beta2
    K = ellipkm1(p)
    E = ellipe(np.subtract(1.0, p, out=p), out=p)
    c = np.sqrt(beta2, out=beta2)
    np.divide(_C_LOOP, c, out=c)
    with np.errstate(divide="ignore", invalid="ignore"):
        e_over = np.divide(E, alpha2, out=E)
        br = np.multiply(c, zeta, out=zeta)
        br /= r
        a2r2 += zeta2
        a2r2 *= e_over
        a2r2 -= K
        br *= a2r2  # c zeta / r (E (a^2 + r^2 + zeta^2) / alpha^2 - K)
        bz = np.subtract(a2, r2, out=a2)
        bz -= zeta2
        bz *= e_over
        bz += K
        bz *= c  # c (E (a^2 - r^2 - zeta^2) / alpha^2 + K)
    axis = r < 1e-6 * a
    if np.any(axis):
        br[axis], bz[axis] = loop_field(a[axis], z0[axis], r[axis], z[axis])
    return br, bz


def _mutual_pair_block(node_r, node_z, pr, pz):
    """(``mutual(node, point)``, dM/dz at the point) in one pass (``models.fast.filaments.mutual_pair``;
    dM/dz_point = -dM/dz_node)."""
    mut, dz_node = mutual_pair(node_r, node_z, pr, pz)
    return mut, -dz_node


def _mutual_pair_kernel(node_r, node_z, pr, pz):
    return _blocked(_mutual_pair_block, 2, node_r, node_z, pr, pz)


def _moment_radius(panels):
    """Radius [m] of the one filament with the panel's dipole moment: r^2 = <r^2> over the panel.

    Used for the one-point (far) rule: the far field of a ribbon is set by its moment
    pi <r^2>, which the midpoint alone misses by pi (length t_r)^2 / 12.
    """
    return np.sqrt(panels.mid_r**2 + (panels.length * panels.tr) ** 2 / 12.0)


def _field_kernel(node_r, node_z, pr, pz):
    return _loop_field(node_r, node_z, pr, pz)


def _source_field_kernel(node_r, node_z, pr, pz):
    """Field at the panel nodes of a loop at the point (the source filament) [T/A]."""
    return _loop_field(pr, pz, node_r, node_z)


#: Rules of (point, panel) pairs recently used, by the content of the panels and points, least
#: recently used dropped first: the circuit asks for the operator, the mutual inductance and its
#: derivative at the same points, and one evaluation uses three point sets (the circuit's nodes
#: and the two flux-density diagnostics), which recur for a pole model that is reused.
_PAIR_RULES: dict = {}
_PAIR_RULES_KEPT = 4


def _points(r, z):
    r = np.atleast_1d(np.asarray(r, dtype=float)).ravel()
    z = np.atleast_1d(np.asarray(z, dtype=float)).ravel()
    if r.shape != z.shape:
        raise DesignError(f"r, z: shapes {r.shape} and {z.shape} must match")
    return r, z


def _pair_rule(panels, r, z, with_spare=False):
    """Quadrature rule (``_Rule``) of every (point, panel) pair, point-major, and the point of each
    node (point_r, point_z). Cached by the content of panels and points; treat as read-only.
    ``with_spare`` adds the entry's dict of results computed ahead (``_mutual_pair``)."""
    key = tuple(
        a.tobytes() for a in (panels.mid_r, panels.mid_z, panels.length, panels.tr, panels.tz, r, z)
    )
    hit = _PAIR_RULES.pop(key, None)
    if hit is not None:
        _PAIR_RULES[key] = hit  # now the most recently used
    else:
        n_pts, n_p = r.size, panels.n
        pr, pz = np.repeat(r, n_p), np.repeat(z, n_p)
        rho = np.hypot(r[:, None] - panels.mid_r, z[:, None] - panels.mid_z) / panels.length
        rule = _rule(panels, np.tile(np.arange(n_p), n_pts), pr, pz, rho=rho.ravel())
        point = rule.owner // n_p
        hit = rule, r[point], z[point], {}
        while len(_PAIR_RULES) >= _PAIR_RULES_KEPT:
            _PAIR_RULES.pop(next(iter(_PAIR_RULES)), None)
        _PAIR_RULES[key] = hit
    return hit if with_spare else hit[:3]


def _mutual_pair(panels, r, z, which):
    """``panel_mutual`` (which = 0) or ``panel_mutual_dz`` (1): both are computed in one pass and
    the other one is kept with the cached rule for the call that the circuit makes next."""
    r, z = _points(r, z)
    rule, pr, pz, spare = _pair_rule(panels, r, z, with_spare=True)
    done = spare.pop(which, None)
    if done is not None:
        return done
    vals = rule.apply(_mutual_pair_kernel(rule.node_r, rule.node_z, pr, pz))
    vals = [v.reshape(r.size, panels.n) for v in vals]
    spare.clear()
    spare[1 - which] = vals[1 - which]
    return vals[which]


def _dense(panels, r, z, kernel):
    """kernel integrated over every panel for every point: arrays of shape (n_pts, n_panels)."""
    r, z = _points(r, z)
    rule, pr, pz = _pair_rule(panels, r, z)
    vals = rule.apply(kernel(rule.node_r, rule.node_z, pr, pz))
    return [v.reshape(r.size, panels.n) for v in vals]


def panel_field(panels, r, z):
    """Flux density of each panel carrying 1 A (uniform along it) at points (r, z) [T/A].

    Parameters
    ----------
    panels : PanelSet
    r, z : array_like, shape (n_pts,)
        Field points [m]; r >= 0.

    Returns
    -------
    (ndarray, ndarray)
        B_r and B_z, each (n_pts, n_panels) [T/A]. On a panel itself the value is the average of
        the two sides (the principal value).

    Notes
    -----
    Integral of Smythe's loop field (``models.fast.filaments.loop_field``) over the panel, by Gauss
    rules graded toward the point (module docstring).
    """
    br, bz = _dense(panels, r, z, _field_kernel)
    return br, bz


def panel_mutual(panels, r, z):
    """Mutual inductance of each panel (1 A uniform along it) with filaments at (r, z) [H].

    Parameters
    ----------
    panels : PanelSet
    r, z : array_like, shape (n_pts,)
        Filament radii and axial positions [m].

    Returns
    -------
    ndarray, shape (n_pts, n_panels)
        M [H]: flux linking the filament per ampere of panel current.

    Notes
    -----
    Maxwell's formula (``models.fast.filaments.mutual``) averaged over the panel with graded Gauss rules;
    finite (log-integrable) even for a filament on the panel.
    """
    return _mutual_pair(panels, r, z, 0)


def panel_mutual_dz(panels, r, z):
    """Derivative of ``panel_mutual`` with respect to the filament's axial position [H/m].

    Returns
    -------
    ndarray, shape (n_pts, n_panels)
        dM/dz_filament [H/m]; the time-averaged axial force on the filament (rms phasors) is
        Re(I_filament conj(I_panel)) dM/dz [N].

    Notes
    -----
    Closed-form dM/dz of Maxwell's formula (``models.fast.filaments.mutual_dz``) averaged over the panel.
    """
    return _mutual_pair(panels, r, z, 1)


# ------------------------------------------------------------------------------------------------
# The magnetised pole


def _lambda(relative_permeability):
    mu_r = float(relative_permeability)
    if not (np.isfinite(mu_r) and mu_r >= 1.0):
        raise DesignError(
            f"relative_permeability = {relative_permeability!r}: must be a finite number >= 1"
        )
    return (mu_r - 1.0) / (mu_r + 1.0)


class MagnetisedPole:
    """Bound-current response of a linear magnetisable body; the panel system LU-factorised once.

    Parameters
    ----------
    panels : PanelSet
    relative_permeability : float
        mu_r >= 1 of the (laminated, non-conducting) iron.

    Notes
    -----
    Galerkin form of mu0 K = -2 lambda B_t,avg (module docstring); panel-panel terms further than
    ``_FAR`` panel lengths apart use the midpoints, nearer ones a 4-point test rule on the field
    panel and graded rules on the source panel.
    """

    def __init__(self, panels: PanelSet, relative_permeability: float):
        self.panels = panels
        self.relative_permeability = float(relative_permeability)
        self.lam = _lambda(relative_permeability)
        self.matrix = self._assemble()
        self._lu = lu_factor(self.matrix)

    def _assemble(self):
        p = self.panels
        n = p.n
        sep = np.hypot(p.mid_r[:, None] - p.mid_r[None, :], p.mid_z[:, None] - p.mid_z[None, :])
        ratio_test = sep / p.length[:, None]
        ratio_test = np.where(
            (ratio_test >= _FAR) & (p.mid_r < _AXIS * p.length)[:, None], _FAR * 0.999, ratio_test
        )
        near = (
            (ratio_test < _FAR)
            | (sep < _FAR * p.length[None, :])
            | (p.mid_r < _AXIS * p.length)[None, :]
        )
        np.fill_diagonal(near, False)
        kink = np.abs(p.tr[:-1] * p.tz[1:] - p.tz[:-1] * p.tr[1:]) > 1e-9
        k = np.flatnonzero(kink)
        near[k, k + 1] = False
        near[k + 1, k] = False
        g = np.zeros((n, n))
        # Far pairs: midpoint to midpoint (every pair not integrated below).
        far = ~near
        np.fill_diagonal(far, False)
        far[k, k + 1] = False
        far[k + 1, k] = False
        fi, fp = np.nonzero(far)
        br, bz = _loop_field(_moment_radius(p)[fp], p.mid_z[fp], p.mid_r[fi], p.mid_z[fi])
        with np.errstate(invalid="ignore"):
            g[fi, fp] = br * p.tr[fi] + bz * p.tz[fi]
        # Self terms: a horizontal panel has no tangential (radial) field in its own plane
        # (B_r = 0 at zeta = 0); the others carry only the log singularity of the curved sheet
        # (the 2-D part is normal to the panel), a few per cent of mu0 / length: a light rule.
        slanted = np.flatnonzero(np.abs(p.tz) > 1e-12)
        groups = [(slanted, slanted, *_gauss01(2), 1e-4, 3)]
        # Test rule by the distance in lengths of the averaged panel: 1, 2 or 4 Gauss points.
        for lo, hi, n_test in ((_FAR, np.inf, 1), (_MID2, _FAR, 2), (0.0, _MID2, _TEST_NODES)):
            ii, pp = np.nonzero(near & (ratio_test >= lo) & (ratio_test < hi))
            groups.append((ii, pp, *_gauss01(n_test), 1e-5, _GAUSS_GRADED))
        # Neighbours meeting at an angle: the field of one has a log singularity at the shared end
        # of the other; their average uses a rule graded toward that end.
        xg, wg = _graded01()
        groups.append((k, k + 1, xg[::-1] * -1.0 + 1.0, wg[::-1], 1e-5, _GAUSS_GRADED))
        groups.append((k + 1, k, xg, wg, 1e-5, _GAUSS_GRADED))
        self._average_groups(g, groups)
        a = 2.0 * self.lam * g
        a[np.diag_indices(n)] += mu_0 / p.length
        return a

    def _average_groups(self, g, groups):
        """g[i, p] = sum_k w_k B_t,i(x_k on panel i) of panel p carrying 1 A, for every group.

        ``groups`` holds (ii, pp, x, w, eps, n_gauss): pairs of test panel i and source panel p,
        the test rule (x, w) on [0, 1] and the graded rule's parameters. The kernel is evaluated
        once for all groups that share the graded rule's parameters.
        """
        p = self.panels
        geometry = _geometry(p)
        r0, z0, _, _, dr, dz, _ = geometry
        by_rule = {}  # (eps, n_gauss) -> [(ii, pp, x, w, test points r, z)]
        for ii, pp, x, w, eps, n_gauss in groups:
            if ii.size:
                xr = (r0[ii][:, None] + dr[ii][:, None] * x).ravel()
                xz = (z0[ii][:, None] + dz[ii][:, None] * x).ravel()
                by_rule.setdefault((eps, n_gauss), []).append((ii, pp, x, w, xr, xz))
        if not by_rule:
            return
        rules, points_r, points_z, used = [], [], [], []
        for (eps, n_gauss), items in by_rule.items():
            pidx = np.concatenate([np.repeat(pp, x.size) for _, pp, x, _, _, _ in items])
            xr = np.concatenate([it[4] for it in items])
            xz = np.concatenate([it[5] for it in items])
            rules.append(_rule(p, pidx, xr, xz, eps, n_gauss, geometry))
            points_r.append(xr)
            points_z.append(xz)
            used += [it[:4] for it in items]
        parts = []
        for rule, xr, xz in zip(rules, points_r, points_z, strict=True):
            field = _loop_field(rule.node_r, rule.node_z, xr[rule.owner], xz[rule.owner])
            parts.append(rule.apply(field))
        bri = np.concatenate([b for b, _ in parts])
        bzi = np.concatenate([b for _, b in parts])
        lo = 0
        for ii, pp, x, w in used:
            hi = lo + ii.size * x.size
            bt = bri[lo:hi] * np.repeat(p.tr[ii], x.size) + bzi[lo:hi] * np.repeat(p.tz[ii], x.size)
            g[ii, pp] = bt.reshape(-1, x.size) @ w
            lo = hi

    def applied_tangential_field(self, src_r, src_z):
        """Panel-averaged tangential field <B_t>_i of 1 A in each source filament [T/A].

        Returns
        -------
        ndarray, shape (n_panels, n_src)
        """
        p = self.panels
        br, bz = _dense(p, src_r, src_z, _source_field_kernel)
        return np.ascontiguousarray((br * p.tr + bz * p.tz).T)

    def response(self, applied_bt):
        """Panel currents [A] for a given panel-averaged applied tangential field [T].

        Parameters
        ----------
        applied_bt : array_like, shape (n_panels,) or (n_panels, k)
            <B_t,applied>_i on each panel [T] (per ampere of source: [T/A] gives [A/A]). A uniform
            axial field B0 gives B0 * panels.tz.
        """
        rhs = -2.0 * self.lam * np.asarray(applied_bt, dtype=float)
        return lu_solve(self._lu, rhs)

    def operator(self, src_r, src_z):
        """Panel currents [A] induced by 1 A in each source filament, shape (n_panels, n_src).

        Parameters
        ----------
        src_r, src_z : array_like, shape (n_src,)
            Source filaments [m], outside the iron (they may be close to it).
        """
        return self.response(self.applied_tangential_field(src_r, src_z))


def bound_current_operator(panels, relative_permeability, src_r, src_z):
    """Panel currents [A] induced by 1 A in each source filament (magnetostatic, linear).

    Parameters
    ----------
    panels : PanelSet
    relative_permeability : float
        mu_r >= 1 of the laminated iron.
    src_r, src_z : array_like, shape (n_src,)
        Source filaments [m] anywhere outside the iron.

    Returns
    -------
    ndarray, shape (n_panels, n_src)

    Notes
    -----
    Wrapper of ``MagnetisedPole(panels, mu_r).operator``; keep a ``MagnetisedPole`` to reuse the
    factorisation for several source sets.
    """
    return MagnetisedPole(panels, relative_permeability).operator(src_r, src_z)
