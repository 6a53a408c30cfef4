"""The one entry point of the fast model: design -> result.

The pipeline: discretise and assemble the circuit (models.fast), solve it together with the
thermal network (models.thermal), take the pull and the losses, check the limits
(models.checks), and return a models.result.Result.
"""

from __future__ import annotations

import dataclasses
import math
import time

import numpy as np

from models.capacitor import capacitor_rating, capacitor_rating_of, tune_capacitor
from models.checks import (
    gap_warnings,
    lateral_warnings,
    lift_warnings,
    limits_and_margins,
    out_of_depth,
    range_warnings,
    thermal_assumptions,
    thermal_warnings,
)
from models.core_loss import radial_flux_slab_depth
from models.design import Design, with_gap
from models.envelope import envelope
from models.errors import DesignError
from models.fast.circuit import RING, CircuitSolution, assemble_circuit, solve_system
from models.fast.core import radial_flux_fraction
from models.fast.discretize import Fineness
from models.fast.flux import core_peak_flux_density, pole_flux_density
from models.fast.offset import centring_stiffness, offset_forces
from models.fast.pull import net_pull, pull_by_source
from models.fast.ripple import pull_ripple
from models.fast.uncertainty import COARSE_FACTOR, pull_uncertainty
from models.motion import Lift, PullCurve, lift_in_time, weight_against_pull
from models.pick import (
    PickState,
    SolvedOnce,
    at_hold_gap,
    part_losses,
    part_state,
    pick_state,
    steady_state,
)
from models.pole_cache import (
    DEFAULT_FINENESS,
    clear_pole_cache,
    pole_model_for,
    pole_model_key,
)
from models.result import (
    MODEL_VERSION,
    Electrical,
    Result,
    ThermalResults,
    flat_for_checks,
    ring_phase,
)
from models.supply import supply_state

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
    "clear_pole_cache",
    "pole_model_for",
    "pole_model_key",
    "steady_state",
]


#: Pulls on the lift's pull-against-gap curve by default (models.motion): the pick gap's and the
#: holding gap's, both already solved by an evaluation, so the lift costs no circuit assembly.
#: Each further point costs one (about half an evaluation): ``evaluate(..., lift_points=n)``.
LIFT_POINTS = 2


def pole_mass(design: Design) -> float:
    """Mass of the pole's steel with the ring's groove removed [kg] (nan for an air core)."""
    p, g = design.pole, design.ring
    if p is None:
        return math.nan
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
        models.design.ThermalSettings's defaults (25 degC ambient, natural convection, continuous duty).
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
    pick_system, held_design, held_system = _pick_circuits(design, fineness, pole_model)
    design, pick_system, held_system, state = tune_capacitor(
        design, pick_system, held_system, isothermal
    )
    solve = SolvedOnce(pick=pick_system, held=held_system)
    part = part_state(design, state, isothermal, lambda temps: solve("held", temps))
    arrival = solve("pick", part.arrival)
    hold = solve("held", part.hold) if part.hold is not None else None
    drive = design.drive
    # The capacitor's states to rate it by: a series capacitor on a given coil current has the
    # same voltage I/(omega C) in every state, so only the design point is needed then.
    compensated = drive.compensation != "none" and not (
        drive.current is not None and drive.compensation == "series"
    )
    pulls, gap_solutions = _pulls_at_gaps(design, gaps_mm, fineness, part, compensated)
    rating = None
    if drive.compensation == "series" and drive.current is not None:
        rating = capacitor_rating_of([arrival], drive)
    elif compensated:
        solved = [(pick_system, arrival), (held_system, hold), *gap_solutions]
        rating = capacitor_rating(design, fineness, pole_model, part, isothermal, solved)
    core_C = state.temperature("core") if design.pole is not None else math.nan
    electrical = _electrical(design, arrival, hold, core_C, rating)
    electrical = _with_error_bar(electrical, design, fineness, part.arrival)
    arrival_held = solve("held", part.arrival)  # solved already, except with target_stays
    electrical = _with_ripple(electrical, design, arrival, arrival_held, hold)
    pull_at = _ArrivalPulls(design, fineness, part.arrival, {held_design.target.gap: arrival_held})
    pull_at[design.target.gap] = electrical.pull_N
    for g, p in zip(gaps_mm, pulls, strict=True):
        if p is not None:
            pull_at[g * 1e-3] = p
    electrical, lift = _with_lift(electrical, design, held_design, pull_at, lift_points)
    electrical = _with_lateral(electrical, design, pick_system, arrival, lateral)
    thermal = _thermal(design, state, part, electrical)
    result = Result(
        electrical=electrical,
        thermal=thermal,
        warnings=_warnings(
            design, gaps_mm, fineness, state, part, arrival, (electrical, thermal), lift
        ),
        out_of_depth=out_of_depth(design, electrical, state.status),
        n_cells=int(arrival.cells.n),
        n_panels=0 if arrival.panels is None else int(arrival.panels.n),
        run_time_s=time.perf_counter() - t_start,
        envelope=envelope(design, electrical.pole_mass_kg),
    )
    if len(offsets_mm):
        worst = _OffsetPulls(design, fineness, part.arrival, offsets_mm)
        return result, [worst[g * 1e-3] for g in gaps_mm]
    return result, [pull_at[g * 1e-3] for g in gaps_mm]


