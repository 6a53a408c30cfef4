"""Panels of the pole's meridian contour: ``PanelSet``, the contour, the size function, meshing."""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np

from models.errors import DesignError
from models.fast.quadrature import gauss01, read_only

#: Panel size at the pole face [m] recommended for design searches (measured in tests/models/fast/test_pole.py).
DEFAULT_PANEL_SIZE = 0.25e-3
#: Geometric growth of panel size away from corners and the face (ratio of neighbours) [-].
DEFAULT_GROWTH = 1.25
#: Corner panel size as a fraction of the face panel size [-].
DEFAULT_CORNER_FRACTION = 0.125


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
    s, w = gauss01(q)
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
    return read_only(np.unique(np.concatenate([np.linspace(0.0, 1.0, 2001), g, 1.0 - g])))[0]


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
