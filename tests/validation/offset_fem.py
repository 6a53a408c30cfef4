"""A coarse edge-element check of the part off the axis: scikit-fem's lowest-order Nedelec
elements on tetrahedra (ElementTetN0), a half model across the symmetry plane y = 0.

Reduced-field form (rms phasors, SI): the magnet's source potential A_s (the centred
axisymmetric solution's coil, ring and pole sheet currents driven by them, as in
offset_reference.py) is impressed; the unknown is the part's reaction potential A_r::

    int nu0 curl A_r . curl v + j omega int sigma (A_r + A_s) . v = 0

(the modified-potential form: A_r also carries the part's charges, so that the current
-j omega sigma (A_r + A_s) stays inside the part). The pole's face z = 0 is the natural
boundary n x H = 0 of an infinitely permeable half-space (the flat image, lambda = 1); the
symmetry plane y = 0 and the far faces hold n x A_r = 0 (A_x, A_z are odd in y). Air carries a
tiny conductivity (omega mu0 sigma_air L^2 = 1e-6) to fix the gradients there. The part is the
tetrahedra whose centroids lie in it (a staircase on a graded tensor grid). Force: Re int J x
conj(B_s + curl A_r) over the part, doubled for the half (F_x, F_z even in y).

Neglected besides what the thin-sheet reference neglects: the pole's edge and groove for the
part's own currents (the flat face: so only parts well inside the face, where the circuit's
pole acts as one); its accuracy is its mesh's (two meshes, R/6 and R/9 in the plane). ``nice python -m tests.validation.offset_fem`` runs two cases (a few minutes).
"""

from __future__ import annotations

import csv
import sys
import time
from pathlib import Path

import numpy as np
import scipy.sparse.linalg as spla
from scipy.constants import mu_0
from skfem import Basis, BilinearForm, ElementTetN0, LinearForm, MeshTet, asm
from skfem.helpers import curl, dot

from tests.validation.offset_reference import _Source, case_design


def _graded(a: float, b: float, h_in: float, lo: float, hi: float, growth: float = 1.35):
    """Nodes over [lo, hi]: spacing h_in on [a, b], growing by ``growth`` outward."""
    inner = np.linspace(a, b, max(2, int(np.ceil((b - a) / h_in)) + 1))
    left, h, x = [], h_in, a
    while x > lo + 1e-12:
        h *= growth
        x = max(lo, x - h)
        left.append(x)
    right, h, x = [], h_in, b
    while x < hi - 1e-12:
        h *= growth
        x = min(hi, x + h)
        right.append(x)
    return np.concatenate([left[::-1], inner, right])


def solve_fem(system, sol, offset: float, h: float):
    """Pull [N], lateral force [N] and the number of unknowns of the part at ``offset`` [m]
    with in-plane elements of ``h`` [m] over the part."""
    design = system.design
    t = design.target
    R, gap, th = t.radius, t.gap, t.thickness
    L = 2.5 * R
    x = _graded(-R - h, R + h, h, -L, L)
    y = _graded(0.0, R + h, h, 0.0, L)
    n_t = max(2, int(np.ceil(th / min(h, 0.5e-3))))
    zp = np.linspace(gap, gap + th, n_t + 1)
    below = np.linspace(0.0, gap, max(2, int(np.ceil(gap / h))) + 1)
    above = _graded(gap + th, gap + th + h, h, 0.0, gap + th + 2.0 * R)[2:]
    z = np.unique(np.concatenate([below, zp, above]))
    mesh = MeshTet.init_tensor(x, y, z)
    centre = mesh.p[:, mesh.t].mean(axis=1)
    rc = np.hypot(centre[0], centre[1])
    inside = (rc <= R) & (rc >= t.inner_radius) & (centre[2] > gap) & (centre[2] < gap + th)
    omega = design.drive.omega
    sigma_air = 1e-6 / (omega * mu_0 * L * L)
    sig = np.where(inside, t.conductivity, sigma_air)
    basis = Basis(mesh, ElementTetN0())
    # Source potential at the quadrature points (magnet frame: x + offset).
    X = np.asarray(basis.global_coordinates())  # (3, n_elem, n_qp)
    xm, ym, zm = X[0] + offset, X[1], X[2]
    rm = np.hypot(xm, ym)
    src = _Source(system, sol)
    a_phi, b_r, b_z = (v.reshape(rm.shape) for v in src.at(rm.ravel(), zm.ravel()))
    c, s = xm / np.maximum(rm, 1e-12), ym / np.maximum(rm, 1e-12)
    As = np.array([-a_phi * s, a_phi * c, np.zeros_like(a_phi)])
    Bs = np.array([b_r * c, b_r * s, b_z])
    sig_q = sig[:, None] * np.ones(rm.shape[1])

    @BilinearForm
    def stiffness(u, v, w):
        return dot(curl(u), curl(v)) / mu_0

    @BilinearForm
    def mass(u, v, w):
        return w["sig"] * dot(u, v)

    @LinearForm
    def load_re(v, w):
        return w["sig"] * dot(w["asr"], v)

    @LinearForm
    def load_im(v, w):
        return w["sig"] * dot(w["asi"], v)

    K = asm(stiffness, basis)
    M = asm(mass, basis, sig=sig_q)
    f = asm(load_re, basis, sig=sig_q, asr=As.real) + 1j * asm(
        load_im, basis, sig=sig_q, asi=As.imag
    )
    A = (K + 1j * omega * M).tocsr()
    b = -1j * omega * f
    # n x A_r = 0 on every face but the pole's face z = 0.
    facets = mesh.facets_satisfying(lambda p: p[2] > 1e-12 * L)
    boundary = np.intersect1d(mesh.boundary_facets(), facets)
    dofs = basis.get_dofs(boundary).all()
    free = np.setdiff1d(np.arange(basis.N), dofs)
    a = np.zeros(basis.N, complex)
    a[free] = spla.spsolve(A[free][:, free].tocsc(), b[free])
    # Fields at the quadrature points of the part's elements.
    ar = basis.interpolate(a.real)
    ai = basis.interpolate(a.imag)
    Ar = np.asarray(ar) + 1j * np.asarray(ai)
    Br = curl(ar) + 1j * curl(ai)
    J = -1j * omega * sig_q * (As + Ar)
    B = Bs + Br
    f_dens = np.real(np.cross(J, np.conj(B), axis=0))  # (3, n_elem, n_qp)
    wts = basis.dx  # (n_elem, n_qp) quadrature weights x Jacobians
    mask = inside[:, None]
    fx = 2.0 * float(np.sum(f_dens[0] * wts * mask))
    fz = 2.0 * float(np.sum(f_dens[2] * wts * mask))
    return -fz, fx, int(free.size)


