"""One shaded-pole design: dataclasses (SI inside), reading from TOML (mm, Hz, A rms) and validation.

Geometry (DESIGN.md): axis z along the pole, pole face at z = 0, core in z < 0, target in z > 0.

* pole: solid cylinder r <= R_p, -L <= z <= 0, with the ring's groove cut out of its face;
* ring: r_i <= r <= r_o, -depth <= z <= 0 (inlaid flush, filling its groove);
* coil: r_ci <= r <= r_co, -(setback + length) <= z <= -setback;
* target: r_ti <= r <= r_t, gap <= z <= gap + thickness.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from scipy.constants import g as standard_gravity

from models.core_loss import lamination_permeability
from models.materials import MATERIALS

MM = 1e-3
#: Steel left on each side of the groove [mm] (common practice, no source: a thinner wall is not
#: machinable and does not hold the ring).
MIN_WALL_MM = 0.2
#: Copper fill of the coil window (copper area over the window's (outer - inner radius) x length)
#: when a coil gives its turns without a wire diameter, or its wire without turns or a fill
#: factor: 0.6, what a random winding of round enamelled wire reaches on a plain bobbin (common
#: practice, no source: 0.5-0.6 random wound, up to about 0.75 wound layer by layer).
DEFAULT_FILL_FACTOR = 0.6
#: Highest copper fill a file may give (``coil.fill_factor``): round wires packed hexagonally
#: cover pi / (2 sqrt 3) = 0.907 of a plane (the densest circle packing, Lagrange/Thue, from
#: memory), before enamel and the bobbin take their share.
MAX_FILL_FACTOR = 0.9


@dataclass(frozen=True)
class Pole:
    """Steel pole: radius [m], length [m], relative permeability [-], conductivity [S/m] (0 = laminated
    or non-conducting), saturation flux density [T] (None if unknown), sheet thickness [m] and
    the sheets' conductivity [S/m] of a laminated stack (None: thin sheets, no eddy loss), the
    core's hysteresis and excess loss law (models.core_loss.CoreLossLaw; None: not modelled) and
    its mass density [kg/m^3]."""

    radius: float
    length: float
    relative_permeability: float
    conductivity: float
    material: str | None = None
    saturation_flux_density: float | None = None
    lamination_thickness: float | None = None
    sheet_conductivity: float | None = None
    core_loss: object = None
    density: float = 7700.0

    @property
    def laminated(self) -> bool:
        return self.conductivity == 0.0

    def effective_permeability(self, frequency: float) -> complex:
        """Relative permeability the models use at ``frequency``: complex for a laminated stack
        with sheet data (models.core_loss.lamination_permeability), else the real mu_r."""
        if not self.lamination_thickness or not self.sheet_conductivity:
            return complex(self.relative_permeability)
        return lamination_permeability(
            self.relative_permeability,
            self.sheet_conductivity,
            self.lamination_thickness,
            frequency,
        )

    def saturation_at(self, temperature_C: float) -> float | None:
        """Saturation flux density [T] at ``temperature_C``: the library material's table where it
        has one, else ``saturation_flux_density``."""
        m = MATERIALS.get(self.material or "")
        if (
            m is not None
            and m.saturation_vs_temperature
            and self.saturation_flux_density == (m.saturation_flux_density)
        ):
            return m.saturation_at(temperature_C)
        return self.saturation_flux_density


@dataclass(frozen=True)
class Coil:
    """Stranded coil; lengths [m]; conductivity of the wire [S/m] at 20 degC; temperature coefficient
    [1/K]; wire_diameter [m] (None: derived from DEFAULT_FILL_FACTOR); fill_factor: the copper
    fill the file gave (``coil.fill_factor``, or DEFAULT_FILL_FACTOR for a wire given without
    turns) from which ``turns`` followed, None when the file gave the turns."""

    inner_radius: float
    outer_radius: float
    setback: float
    length: float
    turns: int
    wire_diameter: float | None
    conductivity: float
    temperature_coefficient: float
    material: str = "copper"
    #: +1 or -1: the direction the turns are wound in ([[coils]]; [coil] is +1)
    sense: int = 1
    fill_factor: float | None = None

    @property
    def z_front(self) -> float:
        return -self.setback

    @property
    def z_back(self) -> float:
        return -(self.setback + self.length)

    @property
    def window_area(self) -> float:
        return (self.outer_radius - self.inner_radius) * self.length

    @property
    def mean_radius(self) -> float:
        return 0.5 * (self.inner_radius + self.outer_radius)

    @property
    def wire_area(self) -> float:
        """Copper cross-section of one turn [m^2]."""
        if self.wire_diameter is not None:
            return math.pi * self.wire_diameter**2 / 4.0
        fill = DEFAULT_FILL_FACTOR if self.fill_factor is None else self.fill_factor
        return fill * self.window_area / self.turns

    def resistance(self, temperature_C: float = 20.0) -> float:
        """DC resistance of the winding [Ohm] at ``temperature_C``: rho(T) N 2 pi r_mean / A_wire."""
        rho = (1.0 + self.temperature_coefficient * (temperature_C - 20.0)) / self.conductivity
        return rho * self.turns * 2.0 * math.pi * self.mean_radius / self.wire_area

    @property
    def conductor_volume(self) -> float:
        """Volume of the winding's conductor [m^3]: turns x 2 pi r_mean x wire area (the
        enamel and the leads left out)."""
        return self.turns * 2.0 * math.pi * self.mean_radius * self.wire_area


def turns_in_window(window_mm2: float, wire_diameter_mm: float, fill_factor: float) -> int:
    """Whole turns of a round wire of ``wire_diameter_mm`` [mm] whose copper fills at most
    ``fill_factor`` of a window of ``window_mm2`` [mm^2]: floor(fill x window / (pi d^2 / 4))."""
    return math.floor(fill_factor * window_mm2 / (math.pi * wire_diameter_mm**2 / 4.0) + 1e-9)


def coil_fill(coil: dict) -> float | None:
    """The copper fill a coil table (file units) gave its turns by: None when it gives
    ``turns``, else its ``fill_factor`` (default DEFAULT_FILL_FACTOR)."""
    return None if "turns" in coil else coil.get("fill_factor", DEFAULT_FILL_FACTOR)


def coil_turns(coil: dict) -> int:
    """The turns of a ``[coil]`` table (file units): its ``turns``, else those of its wire in
    its window at its ``fill_factor`` (default DEFAULT_FILL_FACTOR), ``turns_in_window``."""
    if "turns" in coil:
        return int(coil["turns"])
    window = (coil["outer_radius_mm"] - coil["inner_radius_mm"]) * coil["length_mm"]
    fill = coil.get("fill_factor", DEFAULT_FILL_FACTOR)
    return turns_in_window(window, coil["wire_diameter_mm"], fill)


@dataclass(frozen=True)
class Drive:
    """Supply: frequency [Hz]; exactly one of current [A rms] (the coil's) and voltage [V rms]
    (the supply's); the compensating capacitor ("none", "series" or "parallel", models.supply)
    and its capacitance [F] (None: tuned for unity power factor at the design point)."""

    frequency: float
    current: float | None = None
    voltage: float | None = None
    compensation: str = "none"
    capacitance: float | None = None

    @property
    def omega(self) -> float:
        return 2.0 * math.pi * self.frequency


@dataclass(frozen=True)
class Ring:
    """Shading ring inlaid flush in the pole face: radii and depth [m]; conductivity [S/m] at 20 degC."""

    inner_radius: float
    outer_radius: float
    depth: float
    conductivity: float
    temperature_coefficient: float
    material: str | None = None
    density: float = 8890.0
    #: A shading winding (models.shading): its turns (None: a solid ring), wire diameter [m]
    #: (None: the copper fills the groove's section), and what closes it: a capacitance [F]
    #: and / or a resistance [Ohm] in series (0: shorted).
    turns: int | None = None
    wire_diameter: float | None = None
    capacitance: float | None = None
    closing_resistance: float | None = None

    @property
    def width(self) -> float:
        return self.outer_radius - self.inner_radius

    @property
    def winding(self) -> bool:
        """True for a shading winding of ``turns`` turns, False for a solid ring."""
        return self.turns is not None


@dataclass(frozen=True)
class Target:
    """Target disc or washer: radii, thickness, gap [m]; conductivity [S/m] at 20 degC; density
    [kg/m^3]."""

    radius: float
    thickness: float
    gap: float
    conductivity: float
    temperature_coefficient: float
    density: float
    inner_radius: float = 0.0
    material: str | None = None
    offset: float = 0.0  # the part's centre along +x from the pole's axis [m] (models.fast.offset)

    @property
    def volume(self) -> float:
        """The part's volume [m^3]."""
        return math.pi * (self.radius**2 - self.inner_radius**2) * self.thickness

    @property
    def mass(self) -> float:
        """The part's mass [kg]: density x volume."""
        return self.density * self.volume

    @property
    def weight(self) -> float:
        """The part's weight [N]: its mass times standard gravity (scipy.constants.g,
        9.80665 m/s^2, CGPM 1901); the result's ``target_weight_N``."""
        return self.mass * standard_gravity


#: IEC 60085:2007 thermal classes: letter -> class temperature [degC] (Table 1 of the standard:
#: 90 (Y), 105 (A), 120 (E), 130 (B), 155 (F), 180 (H), 200 (N), 220 (R), 250).
INSULATION_CLASSES = {
    "Y": 90.0,
    "A": 105.0,
    "E": 120.0,
    "B": 130.0,
    "F": 155.0,
    "H": 180.0,
    "N": 200.0,
    "R": 220.0,
}
#: Where the magnet's axis points: the face down (a lifter above its parts), up, or sideways.
ORIENTATIONS = ("face-down", "face-up", "horizontal")


@dataclass(frozen=True)
class ThermalSettings:
    """Thermal surroundings and duty of a design (models.thermal). Temperatures [degC], times [s].

    ambient_C : air temperature; convection : heat-transfer coefficient of every outer surface
    [W/(m^2 K)] (None: natural convection, Churchill-Chu and horizontal-plate correlations);
    emissivity : of the outer surfaces for radiation (0: none); duty_cycle : on-time fraction;
    period : on-off period (None: unknown); hold_time : how long a part is held; coil_class_C :
    insulation class temperature (IEC 60085) and coil_class its name; ring_limit_C,
    target_limit_C : optional limits set by the user; orientation : one of ORIENTATIONS;
    ring_contact_conductance : ring to groove walls [W/(m^2 K)]; winding_conductivity : effective
    conductivity of the winding [W/(m K)] (None: from the copper fill factor); target_arrival_C :
    the part's temperature as it arrives (None: the ambient); hold_gap : the gap a held part sits
    at [m] (None: the target's gap); target_stays : the part stays under the pole (a holding
    application): taken at its steady state.

    The defaults are the design without [thermal]: 25 degC ambient (IEC 60034-1 and IEC 60204-1
    work from 40 degC at most; 25 degC is a factory floor, common practice, no source), natural
    convection, no radiation (conservative), continuous duty (conservative), class B (130 degC,
    conservative for enamelled wire, most of which is class F or H), a 10 s hold, the face down.
    """

    ambient_C: float = 25.0
    convection: float | None = None
    emissivity: float = 0.0
    duty_cycle: float = 1.0
    period: float | None = None
    hold_time: float = 10.0
    coil_class_C: float = 130.0
    coil_class: str = "B"
    ring_limit_C: float | None = None
    target_limit_C: float | None = None
    orientation: str = "face-down"
    ring_contact_conductance: float = 5000.0
    winding_conductivity: float | None = None
    target_arrival_C: float | None = None
    hold_gap: float | None = None
    target_stays: bool = False


@dataclass(frozen=True)
class Supply:
    """Limits of the supply (None: no limit): rms voltage [V], rms current [A], apparent power
    [VA] at the supply's terminals (the capacitor's other side, models.supply), and the
    capacitor's rating [V rms] (``capacitor_rating_V``)."""

    max_voltage: float | None = None
    max_current: float | None = None
    max_apparent_power: float | None = None
    max_capacitor_voltage: float | None = None


@dataclass(frozen=True)
class Design:
    """A complete design. ``source`` keeps the file's own values (mm, Hz, A) for sweeps and hand-off.

    ``pole`` is None for an air core (no [pole]: the face is the plane ``setback`` and ``gap`` are
    measured from). ``coils`` holds the coils of a ``[[coils]]`` file (models.coils), all in
    series, ``coil`` being the first of them; it is empty for the one-coil form ``[coil]``.
    ``windings`` is every coil either way."""

    pole: Pole | None
    coil: Coil
    drive: Drive
    target: Target
    ring: Ring | None = None
    name: str = "design"
    source: dict = field(default_factory=dict, compare=False, repr=False)
    thermal: ThermalSettings = ThermalSettings()
    supply: Supply | None = None
    #: What the reader took on the user's behalf (each becomes a warning of every result).
    notes: tuple = field(default=(), compare=False)
    #: Properties set on the validated parts by ``edit`` (((part, attribute), SI value), ...):
    #: with ``source`` they say everything the parts hold; ``edit`` sets them again on a part it
    #: rebuilds from the file.
    properties: tuple = field(default=(), compare=False, repr=False)
    coils: tuple = ()

    @property
    def windings(self) -> tuple:
        """Every coil of the design ([coil] or each of [[coils]]), in file order."""
        return self.coils or (self.coil,)

    @property
    def air_core(self) -> bool:
        """True without a pole: the coils alone make the field."""
        return self.pole is None
