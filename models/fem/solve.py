"""FE assembly, solve and post-processing of the reference (time-harmonic axisymmetric A_phi, scikit-fem).

Two layers:

* `solve_regions` takes a generic list of rectangular `models.fem.regions.Region` objects in the
  meridian (r, z) plane, so that analytic checks (air-cored coils, plates, high-permeability blocks) can
  be built directly, and returns a `FieldSolution`;
* `solve` builds the regions of a `models.design.Design` and returns a `FemResult` (the refinement
  study on top of it is `models.fem.reference.reference`).

Conventions (DESIGN.md): SI units; phasors are rms, so time averages carry no factor 1/2
(<P> = |I|^2 R, <F> = Re(...)); the pole face is z = 0, the pole occupies z < 0 and the target z > 0;
pull is the time-averaged axial force on the target, positive toward the face (toward -z).
"""

from __future__ import annotations

import math
import time

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla
from scipy.constants import mu_0
from skfem import Basis, BilinearForm, ElementQuad2, LinearForm, MeshQuad, asm

from models.coils import coils_resistance
from models.core_loss import coil_current_with_core_loss
from models.errors import DesignError
from models.fem.core import (
    field_crossing_fraction,
    hysteresis_excess,
    pole_peak_flux_density,
    radial_flux_slab_depth,
)
from models.fem.mesh import MeshOptions, grid_nodes
from models.fem.regions import design_regions, paint, region_edges
from models.fem.results import FemResult, FieldSolution, QuadratureField
from models.result import ring_phase

__all__ = ["solve_regions", "solve"]


# Gauss order of the quadrature: 4 points per direction. The A_phi integrands are polynomials times
# 1/r (smooth off the axis; polynomial on the elements that touch it), so this is close to exact.
_INTORDER = 7


@BilinearForm
def _curl_curl(u, v, w):
    # nu (curl u).(curl v) 2 pi r with curl = (-du/dz, du/dr + u/r) for A = u e_phi.
    r = w.x[0]
    cu = u.grad[0] + np.asarray(u) / r
    cv = v.grad[0] + np.asarray(v) / r
    return np.asarray(w["nu"]) * (u.grad[1] * v.grad[1] + cu * cv) * 2.0 * np.pi * r


@BilinearForm
def _mass(u, v, w):
    return np.asarray(w["sigma"]) * np.asarray(u) * np.asarray(v) * 2.0 * np.pi * w.x[0]


@LinearForm
def _load(v, w):
    return np.asarray(w["js"]) * np.asarray(v) * 2.0 * np.pi * w.x[0]


def _check_problem(regions, frequency, current, voltage, refine, far_factor) -> list[int]:
    """Check the frequency, the drive and the mesh factors; return the indices of the coil regions."""
    if not (frequency > 0.0 and math.isfinite(frequency)):
        raise DesignError(f"frequency = {frequency!r}: must be a finite number > 0 [Hz]")
    if (current is None) == (voltage is None):
        raise DesignError("drive: give exactly one of current [A rms] and voltage [V rms]")
    for name, value in (("refine", refine), ("far_factor", far_factor)):
        if not (value > 0.0 and math.isfinite(value)):
            raise DesignError(f"{name} = {value!r}: must be a finite number > 0")
    coils = [k for k, reg in enumerate(regions) if reg.turns > 0]
    if not coils:
        raise DesignError("regions: at least one region must be a coil with turns > 0")
    return coils


def _grid(regions, frequency, refine, far_factor, options):
    """Mesh through every part edge: the MeshQuad, its grid lines r and z [m], and the owning region
    of each element (-1 for air)."""
    edges_r, edges_z = region_edges(regions, frequency, options)
    r_nodes, z_nodes = grid_nodes(
        edges_r, edges_z, refine=refine, far_factor=far_factor, options=options
    )
    mesh = MeshQuad.init_tensor(r_nodes, z_nodes)
    mid = mesh.p[:, mesh.t].mean(axis=1)
    owner = paint(regions, mid[0], mid[1])
    return mesh, r_nodes, z_nodes, owner


def _element_materials(regions, owner):
    """Per element: real and imaginary parts of the reluctivity nu = 1 / (mu_0 mu_r) [m/H] (the
    imaginary part >= 0, nonzero only in a lossy magnet), conductivity sigma [S/m] and source
    density per ampere of coil current J_s / I [1/m^2]."""
    nu_e = np.full(owner.shape, 1.0 / mu_0)
    nu_im = np.zeros(owner.shape)
    sigma_e = np.zeros(owner.shape)
    js_e = np.zeros(owner.shape)
    for k, reg in enumerate(regions):
        sel = owner == k
        if reg.lossy:
            nu = 1.0 / (mu_0 * complex(reg.relative_permeability))
            nu_e[sel], nu_im[sel] = nu.real, nu.imag
        else:
            nu_e[sel] = 1.0 / (mu_0 * complex(reg.relative_permeability).real)
        sigma_e[sel] = reg.conductivity
        if reg.turns > 0:
            js_e[sel] = reg.sense * reg.turns / reg.area  # per ampere
    return nu_e, nu_im, sigma_e, js_e


