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
from scipy.special import ellipe, ellipkm1

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

# Below this parameter m the bracket (1 - m/2) K - E loses digits to cancellation; a series is used.
_M_SERIES = 1e-2


def _bracket_series(m):
    """(1 - m/2) K(m) - E(m) for small m, from the hypergeometric series of K and E (A&S 17.3.11-12)."""
    # Coefficients c_n of K = pi/2 sum c_n m^n and E = pi/2 sum c_n m^n / (1 - 2n).
    total = np.zeros_like(m)
    c = 1.0
    for n in range(0, 9):
        if n > 0:
            c *= ((2 * n - 1) / (2 * n)) ** 2
        k_n = c
        e_n = c / (1 - 2 * n)
        # (1 - m/2) K: m^n coefficient k_n - k_{n-1}/2
        total = total + (k_n - e_n) * m**n
        total = total - 0.5 * k_n * m ** (n + 1)
    return 0.5 * np.pi * total


def _force_bracket_series(m):
    """(2 - m) E(m) - 2 (1 - m) K(m) for small m, from the same series (A&S 17.3.11-12); it starts
    at (3 pi / 16) m^2, so the closed form loses digits to cancellation there."""
    total = np.zeros_like(m)
    c_prev, c = 0.0, 1.0
    for n in range(0, 11):
        if n > 0:
            c_prev, c = c, c * ((2 * n - 1) / (2 * n)) ** 2
        e_n = c / (1 - 2 * n)
        e_prev = c_prev / (3 - 2 * n) if n > 0 else 0.0
        total = total + (2.0 * e_n - e_prev - 2.0 * c + 2.0 * c_prev) * m**n
    return 0.5 * np.pi * total


#: The kernels below evaluate flat arrays in blocks of this many elements, so that their
#: temporaries stay in the processor's cache (speed only: the values do not depend on it).
_BLOCK = 16384


def _coaxial(r1, z1, r2, z2, want_m, want_dz):
    """M and/or dM/dz1 of coaxial filaments (Maxwell's formula, module docstring) on any shapes.

    The operations and their order are those written out in ``_coaxial_block``; this wrapper
    broadcasts, flattens and evaluates block by block. Returns a list: [M] [dM/dz1].
    """
    args = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (r1, z1, r2, z2)))
    shape = args[0].shape
    flat = [np.ascontiguousarray(a).ravel() for a in args]
    n = flat[0].size
    n_out = int(want_m) + int(want_dz)
    if n <= _BLOCK:
        out = _coaxial_block(*flat, want_m, want_dz)
    else:
        out = [np.empty(n) for _ in range(n_out)]
        for lo in range(0, n, _BLOCK):
            part = _coaxial_block(*(a[lo : lo + _BLOCK] for a in flat), want_m, want_dz)
            for o, v in zip(out, part, strict=True):
                o[lo : lo + _BLOCK] = v
    return [o.reshape(shape) for o in out]


