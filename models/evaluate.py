"""The one entry point of the fast model: design -> result."""

from __future__ import annotations

import functools
import math
import time
from dataclasses import asdict, dataclass, field

import numpy as np
from scipy.constants import g as standard_gravity

from models.design import Design
from models.errors import DesignError
from models.fast.circuit import RING, TARGET, CircuitSolution, assemble_circuit, solve_system
from models.fast.discretize import Fineness, skin_depth
from models.fast.filaments import loop_field, mutual
from models.fast.pull import pull_by_source
from models.materials import MATERIALS
from models.thermal.coupling import solve_coupled
from models.thermal.limits import hold_temperature, time_to_limits
from models.thermal.network import build_network

__all__ = ["Result", "evaluate", "DEFAULT_FINENESS", "MODEL_VERSION"]

MODEL_VERSION = "multiloop-1"
DEFAULT_FINENESS = Fineness()

#: The range the fast model has been held to the FEM reference on (tests/cross_model.py and
#: tests/data/cross_model.csv). Outside it a result carries a warning.
VALIDATED_RANGE = {
    "frequency_Hz": (50.0, 5000.0),
    "target radius / pole radius": (0.3, 1.5),
    "gap_mm": (0.2, 3.0),
    "gap / pole radius": (0.02, 0.3),
    "target thickness_mm": (0.5, 5.0),
    "pole relative_permeability": (200.0, 5000.0),
}

