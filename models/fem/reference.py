"""Reference model: time-harmonic axisymmetric finite elements (A_phi formulation, scikit-fem).

The reference solves the full field of a design, iron, groove, ring, coil and target together, on a
graded tensor-product mesh of biquadratic quadrilaterals, and proves itself by convergence: `reference`
runs a small refinement study (two meshes, two far-boundary distances) and reports its own uncertainty.

Two layers:

* `solve_regions` takes a generic list of rectangular `Region` objects in the meridian (r, z) plane, so
  that analytic checks (air-cored coils, plates, high-permeability blocks) can be built directly;
* `solve` builds the regions of a `models.design.Design` and returns a `FemResult`; `reference` wraps
  it in the refinement study.

Conventions (DESIGN.md): SI units; phasors are rms, so time averages carry no factor 1/2
(<P> = |I|^2 R, <F> = Re(...)); the pole face is z = 0, the pole occupies z < 0 and the target z > 0;
pull is the time-averaged axial force on the target, positive toward the face (toward -z).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field, replace

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla
from scipy.constants import mu_0
from skfem import Basis, BilinearForm, ElementQuad2, LinearForm, MeshQuad, asm

from models.errors import DesignError
from models.fem.mesh import MeshOptions, grid_nodes

__all__ = [
    "Region",
    "FieldSolution",
    "FemResult",
    "ReferenceResult",
    "MeshOptions",
    "skin_depth",
    "solve_regions",
    "design_regions",
    "solve",
    "reference",
    "RESULT_KEYS",
]

#: Scalar keys of `FemResult.to_dict` shared with the fast model's result (same names, same units).
RESULT_KEYS = (
    "pull_N",
    "target_loss_W",
    "ring_loss_W",
    "pole_loss_W",
    "coil_loss_W",
    "input_power_W",
    "coil_current_A",
    "coil_voltage_V",
    "coil_impedance_ohm",
    "ring_current_A",
    "ring_phase_deg",
    "pole_flux_density_T",
)

# Gauss order of the quadrature: 4 points per direction. The A_phi integrands are polynomials times
# 1/r (smooth off the axis; polynomial on the elements that touch it), so this is close to exact.
_INTORDER = 7


def skin_depth(frequency: float, conductivity: float, relative_permeability: float = 1.0) -> float:
    """Skin depth delta = sqrt(2 / (omega mu sigma)) [m] (inf for an insulator or at DC).

    Parameters
    ----------
    frequency : float
        Frequency [Hz].
    conductivity : float
        Conductivity sigma [S/m].
    relative_permeability : float
        Relative permeability mu_r [-].

    Notes
    -----
    Plane-wave penetration depth of a good conductor, e.g. Jackson, Classical Electrodynamics, 3rd ed.,
    eq. (5.165).
    """
    w = 2.0 * math.pi * frequency * mu_0 * relative_permeability * conductivity
    return math.inf if w <= 0.0 else math.sqrt(2.0 / w)


@dataclass(frozen=True)
class Region:
    """One rectangular part of the meridian plane r0 <= r <= r1, z0 <= z <= z1.

    Parameters
    ----------
    role : str
        Name under which results are gathered ('coil', 'ring', 'target', 'pole', 'air', or any other);
        several regions may share a role.
    r0, r1, z0, z1 : float
        Extent [m]; ``r1`` may be ``math.inf`` and ``z0``/``z1`` may be -/+ ``math.inf`` to reach the far
        boundary (a plate or half-space).
    relative_permeability : float
        mu_r [-] (>= 1 for the cases the checks cover; any positive value is solved).
    conductivity : float
        sigma [S/m]; a solid shorted conductor carries J = -j omega sigma A (no applied voltage).
    turns : int
        Turns of a stranded coil (> 0 only for role 'coil'); the coil carries the uniform density
        J_s = turns I / window area and no eddy currents (sigma must be 0).

    Regions are painted in order onto the mesh: a later region overrides an earlier one where they
    overlap (a groove is the pole region followed by the ring region). Uncovered space is air.
    """

    role: str
    r0: float
    r1: float
    z0: float
    z1: float
    relative_permeability: float = 1.0
    conductivity: float = 0.0
    turns: int = 0

    def __post_init__(self):
        problems = []
        if not (0.0 <= self.r0 < self.r1):
            problems.append(
                f"region {self.role!r}: r0 = {self.r0!r}, r1 = {self.r1!r}: must satisfy 0 <= r0 < r1"
            )
        if not (self.z0 < self.z1) or math.isnan(self.z0) or math.isnan(self.z1):
            problems.append(f"region {self.role!r}: z0 = {self.z0!r}: must be < z1 = {self.z1!r}")
        if not (self.relative_permeability > 0.0 and math.isfinite(self.relative_permeability)):
            problems.append(
                f"region {self.role!r}: relative_permeability = {self.relative_permeability!r}: "
                "must be a finite number > 0"
            )
        if not (self.conductivity >= 0.0 and math.isfinite(self.conductivity)):
            problems.append(
                f"region {self.role!r}: conductivity = {self.conductivity!r}: must be >= 0"
            )
        if self.turns < 0:
            problems.append(f"region {self.role!r}: turns = {self.turns!r}: must be >= 0")
        if self.turns > 0:
            if self.conductivity != 0.0:
                problems.append(
                    f"region {self.role!r}: conductivity = {self.conductivity!r}: a stranded coil "
                    "must have conductivity 0 (its winding resistance is given separately)"
                )
            if not all(math.isfinite(v) for v in (self.r1, self.z0, self.z1)):
                problems.append(f"region {self.role!r}: a coil must be finite")
        if problems:
            raise DesignError(problems)

    @property
    def area(self) -> float:
        """Cross-section in the meridian plane [m^2]."""
        return (self.r1 - self.r0) * (self.z1 - self.z0)


@dataclass(frozen=True)
class FieldSolution:
    """Result of `solve_regions` (SI, rms phasors).

    Attributes
    ----------
    frequency : float
        [Hz].
    current : complex
        Coil current I [A rms] (all coil regions carry it in series).
    flux_linkage : complex
        Coil flux linkage Psi [Wb rms], sum over coil regions of (N / A_w) int 2 pi r A dA.
    coil_resistance : float
        Winding resistance used for the impedance [Ohm].
    impedance : complex
        Z = R + j omega Psi / I [Ohm].
    voltage : complex
        V = Z I [V rms].
    loss_W : dict
        Per role: eddy-current loss int |J|^2 / sigma dV [W] of the solid conductors.
    region_current_A : dict
        Per role: total eddy current int J dA over the meridian cross-section [A rms, complex].
    force_z_N : dict
        Per role: time-averaged axial force Re int (J x B*)_z dV [N], positive toward +z.
    flux_density_T : dict
        Per role: largest peak-in-time magnitude of B at the quadrature points [T] (rms phasors:
        max_t |b(t)| = sqrt(|B|^2 + |B.B|)); at re-entrant corners this grows under refinement.
    n_dofs, n_elements : int
        Size of the discrete problem.
    r_nodes, z_nodes : numpy.ndarray
        Grid lines [m].
    """

    frequency: float
    current: complex
    flux_linkage: complex
    coil_resistance: float
    impedance: complex
    voltage: complex
    loss_W: dict
    region_current_A: dict
    force_z_N: dict
    flux_density_T: dict
    n_dofs: int
    n_elements: int
    r_nodes: np.ndarray = field(repr=False, compare=False)
    z_nodes: np.ndarray = field(repr=False, compare=False)
    basis: object = field(default=None, repr=False, compare=False)
    potential: np.ndarray = field(default=None, repr=False, compare=False)

    @property
    def inductance(self) -> complex:
        """Psi / I [H] (complex when eddy currents take power: Z - R = j omega L)."""
        return self.flux_linkage / self.current

    def vertex_potential(self) -> tuple[np.ndarray, np.ndarray]:
        """Mesh vertices, shape (2, n) [m], and A_phi at them [Wb/m rms, complex] (needs
        ``keep_field=True``)."""
        mesh = self.basis.mesh
        return mesh.p, self.potential[self.basis.nodal_dofs[0]]

    def scaled(self, factor: complex) -> FieldSolution:
        """The same solution with every source multiplied by ``factor`` (linear problem)."""
        f2 = abs(factor) ** 2
        return replace(
            self,
            current=self.current * factor,
            flux_linkage=self.flux_linkage * factor,
            voltage=self.voltage * factor,
            loss_W={k: v * f2 for k, v in self.loss_W.items()},
            region_current_A={k: v * factor for k, v in self.region_current_A.items()},
            force_z_N={k: v * f2 for k, v in self.force_z_N.items()},
            flux_density_T={k: v * abs(factor) for k, v in self.flux_density_T.items()},
            potential=None if self.potential is None else self.potential * factor,
        )


def _edges(regions, frequency, options: MeshOptions):
    """Part edges on each axis with the element size each one wants."""
    edges_r, edges_z = [], []
    for reg in regions:
        delta = skin_depth(frequency, reg.conductivity, reg.relative_permeability)
        dr, dz = reg.r1 - reg.r0, reg.z1 - reg.z0
        hs = delta / options.per_skin_depth
        for x in (reg.r0, reg.r1):
            if math.isfinite(x) and x > 0.0:
                edges_r.append((x, min(dr / options.n_min, hs)))
        for x in (reg.z0, reg.z1):
            if math.isfinite(x):
                edges_z.append((x, min(dz / options.n_min, hs)))
    if not edges_r or not edges_z:
        raise DesignError("regions: at least one region needs finite edges in r and in z")
    return edges_r, edges_z


def _paint(regions, mid_r, mid_z):
    """Index of the region (or -1 for air) of each element, later regions winning."""
    owner = np.full(mid_r.shape, -1, dtype=int)
    for k, reg in enumerate(regions):
        inside = (mid_r > reg.r0) & (mid_r < reg.r1) & (mid_z > reg.z0) & (mid_z < reg.z1)
        owner[inside] = k
    return owner


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
        Keep the basis and the nodal potential in the result (for point evaluation).

    Returns
    -------
    FieldSolution

    Notes
    -----
    Weak form, for A = A_phi(r, z) e_phi with test function v e_phi (dV = 2 pi r dr dz):

        int nu (curl A).(curl v) dV + j omega int sigma A v dV = int J_s v dV,
        curl A = (-dA/dz) e_r + (dA/dr + A/r) e_z,

    with nu = 1 / (mu_0 mu_r), J_s = N I / A_w in a stranded coil, J = -j omega sigma A in a solid
    shorted conductor (an axisymmetric closed loop has no applied voltage), and A = 0 on the axis and on
    the far boundary (r = r_far, z = z_lo, z = z_hi). Biquadratic Lagrange quadrilaterals. A_phi rather
    than psi = r A_phi is the unknown: every basis function that survives A = 0 on the axis vanishes
    linearly there, so all integrands, 1/r included, stay polynomial on the elements touching the axis,
    whereas in psi the modes with d psi / dr != 0 on the axis have a log-divergent energy.

    Post-processing, all with the quadrature of the assembly (so that the power balance
    Re(V I*) = R |I|^2 + sum of eddy losses holds to round-off):

    * eddy loss int omega^2 sigma |A|^2 dV; region current int -j omega sigma A dA;
    * axial force Re int (J x B*)_z dV = -Re int J B_r* dV, B_r = -dA/dz (e_phi x e_r = -e_z);
    * coil flux linkage Psi = (N / A_w) int_coil 2 pi r A dA, Z = R + j omega Psi / I.
    """
    regions = list(regions)
    options = options or MeshOptions()
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
    omega = 2.0 * math.pi * frequency

    edges_r, edges_z = _edges(regions, frequency, options)
    r_nodes, z_nodes = grid_nodes(
        edges_r, edges_z, refine=refine, far_factor=far_factor, options=options
    )
    mesh = MeshQuad.init_tensor(r_nodes, z_nodes)
    mid = mesh.p[:, mesh.t].mean(axis=1)
    owner = _paint(regions, mid[0], mid[1])

    nu_e = np.full(owner.shape, 1.0 / mu_0)
    sigma_e = np.zeros(owner.shape)
    js_e = np.zeros(owner.shape)
    for k, reg in enumerate(regions):
        sel = owner == k
        nu_e[sel] = 1.0 / (mu_0 * reg.relative_permeability)
        sigma_e[sel] = reg.conductivity
        if reg.turns > 0:
            js_e[sel] = reg.turns / reg.area  # per ampere
    corners = mesh.p[:, mesh.t]
    cell_area = np.ptp(corners[0], axis=0) * np.ptp(corners[1], axis=0)
    for k in coils:  # a coil partly overridden by a later region would carry the wrong ampere-turns
        reg = regions[k]
        if not math.isclose(float(np.sum(cell_area[owner == k])), reg.area, rel_tol=1e-9):
            raise DesignError(
                f"region {reg.role!r}: a coil must not be overlapped by a later region"
            )

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
    if conducting:
        M = asm(_mass, basis, sigma=per_qp["sigma"])
        system = (K + 1j * omega * M).tocsc()
    else:
        system = K.tocsc()

    fixed = basis.get_dofs().all()  # the whole outline: axis and far boundary, A = 0
    free = np.setdiff1d(np.arange(basis.N), fixed)
    a = np.zeros(basis.N, dtype=complex)
    lu = spla.splu(sp.csc_matrix(system[free][:, free]), permc_spec="MMD_AT_PLUS_A")
    a[free] = lu.solve(f[free].astype(complex if conducting else float))

    # ---- post-processing at the quadrature points (unit current)
    af = basis.interpolate(a)
    av = np.asarray(af)
    dadr, dadz = af.grad[0], af.grad[1]
    x = np.asarray(basis.global_coordinates())
    r = x[0]
    dv = basis.dx * 2.0 * np.pi * r  # volume weights [m^3]
    da = basis.dx  # meridian area weights [m^2]
    br = -dadz
    bz = dadr + av / r

    flux_linkage = 0.0j
    for k in coils:
        sel = owner == k
        reg = regions[k]
        flux_linkage += reg.turns / reg.area * np.sum(av[sel] * dv[sel])

    loss, rcur, force, bmax = {}, {}, {}, {}
    for k, reg in enumerate(regions):
        sel = owner == k
        if not np.any(sel):
            continue
        j = -1j * omega * reg.conductivity * av[sel]
        if reg.turns > 0:
            j = j + reg.turns / reg.area
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

    impedance = coil_resistance + 1j * omega * flux_linkage
    sol = FieldSolution(
        frequency=frequency,
        current=1.0 + 0.0j,
        flux_linkage=complex(flux_linkage),
        coil_resistance=float(coil_resistance),
        impedance=complex(impedance),
        voltage=complex(impedance),
        loss_W=loss,
        region_current_A=rcur,
        force_z_N=force,
        flux_density_T=bmax,
        n_dofs=int(free.size),
        n_elements=int(mesh.t.shape[1]),
        r_nodes=r_nodes,
        z_nodes=z_nodes,
        basis=basis if keep_field else None,
        potential=a if keep_field else None,
    )
    scale = complex(current) if current is not None else complex(voltage) / sol.impedance
    return sol.scaled(scale)


