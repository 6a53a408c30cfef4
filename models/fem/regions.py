"""Regions of the FEM reference: rectangular parts of the meridian (r, z) plane and their materials.

A `Region` is one rectangle with a role, a permeability, a conductivity and (for a stranded coil) its
turns; `design_regions` builds the regions of a `models.design.Design`. `region_edges` turns the parts
into the edges (and the element size each edge wants) through which `models.fem.mesh` lays its grid, and
`paint` gives each element of that grid the region that owns it.
"""

from __future__ import annotations

import cmath
import math
import numbers
from dataclasses import dataclass

import numpy as np

from models.errors import DesignError
from models.fem.mesh import MeshOptions
from models.materials import skin_depth

__all__ = ["Region", "design_regions", "region_edges", "paint"]


@dataclass(frozen=True)
class Region:
    """One rectangular part of the meridian plane r0 <= r <= r1, z0 <= z <= z1.

    Parameters
    ----------
    role : str
        Name under which results are gathered ('coil', 'ring', 'target', 'pole', 'air', or any other);
        several regions may share a role.
    r0, r1, z0, z1 : float
        Extent [m]; ``r1`` may be ``math.inf`` and ``z0``/``z1`` may be -/+ ``math.inf`` to reach the far
        boundary (a plate or half-space).
    relative_permeability : float or complex
        mu_r [-] (>= 1 for the cases the checks cover; any positive value is solved). A complex value
        is a lossy magnet, e.g. the homogenised permeability of a laminated stack
        (`models.core_loss.lamination_permeability`): Re > 0 and Im <= 0 (time factor
        exp(j omega t)), so that its reluctivity nu = 1 / (mu_0 mu_r) has Im nu >= 0 and the region
        takes the power omega int Im(nu) |B|^2 dV (rms).
    conductivity : float
        sigma [S/m]; a solid shorted conductor carries J = -j omega sigma A (no applied voltage).
    turns : int
        Turns of a stranded coil (> 0 only for role 'coil'); the coil carries the uniform density
        J_s = turns I / window area and no eddy currents (sigma must be 0).
    sense : int
        +1 or -1: the direction a coil's turns are wound in (J_s = sense turns I / window area);
        the coils of one problem are in series, one current I through all.

    Regions are painted in order onto the mesh: a later region overrides an earlier one where they
    overlap (a groove is the pole region followed by the ring region). Uncovered space is air.
    """

    role: str
    r0: float
    r1: float
    z0: float
    z1: float
    relative_permeability: float | complex = 1.0
    conductivity: float = 0.0
    turns: int = 0
    sense: int = 1

    def __post_init__(self):
        problems = []
        if self.sense not in (1, -1):
            problems.append(f"region {self.role!r}: sense = {self.sense!r}: must be 1 or -1")
        if not (0.0 <= self.r0 < self.r1):
            problems.append(
                f"region {self.role!r}: r0 = {self.r0!r}, r1 = {self.r1!r}: must satisfy 0 <= r0 < r1"
            )
        if not (self.z0 < self.z1) or math.isnan(self.z0) or math.isnan(self.z1):
            problems.append(f"region {self.role!r}: z0 = {self.z0!r}: must be < z1 = {self.z1!r}")
        if not _permeability_ok(self.relative_permeability):
            problems.append(
                f"region {self.role!r}: relative_permeability = {self.relative_permeability!r}: "
                "must be a finite number > 0, or complex with real part > 0 and imaginary part "
                "<= 0 (a lossy magnet)"
            )
        if not (self.conductivity >= 0.0 and math.isfinite(self.conductivity)):
            problems.append(
                f"region {self.role!r}: conductivity = {self.conductivity!r}: must be >= 0"
            )
        if self.turns < 0:
            problems.append(f"region {self.role!r}: turns = {self.turns!r}: must be >= 0")
        if self.turns > 0:
            if self.conductivity != 0.0:
                problems.append(
                    f"region {self.role!r}: conductivity = {self.conductivity!r}: a stranded coil "
                    "must have conductivity 0 (its winding resistance is given separately)"
                )
            if not all(math.isfinite(v) for v in (self.r1, self.z0, self.z1)):
                problems.append(f"region {self.role!r}: a coil must be finite")
        if problems:
            raise DesignError(problems)

    @property
    def area(self) -> float:
        """Cross-section in the meridian plane [m^2]."""
        return (self.r1 - self.r0) * (self.z1 - self.z0)

    @property
    def lossy(self) -> bool:
        """True for a complex permeability with Im mu_r < 0 (a lossy magnet)."""
        return complex(self.relative_permeability).imag < 0.0


