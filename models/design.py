"""One shaded-pole design: dataclasses (SI inside), reading from TOML (mm, Hz, A rms) and validation.

Geometry (DESIGN.md): axis z along the pole, pole face at z = 0, core in z < 0, target in z > 0.

* pole: solid cylinder r <= R_p, -L <= z <= 0, with the ring's groove cut out of its face;
* ring: r_i <= r <= r_o, -depth <= z <= 0 (inlaid flush, filling its groove);
* coil: r_ci <= r <= r_co, -(setback + length) <= z <= -setback;
* target: r_ti <= r <= r_t, gap <= z <= gap + thickness.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, field, fields, replace
from pathlib import Path

from models.core_loss import lamination_permeability
from models.errors import DesignError, nearest
from models.materials import MATERIALS, get_material

__all__ = [
    "Pole",
    "Coil",
    "Drive",
    "Ring",
    "Target",
    "Thermal",
    "Supply",
    "Design",
    "load_design",
    "read_toml",
    "design_from_dict",
    "with_value",
    "with_gap",
    "resolve_key",
    "DESIGN_KEYS",
    "MIN_WALL_MM",
    "DEFAULT_FILL_FACTOR",
    "INSULATION_CLASSES",
]

MM = 1e-3
#: Steel left on each side of the groove [mm] (common practice, no source: a thinner wall is not
#: machinable and does not hold the ring).
MIN_WALL_MM = 0.2
#: Copper fill of the coil window when no wire diameter is given (common practice, no source).
DEFAULT_FILL_FACTOR = 0.6


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
    [1/K]; wire_diameter [m] (None: derived from DEFAULT_FILL_FACTOR)."""

    inner_radius: float
    outer_radius: float
    setback: float
    length: float
    turns: int
    wire_diameter: float | None
    conductivity: float
    temperature_coefficient: float
    material: str = "copper"

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
        return DEFAULT_FILL_FACTOR * self.window_area / self.turns

    def resistance(self, temperature_C: float = 20.0) -> float:
        """DC resistance of the winding [Ohm] at ``temperature_C``: rho(T) N 2 pi r_mean / A_wire."""
        rho = (1.0 + self.temperature_coefficient * (temperature_C - 20.0)) / self.conductivity
        return rho * self.turns * 2.0 * math.pi * self.mean_radius / self.wire_area


@dataclass(frozen=True)
class Drive:
    """Supply: frequency [Hz]; exactly one of current [A rms] and voltage [V rms]."""

    frequency: float
    current: float | None = None
    voltage: float | None = None

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

    @property
    def width(self) -> float:
        return self.outer_radius - self.inner_radius


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
        return math.pi * (self.radius**2 - self.inner_radius**2) * self.thickness


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
class Thermal:
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
    [VA]."""

    max_voltage: float | None = None
    max_current: float | None = None
    max_apparent_power: float | None = None


@dataclass(frozen=True)
class Design:
    """A complete design. ``source`` keeps the file's own values (mm, Hz, A) for sweeps and hand-off."""

    pole: Pole
    coil: Coil
    drive: Drive
    target: Target
    ring: Ring | None = None
    name: str = "design"
    source: dict = field(default_factory=dict, compare=False, repr=False)
    thermal: Thermal = Thermal()
    supply: Supply | None = None
    #: What the reader took on the user's behalf (each becomes a warning of every result).
    notes: tuple = field(default=(), compare=False)
    #: Properties set on the validated parts by ``edit`` (((part, attribute), SI value), ...):
    #: with ``source`` they say everything the parts hold; ``edit`` sets them again on a part it
    #: rebuilds from the file.
    properties: tuple = field(default=(), compare=False, repr=False)


# ----------------------------------------------------------------------------------------------
# File keys: table -> key -> (kind, required). Kinds: "pos" > 0, "nonneg" >= 0, "int" positive
# integer, "str" string, "num" any finite number.
DESIGN_KEYS: dict[str, dict[str, tuple[str, bool]]] = {
    "pole": {
        "radius_mm": ("pos", True),
        "length_mm": ("pos", True),
        "material": ("str", False),
        "relative_permeability": ("pos", False),
        "conductivity_S_per_m": ("nonneg", False),
        "saturation_flux_density_T": ("pos", False),
        "lamination_thickness_mm": ("pos", False),
        "sheet_conductivity_S_per_m": ("nonneg", False),
    },
    "coil": {
        "inner_radius_mm": ("pos", True),
        "outer_radius_mm": ("pos", True),
        "setback_mm": ("nonneg", True),
        "length_mm": ("pos", True),
        "turns": ("int", True),
        "wire_diameter_mm": ("pos", False),
        "material": ("str", False),
    },
    "drive": {
        "frequency_Hz": ("pos", True),
        "current_A": ("pos", False),
        "voltage_V": ("pos", False),
    },
    "ring": {
        "inner_radius_mm": ("pos", True),
        "outer_radius_mm": ("pos", True),
        "depth_mm": ("pos", True),
        "material": ("str", False),
        "conductivity_S_per_m": ("pos", False),
        "temperature_coefficient_per_K": ("nonneg", False),
        "density_kg_per_m3": ("pos", False),
    },
    "target": {
        "radius_mm": ("pos", True),
        "thickness_mm": ("pos", True),
        "gap_mm": ("pos", True),
        "inner_radius_mm": ("nonneg", False),
        "material": ("str", False),
        "conductivity_S_per_m": ("pos", False),
        "temperature_coefficient_per_K": ("nonneg", False),
        "density_kg_per_m3": ("pos", False),
        "offset_mm": ("num", False),
    },
    "thermal": {
        "ambient_C": ("num", False),
        "convection_W_per_m2K": ("pos", False),
        "emissivity": ("unit", False),
        "duty_cycle": ("frac", False),
        "period_s": ("pos", False),
        "hold_time_s": ("pos", False),
        "coil_insulation_class": ("class", False),
        "ring_limit_C": ("num", False),
        "target_limit_C": ("num", False),
        "orientation": ("str", False),
        "ring_contact_W_per_m2K": ("pos", False),
        "winding_conductivity_W_per_mK": ("pos", False),
        "target_arrival_C": ("num", False),
        "hold_gap_mm": ("pos", False),
        "target_stays": ("bool", False),
    },
    "supply": {
        "max_voltage_V": ("pos", False),
        "max_current_A": ("pos", False),
        "max_VA": ("pos", False),
    },
}
#: Tables a design may leave out.
_OPTIONAL_TABLES = ("ring", "thermal", "supply")
_TOP_KEYS = {"name": "str", "description": "str"}
_REQUIRED_TABLES = ("pole", "coil", "drive", "target")
_ALLOWED = {
    "pos": "a number > 0",
    "nonneg": "a number >= 0",
    "int": "a whole number >= 1",
    "str": "a string",
    "num": "a number",
    "frac": "a number > 0 and <= 1",
    "unit": "a number from 0 to 1",
    "bool": "true or false",
    "class": "an IEC 60085 class letter (" + ", ".join(INSULATION_CLASSES) + ") or a temperature "
    "in degC",
}


