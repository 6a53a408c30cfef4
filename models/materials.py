"""Material library: electrical, thermal and magnetic properties with the source of every value.

All values are SI. ``conductivity`` is the value at 20 degC; resistivity follows
rho(T) = rho_20 (1 + alpha (T - 20 degC)). Every number carries its source in ``sources``; where the
value is recalled from a handbook rather than read from it here, the source says "from memory".
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from scipy.constants import mu_0

__all__ = [
    "skin_depth",
    "Material",
    "MATERIALS",
    "get_material",
    "resistivity_at",
    "IMPREGNANT_THERMAL_CONDUCTIVITY",
    "BOBBIN_THERMAL_CONDUCTIVITY",
    "RING_CONTACT_CONDUCTANCE",
    "COIL_MAX_TEMPERATURE_C",
    "UNNAMED_CONDUCTOR",
]


@dataclass(frozen=True)
class Material:
    """One material of the library.

    Parameters
    ----------
    name : str
        Library key, as used in design files (``material = "copper"``).
    description : str
        Grade and temper in words.
    conductivity : float
        Electrical conductivity at 20 degC [S/m]. 0 for laminated steel (no eddy currents in the bulk).
    temperature_coefficient : float
        Temperature coefficient of resistivity at 20 degC [1/K].
    density : float
        Mass density [kg/m^3].
    specific_heat : float
        Specific heat capacity [J/(kg K)].
    thermal_conductivity : float
        Thermal conductivity [W/(m K)].
    relative_permeability : float
        Linear relative permeability [-] (1 for non-magnetic metals).
    saturation_flux_density : float or None
        Flux density above which a linear model of this steel no longer holds [T]; None if non-magnetic.
    lamination_thickness, sheet_conductivity : float or None
        For a laminated steel: sheet thickness [m] and the sheets' own conductivity [S/m], used to
        say when the sheets stop being thin against their skin depth.
    max_temperature_C : float or None
        Temperature past which the material stops being what the models assume [degC]: the
        solidus (start of melting) of a metal, the Curie temperature of a steel. The
        electro-thermal coupling (models.thermal.coupling) calls a steady state above it a runaway.
    sources : dict
        Source of each value, by field name.
    """

    name: str
    description: str
    conductivity: float
    temperature_coefficient: float
    density: float
    specific_heat: float
    thermal_conductivity: float
    relative_permeability: float = 1.0
    saturation_flux_density: float | None = None
    sources: dict = field(default_factory=dict)
    lamination_thickness: float | None = None
    sheet_conductivity: float | None = None
    max_temperature_C: float | None = None

    @property
    def is_magnetic(self) -> bool:
        return self.relative_permeability > 1.0


def resistivity_at(
    material_conductivity: float, temperature_coefficient: float, temperature_C: float
):
    """Resistivity at ``temperature_C`` [Ohm m] from the 20 degC conductivity [S/m].

    Notes
    -----
    Linear law rho(T) = rho_20 (1 + alpha (T - 20)), as used in IEC 60028 for annealed copper.
    """
    return (1.0 + temperature_coefficient * (temperature_C - 20.0)) / material_conductivity


_IEC60028 = "IEC 60028 (international annealed copper standard)"
_FROM_MEMORY_HB = (
    "from memory of handbook tables (ASM Metals Handbook / CRC Handbook); check before use"
)

MATERIALS: dict[str, Material] = {
    m.name: m
    for m in [
        Material(
            name="copper",
            description="annealed copper, 100 % IACS",
            conductivity=58.0e6,
            temperature_coefficient=0.00393,
            density=8890.0,
            specific_heat=385.0,
            thermal_conductivity=390.0,
            max_temperature_C=1083.0,
            sources={
                "max_temperature_C": "melting point of pure copper 1084.6 degC (ITS-90 fixed point); 1083 taken for the solidus of annealed commercial copper, from memory",
                "conductivity": _IEC60028 + ": 1/58 Ohm mm^2/m at 20 degC",
                "temperature_coefficient": _IEC60028 + ": 0.00393 /K at 20 degC",
                "density": _IEC60028 + ": 8.89 g/cm^3 at 20 degC",
                "specific_heat": _FROM_MEMORY_HB,
                "thermal_conductivity": _FROM_MEMORY_HB,
            },
        ),
        Material(
            name="aluminium-1350",
            description="electrical-conductor grade aluminium 1350 (EC grade), 61 % IACS",
            conductivity=0.61 * 58.0e6,
            temperature_coefficient=0.00403,
            density=2703.0,
            specific_heat=900.0,
            thermal_conductivity=234.0,
            max_temperature_C=646.0,
            sources={
                "max_temperature_C": "solidus of EC-grade aluminium about 646 degC (pure Al melts at 660.3 degC, ITS-90 fixed point), from memory",
                "conductivity": "IEC 60889 (hard-drawn aluminium wire): 61 % IACS minimum, from memory",
                "temperature_coefficient": "IEC 60889: 0.00403 /K at 20 degC, from memory",
                "density": "IEC 60889: 2.703 g/cm^3, from memory",
                "specific_heat": _FROM_MEMORY_HB,
                "thermal_conductivity": _FROM_MEMORY_HB,
            },
        ),
        Material(
            name="aluminium-6061-t6",
            description="aluminium alloy 6061 in temper T6, 43 % IACS",
            conductivity=0.43 * 58.0e6,
            temperature_coefficient=0.0036,
            density=2700.0,
            specific_heat=896.0,
            thermal_conductivity=167.0,
            max_temperature_C=582.0,
            sources={
                "max_temperature_C": "solidus of 6061 about 582 degC (ASM Metals Handbook vol. 2), from memory",
                "conductivity": "ASM Metals Handbook vol. 2, 6061-T6: 43 % IACS at 20 degC, from memory",
                "temperature_coefficient": "from memory (typical of wrought Al alloys); uncertain +-10 %",
                "density": _FROM_MEMORY_HB,
                "specific_heat": _FROM_MEMORY_HB,
                "thermal_conductivity": _FROM_MEMORY_HB,
            },
        ),
        Material(
            name="brass-c26000",
            description="cartridge brass 70/30 (C26000), annealed, 28 % IACS",
            conductivity=0.28 * 58.0e6,
            temperature_coefficient=0.0016,
            density=8530.0,
            specific_heat=375.0,
            thermal_conductivity=120.0,
            max_temperature_C=915.0,
            sources={
                "max_temperature_C": "solidus of C26000 about 915 degC (ASM Metals Handbook vol. 2), from memory",
                "conductivity": "ASM Metals Handbook vol. 2, C26000: 28 % IACS, from memory",
                "temperature_coefficient": "from memory (handbook range 0.0015-0.002 /K)",
                "density": _FROM_MEMORY_HB,
                "specific_heat": _FROM_MEMORY_HB,
                "thermal_conductivity": _FROM_MEMORY_HB,
            },
        ),
        Material(
            name="electrical-steel-m400",
            description="laminated non-oriented electrical steel, grade M400-50A, stacked pole",
            conductivity=0.0,
            temperature_coefficient=0.0,
            density=7700.0,
            specific_heat=460.0,
            thermal_conductivity=28.0,
            relative_permeability=2000.0,
            saturation_flux_density=1.5,
            lamination_thickness=0.5e-3,
            sheet_conductivity=1.0 / 0.42e-6,
            max_temperature_C=740.0,
            sources={
                "max_temperature_C": "Curie temperature of 2-3 % Si non-oriented steel about 740 degC, from memory",
                "conductivity": "laminated: bulk eddy currents suppressed (common practice, no source)",
                "temperature_coefficient": "0: the stack carries no bulk current (conductivity 0), "
                "so no resistance of it varies with temperature",
                "lamination_thickness": "grade M400-50A: the '50' is the nominal thickness 0.50 mm "
                "(IEC 60404-8-4 grade designation)",
                "sheet_conductivity": "resistivity about 0.42 uOhm m for this loss grade, from memory",
                "density": "IEC 60404-8-4, grade M400-50A: 7.70 g/cm^3 conventional density, from memory",
                "relative_permeability": "linear low-field value of non-oriented steel, from memory",
                "saturation_flux_density": "IEC 60404-8-4, M400-50A: J at 2500 A/m >= 1.53 T, "
                "from memory; linear model taken to hold below 1.5 T",
                "specific_heat": _FROM_MEMORY_HB,
                "thermal_conductivity": "in the plane of the sheets, from memory",
            },
        ),
        Material(
            name="steel-1010",
            description="solid low-carbon steel AISI 1010 (conductive, not laminated)",
            conductivity=7.0e6,
            temperature_coefficient=0.005,
            density=7870.0,
            specific_heat=450.0,
            thermal_conductivity=60.0,
            relative_permeability=1000.0,
            saturation_flux_density=1.6,
            max_temperature_C=770.0,
            sources={
                "max_temperature_C": "Curie temperature of iron 770 degC (CRC Handbook), from memory",
                "conductivity": "ASM Metals Handbook vol. 1, AISI 1010: 0.143 uOhm m, from memory",
                "temperature_coefficient": _FROM_MEMORY_HB,
                "density": _FROM_MEMORY_HB,
                "relative_permeability": "linear mid-field value, from memory; strongly field-dependent",
                "saturation_flux_density": "from memory (knee of the B-H curve of mild steel)",
                "specific_heat": _FROM_MEMORY_HB,
                "thermal_conductivity": _FROM_MEMORY_HB,
            },
        ),
    ]
}


#: Thermal conductivity of the resin or varnish between the turns of an impregnated winding
#: [W/(m K)] (epoxy and polyester varnishes 0.15-0.25, from memory of handbook tables).
IMPREGNANT_THERMAL_CONDUCTIVITY = 0.2
#: Thermal conductivity of the bobbin or insulating liner between the pole and the coil's inner
#: radius [W/(m K)] (glass-filled polyamide about 0.25-0.35, from memory).
BOBBIN_THERMAL_CONDUCTIVITY = 0.25
#: Contact conductance between the shading ring and the walls of its groove [W/(m^2 K)]: a pressed
#: metal-to-metal joint in air, 1/h = 2e-4 m^2 K/W (order of the metallic interfaces of Incropera,
#: Fundamentals of Heat and Mass Transfer, Table 3.1/3.2, from memory). A brazed ring conducts better.
RING_CONTACT_CONDUCTANCE = 5000.0
#: Ceiling of a winding's temperature [degC]: the organic insulation of magnet wire decomposes
#: above about 400 degC, well past the highest IEC 60085 class (250) (common practice, no source).
COIL_MAX_TEMPERATURE_C = 400.0
#: Thermal stand-in for a ring or target given by conductivity only (no library material):
#: aluminium's volumetric heat capacity (the lowest of the library's conductors, so the fastest
#: rise) and its solidus (the lowest ceiling) (conservative choice, common practice, no source).
UNNAMED_CONDUCTOR = {"volumetric_heat_capacity": 2703.0 * 900.0, "max_temperature_C": 646.0}


def get_material(name: str, field_name: str = "material") -> Material:
    """Look up a library material by its name, in any letter case and with surrounding spaces
    ignored; unknown names raise a one-line DesignError naming the field and the nearest name."""
    from models.errors import DesignError, nearest

    key = name.strip().lower() if isinstance(name, str) else None
    if key in MATERIALS:
        return MATERIALS[key]
    raise DesignError(
        f"{field_name} = {name!r}: not in the material library; allowed: "
        f"{', '.join(MATERIALS)}{nearest(str(key if key is not None else name), MATERIALS)}"
    )


def skin_depth(frequency: float, conductivity: float, relative_permeability: float = 1.0) -> float:
    """Skin depth delta = sqrt(2 / (omega mu sigma)) [m] (inf for an insulator or at DC).

    Parameters
    ----------
    frequency : float
        Frequency [Hz].
    conductivity : float
        Conductivity sigma [S/m].
    relative_permeability : float
        Relative permeability mu_r [-].

    Notes
    -----
    Plane-wave penetration depth of a good conductor, e.g. Jackson, Classical Electrodynamics, 3rd ed.,
    eq. (5.165).
    """
    w = 2.0 * math.pi * frequency * mu_0 * relative_permeability * conductivity
    return math.inf if w <= 0.0 else math.sqrt(2.0 / w)
