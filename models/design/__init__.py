"""One shaded-pole design: dataclasses (SI inside), reading from TOML (mm, Hz, A rms) and validation.

The package by concern:

* ``parts``: the dataclasses (Pole, Coil, Drive, Ring, Target, ThermalSettings, Supply, Design) and the
  winding's turns;
* ``schema``: the file's tables and keys (DESIGN_KEYS), the kinds of value and the check of one
  value (step 1 of reading);
* ``tables``: one parser per table (step 2);
* ``geometry``: the rules across tables (step 3);
* ``files``: the build of the dataclasses (step 4), ``design_from_dict``, ``read_toml``,
  ``load_design``;
* ``editing``: ``edit``, the one way to change a design, and ``with_value``, ``with_gap``,
  ``resolve_key`` on top of it.

Every name other modules import is re-exported here: ``from models.design import ...`` as before.
"""

from models.design.editing import (
    edit,
    resolve_key,
    with_capacitance,
    with_fixed_capacitor,
    with_gap,
    with_value,
)
from models.design.files import design_from_dict, load_design, read_toml
from models.design.parts import (
    DEFAULT_FILL_FACTOR,
    INSULATION_CLASSES,
    MAX_FILL_FACTOR,
    MIN_WALL_MM,
    Coil,
    Design,
    Drive,
    Pole,
    Ring,
    Supply,
    Target,
    ThermalSettings,
    coil_fill,
    coil_turns,
    turns_in_window,
)
from models.design.schema import DESIGN_KEYS, MAX_FEATURE_RATIO, PLAUSIBLE_LIMITS
from models.design.tables import design_notes, nearest_metal

__all__ = [
    "Pole",
    "Coil",
    "Drive",
    "Ring",
    "Target",
    "ThermalSettings",
    "Supply",
    "Design",
    "load_design",
    "read_toml",
    "design_from_dict",
    "edit",
    "with_value",
    "with_gap",
    "with_capacitance",
    "with_fixed_capacitor",
    "resolve_key",
    "DESIGN_KEYS",
    "PLAUSIBLE_LIMITS",
    "MAX_FEATURE_RATIO",
    "MIN_WALL_MM",
    "DEFAULT_FILL_FACTOR",
    "MAX_FILL_FACTOR",
    "turns_in_window",
    "coil_fill",
    "coil_turns",
    "nearest_metal",
    "design_notes",
    "INSULATION_CLASSES",
]
