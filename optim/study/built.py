"""A study judged as built: ``[robust] built_probability`` (issue 30).

A study file may ask that each design be judged as the magnets built from it will be, not at its
nominal values::

    [robust]
    built_probability = 0.95        # in (0.5, 1)
    built_method = "linear"         # or "sample" (default "linear")
    built_samples = 16              # real-model samples of "sample" (default 16)

    [tolerances]                    # optional; the keys and forms `eddypull tolerance --spec` reads
    "ring.depth_mm" = 0.1
    "drive.current_A" = "2 %"

Without a ``[tolerances]`` table the default tolerances of ``optim.study.tolerance`` apply,
adjusted for a study (``study_tolerances``): no gap tolerance where the study already ranges the
gap (its ``[robust]`` gaps); a voltage-driven design's supply +-10 % (IEC 60038's band for mains),
a current-driven one's current +-2 % (common practice, no source); a capacitor +-5 % (common
practice, no source), the capacitor fixed at its nominal value as a built magnet's is
(``optim.study.tolerance._capacitor_as_built``). A table replaces the defaults entirely: its
keys and only those are toleranced.

Every tolerance is read as ``eddypull tolerance`` reads it: the key **uniform** within +- its
half-width, the keys independent.

Each constraint is judged one by one: a lower limit at the value that ``built_probability`` of
built magnets exceed (the 1 - p quantile), an upper limit at the value they stay below (the p
quantile); each objective at its pessimistic quantile (maximised: the 1 - p quantile; minimised:
the p quantile). The trial's added results:

* ``<result>_built``: the quantile used, for every constrained or optimised result (a result both
  constrained and optimised shows the constraint's quantile; the objective uses its own);
* ``built_share.<constraint>``: the estimated share of built magnets keeping it;
* ``built_share_all``: the share keeping all of them at once (reported, not constrained).

A trial that breaks a constraint or a design rule at its nominal values is not judged: it is
infeasible as built too (``nominally_infeasible``); its ``<result>_built`` are its nominal values
and its shares nan (``not_judged``). Most of a search's trials are of this kind, so this is where
most of the cost of a built study is saved.

Two methods:

* ``"linear"`` (default): one-sided sensitivities, f(x + h_i) - f(x) for each of the k toleranced
  keys (k evaluations beside the nominal one; the other side where the design rules refuse one),
  then the linear combination sum_i d_i u_i with u_i uniform in [-1, 1], its distribution taken
  from ``LINEAR_POINTS`` scrambled Sobol points (scipy.stats.qmc), fixed seed: the quantiles of a
  sum of uniforms without a normal approximation, and the joint share of all constraints;
* ``"sample"``: ``built_samples`` scrambled Sobol points evaluated on the real model; quantiles
  and shares from them (a refused sample keeps no constraint and counts as the worst value).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy.stats import qmc

from models.design import design_from_dict, with_fixed_capacitor
from models.errors import DesignError
from optim.study.objectives import design_rule_violations, results_of
from optim.study.tolerance import (
    _make,
    default_tolerances,
    parse_tolerance_table,
    tolerances_for,
    varied_design,
)

__all__ = [
    "BUILT_KEYS",
    "BuiltSpec",
    "CAPACITOR_TOLERANCE",
    "CURRENT_TOLERANCE",
    "LINEAR_POINTS",
    "VOLTAGE_TOLERANCE",
    "built_names",
    "judge_built",
    "judged",
    "nominally_infeasible",
    "not_judged",
    "parse_built",
    "quantiles_of",
    "sobol_unit",
    "study_tolerances",
]

#: The [robust] keys of a study judged as built.
BUILT_KEYS = ("built_probability", "built_method", "built_samples")
METHODS = ("linear", "sample")
DEFAULT_SAMPLES = 16
#: Sobol points of the linear estimate's distribution (2^12: a quantile's share within ~1/4096).
LINEAR_POINTS_LOG2 = 12
LINEAR_POINTS = 2**LINEAR_POINTS_LOG2
#: A voltage-driven design's supply: IEC 60038's +-10 % band for mains.
VOLTAGE_TOLERANCE = 0.10
#: A current-driven design's current (common practice, no source).
CURRENT_TOLERANCE = 0.02
#: A capacitor's capacitance (common practice, no source).
CAPACITOR_TOLERANCE = 0.05
SOBOL_SEED = 30


@dataclass(frozen=True)
class BuiltSpec:
    """What ``[robust] built_*`` and ``[tolerances]`` ask for (``table``: the study file's
    tolerance table in its file forms, None: the study's defaults)."""

    probability: float
    method: str = "linear"
    samples: int = DEFAULT_SAMPLES
    table: dict | None = None

    def robust_json(self) -> dict:
        out = {"built_probability": self.probability}
        if self.method != "linear":
            out["built_method"] = self.method
        if self.samples != DEFAULT_SAMPLES:
            out["built_samples"] = self.samples
        return out


def parse_built(robust: dict, table, base: dict, problems: list[str]) -> BuiltSpec | None:
    """Take the ``BUILT_KEYS`` out of ``robust`` (in place) and check them with the study
    file's ``[tolerances]`` ``table`` against the base design file dict ``base``; None where the
    study does not ask for it. Problems are appended one line each."""
    given = {k: robust.pop(k) for k in BUILT_KEYS if k in robust}
    if "built_probability" not in given:
        for k in given:
            problems.append(f"robust.{k}: needs robust.built_probability")
        if table is not None:
            problems.append(
                "[tolerances]: needs robust.built_probability (a study judged as built)"
            )
        return None
    p = given["built_probability"]
    ok = isinstance(p, (int, float)) and not isinstance(p, bool) and 0.5 < p < 1
    if not ok:
        problems.append(
            f"robust.built_probability = {p!r}: must be a number between 0.5 and 1 (both "
            "excluded), e.g. 0.95"
        )
    method = given.get("built_method", "linear")
    if method not in METHODS:
        problems.append(f"robust.built_method = {method!r}: must be 'linear' or 'sample'")
    samples = given.get("built_samples", DEFAULT_SAMPLES)
    if isinstance(samples, bool) or not isinstance(samples, int) or not 2 <= samples <= 4096:
        problems.append(f"robust.built_samples = {samples!r}: must be a whole number, 2 to 4096")
    if table is not None:
        _check_table(table, base, problems)
    if not ok or method not in METHODS or problems:
        return None
    return BuiltSpec(float(p), method, int(samples), None if table is None else dict(table))


def _check_table(table, base: dict, problems: list[str]) -> None:
    """The ``[tolerances]`` table's keys and values, as ``eddypull tolerance --spec`` checks
    them (a negative half-width or an unknown key: one line each), against the base design."""

    try:
        design = design_from_dict(base, name="base")
        tolerances_for(design, parse_tolerance_table(table, design))
    except DesignError as err:
        problems.extend(err.problems)


def built_names(objectives, constraints) -> list[str]:
    """The result columns a study judged as built adds."""
    names = list(dict.fromkeys([*(c.name for c in constraints), *(o.name for o in objectives)]))
    return [
        *(f"{n}_built" for n in names),
        *(f"built_share.{c.name}" for c in constraints),
        "built_share_all",
    ]


def study_tolerances(design, built: BuiltSpec, gaps_mm=()) -> list:
    """The tolerances of ``design`` in a study judged as built (``optim.study.tolerance.
    Tolerance``): the ``[tolerances]`` table's, or the study's defaults (module docstring)."""

    if built.table is not None:
        table = parse_tolerance_table(built.table, design)
        tols = [_make(design, k, v, rel, "study file") for k, (v, rel) in table.items()]
        return [t for t in tols if t.half_width > 0]
    tols = []
    for t in default_tolerances(design):
        if t.key == "target.gap_mm" and len(gaps_mm):
            continue
        if t.key == "drive.voltage_V":
            t = _make(design, t.key, VOLTAGE_TOLERANCE, True, "study default (IEC 60038)")
        elif t.key == "drive.current_A":
            t = _make(design, t.key, CURRENT_TOLERANCE, True, "study default")
        tols.append(t)
    if design.drive.capacitance is not None:
        cap = _make(design, "drive.capacitance_uF", CAPACITOR_TOLERANCE, True, "study default")
        tols.append(cap)
    return [t for t in tols if t.half_width > 0]


@lru_cache(maxsize=64)
def sobol_unit(k: int, log2_points: int) -> np.ndarray:
    """2^log2_points scrambled Sobol points in [-1, 1]^k (fixed seed; read-only)."""

    u = qmc.Sobol(d=k, scramble=True, seed=SOBOL_SEED).random_base2(log2_points)
    out = 2.0 * u - 1.0
    out.setflags(write=False)
    return out


def quantiles_of(values: dict, p: float, objectives, constraints) -> dict[str, float]:
    """The built columns from ``values`` (result name -> array over built magnets; nan: a
    refused magnet, counted as the worst value and as keeping no constraint)."""
    out = {}
    kept = []
    for c in constraints:
        v = np.asarray(values[c.name], float)
        ok = np.isfinite(v)
        keep = ok.copy()
        if c.low is not None:
            keep &= np.where(ok, v, -np.inf) >= c.low
        if c.high is not None:
            keep &= np.where(ok, v, np.inf) <= c.high
        kept.append(keep)
        out[f"built_share.{c.name}"] = float(np.mean(keep))
        lo = float(np.quantile(np.where(ok, v, -np.inf), 1 - p)) if c.low is not None else None
        hi = float(np.quantile(np.where(ok, v, np.inf), p)) if c.high is not None else None
        if lo is not None and hi is not None:  # the side nearer its limit
            out[f"{c.name}_built"] = lo if c.margin(lo) <= c.margin(hi) else hi
        else:
            out[f"{c.name}_built"] = lo if lo is not None else hi
    out["built_share_all"] = float(np.mean(np.all(kept, axis=0))) if kept else 1.0
    for o in objectives:
        v = np.asarray(values[o.name], float)
        ok = np.isfinite(v)
        if o.direction == "maximize":
            q = float(np.quantile(np.where(ok, v, -np.inf), 1 - p))
        else:
            q = float(np.quantile(np.where(ok, v, np.inf), p))
        out[f"objective_built.{o.name}"] = q
        out.setdefault(f"{o.name}_built", q)
    return out


def judged(flat: dict, spec) -> tuple[dict, dict]:
    """(what the objectives read, what the constraints read): ``flat`` with each optimised
    result replaced by its objective's quantile, and each constrained one by its
    constraint's."""
    objectives, constraints = dict(flat), dict(flat)
    for o in spec.objectives:
        objectives[o.name] = flat[f"objective_built.{o.name}"]
    for c in spec.constraints:
        constraints[c.name] = flat[f"{c.name}_built"]
    return objectives, constraints


def _as_built(design, flat: dict):
    """``design`` with a tuned capacitor fixed at its nominal value (``flat["capacitor_uF"]``):
    a built magnet's capacitor does not retune to its coil."""
    drive = design.drive
    if getattr(drive, "compensation", "none") == "none" or drive.capacitance is not None:
        return design
    c_uF = flat.get("capacitor_uF", 0.0)
    if not c_uF > 0:
        return design

    return with_fixed_capacitor(design, c_uF * 1e-6)


def _flat_of(spec, isothermal):

    def f(design):
        return results_of(design, spec.gaps_mm, isothermal=isothermal, parts=spec.parts)[0]

    return f


def judge_built(design, spec, flat: dict, evaluate_flat=None) -> dict[str, float]:
    """The built columns of one trial: ``design`` evaluated (``flat``, its nominal results),
    ``spec.built`` says how. ``evaluate_flat(design) -> flat`` stands in for the study's
    evaluation (tests). Objectives are returned as ``objective_built.<name>`` too."""
    built: BuiltSpec = spec.built
    if nominally_infeasible(flat, spec):
        return not_judged(flat, spec)
    isothermal = bool(spec.run.get("isothermal", False))
    f = evaluate_flat or _flat_of(spec, isothermal)
    design = _as_built(design, flat)
    tols = study_tolerances(design, built, spec.gaps_mm)
    names = list(
        dict.fromkeys([*(c.name for c in spec.constraints), *(o.name for o in spec.objectives)])
    )
    nominal = np.array([flat.get(n, math.nan) for n in names])
    if built.method == "sample":
        values = _sampled(design, tols, names, built.samples, f)
    else:
        values = _linear(design, tols, names, nominal, f)
    by_name = {n: values[i] for i, n in enumerate(names)}
    return quantiles_of(by_name, built.probability, spec.objectives, spec.constraints)


def nominally_infeasible(flat: dict, spec) -> bool:
    """True where the trial breaks a constraint (or a design rule) at its nominal values: it is
    infeasible as built too (the linear estimate's distribution is symmetric about the nominal
    value, so its quantile beyond 0.5 is at least as far past the limit), and is not judged."""

    for c in spec.constraints:
        value = flat.get(c.name, math.nan)
        if not math.isfinite(value) or c.margin(value) < 0:
            return True
    return bool(design_rule_violations(flat, spec.run))


def not_judged(flat: dict, spec) -> dict[str, float]:
    """The built columns of a trial not judged (``nominally_infeasible``): each quantile the
    nominal value, each share nan (not estimated)."""
    out = {f"built_share.{c.name}": math.nan for c in spec.constraints}
    out["built_share_all"] = math.nan
    for o in spec.objectives:
        out[f"objective_built.{o.name}"] = flat.get(o.name, math.nan)
    for name in dict.fromkeys(
        [*(c.name for c in spec.constraints), *(o.name for o in spec.objectives)]
    ):
        out[f"{name}_built"] = flat.get(name, math.nan)
    return out


def _try(f, design, deltas: dict, names):

    try:
        flat = f(varied_design(design, deltas))
    except DesignError:
        return None
    return np.array([flat.get(n, math.nan) for n in names])


def _linear(design, tols, names, nominal: np.ndarray, f) -> np.ndarray:
    """Linear estimate over the Sobol points: rows per name, columns per point."""
    effects = np.zeros((len(names), len(tols)))
    with np.errstate(invalid="ignore"):  # a non-finite result gives a nan effect
        _effects(design, tols, names, nominal, f, effects)
    return linear_values(nominal, effects)


def _effects(design, tols, names, nominal, f, effects) -> None:
    """Fill ``effects`` (names x tolerances): f(x + h) - f(x), or f(x) - f(x - h) where the
    design rules refuse the plus side, nan where they refuse both."""
    for i, t in enumerate(tols):
        plus = _try(f, design, {t.key: t.half_width}, names)
        if plus is not None:
            effects[:, i] = plus - nominal
            continue
        minus = _try(f, design, {t.key: -t.half_width}, names)
        effects[:, i] = nominal - minus if minus is not None else math.nan


def linear_values(nominal: np.ndarray, effects: np.ndarray) -> np.ndarray:
    """nominal + effects @ u over the ``LINEAR_POINTS`` Sobol points u in [-1, 1]^k (effects:
    the change of each result over one half-width of each tolerance)."""
    nominal = np.asarray(nominal, float)
    effects = np.asarray(effects, float)
    if effects.shape[1] == 0:
        return np.repeat(nominal[:, None], LINEAR_POINTS, axis=1)
    u = sobol_unit(effects.shape[1], LINEAR_POINTS_LOG2)
    with np.errstate(invalid="ignore"):
        return nominal[:, None] + effects @ u.T


def _sampled(design, tols, names, samples: int, f) -> np.ndarray:
    """The real model at ``samples`` Sobol points (the first of a 2^m set)."""
    m = max(1, math.ceil(math.log2(samples)))
    u = sobol_unit(max(1, len(tols)), m)[:samples]
    out = np.full((len(names), samples), math.nan)
    for j in range(samples):
        deltas = {t.key: float(u[j, i] * t.half_width) for i, t in enumerate(tols)}
        row = _try(f, design, deltas, names)
        if row is not None:
            out[:, j] = row
    return out
