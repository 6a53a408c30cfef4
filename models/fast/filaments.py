"""Kernels of coaxial circular filaments: mutual inductance, its axial derivative, loop field.

All functions are vectorised (numpy broadcasting) and SI: radii and positions [m], inductance [H],
field per unit current [T/A]. A filament is a circle of radius ``r`` in the plane ``z``, centred on
the axis.

Notes
-----
Maxwell's formula for coaxial circles of radii a, b at axial distance h (Maxwell, *Treatise*, vol. 2,
art. 701; Grover, *Inductance Calculations*, 1946, eq. 77 in elliptic-integral form)::

    M = mu0 sqrt(a b) (2/k) [(1 - k^2/2) K(k) - E(k)],   k^2 = 4ab / ((a + b)^2 + h^2)

K and E are the complete elliptic integrals of the first and second kind with parameter m = k^2 (as in
``scipy.special.ellipk``). The axial derivative follows by differentiating with dK/dm and dE/dm::

    dM/dh = -mu0 h k / (4 (1 - m) sqrt(a b)) [(2 - m) E - 2 (1 - m) K]

The field of a loop of radius a at height z0 at the point (r, z) (Smythe, *Static and Dynamic
Electricity*, 1950, sec. 7.10; Jackson, *Classical Electrodynamics*, sec. 5.5), with zeta = z - z0,
alpha^2 = (a - r)^2 + zeta^2, beta^2 = (a + r)^2 + zeta^2, m = 1 - alpha^2 / beta^2::

    B_z = mu0 / (2 pi beta) [E (a^2 - r^2 - zeta^2) / alpha^2 + K]
    B_r = mu0 zeta / (2 pi r beta) [E (a^2 + r^2 + zeta^2) / alpha^2 - K]
"""

from __future__ import annotations

import numpy as np
from scipy.constants import mu_0

from models.fast.kernels import coaxial_pair, loop_field_flat, rect_log_mean_flat

__all__ = [
    "mutual",
    "mutual_dz",
    "mutual_pair",
    "loop_field",
    "self_inductance_round",
    "self_inductance_rect",
    "gmd_rectangle",
    "rect_log_mean",
]


def _flat(*arrays):
    """Broadcast to one shape; the arrays as contiguous 1-D float arrays, and the shape."""
    args = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in arrays))
    return [np.ascontiguousarray(x).ravel() for x in args], args[0].shape


def _coaxial(r1, z1, r2, z2):
    """M and dM/dz1 of coaxial filaments (Maxwell's formula, module docstring) on any shapes,
    by the compiled kernel (models.fast.kernels): both brackets by their series for m < 1e-2
    (cancellation), 0 where m = 0 (a filament of zero radius) and dM/dz1 = 0 where h = 0."""
    flat, shape = _flat(r1, z1, r2, z2)
    mm, dd = coaxial_pair(*flat)
    return mm.reshape(shape), dd.reshape(shape)


def mutual(r1, z1, r2, z2):
    """Mutual inductance of two coaxial circular filaments [H].

    Parameters
    ----------
    r1, z1 : array_like
        Radius and axial position of the first filament [m], r1 > 0.
    r2, z2 : array_like
        Radius and axial position of the second filament [m], r2 > 0; broadcast with the first.

    Returns
    -------
    ndarray
        M [H]. Coincident filaments (k -> 1) return +inf; use a self-inductance formula there.

    Notes
    -----
    Maxwell's elliptic-integral formula (module docstring); series for k^2 < 1e-2.
    """
    return _coaxial(r1, z1, r2, z2)[0]


def mutual_dz(r1, z1, r2, z2):
    """Axial derivative dM/dz1 of the mutual inductance of two coaxial filaments [H/m].

    The time-averaged axial force on filament 1 (rms phasors) is Re(I1 conj(I2)) dM/dz1 [N].

    Notes
    -----
    Closed form obtained by differentiating Maxwell's formula (module docstring); its bracket by
    series for k^2 < 1e-2. dM/dz1 = -dM/dz2.
    """
    return _coaxial(r1, z1, r2, z2)[1]


def mutual_pair(r1, z1, r2, z2):
    """Mutual inductance [H] and its axial derivative dM/dz1 [H/m] in one pass.

    Elementwise the same as ``mutual`` and ``mutual_dz`` (same formulas and series branches), with
    the elliptic integrals evaluated once for both.
    """
    return _coaxial(r1, z1, r2, z2)


def loop_field(a, z0, r, z):
    """Magnetic flux density of a circular loop per unit current [T/A]: (B_r, B_z).

    Parameters
    ----------
    a, z0 : array_like
        Loop radius and axial position [m].
    r, z : array_like
        Field point [m]; r >= 0. Broadcast together with the loop.

    Returns
    -------
    (ndarray, ndarray)
        B_r and B_z per ampere [T/A]. On the loop itself the field is infinite.

    Notes
    -----
    Smythe's formula for B_z (module docstring); B_r = -(1/(2 pi r)) dM/dz, the same field from the
    flux through the coaxial circle at the point (equal to Smythe's B_r). Near the axis (r < 1e-6 a) B_r uses its first-order
    expansion B_r = 3 mu0 a^2 zeta r / (4 (a^2 + zeta^2)^(5/2)) (Jackson sec. 5.5) and B_z its axis
    value mu0 a^2 / (2 (a^2 + zeta^2)^(3/2)).
    """
    flat, shape = _flat(a, z0, r, z)
    br, bz = loop_field_flat(*flat)
    return br.reshape(shape), bz.reshape(shape)