def _pick_circuits(design: Design, fineness: Fineness, pole_model):
    """(pick circuit, design at the holding gap, held circuit): the circuits of the part at the
    design's gap and at the holding gap (one and the same where those are equal)."""
    pick_system = assemble_circuit(design, fineness, pole_model)
    held_design = at_hold_gap(design)
    if held_design is design:
        return pick_system, held_design, pick_system
    held_pole = pole_model_for(held_design, fineness)
    return pick_system, held_design, assemble_circuit(held_design, fineness, held_pole)


def _pulls_at_gaps(design: Design, gaps_mm, fineness: Fineness, part: PickState, compensated):
    """The pull at arrival [N] at each further gap of ``gaps_mm`` [mm] (None at the design's own
    gap: the result holds it), and (circuit, solution) of each for the capacitor's rating when
    ``compensated``."""
    pulls, gap_solutions = [], []
    for g in gaps_mm:
        if abs(g * 1e-3 - design.target.gap) <= 1e-12:
            pulls.append(None)  # the design's own pull, once the result holds it
            continue
        at_gap = with_gap(design, g)
        system = assemble_circuit(
            at_gap, fineness, pole_model_for(at_gap, fineness), pull_only=not compensated
        )
        solution = solve_system(system, part.arrival)
        pulls.append(net_pull(solution))
        if compensated:
            gap_solutions.append((system, solution))
    return pulls, gap_solutions


def _warnings(design, gaps_mm, fineness, state, part, arrival, parts, lift) -> list:
    """Every warning of an evaluation: the design's notes, the model's range, the pick gaps,
    the temperatures and the lift (models.checks); ``parts``: (electrical, thermal)."""
    electrical, thermal = parts
    flat = flat_for_checks(electrical, thermal)
    warnings = [f"design: {note}" for note in design.notes]
    warnings += range_warnings(design, arrival, fineness, electrical)
    warnings += gap_warnings(design, gaps_mm, "pick gap")
    warnings += thermal_warnings(design, state, flat, part.hold_time_constant_s)
    warnings += lift_warnings(design, electrical, lift)
    warnings += lateral_warnings(design, electrical)
    return warnings


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
            self[gap] = net_pull(sol)

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
        pull = net_pull(solve_system(system, self._temps))
        self[key] = pull
        return pull


def _check_laminated(design: Design) -> None:
    """Refuse a conductive (solid) pole: the fast model covers laminated poles only."""
    if design.pole is not None and not design.pole.laminated:
        raise DesignError(
            f"pole.conductivity_S_per_m = {design.pole.conductivity:.4g}: the fast model covers "
            "laminated poles only (0); check a solid pole with 'eddypull verify'"
        )


