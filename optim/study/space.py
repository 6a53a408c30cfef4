"""The search space of a study: free parameters, their optuna distributions, and how a set of
parameter values becomes a design file (mm, Hz, A) and then a validated design.

Parameter names (the ``[search]`` keys of a study file):

* any design-file key written ``"table.key"`` (``"target.radius_mm"``, ``"coil.turns"``,
  ``"ring.material"``);
* the short names in ``ALIASES`` (``pole_radius_mm``, ``ring_depth_mm``, ``frequency_Hz``,
  ``pole_material``, ...);
* ``ring_outer_fraction``: ring outer radius / pole radius, and ``ring_inner_fraction``: ring inner
  radius / ring outer radius. Both in (0, 1), so the ring always lies inside the pole and its inner
  radius below its outer one, whatever the pole radius the trial draws.

A numeric key takes a range or a list of choices, a text key (a material,
``thermal.orientation``) a list of choices::

    pole_radius_mm = { low = 6, high = 12 }                 # scale = "log", step = ... optional
    "coil.wire_diameter_mm" = { choices = [0.5, 0.56, 0.63, 0.71, 0.8] }   # sizes one can buy
    pole_material = { choices = ["electrical-steel-m400", "ferrite-mnzn"] }

A numeric key's choices are numbers of the key's kind (whole numbers for ``coil.turns``) inside
its plausible range; they are sampled as categories, in the file's order, and the front keeps
them as numbers. ``coil.wire_diameter_mm``'s choices are usually the standard bare diameters
(``optim.morning.winding.STANDARD_BARE_DIAMETERS_MM``, IEC 60317-0-1's nominal series).

A material's choices must be library materials (``models.materials.MATERIALS``; kept as the
library names them, whatever the letter case in the file): magnetic ones for the pole
(``CORE_MATERIALS``, and laminated: the fast model refuses a solid pole), conductors for the
coil, ring and target. Choices are sampled as categories
(``optuna.distributions.CategoricalDistribution``), in the order the file gives them (the order
is part of the study's definition).

Coupled dimensions follow the searched ones, so that a trial stays a buildable machine
(``coupling_rules`` words them for a study's own parameters, as ``study results`` prints them):

* when the pole radius changes, the coil's inner and outer radii move by the same amount (the
  radial clearance and the winding depth of the base design are kept), so its window keeps its
  area;
* a coil given by ``wire_diameter_mm`` and ``fill_factor`` (no ``turns``) gets its turns from
  the window (models.design.turns_in_window): a searched wire diameter or fill factor changes
  the turns, never the other way round; a searched turn count keeps the base design's wire as it
  is (a size one can buy: it is no longer rescaled to keep the fill), and a trial whose turns do
  not fit that wire in the window is refused by the design rules; a searched ``fill_factor``
  replaces the base design's ``turns`` and a searched ``turns`` its ``fill_factor`` (as a study
  file's ``[coil]`` override giving one of them does);
* when a material is searched, the properties it brings are dropped from the base design
  (``SET_BY_MATERIAL``: a pole given by ``relative_permeability`` and ``conductivity_S_per_m``
  becomes a pole of the chosen steel; a ring or part given by its conductivity one of the chosen
  metal), unless the search sets them too.

Geometry that still cannot be built (a steel wall under ``MIN_WALL_MM``, a coil longer than the
pole, ...) is refused by ``models.design`` before the model runs; the study records the reason.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import optuna.distributions as od

from models.coils import COILS_KEYS, coil_table_key
from models.design import (
    DESIGN_KEYS,
    MAX_FILL_FACTOR,
    PLAUSIBLE_LIMITS,
    Design,
    design_from_dict,
)
from models.errors import DesignError, nearest
from models.materials import CORE_MATERIALS, MATERIALS
from models.supply import COMPENSATIONS

__all__ = [
    "Parameter",
    "ALIASES",
    "SET_BY_MATERIAL",
    "parse_search",
    "design_source",
    "build_design",
    "coupling_rules",
]

#: Short names of the commonly searched design keys.
ALIASES = {
    "pole_radius_mm": "pole.radius_mm",
    "pole_length_mm": "pole.length_mm",
    "ring_inner_radius_mm": "ring.inner_radius_mm",
    "ring_outer_radius_mm": "ring.outer_radius_mm",
    "ring_depth_mm": "ring.depth_mm",
    "frequency_Hz": "drive.frequency_Hz",
    "current_A": "drive.current_A",
    "voltage_V": "drive.voltage_V",
    "turns": "coil.turns",
    "gap_mm": "target.gap_mm",
    "target_radius_mm": "target.radius_mm",
    "target_thickness_mm": "target.thickness_mm",
    "coil_setback_mm": "coil.setback_mm",
    "pole_material": "pole.material",
    "coil_material": "coil.material",
    "ring_material": "ring.material",
    "target_material": "target.material",
}
FRACTIONS = ("ring_outer_fraction", "ring_inner_fraction")
_NUMERIC = ("pos", "nonneg", "int", "num", "frac", "unit", "fill")
#: Kinds of design keys searched over a list of choices (models.design.DESIGN_KEYS).
_TEXT = ("str",)
_RANGE_KEYS = ("low", "high", "scale", "step")

#: Keys of a table that its ``material`` sets: a trial that chooses the material drops them from
#: the base design (unless it searches them too); the first group cannot be searched with it
#: (models.design refuses them beside a material), the second overrides the material's value.
SET_BY_MATERIAL = {
    "pole": (
        (
            "relative_permeability",
            "conductivity_S_per_m",
            "lamination_thickness_mm",
            "sheet_conductivity_S_per_m",
        ),
        ("saturation_flux_density_T",),
    ),
    "ring": (("conductivity_S_per_m", "temperature_coefficient_per_K", "density_kg_per_m3"), ()),
    "target": (
        ("conductivity_S_per_m", "temperature_coefficient_per_K"),
        ("density_kg_per_m3",),
    ),
}


@dataclass(frozen=True)
class Parameter:
    """One free parameter: name as in the study file, the design key it sets (None for the ring
    fractions), and either its range (bounds, log scale, integer, step) or its choices (text, or
    numbers of a numeric key; ``low`` and ``high`` are then None)."""

    name: str
    key: str | None
    low: float | None = None
    high: float | None = None
    log: bool = False
    integer: bool = False
    step: float | None = None
    choices: tuple = ()

    @property
    def categorical(self) -> bool:
        """True for a parameter drawn from a list of text choices (a material, a word); a
        numeric key's choices are drawn as categories too but read as numbers."""
        return bool(self.choices) and isinstance(self.choices[0], str)

    def distribution(self):
        """The optuna distribution of the parameter: categorical, integer or float."""

        if self.choices:
            return od.CategoricalDistribution(self.choices)
        if self.integer:
            step = int(self.step) if self.step else 1
            return od.IntDistribution(int(self.low), int(self.high), log=self.log, step=step)
        return od.FloatDistribution(self.low, self.high, log=self.log, step=self.step)


