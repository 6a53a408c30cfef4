"""The lift in time: the part's motion from rest at the pick gap to contact at the holding gap.

Quasi-static: the part feels, wherever it is, the time-averaged pull it would feel standing
there (the pull-against-gap curve of the moment of pick), and its weight. Along the pull (toward
the face, x the distance travelled from the pick gap g0, gap = g0 - x)::

    m x'' = pull(g0 - x) - W,   x(0) = 0, x'(0) = 0

with W the weight's component against the pull (``weight_against_pull``: the whole weight for a
face-down magnet lifting from below). The equation has the energy integral
m v^2 / 2 = E(x) = int_0^x (pull(g0 - s) - W) ds, so the contact speed is sqrt(2 E(d) / m) at the
travel d = g0 - g_hold, the time is int_0^d dx / v(x), and the part stalls where E first
returns to zero before d (it then falls back). For a constant pull F the closed forms are
t = sqrt(2 d m / (F - W)) and v = sqrt(2 d (F - W) / m) (uniform acceleration).

The curve between the computed pulls: with every pull positive, log(pull) is the polynomial in
gap through them (two pulls: an exponential, pull = F0 exp(-(g - g0) / l)); otherwise the pull
itself is. Where the quasi-static picture holds and where it fails: ``quasi_static_numbers``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.polynomial import Chebyshev, Polynomial
from scipy.constants import mu_0

__all__ = [
    "Lift",
    "PullCurve",
    "lift_in_time",
    "quasi_static_numbers",
    "weight_against_pull",
]

#: The sign of the weight against the pull by the magnet's orientation (models.design
#: ORIENTATIONS): face down, the part hangs below and its weight opposes the pull; face up, the
#: part lies above and its weight adds to it; horizontal, the weight is across the pull.
_WEIGHT_SIGN = {"face-down": 1.0, "face-up": -1.0, "horizontal": 0.0}

#: Chebyshev points on the travel for the energy integral (the curve is smooth; 32 points carry
#: an exponential of a few decay lengths to rounding) and Gauss-Legendre points per panel and
#: panels for the time integral.
_CHEB_POINTS = 32
_GAUSS = np.polynomial.legendre.leggauss(16)
_PANELS = 8


def weight_against_pull(weight_N: float, orientation: str) -> float:
    """The weight's component opposing the pull [N] for a magnet ``orientation``
    ("face-down": +weight, "face-up": -weight, "horizontal": 0)."""
    return _WEIGHT_SIGN[orientation] * weight_N


@dataclass(frozen=True)
class PullCurve:
    """Pull against gap from a few computed points (module docstring: log-polynomial where every
    pull is positive, polynomial otherwise).

    gaps_m : gaps [m], increasing; pulls_N : the pull at each [N]
    """

    gaps_m: tuple
    pulls_N: tuple

    def __post_init__(self):
        g = np.asarray(self.gaps_m, float)
        f = np.asarray(self.pulls_N, float)
        if g.size < 1 or g.size != f.size or np.any(np.diff(g) <= 0):
            raise ValueError("PullCurve needs increasing gaps, one pull each")
        positive = bool(np.all(f > 0))
        if g.size == 1:
            poly = Polynomial([np.log(f[0]) if positive else f[0]])
        else:
            poly = Polynomial.fit(g, np.log(f) if positive else f, g.size - 1)
        object.__setattr__(self, "_poly", poly)
        object.__setattr__(self, "_positive", positive)

    def __call__(self, gap_m):
        out = self._poly(np.asarray(gap_m, float))
        return np.exp(out) if self._positive else out


@dataclass(frozen=True)
class Lift:
    """The part's lift from the pick gap to contact.

    pick_time_s : time from rest to contact [s] (inf: it stalls; 0: no lift, the holding gap
        is not below the pick gap, the part is held where it is picked); contact_speed_m_per_s :
        its speed at contact [m/s] (nan where it stalls, 0 without a lift); stall_gap_m : where
        it stops and falls back [m] (nan if it arrives); travel_m : pick gap minus holding gap [m]
    """

    pick_time_s: float
    contact_speed_m_per_s: float
    stall_gap_m: float
    travel_m: float


def lift_in_time(
    curve: PullCurve, mass_kg: float, weight_against_N: float, pick_gap_m: float, hold_gap_m: float
) -> Lift:
    """The lift from rest at ``pick_gap_m`` to contact at ``hold_gap_m`` under ``curve``.

    Parameters
    ----------
    curve : PullCurve
        Pull [N] against gap [m] (toward the face), at least over [hold_gap_m, pick_gap_m].
    mass_kg : float
        The part's mass [kg].
    weight_against_N : float
        The weight's component against the pull [N] (``weight_against_pull``).
    pick_gap_m, hold_gap_m : float
        Where it starts (at rest) and where it touches [m].

    Returns
    -------
    Lift
        Time and speed from the energy integral (module docstring); a part whose net force at
        the start is not toward the face, or whose kinetic energy returns to zero on the way,
        stalls (inf time).
    """
    d = pick_gap_m - hold_gap_m
    if not d > 0:  # held where it is picked: no lift
        return Lift(0.0, 0.0, math.nan, float(d))
    m = mass_kg
    net0 = float(curve(pick_gap_m)) - weight_against_N
    if not net0 > 0:
        return Lift(math.inf, math.nan, float(pick_gap_m), float(d))

    def net(x):
        return curve(pick_gap_m - x) - weight_against_N

    energy = Chebyshev.interpolate(net, _CHEB_POINTS - 1, domain=[0.0, d]).integ(lbnd=0.0)
    stall = _first_root(energy, d)
    if stall is not None:
        return Lift(math.inf, math.nan, float(pick_gap_m - stall), float(d))
    # t = int_0^d dx / v, x = d u^2: dt = 2 d u du / v(d u^2), finite at u = 0 (v ~ u).
    nodes, weights = _GAUSS
    edges = np.linspace(0.0, 1.0, _PANELS + 1)
    u = (0.5 * (edges[:-1, None] + edges[1:, None]) + 0.5 * np.diff(edges)[:, None] * nodes).ravel()
    w = (0.5 * np.diff(edges)[:, None] * weights).ravel()
    x = d * u * u
    e = energy(x)
    e = np.where(x < 1e-6 * d, net0 * x, e)  # E = net0 x + O(x^2) there, free of rounding
    speed = np.sqrt(2.0 * e / m)
    if not np.all(speed > 0):
        return Lift(math.inf, math.nan, float(pick_gap_m - x[np.argmin(speed)]), float(d))
    ratio = u / speed
    t = float(np.sum(w * 2.0 * d * ratio))
    v = math.sqrt(2.0 * max(float(energy(d)), 0.0) / m)
    return Lift(t, v, math.nan, float(d))


def _first_root(energy: Chebyshev, d: float):
    """The first travel in (0, d] where the kinetic energy returns to zero (None: never)."""
    roots = energy.roots()
    real = roots[np.abs(roots.imag) <= 1e-9 * d].real
    inside = np.sort(real[(real > 1e-9 * d) & (real <= d * (1 + 1e-12))])
    if inside.size:
        return float(inside[0])
    if float(energy(d)) <= 0.0:
        return float(d)
    return None


def quasi_static_numbers(
    contact_speed_m_per_s: float,
    pick_time_s: float,
    conductivity_S_per_m: float,
    part_radius_m: float,
    pole_radius_m: float,
    omega: float,
    coil_q: float,
) -> dict:
    """The numbers that say whether the quasi-static lift holds.

    Returns
    -------
    dict
        ``magnetic_reynolds``: mu0 sigma v L at the contact speed with L the part's radius
        [-] (the currents the motion itself induces against those of the field's change; the
        quasi-static pull assumes it small, e.g. Davidson, An Introduction to
        Magnetohydrodynamics, 2001, ch. 2 on the low-Rm approximation, from memory);
        ``speed_ratio``: v / (omega a) with a the pole's radius [-] (how far the part moves in
        a radian of the drive against the field's own scale; the cycle-averaged pull assumes
        the part stands still over a cycle); ``rise_time_s``: 2 Q / omega [s], the time the
        field takes to build up under a resonant (series-tuned) drive, Q the coil's X / R, and
        ``rise_fraction``: it over the pick time [-].
    """
    v = contact_speed_m_per_s
    rise = 2.0 * coil_q / omega
    return {
        "magnetic_reynolds": mu_0 * conductivity_S_per_m * v * part_radius_m,
        "speed_ratio": v / (omega * pole_radius_m),
        "rise_time_s": rise,
        "rise_fraction": rise / pick_time_s if pick_time_s > 0 else math.inf,
    }
