"""Three-dimensional reference of a part off the pole's axis: a thin-sheet integral model on a
square mesh, independent of models.fast.offset, and the generator of offset_reference.csv.

The model (rms phasors, SI):

* **The part** in its own plane, cut into square pixels of side h in ``layers`` layers through
  its thickness; a pixel on the rim carries the fraction of its area inside the part as its
  conductivity's share. The unknowns are a stream function psi at the pixels' corners (loop
  currents of the dual cells): zero on the outer rim, one unknown per layer for a washer's hole.
  Each pixel carries the uniform currents I_x = mean of psi over its top corners minus its
  bottom ones and I_y = left minus right, as two straight bars of length h, width h and the
  layer's thickness (partial-element equivalent circuit: loop equations C^T (R + j omega L) C
  psi = C^T V).
* **Partial inductances** of parallel straight bars by Neumann's formula for parallel
  filaments in closed form (Grover, Inductance Calculations, 1946, ch. 2; F(u) = u asinh(u/d) -
  sqrt(u^2 + d^2)), each bar as two filaments across its width, floored at the geometric mean
  distance 0.2235 (w + t) of a filament's own section (Grover, Table; from memory); x-bars
  couple to x-bars, y-bars to y-bars.
* **The pole's answer to the part's own currents**: an image of every bar mirrored in the face
  z = 0, same direction, lambda = (mu - 1)/(mu + 1) (a flat face); and for the share of the
  part's currents that is axisymmetric about the pole's axis (m = 0; each bar adds a coaxial
  loop of I (l_hat . phi_hat) h / (2 pi r)) the real pole's answer in place of that flat image:
  the loops' bound sheet currents on the pole's panels (models.fast.pole, as the circuit
  computes them, with the pole's edge, groove and length), less the flat image of the same
  loops. A centred part is all m = 0, so the reference then holds the circuit's iron exactly
  (to its mesh); an offset part's other shares see the flat face.
* **The magnet's field** directly at every pixel's 2 x 2 Gauss points (no harmonics, no
  interpolation): A_phi from the flux of the source loops through the circle at the point
  (M / (2 pi r), models.fast.filaments and panel_kernels.panel_mutual), B from loop_field and
  panel_field: the coil's sub-cells, the ring's cells and the pole's sheet currents driven by
  them, as the axisymmetric circuit solved them with the part centred. EMF of a bar: -j omega
  h <A . l_hat>.
* **Forces**: the Lorentz force on each bar, Re(I h l_hat x conj(<B>)), and the images' force
  from the derivatives of the same partial inductances in the bar's position.

Neglected (as in the fast model, stated there): the ring's and coil's currents held at their
centred values (second order in the offset); the pole's edge and groove for the part's currents
that are not axisymmetric about the pole's axis; currents through the thickness. Unlike the
fast model it needs no azimuthal harmonics, Hankel transforms or interpolated field, and it
has the real pole's answer to the part's axisymmetric share at any offset. Its own
uncertainty: the change from a mesh of 1.5 x the pixel size (``reference_case`` returns both).

Run ``nice python -m tests.validation.offset_reference`` to regenerate the CSV (about
3 minutes on 2 cores).
"""

from __future__ import annotations

import csv
import math
import sys
import time
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from scipy.constants import mu_0

from models.fast.circuit import TARGET
from models.fast.kernels import coaxial_pair, loop_field_flat
from models.fast.panel_kernels import panel_field, panel_mutual

CSV_PATH = Path(__file__).with_name("offset_reference.csv")


@dataclass(frozen=True)
class Mesh:
    """Pixels of one layer: centres x, y [m] (part frame), side h [m], fill fraction; the
    corner nodes' unknown index (-1: psi = 0 on the outer rim; ``hole``: the hole's unknown)."""

    x: np.ndarray
    y: np.ndarray
    h: float
    fill: np.ndarray
    corners: np.ndarray  # (n_pix, 4): bottom-left, bottom-right, top-right, top-left
    n_nodes: int


