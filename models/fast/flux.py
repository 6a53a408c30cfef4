"""Flux densities inside the pole from a circuit solution: the peak anywhere in the steel (its
saturation margin) and the section-averaged flux density along its length."""

from __future__ import annotations

import numpy as np

from models.design import Design
from models.fast.circuit import CircuitSolution, _gauss_nodes
from models.fast.filaments import loop_field, mutual
from models.fast.pole import panel_field, panel_mutual

__all__ = ["core_peak_flux_density", "pole_flux_density"]


def core_peak_flux_density(design: Design, sol: CircuitSolution) -> float:
    """Largest peak |B| [T] on a grid of points inside the pole, away from its surface.

    For rms phasors (B_r, B_z) the peak over a period of |B(t)| is
    sqrt(|B_r|^2 + |B_z|^2 + |B_r^2 + B_z^2|) (the major axis of the field ellipse times sqrt 2).
    """
    if sol.panels is None:
        return 0.0
    p = design.pole
    margin = 0.08 * p.radius
    r = np.linspace(0.0, p.radius - margin, 6)
    z = np.linspace(-p.length + margin, -margin, 11)
    R, Z = (a.ravel() for a in np.meshgrid(r, z, indexing="ij"))
    if design.ring is not None:
        g = design.ring
        inside = (
            (R > g.inner_radius - margin) & (R < g.outer_radius + margin) & (Z > -g.depth - margin)
        )
        R, Z = R[~inside], Z[~inside]
        if R.size == 0:  # a groove that leaves only thin walls: the mid-lines of post and wall
            R, Z = (
                a.ravel()
                for a in np.meshgrid([0.5 * g.inner_radius, 0.5 * (g.outer_radius + p.radius)], z)
            )
    c = sol.cells
    br_c, bz_c = loop_field(c.rc[None, :], c.zc[None, :], R[:, None], Z[:, None])
    br = br_c @ sol.cell_current
    bz = bz_c @ sol.cell_current
    br_p, bz_p = panel_field(sol.panels, R, Z)
    br = br + br_p @ sol.panel_current
    bz = bz + bz_p @ sol.panel_current
    peak = np.sqrt(np.abs(br) ** 2 + np.abs(bz) ** 2 + np.abs(br * br + bz * bz))
    return float(peak.max())


def pole_flux_density(design: Design, sol: CircuitSolution) -> float:
    """Peak section-averaged flux density of the pole [T]: sqrt 2 |Phi(z)| / (pi R_p^2), the flux
    Phi through the pole's cross-section at height z from every loop (cells at 2 x 2 Gauss nodes,
    panels by models.fast.pole.panel_mutual), largest over 11 heights."""
    if sol.panels is None:
        return 0.0
    p = design.pole
    z = np.linspace(-p.length, 0.0, 11)[1:-1]
    r = np.full_like(z, p.radius)
    c = sol.cells
    gr, gz = _gauss_nodes(c, np.arange(c.n))
    m = mutual(gr[None, :, :], gz[None, :, :], r[:, None, None], z[:, None, None]).mean(axis=2)
    flux = m @ sol.cell_current + panel_mutual(sol.panels, r, z) @ sol.panel_current
    return float(np.sqrt(2.0) * np.abs(flux).max() / (np.pi * p.radius**2))
