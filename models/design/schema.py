"""A design file's schema: its tables and keys (DESIGN_KEYS), the kinds of value they hold
and the check of one value (step 1 of reading a design)."""

from __future__ import annotations

import math

from models.design.parts import (
    INSULATION_CLASSES,
    MAX_FILL_FACTOR,
)
from models.errors import nearest

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
        "turns": ("int", False),
        "wire_diameter_mm": ("pos", False),
        "material": ("str", False),
        "fill_factor": ("fill", False),
    },
    "drive": {
        "frequency_Hz": ("pos", True),
        "current_A": ("pos", False),
        "voltage_V": ("pos", False),
        "compensation": ("str", False),
        "capacitance_uF": ("pos", False),
    },
    "ring": {
        "inner_radius_mm": ("pos", True),
        "outer_radius_mm": ("pos", True),
        "depth_mm": ("pos", True),
        "material": ("str", False),
        "conductivity_S_per_m": ("pos", False),
        "temperature_coefficient_per_K": ("nonneg", False),
        "density_kg_per_m3": ("pos", False),
        # a shading winding instead of a solid ring (models.shading)
        "turns": ("int", False),
        "wire_diameter_mm": ("pos", False),
        "capacitance_uF": ("pos", False),
        "resistance_ohm": ("nonneg", False),
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
        "max_capacitor_voltage_V": ("pos", False),
    },
}
#: Tables a design may leave out.
_OPTIONAL_TABLES = ("ring", "thermal", "supply")
_TOP_KEYS = {"name": "str", "description": "str"}
#: [pole] may be left out (an air core); [coil] may be replaced by [[coils]] (models.coils).
_REQUIRED_TABLES = ("drive", "target")
_ALLOWED = {
    "pos": "a number > 0",
    "nonneg": "a number >= 0",
    "int": "a whole number >= 1",
    "str": "a string",
    "num": "a number",
    "frac": "a number > 0 and <= 1",
    "fill": f"a number > 0 and <= {MAX_FILL_FACTOR:g} (copper area over the coil window's area)",
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
    "_uF": (1e-6, 1e6),  # 1 pF to 1 F
    "_ohm": (1e-9, 1e6),
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
            or (kind == "fill" and 0 < value <= MAX_FILL_FACTOR)
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
        if isinstance(data.get(table), dict) and not (table == "coil" and "coils" in data)
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
        elif key == "coils":
            pass  # [[coils]]: models.coils.check_coils
        else:
            problems.append(
                f"{key}: unknown table or key; allowed: {', '.join([*DESIGN_KEYS, *_TOP_KEYS])}"
                f"{nearest(key, [*DESIGN_KEYS, *_TOP_KEYS])}"
            )
    for table in _REQUIRED_TABLES:
        if table not in data:
            problems.append(f"[{table}]: missing table")
    if "coil" not in data and "coils" not in data:
        problems.append("[coil]: missing table (or several coils as [[coils]])")


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
