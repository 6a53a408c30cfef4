"""The one entry point of the fast model: design -> result.

The pipeline: discretise and assemble the circuit (models.fast), solve it together with the
thermal network (models.thermal), take the pull and the losses, check the limits
(models.checks), and return a models.result.Result.
"""

from __future__ import annotations

import dataclasses
import functools
import math
import time
from dataclasses import dataclass

import numpy as np
from scipy.constants import g as standard_gravity

from models.checks import (
    lateral_warnings,
    lift_warnings,
    limits_and_margins,
    range_warnings,
    thermal_assumptions,
    thermal_warnings,
)
from models.core_loss import face_slab_depth
from models.design import Design, with_gap
from models.errors import DesignError
from models.fast.circuit import RING, TARGET, CircuitSolution, assemble_circuit, solve_system
from models.fast.core import radial_flux_fraction
from models.fast.discretize import Fineness
from models.fast.flux import core_peak_flux_density, pole_flux_density
from models.fast.offset import centring_stiffness, offset_forces
from models.fast.pull import pull_by_source
from models.fast.ripple import pull_ripple
from models.fast.uncertainty import COARSE_FACTOR, pull_uncertainty
from models.motion import Lift, PullCurve, lift_in_time, weight_against_pull
from models.result import MODEL_VERSION, Electrical, Result, Thermal, ring_phase
from models.thermal.coupling import solve_coupled
from models.thermal.limits import hold_temperature
from models.thermal.network import build_network, face_slab_thickness

__all__ = [
    "DEFAULT_FINENESS",
    "LIFT_POINTS",
    "MODEL_VERSION",
    "PickState",
    "Result",
    "evaluate",
    "evaluate_pick_gaps",
    "lift_gaps",
    "part_losses",
    "pick_state",
    "pole_model_key",
    "steady_state",
]

DEFAULT_FINENESS = Fineness()

#: Pulls on the lift's pull-against-gap curve by default (models.motion): the pick gap's and the
#: holding gap's, both already solved by an evaluation, so the lift costs no circuit assembly.
#: Each further point costs one (about half an evaluation): ``evaluate(..., lift_points=n)``.
LIFT_POINTS = 2


def _panel_size(design: Design, fineness: Fineness) -> float:
    """Iron panel size at the face [m]: a fraction of the smallest feature near it."""
    features = [design.pole.radius, 2.0 * design.target.gap, design.target.radius]
    if design.ring is not None:
        features += [design.ring.width, design.ring.depth, design.ring.inner_radius]
    return fineness.panel_size * min(features)


def pole_model_for(design: Design, fineness: Fineness):
    """The magnetised-pole model of ``design`` (None if the pole is not magnetic).

    The model depends on the pole's radius and length, the groove (ring radii and depth), the
    panel size and the pole's permeability at the design's frequency (complex for a laminated
    stack with sheet data), not on drive, coil or target material. The panels and their field
    matrix (the costly part, geometry only) are kept for the last few geometries
    (``_cached_pole_geometry``), the factorised model for the last few (geometry,
    permeability) pairs (``_cached_pole_model``), so that sweeps and studies over frequency and
    the rest reuse them. The same object is returned for equal keys; treat it as read-only.
    """
    key = pole_model_key(design, fineness)
    return None if key is None else _cached_pole_model(*key)


def pole_model_key(design: Design, fineness: Fineness | None = None):
    """What the pole model of ``design`` depends on (``pole_model_for``): (pole radius [m], pole
    length [m], relative permeability at the drive frequency (complex for a laminated stack with
    sheet data), groove (ring inner radius, outer radius, depth [m]) or None, panel size [m]);
    None when the pole is not magnetic. Designs with equal keys share one model; callers that
    evaluate many designs can order them by it to reuse the kept ones."""
    if design.pole.relative_permeability <= 1.0:
        return None
    p, g = design.pole, design.ring
    groove = None if g is None else (g.inner_radius, g.outer_radius, g.depth)
    return (
        float(p.radius),
        float(p.length),
        complex(p.effective_permeability(design.drive.frequency)),
        None if groove is None else tuple(float(x) for x in groove),
        float(_panel_size(design, fineness or DEFAULT_FINENESS)),
    )