def _electrical(
    design: Design,
    sol: CircuitSolution,
    hold: CircuitSolution | None,
    core_C: float,
    rating: tuple | None = None,
) -> Electrical:
    """Pull, losses, terminal quantities and flux densities of the solution at the moment of
    pick (``sol``), and the pull of the solution at the end of the hold (``hold``, None: nan);
    the steel's saturation at its temperature ``core_C`` [degC]; the supply's side of the
    capacitor (models.supply) and its rating ``rating`` ((V rms, var) of its worst state; None:
    no capacitor)."""
    split = pull_by_source(sol)
    pull = sum(split.values())
    losses = part_losses(sol)
    z_coil = sol.coil_voltage / sol.coil_current
    ring_current = complex(sol.cell_current[sol.cells.part == RING].sum())
    if sol.winding_current is not None:
        ring_current = sol.winding_current  # the current in the winding's wire
    phase = ring_phase(ring_current, sol.coil_current) if design.ring is not None else 0.0
    pull_hold = math.nan if hold is None else net_pull(hold)
    weight = design.target.weight
    input_power = float(np.real(sol.coil_voltage * np.conj(sol.coil_current)))
    drive = design.drive
    supply = supply_state(
        drive.compensation, drive.capacitance, drive.omega, sol.coil_voltage, sol.coil_current
    )
    va = supply.supply_VA
    rating_V, rating_var = (0.0, 0.0) if rating is None else rating
    electrical = Electrical(
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
        core_peak_flux_density_T=math.nan,
        pole_flux_density_T=math.nan,
        target_weight_N=weight,
        lift_ratio=pull / weight,
        pull_hold_N=pull_hold,
        lift_ratio_hold=pull_hold / weight,
        pull_cancellation=pull_cancellation(split),
        pull_uncertainty_N=math.nan,
        pull_uncertainty_relative=math.nan,
        power_factor=input_power / va if va > 0 else 0.0,
        pole_mass_kg=math.nan,
        core_flux_fraction=math.nan,
        core_saturation_T=math.nan,
        core_loss_W=math.nan,
        core_eddy_loss_W=math.nan,
        core_hysteresis_loss_W=math.nan,
        core_excess_loss_W=math.nan,
        core_radial_flux_fraction=math.nan,
        **_by_coil(design, sol),
        **_ring_closing(design, sol, ring_current, losses.get("closing", 0.0)),
        pull_ripple_N=math.nan,
        hold_chatter_margin_N=math.nan,
        pick_time_ms=math.nan,
        contact_speed_m_per_s=math.nan,
        supply_voltage_V=abs(supply.supply_voltage),
        supply_current_A=abs(supply.supply_current),
        capacitor_uF=0.0 if drive.capacitance is None else drive.capacitance * 1e6,
        capacitor_voltage_V=abs(supply.capacitor_voltage),
        capacitor_current_A=abs(supply.capacitor_current),
        capacitor_rating_V=float(rating_V),
        capacitor_reactive_VA=float(rating_var),
        pull_centred_N=pull,  # a centred part; _with_lateral moves it
        lateral_force_N=0.0,
        lateral_force_uncertainty_N=0.0,
        tilt_torque_N_m=0.0,
        tilt_torque_uncertainty_N_m=0.0,
        centring_stiffness_N_per_m=math.nan,
        centring_stiffness_uncertainty_N_per_m=math.nan,
    )
    if design.pole is None:  # an air core: what needs the steel stays nan (JSON null)
        return electrical
    return dataclasses.replace(electrical, **_steel_results(design, sol, core_C))


def _by_coil(design: Design, sol: CircuitSolution) -> dict:
    """Each coil's loss [W], resistance [Ohm] and signed ampere-turns [A] by its index ("0",
    "1", ...): R_k at the coil node's temperature (the coils share one node and one temperature
    coefficient per material: R_k(T) = R(T) R_k(20) / R(20) for coils of one wire material;
    each coil's own coefficient otherwise)."""
    coils = design.windings
    i2 = abs(sol.coil_current) ** 2
    if len(coils) == 1:
        r = {"0": float(sol.coil_resistance)}
    else:
        t = _coil_temperature(coils, sol.coil_resistance)
        r = {str(k): float(c.resistance(t)) for k, c in enumerate(coils)}
    return {
        "coil_loss_by_coil_W": {k: float(i2 * v) for k, v in r.items()},
        "coil_resistance_by_coil_ohm": r,
        "ampere_turns_by_coil_A": {
            str(k): float(c.sense * c.turns * abs(sol.coil_current)) for k, c in enumerate(coils)
        },
    }