#: Flux density above which a steel of unknown grade is taken to leave its linear range [T]:
#: silicon electrical steels reach their knee at about 1.3-1.6 T (from memory; the library's
#: M400 grade uses 1.5 T, models/materials.py).
TYPICAL_SATURATION_T = 1.5


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
    temperatures_C : node temperatures of the thermal network [degC]: "coil" (its hot spot),
        "coil_mean" (its mean, which sets its resistance), "core", "face", "ring" (with a ring),
        "target" (steady state), "target_hold" (after the hold), "ambient"
    warnings : where the linear model or its discretisation is outside its validated range, and
        a thermal runaway

    Thermal fields (models.thermal.network; steady state at the duty-averaged losses, degC):
    coil_temperature_C : the winding's hot spot (what its insulation class limits);
    core_temperature_C, ring_temperature_C (the face's without a ring), target_temperature_C;
    target_hold_temperature_C : a part held for thermal.hold_time_s, arriving at ambient;
    coil_temperature_limit_C : the insulation class temperature (IEC 60085);
    thermal_status : "isothermal" (resistivities at 20 degC; the temperatures are the network's
        response to those losses, without feedback), "converged" or "runaway: <why>" (then every
        temperature is inf and every temperature margin -inf);
    margins : limit name -> margin in the limit's unit, positive = satisfied:
        "coil_temperature_C", "ring_temperature_C" and "target_hold_temperature_C" (when
        [thermal] sets ring_limit_C, target_limit_C), "core_flux_density_T" (saturation minus
        peak), "supply_voltage_V", "supply_current_A", "supply_VA" (with [supply]);
    binding_limit : the margin smallest relative to its limit (a temperature's relative to the
        allowed rise above ambient), "" if none;
    time_to_limit_s : part -> seconds from cold to its limit run continuously (inf: never);
        the coil's limit is its class, the ring's and target's the user's or their material's;
    thermal_time_constants_s : of the network, shortest first [s];
    power_factor : input_power_W / supply_VA; pole_mass_kg : the pole's steel, groove removed;
    core_flux_fraction : core_peak_flux_density_T / the steel's saturation flux density (0 if
        unknown)
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
    coil_temperature_C: float = 20.0
    core_temperature_C: float = 20.0
    ring_temperature_C: float = 20.0
    target_temperature_C: float = 20.0
    target_hold_temperature_C: float = 20.0
    coil_temperature_limit_C: float = 130.0
    power_factor: float = 0.0
    pole_mass_kg: float = 0.0
    core_flux_fraction: float = 0.0
    thermal_status: str = "isothermal"
    margins: dict = field(default_factory=dict)
    binding_limit: str = ""
    time_to_limit_s: dict = field(default_factory=dict)
    thermal_time_constants_s: list = field(default_factory=list)

    def to_dict(self) -> dict:
        """Plain JSON-ready dict of every field."""
        d = asdict(self)
        d["coil_impedance_ohm"] = list(self.coil_impedance_ohm)
        d["thermal_time_constants_s"] = list(self.thermal_time_constants_s)
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

    from models.fast.pole import MagnetisedPole, build_panels

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
    from models.fast.pole import panel_field

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
        if R.size == 0:  # a groove that leaves only thin walls: the mid-lines of post and wall
            R, Z = (
                a.ravel()
                for a in np.meshgrid([0.5 * g.inner_radius, 0.5 * (g.outer_radius + p.radius)], z)
            )
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
    panels by models.fast.pole.panel_mutual), largest over 11 heights."""
    if sol.panels is None:
        return 0.0
    from models.fast.circuit import _gauss_nodes
    from models.fast.pole import panel_mutual

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
    elif bsat is None and b_peak > TYPICAL_SATURATION_T:
        out.append(
            f"core peak flux density {b_peak:.3g} T is above {TYPICAL_SATURATION_T:g} T, where "
            "electrical steels saturate, and pole.saturation_flux_density_T is not given: the "
            "linear model may be optimistic"
        )
    f = design.drive.frequency
    values = {
        "frequency_Hz": f,
        "target radius / pole radius": design.target.radius / design.pole.radius,
        "gap_mm": design.target.gap * 1e3,
        "gap / pole radius": design.target.gap / design.pole.radius,
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


def _part_losses(sol: CircuitSolution) -> dict:
    """Joule losses [W] of coil, ring and target of one solution (rms: |I|^2 R)."""
    loss = np.abs(sol.cell_current) ** 2 * sol.cell_resistance
    part = sol.cells.part
    return {
        "coil": float(abs(sol.coil_current) ** 2 * sol.coil_resistance),
        "ring": float(loss[part == RING].sum()),
        "target": float(loss[part == TARGET].sum()),
    }


def pole_mass(design: Design) -> float:
    """Mass of the pole's steel with the ring's groove removed [kg]."""
    p, g = design.pole, design.ring
    volume = np.pi * p.radius**2 * p.length
    if g is not None:
        volume -= np.pi * (g.outer_radius**2 - g.inner_radius**2) * g.depth
    steel = MATERIALS.get(p.material or "", MATERIALS["electrical-steel-m400"])
    return float(volume * steel.density)


#: Core flux density above this fraction of saturation warns (common practice, no source: the
#: B-H curve of electrical steel bends well before its nominal knee).
FLUX_WARNING_FRACTION = 0.9
#: A swing of a part's temperature over one on-off period above this warns [K] (common practice,
#: no source: a few K is within the lumped model's own accuracy).
SWING_WARNING_K = 2.0


def _limits(design: Design, state, result: dict):
    """Margins, binding limit, time to limits and their warnings (see Result)."""
    th = design.thermal
    ta = th.ambient_C
    net = state.network
    margins, scale = {}, {}

    def add(name, margin, size):
        margins[name] = float(margin)
        scale[name] = float(size)

    add("coil_temperature_C", th.coil_class_C - result["coil_temperature_C"], th.coil_class_C - ta)
    if th.ring_limit_C is not None and design.ring is not None:
        add(
            "ring_temperature_C",
            th.ring_limit_C - result["ring_temperature_C"],
            th.ring_limit_C - ta,
        )
    if th.target_limit_C is not None:
        add(
            "target_hold_temperature_C",
            th.target_limit_C - result["target_hold_temperature_C"],
            th.target_limit_C - ta,
        )
    bsat = design.pole.saturation_flux_density
    if bsat:
        add("core_flux_density_T", bsat - result["core_peak_flux_density_T"], bsat)
    sup = design.supply
    if sup is not None:
        for name, limit, value in (
            ("supply_voltage_V", sup.max_voltage, result["coil_voltage_V"]),
            ("supply_current_A", sup.max_current, result["coil_current_A"]),
            ("supply_VA", sup.max_apparent_power, result["supply_VA"]),
        ):
            if limit is not None:
                add(name, limit - value, limit)
    relative = {k: margins[k] / scale[k] for k in margins}
    binding = min(relative, key=relative.get) if relative else ""

    limits = {"coil": th.coil_class_C}
    if design.ring is not None:
        ring_limit = th.ring_limit_C
        limits["ring"] = ring_limit if ring_limit is not None else net.ceiling_C[net.index("ring")]
    limits["target"] = (
        th.target_limit_C if th.target_limit_C is not None else net.ceiling_C[net.index("target")]
    )
    times, taus = time_to_limits(state, limits)
    return margins, binding, times, taus


def _thermal_warnings(design: Design, state, result: dict, hold_tau: float) -> list:
    th = design.thermal
    out = []
    if state.status.startswith("runaway"):
        out.append(f"thermal {state.status}")
    if hold_tau < 0:
        out.append(
            "the held part heats faster than it can lose heat (its losses grow with its "
            "temperature): it runs away if held long enough"
        )
    frac = result["core_flux_fraction"]
    if FLUX_WARNING_FRACTION < frac <= 1.0:
        out.append(
            f"core peak flux density is {frac:.0%} of the steel's saturation flux density: "
            "close to the end of the linear model's validity"
        )
    elif frac > 1.0:
        out.append(
            "past saturation the fast model's answer is not valid (it is linear): reduce the "
            "ampere-turns or enlarge the pole"
        )
    if th.period is not None and th.duty_cycle < 1.0 and np.all(np.isfinite(state.T)):
        # First harmonic of the on-off losses, P_on (2 / pi) sin(pi D) (Fourier series of a
        # rectangular pulse train), through the network at omega = 2 pi / period: the swing of
        # each part about its duty average.
        net = state.network
        A, _ = net.matrix(state.T)
        p1 = state.losses_on * (2.0 / np.pi) * np.sin(np.pi * th.duty_cycle)
        swing = np.abs(np.linalg.solve(A + 2j * np.pi / th.period * np.diag(net.capacity), p1))
        for name in ("coil", "ring", "target"):
            if name in net.nodes and swing[net.index(name)] > SWING_WARNING_K:
                out.append(
                    f"thermal.period_s = {th.period:g} s: the {name}'s temperature swings about "
                    f"+-{swing[net.index(name)]:.2g} K around its duty average each period"
                )
    sup = design.supply
    if sup is not None:
        for limit, key, value, unit in (
            (sup.max_voltage, "max_voltage_V", result["coil_voltage_V"], "V rms"),
            (sup.max_current, "max_current_A", result["coil_current_A"], "A rms"),
            (sup.max_apparent_power, "max_VA", result["supply_VA"], "VA"),
        ):
            if limit is not None and value > limit:
                out.append(f"the coil needs {value:.4g} {unit}, above supply.{key} = {limit:g}")
    out.extend(f"thermal: {n}" for n in state.network.notes)
    return out


def evaluate(
    design: Design, isothermal: bool = False, fineness: Fineness | None = None, pole_model=None
) -> Result:
    """Evaluate one design with the fast multi-loop model and its thermal network.

    Parameters
    ----------
    design : models.design.Design
        A validated design (``load_design``).
    isothermal : bool
        True: every part's resistivity at 20 degC (no electro-thermal coupling); the temperatures
        reported are then the network's response to the 20 degC losses. False (default): losses
        and temperatures iterated to agree (models.thermal.network.solve_coupled), resistivities
        rho_20 (1 + alpha (T - 20 degC)). A design without [thermal] uses
        models.design.Thermal's defaults (25 degC ambient, natural convection, continuous duty).
    fineness : Fineness, optional
        Discretisation; DEFAULT_FINENESS converges the pull to about 1 %.
    pole_model : optional
        A prebuilt magnetised-pole model (reuse across designs that share the pole geometry).

    Returns
    -------
    Result
        A thermal runaway is a result (``thermal_status`` "runaway: ...", inf temperatures,
        a warning), never an exception.

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
    system = assemble_circuit(design, fineness, pole_model)
    network = build_network(design)

    def losses_at(temps):
        sol = solve_system(system, temps)
        return _part_losses(sol), sol

    coil_sensitivity = None
    if design.drive.current is not None:  # P = I^2 R(T) exactly
        a = design.coil.temperature_coefficient
        coil_sensitivity = lambda t: a / (1.0 + a * (t - 20.0))  # noqa: E731
    state = solve_coupled(
        network, losses_at, coupled=not isothermal, coil_sensitivity=coil_sensitivity
    )
    sol = state.solution
    split = pull_by_source(sol)
    pull = sum(split.values())

    cells = sol.cells
    losses = _part_losses(sol)
    z_coil = sol.coil_voltage / sol.coil_current
    ring_current = complex(sol.cell_current[cells.part == RING].sum())
    ring_phase = (
        math.degrees(np.angle(ring_current / sol.coil_current)) if design.ring is not None else 0.0
    )
    b_peak = _core_peak_flux_density(design, sol)
    weight = design.target.density * design.target.volume * standard_gravity
    input_power = float(np.real(sol.coil_voltage * np.conj(sol.coil_current)))
    va = abs(sol.coil_voltage) * abs(sol.coil_current)
    bsat = design.pole.saturation_flux_density

    t_hold, _, hold_tau = hold_temperature(state, design.thermal.hold_time)
    temps = {
        "coil": state.coil_hot_spot_C,
        "coil_mean": state.temperature("coil"),
        "core": state.temperature("core"),
        "face": state.temperature("face"),
    }
    if design.ring is not None:
        temps["ring"] = state.temperature("ring")
    temps["target"] = state.temperature("target")
    temps["target_hold"] = t_hold
    temps["ambient"] = design.thermal.ambient_C
    values = {
        "coil_temperature_C": temps["coil"],
        "core_temperature_C": temps["core"],
        "ring_temperature_C": temps.get("ring", temps["face"]),
        "target_temperature_C": temps["target"],
        "target_hold_temperature_C": t_hold,
        "coil_temperature_limit_C": design.thermal.coil_class_C,
        "power_factor": input_power / va if va > 0 else 0.0,
        "pole_mass_kg": pole_mass(design),
        "core_flux_fraction": b_peak / bsat if bsat else 0.0,
        "core_peak_flux_density_T": b_peak,
        "coil_voltage_V": abs(sol.coil_voltage),
        "coil_current_A": abs(sol.coil_current),
        "supply_VA": va,
    }
    margins, binding, times, taus = _limits(design, state, values)
    warnings = _range_warnings(design, sol, fineness, b_peak)
    warnings += _thermal_warnings(design, state, values, hold_tau)
    for k in ("core_peak_flux_density_T", "coil_voltage_V", "coil_current_A", "supply_VA"):
        values.pop(k)
    return Result(
        pull_N=pull,
        pull_by_source_N=split,
        target_loss_W=losses["target"],
        ring_loss_W=losses["ring"],
        coil_loss_W=losses["coil"],
        input_power_W=input_power,
        coil_current_A=abs(sol.coil_current),
        coil_voltage_V=abs(sol.coil_voltage),
        supply_VA=va,
        coil_impedance_ohm=(float(z_coil.real), float(z_coil.imag)),
        ring_current_A=abs(ring_current),
        ring_phase_deg=ring_phase,
        core_peak_flux_density_T=b_peak,
        pole_flux_density_T=_pole_flux_density(design, sol),
        target_weight_N=weight,
        lift_ratio=pull / weight,
        temperatures_C=temps,
        warnings=warnings,
        n_cells=int(cells.n),
        n_panels=0 if sol.panels is None else int(sol.panels.n),
        run_time_s=time.perf_counter() - t_start,
        thermal_status=state.status,
        margins=margins,
        binding_limit=binding,
        time_to_limit_s=times,
        thermal_time_constants_s=[float(x) for x in taus],
        **values,
    )
