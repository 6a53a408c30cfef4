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
#: The fixed eight steps of the arithmetic-geometric mean in ``_pairs_block`` converge to
#: rounding (the last step's c below 1e-9 a, so that what follows is below 1e-18) for every
#: 1 - m down to this.
_P_FIXED = 1e-16


@njit(cache=True, error_model="numpy")
def _dist(x, y):
    """sqrt(x^2 + y^2) (math.hypot guards against overflow at a cost the model's lengths do not
    need)."""
    return math.sqrt(x * x + y * y)


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


@njit(cache=True, error_model="numpy", inline="always")
def _geometry(a, z0, r, z):
    """zeta = z - z0, zeta^2, alpha^2 = (a - r)^2 + zeta^2, beta^2 = (a + r)^2 + zeta^2,
    p = 1 - m = alpha^2 / beta^2 (formed without cancellation) and m = min(4 a r / beta^2, 1)."""
    zeta = z - z0
    zeta2 = zeta * zeta
    d = a - r
    s = a + r
    alpha2 = d * d + zeta2
    beta2 = s * s + zeta2
    return zeta, zeta2, alpha2, beta2, alpha2 / beta2, min(4.0 * a * r / beta2, 1.0)


@njit(cache=True, error_model="numpy", inline="always")
def _brackets(m, p, k, e):
    """(1 - m/2) K - E and (2 - m) E - 2 (1 - m) K, by their series below _M_SERIES."""
    if m < _M_SERIES:
        return _horner(_BRACKET, m), _horner(_FORCE, m)
    return (1.0 - 0.5 * m) * k - e, (2.0 - m) * e - 2.0 * p * k


@njit(cache=True, error_model="numpy", inline="always")
def _from_brackets(a, r, zeta, zeta2, alpha2, beta2, p, m, k, e, b_m, b_f):
    """M, dM/dz of the (r, z) filament, B_r and B_z at (r, z) from K, E and the brackets
    (module docstring of models.fast.filaments)."""
    sq = math.sqrt(a * r)
    km = math.sqrt(m)
    dz = -_MU0 * zeta * km / (4.0 * p * sq) * b_f
    mut = _MU0 * sq * 2.0 / km * b_m
    bz = _MU0 / (_TWO_PI * math.sqrt(beta2)) * (e * (a * a - r * r - zeta2) / alpha2 + k)
    return mut, dz, -dz / (_TWO_PI * r), bz


@njit(cache=True, error_model="numpy")
def _pair(a, z0, r, z):
    """Filament (a, z0) and point/filament (r, z): mutual inductance M [H], dM/dz of the (r, z)
    filament [H/m], and the loop field of 1 A in (a, z0) at (r, z): B_r, B_z [T/A]."""
    zeta, zeta2, alpha2, beta2, p, m = _geometry(a, z0, r, z)
    if not (m > 0.0):  # a loop or a point of zero radius
        if r < 1e-6 * a:
            d2 = a * a + zeta2
            return 0.0, 0.0, 0.0, _MU0 * a * a / (2.0 * d2**1.5)
        return 0.0, 0.0, 0.0, 0.0
    k, e = _ellip_ke(p, m)
    b_m, b_f = _brackets(m, p, k, e)
    mut, dz, br, bz = _from_brackets(a, r, zeta, zeta2, alpha2, beta2, p, m, k, e, b_m, b_f)
    if zeta == 0.0:
        dz = 0.0
        br = 0.0
    if r < 1e-6 * a:  # near the axis: the loop field's expansion (Jackson sec. 5.5)
        d2 = a * a + zeta2
        br = 3.0 * _MU0 * a * a * zeta * r / (4.0 * d2**2.5)
        bz = _MU0 * a * a / (2.0 * d2**1.5)
    return mut, dz, br, bz


def _f(x, dtype=float):
    """A C-contiguous, writeable array of ``dtype`` (a copy only when needed): the compiled
    functions then see one type per argument and are compiled once."""
    return np.require(x, dtype=dtype, requirements=("C", "W"))