#: Plausible file values, by the end of the key name (inclusive; 0 stays allowed where a key
#: allows it). Far outside these a value is a slip of units or a typo rather than a design, and
#: the model's arithmetic under- or overflows or its iron panels run into the millions. They are
#: deliberately wide: values inside them but outside the validated range only warn
#: (models.evaluate.VALIDATED_RANGE). Common practice, no source, except where stated.
PLAUSIBLE_LIMITS = {
    "_mm": (1e-3, 1e3),  # 1 um to 1 m: parts, gaps and poles of a lifter for small parts
    # an AC magnet; quasi-static while the parts are << the 0.3 m wavelength at 1 GHz
    "_Hz": (1e-3, 1e9),
    "_A": (1e-6, 1e5),
    "_V": (1e-6, 1e6),
    "turns": (1, 1e6),
    "_S_per_m": (1.0, 1e9),  # silver, the best conductor, is 6.3e7 S/m (CRC Handbook, from memory)
    "relative_permeability": (1.0, 1e7),  # supermalloy reaches about 1e6 (from memory)
    "_T": (1e-3, 100.0),  # the best iron-cobalt steels saturate near 2.4 T (from memory)
    "_kg_per_m3": (1.0, 1e5),
    # metals' resistivity rises 0.3-0.7 %/K near room temperature (from memory); 10 %/K is a slip
    "_per_K": (1e-6, 0.1),  # osmium, the densest element, is 22 590 kg/m^3 (from memory)
    "_C": (-273.15, 5000.0),  # absolute zero to above every metal's boiling point
    "_s": (1e-6, 1e10),  # a microsecond to three centuries
    "_W_per_m2K": (1e-3, 1e7),  # boiling water reaches ~1e5 W/(m^2 K) (from memory)
    "_W_per_mK": (1e-3, 1e4),  # diamond, the best solid conductor of heat, ~2200 (from memory)
    "_VA": (1e-6, 1e9),
}
#: Finest face feature (2 x gap, target radius, ring width, depth, inner radius) as a fraction
#: of the pole radius: the pole's face panels are a quarter of the finest feature, so their
#: count grows as this ratio (measured at the limit: up to about 2500 panels, 3 s and 0.6 GB).
MAX_FEATURE_RATIO = 500.0
#: Longest pole against its radius: the side panels are at most a quarter radius long.
MAX_POLE_ASPECT = 100.0


def _is_finite(value) -> bool:
    try:
        return math.isfinite(value)
    except OverflowError:  # an int beyond the float range
        return False


def _plausible(where: str, value, kind: str, problems: list[str]):
    """``value`` if inside PLAUSIBLE_LIMITS for its key (or 0 where allowed), else None."""
    limits = [v for k, v in PLAUSIBLE_LIMITS.items() if where.endswith(k)]
    if where.endswith("offset_mm"):  # signed; its bound is the part's and the pole's radii
        limits = []
    if not limits or (kind == "nonneg" and value == 0) or limits[0][0] <= value <= limits[0][1]:
        return value
    lo, hi = limits[0]
    zero = "0 or " if kind == "nonneg" else ""
    problems.append(f"{where} = {value!r}: must be {zero}between {lo:g} and {hi:g}")
    return None


def _check_value(where: str, value, kind: str, problems: list[str]):
    """Return the checked value or None (with a line appended to ``problems``)."""
    if kind == "str":
        if isinstance(value, str):
            return value
    elif kind == "bool":
        if isinstance(value, bool):
            return value
    elif kind == "class":
        if isinstance(value, (str, int, float)) and not isinstance(value, bool):
            return value  # checked against IEC 60085 in _insulation_class (nan and inf fail there)
    elif kind == "int":
        if isinstance(value, int) and not isinstance(value, bool) and value >= 1:
            return _plausible(where, value, kind, problems)
    elif isinstance(value, (int, float)) and not isinstance(value, bool) and _is_finite(value):
        if (
            (kind == "pos" and value > 0)
            or (kind == "nonneg" and value >= 0)
            or kind == "num"
            or (kind == "frac" and 0 < value <= 1)
            or (kind == "unit" and 0 <= value <= 1)
        ):
            return _plausible(where, float(value), kind, problems)
    problems.append(f"{where} = {value!r}: must be {_ALLOWED[kind]}")
    return None


