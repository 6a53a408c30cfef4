"""Material library: electrical, thermal and magnetic properties with the source of every value.

All values are SI. ``conductivity`` is the value at 20 degC; resistivity follows
rho(T) = rho_20 (1 + alpha (T - 20 degC)). Every number carries its source in ``sources``; where the
value is recalled from a handbook rather than read from it here, the source says "from memory".
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy.constants import mu_0

from models.core_loss import CoreLossLaw, classical_specific_loss

__all__ = [
    "skin_depth",
    "Material",
    "MATERIALS",
    "get_material",
    "IMPREGNANT_THERMAL_CONDUCTIVITY",
    "BOBBIN_THERMAL_CONDUCTIVITY",
    "RING_CONTACT_CONDUCTANCE",
    "COIL_MAX_TEMPERATURE_C",
    "CORE_MATERIALS",
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
    core_loss : CoreLossLaw or None
        Hysteresis and excess loss of a core material (models.core_loss); None: not a core or no data.
    saturation_vs_temperature : tuple of (degC, T), optional
        Saturation flux density at temperatures (linear between, constant beyond); empty: the
        one value ``saturation_flux_density`` at any temperature.
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
    core_loss: CoreLossLaw | None = None
    saturation_vs_temperature: tuple = ()

    @property
    def is_magnetic(self) -> bool:
        return self.relative_permeability > 1.0

    def saturation_at(self, temperature_C: float) -> float | None:
        """Saturation flux density at ``temperature_C`` [T] (None if non-magnetic)."""
        table = self.saturation_vs_temperature
        if not table:
            return self.saturation_flux_density
        t, b = zip(*table, strict=True)
        return float(np.interp(temperature_C, t, b))


_IEC60028 = "IEC 60028 (international annealed copper standard)"
_FROM_MEMORY_HB = (
    "from memory of handbook tables (ASM Metals Handbook / CRC Handbook); check before use"
)


def _steel_grade(
    name, description, thickness_mm, resistivity_uohm_m, density, saturation_T, points, sources
) -> Material:
    """A laminated electrical steel: its loss law fitted to ``points`` (B_hat [T], f [Hz], total
    [W/kg]) with the hysteresis exponent 2 (the Steinmetz value, within the 1.6-2.2 of
    published separations of non-oriented steels, from memory) and the sheets' classical loss."""
    d, sigma = thickness_mm * 1e-3, 1.0 / (resistivity_uohm_m * 1e-6)

    def classical(f, b):
        return classical_specific_loss(sigma, d, density, f, b)

    return Material(
        name=name,
        description=description,
        conductivity=0.0,
        temperature_coefficient=0.0,
        density=density,
        specific_heat=460.0,
        thermal_conductivity=28.0,
        relative_permeability=2000.0,
        saturation_flux_density=saturation_T,
        lamination_thickness=d,
        sheet_conductivity=sigma,
        max_temperature_C=740.0,
        core_loss=CoreLossLaw.fitted(points, 2.0, classical, sources["core_loss"]),
        sources={
            "max_temperature_C": "Curie temperature of 2-3 % Si non-oriented steel about 740 degC, "
            "from memory",
            "conductivity": "laminated: bulk eddy currents suppressed (common practice, no source); "
            "the sheets' own eddy currents are in sheet_conductivity",
            "temperature_coefficient": "0: the stack carries no bulk current (conductivity 0), "
            "so no resistance of it varies with temperature",
            "relative_permeability": "linear low-field value of non-oriented steel, from memory",
            "specific_heat": _FROM_MEMORY_HB,
            "thermal_conductivity": "in the plane of the sheets, from memory",
            **sources,
        },
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
        _steel_grade(
            name="electrical-steel-m400",
            description="laminated non-oriented electrical steel, grade M400-50A, stacked pole",
            thickness_mm=0.50,
            resistivity_uohm_m=0.42,
            density=7700.0,
            saturation_T=1.5,
            points=((1.5, 50.0, 4.00), (1.0, 400.0, 42.0)),
            sources={
                "lamination_thickness": "grade M400-50A: the '50' is the nominal thickness 0.50 mm "
                "(IEC 60404-8-4 grade designation)",
                "sheet_conductivity": "resistivity about 0.42 uOhm m for this loss grade, from memory",
                "density": "IEC 60404-8-4, grade M400-50A: 7.70 g/cm^3 conventional density, from memory",
                "saturation_flux_density": "IEC 60404-8-4, M400-50A: J at 2500 A/m >= 1.53 T, "
                "from memory; linear model taken to hold below 1.5 T",
                "core_loss": "1.5 T, 50 Hz: 4.00 W/kg, the grade's maximum specific total loss "
                "(IEC 60404-8-4 grade designation M400-50A); 1.0 T, 400 Hz: 42 W/kg, typical of "
                "makers' tables for this grade, from memory",
            },
        ),
        _steel_grade(
            name="electrical-steel-m270",
            description="laminated non-oriented electrical steel, grade M270-35A, stacked pole",
            thickness_mm=0.35,
            resistivity_uohm_m=0.52,
            density=7650.0,
            saturation_T=1.5,
            points=((1.5, 50.0, 2.70), (1.0, 400.0, 26.0)),
            sources={
                "lamination_thickness": "grade M270-35A: the '35' is the nominal thickness 0.35 mm "
                "(IEC 60404-8-4 grade designation)",
                "sheet_conductivity": "resistivity about 0.52 uOhm m for this loss grade (higher "
                "silicon), from memory",
                "density": "IEC 60404-8-4, grade M270-35A: 7.65 g/cm^3 conventional density, from memory",
                "saturation_flux_density": "J at 2500 A/m about 1.5 T, from memory; linear model "
                "taken to hold below 1.5 T",
                "core_loss": "1.5 T, 50 Hz: 2.70 W/kg, the grade's maximum specific total loss "
                "(IEC 60404-8-4 grade designation M270-35A); 1.0 T, 400 Hz: 26 W/kg, typical of "
                "makers' tables for this grade, from memory",
            },
        ),
        _steel_grade(
            name="electrical-steel-thin-020",
            description="thin-gauge non-oriented electrical steel for medium frequencies, 0.20 mm "
            "sheet, stacked pole",
            thickness_mm=0.20,
            resistivity_uohm_m=0.52,
            density=7650.0,
            saturation_T=1.45,
            points=((1.0, 50.0, 1.2), (1.0, 400.0, 15.0)),
            sources={
                "lamination_thickness": "0.20 mm thin-gauge sheet, a thickness of IEC 60404-8-8 "
                "(thin magnetic steel strip for medium frequencies)",
                "sheet_conductivity": "resistivity about 0.52 uOhm m, from memory",
                "density": "7.65 g/cm^3, from memory",
                "saturation_flux_density": "J at 2500 A/m about 1.45-1.5 T, from memory",
                "core_loss": "1.0 T, 400 Hz: 15 W/kg, about the maximum specific loss IEC 60404-8-8 "
                "gives a 0.20 mm grade (thin strip is specified at 400 Hz, not 50 Hz), from memory; "
                "1.0 T, 50 Hz: 1.2 W/kg, typical, from memory",
            },
        ),
        Material(
            name="ferrite-mnzn",
            description="sintered manganese-zinc power ferrite (non-conducting soft ferrite core)",
            conductivity=0.0,
            temperature_coefficient=0.0,
            density=4800.0,
            specific_heat=700.0,
            thermal_conductivity=4.0,
            relative_permeability=2000.0,
            saturation_flux_density=0.49,
            saturation_vs_temperature=((25.0, 0.49), (100.0, 0.39), (150.0, 0.30), (200.0, 0.15)),
            max_temperature_C=200.0,
            core_loss=CoreLossLaw.fitted(
                ((0.2, 25e3, 100e3 / 4800.0), (0.1, 100e3, 80e3 / 4800.0)),
                alpha=2.5,
                classical=lambda f, b: 0.0,
                source="power ferrite at 100 degC: about 100 kW/m^3 at 25 kHz, 200 mT and 80 "
                "kW/m^3 at 100 kHz, 100 mT, from memory of makers' tables; hysteresis exponent "
                "2.5, from memory (ferrites 2.5-2.8); fitted there, extrapolated to 1-5 kHz",
            ),
            sources={
                "conductivity": "resistivity of Mn-Zn ferrite about 1-10 Ohm m, from memory: its "
                "skin depth at 5 kHz is over 0.3 m, so it is taken as non-conducting",
                "temperature_coefficient": "0: no current flows in it",
                "density": "about 4.8 g/cm^3, from memory",
                "specific_heat": "about 700 J/(kg K), from memory",
                "thermal_conductivity": "about 4 W/(m K), from memory",
                "relative_permeability": "initial permeability about 2000 at 25 degC, from memory; "
                "held constant here though it varies with temperature (a maximum near 100 degC)",
                "saturation_flux_density": "about 0.49 T at 25 degC, 0.39 T at 100 degC falling to "
                "0 at the Curie point, from memory",
                "max_temperature_C": "Curie point about 210-220 degC, from memory; 200 degC taken "
                "as the limit (the saturation flux density collapses toward it)",
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


#: The materials a pole can be made of (magnetic), in library order.
CORE_MATERIALS = tuple(k for k, m in MATERIALS.items() if m.is_magnetic)

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