def real_matmul(a, b):
    """a @ b for a real ``a`` and a real or complex ``b``: as two real products when b is
    complex (numpy would promote ``a`` and multiply complex by complex, twice the work)."""
    if np.iscomplexobj(b):
        out = np.empty((a.shape[0], b.shape[1]), dtype=complex)
        out.real = a @ b.real
        out.imag = a @ b.imag
        return out
    return a @ b


def _all_four(a, z0, r, z):
    a, z0, r, z = (_f(x) for x in (a, z0, r, z))
    n = a.size
    out = [np.empty(n) for _ in range(4)]
    _pairs_block(a, z0, r, z, n, *out)
    return out


def coaxial_pair(r1, z1, r2, z2):
    """M [H] and dM/dz1 [H/m] of coaxial filaments (r1, z1), (r2, z2), 1-D float arrays of equal
    length (models.fast.filaments.mutual_pair's values, compiled)."""
    mut, dz, _, _ = _all_four(r2, z2, r1, z1)
    return mut, dz


def loop_field_flat(a, z0, r, z):
    """(B_r, B_z) [T/A] of loops (a, z0) at points (r, z), 1-D float arrays of equal length."""
    _, _, br, bz = _all_four(a, z0, r, z)
    return br, bz


# ------------------------------------------------------------------------------------------------
# Panels

#: ``panel_pair_sums`` modes: FIELD, the panel (1 A along it) is the source and the sums are its
#: B_r, B_z at the point; SOURCE, a filament at the point is the source and the sums are the
#: mutual inductance with the panel, its derivative in the point's z and the panel-averaged
#: tangential field of the filament (per ampere).
FIELD, SOURCE = 0, 1


#: Nodes per block of the panel integration (the block's arrays stay in cache), and the most
#: nodes one pair's rule can have (two sides of max_levels + 1 intervals of up to 5 points).
_BLOCK_NODES = 4096
_PAIR_NODES_MAX = 2 * (q.MAX_LEVELS + 1) * 5


