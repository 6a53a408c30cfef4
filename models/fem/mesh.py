"""Mesh of the reference FEM: a graded tensor-product grid of quadrilaterals aligned with every part edge.

All parts of an axisymmetric design are rectangles in the meridian (r, z) half-plane, so a tensor-product
grid whose lines pass through every finite edge of every part resolves the geometry exactly and needs no
external mesher. Along each axis the element size follows a size function

    h(x) = min( h_cap(x), min_f [ h_f + s |x - x_f| ] ) / refine

where the features x_f are the part edges with a local size h_f (a fraction of the neighbouring part
dimensions, of the gaps between edges and of the skin depth of a conductor bounded by that edge), s is
the grading slope (a slope s makes neighbouring elements grow geometrically by about 1 + s) and h_cap
bounds the size inside the parts' bounding box. Nodes between two consecutive edges are placed so that
each element holds the same share of the integral of 1/h, with at least ``n_min`` elements per interval.
Dividing every size (and the slope) by ``refine`` shrinks every element by the same factor, which is what
a convergence study needs.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["MeshOptions", "axis_nodes", "grid_nodes"]


@dataclass(frozen=True)
class MeshOptions:
    """Knobs of the grid (defaults measured on the demo design and the analytic checks of test_fem).

    Parameters
    ----------
    n_min : int
        Elements across every interval between two consecutive part edges (at ``refine`` = 1).
    per_skin_depth : float
        Elements per skin depth at the surface of a conductor.
    slope : float
        Grading slope s of the size function [-]; neighbouring elements grow by about 1 + s.
    cap_fraction : float
        Largest element inside the bounding box of the parts, as a fraction of its largest side.
    far_multiple : float
        Distance from the bounding box of the parts to the far boundary, in multiples of the box's
        largest side (multiplied by ``far_factor`` of the solver). The Dirichlet truncation error
        falls like (side / distance)^3 (dipole far field): about 1e-4 at 8, a few 1e-6 at 24,
        measured on the demo design.
    edge_fraction : float
        Extra factor on the size wanted at every part edge; small values grade the mesh
        geometrically toward the edges and corners, where the field of the iron's corners and of
        the skin layers is singular or steep (0.05 measured as the best accuracy per unknown).
    edge_power : float
        The edge sizes scale like refine^-edge_power (1: uniform refinement of the same grading).
    """

    n_min: int = 4
    per_skin_depth: float = 3.0
    slope: float = 0.4
    cap_fraction: float = 1.0 / 12.0
    far_multiple: float = 24.0
    edge_fraction: float = 0.05
    edge_power: float = 1.0


def _size_function(points: np.ndarray, sizes: np.ndarray, slope: float, box, h_cap: float):
    """Vectorised h(x) = min(cap(x), min_f(h_f + slope |x - x_f|))."""
    lo, hi = box

    def h(x):
        x = np.asarray(x, dtype=float)
        d = np.abs(x[:, None] - points[None, :])
        hf = np.min(sizes[None, :] + slope * d, axis=1)
        outside = np.maximum(lo - x, 0.0) + np.maximum(x - hi, 0.0)
        return np.minimum(hf, h_cap + slope * outside)

    return h


def axis_nodes(
    lo: float,
    hi: float,
    points,
    sizes,
    *,
    slope: float,
    n_min: int,
    box: tuple[float, float],
    h_cap: float,
) -> np.ndarray:
    """Graded nodes on [lo, hi] [m], through every point of ``points``.

    Parameters
    ----------
    lo, hi : float
        Ends of the axis [m] (axis and far boundary, or the two far boundaries).
    points : array_like, shape (n,)
        Part edges on this axis [m]; every one becomes a node.
    sizes : array_like, shape (n,)
        Wanted element size at each point [m] (already divided by the refinement).
    slope : float
        Growth of the element size per unit distance from a point [-].
    n_min : int
        Least number of elements between two consecutive points (and between a point and an end).
    box : (float, float)
        Extent of the parts on this axis [m]; inside it no element exceeds ``h_cap``.
    h_cap : float
        Largest element inside ``box`` [m].

    Returns
    -------
    numpy.ndarray
        Strictly increasing node coordinates [m], including ``lo`` and ``hi``.
    """
    points = np.asarray(points, dtype=float)
    sizes = np.asarray(sizes, dtype=float)
    h = _size_function(points, sizes, slope, box, h_cap)
    breaks = np.unique(np.concatenate([[lo, hi], points[(points > lo) & (points < hi)]]))
    nodes = [np.array([lo])]
    for a, b in zip(breaks[:-1], breaks[1:], strict=True):
        length = b - a
        # Samples dense near both ends, where h is smallest and 1/h varies fastest.
        near = np.geomspace(1e-7 * length, length, 400)
        xs = np.unique(np.concatenate([np.linspace(a, b, 801), a + near, b - near]))
        xs = xs[(xs >= a) & (xs <= b)]
        g = 1.0 / h(xs)
        cum = np.concatenate([[0.0], np.cumsum(0.5 * (g[1:] + g[:-1]) * np.diff(xs))])
        n = max(n_min, math.ceil(cum[-1] - 1e-9))
        inner = np.interp(cum[-1] * np.arange(1, n) / n, cum, xs)
        nodes.append(np.concatenate([inner, [b]]))
    out = np.concatenate(nodes)
    if np.any(np.diff(out) <= 0.0):  # pragma: no cover - guards the construction above
        raise RuntimeError("axis_nodes: nodes are not strictly increasing")
    return out


def grid_nodes(edges_r, edges_z, *, refine: float, far_factor: float, options: MeshOptions):
    """Nodes of the (r, z) grid from the part edges and their wanted sizes.

    Parameters
    ----------
    edges_r, edges_z : list of (float, float)
        Pairs (coordinate [m], wanted size [m] at ``refine`` = 1) of the finite part edges on each axis.
    refine : float
        Refinement factor (> 0); every element size is divided by it.
    far_factor : float
        Multiplier (> 0) of the distance to the far boundary.
    options : MeshOptions
        Grid knobs.

    Returns
    -------
    r_nodes, z_nodes : numpy.ndarray
        Node coordinates [m]; r starts at the axis (0) and ends at the far boundary.
    """
    pr = np.array([p for p, _ in edges_r], dtype=float)
    pz = np.array([p for p, _ in edges_z], dtype=float)
    r_box = (0.0, float(pr.max()))
    z_box = (float(pz.min()), float(pz.max()))
    side = max(r_box[1] - r_box[0], z_box[1] - z_box[0])
    far = far_factor * options.far_multiple * side
    h_cap = options.cap_fraction * side / refine
    n_min = max(1, math.ceil(options.n_min * refine - 1e-9))
    slope = options.slope / refine

    def sized(edges, box, lo, hi):
        pts = np.unique(np.array([p for p, _ in edges], dtype=float))
        sz = np.full(pts.shape, np.inf)
        for p, s in edges:
            i = int(np.argmin(np.abs(pts - p)))
            sz[i] = min(sz[i], s)
        # An edge never wants elements larger than a share of its neighbouring intervals
        # (thin gaps, thin walls).
        ext = np.concatenate([[lo], pts, [hi]])
        gaps = np.diff(ext)
        sz = np.minimum(sz, np.minimum(gaps[:-1], gaps[1:]) / options.n_min)
        sz = np.minimum(sz, options.cap_fraction * side) * options.edge_fraction
        return pts, sz / refine**options.edge_power

    r_hi = r_box[1] + far
    z_lo, z_hi = z_box[0] - far, z_box[1] + far
    pts_r, sz_r = sized(edges_r, r_box, 0.0, r_hi)
    pts_z, sz_z = sized(edges_z, z_box, z_lo, z_hi)
    keep = pts_r > 0.0
    r_nodes = axis_nodes(
        0.0, r_hi, pts_r[keep], sz_r[keep], slope=slope, n_min=n_min, box=r_box, h_cap=h_cap
    )
    z_nodes = axis_nodes(z_lo, z_hi, pts_z, sz_z, slope=slope, n_min=n_min, box=z_box, h_cap=h_cap)
    return r_nodes, z_nodes
