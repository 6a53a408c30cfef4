"""The one entry point of the fast model: design -> result."""

from __future__ import annotations

import functools
import math
import time
from dataclasses import asdict, dataclass, field

import numpy as np
from scipy.constants import g as standard_gravity

from models.circuit import RING, TARGET, CircuitSolution, solve_circuit
from models.design import Design
from models.discretize import Fineness, skin_depth
from models.errors import DesignError
from models.filaments import loop_field, mutual
from models.pull import pull_by_source

__all__ = ["Result", "evaluate", "DEFAULT_FINENESS", "MODEL_VERSION"]

MODEL_VERSION = "multiloop-1"
DEFAULT_FINENESS = Fineness()

#: The range the fast model has been held to the FEM reference on (tests/cross_model.py and
#: tests/data/cross_model.csv). Outside it a result carries a warning.
VALIDATED_RANGE = {
    "frequency_Hz": (50.0, 5000.0),
    "target radius / pole radius": (0.3, 1.5),
    "gap_mm": (0.2, 3.0),
    "target thickness_mm": (0.5, 5.0),
    "pole relative_permeability": (200.0, 5000.0),
}


@dataclass(frozen=True)
class Result:
    """Fast-model result of one design. Rms phasors; SI except where a name says otherwise.

    pull_N : time-averaged axial force on the target, positive toward the face [N]
    pull_by_source_N : its split into "coil", "pole" (magnetised iron) and "ring" [N]
    target_loss_W, ring_loss_W, coil_loss_W : Joule losses [W]
    input_power_W : Re(V conj(I)) at the coil terminals [W]
    coil_current_A, coil_voltage_V : rms magnitudes [A], [V]; supply_VA : |V||I| [VA]
    coil_impedance_ohm : (resistance, reactance) at the terminals [Ohm]
    ring_current_A : rms magnitude of the ring's total current [A]; ring_phase_deg : its phase
        relative to the coil current [deg]
    core_peak_flux_density_T : largest peak |B| found inside the pole [T]
    pole_flux_density_T : peak in time of the section-averaged axial flux density of the pole, the
        largest along its length [T] (the FEM reports the same quantity)
    target_weight_N, lift_ratio : weight of the target [N] and pull / weight [-]
    temperatures_C : temperature of each part used for the resistivities [degC]
    warnings : where the linear model or its discretisation is outside its validated range
    """

    pull_N: float
    pull_by_source_N: dict
    target_loss_W: float
    ring_loss_W: float
    coil_loss_W: float
    input_power_W: float
    coil_current_A: float
    coil_voltage_V: float
    supply_VA: float
    coil_impedance_ohm: tuple
    ring_current_A: float
    ring_phase_deg: float
    core_peak_flux_density_T: float
    pole_flux_density_T: float
    target_weight_N: float
    lift_ratio: float
    temperatures_C: dict
    warnings: list = field(default_factory=list)
    n_cells: int = 0
    n_panels: int = 0
    run_time_s: float = 0.0
    model: str = MODEL_VERSION

    def to_dict(self) -> dict:
        """Plain JSON-ready dict of every field."""
        d = asdict(self)
        d["coil_impedance_ohm"] = list(self.coil_impedance_ohm)
        return d


def _panel_size(design: Design, fineness: Fineness) -> float:
    """Iron panel size at the face [m]: a fraction of the smallest feature near it."""
    features = [design.pole.radius, 2.0 * design.target.gap, design.target.radius]
    if design.ring is not None:
        features += [design.ring.width, design.ring.depth, design.ring.inner_radius]
    return fineness.panel_size * min(features)


def pole_model_for(design: Design, fineness: Fineness):
    """The magnetised-pole model of ``design`` (None if the pole is not magnetic).

    The model depends only on the pole's radius, length and permeability, the groove (ring
    radii and depth) and the panel size, not on frequency, drive, coil or target material: the
    last few built are kept (``_cached_pole_model``, keyed by those exact floats) so that sweeps
    and studies over the others reuse it. The same object is returned for equal keys; treat it
    as read-only.
    """
    if design.pole.relative_permeability <= 1.0:
        return None
    p, g = design.pole, design.ring
    groove = None if g is None else (g.inner_radius, g.outer_radius, g.depth)
    return _cached_pole_model(
        float(p.radius),
        float(p.length),
        float(p.relative_permeability),
        None if groove is None else tuple(float(x) for x in groove),
        float(_panel_size(design, fineness)),
    )