@njit(cache=True, error_model="numpy")
def _pairs_block(a_, z0_, r_, z_, n, mut, dzo, bro, bzo):
    """``_pair`` over the first n elements, written so that the compiler vectorises it: the
    arithmetic-geometric mean takes a fixed 8 steps (converged to rounding for 1 - m >= _P_FIXED)
    and both branches of the series are computed; elements outside that range (nearly
    coincident filaments, a point near the axis, a radius of 0) are done again by ``_pair``."""
    for i in range(n):
        a = a_[i]
        r = r_[i]
        zeta, zeta2, alpha2, beta2, p, m = _geometry(a, z0_[i], r, z_[i])
        aa = 1.0
        bb = math.sqrt(p)
        acc = 0.5 * m
        w = 0.5
        for _ in range(8):
            c = 0.5 * (aa - bb)
            w *= 2.0
            acc += w * c * c
            a_next = 0.5 * (aa + bb)
            bb = math.sqrt(aa * bb)
            aa = a_next
        k_agm = math.pi / (2.0 * aa)
        e_agm = k_agm * (1.0 - acc)
        k_ser = 0.0
        e_ser = 0.0
        for j in range(_K_SERIES.size - 1, -1, -1):
            k_ser = k_ser * m + _K_SERIES[j]
            e_ser = e_ser * m + _E_SERIES[j]
        b_m_ser = 0.0
        for j in range(_BRACKET.size - 1, -1, -1):
            b_m_ser = b_m_ser * m + _BRACKET[j]
        b_f_ser = 0.0
        for j in range(_FORCE.size - 1, -1, -1):
            b_f_ser = b_f_ser * m + _FORCE[j]
        k = k_ser if m < _KE_SERIES else k_agm
        e = e_ser if m < _KE_SERIES else e_agm
        b_m = b_m_ser if m < _M_SERIES else (1.0 - 0.5 * m) * k - e
        b_f = b_f_ser if m < _M_SERIES else (2.0 - m) * e - 2.0 * p * k
        mut[i], dzo[i], bro[i], bzo[i] = _from_brackets(
            a, r, zeta, zeta2, alpha2, beta2, p, m, k, e, b_m, b_f
        )
    for i in range(n):
        a = a_[i]
        r = r_[i]
        _, _, _, _, p, m = _geometry(a, z0_[i], r, z_[i])
        if not (p >= _P_FIXED and m > 0.0 and r >= 1e-6 * a):
            mut[i], dzo[i], bro[i], bzo[i] = _pair(a, z0_[i], r, z_[i])


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
    cap = _BLOCK_NODES + _PAIR_NODES_MAX
    nr = np.empty(cap)
    nz = np.empty(cap)
    nw = np.empty(cap)
    owner = np.empty(cap, np.int64)
    la = np.empty(cap)
    lz = np.empty(cap)
    fr = np.empty(cap)
    fz = np.empty(cap)
    v0 = np.empty(cap)
    v1 = np.empty(cap)
    v2 = np.empty(cap)
    v3 = np.empty(cap)
    k = 0
    n_pairs = pidx.size
    while k < n_pairs:
        n = 0
        while k < n_pairs and n < _BLOCK_NODES:
            # The rule of panel p for the point (px, py), written to nr, nz, nw from n on. The
            # tiers and the graded rule are those of models.fast.quadrature (module docstring).
            # Written out here rather than called: a call per pair costs more than the rule.
            n_first = n
            p = pidx[k]
            px = pr[k]
            py = pz[k]
            q_ = rho[k]
            if q_ >= far and axis[p]:
                q_ = far * 0.999
            ar = r0[p]
            az = z0[p]
            dr = r1[p] - ar
            dz = z1[p] - az
            if q_ >= far:
                nr[n] = moment_r[p]
                nz[n] = az + dz * 0.5
                nw[n] = 1.0
                n += 1
            elif q_ >= mid2:
                for j in range(x2.size):
                    nr[n] = ar + dr * x2[j]
                    nz[n] = az + dz * x2[j]
                    nw[n] = w2[j]
                    n += 1
            elif q_ >= near:
                for j in range(x4.size):
                    nr[n] = ar + dr * x4[j]
                    nz[n] = az + dz * x4[j]
                    nw[n] = w4[j]
                    n += 1
            else:
                # Graded composite rule toward the point of the panel nearest the point: the
                # innermost interval on each side is max(d, eps) (d the point's distance from
                # the panel in panel lengths), the others grow by 1 / grade.
                length2 = dr * dr + dz * dz
                s = ((px - ar) * dr + (py - az) * dz) / length2
                if s < 0.0:
                    s = 0.0
                elif s > 1.0:
                    s = 1.0
                d = _dist(px - (ar + s * dr), py - (az + s * dz)) / math.sqrt(length2)
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
                            nr[n] = ar + dr * sn
                            nz[n] = az + dz * sn
                            nw[n] = span * wg[g]
                            n += 1
            for j in range(n_first, n):
                owner[j] = k
            k += 1
        if mode == 0:  # the panel's node is the loop, the field at the point
            for j in range(n):
                la[j] = nr[j]
                lz[j] = nz[j]
                fr[j] = pr[owner[j]]
                fz[j] = pz[owner[j]]
        else:  # the point is the loop, the field (and flux) at the panel's node
            for j in range(n):
                la[j] = pr[owner[j]]
                lz[j] = pz[owner[j]]
                fr[j] = nr[j]
                fz[j] = nz[j]
        _pairs_block(la, lz, fr, fz, n, v0, v1, v2, v3)
        if mode == 0:
            for j in range(n):
                o = owner[j]
                out[0, o] += nw[j] * v2[j]
                out[1, o] += nw[j] * v3[j]
        else:
            for j in range(n):
                o = owner[j]
                p = pidx[o]
                out[0, o] += nw[j] * v0[j]
                out[1, o] -= nw[j] * v1[j]
                out[2, o] += nw[j] * (v2[j] * tr[p] + v3[j] * tz[p])