@functools.lru_cache(maxsize=8)
def _cached_pole_model(radius, length, relative_permeability, groove, panel_size):
    """MagnetisedPole of a pole (radius, length [m], relative permeability, complex or real) with
    the groove (inner radius, outer radius, depth [m]) or None, meshed with ``panel_size`` [m]."""
    geometry = _cached_pole_geometry(radius, length, groove, panel_size)
    mu = relative_permeability.real if relative_permeability.imag == 0.0 else relative_permeability
    model = geometry.with_permeability(mu)
    # Shared between callers: lock the arrays so that an accidental in-place change fails loudly.
    for a in (model.matrix, *model._lu):
        if isinstance(a, np.ndarray):
            a.setflags(write=False)
    return model


@functools.lru_cache(maxsize=8)
def _cached_pole_geometry(radius, length, groove, panel_size):
    """Panels and field matrix of a pole geometry (a MagnetisedPole at mu_r = 2, whose
    ``with_permeability`` gives the model at any permeability). build_panels reads only these
    fields of the pole and the ring, so they stand in for the design's dataclasses here."""
    from types import SimpleNamespace

    from models.fast.pole import MagnetisedPole, build_panels

    pole = SimpleNamespace(radius=radius, length=length)
    ring = None
    if groove is not None:
        ring = SimpleNamespace(inner_radius=groove[0], outer_radius=groove[1], depth=groove[2])
    model = MagnetisedPole(build_panels(pole, ring, panel_size=panel_size), 2.0)
    for a in (*vars(model.panels).values(), model.field_matrix):
        if isinstance(a, np.ndarray):
            a.setflags(write=False)
    return model


def clear_pole_cache():
    """Forget the kept pole models (``pole_model_for``), e.g. to time a cold evaluation."""
    _cached_pole_model.cache_clear()
    _cached_pole_geometry.cache_clear()


def _part_losses(sol: CircuitSolution, face_depth: float | None = None) -> dict:
    """Losses [W] of one solution: Joule losses of coil, ring and target (rms: |I|^2 R) and, with
    iron, the core's losses split between the steel within ``face_depth`` [m] of the face
    ("face") and the rest ("core") where the field puts them (models.fast.core)."""
    loss = np.abs(sol.cell_current) ** 2 * sol.cell_resistance
    part = sol.cells.part
    out = {
        "coil": float(abs(sol.coil_current) ** 2 * sol.coil_resistance),
        "ring": float(loss[part == RING].sum()),
        "target": float(loss[part == TARGET].sum()),
    }
    c = sol.core
    if c is not None and face_depth is not None:
        at = c.eddy * c.eddy_share + c.hysteresis_at + c.excess_at
        face = sol.core_grid.z > -face_depth
        out["face"] = float(at[face].sum())
        out["core"] = float(at[~face].sum())
    return out


def part_losses(solution: CircuitSolution, face_depth_m: float | None = None) -> dict:
    """Losses [W] of one circuit solution, by part.

    Parameters
    ----------
    solution : models.fast.circuit.CircuitSolution
        A solved circuit (``models.fast.circuit.solve_system``); rms phasors.
    face_depth_m : float, optional
        Depth [m] of the face slab: with it, and a pole with core losses, the core's losses
        are split into "face" (steel within that depth of the face) and "core" (the rest).

    Returns
    -------
    dict of str to float
        "coil", "ring", "target" [W] (Joule losses |I|^2 R of rms currents, no factor 1/2), and
        "face", "core" [W] when ``face_depth_m`` is given and the pole has core losses.
    """
    return _part_losses(solution, face_depth_m)


def steady_state(design: Design, system, isothermal: bool = False):
    """The magnet's duty-averaged steady state with the part under the pole.

    Parameters
    ----------
    design : models.design.Design
        The design with its part at the holding gap (``at_hold_gap``).
    system : models.fast.circuit.CircuitSystem
        Its assembled circuit (``models.fast.circuit.assemble_circuit``).
    isothermal : bool
        True: every resistivity at 20 degC (the network's response to those losses).

    Returns
    -------
    models.thermal.coupling.ThermalState
        Temperatures [degC] and losses [W] that agree (``solve_coupled``: rho(T) = rho_20
        (1 + alpha (T - 20 degC)), Newton on the network), or a runaway's last iterate.
    """
    return _steady_state(design, system, isothermal)


