"""Compiled (numba) kernels of coaxial filaments and of their integration over panels.

The formulas are those of ``models.fast.filaments`` (Maxwell's mutual inductance and its axial
derivative, Smythe's loop field) and the rules those of ``models.fast.quadrature`` (tiers by
distance, graded composite Gauss rules); this module evaluates them element by element in machine
code, so that nothing is held in temporaries and each (filament, point) pair costs one evaluation
of the complete elliptic integrals for all four quantities it yields.

The elliptic integrals come from the arithmetic-geometric mean (Abramowitz & Stegun 17.6.1-17.6.4;
King, *On the Direct Numerical Calculation of Elliptic Functions and Integrals*, 1924)::

    a0 = 1, b0 = sqrt(1 - m), c0^2 = m;   a_{n+1} = (a_n + b_n) / 2,  b_{n+1} = sqrt(a_n b_n),
    c_{n+1} = (a_n - b_n) / 2;   K = pi / (2 a_N),   E = K (1 - sum_n 2^(n-1) c_n^2)

with 1 - m passed in as formed without cancellation (alpha^2 / beta^2), so that nearly coincident
filaments keep their digits, as ``scipy.special.ellipkm1`` does for the numpy kernels.

Compiled code is cached on disk beside this file (numba's ``cache=True``); the first use on a
fresh install compiles it (see DEVELOPERS.md for the cost).
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit
from scipy.constants import mu_0

import models.fast.quadrature as q

__all__ = [
    "coaxial_pair",
    "loop_field_flat",
    "panel_pair_sums",
    "rect_log_mean_flat",
    "FIELD",
    "SOURCE",
]

_MU0 = float(mu_0)
_TWO_PI = 2.0 * math.pi
# The brackets of M and dM/dz by their series below this m (as models.fast.filaments._M_SERIES).
_M_SERIES = 1e-2


def _series_coefficients():
    """Power-series coefficients in m of (1 - m/2) K - E and (2 - m) E - 2 (1 - m) K, each times
    2 / pi (A&S 17.3.11-12: K = pi/2 sum c_n m^n, E = pi/2 sum c_n m^n / (1 - 2n), c_n =
    ((2n-1)!! / (2n)!!)^2), to the orders of models.fast.filaments' series."""
    c = [1.0]
    for n in range(1, 12):
        c.append(c[-1] * ((2 * n - 1) / (2 * n)) ** 2)
    k = np.array(c)
    e = np.array([c[n] / (1 - 2 * n) for n in range(len(c))])
    bracket = np.zeros(10)
    for n in range(9):
        bracket[n] += k[n] - e[n]
        bracket[n + 1] -= 0.5 * k[n]
    force = np.zeros(11)
    for n in range(11):
        force[n] = 2.0 * e[n] - 2.0 * k[n]
        if n > 0:
            force[n] += -e[n - 1] + 2.0 * k[n - 1]
    return 0.5 * np.pi * bracket, 0.5 * np.pi * force


def _ke_series_coefficients(terms=17):
    """Power-series coefficients in m of K and E (A&S 17.3.11-12)."""
    c = [1.0]
    for n in range(1, terms):
        c.append(c[-1] * ((2 * n - 1) / (2 * n)) ** 2)
    c = np.array(c)
    return 0.5 * np.pi * c, 0.5 * np.pi * c / (1.0 - 2.0 * np.arange(terms))


_BRACKET, _FORCE = _series_coefficients()
_K_SERIES, _E_SERIES = _ke_series_coefficients()
#: K and E by their series below this m (17 terms: the first left out is below 1e-22 of K).
_KE_SERIES = 0.05


@njit(cache=True, error_model="numpy")
def _horner(coef, m):
    s = 0.0
    for i in range(coef.size - 1, -1, -1):
        s = s * m + coef[i]
    return s


