"""The flux density inside the pole's steel, cell by cell, and the core losses it carries.

The steel's meridian section (pole minus groove) is divided into rectangles whose edges include
the ring's radii and the groove's depth, graded toward the face where the field changes fastest;
each rectangle is represented by its centre and its volume 2 pi r dr dz. The field at the centres
is linear in the cell currents (loops at their centres, the iron's sheet currents through the
bound-current operator P), so ``CoreGrid`` keeps that linear map from assembly and a solve gets
the field for one matrix product.

Losses from it (models.core_loss): hysteresis and excess per rectangle from its peak flux density
and the pole's loss law. The eddy loss of the sheets is not summed here: the complex permeability
puts it in the circuit (``iron_loss_matrix`` of models.fast.circuit), and the rectangles only say
where it sits (in proportion to B_hat^2, as the classical loss).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from models.core_loss import peak_flux_density
from models.fast.filaments import loop_field
from models.fast.kernels import real_matmul
from models.fast.pole import panel_field

__all__ = [
    "CoreGrid",
    "CoreLosses",
    "core_grid",
    "core_losses",
    "hysteresis_excess_at",
    "radial_flux_fraction",
]


@dataclass(frozen=True)
class CoreGrid:
    """Centres r, z [m] and volumes [m^3] of the steel's rectangles, and the maps G_r, G_z
    (n_points x n_cells, complex) from cell currents [A] to B_r, B_z [T] (rms phasors)."""

    r: np.ndarray
    z: np.ndarray
    volume: np.ndarray
    G_r: np.ndarray
    G_z: np.ndarray

    def field(self, cell_current):
        """(B_r, B_z) [T] at the centres for the cell currents [A]."""
        return self.G_r @ cell_current, self.G_z @ cell_current


def _edges(lo, hi, n, toward_hi=False, ratio=1.0):
    """n + 1 edges on [lo, hi], cell sizes growing by ``ratio`` away from hi (if toward_hi)."""
    sizes = ratio ** np.arange(n)
    x = np.concatenate([[0.0], np.cumsum(sizes)]) / sizes.sum()
    if toward_hi:
        x = 1.0 - x[::-1]
    return lo + (hi - lo) * x


def _section(pole, ring, per_segment=3, n_face=4, n_back=7):
    """Centres and volumes of the rectangles of the steel section."""
    depth = 0.0 if ring is None else ring.depth
    radii = (
        [0.0, pole.radius]
        if ring is None
        else [0.0, ring.inner_radius, ring.outer_radius, pole.radius]
    )
    r_edges = np.unique(
        np.concatenate(
            [np.linspace(a, b, per_segment + 1) for a, b in zip(radii, radii[1:], strict=False)]
        )
    )
    z_face = depth if depth > 0.0 else min(0.1 * pole.length, pole.radius)
    z_edges = np.unique(
        np.concatenate(
            [
                _edges(-pole.length, -z_face, n_back, toward_hi=True, ratio=1.35),
                _edges(-z_face, 0.0, n_face, toward_hi=True, ratio=1.3),
            ]
        )
    )
    rc = 0.5 * (r_edges[1:] + r_edges[:-1])
    zc = 0.5 * (z_edges[1:] + z_edges[:-1])
    R, Z = np.meshgrid(rc, zc, indexing="ij")
    vol = 2.0 * np.pi * R * np.diff(r_edges)[:, None] * np.diff(z_edges)[None, :]
    R, Z, vol = R.ravel(), Z.ravel(), vol.ravel()
    if ring is not None:
        steel = ~((R > ring.inner_radius) & (R < ring.outer_radius) & (Z > -ring.depth))
        R, Z, vol = R[steel], Z[steel], vol[steel]
    return R, Z, vol


def core_grid(design, cells, panels, P) -> CoreGrid:
    """The steel's rectangles of ``design`` and the field map from the cell currents.

    Parameters
    ----------
    design : models.design.Design
    cells : models.fast.discretize.Cells
    panels : PanelSet
    P : ndarray (n_panels, n_cells)
        Bound panel currents per ampere of each cell (complex for a lossy pole).
    """
    r, z, vol = _section(design.pole, design.ring)
    br_c, bz_c = loop_field(cells.rc[None, :], cells.zc[None, :], r[:, None], z[:, None])
    br_p, bz_p = panel_field(panels, r, z)
    return CoreGrid(
        r=r, z=z, volume=vol, G_r=br_c + real_matmul(br_p, P), G_z=bz_c + real_matmul(bz_p, P)
    )


@dataclass(frozen=True)
class CoreLosses:
    """Core losses of one solution [W] and their place.

    eddy : the sheets' eddy loss (from the circuit's complex permeability); hysteresis, excess :
    from the loss law at each rectangle's peak flux density; b_hat : peak flux density of each
    rectangle [T]; eddy_share : each rectangle's share of the eddy loss (sums to 1);
    hysteresis_at, excess_at : each rectangle's hysteresis and excess loss [W]
    """

    eddy: float
    hysteresis: float
    excess: float
    b_hat: np.ndarray
    eddy_share: np.ndarray
    hysteresis_at: np.ndarray
    excess_at: np.ndarray

    @property
    def total(self) -> float:
        return self.eddy + self.hysteresis + self.excess


def hysteresis_excess_at(pole, frequency, b_hat, volume):
    """Per-rectangle hysteresis and excess losses [W] of the pole's loss law (zeros without)."""
    law = pole.core_loss
    if law is None:
        zero = np.zeros_like(volume)
        return zero, zero
    mass = pole.density * volume
    return mass * law.hysteresis(frequency, b_hat), mass * law.excess(frequency, b_hat)


def core_losses(pole, frequency, grid: CoreGrid, cell_current, eddy: float) -> CoreLosses:
    """Core losses of a solution with cell currents ``cell_current`` [A] and sheet eddy loss
    ``eddy`` [W] (models.fast.circuit)."""
    br, bz = grid.field(cell_current)
    b_hat = peak_flux_density(br, bz)
    h_at, e_at = hysteresis_excess_at(pole, frequency, b_hat, grid.volume)
    weight = b_hat**2 * grid.volume
    share = weight / weight.sum() if weight.sum() > 0 else np.full_like(weight, 1.0 / weight.size)
    return CoreLosses(
        eddy=float(eddy),
        hysteresis=float(h_at.sum()),
        excess=float(e_at.sum()),
        b_hat=b_hat,
        eddy_share=share,
        hysteresis_at=h_at,
        excess_at=e_at,
    )


def radial_flux_fraction(grid: CoreGrid, cell_current, face_depth: float) -> float:
    """Sum over the steel within ``face_depth`` [m] of the face of |B_r|^2 dV, over the sum of
    |B|^2 dV over all the steel [-]."""
    br, bz = grid.field(cell_current)
    e_r = np.abs(br) ** 2 * grid.volume
    total = (e_r + np.abs(bz) ** 2 * grid.volume).sum()
    return float(e_r[grid.z > -face_depth].sum() / total) if total > 0 else 0.0