def pole_mass(design: Design) -> float:
    """Mass of the pole's steel with the ring's groove removed [kg]."""
    p, g = design.pole, design.ring
    volume = np.pi * p.radius**2 * p.length
    if g is not None:
        volume -= np.pi * (g.outer_radius**2 - g.inner_radius**2) * g.depth
    return float(volume * p.density)


def evaluate(
    design: Design,
    isothermal: bool = False,
    fineness: Fineness | None = None,
    pole_model=None,
    lift_points: int = LIFT_POINTS,
    lateral: bool | None = None,
) -> Result:
    """Evaluate one design with the fast multi-loop model and its thermal network.

    Parameters
    ----------
    design : models.design.Design
        A validated design (``load_design``).
    isothermal : bool
        True: every part's resistivity at 20 degC (no electro-thermal coupling); the temperatures
        reported are then the network's response to the 20 degC losses. False (default): losses
        and temperatures of the fixed parts (coil, ring, core, face) iterated to agree at their
        duty-averaged steady state (models.thermal.coupling.solve_coupled), resistivities
        rho_20 (1 + alpha (T - 20 degC)). A design without [thermal] uses
        models.design.Thermal's defaults (25 degC ambient, natural convection, continuous duty).
    fineness : Fineness, optional
        Discretisation; DEFAULT_FINENESS converges the pull to about 1 %.
    pole_model : optional
        A prebuilt magnetised-pole model (reuse across designs that share the pole geometry).
    lift_points : int
        Pulls on the curve of the lift in time (``pick_time_ms``; ``_with_lift``): 2 (default)
        the pick gap's and the holding gap's, which cost nothing more; each one above 2 one
        circuit assembly and solve at a gap between them (Chebyshev-Lobatto points).
    lateral : bool or None
        The part off the axis (models.fast.offset, ``_with_lateral``): True, the centring
        stiffness and (at ``target.offset_mm``) the pull, lateral force and tilt torque there;
        None (default), these only where the part is offset (the stiffness then too); False,
        none (an offset part is then refused). It costs about one more evaluation.

    Returns
    -------
    Result
        The electrical part is the moment of pick: the fixed parts at their steady state, the
        part as it arrives (``thermal.target_arrival_C``, default the ambient) at the design's
        gap; ``pull_hold_N`` is the pull at the end of the hold, at the holding gap, with the
        part warmed for ``thermal.hold_time_s``. With ``thermal.target_stays`` the part is at its
        steady state in both. A thermal runaway is a result (``thermal_status`` "runaway: ...",
        inf temperatures, a warning), never an exception.

    Raises
    ------
    DesignError
        For a conductive (solid) pole: the fast model covers laminated poles only.

    Examples
    --------
    >>> from models import load_design
    >>> from optim.demo import DEMO_DESIGN
    >>> result = evaluate(load_design(DEMO_DESIGN))
    >>> print(f"pull {result.pull_N * 1e3:.1f} mN, lift ratio {result.lift_ratio:.2f}")
    pull 3.4 mN, lift ratio 1.63
    >>> print(f"{result.input_power_W:.0f} W")
    48 W
    """
    return evaluate_pick_gaps(
        design, (), isothermal, fineness, pole_model, lift_points, lateral=lateral
    )[0]


