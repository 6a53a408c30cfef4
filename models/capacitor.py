"""The drive's capacitor in an evaluation: tuned for unity power factor at the design point
(``tune_capacitor``) and rated by its worst state (``capacitor_rating``, ``capacitor_rating_of``).
The capacitor's circuit laws are models.supply's."""

from __future__ import annotations

import dataclasses
import math

from models.design import Design, edit, with_capacitance
from models.errors import DesignError
from models.fast.circuit import assemble_circuit, solve_system
from models.pick import PickState, part_state, steady_state
from models.supply import supply_state, tuned_capacitance

__all__ = [
    "NO_PART_CONDUCTIVITY",
    "TUNING_PASSES",
    "TUNING_TOLERANCE",
    "capacitor_rating",
    "capacitor_rating_of",
    "tune_capacitor",
]

#: Passes of the series capacitor's tuning under voltage drive (``tune_capacitor``): the capacitor sets
#: the current, the current the temperatures, the temperatures the coil's reactance it is tuned
#: to; the reactance moves little with temperature: 3-4 passes on the demo at 5-20 V (measured).
TUNING_PASSES = 8
#: Relative change of the tuned capacitance that ends the passes (common practice, no source:
#: far below any capacitor's tolerance).
TUNING_TOLERANCE = 1e-9


def tune_capacitor(design: Design, pick_system, held_system, isothermal: bool):
    """(design, pick system, held system, steady state) with the drive's capacitor fixed.

    A capacitor without a capacitance (``drive.compensation`` "series" or "parallel") is tuned
    for unity power factor at the design point: the coil's terminal impedance (iron loss
    included) at the design's gap, the magnet at its steady state, the part arriving
    (models.supply.tuned_capacitance). Under current drive, and in parallel on a voltage, the
    coil's current does not depend on the capacitor, nor the steady state: one pass. A series
    capacitor on a voltage sets the current and so the temperatures: passes until the
    capacitance the steady state asks for is the one it was computed with."""
    state = steady_state(held_system.design, held_system, isothermal)
    drive = design.drive
    if drive.compensation == "none" or drive.capacitance is not None:
        return design, pick_system, held_system, state
    dependent = drive.voltage is not None and drive.compensation == "series"
    capacitance = None
    for _ in range(TUNING_PASSES):
        new = _tuning_capacitance(design, pick_system, held_system, state, isothermal)
        if not math.isfinite(new):
            raise DesignError(
                f"drive.compensation = {drive.compensation!r}: the coil's reactance at the design "
                "point is not positive, so there is nothing to tune a capacitor to"
            )
        done = capacitance is not None and abs(new - capacitance) <= TUNING_TOLERANCE * new
        capacitance = new
        tuned = with_capacitance(design, capacitance)
        pick_system = dataclasses.replace(pick_system, design=tuned)
        held_system = dataclasses.replace(
            held_system, design=with_capacitance(held_system.design, capacitance)
        )
        if not dependent or done:
            break
        state = steady_state(held_system.design, held_system, isothermal)
    return tuned, pick_system, held_system, state


def _tuning_capacitance(design: Design, pick_system, held_system, state, isothermal) -> float:
    """The capacitance [F] for unity power factor at the design point of ``state``."""

    part = part_state(design, state, isothermal, lambda temps: solve_system(held_system, temps))
    sol = solve_system(pick_system, part.arrival)
    z = complex(sol.coil_voltage / sol.coil_current)
    return tuned_capacitance(design.drive.compensation, design.drive.omega, z)


def _no_part(design: Design) -> Design:
    """``design`` with its part made a non-conductor (``NO_PART_CONDUCTIVITY``): the magnet
    with nothing in front of it, for the capacitor's rating."""
    return edit(design, properties={"target.conductivity": NO_PART_CONDUCTIVITY})


#: A part's conductivity [S/m] that stands for no part: its cells' resistances (~1e17 Ohm) leave
#: currents 1e-20 of a metal's, far below rounding of the terminal quantities.
NO_PART_CONDUCTIVITY = 1e-12


def capacitor_rating(design, fineness, pole_model, part: PickState, isothermal, solved):
    """The capacitor's worst state: (rms voltage [V], reactive power [var]) of the state with the
    highest capacitor voltage among the solved ones (``solved``: (system, solution) pairs, a
    solution None is skipped: the design point, the hold, the other gaps, all at the steady
    state), the same with the magnet and the part cold (the ambient; 20 degC when isothermal),
    and no part present, hot and cold."""
    cold_C = 20.0 if isothermal else design.thermal.ambient_C
    cold = {"coil": cold_C, "ring": cold_C, "target": cold_C}
    empty = _no_part(design)
    empty_system = assemble_circuit(empty, fineness, pole_model)
    states = [sol for _, sol in solved if sol is not None]
    states += [solve_system(system, cold) for system, sol in solved if sol is not None]
    states += [solve_system(empty_system, part.arrival), solve_system(empty_system, cold)]
    return capacitor_rating_of(states, design.drive)


def capacitor_rating_of(states, drive) -> tuple:
    """(rms voltage [V], reactive power [var]) of the capacitor in the state of ``states``
    (circuit solutions) where its voltage is highest."""
    worst = max(
        (
            supply_state(
                drive.compensation, drive.capacitance, drive.omega, s.coil_voltage, s.coil_current
            )
            for s in states
        ),
        key=lambda st: abs(st.capacitor_voltage),
    )
    return abs(worst.capacitor_voltage), worst.capacitor_reactive_VA
