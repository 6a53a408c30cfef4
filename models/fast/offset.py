"""A part off the pole's axis: its pull, lateral force, tilt torque and centring stiffness.

The magnet stays axisymmetric; only the part moves, its centre at x = d from the pole's axis.
The part is a stack of thin sheets (``layers`` through its thickness), each carrying an in-plane
sheet current K = curl(psi z_hat) given by a stream function psi that is zero on the rims (no
current leaves the part). In the part's own polar coordinates (rho, phi), with the offset along
phi = 0, the magnet's field at the part is even in phi, so psi is a cosine series
psi = sum_m f_m(rho) cos(m phi), and the part (axisymmetric about its own centre) answers each
harmonic m on its own:

    (R_m + j omega M_m) c_m = -j omega c(m) int f_a B_z,m rho drho

with c(0) = 2 pi, c(m >= 1) = pi; B_z,m the m-th cosine coefficient of the source field's B_z on
the part (the EMF of a sheet loop is minus j omega times the flux through it: int A . K_a dS =
int psi_a B_z dS, psi_a = 0 on the rims); f_a tent functions on a radial grid (for m = 0 the
innermost one spans a washer's hole, where psi is the constant that carries the circulation
round it); R_m,ab = c(m) / (sigma t) int (f_a' f_b' + m^2 f_a f_b / rho^2) rho drho; and the
inductance by Hankel transforms (a sheet of z-dipoles of density psi: B_z above it is
mu0 k psi_hat e^(-k z) / 2, F_a(k) = int f_a J_m(k rho) rho drho)::

    M_m,ab = c(m) mu0 / 2 int_0^inf k^2 F_a F_b G_ij(k) dk

G_ij: e^(-k |z_i - z_j|) between layers, averaged over both layers' thickness (the self term
2 (kt - 1 + e^(-kt)) / (kt)^2), plus lambda e^(-k (z_i + z_j)) for the part's image in the pole
face, a flat magnetisable half-space (lambda = (mu - 1) / (mu + 1), Jackson sec. 5.10 for a
current beside a permeable half-space). For m = 0 and two loops of radii a, b this is the
classical mu0 pi a b int J_1(ka) J_1(kb) e^(-k h) dk (Smythe 1950, sec. 7.14).

The source field (``SourceField``) is the axisymmetric solution's: the coil's sub-cells, the
ring's cells and the pole's sheet currents driven by them (``P`` applied to every non-target
current), all as solved with the part centred. The forces are the Lorentz force on the sheets,
Re(K x conj(B)) per area (rms phasors, no factor 1/2), integrated over the part's area
(Gauss points in rho, equal steps in phi): f_x = K_y B_z, f_z = K_x B_y - K_y B_x, and the
image's pull Re(lambda) Re(c^H D c), D the image inductance differentiated in the part's height.
The torque is about the line through the part's centre parallel to y (in the face plane,
across the offset), positive when it turns the part's +x edge toward the face:
tau = int (z' f_x - x' f_z) dA.

What it neglects (stated with every result; the 3-D reference of tests/validation checks the
whole): the pole's face as a flat half-space without edge or groove for the part's own
currents (the source field has the real pole); the ring's and the coil's currents held at their
centred values (they change at second order in d, and no harmonic m >= 1 links a coaxial loop);
currents through the thickness (thin sheets: layers carry in-plane currents only); the
image's share of the tilt torque. The centred part's own pull is the axisymmetric circuit's; this
model adds the change with the offset: pull(d) = pull_circuit + pull_sheet(d) - pull_sheet(0).
Error bars: ``offset_forces``. Cost: DEVELOPERS.md, "The part off the axis".
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np
from scipy.constants import mu_0
from scipy.special import j0, j1, jv

from models.fast.circuit import TARGET, CircuitSolution, CircuitSystem
from models.fast.kernels import loop_field_flat
from models.fast.panel_kernels import panel_field

__all__ = [
    "DEFAULT_SHEET",
    "OffsetForces",
    "OffsetResult",
    "SheetFineness",
    "SourceField",
    "centring_stiffness",
    "offset_forces",
    "sheet_model",
    "source_field",
]


@dataclass(frozen=True)
class SheetFineness:
    """Discretisation of the sheet model: radial elements, Gauss points per element, layers
    through the thickness, the highest harmonic, points round the part in phi, k-points of the
    Hankel integrals."""

    elements: int = 24
    gauss: int = 6
    layers: int = 3
    harmonics: int = 6
    phi_points: int = 32
    k_points: int = 320

    def coarse(self) -> SheetFineness:
        """The error bar's second level: about two thirds of everything."""
        return SheetFineness(
            elements=max(8, (2 * self.elements) // 3),
            gauss=self.gauss,
            layers=max(2, self.layers - 1),
            harmonics=max(2, self.harmonics - 2),
            phi_points=self.phi_points,
            k_points=(2 * self.k_points) // 3,
        )


DEFAULT_SHEET = SheetFineness()


@dataclass(frozen=True)
class SourceField:
    """B_r, B_z [T] (rms phasors) of the magnet at the part's layers, on a radial grid of the
    magnet's frame: ``r`` (n_r,) [m], ``z`` (n_layers,) [m], ``br``, ``bz`` (n_layers, n_r)."""

    r: np.ndarray
    z: np.ndarray
    br: np.ndarray
    bz: np.ndarray

    def at(self, layer: int, r):
        """(B_r, B_z) [T] at radii ``r`` [m] of layer ``layer``, linear between the grid's
        radii (a quarter gap apart at most)."""
        out = []
        for b in (self.br[layer], self.bz[layer]):
            out.append(np.interp(r, self.r, b.real) + 1j * np.interp(r, self.r, b.imag))
        return out


def _layers(design, n_layers: int):
    t = design.target
    edges = t.gap + t.thickness * np.arange(n_layers + 1) / n_layers
    return 0.5 * (edges[:-1] + edges[1:]), t.thickness / n_layers


def source_field(
    system: CircuitSystem, sol: CircuitSolution, z_layers, r_max: float
) -> SourceField:
    """The field of every non-target current of a solved circuit at heights ``z_layers`` [m] on
    radii 0..``r_max`` [m]: coil sub-cells and ring cells as filaments at their centres
    (models.fast.filaments.loop_field), the pole's sheet currents driven by them
    (``system.P`` applied to those currents only: the pole's answer to the part's own currents
    is its image, module docstring) by models.fast.panel_kernels.panel_field."""
    design = system.design
    z_layers = np.asarray(z_layers, float)
    step = min(design.target.gap / 4.0, design.target.radius / 60.0)
    n_r = int(min(600, max(80, math.ceil(r_max / step) + 1)))
    r = np.linspace(0.0, r_max, n_r)
    R = np.tile(r, z_layers.size)
    Z = np.repeat(z_layers, n_r)
    cells = sol.cells
    other = cells.part != TARGET
    a, z0, i_src = cells.rc[other], cells.zc[other], sol.cell_current[other]
    n_pts, n_src = R.size, a.size
    br_u, bz_u = loop_field_flat(
        np.tile(a, n_pts), np.tile(z0, n_pts), np.repeat(R, n_src), np.repeat(Z, n_src)
    )
    br = br_u.reshape(n_pts, n_src) @ i_src
    bz = bz_u.reshape(n_pts, n_src) @ i_src
    if system.P is not None and system.panels is not None:
        i_pan = system.P[:, other] @ i_src
        pbr, pbz = panel_field(system.panels, R, Z)
        br = br + pbr @ i_pan
        bz = bz + pbz @ i_pan
    shape = (z_layers.size, n_r)
    return SourceField(r, z_layers, br.reshape(shape), bz.reshape(shape))


@dataclass(frozen=True)
class _Basis:
    """Tent functions on radial nodes for harmonic m: values f (n_b, n_q) and derivatives df at
    the quadrature points rho (n_q,) with weights w (rho drho included); ``conductor`` marks the
    points in the part (not its hole)."""

    rho: np.ndarray
    w: np.ndarray
    f: np.ndarray
    df: np.ndarray
    conductor: np.ndarray


def _nodes(inner: float, outer: float, fine: SheetFineness) -> np.ndarray:
    """Radial nodes, graded toward both rims (half cosine spacing), where the currents crowd."""
    i = np.arange(fine.elements + 1) / fine.elements
    s = 0.5 * (1.0 - np.cos(np.pi * i))
    return inner + (outer - inner) * (0.5 * s + 0.5 * i)


def _k_max(inner: float, outer: float, fine: SheetFineness) -> float:
    """Highest k [1/m] of the Hankel integrals: 12 over the smallest element (a tent's
    transform falls as k^-2.5 beyond one over its width; the tail's share is below 1e-3)."""
    return 12.0 / float(np.min(np.diff(_nodes(inner, outer, fine))))


def _basis(inner: float, outer: float, m: int, fine: SheetFineness) -> _Basis:
    nodes = _nodes(inner, outer, fine)
    k_max = _k_max(inner, outer, fine)
    rho, w = [], []
    for lo, hi in zip(nodes[:-1], nodes[1:], strict=True):
        # Enough Gauss points to follow J_m(k rho) up to k_max across the element.
        n = max(fine.gauss, math.ceil(0.6 * k_max * (hi - lo)) + 2)
        x, wx = _gauss(n)
        r = 0.5 * (lo + hi) + 0.5 * (hi - lo) * x
        rho.append(r)
        w.append(0.5 * (hi - lo) * wx * r)
    rho, w = np.concatenate(rho), np.concatenate(w)
    conductor = np.ones(rho.size, bool)
    if inner > 0.0 and m == 0:  # the hole, where psi is constant: its flux links the circulation
        xh, wh = _gauss(max(2 * fine.gauss, math.ceil(0.6 * k_max * inner) + 2))
        rh = 0.5 * inner * (1.0 + xh)
        rho = np.concatenate([rh, rho])
        w = np.concatenate([0.5 * inner * wh * rh, w])
        conductor = np.concatenate([np.zeros(rh.size, bool), conductor])
    first = 0 if (m == 0) else 1
    funcs, derivs = [], []
    for i in range(first, fine.elements):  # node N (the outer rim) is psi = 0
        f = np.zeros(rho.size)
        df = np.zeros(rho.size)
        if i > 0:
            left = (rho >= nodes[i - 1]) & (rho < nodes[i])
            h = nodes[i] - nodes[i - 1]
            f[left] = (rho[left] - nodes[i - 1]) / h
            df[left] = 1.0 / h
        else:
            f[rho < nodes[0]] = 1.0  # the hole (or nothing, for a disc)
        right = (rho >= nodes[i]) & (rho < nodes[i + 1])
        h = nodes[i + 1] - nodes[i]
        f[right] = (nodes[i + 1] - rho[right]) / h
        df[right] = -1.0 / h
        funcs.append(f)
        derivs.append(df)
    return _Basis(rho, w, np.array(funcs), np.array(derivs), conductor)


@functools.lru_cache(maxsize=256)
def _gauss(n: int):
    return np.polynomial.legendre.leggauss(n)


def _k_grid(inner: float, outer: float, fine: SheetFineness):
    u, wu = _gauss(fine.k_points)
    lo = math.log(1e-3 / outer)
    hi = math.log(_k_max(inner, outer, fine))
    k = np.exp(0.5 * (lo + hi) + 0.5 * (hi - lo) * u)
    return k, 0.5 * (hi - lo) * wu * k  # dk = k du


def _bessel(m: int, x):
    if m == 0:
        return j0(x)
    if m == 1:
        return j1(x)
    return jv(m, x)


@functools.lru_cache(maxsize=64)
def _hankel(inner: float, outer: float, m: int, fine: SheetFineness):
    """The basis of harmonic m, the k-grid (k, weights) and the basis's Hankel transforms
    F (n_b, n_k) of a part's radii [m]: they depend on its radii only, so gaps, offsets and
    drives reuse them (kept for the last 64; read-only)."""
    basis = _basis(inner, outer, m, fine)
    k, wk = _k_grid(inner, outer, fine)
    F = (basis.f * basis.w) @ _bessel(m, np.outer(basis.rho, k))
    for a in (basis.rho, basis.w, basis.f, basis.df, basis.conductor, k, wk, F):
        a.setflags(write=False)
    return basis, k, wk, F


@dataclass(frozen=True)
class _Harmonic:
    """The part's loop equations for one harmonic: Z = R + j omega M (n_layers * n_b square),
    the image's pull matrix D (its force in +z is Re(lambda) Re(c^H D c)), and the basis."""

    basis: _Basis
    Z: np.ndarray
    D: np.ndarray


def sheet_model(design, m: int, z_layers, t_layer: float, fine: SheetFineness, lam):
    """Loop equations of harmonic ``m`` of the part (module docstring)."""
    t = design.target
    basis, k, wk, F = _hankel(float(t.inner_radius), float(t.radius), m, fine)
    cm = 2.0 * np.pi if m == 0 else np.pi
    n_l, n_b = len(z_layers), basis.f.shape[0]
    kt = k * t_layer
    self_avg = 2.0 * (kt - 1.0 + np.exp(-kt)) / kt**2
    shape = (np.sinh(0.5 * kt) / (0.5 * kt)) ** 2
    M = np.zeros((n_l * n_b, n_l * n_b), complex)
    D = np.zeros((n_l * n_b, n_l * n_b))
    for i in range(n_l):
        for j in range(n_l):
            g = self_avg if i == j else np.exp(-k * abs(z_layers[i] - z_layers[j])) * shape
            img = np.exp(-k * (z_layers[i] + z_layers[j])) * shape
            blk = (F * (wk * k**2 * (g + lam * img))) @ F.T
            M[i * n_b : (i + 1) * n_b, j * n_b : (j + 1) * n_b] = 0.5 * cm * mu_0 * blk
            dblk = (F * (wk * k**2 * (-k) * img)) @ F.T
            D[i * n_b : (i + 1) * n_b, j * n_b : (j + 1) * n_b] = 0.5 * cm * mu_0 * dblk
    cond = basis.conductor
    wr = basis.w[cond]
    rho = basis.rho[cond]
    fa, da = basis.f[:, cond], basis.df[:, cond]
    R1 = (da * wr) @ da.T + m * m * (fa * wr / rho**2) @ fa.T
    sigma = t.conductivity
    R = np.kron(np.eye(n_l), cm / (sigma * t_layer) * R1)
    omega = design.drive.omega
    return _Harmonic(basis, R + 1j * omega * M, 0.5 * (D + D.T))


@dataclass(frozen=True)
class OffsetForces:
    """Forces on the part at an offset d along +x (rms time averages, SI).

    pull : axial force toward the face [N]; lateral : force along +x [N]; tilt : torque about the
    line through the part's centre along y [N m], positive turning its +x edge toward the face;
    pull_image : the share of ``pull`` from the part's image in the face [N].
    """

    pull: float
    lateral: float
    tilt: float
    pull_image: float = 0.0


class _SheetPart:
    """The part's harmonics (m = 0..harmonics), built once for one design and fineness; the
    source field on its quadrature grid and the currents kept by offset."""

    def __init__(self, design, fine: SheetFineness, source: SourceField, t_layer: float, lam):
        self.design, self.fine, self.source, self.lam = design, fine, source, complex(lam)
        self.z = source.z
        self.t_layer = t_layer
        self._h = {}
        self._grids = {}
        self._c = {}
        self.phi = 2.0 * np.pi * np.arange(fine.phi_points) / fine.phi_points

    def harmonic(self, m: int) -> _Harmonic:
        if m not in self._h:
            self._h[m] = sheet_model(self.design, m, self.z, self.t_layer, self.fine, self.lam)
        return self._h[m]

    def _grid(self, d: float):
        """B_x, B_y, B_z [T] at the m = 0 basis's points (hole included) x phi for each layer,
        each (n_layers, n_rho, n_phi), with the part's centre at x = d."""
        if d not in self._grids:
            rho = self.harmonic(0).basis.rho
            x = d + np.outer(rho, np.cos(self.phi))
            y = np.outer(rho, np.sin(self.phi))
            r_mag = np.hypot(x, y)
            safe = np.where(r_mag > 0, r_mag, 1.0)
            bx, by, bz = [], [], []
            for li in range(len(self.z)):
                br, b = self.source.at(li, r_mag)
                bx.append(np.where(r_mag > 0, br * x / safe, 0.0))
                by.append(np.where(r_mag > 0, br * y / safe, 0.0))
                bz.append(b)
            self._grids[d] = (np.array(bx), np.array(by), np.array(bz))
        return self._grids[d]

    def currents(self, m: int, d: float):
        """Stream-function coefficients of harmonic ``m`` at offset ``d`` (all layers)."""
        key = (m, d)
        if key not in self._c:
            h = self.harmonic(m)
            _, _, bz = self._grid(d)
            if m > 0:  # the m >= 1 bases live on the conductor's points only
                bz = bz[:, self.harmonic(0).basis.conductor, :]
            norm = (1.0 if m == 0 else 2.0) / self.phi.size
            bm = (bz @ np.cos(m * self.phi)) * norm  # (n_layers, n_rho)
            cm = 2.0 * np.pi if m == 0 else np.pi
            omega = self.design.drive.omega
            rhs = (-1j * omega * cm) * ((h.basis.f * h.basis.w) @ bm.T)  # (n_b, n_layers)
            self._c[key] = np.linalg.solve(h.Z, rhs.T.ravel())
        return self._c[key]

    def forces(self, d: float, harmonics: int | None = None) -> OffsetForces:
        """Pull, lateral force and tilt torque of the sheet model at offset ``d`` [m]."""
        top = self.fine.harmonics if harmonics is None else harmonics
        phi = self.phi
        h0 = self.harmonic(0)
        cond = h0.basis.conductor
        rho = h0.basis.rho[cond][:, None]
        w = h0.basis.w[cond][:, None] * (2.0 * np.pi / phi.size)
        n_l = len(self.z)
        dpsi_r = np.zeros((n_l, rho.size, phi.size), complex)
        dpsi_phi = np.zeros_like(dpsi_r)
        pull_img = 0.0
        for m in range(top + 1):
            h = self.harmonic(m)
            c = self.currents(m, d)
            sel = h.basis.conductor
            cl = c.reshape(n_l, -1)
            fm = cl @ h.basis.f[:, sel]  # (n_layers, n_rho)
            dfm = cl @ h.basis.df[:, sel]
            dpsi_r += dfm[:, :, None] * np.cos(m * phi)
            dpsi_phi += (-m * fm)[:, :, None] * np.sin(m * phi)
            pull_img += float(np.real(self.lam) * np.real(np.conj(c) @ (h.D @ c)))
        bx, by, bz = (b[:, cond, :] for b in self._grid(d))
        kx = np.sin(phi) * dpsi_r + np.cos(phi) / rho * dpsi_phi
        ky = -(np.cos(phi) * dpsi_r - np.sin(phi) / rho * dpsi_phi)
        f_x = np.real(ky * np.conj(bz)) * w
        f_z = np.real(kx * np.conj(by) - ky * np.conj(bx)) * w
        z_arm = (self.z - float(np.mean(self.z)))[:, None, None]
        tau = float(np.sum(z_arm * f_x - rho * np.cos(phi) * f_z))
        return OffsetForces(
            pull=-(float(f_z.sum()) + pull_img),
            lateral=float(f_x.sum()),
            tilt=tau,
            pull_image=-pull_img,
        )


def _image_coefficient(design):
    mu = complex(design.pole.effective_permeability(design.drive.frequency))
    if mu.real <= 1.0:
        return 0.0
    return (mu - 1.0) / (mu + 1.0)


def _sheet_part(system, sol, design, fine: SheetFineness, r_max: float) -> _SheetPart:
    z_layers, t_layer = _layers(design, fine.layers)
    source = source_field(system, sol, z_layers, r_max)
    return _SheetPart(design, fine, source, t_layer, _image_coefficient(design))


@dataclass(frozen=True)
class OffsetResult:
    """The part at an offset: pull [N] (the axisymmetric pull plus the sheet model's change),
    lateral force [N], tilt torque [N m], each with its error estimate (``*_uncertainty``), and
    the sheet model's own centred pull [N] (its agreement with the circuit is part of the bar)."""

    offset: float
    pull: float
    lateral: float
    tilt: float
    pull_uncertainty: float
    lateral_uncertainty: float
    tilt_uncertainty: float
    sheet_pull_centred: float


#: Error terms of the part off the axis, fitted on the six cases of the 3-D reference
#: (tests/validation/offset_reference.csv; as the pull's TERM_ERROR was on the edge set, not
#: derived): the change of the image's pull with the offset is uncertain by IMAGE_ERROR of
#: itself (the face is unbounded in this model; a real pole's edge takes the image from a part
#: that moves over it), the pull's change by CHANGE_ERROR of itself, the lateral force by
#: LATERAL_ERROR of itself (the rest of the two models' difference where the part stays over the
#: face: up to 0.6 %), the tilt torque by TILT_ERROR of itself (the image's share of the torque
#: is left out).
IMAGE_ERROR = 0.5
CHANGE_ERROR = 0.1
LATERAL_ERROR = 0.01
TILT_ERROR = 0.15


def _model_error(sheet_pull: float, circuit_pull: float, pull_terms: float) -> float:
    """Relative error of the sheet model carried to its lateral results: how far its centred
    pull is from the circuit's, on the scale of the circuit's pull (at most 1)."""
    scale = max(abs(circuit_pull), 1e-3 * pull_terms, 1e-300)
    return min(1.0, abs(sheet_pull - circuit_pull) / scale)


def offset_forces(
    system: CircuitSystem,
    sol: CircuitSolution,
    offsets,
    circuit_pull: float,
    pull_terms: float,
    fineness: SheetFineness = DEFAULT_SHEET,
    error: bool = True,
) -> list[OffsetResult]:
    """The part at each offset of ``offsets`` [m] (module docstring), from a solved circuit with
    the part centred (``system``, ``sol``) and its pull ``circuit_pull`` [N] (``pull_terms``: the
    sum of its terms' magnitudes [N]).

    The error bars: the change from a second, coarser sheet model (``SheetFineness.coarse``)
    and the model's own error, the relative distance of its centred pull from the circuit's
    (``_model_error``) times each result's size, in quadrature; the pull's bar adds
    IMAGE_ERROR of the image pull's change with the offset and CHANGE_ERROR of the pull's
    change, the lateral force's LATERAL_ERROR and the torque's TILT_ERROR of themselves.
    ``error`` False: no second level (the bars then carry the model's terms alone).
    """
    design = system.design
    offsets = [float(d) for d in offsets]
    r_max = design.target.radius + max([abs(d) for d in offsets] + [0.0]) + 1e-6
    out = []
    levels = (fineness, fineness.coarse()) if error else (fineness,)
    parts = [_sheet_part(system, sol, design, f, r_max) for f in levels]
    centred = [p.forces(0.0, harmonics=0) for p in parts]
    e = _model_error(centred[0].pull, circuit_pull, pull_terms)
    for d in offsets:
        forces = [p.forces(d) for p in parts]
        fine_f, coarse_f = forces[0], forces[-1]
        dp = fine_f.pull - centred[0].pull
        dp_c = coarse_f.pull - centred[-1].pull
        out.append(
            OffsetResult(
                offset=d,
                pull=circuit_pull + dp,
                lateral=fine_f.lateral,
                tilt=fine_f.tilt,
                pull_uncertainty=math.hypot(
                    dp - dp_c,
                    e * dp,
                    CHANGE_ERROR * dp,
                    IMAGE_ERROR * (fine_f.pull_image - centred[0].pull_image),
                ),
                lateral_uncertainty=math.hypot(
                    fine_f.lateral - coarse_f.lateral,
                    e * fine_f.lateral,
                    LATERAL_ERROR * fine_f.lateral,
                ),
                tilt_uncertainty=math.hypot(
                    fine_f.tilt - coarse_f.tilt, e * fine_f.tilt, TILT_ERROR * fine_f.tilt
                ),
                sheet_pull_centred=centred[0].pull,
            )
        )
    return out


def centring_stiffness(
    system: CircuitSystem,
    sol: CircuitSolution,
    circuit_pull: float,
    pull_terms: float,
    fineness: SheetFineness = DEFAULT_SHEET,
) -> tuple[float, float]:
    """-dF_x/dx [N/m] at the axis (positive draws the part back to it) and its error estimate
    [N/m]: the first harmonic alone at an offset of 1e-3 part radii (the force is linear there;
    harmonics above 1 enter at second order), two sheet fineness levels and the model's error
    as in ``offset_forces``."""
    design = system.design
    d = 1e-3 * design.target.radius
    r_max = design.target.radius + 2 * d
    ks, pulls = [], []
    for f in (fineness, fineness.coarse()):
        part = _sheet_part(system, sol, design, f, r_max)
        ks.append(-part.forces(d, harmonics=1).lateral / d)
        pulls.append(part.forces(0.0, harmonics=0).pull)
    e = _model_error(pulls[0], circuit_pull, pull_terms)
    return ks[0], math.hypot(ks[0] - ks[1], e * ks[0])