@functools.lru_cache(maxsize=8)
def _cached_pole_model(radius, length, relative_permeability, groove, panel_size):
    """MagnetisedPole of a pole (radius, length [m], mu_r) with the groove (inner radius, outer
    radius, depth [m]) or None, meshed with ``panel_size`` [m]. build_panels reads only these
    fields of the pole and the ring, so they stand in for the design's dataclasses here."""
    from types import SimpleNamespace

    from models.pole import MagnetisedPole, build_panels

    pole = SimpleNamespace(radius=radius, length=length)
    ring = None
    if groove is not None:
        ring = SimpleNamespace(inner_radius=groove[0], outer_radius=groove[1], depth=groove[2])
    model = MagnetisedPole(build_panels(pole, ring, panel_size=panel_size), relative_permeability)
    # Shared between callers: lock the arrays so that an accidental in-place change fails loudly.
    for a in (*vars(model.panels).values(), model.matrix, *model._lu):
        if isinstance(a, np.ndarray):
            a.setflags(write=False)
    return model


def clear_pole_cache():
    """Forget the kept pole models (``pole_model_for``), e.g. to time a cold evaluation."""
    _cached_pole_model.cache_clear()


def _core_peak_flux_density(design: Design, sol: CircuitSolution) -> float:
    """Largest peak |B| [T] on a grid of points inside the pole, away from its surface.

    For rms phasors (B_r, B_z) the peak over a period of |B(t)| is
    sqrt(|B_r|^2 + |B_z|^2 + |B_r^2 + B_z^2|) (the major axis of the field ellipse times sqrt 2).
    """
    if sol.panels is None:
        return 0.0
    from models.pole import panel_field

    p = design.pole
    margin = 0.08 * p.radius
    r = np.linspace(0.0, p.radius - margin, 6)
    z = np.linspace(-p.length + margin, -margin, 11)
    R, Z = (a.ravel() for a in np.meshgrid(r, z, indexing="ij"))
    if design.ring is not None:
        g = design.ring
        inside = (
            (R > g.inner_radius - margin) & (R < g.outer_radius + margin) & (Z > -g.depth - margin)
        )
        R, Z = R[~inside], Z[~inside]
    c = sol.cells
    br_c, bz_c = loop_field(c.rc[None, :], c.zc[None, :], R[:, None], Z[:, None])
    br = br_c @ sol.cell_current
    bz = bz_c @ sol.cell_current
    br_p, bz_p = panel_field(sol.panels, R, Z)
    br = br + br_p @ sol.panel_current
    bz = bz + bz_p @ sol.panel_current
    peak = np.sqrt(np.abs(br) ** 2 + np.abs(bz) ** 2 + np.abs(br * br + bz * bz))
    return float(peak.max())


def _pole_flux_density(design: Design, sol: CircuitSolution) -> float:
    """Peak section-averaged flux density of the pole [T]: sqrt 2 |Phi(z)| / (pi R_p^2), the flux
    Phi through the pole's cross-section at height z from every loop (cells at 2 x 2 Gauss nodes,
    panels by models.pole.panel_mutual), largest over 11 heights."""
    if sol.panels is None:
        return 0.0
    from models.circuit import _gauss_nodes
    from models.pole import panel_mutual

    p = design.pole
    z = np.linspace(-p.length, 0.0, 11)[1:-1]
    r = np.full_like(z, p.radius)
    c = sol.cells
    gr, gz = _gauss_nodes(c, np.arange(c.n))
    m = mutual(gr[None, :, :], gz[None, :, :], r[:, None, None], z[:, None, None]).mean(axis=2)
    flux = m @ sol.cell_current + panel_mutual(sol.panels, r, z) @ sol.panel_current
    return float(np.sqrt(2.0) * np.abs(flux).max() / (np.pi * p.radius**2))