def _coaxial_block(r1, z1, r2, z2, want_m, want_dz):
    """Kernel of ``_coaxial`` on 1-D arrays, written in place to spare temporaries::

        h = z1 - z2, denom = (r1 + r2)^2 + h^2, p = 1 - m = ((r1 - r2)^2 + h^2) / denom
        m = min(4 r1 r2 / denom, 1)
        M = mu0 sqrt(r1 r2) 2 / sqrt(m) [(1 - m/2) K - E]                  (0 where m = 0)
        dM/dz1 = -mu0 h sqrt(m) / (4 p sqrt(r1 r2)) [(2 - m) E - 2 p K]    (0 where m = 0 or h = 0)

    with both brackets by series for m < _M_SERIES (cancellation).
    """
    h = z1 - z2
    h2 = h * h
    denom = r1 + r2
    denom *= denom
    denom += h2
    p = r1 - r2
    p *= p
    p += h2
    p /= denom  # 1 - k^2 formed without cancellation (nearly coincident filaments keep digits)
    m = 4.0 * r1
    m *= r2
    m /= denom
    np.minimum(m, 1.0, out=m)
    with np.errstate(divide="ignore", invalid="ignore"):
        K = ellipkm1(p)
        E = ellipe(m)
        small = np.flatnonzero(m < _M_SERIES)
        sq = np.multiply(r1, r2, out=denom)
        np.sqrt(sq, out=sq)
        km = np.sqrt(m)
        zero = m <= 0.0  # m > 0 is False (NaN included): the pair contributes 0
        out = []
        if want_m:
            b_m = 1.0 - 0.5 * m
            b_m *= K
            b_m -= E
            if small.size:
                b_m[small] = _bracket_series(m[small])
            mm = mu_0 * sq
            mm *= 2.0
            mm /= km
            mm *= b_m
            mm[zero | np.isnan(m)] = 0.0
            out.append(mm)
        if want_dz:
            b_f = 2.0 - m
            b_f *= E
            pk = 2.0 * p
            pk *= K
            b_f -= pk
            if small.size:
                b_f[small] = _force_bracket_series(m[small])
            dd = -mu_0 * h
            dd *= km
            den = np.multiply(4.0, p, out=pk)
            den *= sq
            dd /= den
            dd *= b_f
            dd[zero | np.isnan(m) | (h == 0)] = 0.0
            out.append(dd)
    return out


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
    return _coaxial(r1, z1, r2, z2, True, False)[0]


def mutual_dz(r1, z1, r2, z2):
    """Axial derivative dM/dz1 of the mutual inductance of two coaxial filaments [H/m].

    The time-averaged axial force on filament 1 (rms phasors) is Re(I1 conj(I2)) dM/dz1 [N].

    Notes
    -----
    Closed form obtained by differentiating Maxwell's formula (module docstring); its bracket by
    series for k^2 < 1e-2. dM/dz1 = -dM/dz2.
    """
    return _coaxial(r1, z1, r2, z2, False, True)[0]


def mutual_pair(r1, z1, r2, z2):
    """Mutual inductance [H] and its axial derivative dM/dz1 [H/m] in one pass.

    Elementwise the same as ``mutual`` and ``mutual_dz`` (same formulas and series branches), with
    the elliptic integrals evaluated once for both.
    """
    mm, dd = _coaxial(r1, z1, r2, z2, True, True)
    return mm, dd


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
    a, z0, r, z = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (a, z0, r, z)))
    zeta = z - z0
    alpha2 = (a - r) ** 2 + zeta**2
    beta2 = (a + r) ** 2 + zeta**2
    beta = np.sqrt(beta2)
    with np.errstate(divide="ignore", invalid="ignore"):
        p = alpha2 / beta2  # 1 - m, kept exact near the loop
        m = 1.0 - p
        K = ellipkm1(p)
        E = ellipe(m)
        bz = mu_0 / (2.0 * np.pi * beta) * (E * (a * a - r * r - zeta**2) / alpha2 + K)
        # B_r = -(1 / 2 pi r) dPsi/dz with Psi = M I the flux through the circle at (r, z): the
        # series branch of mutual_dz keeps it accurate far from the loop, where Smythe's bracket
        # cancels.
        br = -mutual_dz(r, z, a, z0) / (2.0 * np.pi * r)
    near_axis = r < 1e-6 * a
    if np.any(near_axis):
        d2 = a * a + zeta**2
        br = np.where(near_axis, 3.0 * mu_0 * a * a * zeta * r / (4.0 * d2**2.5), br)
        bz = np.where(near_axis, mu_0 * a * a / (2.0 * d2**1.5), bz)
    return br, bz


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


def _log_antiderivative(u, v):
    """F(u, v) with d^4 F / du^2 dv^2 = ln sqrt(u^2 + v^2); even in u and v."""
    u = np.abs(u)
    v = np.abs(v)
    r2 = u * u + v * v
    with np.errstate(divide="ignore", invalid="ignore"):
        log = np.where(r2 > 0, np.log(r2), 0.0)
        at_vu = np.where(u > 0, np.arctan(v / u), 0.5 * np.pi)
        at_uv = np.where(v > 0, np.arctan(u / v), 0.5 * np.pi)
    return (
        (u * u * v * v / 8.0 - (u**4 + v**4) / 48.0) * log
        + (u**3 * v * at_vu + u * v**3 * at_uv) / 6.0
        - 25.0 / 48.0 * u * u * v * v
    )