# ----------------------------------------------------------------------------------------------
# Design layer


def design_regions(design) -> list[Region]:
    """The regions of a design: pole, ring in its groove (painted over the pole), coil, target.

    Parameters
    ----------
    design : models.design.Design
        SI dataclasses (see models/design.py for the geometry).

    Returns
    -------
    list of Region
        Roles 'pole', 'ring' (if any), 'coil', 'target'. A laminated pole (conductivity 0) has
        sigma = 0; a solid pole carries eddy currents.
    """
    p, c, g = design.pole, design.coil, design.target
    regions = [
        Region("pole", 0.0, p.radius, -p.length, 0.0, p.relative_permeability, p.conductivity),
    ]
    if design.ring is not None:
        ring = design.ring
        regions.append(
            Region(
                "ring",
                ring.inner_radius,
                ring.outer_radius,
                -ring.depth,
                0.0,
                1.0,
                ring.conductivity,
            )
        )
    regions.append(
        Region("coil", c.inner_radius, c.outer_radius, c.z_back, c.z_front, turns=c.turns)
    )
    regions.append(
        Region("target", g.inner_radius, g.radius, g.gap, g.gap + g.thickness, 1.0, g.conductivity)
    )
    return regions


def _complex_pair(z: complex) -> list[float]:
    return [float(np.real(z)), float(np.imag(z))]