def _ring_closing(design: Design, sol: CircuitSolution, ring_current: complex, loss: float):
    """A shading winding's ampere-turns [A], the voltage across its closing part [V rms], the
    capacitor's reactive power [var] (its rating) and the closing resistor's loss [W]; a solid
    ring is one turn with no closing part (nan), no ring none at all."""
    ring = design.ring
    turns = 0 if ring is None else (ring.turns if ring.winding else 1)
    out = {
        "ring_ampere_turns_A": float(turns * abs(ring_current)),
        "ring_closing_voltage_V": math.nan,
        "ring_capacitor_var": math.nan,
        "ring_closing_loss_W": float(loss),
    }
    if sol.winding_current is not None:
        i = abs(sol.winding_current)
        out["ring_closing_voltage_V"] = float(i * abs(sol.winding_closing))
        if ring.capacitance is not None:
            out["ring_capacitor_var"] = float(i * i / (sol.omega * ring.capacitance))
    return out


def _coil_temperature(coils, resistance: float) -> float:
    """The coils' common temperature [degC] at which their resistances sum to ``resistance``
    [Ohm] (linear in T: one division)."""
    r20 = sum(c.resistance(20.0) for c in coils)
    slope = sum(c.resistance(21.0) for c in coils) - r20
    return 20.0 + (resistance - r20) / slope


def _steel_results(design: Design, sol: CircuitSolution, core_C: float) -> dict:
    """The results that need the pole's steel: its flux densities and their fraction of
    saturation, its mass, its losses."""
    b_peak = core_peak_flux_density(design, sol)
    bsat = design.pole.saturation_at(core_C if math.isfinite(core_C) else 20.0)
    core = sol.core
    return {
        "core_peak_flux_density_T": b_peak,
        "pole_flux_density_T": pole_flux_density(design, sol),
        "pole_mass_kg": pole_mass(design),
        "core_flux_fraction": b_peak / bsat if bsat else 0.0,
        "core_saturation_T": bsat if bsat else math.nan,
        "core_loss_W": 0.0 if core is None else core.total,
        "core_eddy_loss_W": 0.0 if core is None else core.eddy,
        "core_hysteresis_loss_W": 0.0 if core is None else core.hysteresis,
        "core_excess_loss_W": 0.0 if core is None else core.excess,
        "core_radial_flux_fraction": (
            0.0
            if sol.core_grid is None
            else radial_flux_fraction(
                sol.core_grid, sol.cell_current, radial_flux_slab_depth(design)
            )
        ),
    }


def _with_error_bar(electrical: Electrical, design: Design, fineness, temperatures) -> Electrical:
    """``electrical`` with the pull's error estimate (models.fast.uncertainty): the pull again
    with coarser cells and the same pole model, in the same state (one circuit assembly and
    solve, no thermal solve, no new pole geometry)."""
    coarse = dataclasses.replace(
        fineness.scaled(COARSE_FACTOR),
        panel_size=fineness.panel_size,
        gap_floor=fineness.gap_floor,  # the panels' sizes as the fine level's: its pole model
    )
    system = assemble_circuit(design, coarse, pole_model_for(design, coarse), pull_only=True)
    pull_coarse = net_pull(solve_system(system, temperatures))
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
        net_pull(sol) - pull_ripple(sol) - against
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
    mass = design.target.mass
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


def _thermal(design: Design, state, part: PickState, electrical: Electrical) -> ThermalResults:
    """The temperatures of the steady state and of the part (arriving, held), the thermal
    assumptions behind them, the margins to every limit and the time to them."""
    temps = {"coil": state.coil_hot_spot_C, "coil_mean": state.temperature("coil")}
    if design.pole is not None:  # an air core has neither
        temps["core"] = state.temperature("core")
        temps["face"] = state.temperature("face")
    if design.ring is not None:
        temps["ring"] = state.temperature("ring")
    temps["target"] = state.temperature("target")
    temps["target_arrival"] = part.target_arrival_C
    temps["target_hold"] = part.target_hold_C
    temps["ambient"] = design.thermal.ambient_C
    no_limits_yet = ThermalResults(
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
        design, state, flat_for_checks(electrical, no_limits_yet)
    )
    thermal = dataclasses.replace(
        no_limits_yet,
        margins=margins,
        binding_limit=binding,
        time_to_limit_s=times,
        thermal_time_constants_s=[float(x) for x in taus],
    )
    return thermal