# ----------------------------------------------------------------------------------------------
# Reading a design in four steps, each adding its problems to one list: (1) the schema check of
# every table and key, (2) one parser per table (its own rules and materials), (3) the geometry
# checks across tables, (4) the build of the dataclasses, only when no step found a problem.
# A check whose inputs are missing or were refused in an earlier step is skipped, so that every
# problem of a file is reported in one pass and none is a follow-on of another.


class _Values(dict):
    """The valid values of one table (file units) after the schema check, and the keys the file
    gave with a refused value (a check that needs one of them is skipped, not guessed)."""

    def __init__(self, values: dict, refused=()):
        super().__init__(values)
        self.refused = frozenset(refused)

    def has(self, *keys: str) -> bool:
        """Every one of ``keys`` has a valid value."""
        return all(k in self for k in keys)

    def usable(self, *keys: str) -> bool:
        """None of ``keys`` was given with a refused value (a missing key keeps its default)."""
        return self.refused.isdisjoint(keys)


#: A table the file leaves out or gives as something other than a table: no value, no check.
_NO_VALUES = _Values({})


def _check_schema(data: dict, problems: list[str]) -> dict[str, _Values]:
    """Step 1: the top-level names, then every key of every table against DESIGN_KEYS. Returns
    the checked values of each table that is a table (missing or malformed ones are left out)."""
    _check_top_level(data, problems)
    return {
        table: _check_table(table, data[table], problems)
        for table in DESIGN_KEYS
        if isinstance(data.get(table), dict)
    }


def _check_top_level(data: dict, problems: list[str]) -> None:
    """Unknown tables or keys (with the nearest valid name), tables that are not tables, the
    top-level keys' values and the missing required tables."""
    for key, value in data.items():
        if key in DESIGN_KEYS:
            if not isinstance(value, dict):
                problems.append(f"{key} = {value!r}: must be a table [{key}]")
        elif key in _TOP_KEYS:
            _check_value(key, value, _TOP_KEYS[key], problems)
        else:
            problems.append(
                f"{key}: unknown table or key; allowed: {', '.join([*DESIGN_KEYS, *_TOP_KEYS])}"
                f"{nearest(key, [*DESIGN_KEYS, *_TOP_KEYS])}"
            )
    for table in _REQUIRED_TABLES:
        if table not in data:
            problems.append(f"[{table}]: missing table")


def _check_table(table: str, t: dict, problems: list[str]) -> _Values:
    """One table's keys: unknown ones (with the nearest valid name), each value against its
    kind, the missing required keys."""
    keys = DESIGN_KEYS[table]
    out, refused = {}, set()
    for key, value in t.items():
        if key not in keys:
            problems.append(
                f"{table}.{key}: unknown key; allowed: {', '.join(keys)}{nearest(key, keys)}"
            )
            continue
        checked = _check_value(f"{table}.{key}", value, keys[key][0], problems)
        if checked is None:
            refused.add(key)
        else:
            out[key] = checked
    for key, (kind, required) in keys.items():
        if required and key not in t:
            problems.append(f"{table}.{key}: missing; must be {_ALLOWED[kind]}")
    return _Values(out, refused)


# --- step 2: one parser per table. Each returns the keywords of its dataclass other than the
# sizes in mm (None where the table's own problems leave them unknown).


def _material(name, where: str, problems: list[str]):
    """The library material ``name``, or None (with its problem added)."""
    try:
        return get_material(name, where)
    except DesignError as err:
        problems.extend(err.problems)
        return None


def _parse_pole(p: _Values, problems: list[str]) -> dict | None:
    """[pole]: its steel, named (material) or given (relative_permeability and
    conductivity_S_per_m, 0 = laminated)."""
    mu_r, sigma = p.get("relative_permeability"), p.get("conductivity_S_per_m")
    pole_mat, bsat = p.get("material"), p.get("saturation_flux_density_T")
    lamination = (None, None)
    if not p.usable("material", "relative_permeability", "conductivity_S_per_m"):
        pass  # which of the two ways was meant is unknown
    elif pole_mat is not None:
        if mu_r is not None or sigma is not None:
            problems.append(
                "pole.material = "
                f"{pole_mat!r}: give either material or relative_permeability and "
                "conductivity_S_per_m, not both"
            )
        elif (m := _material(pole_mat, "pole.material", problems)) is not None:
            if not m.is_magnetic:
                problems.append(
                    f"pole.material = {pole_mat!r}: not a magnetic steel; allowed: "
                    + ", ".join(k for k, v in MATERIALS.items() if v.is_magnetic)
                )
            mu_r, sigma = m.relative_permeability, m.conductivity
            bsat = bsat if bsat is not None else m.saturation_flux_density
            lamination = (m.lamination_thickness, m.sheet_conductivity)
    elif mu_r is None or sigma is None:
        problems.append(
            "pole: give material, or both relative_permeability and conductivity_S_per_m "
            "(0 = laminated)"
        )
    if mu_r is not None and mu_r < 1.0:
        problems.append(f"pole.relative_permeability = {mu_r!r}: must be >= 1 (a magnetic steel)")
    given = _pole_sheets(p, pole_mat, sigma, problems)
    if mu_r is None or sigma is None:
        return None
    m = None if pole_mat is None else get_material(pole_mat)
    return {
        "relative_permeability": float(mu_r),
        "conductivity": float(sigma),
        "material": None if m is None else m.name,
        "saturation_flux_density": bsat,
        "lamination_thickness": lamination[0] if m is not None else given[0],
        "sheet_conductivity": lamination[1] if m is not None else given[1],
        "core_loss": None if m is None else m.core_loss,
        "density": 7700.0 if m is None else m.density,
    }