def build_mesh(inner: float, outer: float, h: float) -> Mesh:
    n = int(math.ceil(outer / h)) + 1
    edges = h * (np.arange(-n, n + 1))  # node coordinates, symmetric about the part's centre
    xc = 0.5 * (edges[:-1] + edges[1:])
    X, Y = np.meshgrid(xc, xc, indexing="ij")
    sub = (np.arange(8) + 0.5) / 8 - 0.5
    sx = X[..., None, None] + h * sub[:, None]
    sy = Y[..., None, None] + h * sub[None, :]
    rr = np.hypot(sx, sy)
    fill = ((rr <= outer) & (rr >= inner)).mean(axis=(-1, -2))
    keep = fill > 0
    ii, jj = np.nonzero(keep)
    # Nodes: a node is free where all four pixels round it are in the part (fill > 0) and it
    # lies inside the outer rim; nodes inside the hole share the hole's unknown.
    nn = edges.size
    NX, NY = np.meshgrid(edges, edges, indexing="ij")
    rn = np.hypot(NX, NY)
    index = -np.ones((nn, nn), int)
    free = (rn < outer) & ((rn > inner) if inner > 0 else True)
    count = 0
    for a, b in zip(*np.nonzero(free), strict=True):
        index[a, b] = count
        count += 1
    if inner > 0:
        index[rn <= inner] = count
        count += 1
    corners = np.stack(
        [index[ii, jj], index[ii + 1, jj], index[ii + 1, jj + 1], index[ii, jj + 1]], axis=1
    )
    return Mesh(X[keep], Y[keep], h, fill[keep], corners, count)


def _incidence(mesh: Mesh):
    """Bar currents from node unknowns: I_x = (psi_TL + psi_TR - psi_BL - psi_BR) / 2,
    I_y = (psi_BL + psi_TL - psi_BR - psi_TR) / 2 (K = curl(psi z_hat)); (n_pix, n_nodes) each."""
    n_pix = mesh.x.size
    cx = np.zeros((n_pix, mesh.n_nodes))
    cy = np.zeros((n_pix, mesh.n_nodes))
    bl, br, tr, tl = mesh.corners.T
    rows = np.arange(n_pix)
    for idx, sx, sy in ((bl, -0.5, 0.5), (br, -0.5, -0.5), (tr, 0.5, -0.5), (tl, 0.5, 0.5)):
        ok = idx >= 0
        np.add.at(cx, (rows[ok], idx[ok]), sx)
        np.add.at(cy, (rows[ok], idx[ok]), sy)
    return cx, cy


def _F(u, d):
    return u * np.arcsinh(u / d) - np.sqrt(u * u + d * d)


def _pair(u, d, ln):
    """Partial mutual inductance [H] of two parallel filaments of length ``ln`` whose centres are
    ``u`` apart along them and ``d`` across, and its derivatives in u and d [H/m]."""
    c = mu_0 / (4.0 * np.pi)
    m = c * (_F(u + ln, d) + _F(u - ln, d) - 2.0 * _F(u, d))
    du = c * (np.arcsinh((u + ln) / d) + np.arcsinh((u - ln) / d) - 2.0 * np.arcsinh(u / d))
    dd = (
        -c
        * (
            np.sqrt((u + ln) ** 2 + d * d)
            + np.sqrt((u - ln) ** 2 + d * d)
            - 2.0 * np.sqrt(u * u + d * d)
        )
        / d
    )
    return m, du, dd


def _bars(along, across, z, h, t_layer, image_z=None, floor=None):
    """Partial inductance matrix of bars (centres ``along``, ``across``, ``z``) parallel to the
    'along' axis, each as two filaments across its width; with ``image_z`` the mutuals of the
    bars with the images at ``image_z``. Returns M and its derivatives in the first bar's along,
    across and z positions."""
    offs = np.array([-0.25, 0.25]) * h
    M = np.zeros((along.size, along.size))
    Da = np.zeros_like(M)
    Dc = np.zeros_like(M)
    Dz = np.zeros_like(M)
    zj = z if image_z is None else image_z
    u = along[:, None] - along[None, :]
    for oi in offs:
        for oj in offs:
            dc = (across[:, None] + oi) - (across[None, :] + oj)
            dz = z[:, None] - zj[None, :]
            d = np.maximum(np.hypot(dc, dz), floor)
            m, du, dd = _pair(u, d, h)
            M += 0.25 * m
            Da += 0.25 * du
            Dc += 0.25 * dd * dc / d
            Dz += 0.25 * dd * dz / d
    return M, Da, Dc, Dz


