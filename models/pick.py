"""The magnet's state at a pick, one module for ``models.evaluate`` and ``models.family``.

The steps, named: the part at its holding gap (``at_hold_gap``); the magnet's duty-averaged
steady state with the part held there (``steady_state``); the part's temperatures as it arrives
and at the end of its hold, the fixed parts (coil, ring) at that steady state (``pick_state``,
or ``part_state`` with the part's loss at arrival taken from the held circuit); the circuits of
the pick and the hold solved once each (``SolvedOnce``); a magnet's own temperatures for another
part (``magnet_temperatures``). Temperatures [degC]; a circuit's temperatures are the dict
``models.fast.circuit.solve_system`` reads ("coil" its mean, "ring", "target").
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from models.design import Design, with_gap
from models.fast.circuit import RING, TARGET, CircuitSolution, solve_system
from models.thermal.coupling import solve_coupled
from models.thermal.limits import hold_temperature
from models.thermal.network import build_network, face_node_thickness

__all__ = [
    "PickState",
    "SolvedOnce",
    "at_hold_gap",
    "magnet_temperatures",
    "part_losses",
    "part_state",
    "pick_state",
    "steady_state",
]


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
    loss = np.abs(solution.cell_current) ** 2 * solution.cell_resistance
    part = solution.cells.part
    out = {
        "coil": float(abs(solution.coil_current) ** 2 * solution.coil_resistance),
        "ring": float(loss[part == RING].sum()),
        "target": float(loss[part == TARGET].sum()),
    }
    if solution.winding_current is not None:  # a shading winding: its wire heats the ring's node;
        i2 = abs(solution.winding_current) ** 2  # its closing resistor sits outside the magnet
        out["ring"] = float(i2 * solution.winding_resistance)
        out["closing"] = float(i2 * solution.winding_closing.real)
    c = solution.core
    if c is not None and face_depth_m is not None:
        at = c.eddy * c.eddy_share + c.hysteresis_at + c.excess_at
        face = solution.core_grid.z > -face_depth_m
        out["face"] = float(at[face].sum())
        out["core"] = float(at[~face].sum())
    return out


def at_hold_gap(design: Design) -> Design:
    """``design`` with its part at the holding gap (``thermal.hold_gap_mm``; ``with_gap``); the
    same object when that is the design's own gap (the default)."""
    gap = design.thermal.hold_gap
    if gap is None or abs(gap - design.target.gap) <= 1e-12:
        return design
    return with_gap(design, gap * 1e3)


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
    network = build_network(design)

    face_depth = face_node_thickness(design)

    def losses_at(temps):
        sol = solve_system(system, temps)
        return part_losses(sol, face_depth), sol

    coil_sensitivity = None
    if design.drive.current is not None and len(design.windings) == 1:  # P = I^2 R(T) exactly
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


class SolvedOnce:
    """``solve_system`` of the circuits of one evaluation by their role ("pick": the part at the
    design's gap, "held": at its holding gap), each (circuit, temperatures) solved once: at the
    design's own gap the part's loss at arrival, the arrival itself and (isothermal) the hold
    are one solve. Roles given the same circuit share their solutions."""

    def __init__(self, **systems):
        self.systems = systems
        self._same = {r: next(o for o, s in systems.items() if s is c) for r, c in systems.items()}
        self._seen: dict = {}

    def __call__(self, role: str, temperatures: dict) -> CircuitSolution:
        key = (self._same[role], tuple(sorted(temperatures.items())))
        if key not in self._seen:
            self._seen[key] = solve_system(self.systems[role], temperatures)
        return self._seen[key]


def part_state(design: Design, state, isothermal: bool, solve_held) -> PickState:
    """``pick_state`` with the part's loss at arrival [W] from the circuit at the holding gap:
    ``solve_held(temperatures)`` solves that circuit (a CircuitSolution)."""

    def loss_at_arrival(temperatures):
        return part_losses(solve_held(temperatures))["target"]

    return pick_state(design, state, isothermal, loss_at_arrival)


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


def magnet_temperatures(result, isothermal: bool = False) -> dict:
    """The circuit temperatures [degC] of a magnet's coil (its mean) and ring in ``result``
    (a models.result.Result).

    Empty when ``isothermal`` (20 degC, as a part's own pick state has them) or after a runaway
    (no steady state: the part's own last iterate stands)."""
    if isothermal:
        return {}
    temps = result.temperatures_C
    out = {"coil": float(temps["coil_mean"])}
    if "ring" in temps and temps["ring"] is not None:
        out["ring"] = float(temps["ring"])
    return out if all(math.isfinite(v) for v in out.values()) else {}