def _log_antiderivative_dv(u, v):
    """dF/dv of ``_log_antiderivative``; even in u, odd in v."""
    return _log_antiderivative_both(u, v)[1]


def _log_antiderivative_both(u, v):
    """(``_log_antiderivative``, ``_log_antiderivative_dv``) from one evaluation of the logarithm
    and the arc tangents they share (the same operations in the same order as each alone)."""
    u = np.abs(u)
    sv = np.sign(v)
    v = np.abs(v)
    r2 = u * u + v * v
    with np.errstate(divide="ignore", invalid="ignore"):
        log = np.zeros(r2.shape)
        np.log(r2, out=log, where=r2 > 0)
        at_vu = np.where(u > 0, np.arctan(v / u), 0.5 * np.pi)
        at_uv = np.where(v > 0, np.arctan(u / v), 0.5 * np.pi)
    # Shared: u * u and the cubes. Products are grouped as in the two functions alone (left to
    # right), so that the values are the same to the last bit.
    uu = u * u
    u3, v3 = u**3, v**3
    f = (
        (uu * v * v / 8.0 - (u**4 + v**4) / 48.0) * log
        + (u3 * v * at_vu + u * v3 * at_uv) / 6.0
        - 25.0 / 48.0 * u * u * v * v
    )
    dv = (
        u3 * at_vu / 6.0
        + uu * v * log / 4.0
        - 11.0 / 12.0 * u * u * v
        + u * v * v * at_uv / 2.0
        - v3 * log / 12.0
        - v3 / 24.0
    )
    return f, sv * dv


_SIGNS = np.array([1.0, -1.0, -1.0, 1.0])


def _differences(a1, b1, a2, b2):
    """The four end-point differences of two intervals, (..., 4), signs as ``_SIGNS``."""
    return np.stack([b1 - a2, b1 - b2, a1 - a2, a1 - b2], axis=-1)


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
    Maxwell's GMD of a rectangle, ``gmd_rectangle``, in tests/test_filaments.py)::

        F = (u^2 v^2 / 8 - (u^4 + v^4) / 48) ln(u^2 + v^2)
            + (u^3 v atan(v/u) + u v^3 atan(u/v)) / 6 - 25 u^2 v^2 / 48
    """
    du = _differences(*(np.asarray(x, dtype=float) for x in (r1[0], r1[1], r2[0], r2[1])))
    dv = _differences(*(np.asarray(x, dtype=float) for x in (z1[0], z1[1], z2[0], z2[1])))
    du, dv = np.broadcast_arrays(du, dv)
    shape = du.shape[:-1]
    du, dv = du.reshape(-1, 4), dv.reshape(-1, 4)
    w = _SIGNS[:, None] * _SIGNS[None, :]
    area = (r1[1] - r1[0]) * (z1[1] - z1[0]) * (r2[1] - r2[0]) * (z2[1] - z2[0])
    sums = np.empty((2, du.shape[0]))
    step = _BLOCK // 16  # pairs per block: 16 (u, v) combinations each
    for lo in range(0, du.shape[0], step):
        f, f_dv = _log_antiderivative_both(du[lo : lo + step, :, None], dv[lo : lo + step, None, :])
        sums[0, lo : lo + step] = (w * f).sum(axis=(-2, -1))
        sums[1, lo : lo + step] = (w * f_dv).sum(axis=(-2, -1))
    ln_g = sums[0].reshape(shape) / area
    d_ln_g = sums[1].reshape(shape) / area
    return ln_g, d_ln_g


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
    cell of a disc, on the axis, stays about 2.6 % low: tests/test_filaments.py).
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
