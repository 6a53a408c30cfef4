"""Losses of a magnetic core: eddy currents in its sheets (as a complex permeability) and the
hysteresis and excess losses of its grade (by loss separation).

Everything is SI; flux densities here are **peak** values B_hat (sqrt 2 times the rms phasor),
as loss data of electrical steels are quoted.

Laminated stack. For flux along sheets of thickness d, conductivity sigma and permeability mu, the
field inside one sheet obeys d^2 B / dx^2 = j omega mu sigma B, so B(x) = B_s cosh(gamma x) /
cosh(gamma d / 2) with gamma = (1 + j) / delta, delta = sqrt(2 / (omega mu sigma)); its mean over the
sheet gives the homogenised permeability

    mu_eff = mu tanh(gamma d / 2) / (gamma d / 2)

(Lammeraner & Stafl, *Eddy Currents*, ch. on laminations; Stoll, *The Analysis of Eddy Currents*).
Im mu_eff < 0 (time factor exp(j omega t)) is the sheets' eddy loss: per unit volume
omega mu_0 |Im mu_eff,r| |H_s|^2 for the rms surface field H_s. At d << delta it tends to the
classical low-frequency loss pi^2 sigma d^2 f^2 B_hat^2 / 6.

Loss separation (Bertotti, IEEE Trans. Magn. 24 (1988) 621): the specific total loss of a grade is

    p = p_classical + k_h f B_hat^alpha + k_e (f B_hat)^1.5          [W/kg]

with the classical term from sigma and d. ``CoreLossLaw.fitted`` finds k_h and k_e from two
specified points (induction, frequency, total loss), so that the three terms add up to the grade's
data exactly there; the hysteresis exponent alpha is stated per grade.
"""

from __future__ import annotations

import cmath
import math
from dataclasses import dataclass

import numpy as np
from scipy.constants import mu_0

__all__ = [
    "lamination_permeability",
    "classical_specific_loss",
    "sheet_loss_density",
    "CoreLossLaw",
    "peak_flux_density",
    "radial_flux_slab_depth",
    "FACE_SLAB_MIN",
    "hysteresis_excess_loss",
    "coil_current_with_core_loss",
]


def lamination_permeability(
    relative_permeability: float, sheet_conductivity: float, thickness: float, frequency: float
) -> complex:
    """Homogenised relative permeability of a laminated stack for flux along its sheets [-].

    Parameters
    ----------
    relative_permeability : float
        mu_r of the sheet steel (linear).
    sheet_conductivity : float
        sigma of one sheet [S/m]; 0 gives mu_r unchanged.
    thickness : float
        Sheet thickness d [m]; 0 gives mu_r unchanged.
    frequency : float
        [Hz].

    Returns
    -------
    complex
        mu_r tanh(gamma d/2) / (gamma d/2), gamma = (1 + j)/delta (module docstring); its imaginary
        part is <= 0.
    """
    w = 2.0 * math.pi * frequency * mu_0 * relative_permeability * sheet_conductivity
    if w <= 0.0 or thickness <= 0.0:
        return complex(relative_permeability)
    x = (1.0 + 1.0j) * thickness / (2.0 * math.sqrt(2.0 / w))  # gamma d / 2
    if abs(x) < 1e-4:  # tanh(x)/x = 1 - x^2/3 + 2 x^4/15
        ratio = 1.0 - x * x / 3.0 + 2.0 * x**4 / 15.0
    else:
        ratio = cmath.tanh(x) / x
    return complex(relative_permeability * ratio)


def sheet_loss_density(
    relative_permeability: float,
    sheet_conductivity: float,
    thickness: float,
    frequency: float,
    b_hat_mean: float,
) -> float:
    """Eddy loss per unit volume of a stack [W/m^3] whose sheets carry the mean peak flux density
    ``b_hat_mean`` along them, from ``lamination_permeability``: omega |Im mu_eff| / (mu_0
    |mu_eff|^2) B_rms^2."""
    mu = lamination_permeability(relative_permeability, sheet_conductivity, thickness, frequency)
    b_rms = b_hat_mean / math.sqrt(2.0)
    return 2.0 * math.pi * frequency * abs(mu.imag) / (mu_0 * abs(mu) ** 2) * b_rms**2


def classical_specific_loss(
    sheet_conductivity: float, thickness: float, density: float, frequency, b_hat
) -> np.ndarray:
    """Classical (low-frequency) eddy loss of thin sheets [W/kg]: pi^2 sigma d^2 f^2 B_hat^2 /
    (6 rho_m); the limit of ``sheet_loss_density`` at d << delta."""
    f, b = np.asarray(frequency, float), np.asarray(b_hat, float)
    return math.pi**2 * sheet_conductivity * thickness**2 * f**2 * b**2 / (6.0 * density)