def _pole_sheets(p: _Values, pole_mat, sigma, problems: list[str]) -> tuple:
    """The sheets of a pole given by relative_permeability: (thickness [m], conductivity
    [S/m]), each None when not given; both or neither, and only for a laminated pole."""
    d, s = p.get("lamination_thickness_mm"), p.get("sheet_conductivity_S_per_m")
    if d is None and s is None:
        return None, None
    if pole_mat is not None:
        problems.append(
            f"pole.material = {pole_mat!r}: its sheets come from the library; leave out "
            "lamination_thickness_mm and sheet_conductivity_S_per_m"
        )
    elif (d is None) != (s is None):
        missing = "sheet_conductivity_S_per_m" if s is None else "lamination_thickness_mm"
        problems.append(
            f"pole.{missing}: missing; give both sheet keys of a laminated pole or neither"
        )
    elif sigma is not None and sigma != 0.0:
        problems.append(
            f"pole.conductivity_S_per_m = {sigma!r}: a pole with sheet keys is laminated; "
            "allowed: 0"
        )
    return (None if d is None else d * MM), s


def _parse_drive(d: _Values, problems: list[str]) -> dict:
    """[drive]: the frequency and exactly one of current and voltage."""
    if d.usable("current_A", "voltage_V") and ("current_A" in d) == ("voltage_V" in d):
        problems.append(
            "drive: give exactly one of current_A (rms) and voltage_V (rms); "
            f"got {'both' if 'current_A' in d else 'neither'}"
        )
    return {
        "frequency": d.get("frequency_Hz"),
        "current": d.get("current_A"),
        "voltage": d.get("voltage_V"),
    }


def _parse_coil(c: _Values, problems: list[str]) -> dict | None:
    """[coil]: the wire's material (copper unless named), which must conduct."""
    name = c.get("material", "copper")
    if not c.usable("material") or (m := _material(name, "coil.material", problems)) is None:
        return None
    if m.conductivity <= 0:
        problems.append(f"coil.material = {name!r}: the winding needs a conductor")
    return {
        "conductivity": m.conductivity,
        "temperature_coefficient": m.temperature_coefficient,
        "material": m.name,
    }


def _conductor(table: str, t: _Values, problems: list[str], default: str | None) -> dict | None:
    """Conductivity [S/m], temperature coefficient, density (None: unknown) and name of a
    conductor's material: a library material or an explicit conductivity, not both."""
    if not t.usable("material", "conductivity_S_per_m"):
        return None
    name = t.get("material")
    sigma = t.get("conductivity_S_per_m")
    if name is not None and sigma is not None:
        problems.append(
            f"{table}.conductivity_S_per_m = {sigma!r}: give either material or "
            "conductivity_S_per_m, not both"
        )
        return None
    explicit = [k for k in ("temperature_coefficient_per_K", "density_kg_per_m3") if k in t]
    if name is not None and explicit and table == "ring":
        problems.append(
            f"ring.{explicit[0]} = {t[explicit[0]]!r}: set by ring.material = {name!r}; give it "
            "only with conductivity_S_per_m"
        )
        return None
    if name is not None and "temperature_coefficient_per_K" in t:
        problems.append(
            f"{table}.temperature_coefficient_per_K = {t['temperature_coefficient_per_K']!r}: set "
            f"by {table}.material = {name!r}; give it only with conductivity_S_per_m"
        )
        return None
    if sigma is not None:
        # An explicit conductivity (its value at 20 degC): the temperature coefficient and the
        # density from the file, else from the library metal nearest in conductivity (the
        # result then carries a note saying so, models.design.Design.notes).
        near = nearest_metal(sigma)
        return {
            "conductivity": sigma,
            "temperature_coefficient": t.get(
                "temperature_coefficient_per_K", near.temperature_coefficient
            ),
            "density": t.get("density_kg_per_m3", near.density),
            "material": None,
        }
    name = name if name is not None else default
    if name is None:
        problems.append(f"{table}.material: missing; give material or conductivity_S_per_m")
        return None
    m = _material(name, f"{table}.material", problems)
    if m is None:
        return None
    if m.conductivity <= 0:
        problems.append(
            f"{table}.material = {name!r}: conductivity is 0 (a laminated steel); "
            f"a {table} needs a conductor, e.g. 'copper'"
        )
        return None
    return {
        "conductivity": m.conductivity,
        "temperature_coefficient": m.temperature_coefficient,
        "density": m.density,
        "material": m.name,
    }


def nearest_metal(conductivity: float):
    """The library's non-magnetic metal nearest to ``conductivity`` [S/m] (on a log scale)."""
    metals = [m for m in MATERIALS.values() if m.conductivity > 0 and not m.is_magnetic]
    return min(metals, key=lambda m: abs(math.log(m.conductivity / conductivity)))


