"""Study files (TOML): the base design, the free parameters, objectives, constraints and budget.

A study file::

    name = "night-1"                  # the study's name and its output folder
    design = "demo_design.toml"       # base design (path relative to this file), and/or inline
    [target]                          # tables as in a design file, which override it key by key
    gap_mm = 2.5
    [search]                          # free parameters: optim.study.space
    ring_outer_fraction = { low = 0.4, high = 0.95 }
    frequency_Hz = { low = 50, high = 5000, scale = "log" }
    pole_material = { choices = ["electrical-steel-m400", "ferrite-mnzn"] }   # a text key
    "coil.wire_diameter_mm" = { choices = [0.56, 0.63, 0.71] }   # a number over choices
    [objectives]                      # result = "maximize" | "minimize" (or -ise), in order
    worst_pull_N = "maximize"
    input_power_W = "minimize"
    [robust]                          # the gap range of worst_pull_N / worst_lift_ratio
    gap_min_mm = 2.0
    gap_max_mm = 4.0
    points = 3
    offset_max_mm = 2.0               # and the part off the axis by 0..2 mm (offset_points, 3)
    built_probability = 0.95          # judged as built (optim.study.built): absent, nominal
    [tolerances]                      # with it, optional: as `eddypull tolerance --spec` reads
    "ring.depth_mm" = 0.05
    [[parts]]                         # or a family of parts instead of [target] overrides:
    name = "cap10"                    #   optim.study.parts (each part's size, metal, gap range
    radius_mm = 5.0                   #   and role, "lift" or "leave"); results by part and
    thickness_mm = 0.6                #   over the family: optim.study.family
    material = "aluminium-1350"
    [constraints]                     # result = { min = ..., max = ... }
    ring_temperature_C = { max = 180 }
    [run]                             # budget and engine; the command line overrides these
    trials = 2000                     # trials in one run (a resumed run adds as many again)
    minutes = 30                      # or hours; at least one of trials, minutes, hours
    workers = 2
    sampler = "nsga2"                 # "auto" (default: TPE for ~3,000 trials a worker, then NSGA-II), "nsga2", "tpe", "random"
    population = 40                   # NSGA-II's (default 40)
    seed = 1
    storage = "postgresql+psycopg://user@host/db"   # default: a journal file in the study folder
    isothermal = false                # true: every part at 20 degC (no thermal coupling)
    allow_out_of_depth = false        # true: keep designs whose linear model is out of its depth
                                      # (core past saturation, thermal runaway, a current the wire
                                      # cannot carry); default: infeasible by a design rule
"""

from __future__ import annotations

import hashlib
import json
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from models.design import DESIGN_KEYS, PLAUSIBLE_LIMITS, design_from_dict, read_toml
from models.errors import DesignError, nearest
from models.result import FLAT_FIELDS, MODEL_VERSION
from optim.files import safe_name
from optim.study.built import built_names, parse_built
from optim.study.objectives import Constraint, Objective, results_of
from optim.study.parts import GAP_KEYS, Part, parse_parts, part_source
from optim.study.space import Parameter, design_source, parse_search

__all__ = [
    "StudySpec",
    "load_study_spec",
    "spec_from_dict",
    "spec_from_json",
    "SAMPLERS",
    "RUN_MAX",
]