def _all_keys() -> dict[str, str]:
    """Every design key a study can search (numeric and text), table.key -> kind."""
    return {
        f"{t}.{k}": kind
        for t, keys in DESIGN_KEYS.items()
        for k, (kind, _) in keys.items()
        if kind in _NUMERIC or kind in _TEXT
    }


def _number(where, value, problems):
    if value is None:
        problems.append(f"{where}: missing; must be a finite number")
        return None
    finite = isinstance(value, (int, float)) and not isinstance(value, bool)
    try:
        finite = finite and math.isfinite(value)
    except OverflowError:  # an int beyond the float range
        finite = False
    if not finite:
        problems.append(f"{where} = {value!r}: must be a finite number")
        return None
    return float(value)


def _limits(key: str | None):
    """PLAUSIBLE_LIMITS of a design key's unit (None for the ring fractions, unitless keys)."""
    if key is None:
        return None
    return next((v for unit, v in PLAUSIBLE_LIMITS.items() if key.endswith(unit)), None)


def parse_search(table, problems: list[str]) -> list[Parameter]:
    """``[search]`` table -> parameters; problems (one line each) are appended to ``problems``."""
    if not isinstance(table, dict) or not table:
        problems.append("[search]: must be a table with at least one free parameter")
        return []
    keys = _all_keys()
    valid_names = [*ALIASES, *FRACTIONS, *keys]
    params, seen = [], {}
    for name, spec in table.items():
        where = f"search.{name}"
        key_kind = _key_and_kind(name, keys, valid_names, problems)
        if key_kind is None:
            continue
        key, kind = key_kind
        target = key or name
        if target in seen:
            problems.append(f"{where}: sets {target} again (already set by search.{seen[target]})")
            continue
        seen[target] = name
        param = _parameter(name, spec, key, kind, problems)
        if param is not None:
            params.append(param)
    names = {p.name for p in params}
    if ("ring_outer_fraction" in names or "ring_inner_fraction" in names) and (
        {"ring.outer_radius_mm", "ring.inner_radius_mm"} & set(seen)
    ):
        problems.append("search: give the ring's radii either as fractions or in mm, not both")
    for table, (refused, _) in SET_BY_MATERIAL.items():
        if f"{table}.material" in seen:
            for k in refused:
                if f"{table}.{k}" in seen:
                    problems.append(
                        f"search.{seen[f'{table}.{k}']}: {table}.{k} is set by {table}.material "
                        f"(searched by search.{seen[f'{table}.material']}); search one of them"
                    )
    return params