@dataclass(frozen=True)
class FemResult:
    """Reference results of one design (SI, rms phasors).

    Attributes
    ----------
    pull_N : float
        Time-averaged axial force on the target, positive toward the face [N].
    target_loss_W, ring_loss_W, pole_loss_W, coil_loss_W : float
        Losses [W]: eddy losses int |J|^2 / sigma dV (pole: 0 when laminated) and |I|^2 R_coil(20 degC).
    coil_current_A : complex
        Coil current [A rms] (drive current, or V / Z with a voltage drive).
    coil_voltage_V : complex
        Terminal voltage V = Z I [V rms].
    coil_impedance_ohm : complex
        Z = R_coil + j omega Psi / I [Ohm].
    ring_current_A : complex
        Total ring current int J dA [A rms] (0 without a ring).
    ring_phase_deg : float
        arg(I_ring / I_coil) [deg] in (-180, 180] (nan without a ring).
    pole_flux_density_T : float
        Peak in time of the section-averaged axial flux density of the pole, max over the pole's
        length, 2 |A(R_p, z)| sqrt(2) / R_p [T] (saturation check; the local peak at the groove's
        corners is higher and grows under refinement).
    n_dofs : int
        Unknowns of the solve.
    run_time_s : float
        Wall time of this solve [s].
    refine, far_factor : float
        Mesh parameters of this solve.
    """

    pull_N: float
    target_loss_W: float
    ring_loss_W: float
    pole_loss_W: float
    coil_loss_W: float
    coil_current_A: complex
    coil_voltage_V: complex
    coil_impedance_ohm: complex
    ring_current_A: complex
    ring_phase_deg: float
    pole_flux_density_T: float
    n_dofs: int
    run_time_s: float
    refine: float = 1.0
    far_factor: float = 1.0

    def to_dict(self) -> dict:
        """Plain values in the fast model's names: magnitudes for currents and voltage, the impedance
        as [re, im]; the complex phasors as [re, im] under ``*_complex`` keys; nan phase -> None."""
        phase = None if math.isnan(self.ring_phase_deg) else float(self.ring_phase_deg)
        return {
            "pull_N": float(self.pull_N),
            "target_loss_W": float(self.target_loss_W),
            "ring_loss_W": float(self.ring_loss_W),
            "pole_loss_W": float(self.pole_loss_W),
            "coil_loss_W": float(self.coil_loss_W),
            "input_power_W": float(np.real(self.coil_voltage_V * np.conj(self.coil_current_A))),
            "coil_current_A": float(abs(self.coil_current_A)),
            "coil_voltage_V": float(abs(self.coil_voltage_V)),
            "coil_impedance_ohm": _complex_pair(self.coil_impedance_ohm),
            "ring_current_A": float(abs(self.ring_current_A)),
            "ring_phase_deg": phase,
            "pole_flux_density_T": float(self.pole_flux_density_T),
            "coil_current_A_complex": _complex_pair(self.coil_current_A),
            "coil_voltage_V_complex": _complex_pair(self.coil_voltage_V),
            "ring_current_A_complex": _complex_pair(self.ring_current_A),
            "n_dofs": int(self.n_dofs),
            "run_time_s": float(self.run_time_s),
            "refine": float(self.refine),
            "far_factor": float(self.far_factor),
        }