class _Source:
    """A_phi and (B_r, B_z) of the magnet's source currents at points of the magnet's frame."""

    def __init__(self, system, sol):
        cells = sol.cells
        other = cells.part != TARGET
        self.a, self.z0 = cells.rc[other], cells.zc[other]
        self.i = sol.cell_current[other]
        self.panels = system.panels
        self.i_pan = None if system.P is None else system.P[:, other] @ self.i

    def at(self, r, z):
        r = np.maximum(np.asarray(r, float).ravel(), 1e-9)
        z = np.asarray(z, float).ravel()
        n, m = r.size, self.a.size
        rr, zz = np.repeat(r, m), np.repeat(z, m)
        aa, za = np.tile(self.a, n), np.tile(self.z0, n)
        mut, _ = coaxial_pair(rr, zz, aa, za)
        br, bz = loop_field_flat(aa, za, rr, zz)
        flux = mut.reshape(n, m) @ self.i
        br = br.reshape(n, m) @ self.i
        bz = bz.reshape(n, m) @ self.i
        if self.i_pan is not None:
            flux = flux + panel_mutual(self.panels, r, z) @ self.i_pan
            pbr, pbz = panel_field(self.panels, r, z)
            br = br + pbr @ self.i_pan
            bz = bz + pbz @ self.i_pan
        return flux / (2.0 * np.pi * r), br, bz


class _PoleAnswer:
    """The real pole's answer to the axisymmetric share (m = 0 about the pole's axis) of the
    part's currents, less a flat face's image of that share (which the bars' image already
    holds): a bar of length h carrying I along l_hat at (r, z) of the magnet's frame adds a
    coaxial loop of I (l_hat . phi_hat) h / (2 pi r) to that share. Its loops answer through
    models.fast.pole (the real pole: edge, groove, finite length) as the circuit's do.

    ``cx``, ``cy``: loop current per ampere of x- and y-bar current (n,); ``dM``: loop-loop
    inductance through the pole less the flat image's (n, n) [H]; ``dBr``, ``dBz``: the field
    of that answer at each pixel per ampere of each loop (n, n) [T/A]."""

    def __init__(self, design, r, z, h, cos, sin, lam):
        from models.evaluate import DEFAULT_FINENESS, pole_model_for
        from models.fast.filaments import mutual

        pole = pole_model_for(design, DEFAULT_FINENESS)
        r = np.maximum(r, 0.25 * h)
        self.cx = -sin * h / (2.0 * np.pi * r)
        self.cy = cos * h / (2.0 * np.pi * r)
        n = r.size
        if pole is None:
            self.dM = np.zeros((n, n))
            self.dBr = self.dBz = np.zeros((n, n))
            return
        induced = pole.operator(r, z)  # (n_panels, n)
        m_iron = panel_mutual(pole.panels, r, z) @ induced
        m_iron = 0.5 * (m_iron + m_iron.T)
        ri, zi = r[:, None], z[:, None]
        m_flat = lam * mutual(ri, zi, r[None, :], -z[None, :])
        self.dM = m_iron - m_flat
        pbr, pbz = panel_field(pole.panels, r, z)
        fr, fz = loop_field_flat(np.tile(r, n), np.tile(-z, n), np.repeat(r, n), np.repeat(z, n))
        self.dBr = pbr @ induced - lam * fr.reshape(n, n)
        self.dBz = pbz @ induced - lam * fz.reshape(n, n)


@dataclass(frozen=True)
class ReferenceForces:
    """Pull [N] (toward the face), lateral force [N] (+x), tilt torque [N m] (module docstring
    of models.fast.offset for the signs), and the number of pixels."""

    pull: float
    lateral: float
    tilt: float
    pixels: int