def _key_and_kind(name: str, keys: dict, valid_names: list, problems: list[str]):
    """The design key a ``[search]`` name sets (None for a ring fraction) and its kind; None
    (with the problem) for an unknown name."""
    if name in FRACTIONS:
        return None, "fraction"
    key = ALIASES.get(name, name)
    numbered = coil_table_key(key)
    if numbered is not None and numbered[1] in COILS_KEYS:
        kind = COILS_KEYS[numbered[1]][0]
        if kind in _NUMERIC or kind in _TEXT:
            return key, kind  # "coils.N.key": a key of the base design's coil N (from 0)
    if key not in keys:
        problems.append(
            f"search.{name}: unknown parameter; allowed: {', '.join([*ALIASES, *FRACTIONS])} "
            f"or a design key 'table.key'{nearest(name, valid_names)}"
        )
        return None
    return key, keys[key]


def _parameter(name: str, spec, key: str | None, kind: str, problems: list[str]):
    """One ``[search]`` entry ``{ low, high, scale, step }`` (a numeric key) or ``{ choices }``
    (a text key) -> a Parameter, or None (with its problems) if it is not valid for ``key``."""
    where = f"search.{name}"
    if kind in _TEXT:
        return _categorical(name, spec, key, problems)
    if not isinstance(spec, dict):
        problems.append(f"{where} = {spec!r}: must be a table {{ low = ..., high = ... }}")
        return None
    if "choices" in spec and key is None:
        problems.append(
            f"{where}.choices: {name} is a fraction; give a range {{ low = ..., high = ... }} "
            "(choices are for design keys)"
        )
        return None
    if "choices" in spec:
        return _numeric_choices(name, spec, key, kind, problems)
    for extra in set(spec) - {"low", "high", "scale", "step"}:
        problems.append(
            f"{where}.{extra}: unknown key; allowed: low, high, scale, step"
            f"{nearest(extra, ['low', 'high', 'scale', 'step'])}"
        )
    low = _number(f"{where}.low", spec.get("low"), problems)
    high = _number(f"{where}.high", spec.get("high"), problems)
    scale = spec.get("scale", "linear")
    if scale not in ("linear", "log"):
        problems.append(f"{where}.scale = {scale!r}: must be 'linear' or 'log'")
    step = spec.get("step")
    if step is not None:
        step = _number(f"{where}.step", step, problems)
        if step is not None and step <= 0:
            problems.append(f"{where}.step = {step!r}: must be > 0")
    if low is None or high is None:
        return None
    problem = _range_problem(where, key, kind, low, high, scale, step)
    if problem is not None:
        problems.append(problem)
        return None
    if step is not None and step <= 0:
        return None  # reported above
    return Parameter(name, key, low, high, scale == "log", kind == "int", step)


