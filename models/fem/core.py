"""Core losses of a laminated pole and the direction of its flux, from the FEM's own field.

The FEM solves a laminated pole as a lossy magnet: the homogenised permeability of its stack
(`models.core_loss.lamination_permeability`) gives a complex reluctivity whose imaginary part takes
the sheets' eddy loss (`FieldSolution.magnetic_loss_W`). This module adds what a linear field does
not carry, from the field at the quadrature points of the pole (`QuadratureField`):

* the grade's hysteresis and excess losses (loss separation, `models.core_loss`) from the peak flux
  density at every point, at any coil current (the field scales with it);
* `field_crossing_fraction`, the share of the pole's integral of |B|^2 that runs radially in a
  slab at its face, where a stack of flat sheets is crossed by the flux and the homogenisation,
  which holds for flux along the sheets, stops holding.

SI units, rms phasors (peak flux densities are sqrt 2 times the rms ones, as loss data are quoted).
"""

from __future__ import annotations

import math

import numpy as np
from skfem import Basis, ElementQuad2

from models.core_loss import FACE_SLAB_MIN as FACE_SLAB_MIN
from models.core_loss import hysteresis_excess_loss, peak_flux_density
from models.core_loss import radial_flux_slab_depth as radial_flux_slab_depth

__all__ = [
    "FACE_SLAB_MIN",
    "radial_flux_slab_depth",
    "pole_peak_flux_density",
    "hysteresis_excess",
    "field_crossing_fraction",
]

#: Gauss-Legendre points per direction on the part of an element cut by the slab's plane: the
#: integrand |dA/dz|^2 r of biquadratic elements is of degree 5 in r and 2 in z, integrated exactly.
_CUT_POINTS = 4


def pole_peak_flux_density(sol, role: str = "pole") -> tuple[np.ndarray, np.ndarray]:
    """Peak over a period of |B(t)| [T] at every quadrature point of the regions of ``role`` and
    the points' volume weights dV = 2 pi r dA [m^3], both flattened.

    Parameters
    ----------
    sol : models.fem.results.FieldSolution
        Solved with ``keep_field=True``.
    role : str
        Role of the core's regions.

    Returns
    -------
    b_hat, dv : numpy.ndarray
        `models.core_loss.peak_flux_density` of the rms phasors (B_r, B_z): the major semi-axis of
        the field's ellipse times sqrt 2 (sqrt 2 |B| for an alternating field).
    """
    q = sol.quadrature
    sel = q.elements_of(role)
    return peak_flux_density(q.br[sel], q.bz[sel]).ravel(), q.dv[sel].ravel()


def hysteresis_excess(pole, frequency: float, b_hat, dv) -> tuple[float, float]:
    """Hysteresis and excess losses [W] of a pole whose volume elements ``dv`` [m^3] carry the peak
    flux densities ``b_hat`` [T].

    Parameters
    ----------
    pole : models.design.Pole
        Its ``core_loss`` law (None: no loss, (0, 0)) and mass ``density`` [kg/m^3].
    frequency : float
        [Hz].
    b_hat, dv : array_like
        As `pole_peak_flux_density` returns them.

    Returns
    -------
    hysteresis, excess : float
        sum of density (k_h f B_hat^alpha + k_e (f B_hat)^1.5) dV (Bertotti's loss separation,
        `models.core_loss.hysteresis_excess_loss`). The law is one of alternating induction; where
        the field rotates (its ellipse is not flat) it is applied to the ellipse's major axis.
    """
    return hysteresis_excess_loss(pole.core_loss, pole.density, frequency, b_hat, dv)


def field_crossing_fraction(sol, slab_depth: float, role: str = "pole") -> float:
    """Share of the pole's field that runs radially in its face slab [-].

    Parameters
    ----------
    sol : models.fem.results.FieldSolution
        Solved with ``keep_field=True``.
    slab_depth : float
        Depth of the slab below the face z = 0 [m] (`radial_flux_slab_depth`).
    role : str
        Role of the pole's regions (the steel only: a ring's groove is another region).

    Returns
    -------
    float
        int_slab |B_r|^2 dV / int_pole (|B_r|^2 + |B_z|^2) dV, the slab being the pole's elements
        with -slab_depth <= z <= 0; elements the plane z = -slab_depth cuts are integrated over
        their part inside the slab with Gauss points of their own, so that the slab is exact on any
        mesh. nan if the pole carries no field.
    """
    q, basis = sol.quadrature, sol.basis
    pole = q.elements_of(role)
    total = float(np.sum((np.abs(q.br[pole]) ** 2 + np.abs(q.bz[pole]) ** 2) * q.dv[pole]))
    mesh = basis.mesh
    z_corner = mesh.p[1, mesh.t]
    z_lo, z_hi = z_corner.min(axis=0), z_corner.max(axis=0)
    tol = 1e-12 * slab_depth  # a slab ending on a grid line takes whole elements
    inside = pole & (z_lo >= -slab_depth - tol)
    cut = pole & (z_lo < -slab_depth - tol) & (z_hi > -slab_depth + tol)
    radial = float(np.sum(np.abs(q.br[inside]) ** 2 * q.dv[inside]))
    if np.any(cut):
        radial += _radial_above(basis, sol.potential, np.flatnonzero(cut), -slab_depth)
    return radial / total if total > 0.0 else math.nan


def _radial_above(basis, potential, elements, z_cut: float) -> float:
    """int |B_r|^2 dV over the parts z >= z_cut of ``elements`` (axis-aligned rectangles whose
    z-range contains z_cut), by Gauss points on each part, grouped by where the part lies in the
    reference square."""
    mesh = basis.mesh
    ref = np.array([[0.0, 1.0, 0.0], [0.0, 0.0, 1.0]])  # origin, end of axis 0, end of axis 1
    zc = mesh.mapping().F(ref, tind=elements)[1]  # (elements, 3)
    along = np.stack([zc[:, 1] - zc[:, 0], zc[:, 2] - zc[:, 0]])  # z change along each axis
    axis = np.argmax(np.abs(along), axis=0)
    dz = along[axis, np.arange(elements.size)]
    t_cut = (z_cut - zc[:, 0]) / dz
    lo = np.where(dz > 0.0, t_cut, 0.0)
    hi = np.where(dz > 0.0, 1.0, t_cut)
    u, w = np.polynomial.legendre.leggauss(_CUT_POINTS)
    u, w = 0.5 * (u + 1.0), 0.5 * w
    keys = np.round(np.stack([axis, lo, hi], axis=1), 12)
    total = 0.0
    for key in np.unique(keys, axis=0):
        group = elements[np.all(keys == key, axis=1)]
        ax, a, b = int(key[0]), float(key[1]), float(key[2])
        along_z = np.repeat(a + (b - a) * u, _CUT_POINTS)
        across = np.tile(u, _CUT_POINTS)
        points = np.empty((2, along_z.size))
        points[ax], points[1 - ax] = along_z, across
        weights = np.outer(w, w).ravel() * (b - a)
        part = Basis(mesh, ElementQuad2(), elements=group, quadrature=(points, weights))
        br = -part.interpolate(potential).grad[1]
        r = np.asarray(part.global_coordinates())[0]
        total += float(np.sum(np.abs(br) ** 2 * part.dx * 2.0 * np.pi * r))
    return total
