"""A part held at the magnet and the time from cold to each limit, linearised about the steady
state (lumped capacitance; the network's modes).

Assumption: a part is held at the gap ``target.gap`` for ``hold_time``, arriving at ambient
temperature, with the magnet on and its other parts at their duty-averaged steady state.

References
----------
Incropera, DeWitt, Bergman, Lavine, *Fundamentals of Heat and Mass Transfer*, 6th/7th ed.,
eq. 5.6 (lumped capacitance).
"""

from __future__ import annotations

import math

import numpy as np

from models.thermal.coupling import ThermalState

__all__ = ["lumped_temperature", "hold_temperature", "time_to_limits"]


def lumped_temperature(t, initial_C, final_C, time_constant):
    """Lumped-capacitance temperature [degC] at time ``t`` [s]:
    T(t) = T_inf + (T_0 - T_inf) exp(-t / tau) (Incropera eq. 5.6 with a source; tau < 0 is a
    runaway that grows exponentially)."""
    with np.errstate(over="ignore"):  # a runaway past the float range is inf, as it should be
        return final_C + (initial_C - final_C) * np.exp(-np.asarray(t, dtype=float) / time_constant)


def hold_temperature(
    state: ThermalState,
    hold_time: float,
    initial_C: float | None = None,
    initial_loss_W: float | None = None,
):
    """Temperature of a part held for ``hold_time`` [s], arriving at ``initial_C`` [degC]
    (default: the ambient).

    Parameters
    ----------
    state : ThermalState
        The steady state (the part's loss P* at its steady temperature T*).
    hold_time : float
        [s].
    initial_C : float, optional
        The part's temperature as it arrives [degC]; None: the ambient.
    initial_loss_W : float, optional
        The part's on-state loss at ``initial_C`` [W], from the electrical model. Given, the
        loss is taken linear between the arrival and the steady state (a chord exact at both
        ends, which is where a held part's temperature lies); None: the tangent at the steady
        state (the sensitivity of the coupled solve).

    Returns
    -------
    (T_hold, T_final, tau)
        Temperature at the end of the hold [degC], the temperature it tends to [degC] and the
        time constant [s] (negative: it runs away exponentially).

    Notes
    -----
    Lumped capacitance (Incropera eq. 5.6 with a source): C dT/dt = P(T) + sum G_j (T_j - T),
    the magnet on (on-state losses) and its other parts at their duty-averaged steady state,
    conductances at the steady state, the part's own loss linear in its temperature,
    P(T) = P* (1 + s (T - T*)). Then T(t) = T_f + (T_0 - T_f) exp(-t / tau) with
    tau = C / (G - P* s) and T_f = (P* (1 - s T*) + sum G_j T_j) / (G - P* s).
    """
    net = state.network
    if not np.all(np.isfinite(state.T)):
        return math.inf, math.inf, math.nan
    ta = net.thermal.ambient_C
    t0 = ta if initial_C is None else float(initial_C)
    i = net.index("target")
    T = state.T
    A, b = net.matrix(T)
    G = A[i, i]
    drive = b[i] - sum(A[i, j] * T[j] for j in range(len(T)) if j != i)
    P, s = state.losses_on[i], state.sensitivity[i]
    if initial_loss_W is not None and P > 0 and abs(T[i] - t0) > 1e-6:
        s = (P - initial_loss_W) / (P * (T[i] - t0))
    beta = G - P * s
    a = P * (1.0 - s * T[i]) + drive
    C = net.capacity[i]
    if abs(beta) < 1e-15 * G:
        return float(t0 + a * hold_time / C), math.inf, math.inf
    t_final, tau = a / beta, C / beta
    return float(lumped_temperature(hold_time, t0, t_final, tau)), float(t_final), float(tau)