def _range_problem(where, key, kind, low, high, scale, step) -> str | None:
    """What is wrong with the range low..high (scale, step) of a ``kind`` key, first problem
    only; None if it is a valid range."""
    if low >= high:
        return f"{where}: low = {low:g} must be < high = {high:g}"
    if kind == "fraction" and not (0.0 < low and high < 1.0):
        return f"{where}: bounds {low:g}..{high:g} must lie strictly between 0 and 1"
    if kind in ("pos", "int") and low <= 0:
        return f"{where}.low = {low:g}: must be > 0"
    if kind == "nonneg" and low < 0:
        return f"{where}.low = {low:g}: must be >= 0"
    if kind == "frac" and not (0.0 < low and high <= 1.0):
        return f"{where}: bounds {low:g}..{high:g} must lie in (0, 1]"
    if kind == "fill" and not (0.0 < low and high <= MAX_FILL_FACTOR):
        return f"{where}: bounds {low:g}..{high:g} must lie in (0, {MAX_FILL_FACTOR:g}]"
    if kind == "unit" and not (0.0 <= low and high <= 1.0):
        return f"{where}: bounds {low:g}..{high:g} must lie in [0, 1]"
    limits = _limits(key)
    if limits and not (limits[0] <= high <= limits[1] and (low == 0 or limits[0] <= low)):
        return (
            f"{where}: bounds {low:g}..{high:g} must lie between {limits[0]:g} and "
            f"{limits[1]:g} (the plausible range of {key})"
        )
    if scale == "log" and low <= 0:
        return f"{where}.low = {low:g}: must be > 0 with scale 'log'"
    if scale == "log" and step is not None:
        return f"{where}: scale 'log' and step cannot be combined"
    integer = kind == "int"
    if integer and (low != int(low) or high != int(high)):
        return f"{where}: bounds {low:g}..{high:g} must be whole numbers"
    if step is not None and step > 0:
        count = (high - low) / step
        if step > high - low or abs(count - round(count)) > 1e-9 * max(count, 1.0):
            return (
                f"{where}.step = {step:g}: must divide high - low = {high - low:g} "
                "a whole number of times"
            )
        if integer and step != int(step):
            return f"{where}.step = {step:g}: must be a whole number (integer key)"
    return None


def _categorical(name: str, spec, key: str, problems: list[str]):
    """One ``[search]`` entry ``{ choices = [...] }`` of a text key -> a Parameter, or None (with
    its problems) if the choices are not valid values of ``key``."""
    where = f"search.{name}"
    if not isinstance(spec, dict):
        problems.append(f'{where} = {spec!r}: must be a table {{ choices = ["...", ...] }}')
        return None
    ranged = [k for k in _RANGE_KEYS if k in spec]
    for extra in [k for k in spec if k != "choices" and k not in _RANGE_KEYS]:
        problems.append(
            f"{where}.{extra}: unknown key; allowed: choices{nearest(extra, ['choices'])}"
        )
    if "choices" not in spec:
        problems.append(
            f"{where}: {key} is text, not a number"
            + (f" ({', '.join(ranged)} given)" if ranged else "")
            + '; give its choices = ["...", ...]'
        )
        return None
    if ranged:
        problems.append(
            f"{where}.{ranged[0]}: choices cannot be combined with {', '.join(ranged)} (a list of choices "
            "has no range, scale or step)"
        )
    choices = _choices(where, key, spec["choices"], problems)
    if len(spec) > 1 or choices is None:
        return None
    return Parameter(name, key, choices=choices)


