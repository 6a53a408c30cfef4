"""Electro-thermal coupling: temperatures and losses that agree, at the duty-averaged losses.

The electrical side enters through a callback (``losses_at``) so that the thermal package does
not depend on the circuit: models.evaluate passes one that re-solves the assembled loop equations
at new resistances. A duty cycle is replaced by its average losses (the period short next to the
time constants; models.evaluate warns when it is not).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from models.thermal.network import ThermalNetwork

__all__ = ["ThermalState", "solve_coupled"]


@dataclass
class ThermalState:
    """Steady state of the network (duty-averaged losses) and how it was found.

    T : node temperatures [degC] (math.inf for every node after a runaway); coil_hot_spot_C;
    status : "isothermal", "converged" or "runaway: <why>"; iterations : electrical solves;
    losses_on : on-state loss of each node at T [W]; sensitivity : d ln(loss) / dT of each node
    [1/K] (0 when isothermal); solution : the last electrical solution (at T, or at the last
    iterate of a runaway); T_last : that iterate [degC].
    """

    network: ThermalNetwork
    T: np.ndarray
    coil_hot_spot_C: float
    status: str
    iterations: int
    losses_on: np.ndarray
    sensitivity: np.ndarray
    solution: object
    T_last: np.ndarray

    def temperature(self, node: str) -> float:
        return float(self.T[self.network.index(node)])


_LOSS_NODES = ("coil", "ring", "target")  # the circuit's temperatures
_HEATED_NODES = (*_LOSS_NODES, "core", "face")  # the core's losses sit in the steel's nodes


def _losses_vector(network, losses: dict) -> np.ndarray:
    P = np.zeros(len(network.nodes))
    for name in _HEATED_NODES:
        if name in network.nodes:
            P[network.index(name)] = losses.get(name, 0.0)
    return P


def _temps_dict(network, T) -> dict:
    return {name: float(T[network.index(name)]) for name in _LOSS_NODES if name in network.nodes}


def solve_coupled(
    network: ThermalNetwork,
    losses_at,
    coupled: bool = True,
    coil_sensitivity=None,
    max_iterations: int = 40,
    tolerance_K: float = 0.01,
) -> ThermalState:
    """Temperatures and losses that agree with each other, at the duty-averaged losses.

    Parameters
    ----------
    network : ThermalNetwork
    losses_at : callable
        ``losses_at({"coil": T, "ring": T, "target": T}) -> (losses, solution)``: on-state losses
        [W] by part at those temperatures [degC] (resistivity rho_20 (1 + alpha (T - 20))) and the
        electrical solution behind them; "core" and "face" losses (the pole's iron) heat those
        nodes too.
    coupled : bool
        False: the losses at 20 degC (one call) heat the network, with no feedback (isothermal
        electrical model).
    coil_sensitivity : callable, optional
        d ln(coil loss) / dT [1/K] at a coil temperature, when known in closed form (current
        drive: alpha / (1 + alpha (T - 20))); otherwise it is found by secant like the others.
    max_iterations : int
        Electrical solves at most before giving up (reported as a runaway, never an exception).
    tolerance_K : float
        Largest temperature change of the last step [K]; 0.01 K changes a copper resistance by
        4e-5, far below the model's accuracy.

    Notes
    -----
    Newton's method on F(T) = heat_out(T) - D P(T) (D the duty cycle): the Jacobian is the
    network's (conductances and the change of the surface coefficients with temperature) minus
    D diag(P s), with s = d ln P / dT by secant between iterates (the coil's in closed form under
    current drive). Each step re-solves the electrical model once. A node pushed past its
    material limit (``ceiling_C``) is held there; held three steps in a row, its steady state lies
    above the limit: a runaway. The part temperatures never fall below the ambient (all losses
    are >= 0).
    """
    th = network.thermal
    D = th.duty_cycle if coupled else 1.0
    duty = th.duty_cycle
    P = solution = None
    if not coupled:
        losses, solution = losses_at({"coil": 20.0, "ring": 20.0, "target": 20.0})
        P = _losses_vector(network, losses) * duty
    T, P, s, solution, status, iterations = _newton_iterations(
        network, losses_at, P, solution, D, coupled, coil_sensitivity, max_iterations, tolerance_K
    )
    if not coupled and status is None:
        status = "isothermal"
    i_coil = network.index("coil")
    hot = float(T[i_coil] + network.hot_spot_factor * D * P[i_coil])
    return _final_state(
        network,
        T,
        hot,
        status,
        iterations=iterations if coupled else 1,
        losses_on=P / duty if not coupled else P,
        sensitivity=s,
        solution=solution,
    )


def _newton_iterations(
    network, losses_at, P, solution, D, coupled, coil_sensitivity, max_iterations, tolerance_K
):
    """The Newton iterations of ``solve_coupled`` from the ambient: (temperatures [degC], losses
    [W], sensitivities [1/K], electrical solution, status or None, electrical solves). ``P`` and
    ``solution``: the fixed losses and their solution when not ``coupled``; ``D``: the duty
    cycle that scales the losses in the heat balance."""
    n = len(network.nodes)
    ta = network.thermal.ambient_C
    T = np.full(n, float(ta))
    s = np.zeros(n)
    held = np.zeros(n, dtype=int)
    T_prev = P_prev = None
    status = None
    iterations = 0
    for _ in range(max_iterations):
        if coupled:
            P, solution = _losses_and_sensitivity(
                network, losses_at, T, T_prev, P_prev, s, coil_sensitivity
            )
            iterations += 1
        step = _newton_step(network, T, D * P, s)
        if not np.all(np.isfinite(step)):
            status = "runaway: the heat balance has no solution (losses grow as fast as cooling)"
            break
        if np.max(np.abs(step)) < tolerance_K:
            status = "converged" if coupled else "isothermal"
            break
        T_new = np.maximum(T + step, ta)
        if coupled:
            T_new, held, status = _hold_at_ceiling(network, T_new, held)
            if status is not None:
                break
        T_prev, P_prev = T, P
        T = T_new
    else:
        status = (
            f"runaway: no consistent temperatures in {max_iterations} iterations "
            f"(last change {np.max(np.abs(step)):.3g} K)"
        )
    return T, P, s, solution, status, iterations


def _losses_and_sensitivity(network, losses_at, T, T_prev, P_prev, s, coil_sensitivity):
    """One electrical solve at the temperatures ``T``: the on-state loss vector and the
    solution; ``s`` (d ln P / dT) is updated in place by secant from the previous iterate, the
    coil's in closed form when ``coil_sensitivity`` is given."""
    losses, solution = losses_at(_temps_dict(network, T))
    P = _losses_vector(network, losses)
    if P_prev is not None:
        dT = T - T_prev
        ok = (np.abs(dT) > 1e-6) & (P > 0)
        s[ok] = (P[ok] - P_prev[ok]) / (P[ok] * dT[ok])
    if coil_sensitivity is not None:
        i_coil = network.index("coil")
        s[i_coil] = coil_sensitivity(T[i_coil])
    return P, solution


def _newton_step(network, T, DP, s):
    """Temperature step toward the heat balance at ``T`` with the averaged losses ``DP``
    (= D P): Newton's while the linearised balance is stable, else a fixed-point step; all inf
    when the system is singular."""
    n = len(T)
    J, q, A, b = network.jacobian(T)
    F = q - DP
    Jt = J - np.diag(DP * s)
    try:
        if np.linalg.eigvalsh(0.5 * (Jt + Jt.T))[0] > 0:
            return np.linalg.solve(Jt, -F)  # Newton
        # Losses grow faster than the cooling at this temperature: Newton would step the wrong
        # way. A fixed-point step (conductances and losses frozen) always moves toward the
        # balance.
        return np.linalg.solve(A, DP + b) - T
    except np.linalg.LinAlgError:
        return np.full(n, np.inf)


def _hold_at_ceiling(network, T_new, held):
    """Nodes pushed past their material limit held there: (T, held counts, status), the status
    a runaway once a node has been held three steps in a row, else None."""
    over = T_new > network.ceiling_C
    held = np.where(over, held + 1, 0)
    T_new = np.minimum(T_new, network.ceiling_C)
    if held.max() >= 3:
        k = int(np.argmax(held))
        return (
            T_new,
            held,
            f"runaway: the {network.nodes[k]} would pass {network.ceiling_C[k]:.0f} degC "
            f"({network.ceiling_why[k]}); no steady state below it",
        )
    return T_new, held, None


def _final_state(network, T, hot, status, **fields) -> ThermalState:
    """The ThermalState of the last iterate ``T`` (coil hot spot ``hot``): every temperature inf
    after a runaway, the iterate kept as ``T_last``."""
    T_last = T.copy()
    if status.startswith("runaway"):
        T = np.full(len(T), math.inf)
        hot = math.inf
    return ThermalState(
        network=network, T=T, coil_hot_spot_C=hot, status=status, T_last=T_last, **fields
    )