def evaluate_pick_gaps(
    design: Design,
    gaps_mm=(),
    isothermal: bool = False,
    fineness: Fineness | None = None,
    pole_model=None,
    lift_points: int = LIFT_POINTS,
    lateral: bool | None = None,
    offsets_mm=(),
) -> tuple[Result, list]:
    """``evaluate(design)`` and the pull at arrival [N] at each gap of ``gaps_mm`` [mm].

    A part is picked at any gap of a range while the magnet's fixed parts sit at one steady
    state (that of ``design``, with its part held at the holding gap): each extra gap costs one
    circuit assembly and solve, no thermal solve. A gap equal to the design's reuses its pull.
    With ``offsets_mm`` [mm] each gap's pull is the worst (smallest) over the part at those
    offsets from the axis (models.fast.offset; the sheet model once a gap, no error bar).
    """
    t_start = time.perf_counter()
    fineness = fineness or DEFAULT_FINENESS
    _check_laminated(design)
    if lift_points < 2:
        raise ValueError(f"lift_points = {lift_points}: must be at least 2 (the two ends)")
    if pole_model is None:
        pole_model = pole_model_for(design, fineness)
    pick_system = assemble_circuit(design, fineness, pole_model)
    held_design = at_hold_gap(design)
    held_system = (
        pick_system
        if held_design is design
        else assemble_circuit(held_design, fineness, pole_model_for(held_design, fineness))
    )
    state = _steady_state(held_design, held_system, isothermal)
    solve = _solved_once()

    def loss_at_arrival(temps):
        return _part_losses(solve(held_system, temps))["target"]

    part = pick_state(design, state, isothermal, loss_at_arrival)
    arrival = solve(pick_system, part.arrival)
    hold = solve(held_system, part.hold) if part.hold is not None else None
    electrical = _electrical(design, arrival, hold, state.temperature("core"))
    electrical = _with_error_bar(electrical, design, fineness, part.arrival)
    arrival_held = solve(held_system, part.arrival)  # solved already, except with target_stays
    electrical = _with_ripple(electrical, design, arrival, arrival_held, hold)
    pull_at = _ArrivalPulls(design, fineness, part.arrival, {held_design.target.gap: arrival_held})
    pull_at[design.target.gap] = electrical.pull_N
    electrical, lift = _with_lift(electrical, design, held_design, pull_at, lift_points)
    electrical = _with_lateral(electrical, design, pick_system, arrival, lateral)
    thermal = _thermal(design, state, part, electrical)
    flat = _flat_for_checks(electrical, thermal)
    warnings = [f"design: {note}" for note in design.notes]
    warnings += range_warnings(design, arrival, fineness, electrical)
    warnings += thermal_warnings(design, state, flat, part.hold_time_constant_s)
    warnings += lift_warnings(design, electrical, lift)
    warnings += lateral_warnings(design, electrical)
    result = Result(
        electrical=electrical,
        thermal=thermal,
        warnings=warnings,
        n_cells=int(arrival.cells.n),
        n_panels=0 if arrival.panels is None else int(arrival.panels.n),
        run_time_s=time.perf_counter() - t_start,
    )
    if len(offsets_mm):
        worst = _OffsetPulls(design, fineness, part.arrival, offsets_mm)
        return result, [worst[g * 1e-3] for g in gaps_mm]
    return result, [pull_at[g * 1e-3] for g in gaps_mm]


class _OffsetPulls(dict):
    """The smallest pull at arrival [N] over the part at ``offsets_mm`` [mm] from the axis, by
    gap [m], the magnet at one steady state: each gap one circuit assembly and solve and one
    sheet model (models.fast.offset.offset_forces, no error bar)."""

    def __init__(self, design, fineness, temperatures, offsets_mm):
        super().__init__()
        self._design, self._fineness, self._temps = design, fineness, temperatures
        self._offsets = [float(d) * 1e-3 for d in offsets_mm]

    def __missing__(self, gap):
        at_gap = with_gap(self._design, gap * 1e3)
        system = assemble_circuit(
            at_gap, self._fineness, pole_model_for(at_gap, self._fineness), pull_only=True
        )
        sol = solve_system(system, self._temps)
        split = pull_by_source(sol)
        pull = float(sum(split.values()))
        terms = sum(abs(v) for v in split.values())
        pulls = [pull]
        if any(d != 0.0 for d in self._offsets):
            moved = [d for d in self._offsets if d != 0.0]
            pulls += [o.pull for o in offset_forces(system, sol, moved, pull, terms, error=False)]
        self[gap] = min(pulls)
        return self[gap]