def _numeric_choices(name: str, spec: dict, key: str, kind: str, problems: list[str]):
    """One ``[search]`` entry ``{ choices = [numbers] }`` of a numeric key -> a Parameter, or
    None (with one problem per bad choice): each a finite number of the key's kind (whole for
    ``int``) inside its plausible range, none repeated, no range keys beside them."""
    where = f"search.{name}"
    for extra in [k for k in spec if k != "choices"]:
        if extra in _RANGE_KEYS:
            problems.append(
                f"{where}.{extra}: choices cannot be combined with a range, scale or step"
            )
        else:
            problems.append(
                f"{where}.{extra}: unknown key; allowed: choices, or low, high, scale, step"
            )
    choices = spec["choices"]
    if not isinstance(choices, list) or not choices:
        problems.append(f"{where}.choices = {choices!r}: must be a non-empty list of numbers")
        return None
    out, bad = [], len(spec) > 1
    for i, value in enumerate(choices):
        at = f"{where}.choices[{i}]"
        number = _number(at, value, problems)
        if number is None:
            bad = True
            continue
        problem = _choice_problem(key, kind, number)
        if problem is None and number in out:
            problem = f"repeats choices[{out.index(number)}]"
        if problem is not None:
            problems.append(f"{at} = {value!r}: {problem}")
            bad = True
        out.append(int(number) if kind == "int" and number == int(number) else number)
    return None if bad else Parameter(name, key, choices=tuple(out), integer=kind == "int")


def _choice_problem(key: str, kind: str, value: float) -> str | None:
    """What is wrong with one numeric choice of a ``kind`` key (None: nothing)."""
    if kind == "int" and (value != int(value) or value < 1):
        return "must be a whole number >= 1"
    if kind in ("pos", "int") and value <= 0:
        return "must be > 0"
    if kind == "nonneg" and value < 0:
        return "must be >= 0"
    if kind == "frac" and not 0 < value <= 1:
        return "must lie in (0, 1]"
    if kind == "unit" and not 0 <= value <= 1:
        return "must lie in [0, 1]"
    if kind == "fill" and not 0 < value <= MAX_FILL_FACTOR:
        return f"must lie in (0, {MAX_FILL_FACTOR:g}]"
    limits = _limits(key)
    if limits and value != 0 and not limits[0] <= value <= limits[1]:
        return f"must lie between {limits[0]:g} and {limits[1]:g} (the plausible range of {key})"
    return None


def _choices(where: str, key: str, choices, problems: list[str]) -> tuple[str, ...] | None:
    """The checked choices of a text key (materials as the library names them), or None with
    one problem per bad choice."""
    if not isinstance(choices, list) or not choices:
        problems.append(f"{where}.choices = {choices!r}: must be a non-empty list of strings")
        return None
    out: dict[str, int] = {}
    bad = False
    for i, choice in enumerate(choices):
        at = f"{where}.choices[{i}]"
        if not isinstance(choice, str):
            problems.append(f"{at} = {choice!r}: must be a string")
            bad = True
            continue
        if key.endswith(".material"):
            value = _material_choice(at, key, choice, problems)
        elif key == "drive.compensation":
            value = _compensation_choice(at, choice, problems)
        else:
            value = choice
        if value is None:
            bad = True
        elif value in out:
            same = "" if value == choice else f" ({value!r})"
            problems.append(f"{at} = {choice!r}: repeats choices[{out[value]}]{same}")
            bad = True
        else:
            out[value] = i
    return None if bad else tuple(out)


def _compensation_choice(at: str, choice: str, problems: list[str]) -> str | None:
    """A ``drive.compensation`` choice (models.supply.COMPENSATIONS), or None with its problem."""
    word = choice.strip().lower()
    if word not in COMPENSATIONS:
        problems.append(
            f"{at} = {choice!r}: allowed: {', '.join(COMPENSATIONS)}"
            f"{nearest(word, list(COMPENSATIONS))}"
        )
        return None
    return word


def _material_choice(at: str, key: str, choice: str, problems: list[str]) -> str | None:
    """The library name of a material choice for ``key`` (pole: a magnetic one; coil, ring,
    target: a conductor), or None with its problem."""
    table = key.split(".", 1)[0]
    if table == "pole":  # laminated (conductivity 0): the fast model refuses a solid pole
        allowed = [k for k in CORE_MATERIALS if MATERIALS[k].conductivity == 0]
    else:
        allowed = [k for k, m in MATERIALS.items() if m.conductivity > 0]
    m = MATERIALS.get(choice.strip().lower())
    if m is None:
        problems.append(
            f"{at} = {choice!r}: not in the material library; allowed: {', '.join(allowed)}"
            f"{nearest(choice, allowed)}"
        )
        return None
    if m.name not in allowed:
        if table != "pole":
            why = f"not a conductor (conductivity 0); a {table} needs one"
        elif m.is_magnetic:
            why = "a solid (conductive) steel; the fast model covers laminated poles only"
        else:
            why = "not a magnetic material"
        problems.append(f"{at} = {choice!r}: {why}; allowed: {', '.join(allowed)}")
        return None
    return m.name