def solve_reference(system, sol, offset: float, h: float, layers: int = 2) -> ReferenceForces:
    """The part of ``system.design`` at ``offset`` [m] along +x in the field of the centred
    axisymmetric solution ``sol``, on pixels of side ``h`` [m] (module docstring)."""
    design = system.design
    t = design.target
    mesh = build_mesh(t.inner_radius, t.radius, h)
    cx, cy = _incidence(mesh)
    t_layer = t.thickness / layers
    z_layers = t.gap + t_layer * (np.arange(layers) + 0.5)
    n_pix = mesh.x.size
    X = np.tile(mesh.x, layers)
    Y = np.tile(mesh.y, layers)
    Z = np.repeat(z_layers, n_pix)
    fill = np.tile(mesh.fill, layers)
    mu = complex(design.pole.effective_permeability(design.drive.frequency))
    lam = (mu - 1.0) / (mu + 1.0) if mu.real > 1.0 else 0.0
    floor = 0.2235 * (0.5 * h + t_layer)
    Lx, _, _, _ = _bars(X, Y, Z, h, t_layer, floor=floor)
    Ly, _, _, _ = _bars(Y, X, Z, h, t_layer, floor=floor)
    Ix_, Dxa, Dxc, Dxz = _bars(X, Y, Z, h, t_layer, image_z=-Z, floor=floor)
    Iy_, Dya, Dyc, Dyz = _bars(Y, X, Z, h, t_layer, image_z=-Z, floor=floor)
    omega = design.drive.omega
    R = 1.0 / (design.target.conductivity * t_layer * fill)
    # Pixel centres in the magnet's frame (the part's centre at x = offset).
    xm = X + offset
    rm = np.hypot(xm, Y)
    cos_m, sin_m = xm / np.maximum(rm, 1e-12), Y / np.maximum(rm, 1e-12)
    answer = _PoleAnswer(design, rm, Z, h, cos_m, sin_m, lam)
    cx_, cy_ = answer.cx, answer.cy
    # Source A and B at 2 x 2 Gauss points of every pixel.
    g = np.array([-0.5, 0.5]) / math.sqrt(3.0) * h
    gx = (X[:, None] + np.repeat(g, 2)[None, :]).ravel() + offset
    gy = (Y[:, None] + np.tile(g, 2)[None, :]).ravel()
    gz = np.repeat(Z, 4)
    rg = np.hypot(gx, gy)
    a_phi, b_r, b_z = _Source(system, sol).at(rg, gz)
    cos, sin = gx / np.maximum(rg, 1e-12), gy / np.maximum(rg, 1e-12)

    def pix_mean(v):
        return v.reshape(-1, 4).mean(axis=1)

    Ax, Ay = pix_mean(-a_phi * sin), pix_mean(a_phi * cos)
    Bx, By, Bz = pix_mean(b_r * cos), pix_mean(b_r * sin), pix_mean(b_z)
    # Loop equations over all layers: psi of layer l -> bars of layer l; bars x then y.
    Cb = np.vstack([np.kron(np.eye(layers), cx), np.kron(np.eye(layers), cy)])
    n_b = X.size
    Lb = np.empty((2 * n_b, 2 * n_b), complex)
    dM = answer.dM
    Lb[:n_b, :n_b] = Lx + lam * Ix_ + cx_[:, None] * cx_[None, :] * dM
    Lb[n_b:, n_b:] = Ly + lam * Iy_ + cy_[:, None] * cy_[None, :] * dM
    Lb[:n_b, n_b:] = cx_[:, None] * cy_[None, :] * dM
    Lb[n_b:, :n_b] = Lb[:n_b, n_b:].T
    Zb = 1j * omega * Lb
    Zb[np.diag_indices_from(Zb)] += np.concatenate([R, R])
    Zl = Cb.T @ Zb @ Cb
    V = Cb.T @ np.concatenate([-1j * omega * h * Ax, -1j * omega * h * Ay])
    psi = np.linalg.solve(Zl, V)
    ib = Cb @ psi
    ix, iy = ib[:n_b], ib[n_b:]
    # The pole's answer to the axisymmetric share, less its flat image, as a field at the bars.
    loops = cx_ * ix + cy_ * iy
    ar, az = answer.dBr @ loops, answer.dBz @ loops
    Bx, By, Bz = Bx + ar * cos_m, By + ar * sin_m, Bz + az
    # Lorentz force of these fields on each bar: h I l_hat x conj(B).
    fx = h * np.real(iy * np.conj(Bz))
    fz = h * np.real(ix * np.conj(By) - iy * np.conj(Bx))
    # The flat images' force: Re(I_i conj(lambda I_j)) dM/d(position of i).
    lr = np.real(lam)
    pxx = np.real(ix[:, None] * np.conj(ix)[None, :]) * lr
    pyy = np.real(iy[:, None] * np.conj(iy)[None, :]) * lr
    fx = fx + (pxx * Dxa).sum(axis=1) + (pyy * Dyc).sum(axis=1)
    fz = fz + (pxx * Dxz).sum(axis=1) + (pyy * Dyz).sum(axis=1)
    z_mid = t.gap + 0.5 * t.thickness
    tilt = float(np.sum((Z - z_mid) * fx - X * fz))
    return ReferenceForces(pull=-float(fz.sum()), lateral=float(fx.sum()), tilt=tilt, pixels=n_pix)