@njit(cache=True, error_model="numpy")
def _ellip_ke(p, m):
    """K(m), E(m) by the arithmetic-geometric mean; p = 1 - m (formed accurately by the caller)."""
    if p <= 0.0:
        return np.inf, 1.0
    if m < _KE_SERIES:
        return _horner(_K_SERIES, m), _horner(_E_SERIES, m)
    a = 1.0
    b = math.sqrt(p)
    s = 0.5 * m
    w = 0.5
    for _ in range(60):
        c = 0.5 * (a - b)
        w *= 2.0
        s += w * c * c
        a_next = 0.5 * (a + b)
        b = math.sqrt(a * b)
        a = a_next
        if c <= 1e-9 * a:
            break
    k = math.pi / (2.0 * a)
    return k, k * (1.0 - s)


@njit(cache=True, error_model="numpy")
def _pair(a, z0, r, z):
    """Filament (a, z0) and point/filament (r, z): mutual inductance M [H], dM/dz of the (r, z)
    filament [H/m], and the loop field of 1 A in (a, z0) at (r, z): B_r, B_z [T/A]."""
    zeta = z - z0
    zeta2 = zeta * zeta
    d = a - r
    s = a + r
    alpha2 = d * d + zeta2
    beta2 = s * s + zeta2
    p = alpha2 / beta2
    m = 4.0 * a * r / beta2
    if m > 1.0:
        m = 1.0
    if r < 1e-6 * a:  # near the axis: the loop field's expansion (Jackson sec. 5.5)
        d2 = a * a + zeta2
        br = 3.0 * _MU0 * a * a * zeta * r / (4.0 * d2**2.5)
        bz = _MU0 * a * a / (2.0 * d2**1.5)
        if not (m > 0.0):
            return 0.0, 0.0, br, bz
    elif not (m > 0.0):  # a loop or a point of zero radius
        return 0.0, 0.0, 0.0, 0.0
    k, e = _ellip_ke(p, m)
    sq = math.sqrt(a * r)
    km = math.sqrt(m)
    if m < _M_SERIES:
        b_m = _horner(_BRACKET, m)
        b_f = _horner(_FORCE, m)
    else:
        b_m = (1.0 - 0.5 * m) * k - e
        b_f = (2.0 - m) * e - 2.0 * p * k
    mut = _MU0 * sq * 2.0 / km * b_m
    dz = 0.0 if zeta == 0.0 else -_MU0 * zeta * km / (4.0 * p * sq) * b_f
    if r >= 1e-6 * a:
        beta = math.sqrt(beta2)
        bz = _MU0 / (_TWO_PI * beta) * (e * (a * a - r * r - zeta2) / alpha2 + k)
        br = -dz / (_TWO_PI * r)
    return mut, dz, br, bz


@njit(cache=True, error_model="numpy")
def _coaxial_flat(r1, z1, r2, z2, mut, dz):
    for i in range(r1.size):
        m_, d_, _, _ = _pair(r2[i], z2[i], r1[i], z1[i])
        mut[i] = m_
        dz[i] = d_


def coaxial_pair(r1, z1, r2, z2):
    """M [H] and dM/dz1 [H/m] of coaxial filaments (r1, z1), (r2, z2), 1-D float arrays of equal
    length (models.fast.filaments.mutual_pair's values, compiled)."""
    mut = np.empty(r1.size)
    dz = np.empty(r1.size)
    _coaxial_flat(r1, z1, r2, z2, mut, dz)
    return mut, dz


@njit(cache=True, error_model="numpy")
def _loop_field_flat(a, z0, r, z, br, bz):
    for i in range(a.size):
        _, _, b_r, b_z = _pair(a[i], z0[i], r[i], z[i])
        br[i] = b_r
        bz[i] = b_z


def loop_field_flat(a, z0, r, z):
    """(B_r, B_z) [T/A] of loops (a, z0) at points (r, z), 1-D float arrays of equal length."""
    br = np.empty(a.size)
    bz = np.empty(a.size)
    _loop_field_flat(a, z0, r, z, br, bz)
    return br, bz


# ------------------------------------------------------------------------------------------------
# Panels

#: ``panel_pair_sums`` modes: FIELD, the panel (1 A along it) is the source and the sums are its
#: B_r, B_z at the point; SOURCE, a filament at the point is the source and the sums are the
#: mutual inductance with the panel, its derivative in the point's z and the panel-averaged
#: tangential field of the filament (per ampere).
FIELD, SOURCE = 0, 1


