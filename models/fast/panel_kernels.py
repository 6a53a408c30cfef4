"""Field, mutual inductance and its axial derivative of uniformly loaded panels (1 A each).

Kernels are evaluated once over the flat node arrays of a ``_Rule`` (``models.fast.quadrature``), in
cache-sized blocks; the rule of a set of points is kept (by content) for the next call with the
same points, since the circuit asks for the operator, ``panel_mutual`` and ``panel_mutual_dz`` at
the same filaments, and the last two come from one pass that shares the near-range terms.
"""

from __future__ import annotations

import numpy as np

from models.errors import DesignError
from models.fast.filaments import loop_field, mutual_pair
from models.fast.quadrature import _rule

#: Kernels on flat arrays are evaluated in blocks of this many elements (temporaries stay in cache).
_BLOCK = 16384


def _blocked(kernel, n_out, *arrays):
    """``kernel(*arrays)`` for 1-D arrays of equal length, evaluated block by block."""
    n = arrays[0].size
    if n <= _BLOCK or any(a.ndim != 1 or a.size != n for a in arrays):
        return kernel(*arrays)
    out = [np.empty(n) for _ in range(n_out)]
    for lo in range(0, n, _BLOCK):
        hi = lo + _BLOCK
        for o, v in zip(out, kernel(*(a[lo:hi] for a in arrays)), strict=True):
            o[lo:hi] = v
    return out


def _loop_field(a, z0, r, z):
    """Smythe's loop field per ampere [T/A] (``models.fast.filaments.loop_field``), block by block."""
    args = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (a, z0, r, z)))
    shape = args[0].shape
    br, bz = _blocked(loop_field, 2, *(x.ravel() for x in args))
    return br.reshape(shape), bz.reshape(shape)


def _mutual_pair_block(node_r, node_z, pr, pz):
    """(``mutual(node, point)``, dM/dz at the point) in one pass (``models.fast.filaments.mutual_pair``;
    dM/dz_point = -dM/dz_node)."""
    mut, dz_node = mutual_pair(node_r, node_z, pr, pz)
    return mut, -dz_node


def _mutual_pair_kernel(node_r, node_z, pr, pz):
    return _blocked(_mutual_pair_block, 2, node_r, node_z, pr, pz)


def _field_kernel(node_r, node_z, pr, pz):
    return _loop_field(node_r, node_z, pr, pz)


def _source_field_kernel(node_r, node_z, pr, pz):
    """Field at the panel nodes of a loop at the point (the source filament) [T/A]."""
    return _loop_field(pr, pz, node_r, node_z)


#: Rules of (point, panel) pairs recently used, by the content of the panels and points, least
#: recently used dropped first: the circuit asks for the operator, the mutual inductance and its
#: derivative at the same points, and one evaluation uses three point sets (the circuit's nodes
#: and the two flux-density diagnostics), which recur for a pole model that is reused.
_PAIR_RULES: dict = {}
_PAIR_RULES_KEPT = 4


def _points(r, z):
    r = np.atleast_1d(np.asarray(r, dtype=float)).ravel()
    z = np.atleast_1d(np.asarray(z, dtype=float)).ravel()
    if r.shape != z.shape:
        raise DesignError(f"r, z: shapes {r.shape} and {z.shape} must match")
    return r, z


def _pair_rule(panels, r, z, with_spare=False):
    """Quadrature rule (``_Rule``) of every (point, panel) pair, point-major, and the point of each
    node (point_r, point_z). Cached by the content of panels and points; treat as read-only.
    ``with_spare`` adds the entry's dict of results computed ahead (``_mutual_pair``)."""
    key = tuple(
        a.tobytes() for a in (panels.mid_r, panels.mid_z, panels.length, panels.tr, panels.tz, r, z)
    )
    hit = _PAIR_RULES.pop(key, None)
    if hit is not None:
        _PAIR_RULES[key] = hit  # now the most recently used
    else:
        n_pts, n_p = r.size, panels.n
        pr, pz = np.repeat(r, n_p), np.repeat(z, n_p)
        rho = np.hypot(r[:, None] - panels.mid_r, z[:, None] - panels.mid_z) / panels.length
        rule = _rule(panels, np.tile(np.arange(n_p), n_pts), pr, pz, rho=rho.ravel())
        point = rule.owner // n_p
        hit = rule, r[point], z[point], {}
        while len(_PAIR_RULES) >= _PAIR_RULES_KEPT:
            _PAIR_RULES.pop(next(iter(_PAIR_RULES)), None)
        _PAIR_RULES[key] = hit
    return hit if with_spare else hit[:3]


def _mutual_pair(panels, r, z, which):
    """``panel_mutual`` (which = 0) or ``panel_mutual_dz`` (1): both are computed in one pass and
    the other one is kept with the cached rule for the call that the circuit makes next."""
    r, z = _points(r, z)
    rule, pr, pz, spare = _pair_rule(panels, r, z, with_spare=True)
    done = spare.pop(which, None)
    if done is not None:
        return done
    vals = rule.apply(_mutual_pair_kernel(rule.node_r, rule.node_z, pr, pz))
    vals = [v.reshape(r.size, panels.n) for v in vals]
    spare.clear()
    spare[1 - which] = vals[1 - which]
    return vals[which]


def _dense(panels, r, z, kernel):
    """kernel integrated over every panel for every point: arrays of shape (n_pts, n_panels)."""
    r, z = _points(r, z)
    rule, pr, pz = _pair_rule(panels, r, z)
    vals = rule.apply(kernel(rule.node_r, rule.node_z, pr, pz))
    return [v.reshape(r.size, panels.n) for v in vals]


def panel_field(panels, r, z):
    """Flux density of each panel carrying 1 A (uniform along it) at points (r, z) [T/A].

    Parameters
    ----------
    panels : PanelSet
    r, z : array_like, shape (n_pts,)
        Field points [m]; r >= 0.

    Returns
    -------
    (ndarray, ndarray)
        B_r and B_z, each (n_pts, n_panels) [T/A]. On a panel itself the value is the average of
        the two sides (the principal value).

    Notes
    -----
    Integral of Smythe's loop field (``models.fast.filaments.loop_field``) over the panel, by Gauss
    rules graded toward the point (module docstring).
    """
    br, bz = _dense(panels, r, z, _field_kernel)
    return br, bz


def panel_mutual(panels, r, z):
    """Mutual inductance of each panel (1 A uniform along it) with filaments at (r, z) [H].

    Parameters
    ----------
    panels : PanelSet
    r, z : array_like, shape (n_pts,)
        Filament radii and axial positions [m].

    Returns
    -------
    ndarray, shape (n_pts, n_panels)
        M [H]: flux linking the filament per ampere of panel current.

    Notes
    -----
    Maxwell's formula (``models.fast.filaments.mutual``) averaged over the panel with graded Gauss rules;
    finite (log-integrable) even for a filament on the panel.
    """
    return _mutual_pair(panels, r, z, 0)


def panel_mutual_dz(panels, r, z):
    """Derivative of ``panel_mutual`` with respect to the filament's axial position [H/m].

    Returns
    -------
    ndarray, shape (n_pts, n_panels)
        dM/dz_filament [H/m]; the time-averaged axial force on the filament (rms phasors) is
        Re(I_filament conj(I_panel)) dM/dz [N].

    Notes
    -----
    Closed-form dM/dz of Maxwell's formula (``models.fast.filaments.mutual_dz``) averaged over the panel.
    """
    return _mutual_pair(panels, r, z, 1)