SAMPLERS = ("auto", "nsga2", "tpe", "random")
_TOP = {
    "name",
    "description",
    "design",
    "search",
    "objectives",
    "robust",
    "constraints",
    "run",
    "parts",
    "tolerances",  # issue 30: a study judged as built (optim.study.built)
}
_RUN_KEYS = {
    "trials": "int",
    "minutes": "pos",
    "hours": "pos",
    "workers": "int",
    "sampler": "str",
    "population": "int",
    "seed": "int0",
    "storage": "url",
    "isothermal": "bool",
    "allow_out_of_depth": "bool",
}
#: Largest sensible value of each [run] number: a year of wall time, the worker limit of one
#: machine, a NSGA-II population far beyond any useful one (common practice, no source), and the
#: largest 31-bit seed (worker seeds derive from it: optim.study.sampler.derive_seed).
RUN_MAX = {
    "trials": 10**9,
    "minutes": 525_600,
    "hours": 8_760,
    "workers": 64,
    "population": 10_000,
    "seed": 2**31 - 1,
}
_WORST = ("worst_pull_N", "worst_lift_ratio")
#: [robust] keys of the part off the axis: the largest offset and how many from 0 to it.
OFFSET_KEYS = ("offset_max_mm", "offset_points")
#: Results that need the sheet model at the axis (models.fast.offset): evaluate(lateral=True).
LATERAL_RESULTS = ("centring_stiffness_N_per_m", "centring_stiffness_uncertainty_N_per_m")
#: Results of a family with a leave part (optim.study.family).
_LEAVE_RESULTS = ("best_leave_lift_ratio", "selectivity_margin")
#: Results of the lift in time, 0 where the holding gap is not below the pick gap (no lift).
_LIFT_RESULTS = ("pick_time_ms", "contact_speed_m_per_s")
GAP_LIMITS_MM = PLAUSIBLE_LIMITS["_mm"]


@dataclass
class StudySpec:
    """A parsed, validated study. ``base`` is the base design as a file dict (mm, Hz, A)."""

    name: str
    base: dict
    params: list[Parameter]
    objectives: list[Objective]
    constraints: list[Constraint]
    gaps_mm: tuple = ()
    run: dict = field(default_factory=dict)
    description: str = ""
    folder: Path | None = None
    result_names: tuple = ()
    parts: tuple[Part, ...] = ()
    offsets_mm: tuple = ()
    built: object = None  # issue 30: optim.study.built.BuiltSpec, None: a nominal study

    @property
    def lateral(self) -> bool | None:
        """``evaluate``'s ``lateral`` for this study's trials: True where an objective or a
        constraint is the centring stiffness, else None (an offset part's own)."""
        names = {o.name for o in self.objectives} | {c.name for c in self.constraints}
        return True if names & set(LATERAL_RESULTS) else None

    def to_json(self) -> dict:
        """Everything needed to rebuild the spec without its file (kept in the storage)."""
        out = {
            "name": self.name,
            "description": self.description,
            "base": self.base,
            "search": {p.name: _search_json(p) for p in self.params},
            "objectives": {o.name: o.direction for o in self.objectives},
            "robust": self._robust_json(),
            "constraints": {
                c.name: {k: v for k, v in (("min", c.low), ("max", c.high)) if v is not None}
                for c in self.constraints
            },
            "run": {k: v for k, v in self.run.items() if k != "storage"},
        } | ({"parts": [p.to_json() for p in self.parts]} if self.parts else {})
        if self.built is not None and self.built.table is not None:  # issue 30
            out["tolerances"] = self.built.table
        return out

    def _robust_json(self):
        out = {}
        if self.gaps_mm:
            g = self.gaps_mm
            out = {"gap_min_mm": g[0], "gap_max_mm": g[-1], "points": len(g)}
        if self.offsets_mm:
            o = self.offsets_mm
            out |= {"offset_max_mm": o[-1], "offset_points": len(o)}
        return out | ({} if self.built is None else self.built.robust_json())  # issue 30

    def fingerprint(self) -> str:
        """Hash of what defines the study's trials (base design, search, objectives, robust
        range, constraints, parts, isothermal, the fast model's version): a resumed study must
        match it. A study without ``[[parts]]`` hashes as it did before parts existed."""

        d = self.to_json()
        key = {k: d[k] for k in ("base", "search", "objectives", "robust", "constraints")}
        if self.parts:
            key["parts"] = d["parts"]
        if "tolerances" in d:  # issue 30: a study judged as built with its own tolerances
            key["tolerances"] = d["tolerances"]
        key["isothermal"] = bool(self.run.get("isothermal", False))
        if self.run.get("allow_out_of_depth", False):  # a study without it hashes as before
            key["allow_out_of_depth"] = True
        key["model"] = MODEL_VERSION
        key["objectives"] = [[o.name, o.direction] for o in self.objectives]  # order matters
        text = json.dumps(key, sort_keys=True, separators=(",", ":"))
        return hashlib.sha256(text.encode()).hexdigest()[:16]

    @property
    def directions(self) -> list[str]:
        return [o.direction for o in self.objectives]