def _check_coils_whole(regions, coils, mesh, owner):
    """Refuse a coil partly overridden by a later region (it would carry the wrong ampere-turns)."""
    corners = mesh.p[:, mesh.t]
    cell_area = np.ptp(corners[0], axis=0) * np.ptp(corners[1], axis=0)
    for k in coils:
        reg = regions[k]
        if not math.isclose(float(np.sum(cell_area[owner == k])), reg.area, rel_tol=1e-9):
            raise DesignError(
                f"region {reg.role!r}: a coil must not be overlapped by a later region"
            )


def _lossy_stiffness(mesh, nu_im):
    """Stiffness of the imaginary part of nu, assembled over the lossy elements only (the same
    quadrature points as the full basis, so that the power identities stay exact)."""
    lossy = np.flatnonzero(nu_im)
    sub = Basis(mesh, ElementQuad2(), intorder=_INTORDER, elements=lossy)
    nqp = sub.X.shape[1]
    return asm(_curl_curl, sub, nu=np.repeat(nu_im[lossy, None], nqp, axis=1))


def _solve_potential(mesh, nu_e, nu_im, sigma_e, js_e, omega):
    """Assemble K + j K_im + j omega M and the load of a unit coil current, solve with A = 0 on the
    whole outline; return the basis, the potential A at every dof [Wb/m rms] and the number of
    free dofs. K and K_im are the curl-curl stiffness of Re nu and Im nu (two real assemblies)."""
    basis = Basis(mesh, ElementQuad2(), intorder=_INTORDER)
    nqp = basis.X.shape[1]
    per_qp = {
        "nu": np.repeat(nu_e[:, None], nqp, axis=1),
        "sigma": np.repeat(sigma_e[:, None], nqp, axis=1),
        "js": np.repeat(js_e[:, None], nqp, axis=1),
    }
    K = asm(_curl_curl, basis, nu=per_qp["nu"])
    f = asm(_load, basis, js=per_qp["js"])
    conducting = bool(np.any(sigma_e > 0.0))
    lossy = bool(np.any(nu_im != 0.0))
    if conducting:
        M = asm(_mass, basis, sigma=per_qp["sigma"])
        system = K + 1j * omega * M
    else:
        system = K
    if lossy:
        system = system + 1j * _lossy_stiffness(mesh, nu_im)
    system = system.tocsc()
    complex_system = conducting or lossy

    fixed = basis.get_dofs().all()  # the whole outline: axis and far boundary, A = 0
    free = np.setdiff1d(np.arange(basis.N), fixed)
    a = np.zeros(basis.N, dtype=complex)
    lu = spla.splu(sp.csc_matrix(system[free][:, free]), permc_spec="MMD_AT_PLUS_A")
    a[free] = lu.solve(f[free].astype(complex if complex_system else float))
    return basis, a, free.size


def _quadrature_fields(basis, a):
    """A, B_r, B_z at the quadrature points, shape (elements, points), with the volume weights
    2 pi r dA [m^3], the meridian area weights dA [m^2] and the points' coordinates (r, z) [m]."""
    af = basis.interpolate(a)
    av = np.asarray(af)
    dadr, dadz = af.grad[0], af.grad[1]
    x = np.asarray(basis.global_coordinates())
    r = x[0]
    dv = basis.dx * 2.0 * np.pi * r  # volume weights [m^3]
    da = basis.dx  # meridian area weights [m^2]
    br = -dadz
    bz = dadr + av / r
    return av, br, bz, dv, da, x


def _flux_linkage(regions, coils, owner, av, dv) -> complex:
    """Coil flux linkage Psi = sum over coil regions of (N / A_w) int 2 pi r A dA [Wb]."""
    flux_linkage = 0.0j
    for k in coils:
        sel = owner == k
        reg = regions[k]
        flux_linkage += reg.sense * reg.turns / reg.area * np.sum(av[sel] * dv[sel])
    return flux_linkage