class _ArrivalPulls(dict):
    """The pull at arrival [N] by gap [m], the magnet at one steady state: each gap solved once
    (one circuit assembly and solve, ``pull_only``), the circuits already ``solved`` at those
    temperatures ({gap [m]: CircuitSolution}) taken as they are; gaps within 1e-12 m are one."""

    def __init__(self, design, fineness, temperatures, solved):
        super().__init__()
        self._design, self._fineness, self._temps = design, fineness, temperatures
        for gap, sol in solved.items():
            self[gap] = float(sum(pull_by_source(sol).values()))

    def _key(self, gap):
        return next((k for k in self.keys() if abs(k - gap) <= 1e-12), gap)

    def __setitem__(self, gap, pull):
        super().__setitem__(self._key(gap), pull)

    def __missing__(self, gap):
        key = self._key(gap)
        if key in self.keys():
            return dict.__getitem__(self, key)
        at_gap = with_gap(self._design, key * 1e3)
        system = assemble_circuit(
            at_gap, self._fineness, pole_model_for(at_gap, self._fineness), pull_only=True
        )
        pull = float(sum(pull_by_source(solve_system(system, self._temps)).values()))
        self[key] = pull
        return pull


def _check_laminated(design: Design) -> None:
    """Refuse a conductive (solid) pole: the fast model covers laminated poles only."""
    if not design.pole.laminated:
        raise DesignError(
            f"pole.conductivity_S_per_m = {design.pole.conductivity:.4g}: the fast model covers "
            "laminated poles only (0); check a solid pole with 'eddypull verify'"
        )


def at_hold_gap(design: Design) -> Design:
    """``design`` with its part at the holding gap (``thermal.hold_gap_mm``; ``with_gap``); the
    same object when that is the design's own gap (the default)."""
    gap = design.thermal.hold_gap
    if gap is None or abs(gap - design.target.gap) <= 1e-12:
        return design
    return with_gap(design, gap * 1e3)


def _steady_state(design: Design, system, isothermal: bool):
    """The thermal network's duty-averaged steady state with the electrical model of ``system``
    (the part under the pole at its holding gap, as for a part that stays)."""
    network = build_network(design)

    face_depth = face_slab_thickness(design)

    def losses_at(temps):
        sol = solve_system(system, temps)
        return _part_losses(sol, face_depth), sol

    coil_sensitivity = None
    if design.drive.current is not None:  # P = I^2 R(T) exactly
        a = design.coil.temperature_coefficient
        coil_sensitivity = lambda t: a / (1.0 + a * (t - 20.0))  # noqa: E731
    return solve_coupled(
        network, losses_at, coupled=not isothermal, coil_sensitivity=coil_sensitivity
    )


@dataclass(frozen=True)
class PickState:
    """The part's temperatures in the two states a result reports, and the circuit temperatures
    [degC] of each ("coil" its mean, "ring", "target"; 20 degC everywhere when isothermal).

    target_arrival_C : the part as it arrives; target_hold_C : at the end of the hold
    (inf after a runaway); hold_time_constant_s : of the held part (negative: it runs away);
    arrival, hold : circuit temperatures of the two states (hold None when it has none).
    """

    target_arrival_C: float
    target_hold_C: float
    hold_time_constant_s: float
    arrival: dict
    hold: dict | None


def _solved_once():
    """``solve_system`` that solves each (system, temperatures) once: at the design's own gap
    the part's loss at arrival, the arrival itself and (isothermal) the hold are one solve."""
    seen = {}

    def solve(system, temps):
        key = (id(system), tuple(sorted(temps.items())))
        if key not in seen:
            seen[key] = solve_system(system, temps)
        return seen[key]

    return solve