#: The cases: (name, design edits in file units, offsets [mm]). Discs and washers, with and
#: without a ring; the 9 mm disc at 3 mm and the 8 mm washer at 2.5 mm straddle the pole's edge
#: (10 mm); "demo-far" checks the demo cap where the fast model says it is pushed (6 mm) and
#: thrown out (11 mm), beyond the range the error bars were fitted on.
CASES = (
    ("demo", {}, (0.0, 1.0, 3.0)),
    ("demo-1mm", {"target.gap_mm": 1.0}, (0.0, 0.5, 2.0)),
    ("washer-1mm", {"target.gap_mm": 1.0, "target.inner_radius_mm": 2.0}, (0.0, 1.5)),
    ("no-ring-1mm", {"target.gap_mm": 1.0, "ring": None}, (0.0, 2.0)),
    ("edge-9mm", {"target.gap_mm": 1.0, "target.radius_mm": 9.0}, (0.0, 1.0, 3.0)),
    (
        "washer-edge-no-ring",
        {
            "target.gap_mm": 0.8,
            "target.radius_mm": 8.0,
            "target.inner_radius_mm": 3.0,
            "ring": None,
        },
        (0.0, 2.5),
    ),
    ("demo-far", {}, (0.0, 6.0, 11.0)),
)


def case_design(edits):
    """The demo design with ``edits`` (file keys in file units; ``"ring": None``: no ring)."""
    import copy

    from models import load_design
    from models.design import design_from_dict, edit
    from optim.demo import DEMO_DESIGN

    design = load_design(DEMO_DESIGN)
    edits = dict(edits)
    if "ring" in edits:
        del edits["ring"]
        data = copy.deepcopy(design.source)
        data.pop("ring")
        design = design_from_dict(data, name=design.name)
    return edit(design, edits)


def reference_case(design, offsets_mm, pixels_across: int = 30):
    """The reference at each offset on two meshes (``pixels_across`` over the part's diameter
    and 1.5 x coarser), the fast model's results, the circuit's centred pull; list of dicts."""
    from models.evaluate import DEFAULT_FINENESS, pole_model_for
    from models.fast.circuit import assemble_circuit, solve_system
    from models.fast.offset import offset_forces
    from models.fast.pull import pull_by_source

    system = assemble_circuit(design, DEFAULT_FINENESS, pole_model_for(design, DEFAULT_FINENESS))
    sol = solve_system(system)
    split = pull_by_source(sol)
    pull0 = float(sum(split.values()))
    terms = sum(abs(v) for v in split.values())
    fast = offset_forces(system, sol, [o * 1e-3 for o in offsets_mm], pull0, terms)
    h = 2.0 * design.target.radius / pixels_across
    rows = []
    for off, fa in zip(offsets_mm, fast, strict=True):
        t0 = time.perf_counter()
        fine = solve_reference(system, sol, off * 1e-3, h)
        coarse = solve_reference(system, sol, off * 1e-3, 1.5 * h)
        rows.append(
            {
                "offset_mm": off,
                "circuit_pull_N": pull0,
                "ref_pull_N": fine.pull,
                "ref_pull_coarse_N": coarse.pull,
                "ref_lateral_N": fine.lateral,
                "ref_lateral_coarse_N": coarse.lateral,
                "ref_tilt_N_m": fine.tilt,
                "ref_tilt_coarse_N_m": coarse.tilt,
                "fast_pull_N": fa.pull,
                "fast_pull_uncertainty_N": fa.pull_uncertainty,
                "fast_lateral_N": fa.lateral,
                "fast_lateral_uncertainty_N": fa.lateral_uncertainty,
                "fast_tilt_N_m": fa.tilt,
                "fast_tilt_uncertainty_N_m": fa.tilt_uncertainty,
                "pixels": fine.pixels,
                "ref_seconds": time.perf_counter() - t0,
            }
        )
    return rows


HEADER = (
    "# Part off the axis: fast model (models.fast.offset) against the square-mesh thin-sheet\n"
    "# reference (tests/validation/offset_reference.py), generated by\n"
    "# `nice python -m tests.validation.offset_reference` on the demo magnet with the edits\n"
    "# named; reference on two meshes (30 and 20 pixels across the part, 2 layers).\n"
    "# Forces in N (pull toward the face, lateral along +x), torques in N m, rms time averages.\n"
)


def main(argv=None) -> int:
    out = []
    for name, edits, offsets in CASES:
        t0 = time.perf_counter()
        for row in reference_case(case_design(edits), offsets):
            out.append({"case": name, **row})
        print(f"{name}: {time.perf_counter() - t0:.1f} s", file=sys.stderr)
    with open(CSV_PATH, "w", newline="") as fh:
        fh.write(HEADER)
        writer = csv.DictWriter(fh, fieldnames=list(out[0]))
        writer.writeheader()
        for row in out:
            writer.writerow(
                {k: (f"{v:.6g}" if isinstance(v, float) else v) for k, v in row.items()}
            )
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