def design_notes(vals: dict) -> tuple[str, ...]:
    """What the reader took on the user's behalf: a conductor given by its conductivity alone
    gets the temperature coefficient (and a ring its density) of the nearest library metal."""
    notes = []
    for table in ("ring", "target"):
        t = vals.get(table)
        if t is None or "conductivity_S_per_m" not in t:
            continue
        near = nearest_metal(t["conductivity_S_per_m"])
        taken = []
        if "temperature_coefficient_per_K" not in t:
            taken.append(f"temperature_coefficient_per_K = {near.temperature_coefficient:g} 1/K")
        if table == "ring" and "density_kg_per_m3" not in t:
            taken.append(f"density_kg_per_m3 = {near.density:g}")
        if taken:
            notes.append(
                f"{table}.conductivity_S_per_m given without "
                + " and ".join(k.split(" = ")[0] for k in taken)
                + f": {near.name}'s values taken (the library metal nearest in conductivity): "
                + ", ".join(taken)
            )
    return tuple(notes)


def _parse_ring(r: _Values, problems: list[str]) -> dict | None:
    """[ring]: its conductor (copper unless named)."""
    kw = _conductor("ring", r, problems, "copper")
    if kw is not None:
        kw["density"] = float(kw["density"])
    return kw


def _parse_target(g: _Values, problems: list[str]) -> dict | None:
    """[target]: its conductor (no default) and its density, from the file or the material."""
    kw = _conductor("target", g, problems, None)
    if kw is None or not g.usable("density_kg_per_m3"):
        return None
    if "density_kg_per_m3" in g:
        kw["density"] = g["density_kg_per_m3"]
    elif kw["material"] is None:  # it sets the part's weight: never a guess
        problems.append(
            "target.density_kg_per_m3: missing; needed with an explicit conductivity_S_per_m"
        )
        return None
    kw["density"] = float(kw["density"])
    return kw


def _parse_thermal(t: _Values, problems: list[str]) -> dict:
    """[thermal]: the Thermal keywords (defaults where a key is missing)."""
    kw = {}
    ambient = t.get("ambient_C", Thermal.ambient_C)
    # -50 to 150 degC: from arctic outdoor to inside an oven line (common practice, no source)
    if not -50.0 <= ambient <= 150.0:
        problems.append(f"thermal.ambient_C = {ambient!r}: must be between -50 and 150 degC")
    kw["ambient_C"] = ambient
    if "coil_insulation_class" in t:
        kw.update(_insulation_class(t["coil_insulation_class"], problems))
    for key in ("ring_limit_C", "target_limit_C"):
        if key in t:
            if t.usable("ambient_C") and t[key] <= ambient:
                problems.append(
                    f"thermal.{key} = {t[key]!r}: must be above thermal.ambient_C (= {ambient!r})"
                )
            kw[key] = t[key]
    orientation = t.get("orientation", Thermal.orientation)
    if orientation not in ORIENTATIONS:
        problems.append(
            f"thermal.orientation = {orientation!r}: must be one of {', '.join(ORIENTATIONS)}"
            f"{nearest(str(orientation), ORIENTATIONS)}"
        )
    kw["orientation"] = orientation
    for key, name in (
        ("convection_W_per_m2K", "convection"),
        ("emissivity", "emissivity"),
        ("duty_cycle", "duty_cycle"),
        ("period_s", "period"),
        ("hold_time_s", "hold_time"),
        ("ring_contact_W_per_m2K", "ring_contact_conductance"),
        ("winding_conductivity_W_per_mK", "winding_conductivity"),
        ("target_arrival_C", "target_arrival_C"),
        ("target_stays", "target_stays"),
    ):
        if key in t:
            kw[name] = t[key]
    if "hold_gap_mm" in t:
        kw["hold_gap"] = t["hold_gap_mm"] * MM
    return kw


def _insulation_class(cls, problems: list[str]) -> dict:
    """thermal.coil_insulation_class (an IEC 60085 letter or a temperature in degC): the
    keywords coil_class and coil_class_C, or {} (with a problem)."""
    if isinstance(cls, str):
        key = cls.strip().upper()
        if key in INSULATION_CLASSES:
            return {"coil_class": key, "coil_class_C": INSULATION_CLASSES[key]}
        try:
            cls = float(key)
        except ValueError:
            problems.append(
                f"thermal.coil_insulation_class = {cls!r}: must be "
                + _ALLOWED["class"]
                + " (IEC 60085)"
            )
            return {}
    # IEC 60085 classes run from 90 (Y) to 250 degC; a custom rating stays in that span.
    if not 90.0 <= cls <= 250.0:
        problems.append(
            f"thermal.coil_insulation_class = {cls!r}: a temperature must be between "
            "90 and 250 degC (the IEC 60085 classes)"
        )
        return {}
    named = [k for k, v in INSULATION_CLASSES.items() if v == cls]
    return {"coil_class": named[0] if named else f"{cls:g} degC", "coil_class_C": float(cls)}


def _parse_supply(t: _Values, problems: list[str]) -> dict:
    """[supply]: the limits of the supply (no rule beyond each value's own)."""
    return {
        "max_voltage": t.get("max_voltage_V"),
        "max_current": t.get("max_current_A"),
        "max_apparent_power": t.get("max_VA"),
    }


#: Step 2, table by table, in this order.
_PARSERS = {
    "pole": _parse_pole,
    "drive": _parse_drive,
    "coil": _parse_coil,
    "ring": _parse_ring,
    "target": _parse_target,
    "thermal": _parse_thermal,
    "supply": _parse_supply,
}