CASES = (
    ("demo-1mm", {"target.gap_mm": 1.0}, (0.0, 2.0)),
    ("washer-1mm", {"target.gap_mm": 1.0, "target.inner_radius_mm": 2.0}, (0.0, 1.5)),
)
#: In-plane element sizes over the part, as fractions of its radius: the finer gives the
#: result, the coarser its own uncertainty (their difference).
MESHES = (1 / 6, 1 / 9)
CSV_PATH = Path(__file__).with_name("offset_fem.csv")
HEADER = (
    "# Part off the axis: coarse edge-element FEM (scikit-fem ElementTetN0, half model, flat\n"
    "# infinitely permeable face) against the fast model, generated by\n"
    "# `nice python -m tests.validation.offset_fem` on the demo magnet with the edits named;\n"
    "# in-plane elements R/6 (coarse) and R/9 (fem_*); forces in N, rms time averages.\n"
)


def main(argv=None) -> int:
    from models.evaluate import DEFAULT_FINENESS, pole_model_for
    from models.fast.circuit import assemble_circuit, solve_system
    from models.fast.offset import offset_forces
    from models.fast.pull import pull_by_source

    rows = []
    for name, edits, offsets in CASES:
        design = case_design(edits)
        system = assemble_circuit(
            design, DEFAULT_FINENESS, pole_model_for(design, DEFAULT_FINENESS)
        )
        sol = solve_system(system)
        split = pull_by_source(sol)
        pull0 = float(sum(split.values()))
        terms = sum(abs(v) for v in split.values())
        fast = offset_forces(system, sol, [o * 1e-3 for o in offsets], pull0, terms)
        for off, fa in zip(offsets, fast, strict=True):
            out = {}
            for key, frac in zip(("coarse", "fem"), MESHES, strict=True):
                t0 = time.perf_counter()
                pull, lat, n = solve_fem(system, sol, off * 1e-3, frac * design.target.radius)
                out[key] = (pull, lat, n, time.perf_counter() - t0)
                print(f"{name} {off:g} mm {key}: {out[key]}", file=sys.stderr, flush=True)
            rows.append(
                {
                    "case": name,
                    "offset_mm": off,
                    "circuit_pull_N": pull0,
                    "fem_pull_N": out["fem"][0],
                    "fem_pull_coarse_N": out["coarse"][0],
                    "fem_lateral_N": out["fem"][1],
                    "fem_lateral_coarse_N": out["coarse"][1],
                    "fast_pull_N": fa.pull,
                    "fast_lateral_N": fa.lateral,
                    "fast_lateral_uncertainty_N": fa.lateral_uncertainty,
                    "unknowns": out["fem"][2],
                    "fem_seconds": out["fem"][3],
                }
            )
    with open(CSV_PATH, "w", newline="") as fh:
        fh.write(HEADER)
        writer = csv.DictWriter(fh, fieldnames=list(rows[0]))
        writer.writeheader()
        for row in rows:
            writer.writerow(
                {k: (f"{v:.6g}" if isinstance(v, float) else v) for k, v in row.items()}
            )
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
