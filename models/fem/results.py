"""Results of the FEM reference: the field solution of a set of regions and the results of a design.

`FieldSolution` is what `models.fem.solve.solve_regions` returns (per-role losses, currents, forces,
peak flux densities, coil impedance and, on request, the field at the quadrature points as a
`QuadratureField`); `FemResult` is what `models.fem.solve.solve` makes of it for a design, under the
fast model's names (`RESULT_KEYS`) and the FEM's own (`CORE_KEYS`: the pole's core losses and the
direction of its flux). Conventions (DESIGN.md): SI units, rms phasors.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

__all__ = ["RESULT_KEYS", "CORE_KEYS", "QuadratureField", "FieldSolution", "FemResult"]

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

#: Scalar keys of `FemResult.to_dict` that only the FEM gives: the laminated pole's core losses and
#: the share of its face's flux that runs radially (see `FemResult`).
CORE_KEYS = (
    "core_eddy_loss_W",
    "core_hysteresis_loss_W",
    "core_excess_loss_W",
    "core_loss_W",
    "core_radial_flux_fraction",
)


@dataclass(frozen=True)
class QuadratureField:
    """The field at the quadrature points of a solve (SI, rms phasors), shape (elements, points).

    Attributes
    ----------
    owner : numpy.ndarray
        Index of the region of each element (-1 for air), shape (elements,).
    roles : tuple of str
        Role of each region, by index.
    r, z : numpy.ndarray
        Coordinates of the points [m].
    br, bz : numpy.ndarray
        B_r = -dA/dz, B_z = dA/dr + A/r [T rms, complex].
    dv : numpy.ndarray
        Volume weights 2 pi r dA [m^3] of the assembly's quadrature (sums over them are the
        integrals of the weak form, so that energy identities hold to round-off).
    """

    owner: np.ndarray
    roles: tuple
    r: np.ndarray
    z: np.ndarray
    br: np.ndarray
    bz: np.ndarray
    dv: np.ndarray

    def elements_of(self, role: str) -> np.ndarray:
        """Boolean mask of the elements owned by a region of ``role``, shape (elements,)."""
        ks = [k for k, name in enumerate(self.roles) if name == role]
        return np.isin(self.owner, ks)

    def scaled(self, factor: complex) -> QuadratureField:
        """The same field for every source multiplied by ``factor``."""
        return replace(self, br=self.br * factor, bz=self.bz * factor)


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
    magnetic_loss_W : dict
        Per role with a complex permeability (a lossy magnet): omega int Im(nu) |B|^2 dV [W],
        nu = 1 / (mu_0 mu_r), |B|^2 = |B_r|^2 + |B_z|^2 (rms phasors); the power balance is
        Re(V I*) = R |I|^2 + sum of ``loss_W`` + sum of ``magnetic_loss_W``.
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
    basis, potential, quadrature
        With ``keep_field=True``: the scikit-fem basis, the potential A at its dofs [Wb/m rms] and
        the `QuadratureField`; else None.
    """

    frequency: float
    current: complex
    flux_linkage: complex
    coil_resistance: float
    impedance: complex
    voltage: complex
    loss_W: dict
    magnetic_loss_W: dict
    region_current_A: dict
    force_z_N: dict
    flux_density_T: dict
    n_dofs: int
    n_elements: int
    r_nodes: np.ndarray = field(repr=False, compare=False)
    z_nodes: np.ndarray = field(repr=False, compare=False)
    basis: object = field(default=None, repr=False, compare=False)
    potential: np.ndarray = field(default=None, repr=False, compare=False)
    quadrature: QuadratureField | None = field(default=None, repr=False, compare=False)

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
            magnetic_loss_W={k: v * f2 for k, v in self.magnetic_loss_W.items()},
            region_current_A={k: v * factor for k, v in self.region_current_A.items()},
            force_z_N={k: v * f2 for k, v in self.force_z_N.items()},
            flux_density_T={k: v * abs(factor) for k, v in self.flux_density_T.items()},
            potential=None if self.potential is None else self.potential * factor,
            quadrature=None if self.quadrature is None else self.quadrature.scaled(factor),
        )


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
        Losses [W]: eddy losses int |J|^2 / sigma dV (pole: 0 when laminated, its sheets' eddy loss
        is ``core_eddy_loss_W``) and |I|^2 R_coil(20 degC).
    core_eddy_loss_W : float
        Eddy loss in the sheets of a laminated pole [W]: omega int_pole Im(nu) |B|^2 dV with the
        complex reluctivity nu = 1 / (mu_0 mu_eff) of the homogenised stack (0 without sheet data).
    core_hysteresis_loss_W, core_excess_loss_W : float
        Hysteresis and excess losses of the pole [W] from the grade's loss law and the peak flux
        density at each quadrature point (`models.fem.core`; 0 without a loss law).
    coil_current_A : complex
        Coil current [A rms] (drive current, or with a voltage drive the root of V = Z I).
    coil_voltage_V : complex
        Terminal voltage V = Z I [V rms].
    coil_impedance_ohm : complex
        Z = R_coil + j omega Psi / I + R_he [Ohm] at this current: the field's impedance (core eddy
        loss included) plus the series resistance R_he = (hysteresis + excess) / |I|^2 that carries
        the hysteresis and excess losses (`models.core_loss.coil_current_with_core_loss`). The
        input power Re(V I*) is then the sum of every loss of this result.
    ring_current_A : complex
        Total ring current int J dA [A rms] (0 without a ring).
    ring_phase_deg : float
        arg(I_ring / I_coil) [deg] in [-270, 90) (models.result.ring_phase; nan without a ring).
    pole_flux_density_T : float
        Peak in time of the section-averaged axial flux density of the pole, max over the pole's
        length, 2 |A(R_p, z)| sqrt(2) / R_p [T] (saturation check; the local peak at the groove's
        corners is higher and grows under refinement).
    core_radial_flux_fraction : float
        int_slab |B_r|^2 dV / int_pole |B|^2 dV [-], the slab being the pole's steel within
        ``models.fem.core.radial_flux_slab_depth`` of the face (the ring's depth, at least 1 mm): how much
        of the pole's field runs radially in its face, where the flux turns from the axis toward the
        groove and the side. The homogenised permeability (and so ``core_eddy_loss_W``) holds for
        flux along the sheets; in a stack of flat sheets radial flux crosses them over most of the
        circumference, where the stack is less permeable and the eddy currents run in the sheets'
        plane. Im nu being uniform in the pole, the fraction is also the share of
        ``core_eddy_loss_W`` that this radial flux carries: the part of the sheet loss the model
        gets from a field it does not represent well. About 0.007 on the demo design.
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
    core_eddy_loss_W: float
    core_hysteresis_loss_W: float
    core_excess_loss_W: float
    coil_current_A: complex
    coil_voltage_V: complex
    coil_impedance_ohm: complex
    ring_current_A: complex
    ring_phase_deg: float
    pole_flux_density_T: float
    core_radial_flux_fraction: float
    n_dofs: int
    run_time_s: float
    refine: float = 1.0
    far_factor: float = 1.0

    @property
    def core_loss_W(self) -> float:
        """Total core loss of the pole [W]: eddy (sheets) + hysteresis + excess."""
        return self.core_eddy_loss_W + self.core_hysteresis_loss_W + self.core_excess_loss_W

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
            "core_eddy_loss_W": float(self.core_eddy_loss_W),
            "core_hysteresis_loss_W": float(self.core_hysteresis_loss_W),
            "core_excess_loss_W": float(self.core_excess_loss_W),
            "core_loss_W": float(self.core_loss_W),
            "input_power_W": float(np.real(self.coil_voltage_V * np.conj(self.coil_current_A))),
            "coil_current_A": float(abs(self.coil_current_A)),
            "coil_voltage_V": float(abs(self.coil_voltage_V)),
            "coil_impedance_ohm": _complex_pair(self.coil_impedance_ohm),
            "ring_current_A": float(abs(self.ring_current_A)),
            "ring_phase_deg": phase,
            "pole_flux_density_T": float(self.pole_flux_density_T),
            "core_radial_flux_fraction": float(self.core_radial_flux_fraction),
            "coil_current_A_complex": _complex_pair(self.coil_current_A),
            "coil_voltage_V_complex": _complex_pair(self.coil_voltage_V),
            "ring_current_A_complex": _complex_pair(self.ring_current_A),
            "n_dofs": int(self.n_dofs),
            "run_time_s": float(self.run_time_s),
            "refine": float(self.refine),
            "far_factor": float(self.far_factor),
        }
