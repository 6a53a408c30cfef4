"""Properties of dry air at 1 atm against temperature (Sutherland's law, ideal gas, Table A.4).

References
----------
White, *Viscous Fluid Flow*, Table 1-2 (Sutherland's law for air).
Incropera, DeWitt, Bergman, Lavine, *Fundamentals of Heat and Mass Transfer*, 6th/7th ed.,
Table A.4 (air).
"""

from __future__ import annotations

import numpy as np
from scipy.constants import R as GAS_CONSTANT
from scipy.constants import atm, zero_Celsius

__all__ = ["air_properties"]

#: Molar mass of dry air [kg/mol] (ISO 2533 standard atmosphere, from memory).
_AIR_MOLAR_MASS = 0.0289644
#: Specific heat of air at 1 atm [J/(kg K)] against temperature [K] (Incropera Table A.4, from
#: memory).
_AIR_CP = (
    np.array([250.0, 300.0, 350.0, 400.0, 450.0, 500.0, 600.0, 800.0, 1000.0]),
    np.array([1006.0, 1007.0, 1009.0, 1014.0, 1021.0, 1030.0, 1051.0, 1099.0, 1141.0]),
)


def air_properties(temperature_K):
    """Properties of dry air at 1 atm.

    Parameters
    ----------
    temperature_K : float or array
        Temperature [K].

    Returns
    -------
    (k, nu, alpha, Pr, beta)
        Thermal conductivity [W/(m K)], kinematic viscosity [m^2/s], thermal diffusivity [m^2/s],
        Prandtl number [-], expansion coefficient 1/T of an ideal gas [1/K].

    Notes
    -----
    Viscosity and conductivity by Sutherland's law (White, Viscous Fluid Flow, Table 1-2: air
    mu_0 = 1.716e-5 Pa s, S = 110.4 K; k_0 = 0.0241 W/(m K), S = 194 K, both at 273.15 K), density
    of an ideal gas, c_p from Incropera Table A.4. Within about 2 % of Table A.4 from 250 to 600 K.
    """
    T = np.asarray(temperature_K, dtype=float)
    t0 = zero_Celsius
    mu = 1.716e-5 * (T / t0) ** 1.5 * (t0 + 110.4) / (T + 110.4)
    k = 0.0241 * (T / t0) ** 1.5 * (t0 + 194.0) / (T + 194.0)
    rho = atm * _AIR_MOLAR_MASS / (GAS_CONSTANT * T)
    cp = np.interp(T, *_AIR_CP)
    nu = mu / rho
    alpha = k / (rho * cp)
    return k, nu, alpha, nu / alpha, 1.0 / T