@dataclass(frozen=True)
class CoreLossLaw:
    """Hysteresis and excess loss of a core material [W/kg] (module docstring).

    alpha : hysteresis exponent [-] (stated); k_h [W/(kg Hz T^alpha)]; k_e [W/(kg (Hz T)^1.5)];
    points : the data the law was fitted to, as (B_hat [T], f [Hz], total [W/kg]);
    source : where the data come from.
    """

    alpha: float
    k_h: float
    k_e: float
    points: tuple
    source: str

    def hysteresis(self, frequency, b_hat):
        """k_h f B_hat^alpha [W/kg]."""
        return self.k_h * np.asarray(frequency, float) * np.abs(b_hat) ** self.alpha

    def excess(self, frequency, b_hat):
        """k_e (f B_hat)^1.5 [W/kg]."""
        return self.k_e * (np.asarray(frequency, float) * np.abs(b_hat)) ** 1.5

    @classmethod
    def fitted(cls, points, alpha, classical, source):
        """k_h and k_e so that classical + hysteresis + excess equals the total at both points.

        Parameters
        ----------
        points : two (B_hat [T], f [Hz], total [W/kg]) at different (f, B_hat)
        alpha : float
            Hysteresis exponent.
        classical : callable
            classical(f, B_hat) [W/kg] of the material (0 for a non-conducting core).
        source : str

        Raises
        ------
        ValueError
            If the data need a negative coefficient (the stated exponent does not fit them).
        """
        a = np.array([[f * b**alpha, (f * b) ** 1.5] for b, f, _ in points])
        rhs = np.array([total - float(classical(f, b)) for b, f, total in points])
        k_h, k_e = np.linalg.solve(a, rhs)
        if k_h < 0.0 or k_e < 0.0:
            raise ValueError(f"loss data {points} need a negative coefficient at alpha = {alpha}")
        return cls(float(alpha), float(k_h), float(k_e), tuple(points), source)


#: Least depth of the pole's face slab [m] (common practice, no source: the depth over which the
#: flux of a pole without a groove turns from the axis to the side).
FACE_SLAB_MIN = 1e-3


def radial_flux_slab_depth(design) -> float:
    """Depth of the pole's face slab [m], where flux running radially crosses the sheets of a real
    stack (``core_radial_flux_fraction`` of both models): the ring's depth, at least
    FACE_SLAB_MIN, at most the pole's length. Not the thermal network's face node
    (models.thermal.network.face_node_thickness)."""
    ring_depth = design.ring.depth if design.ring is not None else 0.0
    return min(max(ring_depth, FACE_SLAB_MIN), design.pole.length)


def peak_flux_density(br, bz) -> np.ndarray:
    """Peak over a period of |B(t)| [T] for rms phasors (B_r, B_z): sqrt(|B_r|^2 + |B_z|^2 +
    |B_r^2 + B_z^2|), the major semi-axis of the field's ellipse times sqrt 2."""
    br, bz = np.asarray(br), np.asarray(bz)
    return np.sqrt(np.abs(br) ** 2 + np.abs(bz) ** 2 + np.abs(br * br + bz * bz))


def hysteresis_excess_loss(law: CoreLossLaw | None, density, frequency, b_hat, volume):
    """Hysteresis and excess losses [W] of a core whose volume elements ``volume`` [m^3] carry
    the peak flux densities ``b_hat`` [T]: sum of density * law(f, B_hat) * volume; (0, 0)
    without a law."""
    if law is None:
        return 0.0, 0.0
    mass = density * np.asarray(volume, float)
    return (
        float(mass @ law.hysteresis(frequency, b_hat)),
        float(mass @ law.excess(frequency, b_hat)),
    )


def coil_current_with_core_loss(voltage: complex, z_in: complex, loss_at) -> complex:
    """Coil current [A rms] of a voltage-driven magnet whose core's hysteresis and excess loss
    is carried by a resistance in series with the coil.

    Parameters
    ----------
    voltage : complex
        Supply voltage phasor [V rms].
    z_in : complex
        Input impedance of the linear model (everything but the hysteresis and excess) [Ohm].
    loss_at : callable
        loss_at(|I|) [W]: the hysteresis and excess loss at coil current |I| [A] (the linear
        model's flux densities scale with the current).

    Returns
    -------
    complex
        I with V = (z_in + R(|I|)) I, R(|I|) = loss_at(|I|) / |I|^2: |I| is the root of
        |I| |z_in + R| = |V| (increasing in |I|, so the root is unique), by bisection to 1e-13.

    Notes
    -----
    The series resistance makes the terminal power equal the linear model's losses plus the
    hysteresis and excess losses (energy balance); it does not shift the phase of the currents
    induced in the ring and the part (a loss angle of the iron would).
    """
    v = abs(voltage)
    if v == 0.0:
        return 0.0j
    hi = v / abs(z_in)

    def excess(x):
        return x * abs(z_in + loss_at(x) / (x * x)) - v

    lo = 0.0
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if excess(mid) > 0.0:
            hi = mid
        else:
            lo = mid
        if hi - lo <= 1e-13 * hi:
            break
    x = 0.5 * (lo + hi)
    return complex(voltage / (z_in + loss_at(x) / (x * x)))