def time_to_limits(state: ThermalState, limits: dict):
    """Seconds from cold (all at ambient) until each part reaches its limit, run continuously.

    Parameters
    ----------
    state : ThermalState
        The steady state about which losses and conductances are linearised (the last iterate
        of a runaway).
    limits : dict
        Node name -> limit [degC]; "coil" is its hot spot.

    Returns
    -------
    (times, time_constants)
        dict node -> seconds (math.inf if the limit is never reached); the network's time
        constants [s], shortest first (negative ones grow).

    Notes
    -----
    C dT/dt = P(T) - (A T - b) with A, b the network at the steady state (exact at ambient and at
    the steady state: heat out is 0 at ambient), P(T) = P* (1 + s (T - T*)) on-state. Symmetric
    form y = C^(1/2) T: the modes of C^(-1/2) (A - diag(P* s)) C^(-1/2), each
    z(t) = z0 exp(-l t) + f (1 - exp(-l t)) / l. The first crossing is found on a logarithmic grid
    and refined on 64 points inside the bracket with linear interpolation (better than 1e-4 of the time).
    """
    net = state.network
    temps, lam, taus = _linear_response(state)
    grid = _time_grid(lam, taus)
    curve = temps(grid)
    out = {}
    for name, limit in limits.items():
        k = net.index(name)
        out[name] = _crossing_time(temps, grid, curve[:, k], k, limit)
    return out, np.sort(taus)


def _linear_response(state: ThermalState):
    """The network run continuously from cold, linearised about ``state``: (temps, lam, taus)
    with temps(t) the node temperatures [degC] at the times t [s] (one row per time; the coil's
    column its hot spot), lam the eigenvalues [1/s] of the symmetric form and taus = 1 / lam [s]
    (inf for a zero eigenvalue)."""
    net = state.network
    T_star = state.T if np.all(np.isfinite(state.T)) else state.T_last
    A, b = net.matrix(T_star)
    P, s = state.losses_on, state.sensitivity
    K = A - np.diag(P * s)
    c0 = b + P * (1.0 - s * T_star)
    w = 1.0 / np.sqrt(net.capacity)
    Ks = w[:, None] * K * w[None, :]
    lam, V = np.linalg.eigh(0.5 * (Ks + Ks.T))
    ta = net.thermal.ambient_C
    z0 = V.T @ (np.full(len(T_star), ta) / w)
    f = V.T @ (c0 * w)
    i_coil = net.index("coil")
    taus = np.where(np.abs(lam) > 0, 1.0 / np.where(lam == 0, 1.0, lam), np.inf)

    def temps(t):
        t = np.atleast_1d(t)[:, None]
        lt = lam[None, :] * t
        gain = np.where(np.abs(lt) > 1e-12, -np.expm1(-lt) / np.where(lam == 0, 1, lam), t)
        z = z0 * np.exp(-lt) + f * gain
        out = (z @ V.T) * w
        out[:, i_coil] += (
            net.hot_spot_factor * P[i_coil] * (1.0 + s[i_coil] * (out[:, i_coil] - T_star[i_coil]))
        )
        return out

    return temps, lam, taus


def _time_grid(lam, taus):
    """Logarithmic grid of 200 times [s] from 1e-3 of the shortest time constant to 50 times the
    longest (at most 1e9 s; before a growing mode leaves the float range)."""
    positive = taus[np.isfinite(taus) & (taus > 0)]
    t_lo = 1e-3 * (positive.min() if positive.size else 1.0)
    t_hi = min(50.0 * np.abs(taus[np.isfinite(taus)]).max(), 1e9)
    if lam.min() < 0:  # a growing mode: stop before exp(-l t) leaves the float range
        t_hi = min(t_hi, 500.0 / -lam.min())
    return np.geomspace(t_lo, max(t_hi, 10 * t_lo), 200)


def _crossing_time(temps, grid, column, k, limit) -> float:
    """First time [s] node ``k`` reaches ``limit`` (``column`` its temperatures on ``grid``):
    bracketed on the grid, then 64 finer steps inside the bracket and linear interpolation
    between its points (math.inf if never reached)."""
    above = np.flatnonzero(column >= limit)
    if above.size == 0:
        return math.inf
    j = above[0]
    lo, hi = (grid[j - 1] if j > 0 else 0.0), grid[j]
    sub = np.linspace(lo, hi, 65)
    vals = temps(sub)[:, k]
    if vals[0] >= limit:  # over the limit from the first instant (the coil's hot-spot rise)
        return float(lo)
    m = max(int(np.argmax(vals >= limit)), 1)
    t0, t1, v0, v1 = sub[m - 1], sub[m], vals[m - 1], vals[m]
    hi = t1 if v1 == v0 else t0 + (limit - v0) * (t1 - t0) / (v1 - v0)
    return float(min(max(hi, t0), t1))  # inside its bracket: never before switch-on