# --- step 3: the geometry across tables


def _check_geometry(vals: dict[str, _Values], problems: list[str]) -> None:
    """Step 3: the rules between sizes (the coil outside and along the pole, the ring inside its
    face, face features the fast model resolves, the target washer). A rule whose sizes are
    missing or were refused is skipped."""
    p = vals.get("pole", _NO_VALUES)
    r = vals.get("ring")
    _check_coil_fits(p, vals.get("coil", _NO_VALUES), problems)
    if r is not None:
        _check_ring_fits(p, r, problems)
    if p.has("radius_mm", "length_mm") and p["length_mm"] > MAX_POLE_ASPECT * p["radius_mm"]:
        problems.append(
            f"pole.length_mm = {p['length_mm']!r}: must be <= {MAX_POLE_ASPECT:g} x pole.radius_mm "
            f"(= {MAX_POLE_ASPECT * p['radius_mm']:.4g}); the fast model's panels cannot follow a "
            "longer pole"
        )
    g = vals.get("target", _NO_VALUES)
    if p.has("radius_mm"):
        _check_face_features(p["radius_mm"], r, g, problems)
    if g.has("radius_mm") and g.usable("inner_radius_mm"):
        tri = g.get("inner_radius_mm", 0.0)
        if tri >= g["radius_mm"]:
            problems.append(
                f"target.inner_radius_mm = {tri!r}: must be < target.radius_mm "
                f"(= {g['radius_mm']!r})"
            )
    if p.has("radius_mm") and g.has("radius_mm") and g.usable("offset_mm"):
        off, reach = g.get("offset_mm", 0.0), p["radius_mm"] + g["radius_mm"]
        if abs(off) >= reach:
            problems.append(
                f"target.offset_mm = {off!r}: must lie within +-(target.radius_mm + "
                f"pole.radius_mm) = +-{reach:g} mm (beyond it the part is clear of the pole)"
            )


def _check_coil_fits(p: _Values, c: _Values, problems: list[str]) -> None:
    """The coil outside the pole and along it, its radii in order, its wire in its window."""
    if c.has("inner_radius_mm") and p.has("radius_mm") and c["inner_radius_mm"] < p["radius_mm"]:
        problems.append(
            f"coil.inner_radius_mm = {c['inner_radius_mm']!r}: must be >= pole.radius_mm "
            f"(= {p['radius_mm']!r}); the coil sits outside the pole"
        )
    radii = c.has("inner_radius_mm", "outer_radius_mm")
    if radii and c["outer_radius_mm"] <= c["inner_radius_mm"]:
        problems.append(
            f"coil.outer_radius_mm = {c['outer_radius_mm']!r}: must be > coil.inner_radius_mm "
            f"(= {c['inner_radius_mm']!r})"
        )
    if c.has("setback_mm", "length_mm") and p.has("length_mm"):
        if c["setback_mm"] + c["length_mm"] > p["length_mm"]:
            problems.append(
                f"coil.length_mm = {c['length_mm']!r}: setback_mm + length_mm must be <= "
                f"pole.length_mm (= {p['length_mm']!r}); the coil sits along the pole"
            )
    if radii and c.has("wire_diameter_mm", "turns", "length_mm"):
        wire_area = math.pi * c["wire_diameter_mm"] ** 2 / 4
        window = (c["outer_radius_mm"] - c["inner_radius_mm"]) * c["length_mm"]
        if window > 0 and c["turns"] * wire_area > window * math.pi / 4 * 1.0001:
            problems.append(
                f"coil.wire_diameter_mm = {c['wire_diameter_mm']!r}: {c['turns']} turns do not "
                f"fit the {window:.4g} mm^2 window; must be <= "
                f"{math.sqrt(window / c['turns']):.4g} mm"
            )


def _check_ring_fits(p: _Values, r: _Values, problems: list[str]) -> None:
    """The ring's radii in order, inside the pole face with steel left on both sides, its
    groove shallower than the pole is long."""
    ri, ro, depth = (r.get(k) for k in ("inner_radius_mm", "outer_radius_mm", "depth_mm"))
    if r.has("inner_radius_mm", "outer_radius_mm") and ro <= ri:
        problems.append(f"ring.outer_radius_mm = {ro!r}: must be > ring.inner_radius_mm (= {ri!r})")
    if ro is not None and p.has("radius_mm") and ro > p["radius_mm"] - MIN_WALL_MM:
        problems.append(
            f"ring.outer_radius_mm = {ro!r}: must be <= pole.radius_mm - {MIN_WALL_MM} "
            f"(= {p['radius_mm'] - MIN_WALL_MM:.4g}); the ring sits inside the pole with a wall "
            "of steel left"
        )
    if ri is not None and ri < MIN_WALL_MM:
        problems.append(
            f"ring.inner_radius_mm = {ri!r}: must be >= {MIN_WALL_MM} mm; a post of steel "
            "stays inside the ring"
        )
    if depth is not None and p.has("length_mm") and depth >= p["length_mm"]:
        problems.append(
            f"ring.depth_mm = {depth!r}: must be < pole.length_mm (= {p['length_mm']!r})"
        )