def pick_state(design: Design, state, isothermal: bool, loss_at_arrival=None) -> PickState:
    """The moment of pick and the end of the hold: the fixed parts (coil, ring) at the steady
    state of ``state``, the part arriving at ``thermal.target_arrival_C`` (default the ambient)
    and warmed for ``thermal.hold_time_s`` from there; with ``thermal.target_stays``, the part
    at its steady state in both. ``loss_at_arrival(temperatures)`` (the part's loss [W] in the
    circuit at the holding gap) gives the loss the warming starts from (models.thermal.limits)."""
    th = design.thermal
    net = state.network
    T = state.T if np.all(np.isfinite(state.T)) else state.T_last  # a runaway: its last iterate
    fixed = {"coil": 20.0, "ring": 20.0}
    if not isothermal:
        fixed = {"coil": float(T[net.index("coil")])}
        if "ring" in net.nodes:
            fixed["ring"] = float(T[net.index("ring")])
    if th.target_stays:
        t_arrival = t_hold = state.temperature("target")
        circuit_target = float(T[net.index("target")])
        _, _, tau = hold_temperature(state, th.hold_time, initial_C=circuit_target)
    else:
        t_arrival = th.ambient_C if th.target_arrival_C is None else th.target_arrival_C
        circuit_target = t_arrival
        initial_loss = None
        if loss_at_arrival is not None and not isothermal:
            initial_loss = loss_at_arrival({**fixed, "target": t_arrival})
        t_hold, _, tau = hold_temperature(
            state, th.hold_time, initial_C=t_arrival, initial_loss_W=initial_loss
        )
    if isothermal:
        arrival = {**fixed, "target": 20.0}
        hold = dict(arrival) if math.isfinite(t_hold) else None
    else:
        arrival = {**fixed, "target": circuit_target}
        hold = {**fixed, "target": t_hold} if math.isfinite(t_hold) else None
    return PickState(
        target_arrival_C=float(t_arrival),
        target_hold_C=float(t_hold),
        hold_time_constant_s=float(tau),
        arrival=arrival,
        hold=hold,
    )


def _electrical(
    design: Design, sol: CircuitSolution, hold: CircuitSolution | None, core_C: float
) -> Electrical:
    """Pull, losses, terminal quantities and flux densities of the solution at the moment of
    pick (``sol``), and the pull of the solution at the end of the hold (``hold``, None: nan);
    the steel's saturation at its temperature ``core_C`` [degC]."""
    split = pull_by_source(sol)
    pull = sum(split.values())
    losses = _part_losses(sol)
    z_coil = sol.coil_voltage / sol.coil_current
    ring_current = complex(sol.cell_current[sol.cells.part == RING].sum())
    phase = ring_phase(ring_current, sol.coil_current) if design.ring is not None else 0.0
    pull_hold = math.nan if hold is None else float(sum(pull_by_source(hold).values()))
    b_peak = core_peak_flux_density(design, sol)
    weight = design.target.density * design.target.volume * standard_gravity
    input_power = float(np.real(sol.coil_voltage * np.conj(sol.coil_current)))
    va = abs(sol.coil_voltage) * abs(sol.coil_current)
    bsat = design.pole.saturation_at(core_C if math.isfinite(core_C) else 20.0)
    core = sol.core
    return Electrical(
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
        ring_phase_deg=phase,
        core_peak_flux_density_T=b_peak,
        pole_flux_density_T=pole_flux_density(design, sol),
        target_weight_N=weight,
        lift_ratio=pull / weight,
        pull_hold_N=pull_hold,
        lift_ratio_hold=pull_hold / weight,
        pull_cancellation=pull_cancellation(split),
        pull_uncertainty_N=math.nan,
        pull_uncertainty_relative=math.nan,
        power_factor=input_power / va if va > 0 else 0.0,
        pole_mass_kg=pole_mass(design),
        core_flux_fraction=b_peak / bsat if bsat else 0.0,
        core_saturation_T=bsat if bsat else math.nan,
        core_loss_W=0.0 if core is None else core.total,
        core_eddy_loss_W=0.0 if core is None else core.eddy,
        core_hysteresis_loss_W=0.0 if core is None else core.hysteresis,
        core_excess_loss_W=0.0 if core is None else core.excess,
        core_radial_flux_fraction=(
            0.0
            if sol.core_grid is None
            else radial_flux_fraction(sol.core_grid, sol.cell_current, face_slab_depth(design))
        ),
        pull_ripple_N=math.nan,
        hold_chatter_margin_N=math.nan,
        pick_time_ms=math.nan,
        contact_speed_m_per_s=math.nan,
        pull_centred_N=pull,  # a centred part; _with_lateral moves it
        lateral_force_N=0.0,
        lateral_force_uncertainty_N=0.0,
        tilt_torque_N_m=0.0,
        tilt_torque_uncertainty_N_m=0.0,
        centring_stiffness_N_per_m=math.nan,
        centring_stiffness_uncertainty_N_per_m=math.nan,
    )