@njit(cache=True, error_model="numpy")
def _accumulate(mode, nr, nz, w, pr, pz, tr, tz, out, k):
    if mode == 0:
        _, _, br, bz = _pair(nr, nz, pr, pz)
        out[0, k] += w * br
        out[1, k] += w * bz
    else:
        mut, dz_node, br, bz = _pair(pr, pz, nr, nz)
        out[0, k] += w * mut
        out[1, k] -= w * dz_node
        out[2, k] += w * (br * tr + bz * tz)


@njit(cache=True, error_model="numpy")
def _panel_pair_sums(
    mode,
    pidx,
    pr,
    pz,
    rho,
    r0,
    z0,
    r1,
    z1,
    moment_r,
    tr,
    tz,
    axis,
    x2,
    x4,
    w2,
    w4,
    xg,
    wg,
    eps,
    far,
    mid2,
    near,
    grade,
    max_levels,
    out,
):
    ln_g = math.log(grade)
    for k in range(pidx.size):
        p = pidx[k]
        q = rho[k]
        if q >= far and axis[p]:
            q = far * 0.999
        ar = r0[p]
        az = z0[p]
        dr = r1[p] - ar
        dz = z1[p] - az
        t_r = tr[p]
        t_z = tz[p]
        if q >= far:
            _accumulate(mode, moment_r[p], az + dz * 0.5, 1.0, pr[k], pz[k], t_r, t_z, out, k)
        elif q >= mid2:
            for j in range(x2.size):
                x = x2[j]
                _accumulate(mode, ar + dr * x, az + dz * x, w2[j], pr[k], pz[k], t_r, t_z, out, k)
        elif q >= near:
            for j in range(x4.size):
                x = x4[j]
                _accumulate(mode, ar + dr * x, az + dz * x, w4[j], pr[k], pz[k], t_r, t_z, out, k)
        else:
            # Graded composite rule toward the point of the panel nearest the point
            # (models.fast.quadrature._graded_nodes).
            length2 = dr * dr + dz * dz
            s = ((pr[k] - ar) * dr + (pz[k] - az) * dz) / length2
            if s < 0.0:
                s = 0.0
            elif s > 1.0:
                s = 1.0
            d = math.hypot(pr[k] - (ar + s * dr), pz[k] - (az + s * dz)) / math.sqrt(length2)
            t = d if d > eps else eps
            for side in range(2):
                extent = s if side == 0 else 1.0 - s
                if extent <= 0.0:
                    continue
                sgn = -1.0 if side == 0 else 1.0
                lev = 0
                if extent > t:
                    lev = int(math.ceil(math.log(t / extent) / ln_g))
                    if lev < 1:
                        lev = 1
                    elif lev > max_levels:
                        lev = max_levels
                for j in range(lev + 1):
                    if j == lev:
                        lo = 0.0
                        hi = extent if lev == 0 else t
                    else:
                        hi = extent * grade**j
                        lo = t if j == lev - 1 else extent * grade ** (j + 1)
                    span = hi - lo
                    for g in range(xg.size):
                        sn = s + sgn * (lo + span * xg[g])
                        _accumulate(
                            mode,
                            ar + dr * sn,
                            az + dz * sn,
                            span * wg[g],
                            pr[k],
                            pz[k],
                            t_r,
                            t_z,
                            out,
                            k,
                        )