def panel_pair_sums(mode, panels, pidx, pr, pz, rho, eps, n_gauss):
    """Integrals over panel ``pidx[k]`` for the point (pr[k], pz[k]), every k: (2, n) sums for
    FIELD, (3, n) for SOURCE (see the modes), by the rules of models.fast.quadrature (tiers by
    ``rho``, the point's distance from the panel's midpoint in panel lengths; graded rules with
    innermost interval ``eps`` and ``n_gauss`` points per interval)."""
    (r0, z0), (r1, z1) = panels.start, panels.end
    x2, w2 = q.gauss01(2)
    x4, w4 = q.gauss01(4)
    xg, wg = q.gauss01(n_gauss)
    c = _f
    out = np.zeros((2 if mode == FIELD else 3, len(pidx)))
    _panel_pair_sums(
        mode,
        c(pidx, dtype=np.int64),
        c(pr, dtype=float),
        c(pz, dtype=float),
        c(rho, dtype=float),
        c(r0, dtype=float),
        c(z0, dtype=float),
        c(r1, dtype=float),
        c(z1, dtype=float),
        c(q.moment_radius(panels), dtype=float),
        c(panels.tr, dtype=float),
        c(panels.tz, dtype=float),
        c(panels.mid_r < q.AXIS * panels.length, dtype=np.bool_),
        c(x2),
        c(x4),
        c(w2),
        c(w4),
        c(xg),
        c(wg),
        float(eps),
        q.FAR,
        q.MID2,
        q.NEAR,
        q.GRADE,
        q.MAX_LEVELS,
        out,
    )
    return out


@njit(cache=True, error_model="numpy")
def _scatter(sums, scale, target, out):
    for k in range(scale.size):
        for i in range(sums.shape[0]):
            out[i, target[k]] += scale[k] * sums[i, k]


@njit(cache=True, error_model="numpy")
def _cell_pairs(rc, zc, dr, dz, gx, gw, reach, mid_r, mid_z, length):
    """(panel, point, distance in panel lengths, weight, output index) of every cell-panel
    pair: order^2 Gauss nodes of a cell within ``reach`` cell sizes of some panel, else its
    centre."""
    n_c = rc.size
    n_p = mid_r.size
    n_g = gx.size * gx.size
    count = 0
    near = np.zeros(n_c * n_p, np.bool_)
    dist = np.empty(n_p)
    for c in range(n_c):
        size = max(dr[c], dz[c])
        closest = np.inf
        for p in range(n_p):
            dist[p] = _dist(rc[c] - mid_r[p], zc[c] - mid_z[p]) - 0.5 * length[p]
            closest = min(closest, dist[p])
        for p in range(n_p):
            if n_g > 1 and closest < reach * size:
                near[c * n_p + p] = True
                count += n_g
            else:
                count += 1
    pidx = np.empty(count, np.int64)
    pr = np.empty(count)
    pz = np.empty(count)
    rho = np.empty(count)
    scale = np.empty(count)
    target = np.empty(count, np.int64)
    n = 0
    for c in range(n_c):
        for p in range(n_p):
            k = c * n_p + p
            if near[k]:
                for i in range(gx.size):
                    for j in range(gx.size):
                        x = rc[c] + dr[c] * gx[i]
                        y = zc[c] + dz[c] * gx[j]
                        pidx[n] = p
                        pr[n] = x
                        pz[n] = y
                        rho[n] = _dist(x - mid_r[p], y - mid_z[p]) / length[p]
                        scale[n] = gw[i] * gw[j]
                        target[n] = k
                        n += 1
            else:
                pidx[n] = p
                pr[n] = rc[c]
                pz[n] = zc[c]
                rho[n] = _dist(rc[c] - mid_r[p], zc[c] - mid_z[p]) / length[p]
                scale[n] = 1.0
                target[n] = k
                n += 1
    return pidx, pr, pz, rho, scale, target