def _with_error_bar(electrical: Electrical, design: Design, fineness, temperatures) -> Electrical:
    """``electrical`` with the pull's error estimate (models.fast.uncertainty): the pull again
    with coarser cells and the same pole model, in the same state (one circuit assembly and
    solve, no thermal solve, no new pole geometry)."""
    coarse = dataclasses.replace(fineness.scaled(COARSE_FACTOR), panel_size=fineness.panel_size)
    system = assemble_circuit(design, coarse, pole_model_for(design, coarse), pull_only=True)
    pull_coarse = float(sum(pull_by_source(solve_system(system, temperatures)).values()))
    u = pull_uncertainty(electrical.pull_N, pull_coarse, electrical.pull_by_source_N)
    pull = abs(electrical.pull_N)
    return dataclasses.replace(
        electrical,
        pull_uncertainty_N=u,
        pull_uncertainty_relative=u / pull if pull > 0 else math.inf,
    )


def _with_ripple(electrical: Electrical, design: Design, arrival, arrival_held, hold):
    """``electrical`` with the pull's ripple at twice the drive frequency at the pick
    (``pull_ripple_N``, models.fast.ripple) and the held part's chatter margin
    (``hold_chatter_margin_N``): mean pull minus ripple minus the weight's component against the
    pull (models.motion.weight_against_pull), at the holding gap, the worse of the part as it
    arrives (``arrival_held``) and at the end of the hold (``hold``; None after a runaway: nan)."""
    against = weight_against_pull(electrical.target_weight_N, design.thermal.orientation)
    margins = [
        float(sum(pull_by_source(sol).values())) - pull_ripple(sol) - against
        for sol in (arrival_held, hold)
        if sol is not None
    ]
    return dataclasses.replace(
        electrical,
        pull_ripple_N=pull_ripple(arrival),
        hold_chatter_margin_N=min(margins) if hold is not None else math.nan,
    )


def _with_lateral(electrical: Electrical, design: Design, system, sol, lateral) -> Electrical:
    """``electrical`` with the part off the axis (models.fast.offset) where asked (``evaluate``'s
    ``lateral``): the centring stiffness, and at ``target.offset_mm`` the pull (``pull_N``,
    ``lift_ratio``; the centred one kept as ``pull_centred_N``, error bars in quadrature),
    lateral force and tilt torque; a centred part has no lateral force or torque (symmetry)."""
    offset = design.target.offset
    out = electrical
    if lateral is False:
        if offset != 0.0:
            raise ValueError("lateral = False with an offset part: its pull needs the sheet model")
        return out
    if lateral is None and offset == 0.0:
        return out
    pull = electrical.pull_N
    terms = sum(abs(v) for v in electrical.pull_by_source_N.values())
    k, uk = centring_stiffness(system, sol, pull, terms)
    out = dataclasses.replace(
        out, centring_stiffness_N_per_m=k, centring_stiffness_uncertainty_N_per_m=uk
    )
    if offset == 0.0:
        return out
    (at,) = offset_forces(system, sol, [offset], pull, terms)
    u = math.hypot(electrical.pull_uncertainty_N, at.pull_uncertainty)
    return dataclasses.replace(
        out,
        pull_N=at.pull,
        lift_ratio=at.pull / electrical.target_weight_N,
        pull_uncertainty_N=u,
        pull_uncertainty_relative=u / abs(at.pull) if at.pull != 0 else math.inf,
        lateral_force_N=at.lateral,
        lateral_force_uncertainty_N=at.lateral_uncertainty,
        tilt_torque_N_m=at.tilt,
        tilt_torque_uncertainty_N_m=at.tilt_uncertainty,
    )