def panel_pair_sums(mode, panels, pidx, pr, pz, rho, eps, n_gauss):
    """Integrals over panel ``pidx[k]`` for the point (pr[k], pz[k]), every k: (2, n) sums for
    FIELD, (3, n) for SOURCE (see the modes), by the rules of models.fast.quadrature (``_rule``:
    tiers by ``rho``, the point's distance from the panel's midpoint in panel lengths; graded
    rules with innermost interval ``eps`` and ``n_gauss`` points per interval)."""
    (r0, z0), (r1, z1) = panels.start, panels.end
    x2, w2 = q._gauss01(2)
    x4, w4 = q._gauss01(4)
    xg, wg = q._gauss01(n_gauss)
    out = np.zeros((2 if mode == FIELD else 3, len(pidx)))
    _panel_pair_sums(
        mode,
        np.ascontiguousarray(pidx, dtype=np.int64),
        np.ascontiguousarray(pr, dtype=float),
        np.ascontiguousarray(pz, dtype=float),
        np.ascontiguousarray(rho, dtype=float),
        np.ascontiguousarray(r0, dtype=float),
        np.ascontiguousarray(z0, dtype=float),
        np.ascontiguousarray(r1, dtype=float),
        np.ascontiguousarray(z1, dtype=float),
        np.ascontiguousarray(q._moment_radius(panels), dtype=float),
        np.ascontiguousarray(panels.tr, dtype=float),
        np.ascontiguousarray(panels.tz, dtype=float),
        np.ascontiguousarray(panels.mid_r < q._AXIS * panels.length),
        x2,
        x4,
        w2,
        w4,
        xg,
        wg,
        float(eps),
        q._FAR,
        q._MID2,
        q._NEAR,
        q._GRADE,
        q._MAX_LEVELS,
        out,
    )
    return out


# ------------------------------------------------------------------------------------------------
# The logarithmic mean distance of two rectangles (models.fast.filaments.rect_log_mean)


@njit(cache=True, error_model="numpy")
def _log_f(u, v):
    """F(u, v) of models.fast.filaments.rect_log_mean's docstring (F_uuvv = ln sqrt(u^2 + v^2);
    even in u and v) and dF/dv (odd in v)."""
    u = abs(u)
    sv = 1.0 if v > 0.0 else (-1.0 if v < 0.0 else 0.0)
    v = abs(v)
    r2 = u * u + v * v
    log = math.log(r2) if r2 > 0.0 else 0.0
    at_vu = math.atan(v / u) if u > 0.0 else 0.5 * math.pi
    at_uv = math.atan(u / v) if v > 0.0 else 0.5 * math.pi
    uu = u * u
    vv = v * v
    u3 = uu * u
    v3 = vv * v
    f = (
        (uu * vv / 8.0 - (uu * uu + vv * vv) / 48.0) * log
        + (u3 * v * at_vu + u * v3 * at_uv) / 6.0
        - 25.0 / 48.0 * uu * vv
    )
    dv = (
        u3 * at_vu / 6.0
        + uu * v * log / 4.0
        - 11.0 / 12.0 * uu * v
        + u * vv * at_uv / 2.0
        - v3 * log / 12.0
        - v3 / 24.0
    )
    return f, sv * dv


@njit(cache=True, error_model="numpy")
def _rect_log_mean_flat(a1, b1, c1, d1, a2, b2, c2, d2, ln_g, d_ln_g):
    sign = (1.0, -1.0, -1.0, 1.0)
    for k in range(a1.size):
        du = (b1[k] - a2[k], b1[k] - b2[k], a1[k] - a2[k], a1[k] - b2[k])
        dv = (d1[k] - c2[k], d1[k] - d2[k], c1[k] - c2[k], c1[k] - d2[k])
        f_sum = 0.0
        fd_sum = 0.0
        for i in range(4):
            for j in range(4):
                f, fd = _log_f(du[i], dv[j])
                w = sign[i] * sign[j]
                f_sum += w * f
                fd_sum += w * fd
        area = (b1[k] - a1[k]) * (d1[k] - c1[k]) * (b2[k] - a2[k]) * (d2[k] - c2[k])
        ln_g[k] = f_sum / area
        d_ln_g[k] = fd_sum / area


def rect_log_mean_flat(a1, b1, c1, d1, a2, b2, c2, d2):
    """models.fast.filaments.rect_log_mean for 1-D float arrays of the bounds: rectangle 1 is
    [a1, b1] x [c1, d1] in (r, z), rectangle 2 [a2, b2] x [c2, d2]; (ln g12, d ln g12 / dz1)."""
    ln_g = np.empty(a1.size)
    d_ln_g = np.empty(a1.size)
    _rect_log_mean_flat(a1, b1, c1, d1, a2, b2, c2, d2, ln_g, d_ln_g)
    return ln_g, d_ln_g
