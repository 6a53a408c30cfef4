"""Linear magnetisable (laminated, non-conducting) pole as bound azimuthal sheet currents.

The magnetised iron is replaced by an azimuthal surface current K on its meridian contour (the
boundary of the pole in the r-z half plane), split into straight panels with a constant K on each.
A panel with total current I_p = K_p * length_p is a continuous ribbon of coaxial filaments; the
functions here give its field, its mutual inductance with a filament and the derivative of that
mutual inductance, integrated accurately even when the filament is close to the panel.

Conventions: axis z, pole face z = 0, core z < 0. The contour runs from the axis on the face,
along the face (down and round the groove), down the side, along the back and back to the axis.
Each panel carries the unit tangent t = phi x n (n the outward normal), which is the direction of
travel along that contour; on the face t = +r. Everything is SI: lengths [m], currents [A],
inductance [H], field per ampere [T/A].

Notes
-----
Integral equation (derived here from the interface conditions). Across a sheet of azimuthal
current K with outward normal n, the tangential flux density jumps by B_t,out - B_t,in = mu0 K;
continuity of H_t with B_in = mu_r mu0 H_in gives B_t,in = mu_r B_t,out. Writing B_t,avg for
(B_t,out + B_t,in)/2, which is the tangential field at the boundary point of all currents (sources
and every sheet, the sheet's own principal value included)::

    mu0 K = (1 - mu_r) B_t,out = -2 lambda B_t,avg,      lambda = (mu_r - 1) / (mu_r + 1)

(the same second-kind boundary integral equation as for the magnetic surface charge of a
magnetisable body, e.g. Jackson, *Classical Electrodynamics*, 3rd ed., sec. 5.9-5.12, written for
the equivalent current). With piecewise-constant K and Galerkin testing (the equation averaged over
each panel)::

    (mu0 / length_i) I_i + 2 lambda sum_p G_ip I_p = -2 lambda <B_t,source>_i

G_ip is the panel-averaged tangential field on panel i of panel p carrying 1 A. The field of a loop
is that of Smythe (``models.fast.filaments.loop_field``). Near and self terms are integrated with
composite Gauss-Legendre rules graded geometrically toward the point of the panel nearest the field
point; the grading is symmetric about a point on the panel itself, so the principal value of the
1/rho (two-dimensional) part is taken exactly and the log singularity of a curved sheet is
integrated.

Implementation (speed only): the rules are applied by the compiled kernels of
models.fast.kernels, one evaluation of the elliptic integrals per node for every quantity a pair
yields; the circuit takes its cells' coupling to the panels from ``kernels.cell_panel_sums``, and
the diagnostics' panel fields are kept by the content of their points (models.fast.panel_kernels).
"""

from __future__ import annotations

import numpy as np
from scipy.constants import mu_0
from scipy.linalg import lu_factor, lu_solve

from models.errors import DesignError
from models.fast.filaments import loop_field
from models.fast.kernels import FIELD, panel_pair_sums
from models.fast.panel_kernels import (
    _PAIR_RULES as _PAIR_RULES,
)
from models.fast.panel_kernels import (
    panel_field,
    panel_mutual,
    panel_mutual_dz,
    source_tangential_field,
)
from models.fast.panels import (
    DEFAULT_PANEL_SIZE,
    PanelSet,
    build_panels,
    build_panels_contour,
)
from models.fast.panels import (
    pole_contour as pole_contour,
)
from models.fast.quadrature import (
    AXIS,
    FAR,
    GAUSS_GRADED,
    MID2,
    TEST_NODES,
    gauss01,
    graded01,
    moment_radius,
)

__all__ = [
    "PanelSet",
    "MagnetisedPole",
    "build_panels",
    "build_panels_contour",
    "bound_current_operator",
    "panel_field",
    "panel_mutual",
    "panel_mutual_dz",
    "DEFAULT_PANEL_SIZE",
]


# ------------------------------------------------------------------------------------------------
# The magnetised pole


def _lambda(relative_permeability):
    """lambda = (mu - 1) / (mu + 1), complex for a lossy (laminated, eddy-current) permeability."""
    mu = complex(relative_permeability)
    if not (np.isfinite(mu) and mu.real >= 1.0 and mu.imag <= 0.0):
        raise DesignError(
            f"relative_permeability = {relative_permeability!r}: must be finite with a real "
            "part >= 1 and an imaginary part <= 0 (a lossy magnet)"
        )
    lam = (mu - 1.0) / (mu + 1.0)
    return lam.real if mu.imag == 0.0 else lam