def design_source(base: dict, params: list[Parameter], values: dict) -> dict:
    """The design file (a dict in file units) of one trial: ``base`` with ``values`` applied.

    Parameters
    ----------
    base : dict
        The study's base design, as a design file (mm, Hz, A).
    params : list of Parameter
        The study's free parameters.
    values : dict
        Parameter name -> the trial's value (a number, or one of a text key's choices).

    Returns
    -------
    dict
        The trial's design file. Dimensions coupled to a searched one follow it (module
        docstring). A searched material replaces what the base design said about that part's
        material: the keys of ``SET_BY_MATERIAL`` are dropped from the base (so a base pole
        given by ``relative_permeability`` and ``conductivity_S_per_m``, which models.design
        refuses beside a ``material``, becomes a pole of the chosen steel, with the chosen
        steel's saturation flux density), unless the trial sets them itself.
    """
    data = {k: (dict(v) if isinstance(v, dict) else v) for k, v in base.items()}
    if isinstance(base.get("coils"), list):
        data["coils"] = [dict(c) if isinstance(c, dict) else c for c in base["coils"]]
    by_key = {p.key: values[p.name] for p in params if p.key is not None}
    text = {p.key for p in params if p.categorical}
    pole0 = base.get("pole", {}).get("radius_mm")
    for key, value in by_key.items():
        numbered = coil_table_key(key)
        table, k = key.rsplit(".", 1) if numbered else key.split(".", 1)
        if key in text:
            value = str(value)
        else:
            value = int(round(value)) if k == "turns" else float(value)
        if numbered is not None:
            _coil_table(data, key, numbered[0])[k] = value
        else:
            data.setdefault(table, {})[k] = value
    _coils_follow(base, data, by_key)
    for table, (refused, overrides) in SET_BY_MATERIAL.items():
        if f"{table}.material" in by_key:
            for k in (*refused, *overrides):
                if f"{table}.{k}" not in by_key:
                    data[table].pop(k, None)
    pole = data.get("pole", {}).get("radius_mm")
    if pole != pole0 and "coil" in data:
        coil = data["coil"]
        for k in ("inner_radius_mm", "outer_radius_mm"):
            if f"coil.{k}" not in by_key:
                coil[k] = base["coil"][k] + (pole - pole0)
    for mine, other in (("fill_factor", "turns"), ("turns", "fill_factor")):  # the coil one way
        if f"coil.{mine}" in by_key and f"coil.{other}" not in by_key:
            data["coil"].pop(other, None)
    for drive in ("current_A", "voltage_V"):  # a searched drive replaces the base's other one
        if f"drive.{drive}" in by_key:
            other = "voltage_V" if drive == "current_A" else "current_A"
            data["drive"].pop(other, None)
    if "ring_outer_fraction" in values or "ring_inner_fraction" in values:
        ring = data.get("ring")
        if ring is None:
            raise DesignError("search: ring fractions need a [ring] in the base design")
        outer = ring["outer_radius_mm"]
        if "ring_outer_fraction" in values:
            outer = values["ring_outer_fraction"] * pole
        inner_fraction = values.get(
            "ring_inner_fraction", base["ring"]["inner_radius_mm"] / base["ring"]["outer_radius_mm"]
        )
        ring["outer_radius_mm"] = float(outer)
        ring["inner_radius_mm"] = float(inner_fraction * outer)
    return data


def _coil_table(data: dict, key: str, n: int) -> dict:
    """Coil ``n`` of a design's ``[[coils]]`` (DesignError when the base has no such coil)."""
    coils = data.get("coils")
    if not isinstance(coils, list) or n >= len(coils) or not isinstance(coils[n], dict):
        count = len(coils) if isinstance(coils, list) else 0
        raise DesignError(
            f"search.{key}: the base design has {count} [[coils]] table(s); N counts from 0"
        )
    return coils[n]