def solve(design, refine: float = 1.0, far_factor: float = 1.0, options: MeshOptions | None = None):
    """Reference FEM solution of one design.

    Parameters
    ----------
    design : models.design.Design
        The design (SI). Current drive uses ``design.drive.current`` [A rms]; voltage drive
        ``design.drive.voltage`` [V rms] (taken as the phase reference), I = V / Z.
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
    ``design.coil.resistance(20.0)``. Pull = -F_z(target) = Re int_target J B_r* dV, the force density
    being f = Re(J x B*) for rms phasors and e_phi x e_r = -e_z (see `solve_regions`).
    """
    t0 = time.perf_counter()
    drive = design.drive
    sol = solve_regions(
        design_regions(design),
        drive.frequency,
        current=drive.current,
        voltage=drive.voltage,
        coil_resistance=design.coil.resistance(20.0),
        refine=refine,
        far_factor=far_factor,
        options=options,
        keep_field=True,
    )
    i_coil = sol.current
    i_ring = sol.region_current_A.get("ring", 0.0j)
    phase = math.degrees(np.angle(i_ring / i_coil)) if design.ring is not None else math.nan
    pole = design.pole
    p, a_vertex = sol.vertex_potential()
    on_side = (
        np.isclose(p[0], pole.radius, rtol=0.0, atol=1e-12)
        & (p[1] >= -pole.length - 1e-12)
        & (p[1] <= 1e-12)
    )
    b_pole = float(np.max(np.abs(a_vertex[on_side]))) * 2.0 / pole.radius * math.sqrt(2.0)
    return FemResult(
        pull_N=-sol.force_z_N.get("target", 0.0),
        target_loss_W=sol.loss_W.get("target", 0.0),
        ring_loss_W=sol.loss_W.get("ring", 0.0),
        pole_loss_W=sol.loss_W.get("pole", 0.0),
        coil_loss_W=abs(i_coil) ** 2 * sol.coil_resistance,
        coil_current_A=i_coil,
        coil_voltage_V=sol.voltage,
        coil_impedance_ohm=sol.impedance,
        ring_current_A=complex(i_ring),
        ring_phase_deg=phase,
        pole_flux_density_T=b_pole,
        n_dofs=sol.n_dofs,
        run_time_s=time.perf_counter() - t0,
        refine=float(refine),
        far_factor=float(far_factor),
    )


