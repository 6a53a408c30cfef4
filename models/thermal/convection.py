"""Heat-transfer coefficients of outer surfaces to the ambient air: natural convection
(Churchill-Chu for vertical plates and horizontal cylinders, the horizontal-plate correlations;
air at the film temperature) and linearised radiation to large surroundings.

References
----------
Incropera, DeWitt, Bergman, Lavine, *Fundamentals of Heat and Mass Transfer*, 6th/7th ed.:
eq. 1.9 (radiation coefficient), 9.25 (Rayleigh number), 9.26-9.27 (Churchill-Chu, vertical
plate), 9.30-9.32 (horizontal plates), 9.34 (Churchill-Chu, horizontal cylinder), Table 4.1
(shape factor of a disc).
Churchill and Chu, Int. J. Heat Mass Transfer 18 (1975) 1323-1329 and 1049-1053.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.constants import g, zero_Celsius
from scipy.constants import sigma as STEFAN_BOLTZMANN

from models.thermal.air import air_properties

__all__ = [
    "VERTICAL",
    "CYLINDER",
    "UP",
    "DOWN",
    "churchill_chu_vertical",
    "churchill_chu_cylinder",
    "horizontal_plate_up",
    "horizontal_plate_down",
    "natural_convection_coefficient",
    "radiation_coefficient",
]

#: Surface kinds of the convection correlations.
VERTICAL, CYLINDER, UP, DOWN = 0, 1, 2, 3


def churchill_chu_vertical(rayleigh, prandtl):
    """Mean Nusselt number of a vertical plate (or a vertical cylinder thick enough), all Ra.

    Nu_L = {0.825 + 0.387 Ra_L^(1/6) / [1 + (0.492/Pr)^(9/16)]^(8/27)}^2
    (Churchill and Chu 1975; Incropera eq. 9.26).
    """
    psi = (1.0 + (0.492 / prandtl) ** (9.0 / 16.0)) ** (8.0 / 27.0)
    return (0.825 + 0.387 * np.asarray(rayleigh, dtype=float) ** (1.0 / 6.0) / psi) ** 2


def churchill_chu_cylinder(rayleigh, prandtl):
    """Mean Nusselt number of a long horizontal cylinder, Ra_D <= 1e12.

    Nu_D = {0.60 + 0.387 Ra_D^(1/6) / [1 + (0.559/Pr)^(9/16)]^(8/27)}^2
    (Churchill and Chu 1975; Incropera eq. 9.34).
    """
    psi = (1.0 + (0.559 / prandtl) ** (9.0 / 16.0)) ** (8.0 / 27.0)
    return (0.60 + 0.387 * np.asarray(rayleigh, dtype=float) ** (1.0 / 6.0) / psi) ** 2


#: Conduction limit of a small plate in still air: an isothermal disc of diameter D in an infinite
#: medium has the shape factor 2D for its two faces (Incropera Table 4.1), so Nu = 1/pi on the
#: length L = A/P = D/4 of one face. Floors the plate correlations at small Ra.
_PLATE_CONDUCTION_NU = 1.0 / math.pi


def horizontal_plate_up(rayleigh):
    """Nusselt number on L = A/P of the upper face of a hot plate (or lower face of a cold one).

    Nu = 0.54 Ra^(1/4) for Ra <= 1e7, 0.15 Ra^(1/3) above (Incropera eq. 9.30-9.31, stated for
    1e4 to 1e11; used below 1e4 down to the conduction limit of a disc, 1/pi).
    """
    ra = np.asarray(rayleigh, dtype=float)
    nu = np.where(ra <= 1e7, 0.54 * ra**0.25, 0.15 * np.cbrt(ra))
    return np.maximum(nu, _PLATE_CONDUCTION_NU)


def horizontal_plate_down(rayleigh):
    """Nusselt number on L = A/P of the lower face of a hot plate (or upper face of a cold one).

    Nu = 0.52 Ra^(1/5) (Incropera 7th ed. eq. 9.32, stated for 1e4 to 1e9; used below 1e4 down to
    the conduction limit of a disc, 1/pi).
    """
    ra = np.asarray(rayleigh, dtype=float)
    return np.maximum(0.52 * ra**0.2, _PLATE_CONDUCTION_NU)


def natural_convection_coefficient(kind, length, surface_C, ambient_C):
    """Mean natural-convection coefficient of surfaces [W/(m^2 K)], air at the film temperature.

    Parameters
    ----------
    kind : int or int array
        VERTICAL (plate or thick vertical cylinder; ``length`` = height), CYLINDER (horizontal;
        ``length`` = diameter), UP or DOWN (horizontal plate facing up or down; ``length`` = area /
        perimeter).
    length : float or array
        Characteristic length [m].
    surface_C, ambient_C : float or array
        Temperatures [degC].

    Notes
    -----
    Ra_L = g beta |T_s - T_inf| L^3 / (nu alpha), properties at (T_s + T_inf) / 2 (Incropera
    eq. 9.25). A hot surface facing up and a cold one facing down share a correlation.
    """
    ts = np.asarray(surface_C, dtype=float) + zero_Celsius
    ta = np.asarray(ambient_C, dtype=float) + zero_Celsius
    k, nu, alpha, pr, beta = air_properties(0.5 * (ts + ta))
    L = np.asarray(length, dtype=float)
    ra = g * beta * np.maximum(np.abs(ts - ta), 1e-6) * L**3 / (nu * alpha)
    kind = np.asarray(kind)
    hot = ts >= ta
    plume_up = np.where(hot, kind == UP, kind == DOWN)
    nusselt = np.where(
        kind == VERTICAL,
        churchill_chu_vertical(ra, pr),
        np.where(
            kind == CYLINDER,
            churchill_chu_cylinder(ra, pr),
            np.where(plume_up, horizontal_plate_up(ra), horizontal_plate_down(ra)),
        ),
    )
    return nusselt * k / L


def radiation_coefficient(emissivity, surface_C, ambient_C):
    """Linearised radiation coefficient to large surroundings [W/(m^2 K)].

    h_r = eps sigma (T_s^2 + T_inf^2)(T_s + T_inf), temperatures in K (Incropera eq. 1.9).
    """
    ts = np.asarray(surface_C, dtype=float) + zero_Celsius
    ta = np.asarray(ambient_C, dtype=float) + zero_Celsius
    return emissivity * STEFAN_BOLTZMANN * (ts * ts + ta * ta) * (ts + ta)