def _magnetic_losses(regions, owner, omega, nu_im, br, bz, dv) -> dict:
    """Per role of a lossy magnet: omega int Im(nu) |B|^2 dV [W] (see `solve_regions`)."""
    loss = {}
    b2 = np.abs(br) ** 2 + np.abs(bz) ** 2
    for k, reg in enumerate(regions):
        sel = owner == k
        if reg.lossy and np.any(sel):
            p = float(omega * np.sum(nu_im[sel, None] * b2[sel] * dv[sel]))
            loss[reg.role] = loss.get(reg.role, 0.0) + p
    return loss


def _role_integrals(regions, owner, omega, av, br, bz, dv, da):
    """Per role: eddy loss [W], eddy current [A] (conductors only), axial force [N] and peak-in-time
    flux density [T] (see `solve_regions`)."""
    loss, rcur, force, bmax = {}, {}, {}, {}
    for k, reg in enumerate(regions):
        sel = owner == k
        if not np.any(sel):
            continue
        j = -1j * omega * reg.conductivity * av[sel]
        if reg.turns > 0:
            j = j + reg.sense * reg.turns / reg.area
        loss[reg.role] = loss.get(reg.role, 0.0) + float(
            np.sum(omega**2 * reg.conductivity * np.abs(av[sel]) ** 2 * dv[sel])
        )
        if reg.conductivity > 0.0:
            rcur[reg.role] = rcur.get(reg.role, 0.0) + complex(np.sum(j * da[sel]))
        force[reg.role] = force.get(reg.role, 0.0) + float(
            np.real(np.sum(-j * np.conj(br[sel]) * dv[sel]))
        )
        b2 = np.abs(br[sel]) ** 2 + np.abs(bz[sel]) ** 2
        peak = float(np.sqrt(np.max(b2 + np.abs(br[sel] ** 2 + bz[sel] ** 2))))
        bmax[reg.role] = max(bmax.get(reg.role, 0.0), peak)
    return loss, rcur, force, bmax


def solve_regions(
    regions,
    frequency: float,
    current: complex | None = None,
    voltage: complex | None = None,
    *,
    coil_resistance: float = 0.0,
    refine: float = 1.0,
    far_factor: float = 1.0,
    options: MeshOptions | None = None,
    keep_field: bool = False,
) -> FieldSolution:
    """Solve the time-harmonic axisymmetric field of rectangular regions driven by their coils.

    Parameters
    ----------
    regions : sequence of Region
        Parts, painted in order (later overrides earlier); at least one with role 'coil' and turns > 0.
    frequency : float
        [Hz] (> 0; at very low frequency the eddy currents simply vanish).
    current, voltage : complex, optional
        Exactly one: coil current [A rms] or coil terminal voltage [V rms]. With a voltage the problem
        is solved for a unit current and scaled by I = V / Z (the problem is linear).
    coil_resistance : float
        Winding resistance R [Ohm] for Z = R + j omega Psi / I.
    refine : float
        Divides every element size (> 0); 2 halves them.
    far_factor : float
        Multiplies the distance to the far boundary (> 0).
    options : MeshOptions, optional
        Grid knobs (defaults: `MeshOptions()`).
    keep_field : bool
        Keep the basis, the nodal potential (for point evaluation) and the field at the quadrature
        points (`QuadratureField`, for integrals over a region) in the result.

    Returns
    -------
    FieldSolution

    Notes
    -----
    Weak form, for A = A_phi(r, z) e_phi with test function v e_phi (dV = 2 pi r dr dz):

        int nu (curl A).(curl v) dV + j omega int sigma A v dV = int J_s v dV,
        curl A = (-dA/dz) e_r + (dA/dr + A/r) e_z,

    with nu = 1 / (mu_0 mu_r) (complex in a lossy magnet: Im mu_r <= 0, Im nu >= 0; its real and
    imaginary parts are assembled as two real stiffness matrices), J_s = N I / A_w in a stranded
    coil, J = -j omega sigma A in a solid
    shorted conductor (an axisymmetric closed loop has no applied voltage), and A = 0 on the axis and on
    the far boundary (r = r_far, z = z_lo, z = z_hi). Biquadratic Lagrange quadrilaterals. A_phi rather
    than psi = r A_phi is the unknown: every basis function that survives A = 0 on the axis vanishes
    linearly there, so all integrands, 1/r included, stay polynomial on the elements touching the axis,
    whereas in psi the modes with d psi / dr != 0 on the axis have a log-divergent energy.

    Post-processing, all with the quadrature of the assembly (so that the power balance
    Re(V I*) = R |I|^2 + sum of eddy losses + sum of magnetic losses holds to round-off):

    * eddy loss int omega^2 sigma |A|^2 dV; region current int -j omega sigma A dA;
    * magnetic loss of a lossy magnet omega int Im(nu) |B|^2 dV (|B|^2 = |B_r|^2 + |B_z|^2): with
      Psi = f^T a and (K + j K_im + j omega M) a = f for real symmetric K, K_im, M,
      Re(j omega Psi) = omega a^H K_im a + omega^2 a^H M a, the two loss integrals;
    * axial force Re int (J x B*)_z dV = -Re int J B_r* dV, B_r = -dA/dz (e_phi x e_r = -e_z);
    * coil flux linkage Psi = (N / A_w) int_coil 2 pi r A dA, Z = R + j omega Psi / I.
    """
    regions = list(regions)
    options = options or MeshOptions()
    coils = _check_problem(regions, frequency, current, voltage, refine, far_factor)
    omega = 2.0 * math.pi * frequency

    mesh, r_nodes, z_nodes, owner = _grid(regions, frequency, refine, far_factor, options)
    nu_e, nu_im, sigma_e, js_e = _element_materials(regions, owner)
    _check_coils_whole(regions, coils, mesh, owner)
    basis, a, n_free = _solve_potential(mesh, nu_e, nu_im, sigma_e, js_e, omega)

    # ---- post-processing at the quadrature points (unit current)
    av, br, bz, dv, da, x = _quadrature_fields(basis, a)
    flux_linkage = _flux_linkage(regions, coils, owner, av, dv)
    loss, rcur, force, bmax = _role_integrals(regions, owner, omega, av, br, bz, dv, da)
    magnetic_loss = _magnetic_losses(regions, owner, omega, nu_im, br, bz, dv)
    quadrature = None
    if keep_field:
        roles = tuple(reg.role for reg in regions)
        quadrature = QuadratureField(owner, roles, x[0], x[1], br, bz, dv)

    impedance = coil_resistance + 1j * omega * flux_linkage
    sol = FieldSolution(
        frequency=frequency,
        current=1.0 + 0.0j,
        flux_linkage=complex(flux_linkage),
        coil_resistance=float(coil_resistance),
        impedance=complex(impedance),
        voltage=complex(impedance),
        loss_W=loss,
        magnetic_loss_W=magnetic_loss,
        region_current_A=rcur,
        force_z_N=force,
        flux_density_T=bmax,
        n_dofs=int(n_free),
        n_elements=int(mesh.t.shape[1]),
        r_nodes=r_nodes,
        z_nodes=z_nodes,
        basis=basis if keep_field else None,
        potential=a if keep_field else None,
        quadrature=quadrature,
    )
    scale = complex(current) if current is not None else complex(voltage) / sol.impedance
    return sol.scaled(scale)


