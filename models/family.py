"""A second part under an evaluated magnet: its pulls at arrival and at the end of the hold.

A magnet meets more than one kind of part (a sorting station lifts one size and leaves another).
The magnet's fixed parts (coil, ring, core, face) sit at one duty-averaged steady state whatever
part is in front of it, so a further part needs no thermal solve of the magnet: its pulls are
circuit solves with the coil and the ring at the temperatures of the design's own evaluation and
the part at its own arrival (and, for the end of the hold, warmed) temperature.
"""

from __future__ import annotations

import math

from models.design import Design, with_capacitance, with_gap
from models.evaluate import DEFAULT_FINENESS, pole_model_for
from models.fast.circuit import assemble_circuit, solve_system
from models.fast.discretize import Fineness
from models.fast.pull import net_pull
from models.pick import at_hold_gap, magnet_temperatures, part_state, steady_state
from models.result import Result

__all__ = ["part_pulls_under_magnet", "magnet_temperatures"]


def part_pulls_under_magnet(
    design: Design,
    own_result: Result,
    gaps_mm,
    isothermal: bool = False,
    fineness: Fineness | None = None,
) -> tuple[list[float], float]:
    """A part's pulls [N] under the magnet of another evaluation, at that magnet's steady state.

    Parameters
    ----------
    design : models.design.Design
        The evaluated magnet with this part in the place of its target, at the design's own gap
        (its ``thermal`` table gives the holding gap, arrival temperature and hold time).
    own_result : models.result.Result
        The design's own evaluation (``models.evaluate.evaluate`` of the magnet with its own
        part): its coil mean and ring temperatures [degC] (``temperatures_C["coil_mean"]``,
        ``["ring"]``) are the magnet's.
    gaps_mm : sequence of float
        The gaps [mm] the part is picked at (arrival).
    isothermal : bool
        As ``models.evaluate.evaluate``: every part at 20 degC.
    fineness : models.fast.discretize.Fineness, optional
        The discretisation ``own_result`` was evaluated with (default ``DEFAULT_FINENESS``).

    Returns
    -------
    (list of float, float)
        The pull at arrival at each gap of ``gaps_mm`` [N], and the pull at the end of the hold
        at the holding gap [N] (nan when the part's hold has no temperature: a runaway).
        Positive toward the face; time averages of rms phasors.

    Notes
    -----
    The steps of ``models.evaluate.evaluate_pick_gaps`` with the fixed parts' circuit
    temperatures taken from ``own_result``: the part's arrival and hold temperatures come from
    ``pick_state`` on the steady state of the magnet with this part held at the holding gap (one
    network solve; the part's own loss is small next to the magnet's, so its neighbours there
    are within a fraction of a kelvin of ``own_result``'s), then one circuit assembly and solve
    per gap and one for the hold. The pull of each solution is
    -sum Re(I_i conj(I_j)) dM_ij/dz_i over the part's cells i and every other loop j
    (``models.fast.pull``). For the design's own part it gives ``evaluate_pick_gaps``'s pulls
    and ``pull_hold_N`` to rounding (tests/models/test_family.py).
    """
    fineness = fineness or DEFAULT_FINENESS
    if design.drive.compensation != "none" and design.drive.capacitance is None:
        # the magnet's capacitor, tuned at its own design point, stays as it is (models.supply)
        design = with_capacitance(design, own_result.capacitor_uF * 1e-6)
    systems: dict = {}

    def system_at(d: Design):
        key = round(d.target.gap, 15)
        if key not in systems:
            systems[key] = assemble_circuit(d, fineness, pole_model_for(d, fineness))
        return systems[key]

    held = at_hold_gap(design)
    held_system = system_at(held)
    state = steady_state(held, held_system, isothermal)
    part = part_state(design, state, isothermal, lambda temps: solve_system(held_system, temps))
    fixed = magnet_temperatures(own_result, isothermal)
    arrival = {**part.arrival, **fixed}
    pulls = []
    for gap in gaps_mm:
        at_gap = design
        if abs(gap * 1e-3 - design.target.gap) > 1e-12:
            at_gap = with_gap(design, gap)
        pulls.append(net_pull(solve_system(system_at(at_gap), arrival)))
    hold = math.nan
    if part.hold is not None:
        hold = net_pull(solve_system(held_system, {**part.hold, **fixed}))
    return pulls, hold