def lift_gaps(pick_gap: float, hold_gap: float, points: int) -> np.ndarray:
    """The gaps [m] of the lift's pull curve: ``points`` Chebyshev-Lobatto points from the
    holding gap to the pick gap, both ends exact."""
    if points < 2:
        raise ValueError(f"lift_points = {points}: must be at least 2 (the two ends)")
    k = np.arange(points)
    mid, half = 0.5 * (pick_gap + hold_gap), 0.5 * (pick_gap - hold_gap)
    gaps = mid - half * np.cos(np.pi * k / (points - 1))
    gaps[0], gaps[-1] = hold_gap, pick_gap
    return gaps


def _with_lift(electrical: Electrical, design: Design, held_design: Design, pull_at, points):
    """``electrical`` with the lift in time from the pick gap to the holding gap (models.motion:
    ``pick_time_ms``, ``contact_speed_m_per_s``), the pull-against-gap curve through the pulls
    at arrival at ``lift_gaps`` (``pull_at``: the two ends are solved already); and the Lift."""
    pick, hold_gap = design.target.gap, held_design.target.gap
    t = design.target
    mass = t.density * t.volume
    if hold_gap < pick:
        gaps = lift_gaps(pick, hold_gap, points)
        curve = PullCurve(tuple(gaps), tuple(pull_at[g] for g in gaps))
        against = weight_against_pull(electrical.target_weight_N, design.thermal.orientation)
        lift = lift_in_time(curve, mass, against, pick, hold_gap)
    else:
        lift = Lift(0.0, 0.0, math.nan, pick - hold_gap)  # held where it is picked
    out = dataclasses.replace(
        electrical,
        pick_time_ms=lift.pick_time_s * 1e3,
        contact_speed_m_per_s=lift.contact_speed_m_per_s,
    )
    return out, lift


def pull_cancellation(split: dict) -> float:
    """Sum of the magnitudes of the pull's terms over the magnitude of the net pull [-] (1: every
    term pulls one way; large: the net is a small difference of large terms, its size uncertain
    and its sign what to trust); inf for a zero net pull."""
    net = abs(sum(split.values()))
    terms = sum(abs(v) for v in split.values())
    return float(terms / net) if net > 0 else math.inf


def _thermal(design: Design, state, part: PickState, electrical: Electrical) -> Thermal:
    """The temperatures of the steady state and of the part (arriving, held), the thermal
    assumptions behind them, the margins to every limit and the time to them."""
    temps = {
        "coil": state.coil_hot_spot_C,
        "coil_mean": state.temperature("coil"),
        "core": state.temperature("core"),
        "face": state.temperature("face"),
    }
    if design.ring is not None:
        temps["ring"] = state.temperature("ring")
    temps["target"] = state.temperature("target")
    temps["target_arrival"] = part.target_arrival_C
    temps["target_hold"] = part.target_hold_C
    temps["ambient"] = design.thermal.ambient_C
    no_limits_yet = Thermal(
        temperatures_C=temps,
        thermal_assumptions=thermal_assumptions(design, state.network),
        coil_temperature_limit_C=design.thermal.coil_class_C,
        thermal_status=state.status,
        margins={},
        binding_limit="",
        time_to_limit_s={},
        thermal_time_constants_s=[],
    )
    margins, binding, times, taus = limits_and_margins(
        design, state, _flat_for_checks(electrical, no_limits_yet)
    )
    thermal = dataclasses.replace(
        no_limits_yet,
        margins=margins,
        binding_limit=binding,
        time_to_limit_s=times,
        thermal_time_constants_s=[float(x) for x in taus],
    )
    return thermal


def _flat_for_checks(electrical: Electrical, thermal: Thermal) -> dict:
    """The flat values the limit checks read (models.checks)."""
    return {
        "coil_temperature_C": thermal.coil_temperature_C,
        "ring_temperature_C": thermal.ring_temperature_C,
        "target_hold_temperature_C": thermal.target_hold_temperature_C,
        "core_peak_flux_density_T": electrical.core_peak_flux_density_T,
        "core_flux_fraction": electrical.core_flux_fraction,
        "core_saturation_T": electrical.core_saturation_T,
        "coil_voltage_V": electrical.coil_voltage_V,
        "coil_current_A": electrical.coil_current_A,
        "supply_VA": electrical.supply_VA,
        "pull_uncertainty_relative": electrical.pull_uncertainty_relative,
        "pull_cancellation": electrical.pull_cancellation,
    }