def _check_face_features(Rp: float, r: _Values | None, g: _Values, problems: list[str]) -> None:
    """Every feature of the face (2 x gap, target radius, ring inner radius, depth and width) at
    least pole.radius_mm / MAX_FEATURE_RATIO."""
    face = [("target.gap_mm", g.get("gap_mm"), 2.0), ("target.radius_mm", g.get("radius_mm"), 1.0)]
    if r is not None:
        width = None
        if r.has("inner_radius_mm", "outer_radius_mm"):
            width = r["outer_radius_mm"] - r["inner_radius_mm"]
        face += [
            ("ring.inner_radius_mm", r.get("inner_radius_mm"), 1.0),
            ("ring.depth_mm", r.get("depth_mm"), 1.0),
            ("ring.outer_radius_mm - ring.inner_radius_mm", width, 1.0),
        ]
    for where, value, factor in face:
        least = Rp / (MAX_FEATURE_RATIO * factor)
        # 1e-9: rounding of mm values such as 0.22 - 0.2
        if value is not None and 0 < value < least * (1 - 1e-9):
            problems.append(
                f"{where} = {value:.4g}: must be >= pole.radius_mm / {MAX_FEATURE_RATIO * factor:g}"
                f" (= {least:.4g}); the fast model resolves face features down to that size"
            )


# --- step 4: the build


def _build(data: dict, name: str, vals: dict[str, _Values], parsed: dict[str, dict]) -> Design:
    """Step 4, for a design without problems: the dataclasses in SI from the checked sizes (mm)
    and the parsed tables."""
    p, c, g, r = vals["pole"], vals["coil"], vals["target"], vals.get("ring")
    pole = Pole(radius=p["radius_mm"] * MM, length=p["length_mm"] * MM, **parsed["pole"])
    coil = Coil(
        inner_radius=c["inner_radius_mm"] * MM,
        outer_radius=c["outer_radius_mm"] * MM,
        setback=c["setback_mm"] * MM,
        length=c["length_mm"] * MM,
        turns=c["turns"],
        wire_diameter=c["wire_diameter_mm"] * MM if "wire_diameter_mm" in c else None,
        **parsed["coil"],
    )
    ring = None
    if r is not None:
        ring = Ring(
            inner_radius=r["inner_radius_mm"] * MM,
            outer_radius=r["outer_radius_mm"] * MM,
            depth=r["depth_mm"] * MM,
            **parsed["ring"],
        )
    target = Target(
        radius=g["radius_mm"] * MM,
        thickness=g["thickness_mm"] * MM,
        gap=g["gap_mm"] * MM,
        inner_radius=g.get("inner_radius_mm", 0.0) * MM,
        offset=g.get("offset_mm", 0.0) * MM,
        **parsed["target"],
    )
    return Design(
        pole=pole,
        coil=coil,
        drive=Drive(**parsed["drive"]),
        target=target,
        ring=ring,
        name=str(data.get("name", name)),
        source=_deep_copy(data),
        thermal=Thermal(**parsed["thermal"]) if "thermal" in parsed else Thermal(),
        supply=Supply(**parsed["supply"]) if "supply" in parsed else None,
        notes=design_notes(vals),
    )


def design_from_dict(data: dict, name: str = "design") -> Design:
    """Build and validate a design from a dict in file units (mm, Hz, A rms, V rms).

    Raises
    ------
    DesignError
        With one line per violation, every violation of the file at once: the field, the value
        and what is allowed.
    """
    if not isinstance(data, dict):
        raise DesignError(f"design = {data!r}: must be a table of tables")
    problems: list[str] = []
    vals = _check_schema(data, problems)
    parsed = {t: parse(vals[t], problems) for t, parse in _PARSERS.items() if t in vals}
    _check_geometry(vals, problems)
    if problems:
        raise DesignError(problems)
    return _build(data, name, vals, parsed)


def _deep_copy(data: dict) -> dict:
    return {k: (_deep_copy(v) if isinstance(v, dict) else v) for k, v in data.items()}


