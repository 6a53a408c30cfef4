"""Division of the solid conductors (ring, target) and the stranded coil into coaxial cells.

A cell is a ring of rectangular cross-section [r0, r1] x [z0, z1] carrying a uniform current. Cell
sizes follow the skin depth delta = sqrt(2 / (omega mu0 sigma)): fine at the surfaces when delta is
small against the part, coarse when it is large, with geometric grading in between.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from models.materials import skin_depth

__all__ = ["Cells", "graded_edges", "conductor_cells", "coil_filaments", "Fineness", "resolved_gap"]


@dataclass(frozen=True)
class Fineness:
    """Discretisation controls (dimensionless unless stated).

    surface_cell : first cell at a conductor surface, as a fraction of the skin depth
    max_cell_depths : largest cell, in skin depths
    growth : ratio of neighbouring cell sizes (>= 1); 1.25 (was 1.5) halved the pull's error on
        parts as wide as the pole (tests/data/edge_model.csv: worst 8.8 % -> 4.8 %) for 19 % more
        cells
    min_cells : fewest cells across any dimension of a conductor
    min_cells_r : fewest cells along the radius (0: same as min_cells)
    max_cells : most cells along any dimension
    coil_r, coil_z : filaments across the coil window
    panel_size : iron panel size at the face, as a fraction of the smallest feature (groove width,
        depth, gap) -- read by the pole model
    iron_nodes : Gauss-Legendre order per side with which a cell near the iron is coupled to it
    gap_cell : largest first cell at a conductor surface, as a fraction of the gap to the face
    iron_reach : cells nearer a panel than this many cell sizes couple to the iron through
        iron_nodes x iron_nodes Gauss nodes, farther ones through their centre. 1.5 left a part's
        edge facing the pole's corner 5-10 % off in the iron's pull term (measured on an 8 mm
        washer at 1 mm: pole term 4.98 mN at 1.5, 4.76 at 3, 4.73 at 6 and beyond)
    gap_floor : the sizes set by the gap (``gap_cell`` x gap, the face's panels) stop shrinking
        below this fraction of the pole radius (``resolved_gap``): a part held at 0.05 mm cost
        twice the cells and panels and three times the time of one at 0.2 mm, and the floor
        left its error against the FEM where it was (within 0.7 % on the cross-model cases
        g01, g02 and g05: tests/perf/bench_thin_gap.py, DEVELOPERS.md)
    """

    surface_cell: float = 0.5
    max_cell_depths: float = 1.5
    growth: float = 1.25
    min_cells: int = 12
    min_cells_r: int = 8
    max_cells: int = 24
    coil_r: int = 4
    coil_z: int = 8
    panel_size: float = 0.25
    iron_nodes: int = 2
    gap_cell: float = 0.3
    iron_reach: float = 6.0
    gap_floor: float = 0.02

    def scaled(self, factor: float) -> Fineness:
        """A finer (factor > 1) or coarser (factor < 1) version of these settings."""
        return Fineness(
            surface_cell=self.surface_cell / factor,
            max_cell_depths=self.max_cell_depths / factor,
            growth=1.0 + (self.growth - 1.0) / factor,
            min_cells=max(2, round(self.min_cells * factor)),
            min_cells_r=max(2, round(self.min_cells_r * factor)) if self.min_cells_r else 0,
            max_cells=max(4, round(self.max_cells * factor)),
            coil_r=max(2, round(self.coil_r * factor)),
            coil_z=max(2, round(self.coil_z * factor)),
            panel_size=self.panel_size / factor,
            iron_nodes=self.iron_nodes,
            gap_cell=self.gap_cell / factor,
            iron_reach=self.iron_reach,
            gap_floor=self.gap_floor / factor,
        )


def resolved_gap(gap: float, pole_radius: float, fineness: Fineness) -> float:
    """The gap [m] the discretisation resolves: ``gap``, but no less than ``fineness.gap_floor``
    x ``pole_radius`` [m]. Below that the field between a part and the face is nearly the
    uniform one of a closed gap, and cells and panels on the gap's scale cost more than they
    return (Fineness.gap_floor)."""
    return max(gap, fineness.gap_floor * pole_radius)


def graded_edges(a, b, h_a, h_b, h_max, growth, min_cells=1, max_cells=10_000, focus=()):
    """Edges of a 1-D division of [a, b] [m] with cells of about h_a, h_b at the ends (None: no
    grading at that end), growing by about ``growth`` per cell toward the middle, never larger than
    h_max; at least ``min_cells`` and at most ``max_cells`` cells. ``focus`` is a sequence of
    (x, h) pairs: interior places where the cells shrink to about h (e.g. under an iron corner).

    The target size is h(x) = min(h_max, h_a + (growth - 1) (x - a), h_b + (growth - 1) (b - x));
    the edges are equally spaced in the cell-count coordinate s(x) = integral of dx / h.

    Returns
    -------
    ndarray
        Sorted edges including a and b.
    """
    length = b - a
    x = np.linspace(a, b, 801)
    h = np.full_like(x, min(h_max, length))
    if h_a is not None:
        h = np.minimum(h, h_a + (growth - 1.0) * (x - a))
    if h_b is not None:
        h = np.minimum(h, h_b + (growth - 1.0) * (b - x))
    for xf, hf in focus:
        if a < xf < b:
            h = np.minimum(h, hf + (growth - 1.0) * np.abs(x - xf))
    inv = 1.0 / h
    s = np.concatenate([[0.0], np.cumsum(0.5 * (inv[1:] + inv[:-1]) * np.diff(x))])
    n = int(min(max_cells, max(min_cells, math.ceil(s[-1] - 1e-9))))
    edges = np.interp(np.linspace(0.0, s[-1], n + 1), s, x)
    edges[0], edges[-1] = a, b
    return edges


@dataclass(frozen=True)
class Cells:
    """Rectangular coaxial cells of one or more solid conductors (SI).

    r0, r1, z0, z1 : cell bounds [m]; conductivity [S/m]; part : integer label per cell.
    """

    r0: np.ndarray
    r1: np.ndarray
    z0: np.ndarray
    z1: np.ndarray
    conductivity: np.ndarray
    part: np.ndarray

    @property
    def n(self) -> int:
        return self.r0.size

    @property
    def rc(self):
        return 0.5 * (self.r0 + self.r1)

    @property
    def zc(self):
        return 0.5 * (self.z0 + self.z1)

    @property
    def dr(self):
        return self.r1 - self.r0

    @property
    def dz(self):
        return self.z1 - self.z0

    @property
    def area(self):
        return self.dr * self.dz

    def resistance(self):
        """Loop resistance of each cell [Ohm] for an azimuthal E field: R = 2 pi / (sigma dz ln(r1/r0));
        r0 = 0 (a cell on the axis) uses 2 pi rc / (sigma A) (Ohm's law for a circular filament)."""
        with np.errstate(divide="ignore"):
            log = np.log(self.r1 / self.r0)
        exact = 2.0 * np.pi / (self.conductivity * self.dz * np.where(self.r0 > 0, log, 1.0))
        thin = 2.0 * np.pi * self.rc / (self.conductivity * self.area)
        return np.where(self.r0 > 0, exact, thin)

    @staticmethod
    def concat(*cells: Cells) -> Cells:
        return Cells(*(np.concatenate([getattr(c, f) for c in cells]) for f in Cells._fields()))

    @staticmethod
    def _fields():
        return ("r0", "r1", "z0", "z1", "conductivity", "part")


def conductor_cells(
    r_in,
    r_out,
    z_lo,
    z_hi,
    conductivity,
    frequency,
    part,
    fineness: Fineness,
    graded_r=(True, True),
    gap=None,
    corners_r=(),
) -> Cells:
    """Divide a rectangular conductor into cells graded on the skin depth.

    Parameters
    ----------
    r_in, r_out, z_lo, z_hi : float
        Bounds of the conductor [m] (r_in may be 0: a solid disc).
    conductivity : float
        [S/m].
    frequency : float
        [Hz].
    part : int
        Label stored in every cell.
    fineness : Fineness
        Discretisation controls.
    graded_r : (bool, bool)
        Whether to grade toward the inner and outer radius (an axis is not a surface).
    gap : float, optional
        Distance to the nearest other body across the face [m]: the field there varies on that
        scale, so the first cell is also kept below ``fineness.gap_cell`` times it.
    corners_r : sequence of float
        Radii of iron corners across the gap (pole edge, groove walls) [m]: with ``gap`` given, the
        radial cells shrink to ``fineness.gap_cell * gap`` there as well.
    """
    delta = skin_depth(frequency, conductivity)
    f = fineness
    h0 = f.surface_cell * delta
    if gap is not None:
        h0 = min(h0, f.gap_cell * gap)
    hmax = f.max_cell_depths * delta
    inner = h0 if (graded_r[0] and r_in > 0) else None
    outer = h0 if graded_r[1] else None
    focus = [(rf, f.gap_cell * gap) for rf in corners_r] if gap is not None else []
    re = graded_edges(
        r_in,
        r_out,
        inner,
        outer,
        hmax,
        f.growth,
        f.min_cells_r or f.min_cells,
        f.max_cells,
        focus=focus,
    )
    ze = graded_edges(z_lo, z_hi, h0, h0, hmax, f.growth, f.min_cells, f.max_cells)
    R0, Z0 = np.meshgrid(re[:-1], ze[:-1], indexing="ij")
    R1, Z1 = np.meshgrid(re[1:], ze[1:], indexing="ij")
    n = R0.size
    return Cells(
        r0=R0.ravel(),
        r1=R1.ravel(),
        z0=Z0.ravel(),
        z1=Z1.ravel(),
        conductivity=np.full(n, float(conductivity)),
        part=np.full(n, int(part)),
    )


def coil_filaments(coil, fineness: Fineness):
    """Sub-cells of a stranded coil window: centres (r, z) and sides (dr, dz) [m], each carrying
    turns / count of the winding's ampere-turns."""
    nr, nz = fineness.coil_r, fineness.coil_z
    re = np.linspace(coil.inner_radius, coil.outer_radius, nr + 1)
    ze = np.linspace(coil.z_back, coil.z_front, nz + 1)
    rc, zc = np.meshgrid(0.5 * (re[1:] + re[:-1]), 0.5 * (ze[1:] + ze[:-1]), indexing="ij")
    dr = np.full(rc.size, (coil.outer_radius - coil.inner_radius) / nr)
    dz = np.full(rc.size, coil.length / nz)
    return rc.ravel(), zc.ravel(), dr, dz