def self_inductance_round(radius, wire_radius):
    """Self-inductance of a thin circular ring of round wire, uniform current [H].

    Notes
    -----
    L = mu0 R (ln(8R/a) - 7/4) (Maxwell; Grover 1946, eq. 119 at low frequency), R >> a.
    """
    radius = np.asarray(radius, dtype=float)
    return mu_0 * radius * (np.log(8.0 * radius / wire_radius) - 1.75)


def gmd_rectangle(a, b):
    """Geometric mean distance of a rectangle of sides a, b from itself [m].

    Notes
    -----
    Maxwell's exact expression (Grover 1946, eq. 9; Rosa & Grover, Bull. Bur. Stand. 8, 1912)::

        ln g = 1/2 ln(a^2 + b^2) - a^2/(12 b^2) ln(1 + b^2/a^2) - b^2/(12 a^2) ln(1 + a^2/b^2)
               + 2a/(3b) atan(b/a) + 2b/(3a) atan(a/b) - 25/12

    For a square g = 0.44705 a.
    """
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    p = a / b
    q = b / a
    ln_g = (
        0.5 * np.log(a * a + b * b)
        - p * p / 12.0 * np.log1p(q * q)
        - q * q / 12.0 * np.log1p(p * p)
        + 2.0 * p / 3.0 * np.arctan(q)
        + 2.0 * q / 3.0 * np.arctan(p)
        - 25.0 / 12.0
    )
    return np.exp(ln_g)


def rect_log_mean(r1, z1, r2, z2):
    """Mean of ln|p - q| over p in one rectangle and q in another (the log of their GMD) [ln m].

    Parameters
    ----------
    r1, z1 : tuple of array_like
        (low, high) bounds of the first rectangle along r and z [m]; likewise r2, z2.

    Returns
    -------
    (ndarray, ndarray)
        ln g12 and its derivative with respect to an axial shift of the first rectangle [1/m].

    Notes
    -----
    Exact: the fourfold integral of ln rho over the two rectangles is a double difference of an
    antiderivative F with F_uuvv = ln sqrt(u^2 + v^2) (derived for this module and checked against
    Maxwell's GMD of a rectangle, ``gmd_rectangle``, in tests/models/fast/test_filaments.py)::

        F = (u^2 v^2 / 8 - (u^4 + v^4) / 48) ln(u^2 + v^2)
            + (u^3 v atan(v/u) + u v^3 atan(u/v)) / 6 - 25 u^2 v^2 / 48
    """
    flat, shape = _flat(r1[0], r1[1], z1[0], z1[1], r2[0], r2[1], z2[0], z2[1])
    ln_g, d_ln_g = rect_log_mean_flat(*flat)
    return ln_g.reshape(shape), d_ln_g.reshape(shape)


def _thin_ring_rect(rc, dr, dz):
    g = gmd_rectangle(dr, dz)
    return mu_0 * rc * (np.log(8.0 * rc / g) - 2.0)


def self_inductance_rect(rc, dr, dz, subdivisions=4, _depth=2):
    """Self-inductance of a ring of rectangular cross-section carrying uniform current [H].

    Parameters
    ----------
    rc : array_like
        Mean radius of the cross-section [m].
    dr, dz : array_like
        Radial and axial sides of the cross-section [m].
    subdivisions : int
        The section is split into n x n sub-rectangles when it is not small against its radius.

    Notes
    -----
    For a section small against its radius, L = mu0 R (ln(8R/g) - 2) with g the GMD of the rectangle
    (Maxwell; Grover 1946, eq. 118 with eq. 9). When dr or dz exceeds rc/5 the section is divided into
    n x n parts: L = (1/n^4)(sum of their selves + sum of their mutual inductances), the mutuals from
    Maxwell's formula between part centres (the GMD of two adjacent squares equals their centre
    distance within 0.6 %, Grover 1946 table 3), applied recursively to two levels (the innermost
    cell of a disc, on the axis, stays about 2.6 % low: tests/models/fast/test_filaments.py).
    """
    rc, dr, dz = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (rc, dr, dz)))
    out = np.array(_thin_ring_rect(rc, dr, dz), dtype=float).reshape(rc.shape)
    big = (np.maximum(dr, dz) > 0.2 * rc).ravel()
    if _depth <= 0 or not np.any(big):
        return out
    n = subdivisions
    # The value depends on (rc, dr, dz) alone: sections that are equal to the last bit (cells of
    # one column of a graded grid often are) are computed once.
    shapes, inverse = np.unique(
        np.stack([rc.ravel()[big], dr.ravel()[big], dz.ravel()[big]], axis=1),
        axis=0,
        return_inverse=True,
    )
    r0, a, b = shapes.T
    offs = (np.arange(n) + 0.5) / n - 0.5
    # Sub-cell centres of every big section: (n_big, n*n)
    sr = (
        (r0[:, None, None] + a[:, None, None] * offs[None, :, None]).repeat(n, 2).reshape(-1, n * n)
    )
    sz = (b[:, None, None] * offs[None, None, :]).repeat(n, 1).reshape(-1, n * n)
    sub_a = np.repeat(a / n, n * n).reshape(-1, n * n)
    sub_b = np.repeat(b / n, n * n).reshape(-1, n * n)
    sub_self = self_inductance_rect(sr, sub_a, sub_b, n, _depth - 1)
    mm = mutual(sr[:, :, None], sz[:, :, None], sr[:, None, :], sz[:, None, :])
    idx = np.arange(n * n)
    mm[:, idx, idx] = 0.0
    flat = out.ravel()
    flat[big] = ((sub_self.sum(axis=1) + mm.sum(axis=(1, 2))) / n**4)[inverse.ravel()]
    return flat.reshape(out.shape)