# ----------------------------------------------------------------------------------------------
# Refinement study


def _flatten(d: dict) -> dict:
    """Scalar view of a result dict: [re, im] pairs become ``key.re`` and ``key.im``."""
    out = {}
    for k in RESULT_KEYS:
        v = d.get(k)
        if isinstance(v, (list, tuple)):
            out[k + ".re"], out[k + ".im"] = float(v[0]), float(v[1])
        else:
            out[k] = math.nan if v is None else float(v)
    return out


def _change(a: dict, b: dict, scale: dict) -> tuple[dict, dict]:
    """Absolute and relative change of every flattened quantity from ``a`` to ``b``."""
    absolute, relative = {}, {}
    for k in scale:
        x, y, s = a[k], b[k], scale[k]
        if math.isnan(x) or math.isnan(y):
            absolute[k], relative[k] = math.nan, math.nan
            continue
        dx = y - x
        if k == "ring_phase_deg":
            dx = (dx + 180.0) % 360.0 - 180.0
        absolute[k] = abs(dx)
        relative[k] = 0.0 if dx == 0.0 else abs(dx) / abs(s) if s != 0.0 else math.inf
    return absolute, relative


@dataclass(frozen=True)
class ReferenceResult:
    """Finest solution of a refinement study and its own uncertainty.

    Attributes
    ----------
    result : FemResult
        Finest mesh and farthest boundary.
    uncertainty : dict
        Relative uncertainty [-] per flattened quantity (``coil_impedance_ohm.re`` ...): the change
        under mesh refinement plus the change under moving the far boundary out.
    uncertainty_abs : dict
        The same in the quantity's own unit (degrees for the phase).
    mesh_change, domain_change : dict
        The two relative contributions.
    runs : tuple of FemResult
        (coarse, fine, fine with far boundary moved out).
    run_time_s : float
        Wall time of the whole study [s].
    """

    result: FemResult
    uncertainty: dict
    uncertainty_abs: dict
    mesh_change: dict
    domain_change: dict
    runs: tuple
    run_time_s: float

    def to_dict(self) -> dict:
        def clean(d):
            return {k: (None if math.isnan(v) else v) for k, v in d.items()}

        return {
            "result": self.result.to_dict(),
            "uncertainty": clean(self.uncertainty),
            "uncertainty_abs": clean(self.uncertainty_abs),
            "mesh_change": clean(self.mesh_change),
            "domain_change": clean(self.domain_change),
            "runs": [
                {
                    "refine": r.refine,
                    "far_factor": r.far_factor,
                    "n_dofs": r.n_dofs,
                    "run_time_s": r.run_time_s,
                }
                for r in self.runs
            ],
            "run_time_s": self.run_time_s,
        }


