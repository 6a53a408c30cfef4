"""The supply side of the magnet: a compensating capacitor in series or in parallel with the coil.

A bare coil has a power factor of a few per cent: the supply carries its reactive power. Practice
adds a capacitor, in parallel on a fixed mains supply (the line then sees about the real power)
or in series with an inverter (resonance: the inverter sees about the coil's resistance, the
capacitor about Q times the supply voltage). The capacitor is ideal here (no loss): it takes no
real power, so the supply's real power is the coil's terminal power.

Everything is SI and rms phasors. With Z = R + jX the coil's terminal impedance (iron loss
included) and C the capacitance, Z_C = 1/(j omega C):

* series: I_supply = I_coil, V_supply = V_coil + Z_C I_coil, V_C = Z_C I_coil, I_C = I_coil;
* parallel: V_supply = V_coil, I_supply = I_coil + V_coil / Z_C, V_C = V_coil,
  I_C = j omega C V_coil.

Tuned for unity power factor at one state (``tuned_capacitance``): series C = 1/(omega X) (the
supply sees Z + Z_C = R), parallel C = X/(omega |Z|^2) (the admittance 1/Z + j omega C is real).
Sources: the series and parallel RLC circuits of Nilsson and Riedel, *Electric Circuits*
(resonance omega_0 = 1/sqrt(LC), Q = omega_0 L / R, ch. 14 of the 9th edition; the parallel
correction of power factor, ch. 10 "power factor correction"), from memory.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

__all__ = [
    "COMPENSATIONS",
    "SupplyState",
    "capacitor_impedance",
    "series_impedance",
    "supply_state",
    "tuned_capacitance",
]

#: The ways a capacitor may sit between the supply and the coil ([drive] compensation).
COMPENSATIONS = ("none", "series", "parallel")


def capacitor_impedance(capacitance_F: float, omega: float) -> complex:
    """Z_C = 1/(j omega C) [Ohm] of a capacitance [F] at angular frequency omega [rad/s]."""
    return complex(0.0, -1.0 / (omega * capacitance_F))


def tuned_capacitance(compensation: str, omega: float, impedance: complex) -> float:
    """The capacitance [F] that makes the supply's power factor one at a coil impedance [Ohm].

    Parameters
    ----------
    compensation : str
        "series" or "parallel".
    omega : float
        Angular frequency [rad/s].
    impedance : complex
        The coil's terminal impedance Z = R + jX [Ohm] at the tuning state (X > 0).

    Returns
    -------
    float
        series: C = 1/(omega X) (Z + 1/(j omega C) = R); parallel: C = X/(omega |Z|^2)
        (Im(1/Z) + omega C = 0). nan where X <= 0 (nothing inductive to compensate).
    """
    x = impedance.imag
    if not x > 0.0:
        return math.nan
    if compensation == "series":
        return 1.0 / (omega * x)
    if compensation == "parallel":
        return x / (omega * abs(impedance) ** 2)
    raise ValueError(f"compensation = {compensation!r}: allowed: series, parallel")


def series_impedance(drive) -> complex:
    """The impedance [Ohm] a voltage-driven coil sees in series besides its own: the series
    capacitor's Z_C when ``drive.compensation`` is "series" and its capacitance is fixed, else 0."""
    if getattr(drive, "compensation", "none") != "series" or drive.capacitance is None:
        return 0j
    return capacitor_impedance(drive.capacitance, drive.omega)


@dataclass(frozen=True)
class SupplyState:
    """Supply and capacitor phasors of one state [V rms, A rms, complex]."""

    supply_voltage: complex
    supply_current: complex
    capacitor_voltage: complex
    capacitor_current: complex

    @property
    def supply_VA(self) -> float:
        """|V_supply| |I_supply| [VA]."""
        return abs(self.supply_voltage) * abs(self.supply_current)

    @property
    def supply_power_W(self) -> float:
        """Re(V_supply conj(I_supply)) [W]: the real power the supply delivers."""
        return float((self.supply_voltage * self.supply_current.conjugate()).real)

    @property
    def capacitor_reactive_VA(self) -> float:
        """|V_C| |I_C| [var]: the capacitor's reactive power."""
        return abs(self.capacitor_voltage) * abs(self.capacitor_current)


def supply_state(
    compensation: str, capacitance_F: float | None, omega: float, coil_voltage, coil_current
) -> SupplyState:
    """The supply's and the capacitor's phasors from the coil's terminal voltage and current.

    Parameters
    ----------
    compensation : str
        "none", "series" or "parallel" (``COMPENSATIONS``).
    capacitance_F : float or None
        The capacitance [F] (ignored for "none").
    omega : float
        Angular frequency [rad/s].
    coil_voltage, coil_current : complex
        The coil's terminal voltage [V rms] and current [A rms].

    Returns
    -------
    SupplyState
        Kirchhoff's laws of the two connections (module docstring); for "none" the supply is
        the coil's terminals and the capacitor's phasors are zero.
    """
    v, i = complex(coil_voltage), complex(coil_current)
    if compensation == "none" or capacitance_F is None:
        return SupplyState(v, i, 0j, 0j)
    z_c = capacitor_impedance(capacitance_F, omega)
    if compensation == "series":
        v_c = z_c * i
        return SupplyState(v + v_c, i, v_c, i)
    i_c = v / z_c
    return SupplyState(v, i + i_c, v, i_c)