def cell_panel_sums(panels, rc, zc, dr, dz, order, reach):
    """SOURCE sums (mutual inductance, its derivative in the cell's z, panel-averaged tangential
    field; shape (3, n_cells, n_panels)) of uniform-current cells (centres rc, zc, sides dr, dz)
    with every panel. A cell within ``reach`` cell sizes of a panel (the distance of its centre
    from the panel's midpoint less half the panel's length) is averaged over order x order
    Gauss-Legendre nodes, otherwise taken at its centre."""
    x, w = np.polynomial.legendre.leggauss(max(int(order), 1))
    c = _f
    pairs = _cell_pairs(
        c(rc, dtype=float),
        c(zc, dtype=float),
        c(dr, dtype=float),
        c(dz, dtype=float),
        0.5 * x,
        0.5 * w,
        float(reach),
        c(panels.mid_r, dtype=float),
        c(panels.mid_z, dtype=float),
        c(panels.length, dtype=float),
    )
    pidx, pr, pz, rho, scale, target = pairs
    sums = panel_pair_sums(SOURCE, panels, pidx, pr, pz, rho, q.EPS_FIELD, q.GAUSS_GRADED)
    out = np.zeros((3, rc.size * panels.n))
    _scatter(sums, scale, target, out)
    return out.reshape(3, rc.size, panels.n)


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
    # atan(v/u) and atan(u/v) (pi/2 where the argument's denominator is 0); the two add up
    # to pi/2 where u, v > 0, so one arc tangent serves, taken on the argument <= 1.
    if u > 0.0 and v > 0.0:
        if v <= u:
            at_vu = math.atan(v / u)
            at_uv = 0.5 * math.pi - at_vu
        else:
            at_uv = math.atan(u / v)
            at_vu = 0.5 * math.pi - at_uv
    else:
        at_vu = 0.0 if v == 0.0 and u > 0.0 else 0.5 * math.pi
        at_uv = 0.0 if u == 0.0 and v > 0.0 else 0.5 * math.pi
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
def _log_mean_pair(a1, b1, c1, d1, a2, b2, c2, d2):
    """One pair of ``_rect_log_mean_flat``."""
    du = (b1 - a2, b1 - b2, a1 - a2, a1 - b2)
    dv = (d1 - c2, d1 - d2, c1 - c2, c1 - d2)
    sign = (1.0, -1.0, -1.0, 1.0)
    f_sum = 0.0
    fd_sum = 0.0
    for i in range(4):
        for j in range(4):
            f, fd = _log_f(du[i], dv[j])
            w = sign[i] * sign[j]
            f_sum += w * f
            fd_sum += w * fd
    area = (b1 - a1) * (d1 - c1) * (b2 - a2) * (d2 - c2)
    return f_sum / area, fd_sum / area


@njit(cache=True, error_model="numpy")
def _rect_log_mean_flat(a1, b1, c1, d1, a2, b2, c2, d2, ln_g, d_ln_g):
    for k in range(a1.size):
        ln_g[k], d_ln_g[k] = _log_mean_pair(a1[k], b1[k], c1[k], d1[k], a2[k], b2[k], c2[k], d2[k])


def rect_log_mean_flat(a1, b1, c1, d1, a2, b2, c2, d2):
    """models.fast.filaments.rect_log_mean for 1-D float arrays of the bounds: rectangle 1 is
    [a1, b1] x [c1, d1] in (r, z), rectangle 2 [a2, b2] x [c2, d2]; (ln g12, d ln g12 / dz1)."""
    ln_g = np.empty(a1.size)
    d_ln_g = np.empty(a1.size)
    _rect_log_mean_flat(*(_f(x) for x in (a1, b1, c1, d1, a2, b2, c2, d2)), ln_g, d_ln_g)
    return ln_g, d_ln_g


# ------------------------------------------------------------------------------------------------
# The cells' mutual inductance matrix (models.fast.circuit.cell_mutual_matrix)

#: Pairs of cells nearer than this many cell sizes average the kernel over Gauss nodes.
_NEAR_REACH = 1.01
#: Two-point Gauss-Legendre abscissae on [-1/2, 1/2].
_G2 = 0.5 / math.sqrt(3.0)