def _search_json(p: Parameter) -> dict:
    """One ``[search]`` entry as the study file gives it: a range, or its choices."""
    if p.choices:
        return {"choices": list(p.choices)}
    return (
        {"low": p.low, "high": p.high}
        | ({"scale": "log"} if p.log else {})
        | ({"step": p.step} if p.step else {})
    )


def finite_number(value) -> bool:
    """True for an int or float (not a bool) that is finite as a float (10**400 is not)."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return False
    try:
        return math.isfinite(value)
    except OverflowError:  # an int beyond the float range
        return False


def _check(where, value, kind, problems, most=None):
    ok = {
        "int": isinstance(value, int) and not isinstance(value, bool) and value >= 1,
        "int0": isinstance(value, int) and not isinstance(value, bool) and value >= 0,
        "pos": finite_number(value) and value > 0,
        "str": isinstance(value, str),
        "bool": isinstance(value, bool),
        "url": isinstance(value, str) and "://" in value,
    }[kind]
    if ok and most is not None and value > most:
        problems.append(f"{where} = {value!r}: must be at most {most}")
        return None
    if not ok:
        allowed = {
            "int": "a whole number >= 1",
            "int0": "a whole number >= 0",
            "pos": "a number > 0",
            "str": "a string",
            "bool": "true or false",
            "url": "a database URL (scheme://...); leave it out for the study folder's journal",
        }[kind]
        shown = "missing" if value is None else f"= {value!r}"
        problems.append(f"{where} {shown}: must be {allowed}")
        return None
    return value


def _base_design(data: dict, folder: Path, problems: list[str]) -> dict | None:
    base: dict = {}
    ref = data.get("design")
    if ref is not None:
        if not isinstance(ref, str):
            problems.append(f"design = {ref!r}: must be the path of a design file (a string)")
            return None
        path = (folder / ref) if not Path(ref).is_absolute() else Path(ref)
        try:
            base = read_toml(path, "design file")
        except DesignError as err:
            problems.append(f"design = {ref!r}: " + err.problems[0])
            return None
        base.pop("name", None)
        base.pop("description", None)
    for table in DESIGN_KEYS:
        if table in data:
            if not isinstance(data[table], dict):
                problems.append(f"{table} = {data[table]!r}: must be a table [{table}]")
                continue
            base.setdefault(table, {})
            if not isinstance(base[table], dict):
                base[table] = {}
            base[table].update(data[table])
            if table == "coil":  # a coil given one way in the study replaces the file's other way
                given = data["coil"]
                if "fill_factor" in given and "turns" not in given:
                    base["coil"].pop("turns", None)
                elif "turns" in given and "fill_factor" not in given:
                    base["coil"].pop("fill_factor", None)
    if not base:
        problems.append('design: missing; give design = "file.toml" or the design\'s tables inline')
        return None
    return base


#: The British spellings of the directions, read as optuna's (what the study stores, so that a
#: study file in either spelling is the same study).
DIRECTION_SPELLINGS = {"maximise": "maximize", "minimise": "minimize"}


def _objectives(table, problems) -> tuple[list[Objective], dict]:
    if not isinstance(table, dict) or not table:
        problems.append('[objectives]: must list at least one result = "maximize" | "minimize"')
        return [], {}
    out, robust = [], {}
    for name, spec in table.items():
        direction = spec
        if isinstance(spec, dict):
            direction = spec.get("direction")
            for extra in set(spec) - {"direction", "gap_min_mm", "gap_max_mm", "points"}:
                problems.append(
                    f"objectives.{name}.{extra}: unknown key; allowed: direction, gap_min_mm, "
                    "gap_max_mm, points"
                )
            robust.update({k: v for k, v in spec.items() if k != "direction"})
        if isinstance(spec, dict) and direction is None:
            problems.append(
                f"objectives.{name}.direction: missing; must be 'maximize' or 'minimize'"
            )
            continue
        direction = (
            DIRECTION_SPELLINGS.get(direction, direction)
            if isinstance(direction, str)
            else direction
        )
        if direction not in ("maximize", "minimize"):
            problems.append(
                f"objectives.{name} = {direction!r}: must be 'maximize' or 'minimize' (or "
                "'maximise', 'minimise')"
            )
            continue
        out.append(Objective(name, direction))
    return out, robust


def _constraints(table, problems) -> list[Constraint]:
    if table is None:
        return []
    if not isinstance(table, dict):
        problems.append(f"constraints = {table!r}: must be a table of result = {{ min/max }}")
        return []
    out = []
    for name, spec in table.items():
        where = f"constraints.{name}"
        if not isinstance(spec, dict) or not spec:
            problems.append(f"{where} = {spec!r}: must be a table {{ min = ..., max = ... }}")
            continue
        bounds = {}
        for k, v in spec.items():
            if k not in ("min", "max"):
                problems.append(
                    f"{where}.{k}: unknown key; allowed: min, max{nearest(k, ['min', 'max'])}"
                )
            elif not finite_number(v):
                problems.append(f"{where}.{k} = {v!r}: must be a finite number")
            else:
                bounds[k] = float(v)
        if "min" in bounds and "max" in bounds and bounds["min"] > bounds["max"]:
            problems.append(f"{where}: min = {bounds['min']:g} must be <= max = {bounds['max']:g}")
            continue
        if bounds:
            out.append(Constraint(name, bounds.get("min"), bounds.get("max")))
    return out


def _robust_gaps(robust: dict, problems, where: str = "robust") -> tuple:
    """The gaps [mm] of a range ``{gap_min_mm, gap_max_mm, points}`` (points default 3), evenly
    spaced; () with the problems (named ``where``) if it is not a range."""
    lo, hi, n = robust.get("gap_min_mm"), robust.get("gap_max_mm"), robust.get("points", 3)
    for extra in set(robust) - set(GAP_KEYS):
        problems.append(f"{where}.{extra}: unknown key; allowed: gap_min_mm, gap_max_mm, points")
    if _check(f"{where}.gap_min_mm", lo, "pos", problems) is None:
        return ()
    if _check(f"{where}.gap_max_mm", hi, "pos", problems) is None:
        return ()
    if _check(f"{where}.points", n, "int", problems) is None:
        return ()
    for key, value in (("gap_min_mm", lo), ("gap_max_mm", hi)):
        if not GAP_LIMITS_MM[0] <= value <= GAP_LIMITS_MM[1]:
            low, high = GAP_LIMITS_MM
            problems.append(f"{where}.{key} = {value!r}: must be between {low:g} and {high:g}")
            return ()
    if hi < lo:
        problems.append(f"{where}: gap_max_mm = {hi:g} must be >= gap_min_mm = {lo:g}")
        return ()
    if n > 50:
        problems.append(f"{where}.points = {n}: must be at most 50")
        return ()
    return tuple(float(x) for x in np.linspace(lo, hi, n if hi > lo else 1))


def _robust_offsets(robust: dict, problems) -> tuple:
    """The offsets [mm] of ``[robust] offset_max_mm`` (and ``offset_points``, default 3): evenly
    from 0 to the largest (the pull is even in the offset); () without them."""
    top, n = robust.get("offset_max_mm"), robust.get("offset_points", 3)
    if top is None:
        if "offset_points" in robust:
            problems.append(
                f"robust.offset_points = {robust['offset_points']!r}: needs robust.offset_max_mm "
                "(the largest offset of the part from the pole's axis)"
            )
        return ()
    if _check("robust.offset_max_mm", top, "pos", problems) is None:
        return ()
    if _check("robust.offset_points", n, "int", problems) is None:
        return ()
    if not 2 <= n <= 50:
        problems.append(f"robust.offset_points = {n}: must be between 2 and 50")
        return ()
    return tuple(float(x) for x in np.linspace(0.0, top, n))


def spec_from_dict(data: dict, folder: Path | None = None, name: str = "study") -> StudySpec:
    """Validate a study dict (file units); raises DesignError with one line per problem."""
    problems: list[str] = []
    folder = Path(folder or ".")
    if not isinstance(data, dict):
        raise DesignError(f"study = {data!r}: must be a table of tables")
    study_name = _top_level(data, name, problems)
    base = _base_design(data, folder, problems)
    params = parse_search(data.get("search"), problems)
    objectives, robust = _objectives(data.get("objectives"), problems)
    if isinstance(data.get("robust"), dict):
        robust = {**data["robust"], **robust}
    elif "robust" in data:
        problems.append(f"robust = {data['robust']!r}: must be a table")
    constraints = _constraints(data.get("constraints"), problems)
    run = _run_table(data, problems)
    _check_result_names(objectives, constraints, problems)
    if problems:
        raise DesignError(problems)
    built = parse_built(robust, data.get("tolerances"), base, problems)
    if problems:
        raise DesignError(problems)

    names = {o.name for o in objectives} | {c.name for c in constraints}
    offsets = _robust_offsets(robust, problems)
    asked_offsets = any(k in robust for k in OFFSET_KEYS)
    robust = {k: v for k, v in robust.items() if k not in OFFSET_KEYS}
    parts: list[Part] = []
    if "parts" in data:
        if asked_offsets:
            problems.append(
                "robust.offset_max_mm: not with [[parts]] (a family's parts are taken centred)"
            )
        gaps = _robust_gaps(robust, problems) if robust else ()
        parts = _family(data, base, params, robust, gaps, problems)
        if not problems:
            base = part_source(base, next(p for p in parts if p.role == "lift"))
    else:
        wanted = robust or (names & set(_WORST) and not asked_offsets)
        gaps = _robust_gaps(robust, problems) if wanted else ()
    if problems:
        raise DesignError(problems)
    lateral = True if names & set(LATERAL_RESULTS) else None
    known = _model_results(
        base,
        params,
        objectives,
        constraints,
        gaps,
        run,
        str(study_name),
        tuple(parts),
        offsets=offsets,
        lateral=lateral,
    )
    return StudySpec(
        name=str(study_name),
        base=base,
        params=params,
        objectives=objectives,
        constraints=constraints,
        gaps_mm=gaps,
        run=dict(run),
        description=str(data.get("description", "")),
        folder=folder,
        result_names=tuple(known)
        + (tuple(built_names(objectives, constraints)) if built is not None else ()),
        parts=tuple(parts),
        offsets_mm=offsets,
        built=built,  # issue 30
    )


#: Results a study adds to the model's flat fields (optim.study.objectives, optim.study.family).
_STUDY_RESULTS = (*_WORST, "best_leave_lift_ratio", "selectivity_margin", "out_of_depth")


def _check_result_names(objectives, constraints, problems: list[str]) -> None:
    """Names that no design could give, found in the first pass with the file's other problems
    (the model's flat fields, models.result.FIELDS, and the study's own results); a name with a
    dot (``margins.<limit>``, ``parts.<name>.<result>``) is checked against the base design's
    results once the file reads."""
    known = {name for _, name in FLAT_FIELDS} | set(_STUDY_RESULTS)
    for what, items in (("objectives", objectives), ("constraints", constraints)):
        for item in items:
            if "." not in item.name and item.name not in known:
                problems.append(
                    f"{what}.{item.name}: not a result of the model"
                    f"{nearest(item.name, sorted(known))}; 'eddypull study results' lists them"
                )


def _family(data: dict, base, params, robust: dict, gaps: tuple, problems) -> list[Part]:
    """The ``[[parts]]`` of a study (optim.study.parts), with what a family cannot be combined
    with: ``[target]`` overrides of a design file, a searched part size or metal."""
    if "target" in data and data.get("design") is not None:
        problems.append(
            "target: a [target] table cannot be combined with [[parts]]; allowed: the parts' own "
            "keys (size, metal, gap range, role), with the design's own gap from the design file"
        )
    for p in params:
        if p.key is not None and p.key.startswith("target.") and p.key != "target.gap_mm":
            problems.append(
                f"search.{p.name}: sets {p.key}, which [[parts]] give part by part; allowed "
                "with [[parts]]: target.gap_mm (gap_mm, the design's own gap)"
            )
    robust_ok = not robust or bool(gaps)

    def gaps_of(where, keys, found):
        if not keys or not robust_ok:  # a bad [robust] range is reported once, as robust.*
            return gaps
        return _robust_gaps({**robust, **keys}, found, where=where)

    return parse_parts(data["parts"], base, gaps_of, problems)


def _top_level(data: dict, name: str, problems: list[str]):
    """Check the study file's top-level keys, description and name; return the study's name."""
    for key in data:
        if key not in _TOP and key not in DESIGN_KEYS:
            allowed = [*sorted(_TOP), *DESIGN_KEYS]
            problems.append(
                f"{key}: unknown table or key of a study file; allowed: {', '.join(allowed)}"
                f"{nearest(key, allowed)}"
            )
    if not isinstance(data.get("description", ""), str):
        problems.append(f"description = {data['description']!r}: must be a string")
    study_name = data.get("name", name)
    try:
        safe_name(study_name, "name")
    except DesignError as err:
        problems.extend(err.problems)
    return study_name


def _run_table(data: dict, problems: list[str]) -> dict:
    """The ``[run]`` table, each key checked against ``_RUN_KEYS`` and ``RUN_MAX``."""
    run = data.get("run", {})
    if not isinstance(run, dict):
        problems.append(f"run = {run!r}: must be a table")
        run = {}
    for k, v in run.items():
        if k not in _RUN_KEYS:
            problems.append(
                f"run.{k}: unknown key; allowed: {', '.join(_RUN_KEYS)}{nearest(k, _RUN_KEYS)}"
            )
        else:
            _check(f"run.{k}", v, _RUN_KEYS[k], problems, RUN_MAX.get(k))
    population = run.get("population")
    if isinstance(population, int) and not isinstance(population, bool) and population == 1:
        problems.append("run.population = 1: must be >= 2 (NSGA-II breeds pairs)")
    if isinstance(run.get("sampler"), str) and run["sampler"] not in SAMPLERS:
        problems.append(f"run.sampler = {run['sampler']!r}: must be one of {', '.join(SAMPLERS)}")
    return run


def _model_results(
    base, params, objectives, constraints, gaps, run, study_name, parts=(), offsets=(), lateral=None
) -> list[str]:
    """Check the study against the model: the base design and the middle of the search space
    must be buildable (with every part of a family), every objective and constraint must be a
    result of the model. Returns the sorted names of the model's flat results; raises
    DesignError otherwise."""
    # The base design must itself be a valid design, and every trial is built from it.

    problems: list[str] = []
    mid = {p.name: _mid(p) for p in params}
    try:
        base_design = design_from_dict(base, name=study_name)
    except DesignError as err:
        raise DesignError([f"base design: {line}" for line in err.problems]) from None
    _check_choices(base, params, mid, study_name)
    try:  # a search whose middle cannot be built would spend its night on failed trials
        design_from_dict(design_source(base, params, mid), name=study_name)
    except DesignError as err:
        raise DesignError(
            "search: the design at the middle of the search space cannot be built ("
            + "; ".join(err.problems)
            + "); narrow the bounds"
        ) from None
    _check_parts_at_middle(base, params, mid, parts, study_name)
    isothermal = bool(run.get("isothermal", False))
    if offsets and offsets[-1] >= (base_design.target.radius + base_design.pole.radius) * 1e3:
        reach = (base_design.target.radius + base_design.pole.radius) * 1e3
        raise DesignError(
            f"robust.offset_max_mm = {offsets[-1]:g}: must be < target.radius_mm + "
            f"pole.radius_mm = {reach:g} mm of the base design (beyond it the part is clear of "
            "the pole)"
        )
    flat, _, _ = results_of(
        base_design, gaps, isothermal=isothermal, parts=parts, offsets_mm=offsets, lateral=lateral
    )
    known = sorted(flat)

    fields = {name for _, name in FLAT_FIELDS}
    for what, items in (("objectives", objectives), ("constraints", constraints)):
        for item in items:
            if item.name in fields and item.name not in flat:
                why = "it has no ring" if base_design.ring is None else "the model gives none"
                problems.append(
                    f"{what}.{item.name}: the base design cannot have this result ({why}); "
                    "remove it or add the part"
                )
            elif item.name in _LIFT_RESULTS and flat.get(item.name) == 0.0:
                problems.append(
                    f"{what}.{item.name}: the base design has no lift (thermal.hold_gap_mm, the "
                    "gap at contact, must be below target.gap_mm, the pick gap)"
                )
            elif item.name in _LEAVE_RESULTS and item.name not in flat:
                problems.append(
                    f"{what}.{item.name}: needs a part with role = 'leave' in [[parts]] (a part "
                    "the magnet must leave where it lies)"
                )
            elif item.name not in flat:
                problems.append(
                    f"{what}.{item.name}: not a result of the model{nearest(item.name, known)}; "
                    "'eddypull study results' lists them"
                )
    if len({o.name for o in objectives}) != len(objectives):
        problems.append("objectives: each result may appear once")
    if problems:
        raise DesignError(problems)
    return known


def _check_parts_at_middle(base, params, mid, parts, study_name) -> None:
    """Every part of a family must give a design at the middle of the search space; raises
    DesignError with one line per part that does not."""

    problems = []
    for i, part in enumerate(parts):
        try:
            design_from_dict(part_source(design_source(base, params, mid), part), name=study_name)
        except DesignError as err:
            problems.append(
                f"parts[{i}] ({part.name}): the design at the middle of the search space cannot "
                f"be built with this part ({'; '.join(err.problems)}); narrow the bounds"
            )
    if problems:
        raise DesignError(problems)


def _check_choices(base, params, mid, study_name) -> None:
    """Every choice of a text parameter must give a design at the middle of the search space
    (with the others at their middle); raises DesignError with one line per choice that does
    not."""

    problems = []
    for p in params:
        for i, choice in enumerate(p.choices):
            try:
                design_from_dict(
                    design_source(base, params, mid | {p.name: choice}), name=study_name
                )
            except DesignError as err:
                problems.append(
                    f"search.{p.name}.choices[{i}] = {choice!r}: the design at the middle of the "
                    f"search space cannot be built with it ({'; '.join(err.problems)})"
                )
    if problems:
        raise DesignError(problems)


def _mid(p: Parameter):
    """The middle of a parameter's range (its first choice for a key searched over choices)."""
    if p.choices:
        return p.choices[0]
    if p.log:
        v = math.sqrt(p.low * p.high)
    else:
        v = 0.5 * (p.low + p.high)
    return int(round(v)) if p.integer else v


def load_study_spec(path) -> StudySpec:
    """Read and validate a study file; DesignError (one line per problem) if it is wrong."""
    path = Path(path)
    data = read_toml(path, "study file")
    return spec_from_dict(data, folder=path.resolve().parent, name=path.stem)


def spec_from_json(d: dict) -> StudySpec:
    """Rebuild a spec from ``StudySpec.to_json()`` (as kept in the storage)."""
    data = {
        "name": d["name"],
        "description": d.get("description", ""),
        **d["base"],
        "search": d["search"],
        "objectives": d["objectives"],
        "constraints": d.get("constraints", {}),
        "run": d.get("run", {}),
    }
    if d.get("robust"):
        data["robust"] = d["robust"]
    if d.get("parts"):
        data["parts"] = d["parts"]
    if d.get("tolerances") is not None:  # issue 30
        data["tolerances"] = d["tolerances"]
    return spec_from_dict(data, name=d["name"])
