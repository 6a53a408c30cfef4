"""Field, mutual inductance and its axial derivative of uniformly loaded panels (1 A each).

Each (point, panel) pair is integrated by the rules of ``models.fast.quadrature`` in compiled code
(``models.fast.kernels.panel_pair_sums``), one evaluation of the elliptic integrals per node for
every quantity the pair yields. The circuit asks for the operator (the panel-averaged tangential
field of filaments at the points), ``panel_mutual`` and ``panel_mutual_dz`` at the same points:
all three come from one pass, kept (by the content of the panels and points) for the calls that
follow, as are the fields of ``panel_field`` at the flux-density diagnostics' points, which recur
for a pole model that is reused.
"""

from __future__ import annotations

import numpy as np

from models.errors import DesignError
from models.fast.kernels import FIELD, SOURCE, panel_pair_sums
from models.fast.quadrature import EPS_FIELD, GAUSS_GRADED

#: Results of (panels, points) recently computed, by their content, least recently used dropped
#: first (the name is the one benchmarks clear to time a stage from cold).
_PAIR_RULES: dict = {}
_PAIR_RULES_KEPT = 6


def _points(r, z):
    r = np.atleast_1d(np.asarray(r, dtype=float)).ravel()
    z = np.atleast_1d(np.asarray(z, dtype=float)).ravel()
    if r.shape != z.shape:
        raise DesignError(f"r, z: shapes {r.shape} and {z.shape} must match")
    return r, z


def _all_pairs(panels, r, z, mode):
    """panel_pair_sums of every (point, panel) pair, point-major, as (k, n_pts, n_panels); cached
    by the content of the panels and points; treat as read-only."""
    r, z = _points(r, z)
    key = (mode,) + tuple(
        a.tobytes() for a in (panels.mid_r, panels.mid_z, panels.length, panels.tr, panels.tz, r, z)
    )
    hit = _PAIR_RULES.pop(key, None)
    if hit is None:
        n_pts, n_p = r.size, panels.n
        rho = np.hypot(r[:, None] - panels.mid_r, z[:, None] - panels.mid_z) / panels.length
        sums = panel_pair_sums(
            mode,
            panels,
            np.tile(np.arange(n_p), n_pts),
            np.repeat(r, n_p),
            np.repeat(z, n_p),
            rho.ravel(),
            EPS_FIELD,
            GAUSS_GRADED,
        )
        hit = sums.reshape(sums.shape[0], n_pts, n_p)
        hit.setflags(write=False)
        while len(_PAIR_RULES) >= _PAIR_RULES_KEPT:
            _PAIR_RULES.pop(next(iter(_PAIR_RULES)), None)
    _PAIR_RULES[key] = hit  # now the most recently used
    return hit


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
    br, bz = _all_pairs(panels, r, z, FIELD)
    return br, bz


def source_tangential_field(panels, r, z):
    """Panel-averaged tangential field on each panel of 1 A in a filament at each point [T/A],
    shape (n_pts, n_panels)."""
    return _all_pairs(panels, r, z, SOURCE)[2]


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
    return _all_pairs(panels, r, z, SOURCE)[0]


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
    return _all_pairs(panels, r, z, SOURCE)[1]