def _coils_follow(base: dict, data: dict, by_key: dict) -> None:
    """[[coils]] follow a searched pole radius and their own searched turns as [coil] does
    (radii shifted with the pole unless searched; a given wire scaled to keep the copper)."""
    coils = data.get("coils")
    if not isinstance(coils, list):
        return
    pole0 = base.get("pole", {}).get("radius_mm")
    pole = data.get("pole", {}).get("radius_mm")
    for n, coil in enumerate(coils):
        b = base["coils"][n]
        if pole != pole0:
            for k in ("inner_radius_mm", "outer_radius_mm"):
                if f"coils.{n}.{k}" not in by_key:
                    coil[k] = b[k] + (pole - pole0)
        if f"coils.{n}.turns" in by_key and "wire_diameter_mm" in b:
            if f"coils.{n}.wire_diameter_mm" not in by_key:
                coil["wire_diameter_mm"] = b["wire_diameter_mm"] * math.sqrt(
                    b["turns"] / coil["turns"]
                )


def build_design(base: dict, params: list[Parameter], values: dict, name: str) -> Design:
    """Validated design of one trial (DesignError with the reason if it cannot be built)."""
    return design_from_dict(design_source(base, params, values), name=name)


def coupling_rules(base: dict, params: list[Parameter]) -> list[str]:
    """The coupling rules (module docstring) that apply to a study's own parameters and base
    design, one sentence each: what follows a searched key so that a trial stays buildable."""
    keys = {p.key for p in params if p.key is not None}
    names = {p.name for p in params}
    coil = base.get("coil", {})
    out = []
    if "pole.radius_mm" in keys:
        follow = [k for k in ("inner_radius_mm", "outer_radius_mm") if f"coil.{k}" not in keys]
        if follow:
            out.append(
                "the coil follows the pole: a searched pole radius moves coil."
                + " and coil.".join(follow)
                + " by the same amount as the pole radius (the base design's clearance and "
                "winding depth kept, so the coil's window keeps its area)"
            )
    if "turns" not in coil and "wire_diameter_mm" in coil:
        fill = coil.get("fill_factor")
        out.append(
            "the coil is given by its wire and fill factor: its turns are the whole turns of "
            "coil.wire_diameter_mm that fill at most coil.fill_factor "
            + (f"({fill:g})" if fill is not None else "(default 0.6)")
            + " of the window, so a searched wire, fill factor or coil size sets the turns"
        )
    if "coil.turns" in keys:
        if "wire_diameter_mm" in coil or "coil.wire_diameter_mm" in keys:
            out.append(
                "a searched turn count keeps the wire as the study gives it (a size one can buy, "
                "not rescaled); a trial whose turns do not fit the window is refused"
            )
        else:
            out.append(
                "a searched turn count without coil.wire_diameter_mm: the wire is the model's "
                "default copper fill (0.6) of the window, a diameter no one may sell; give "
                "coil.wire_diameter_mm (or search it over standard sizes) to build it"
            )
    if "coil.fill_factor" in keys and "turns" in coil:
        out.append("a searched coil.fill_factor replaces the base design's coil.turns")
    if "coil.turns" in keys and "fill_factor" in coil:
        out.append("a searched coil.turns replaces the base design's coil.fill_factor")
    if names & set(FRACTIONS):
        out.append(
            "the ring follows the pole: ring outer radius = ring_outer_fraction x pole radius, "
            "inner radius = ring_inner_fraction x outer radius"
        )
    for table in SET_BY_MATERIAL:
        if f"{table}.material" in keys:
            out.append(
                f"a searched {table}.material replaces what the base design says of the "
                f"{table}'s material ({', '.join(k for g in SET_BY_MATERIAL[table] for k in g)})"
            )
    for drive, other in (("current_A", "voltage_V"), ("voltage_V", "current_A")):
        if f"drive.{drive}" in keys:
            out.append(f"a searched drive.{drive} replaces the base design's drive.{other}")
    return out or ["none: every searched key moves alone"]