@njit(cache=True, error_model="numpy")
def _cell_mutual(r0, r1, z0, z1, rows, mat, der):
    n = r0.size
    rc = 0.5 * (r0 + r1)
    zc = 0.5 * (z0 + z1)
    dr = r1 - r0
    dz = z1 - z0
    n_far = 0
    n_near = 0
    near = np.zeros((n, n), np.bool_)
    for i in range(n):
        for j in range(i + 1, n):
            gap_r = abs(rc[i] - rc[j]) - 0.5 * (dr[i] + dr[j])
            gap_z = abs(zc[i] - zc[j]) - 0.5 * (dz[i] + dz[j])
            size = max(max(dr[i], dr[j]), max(dz[i], dz[j]))
            if max(gap_r, gap_z) < _NEAR_REACH * size:
                near[i, j] = True
                n_near += 1
            else:
                n_far += 1
    # Far pairs: Maxwell's formula between centres.
    m = n_far + 16 * n_near
    a1 = np.empty(m)
    b1 = np.empty(m)
    a2 = np.empty(m)
    b2 = np.empty(m)
    k = 0
    for i in range(n):
        for j in range(i + 1, n):
            if near[i, j]:
                for u in range(4):
                    ri = rc[i] + dr[i] * (_G2 if u >= 2 else -_G2)
                    zi = zc[i] + dz[i] * (_G2 if u % 2 == 1 else -_G2)
                    for v in range(4):
                        a1[k] = ri
                        b1[k] = zi
                        a2[k] = rc[j] + dr[j] * (_G2 if v >= 2 else -_G2)
                        b2[k] = zc[j] + dz[j] * (_G2 if v % 2 == 1 else -_G2)
                        k += 1
            else:
                a1[k] = rc[i]
                b1[k] = zc[i]
                a2[k] = rc[j]
                b2[k] = zc[j]
                k += 1
    mut = np.empty(m)
    dz1 = np.empty(m)
    br = np.empty(m)
    bz = np.empty(m)
    _pairs_block(a2, b2, a1, b1, m, mut, dz1, br, bz)  # dz1: derivative in cell i's z
    k = 0
    for i in range(n):
        for j in range(i + 1, n):
            if near[i, j]:
                # The log singularity of the kernel is averaged exactly (the rectangles' GMD)
                # in place of its Gauss average: M ~ mu0 R (ln(8R/rho) - 2) near coincidence.
                m_sum = 0.0
                d_sum = 0.0
                log_sum = 0.0
                dlog_sum = 0.0
                for t in range(16):
                    m_sum += mut[k + t]
                    d_sum += dz1[k + t]
                    ddr = a1[k + t] - a2[k + t]
                    ddz = b1[k + t] - b2[k + t]
                    rho2 = ddr * ddr + ddz * ddz
                    log_sum += math.log(rho2)
                    dlog_sum += ddz / rho2
                k += 16
                exact_log, exact_dlog = _log_mean_pair(
                    r0[i], r1[i], z0[i], z1[i], r0[j], r1[j], z0[j], z1[j]
                )
                scale = _MU0 * math.sqrt(rc[i] * rc[j])
                m_ij = m_sum / 16.0 - scale * (exact_log - 0.5 * log_sum / 16.0)
                d_ij = d_sum / 16.0 - scale * (exact_dlog - dlog_sum / 16.0)
            else:
                m_ij = mut[k]
                d_ij = dz1[k]
                k += 1
            mat[i, j] = m_ij
            mat[j, i] = m_ij
            der[i, j] = d_ij if rows[i] else 0.0
            der[j, i] = -d_ij if rows[j] else 0.0