def read_toml(path, what: str = "file") -> dict:
    """The table of a TOML file, or a one-line DesignError naming ``what`` and the path.

    Every way a file can be unreadable ends here: missing, a directory, not UTF-8, not TOML, an
    integer of more than 4300 digits (Python's int limit), arrays or tables nested past the
    parser's recursion limit.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as err:
        raise DesignError(f"{what} {str(path)!r}: cannot be read ({err.strerror})") from None
    except UnicodeDecodeError as err:
        raise DesignError(
            f"{what} {str(path)!r}: not UTF-8 text (byte {err.start}); must be a TOML file"
        ) from None
    try:
        return tomllib.loads(text)
    except ValueError as err:  # TOMLDecodeError, or an integer of more than 4300 digits
        reason = str(err).splitlines()[0] if str(err) else type(err).__name__
        raise DesignError(f"{what} {str(path)!r}: not valid TOML ({reason})") from None
    except RecursionError:
        raise DesignError(
            f"{what} {str(path)!r}: not valid TOML (arrays or tables nested too deeply)"
        ) from None


def load_design(path) -> Design:
    """Read and validate a design TOML file (mm, Hz, A rms, V rms).

    Raises
    ------
    DesignError
        The file is missing, not TOML, or breaks a rule (one line per violation).

    Examples
    --------
    The demo design that ships with the package:

    >>> from optim.demo import DEMO_DESIGN
    >>> design = load_design(DEMO_DESIGN)
    >>> design.name, design.source["target"]["gap_mm"]
    ('harrowgate-cap-lifter', 3.0)
    """
    path = Path(path)
    data = read_toml(path, "design file")
    return design_from_dict(data, name=path.stem)


def resolve_key(design: Design, key: str) -> tuple[str, str]:
    """The (table, key) a design-file key names: ``"target.gap_mm"`` as written, a bare
    ``"gap_mm"`` where it names exactly one key of the design's tables.

    Raises
    ------
    DesignError
        Not a design key (with the nearest name), or a bare key that more than one table has.
    """
    data = design.source
    if "." in key:
        table, k = key.split(".", 1)
        if table not in DESIGN_KEYS or k not in DESIGN_KEYS[table]:
            flat = [f"{t}.{kk}" for t, ks in DESIGN_KEYS.items() for kk in ks]
            raise DesignError(f"{key}: not a design key{nearest(key, flat)}")
        return table, k
    tables = [
        t for t in DESIGN_KEYS if key in DESIGN_KEYS[t] and (t in data or t in _OPTIONAL_TABLES)
    ]
    tables = [t for t in tables if t in data] or tables
    if len(tables) != 1:
        flat = sorted({kk for ks in DESIGN_KEYS.values() for kk in ks})
        if not tables:
            raise DesignError(f"{key}: not a design key{nearest(key, flat)}")
        raise DesignError(
            f"{key}: ambiguous; write one of {', '.join(t + '.' + key for t in tables)}"
        )
    return tables[0], key


def edit(design: Design, changes=None, *, properties=None) -> Design:
    """A copy of ``design`` with ``changes`` made: the one way every caller changes a design.

    Parameters
    ----------
    design : Design
    changes : mapping of str to value, optional
        Design-file keys in file units (``{"target.gap_mm": 2.0}``, or a bare key that names
        one key of the design's tables, ``"gap_mm"``), checked as the file would be; ``None``
        removes the key from the file.
    properties : mapping of str to float, optional
        Properties of the validated parts in SI, by ``part.attribute``
        (``{"ring.conductivity": 5.0e7, "pole.relative_permeability": 800.0}``): values the
        file need not give directly (a conductivity that comes from a material's name).

    Returns
    -------
    Design
        Whatever was set before is kept: a part whose file table no change touches is kept as
        ``design`` has it (however it was set), and a part rebuilt from the changed file gets
        the properties ``edit`` set on it before, unless this edit sets them anew or makes it
        another part: a change of any of its keys but a dimension (``*_mm``), or a removal,
        drops the properties set on that part (a tolerance sample's part conductivity is not
        carried to another metal).

    Raises
    ------
    DesignError
        A key that is not a file key (with the nearest one), a property of no part the design
        has, a non-finite property, or a changed file that breaks a design rule.

    Examples
    --------
    >>> from optim.demo import DEMO_DESIGN
    >>> design = edit(load_design(DEMO_DESIGN), properties={"ring.conductivity": 5.0e7})
    >>> closer = edit(design, {"gap_mm": 1.0})
    >>> closer.target.gap, closer.ring.conductivity
    (0.001, 50000000.0)
    """
    file_changes = {resolve_key(design, key): value for key, value in (changes or {}).items()}
    redefined = {t for (t, k), v in file_changes.items() if v is None or not k.endswith("_mm")}
    props = {key: v for key, v in design.properties if key[0] not in redefined}
    for key, value in (properties or {}).items():
        part, _, attr = key.partition(".")
        if attr not in _property_names(design, part):
            raise DesignError(
                f"{key}: not a property of a part of this design; allowed: part.attribute of "
                f"{', '.join(t for t in DESIGN_KEYS if _property_names(design, t))}"
            )
        if not _is_finite(value):
            raise DesignError(f"{key} = {value!r}: must be a finite number")
        props[(part, attr)] = float(value)
    edited = design
    if file_changes:
        data = _deep_copy(design.source)
        for (table, k), value in file_changes.items():
            if value is None:
                data.get(table, {}).pop(k, None)
            else:
                data.setdefault(table, {})[k] = value
        built = design_from_dict(data, name=design.name)
        touched = {table for table, _ in file_changes}
        edited = replace(built, **{t: getattr(design, t) for t in DESIGN_KEYS if t not in touched})
    for (part, attr), value in props.items():
        obj = getattr(edited, part)
        if obj is not None:
            edited = replace(edited, **{part: replace(obj, **{attr: value})})
    return replace(edited, properties=tuple(props.items()))


def _property_names(design: Design, part: str) -> tuple[str, ...]:
    """The attribute names of the design's part ``part`` (empty: no such part)."""
    obj = getattr(design, part, None) if part in DESIGN_KEYS else None
    return tuple(f.name for f in fields(obj)) if obj is not None else ()


def with_value(design: Design, key: str, value) -> Design:
    """``edit(design, {key: value})`` for one file key (``"gap_mm"`` or ``"target.gap_mm"``).

    A bare key must name exactly one key of the design's tables (``resolve_key``).

    Examples
    --------
    >>> from optim.demo import DEMO_DESIGN
    >>> closer = with_value(load_design(DEMO_DESIGN), "gap_mm", 1.0)
    >>> closer.source["target"]["gap_mm"]
    1.0
    """
    return edit(design, {key: value})


def with_gap(design: Design, gap_mm: float) -> Design:
    """``design`` with its part at another gap [mm]: ``edit(design, {"target.gap_mm": gap_mm})``.

    Every validated part but the target is kept as ``design`` has it, and the target keeps the
    properties set on it by ``edit`` (a tolerance table's part conductivity).
    """
    return edit(design, {"target.gap_mm": gap_mm})