def _range_warnings(design: Design, sol: CircuitSolution, fineness: Fineness, b_peak: float):
    out = []
    bsat = design.pole.saturation_flux_density
    if bsat is not None and b_peak > bsat:
        out.append(
            f"core peak flux density {b_peak:.3g} T exceeds the steel's linear limit {bsat:.3g} T: "
            "saturation makes the linear model optimistic"
        )
    f = design.drive.frequency
    values = {
        "frequency_Hz": f,
        "target radius / pole radius": design.target.radius / design.pole.radius,
        "gap_mm": design.target.gap * 1e3,
        "target thickness_mm": design.target.thickness * 1e3,
        "pole relative_permeability": design.pole.relative_permeability,
    }
    for key, value in values.items():
        lo, hi = VALIDATED_RANGE[key]
        if not lo * (1 - 1e-9) <= value <= hi * (1 + 1e-9):
            out.append(
                f"{key} = {value:.4g} is outside the range checked against the FEM "
                f"({lo:g} to {hi:g}): confirm with 'eddypull verify'"
            )
    p = design.pole
    if p.lamination_thickness is not None and p.sheet_conductivity:
        delta_sheet = skin_depth(f, p.sheet_conductivity, p.relative_permeability)
        if delta_sheet < 0.5 * p.lamination_thickness:
            out.append(
                f"skin depth in the {p.lamination_thickness * 1e3:.3g} mm sheets is "
                f"{delta_sheet * 1e3:.3g} mm at {f:g} Hz, under half the sheet thickness: the "
                "pole has eddy losses and a lower effective permeability than modelled"
            )
    for name, part, label in (("target", design.target, TARGET), ("ring", design.ring, RING)):
        if part is None:
            continue
        delta = skin_depth(f, part.conductivity)
        cells = sol.cells
        sel = cells.part == label
        finest = min(cells.dr[sel].min(), cells.dz[sel].min())
        if finest > 1.01 * fineness.surface_cell * delta and finest > 0:
            out.append(
                f"{name} skin depth {delta * 1e3:.3g} mm is finer than its cells "
                f"({finest * 1e3:.3g} mm): raise the cell limit for a converged answer"
            )
    return out


def evaluate(
    design: Design, isothermal: bool = True, fineness: Fineness | None = None, pole_model=None
) -> Result:
    """Evaluate one design with the fast multi-loop model.

    Parameters
    ----------
    design : models.design.Design
        A validated design (``load_design``).
    isothermal : bool
        Evaluate every part at 20 degC. (No thermal model is coupled yet, so False gives the same.)
    fineness : Fineness, optional
        Discretisation; DEFAULT_FINENESS converges the pull to about 1 %.
    pole_model : optional
        A prebuilt magnetised-pole model (reuse across designs that share the pole geometry).

    Returns
    -------
    Result

    Raises
    ------
    DesignError
        For a conductive (solid) pole: the fast model covers laminated poles only.
    """
    t_start = time.perf_counter()
    fineness = fineness or DEFAULT_FINENESS
    if not design.pole.laminated:
        raise DesignError(
            f"pole.conductivity_S_per_m = {design.pole.conductivity:.4g}: the fast model covers "
            "laminated poles only (0); check a solid pole with 'eddypull verify'"
        )
    if pole_model is None:
        pole_model = pole_model_for(design, fineness)
    temps = {"coil": 20.0, "ring": 20.0, "target": 20.0}
    sol = solve_circuit(design, fineness, pole_model, temps)
    split = pull_by_source(sol)
    pull = sum(split.values())

    cells = sol.cells
    loss = np.abs(sol.cell_current) ** 2 * sol.cell_resistance
    target_loss = float(loss[cells.part == TARGET].sum())
    ring_loss = float(loss[cells.part == RING].sum())
    coil_loss = abs(sol.coil_current) ** 2 * sol.coil_resistance
    z_coil = sol.coil_voltage / sol.coil_current
    ring_current = complex(sol.cell_current[cells.part == RING].sum())
    ring_phase = (
        math.degrees(np.angle(ring_current / sol.coil_current)) if design.ring is not None else 0.0
    )
    b_peak = _core_peak_flux_density(design, sol)
    weight = design.target.density * design.target.volume * standard_gravity
    return Result(
        pull_N=pull,
        pull_by_source_N=split,
        target_loss_W=target_loss,
        ring_loss_W=ring_loss,
        coil_loss_W=float(coil_loss),
        input_power_W=float(np.real(sol.coil_voltage * np.conj(sol.coil_current))),
        coil_current_A=abs(sol.coil_current),
        coil_voltage_V=abs(sol.coil_voltage),
        supply_VA=abs(sol.coil_voltage) * abs(sol.coil_current),
        coil_impedance_ohm=(float(z_coil.real), float(z_coil.imag)),
        ring_current_A=abs(ring_current),
        ring_phase_deg=ring_phase,
        core_peak_flux_density_T=b_peak,
        pole_flux_density_T=_pole_flux_density(design, sol),
        target_weight_N=weight,
        lift_ratio=pull / weight,
        temperatures_C=temps,
        warnings=_range_warnings(design, sol, fineness, b_peak),
        n_cells=int(cells.n),
        n_panels=0 if sol.panels is None else int(sol.panels.n),
        run_time_s=time.perf_counter() - t_start,
    )