def reference(
    design,
    refine: float = 1.0,
    far_factor: float = 1.0,
    refine_ratio: float = 1.6,
    far_ratio: float = 1.6,
    options: MeshOptions | None = None,
) -> ReferenceResult:
    """Reference solution with its own uncertainty from a small convergence study.

    Three solves: (refine, far_factor), (refine_ratio refine, far_factor) and
    (refine_ratio refine, far_ratio far_factor). The last one is returned.

    Parameters
    ----------
    design : models.design.Design
    refine, far_factor : float
        Coarse level of the study.
    refine_ratio, far_ratio : float
        Steps of the study (> 1).
    options : MeshOptions, optional

    Returns
    -------
    ReferenceResult

    Notes
    -----
    The uncertainty of a quantity q is |q_fine - q_coarse| / |q| + |q_far - q_fine| / |q|. With an
    error shrinking like h^p (p about 2 to 4 for these biquadratic elements, see tests/test_fem.py)
    the mesh term is the error of the coarse mesh times (1 - refine_ratio^-p), larger than the error
    of the fine one: the estimate is conservative. Relative figures of quantities that are zero in
    every run are 0.
    """
    for name, value in (("refine_ratio", refine_ratio), ("far_ratio", far_ratio)):
        if not (value > 1.0 and math.isfinite(value)):
            raise DesignError(f"{name} = {value!r}: must be a finite number > 1")
    t0 = time.perf_counter()
    coarse = solve(design, refine, far_factor, options)
    fine = solve(design, refine * refine_ratio, far_factor, options)
    far = solve(design, refine * refine_ratio, far_factor * far_ratio, options)
    fc, ff, fr = (_flatten(x.to_dict()) for x in (coarse, fine, far))
    mesh_abs, mesh_rel = _change(fc, ff, fr)
    dom_abs, dom_rel = _change(ff, fr, fr)
    unc = {k: mesh_rel[k] + dom_rel[k] for k in fr}
    unc_abs = {k: mesh_abs[k] + dom_abs[k] for k in fr}
    return ReferenceResult(
        result=far,
        uncertainty=unc,
        uncertainty_abs=unc_abs,
        mesh_change=mesh_rel,
        domain_change=dom_rel,
        runs=(coarse, fine, far),
        run_time_s=time.perf_counter() - t0,
    )