@njit(cache=True, error_model="numpy")
def _cell_mutual_cross(r0a, r1a, z0a, z1a, r0b, r1b, z0b, z1b, mat, der_a, der_b):
    """``_cell_mutual`` between two sets of cells, a before b in the cells' order: the same pairs
    (i of a, j of b) and the same arithmetic, so the same numbers, bit for bit. mat[i, j] = M_ij,
    der_a[i, j] = dM_ij/dz_i, der_b[j, i] = dM_ij/dz_j."""
    na = r0a.size
    nb = r0b.size
    rca = 0.5 * (r0a + r1a)
    zca = 0.5 * (z0a + z1a)
    dra = r1a - r0a
    dza = z1a - z0a
    rcb = 0.5 * (r0b + r1b)
    zcb = 0.5 * (z0b + z1b)
    drb = r1b - r0b
    dzb = z1b - z0b
    n_far = 0
    n_near = 0
    near = np.zeros((na, nb), np.bool_)
    for i in range(na):
        for j in range(nb):
            gap_r = abs(rca[i] - rcb[j]) - 0.5 * (dra[i] + drb[j])
            gap_z = abs(zca[i] - zcb[j]) - 0.5 * (dza[i] + dzb[j])
            size = max(max(dra[i], drb[j]), max(dza[i], dzb[j]))
            if max(gap_r, gap_z) < _NEAR_REACH * size:
                near[i, j] = True
                n_near += 1
            else:
                n_far += 1
    m = n_far + 16 * n_near
    a1 = np.empty(m)
    b1 = np.empty(m)
    a2 = np.empty(m)
    b2 = np.empty(m)
    k = 0
    for i in range(na):
        for j in range(nb):
            if near[i, j]:
                for u in range(4):
                    ri = rca[i] + dra[i] * (_G2 if u >= 2 else -_G2)
                    zi = zca[i] + dza[i] * (_G2 if u % 2 == 1 else -_G2)
                    for v in range(4):
                        a1[k] = ri
                        b1[k] = zi
                        a2[k] = rcb[j] + drb[j] * (_G2 if v >= 2 else -_G2)
                        b2[k] = zcb[j] + dzb[j] * (_G2 if v % 2 == 1 else -_G2)
                        k += 1
            else:
                a1[k] = rca[i]
                b1[k] = zca[i]
                a2[k] = rcb[j]
                b2[k] = zcb[j]
                k += 1
    mut = np.empty(m)
    dz1 = np.empty(m)
    br = np.empty(m)
    bz = np.empty(m)
    _pairs_block(a2, b2, a1, b1, m, mut, dz1, br, bz)  # dz1: derivative in cell i's z
    k = 0
    for i in range(na):
        for j in range(nb):
            if near[i, j]:
                m_sum = 0.0
                d_sum = 0.0
                log_sum = 0.0
                dlog_sum = 0.0
                for t in range(16):
                    m_sum += mut[k + t]
                    d_sum += dz1[k + t]
                    ddr = a1[k + t] - a2[k + t]
                    ddz = b1[k + t] - b2[k + t]
                    rho2 = ddr * ddr + ddz * ddz
                    log_sum += math.log(rho2)
                    dlog_sum += ddz / rho2
                k += 16
                exact_log, exact_dlog = _log_mean_pair(
                    r0a[i], r1a[i], z0a[i], z1a[i], r0b[j], r1b[j], z0b[j], z1b[j]
                )
                scale = _MU0 * math.sqrt(rca[i] * rcb[j])
                m_ij = m_sum / 16.0 - scale * (exact_log - 0.5 * log_sum / 16.0)
                d_ij = d_sum / 16.0 - scale * (exact_dlog - dlog_sum / 16.0)
            else:
                m_ij = mut[k]
                d_ij = dz1[k]
                k += 1
            mat[i, j] = m_ij
            der_a[i, j] = d_ij
            der_b[j, i] = -d_ij


def cell_mutual_cross(a, b):
    """Mutual inductances between the cells ``a`` and the cells ``b`` (each (r0, r1, z0, z1)
    arrays; a before b in the cells' order) [H], (na, nb), and dM/dz [H/m] in a's rows (na, nb)
    and in b's (nb, na): the block of ``cell_mutual`` on a and b together, the same numbers."""
    c = _f
    a = [c(x, dtype=float) for x in a]
    b = [c(x, dtype=float) for x in b]
    mat = np.zeros((a[0].size, b[0].size))
    der_a = np.zeros((a[0].size, b[0].size))
    der_b = np.zeros((b[0].size, a[0].size))
    _cell_mutual_cross(*a, *b, mat, der_a, der_b)
    return mat, der_a, der_b


def cell_mutual(r0, r1, z0, z1, rows):
    """Mutual inductances of uniform-current cells [r0, r1] x [z0, z1] (diagonal left 0) [H] and
    dM/dz_i [H/m] in the rows ``rows`` (others 0): models.fast.circuit.cell_mutual_matrix's
    off-diagonal terms."""
    n = r0.size
    mat = np.zeros((n, n))
    der = np.zeros((n, n))
    c = _f
    _cell_mutual(
        c(r0, dtype=float),
        c(r1, dtype=float),
        c(z0, dtype=float),
        c(z1, dtype=float),
        c(rows, dtype=np.bool_),
        mat,
        der,
    )
    return mat, der
