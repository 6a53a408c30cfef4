"""Coaxial loops written afresh from the textbook formulas, for the fast model's tests.

Maxwell's mutual inductance (Smythe 1950 sec. 7.10) and the field of a loop (Jackson 1999
eq. 5.37 in elliptic integrals; Smythe 1950 sec. 7.10), with scipy's complete elliptic integrals
(scipy.special.ellipk/ellipe take the parameter m = k^2). Independent of models.fast.filaments,
which uses its own compiled kernels and series.
"""

from __future__ import annotations

import numpy as np
from scipy.constants import mu_0
from scipy.special import ellipe, ellipk


def maxwell_mutual(a, z0, r, z):
    """Mutual inductance [H] of coaxial loops of radii a, r [m] at heights z0, z [m]."""
    a, z0, r, z = np.broadcast_arrays(*(np.asarray(x, float) for x in (a, z0, r, z)))
    m = 4 * a * r / ((a + r) ** 2 + (z - z0) ** 2)
    k = np.sqrt(m)
    return mu_0 * np.sqrt(a * r) * ((2 / k - k) * ellipk(m) - 2 / k * ellipe(m))


def loop_field(a, z0, r, z):
    """(B_r, B_z) [T/A] at (r, z), r > 0, of a loop of radius a at z0 carrying 1 A."""
    a, z0, r, z = np.broadcast_arrays(*(np.asarray(x, float) for x in (a, z0, r, z)))
    dz = z - z0
    m = 4 * a * r / ((a + r) ** 2 + dz**2)
    big, q2 = np.sqrt((a + r) ** 2 + dz**2), (a - r) ** 2 + dz**2
    kk, ee = ellipk(m), ellipe(m)
    bz = mu_0 / (2 * np.pi * big) * (kk + (a * a - r * r - dz * dz) / q2 * ee)
    br = mu_0 * dz / (2 * np.pi * r * big) * (-kk + (a * a + r * r + dz * dz) / q2 * ee)
    return br, bz