def _permeability_ok(mu) -> bool:
    """A finite mu_r with Re > 0 and Im <= 0 (real numbers: > 0)."""
    if not isinstance(mu, numbers.Complex):
        return False
    z = complex(mu)
    return cmath.isfinite(z) and z.real > 0.0 and z.imag <= 0.0


def design_regions(design) -> list[Region]:
    """The regions of a design: pole, ring in its groove (painted over the pole), coil, target.

    Parameters
    ----------
    design : models.design.Design
        SI dataclasses (see models/design/parts.py for the geometry).

    Returns
    -------
    list of Region
        Roles 'pole' (not for an air core), 'ring' (if any), 'coil' (one region per coil),
        'target'. A laminated pole (conductivity 0) has
        sigma = 0 and, with sheet data, the complex homogenised permeability of its stack at the
        drive frequency (``design.pole.effective_permeability``; the sheets' eddy loss); without
        sheet data its real mu_r. A solid pole carries eddy currents.
    """
    p, g = design.pole, design.target
    regions = []
    if p is not None:  # an air core has none
        mu = p.effective_permeability(design.drive.frequency)
        mu = mu if mu.imag != 0.0 else mu.real  # a real mu_r stays real (the lossless solve)
        regions.append(Region("pole", 0.0, p.radius, -p.length, 0.0, mu, p.conductivity))
    if design.ring is not None and design.ring.winding:
        raise DesignError(
            f"ring.turns = {design.ring.turns}: the FEM reference models a solid ring only; a "
            "shading winding is checked by the fast model alone"
        )
    if design.ring is not None:
        ring = design.ring
        regions.append(
            Region(
                "ring",
                ring.inner_radius,
                ring.outer_radius,
                -ring.depth,
                0.0,
                1.0,
                ring.conductivity,
            )
        )
    for c in design.windings:  # every coil in series, each with its sense
        regions.append(
            Region(
                "coil",
                c.inner_radius,
                c.outer_radius,
                c.z_back,
                c.z_front,
                turns=c.turns,
                sense=c.sense,
            )
        )
    regions.append(
        Region("target", g.inner_radius, g.radius, g.gap, g.gap + g.thickness, 1.0, g.conductivity)
    )
    return regions


def region_edges(regions, frequency: float, options: MeshOptions):
    """Part edges on each axis with the element size each one wants: lists of (position [m], size [m])
    for r (the axis and infinite edges left out) and for z (infinite edges left out)."""
    edges_r, edges_z = [], []
    for reg in regions:
        delta = skin_depth(frequency, reg.conductivity, abs(reg.relative_permeability))
        dr, dz = reg.r1 - reg.r0, reg.z1 - reg.z0
        hs = delta / options.per_skin_depth
        for x in (reg.r0, reg.r1):
            if math.isfinite(x) and x > 0.0:
                edges_r.append((x, min(dr / options.n_min, hs)))
        for x in (reg.z0, reg.z1):
            if math.isfinite(x):
                edges_z.append((x, min(dz / options.n_min, hs)))
    if not edges_r or not edges_z:
        raise DesignError("regions: at least one region needs finite edges in r and in z")
    return edges_r, edges_z


def paint(regions, mid_r, mid_z):
    """Index of the region (or -1 for air) of each element, later regions winning."""
    owner = np.full(mid_r.shape, -1, dtype=int)
    for k, reg in enumerate(regions):
        inside = (mid_r > reg.r0) & (mid_r < reg.r1) & (mid_z > reg.z0) & (mid_z < reg.z1)
        owner[inside] = k
    return owner