class MagnetisedPole:
    """Bound-current response of a linear magnetisable body; the panel system LU-factorised once.

    Parameters
    ----------
    panels : PanelSet
    relative_permeability : float or complex
        mu_r >= 1 of the (laminated, non-conducting) iron; complex (Im <= 0) for a laminated stack
        whose sheets carry eddy currents (models.core_loss.lamination_permeability): lambda and
        the panel currents are then complex, the iron's loss and its flux lag included.
    field_matrix : ndarray, optional
        The geometry's panel field matrix of an earlier model of the same panels (reuse).

    Notes
    -----
    Galerkin form of mu0 K = -2 lambda B_t,avg (module docstring); panel-panel terms further than
    ``FAR`` panel lengths apart use the midpoints, nearer ones a 4-point test rule on the field
    panel and graded rules on the source panel.
    """

    def __init__(self, panels: PanelSet, relative_permeability, field_matrix=None):
        self.panels = panels
        mu = complex(relative_permeability)
        self.relative_permeability = mu.real if mu.imag == 0.0 else mu
        self.lam = _lambda(relative_permeability)
        self.field_matrix = self._field_matrix() if field_matrix is None else field_matrix
        a = 2.0 * self.lam * self.field_matrix
        a[np.diag_indices(panels.n)] += mu_0 / panels.length
        self.matrix = a
        self._lu = lu_factor(self.matrix)

    def with_permeability(self, relative_permeability) -> MagnetisedPole:
        """The same panels with another (complex) permeability: shares the geometry's field matrix,
        so the cost is one factorisation."""
        return MagnetisedPole(self.panels, relative_permeability, self.field_matrix)

    def _field_matrix(self):
        """G[i, p]: panel-averaged tangential field on panel i of panel p carrying 1 A [T/A];
        geometry only (independent of the permeability)."""
        p = self.panels
        n = p.n
        sep = np.hypot(p.mid_r[:, None] - p.mid_r[None, :], p.mid_z[:, None] - p.mid_z[None, :])
        ratio_test = sep / p.length[:, None]
        ratio_test = np.where(
            (ratio_test >= FAR) & (p.mid_r < AXIS * p.length)[:, None], FAR * 0.999, ratio_test
        )
        near = (
            (ratio_test < FAR)
            | (sep < FAR * p.length[None, :])
            | (p.mid_r < AXIS * p.length)[None, :]
        )
        np.fill_diagonal(near, False)
        kink = np.abs(p.tr[:-1] * p.tz[1:] - p.tz[:-1] * p.tr[1:]) > 1e-9
        k = np.flatnonzero(kink)
        near[k, k + 1] = False
        near[k + 1, k] = False
        g = np.zeros((n, n))
        # Far pairs: midpoint to midpoint (every pair not integrated below).
        far = ~near
        np.fill_diagonal(far, False)
        far[k, k + 1] = False
        far[k + 1, k] = False
        fi, fp = np.nonzero(far)
        br, bz = loop_field(moment_radius(p)[fp], p.mid_z[fp], p.mid_r[fi], p.mid_z[fi])
        with np.errstate(invalid="ignore"):
            g[fi, fp] = br * p.tr[fi] + bz * p.tz[fi]
        # Self terms: a horizontal panel has no tangential (radial) field in its own plane
        # (B_r = 0 at zeta = 0); the others carry only the log singularity of the curved sheet
        # (the 2-D part is normal to the panel), a few per cent of mu0 / length: a light rule.
        slanted = np.flatnonzero(np.abs(p.tz) > 1e-12)
        groups = [(slanted, slanted, *gauss01(2), 1e-4, 3)]
        # Test rule by the distance in lengths of the averaged panel: 1, 2 or 4 Gauss points.
        for lo, hi, n_test in ((FAR, np.inf, 1), (MID2, FAR, 2), (0.0, MID2, TEST_NODES)):
            ii, pp = np.nonzero(near & (ratio_test >= lo) & (ratio_test < hi))
            groups.append((ii, pp, *gauss01(n_test), 1e-5, GAUSS_GRADED))
        # Neighbours meeting at an angle: the field of one has a log singularity at the shared end
        # of the other; their average uses a rule graded toward that end.
        xg, wg = graded01()
        groups.append((k, k + 1, xg[::-1] * -1.0 + 1.0, wg[::-1], 1e-5, GAUSS_GRADED))
        groups.append((k + 1, k, xg, wg, 1e-5, GAUSS_GRADED))
        self._average_groups(g, groups)
        return g

    def _average_groups(self, g, groups):
        """g[i, p] = sum_k w_k B_t,i(x_k on panel i) of panel p carrying 1 A, for every group.

        ``groups`` holds (ii, pp, x, w, eps, n_gauss): pairs of test panel i and source panel p,
        the test rule (x, w) on [0, 1] and the graded rule's parameters. The kernel is evaluated
        once for all groups that share the graded rule's parameters.
        """
        p = self.panels
        (r0, z0), (r1, z1) = p.start, p.end
        dr, dz = r1 - r0, z1 - z0
        by_rule = {}  # (eps, n_gauss) -> [(ii, pp, x, w)]
        for ii, pp, x, w, eps, n_gauss in groups:
            if ii.size:
                by_rule.setdefault((eps, n_gauss), []).append((ii, pp, x, w))
        for (eps, n_gauss), items in by_rule.items():
            # Test points: x along each test panel, pair-major; the source panel repeats.
            xr = np.concatenate(
                [(r0[ii][:, None] + dr[ii][:, None] * x).ravel() for ii, _, x, _ in items]
            )
            xz = np.concatenate(
                [(z0[ii][:, None] + dz[ii][:, None] * x).ravel() for ii, _, x, _ in items]
            )
            pidx = np.concatenate([np.repeat(pp, x.size) for _, pp, x, _ in items])
            rho = np.hypot(xr - p.mid_r[pidx], xz - p.mid_z[pidx]) / p.length[pidx]
            bri, bzi = panel_pair_sums(FIELD, p, pidx, xr, xz, rho, eps, n_gauss)
            lo = 0
            for ii, pp, x, w in items:
                hi = lo + ii.size * x.size
                bt = bri[lo:hi] * np.repeat(p.tr[ii], x.size) + bzi[lo:hi] * np.repeat(
                    p.tz[ii], x.size
                )
                g[ii, pp] = bt.reshape(-1, x.size) @ w
                lo = hi

    def applied_tangential_field(self, src_r, src_z):
        """Panel-averaged tangential field <B_t>_i of 1 A in each source filament [T/A].

        Returns
        -------
        ndarray, shape (n_panels, n_src)
        """
        return np.ascontiguousarray(source_tangential_field(self.panels, src_r, src_z).T)

    def response(self, applied_bt):
        """Panel currents [A] for a given panel-averaged applied tangential field [T].

        Parameters
        ----------
        applied_bt : array_like, shape (n_panels,) or (n_panels, k)
            <B_t,applied>_i on each panel [T] (per ampere of source: [T/A] gives [A/A]). A uniform
            axial field B0 gives B0 * panels.tz.
        """
        rhs = -2.0 * self.lam * np.asarray(applied_bt, dtype=float)
        return lu_solve(self._lu, rhs)  # complex for a lossy permeability

    def operator(self, src_r, src_z):
        """Panel currents [A] induced by 1 A in each source filament, shape (n_panels, n_src).

        Parameters
        ----------
        src_r, src_z : array_like, shape (n_src,)
            Source filaments [m], outside the iron (they may be close to it).
        """
        return self.response(self.applied_tangential_field(src_r, src_z))


def bound_current_operator(panels, relative_permeability, src_r, src_z):
    """Panel currents [A] induced by 1 A in each source filament (magnetostatic, linear).

    Parameters
    ----------
    panels : PanelSet
    relative_permeability : float
        mu_r >= 1 of the laminated iron.
    src_r, src_z : array_like, shape (n_src,)
        Source filaments [m] anywhere outside the iron.

    Returns
    -------
    ndarray, shape (n_panels, n_src)

    Notes
    -----
    Wrapper of ``MagnetisedPole(panels, mu_r).operator``; keep a ``MagnetisedPole`` to reuse the
    factorisation for several source sets.
    """
    return MagnetisedPole(panels, relative_permeability).operator(src_r, src_z)