# ----------------------------------------------------------------------------------------------
# Design layer


def _coil_current(drive, pole, unit, loss_at) -> complex:
    """Coil current [A rms]: the drive's, or with a voltage drive the root of V = (Z + R_he) I
    (`models.core_loss.coil_current_with_core_loss`; I = V / Z without a loss law)."""
    if drive.current is not None:
        return complex(drive.current)
    if pole is None or pole.core_loss is None:
        return complex(drive.voltage) / unit.impedance
    return coil_current_with_core_loss(complex(drive.voltage), unit.impedance, loss_at)


def _pole_mean_flux_density(sol, pole) -> float:
    """Peak section-averaged axial flux density of the pole, max over its length [T], from A on its
    side: B_mean = 2 A(R_p, z) / R_p (Stokes' theorem over the section), times sqrt 2."""
    p, a_vertex = sol.vertex_potential()
    on_side = (
        np.isclose(p[0], pole.radius, rtol=0.0, atol=1e-12)
        & (p[1] >= -pole.length - 1e-12)
        & (p[1] <= 1e-12)
    )
    return float(np.max(np.abs(a_vertex[on_side]))) * 2.0 / pole.radius * math.sqrt(2.0)


def solve(design, refine: float = 1.0, far_factor: float = 1.0, options: MeshOptions | None = None):
    """Reference FEM solution of one design.

    Parameters
    ----------
    design : models.design.Design
        The design (SI). Current drive uses ``design.drive.current`` [A rms]; voltage drive
        ``design.drive.voltage`` [V rms] (taken as the phase reference).
    refine : float
        Divides every element size (> 0).
    far_factor : float
        Multiplies the distance to the far boundary (> 0).
    options : MeshOptions, optional
        Grid knobs.

    Returns
    -------
    FemResult

    Notes
    -----
    Materials at 20 degC (the design's conductivities); the winding resistance is
    ``models.coils.coils_resistance(design, 20.0)`` (every coil in series). An air core (no
    pole) has no steel: its core losses are 0, its pole flux density nan. Pull = -F_z(target) = Re int_target J B_r* dV, the force density
    being f = Re(J x B*) for rms phasors and e_phi x e_r = -e_z (see `solve_regions`).

    A laminated pole with sheet data is a lossy magnet of permeability
    ``design.pole.effective_permeability(f)`` (DESIGN.md, "Iron losses"): the field's impedance
    Z = R + j omega Psi / I carries its sheets' eddy loss. Its hysteresis and excess losses
    (`models.fem.core.hysteresis_excess`, from the field's peak flux density at every quadrature
    point of the pole) are carried by a series resistance R_he = P_he / |I|^2 of the coil:
    V = (Z + R_he) I. The problem is solved once at unit current and scaled: by the drive current,
    or with a voltage drive by the root of |V| = |Z + R_he(|I|)| |I|
    (`models.core_loss.coil_current_with_core_loss`; I = V / Z without a loss law). Hence

        Re(V I*) = coil + ring + target + pole eddy + core eddy + hysteresis + excess losses,

    to round-off (the Galerkin identity of the weak form and R_he's definition).
    """
    t0 = time.perf_counter()
    drive, pole = design.drive, design.pole
    unit = solve_regions(
        design_regions(design),
        drive.frequency,
        current=1.0,
        coil_resistance=coils_resistance(design, 20.0),
        refine=refine,
        far_factor=far_factor,
        options=options,
        keep_field=True,
    )
    if pole is None:  # an air core: no steel, no core loss
        i_coil = _coil_current(drive, pole, unit, None)
        return _air_core_result(design, unit, i_coil, t0, refine, far_factor)
    b_unit, dv = pole_peak_flux_density(unit)  # per ampere of coil current

    def loss_at(i_abs: float) -> float:
        return sum(hysteresis_excess(pole, drive.frequency, i_abs * b_unit, dv))

    i_coil = _coil_current(drive, pole, unit, loss_at)
    sol = unit.scaled(i_coil)
    hysteresis, excess = hysteresis_excess(pole, drive.frequency, abs(i_coil) * b_unit, dv)
    r_he = (hysteresis + excess) / abs(i_coil) ** 2 if i_coil != 0.0 else 0.0
    impedance = sol.impedance + r_he
    i_ring = sol.region_current_A.get("ring", 0.0j)
    phase = ring_phase(i_ring, i_coil) if design.ring is not None else math.nan
    return FemResult(
        pull_N=-sol.force_z_N.get("target", 0.0),
        target_loss_W=sol.loss_W.get("target", 0.0),
        ring_loss_W=sol.loss_W.get("ring", 0.0),
        pole_loss_W=sol.loss_W.get("pole", 0.0),
        coil_loss_W=abs(i_coil) ** 2 * sol.coil_resistance,
        core_eddy_loss_W=sol.magnetic_loss_W.get("pole", 0.0),
        core_hysteresis_loss_W=hysteresis,
        core_excess_loss_W=excess,
        coil_current_A=i_coil,
        coil_voltage_V=impedance * i_coil,
        coil_impedance_ohm=impedance,
        ring_current_A=complex(i_ring),
        ring_phase_deg=phase,
        pole_flux_density_T=_pole_mean_flux_density(sol, pole),
        core_radial_flux_fraction=field_crossing_fraction(unit, radial_flux_slab_depth(design)),
        n_dofs=sol.n_dofs,
        run_time_s=time.perf_counter() - t0,
        refine=float(refine),
        far_factor=float(far_factor),
    )


def _air_core_result(design, unit, i_coil: complex, t0: float, refine, far_factor):
    """The FemResult of an air-core design (no pole): no core losses (0), the pole's flux
    density and the radial flux fraction nan."""
    sol = unit.scaled(i_coil)
    return FemResult(
        pull_N=-sol.force_z_N.get("target", 0.0),
        target_loss_W=sol.loss_W.get("target", 0.0),
        ring_loss_W=0.0,
        pole_loss_W=0.0,
        coil_loss_W=abs(i_coil) ** 2 * sol.coil_resistance,
        core_eddy_loss_W=0.0,
        core_hysteresis_loss_W=0.0,
        core_excess_loss_W=0.0,
        coil_current_A=i_coil,
        coil_voltage_V=sol.impedance * i_coil,
        coil_impedance_ohm=sol.impedance,
        ring_current_A=0.0j,
        ring_phase_deg=math.nan,
        pole_flux_density_T=math.nan,
        core_radial_flux_fraction=math.nan,
        n_dofs=sol.n_dofs,
        run_time_s=time.perf_counter() - t0,
        refine=float(refine),
        far_factor=float(far_factor),
    )
