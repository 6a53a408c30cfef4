"""Tolerance tables: how a design's manufacturing and supply tolerances move its results.

A tolerance is a half-width on one design-file key (file units, or a share of the key's value).
The defaults are common practice, no source:

==============================================  =============
ring inner radius, outer radius and depth       +-0.05 mm
pole radius                                     +-0.02 mm
gap                                             +-0.2 mm
conductivity of ring and target                 +-5 %
pole relative permeability                      +-20 %
drive current (or voltage) and frequency        +-2 %
==============================================  =============

A tolerance file overrides any of them, or adds another numeric key, in one table::

    [tolerances]
    "ring.depth_mm" = 0.1          # half-width in the key's unit
    "drive.frequency_Hz" = "1 %"   # a share of the design's value
    "target.gap_mm" = 0            # no tolerance

What comes out (``run_tolerance``):

* **sensitivities**: each tolerance's effect on every output (``OUTPUTS``): the central
  difference (f(+h) - f(-h)) / 2 at plus and minus its half-width h, so the change over one
  half-width; one-sided where the design rules refuse one side; ranked by the effect on the lift
  ratio;
* **Monte Carlo spread**: N designs with every key drawn uniformly within its tolerance (a seeded
  numpy Generator), the 5th, 50th and 95th percentiles of each output, and the share of the
  designs that keep each of the design's limits (``Result.margins``: margin >= 0) and all of them;
* **linear estimate** beside it: the root-sum-square of the sensitivities, RSS = sqrt(sum
  delta_i^2), is the half-width of the uniform spread with the same variance as the sum of the
  linearised effects (each uniform effect delta_i u, u in [-1, 1], has the variance delta_i^2 / 3);
  its 5th and 95th percentiles are nominal -+ 0.9 RSS. Where the Monte Carlo 5-95 % span differs
  from the linear one by more than ``DISAGREEMENT`` (20 %), a note says so: the output is not
  linear in the tolerances there (near a sign change of the pull, for instance), or two
  tolerances interact.

Conductivities and the pole's permeability are properties of a material the design may name
(``ring.material = "copper"``). A design file cannot keep the name and change one property (a
file gives either ``material`` or ``conductivity_S_per_m``), and writing the conductivity in its
place would lose what the name also carries: the metal's heat capacity and melting point (the
network takes an unnamed conductor as aluminium), and a steel's sheets and loss law. So those
three keys (``MATERIAL_KEYS``) are varied on the validated design itself (``models.design.edit``
of the ring's or target's ``conductivity``, the pole's ``relative_permeability``), after the file
keys have been written into ``design.source`` and validated (``varied_design``).
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np

from models.design import DESIGN_KEYS, edit, read_toml, resolve_key, with_fixed_capacitor
from models.errors import DesignError, nearest
from models.evaluate import evaluate
from optim.words import unit_of

__all__ = [
    "DEFAULT_SAMPLES",
    "DEFAULT_SEED",
    "DISAGREEMENT",
    "MATERIAL_KEYS",
    "OUTPUTS",
    "Tolerance",
    "ToleranceStudy",
    "default_tolerances",
    "read_tolerance_spec",
    "parse_tolerance_table",
    "tolerances_for",
    "varied_design",
    "run_tolerance",
    "linear_spread",
]

DEFAULT_SAMPLES = 200
DEFAULT_SEED = 1
#: Relative difference of the Monte Carlo and linear 5-95 % spans above which a note is shown.
DISAGREEMENT = 0.20
#: The 5th-95th percentile span of a uniform spread is 0.9 of its full width.
UNIFORM_SPAN = 0.9
#: Samples allowed on the command line.
SAMPLES_RANGE = (10, 100_000)

#: The default half-widths (common practice, no source): key -> (value, relative). The drive's
#: current or voltage, whichever the design gives, is added by ``default_tolerances``.
DEFAULTS = {
    "ring.inner_radius_mm": (0.05, False),
    "ring.outer_radius_mm": (0.05, False),
    "ring.depth_mm": (0.05, False),
    "pole.radius_mm": (0.02, False),
    "target.gap_mm": (0.2, False),
    "ring.conductivity_S_per_m": (0.05, True),
    "target.conductivity_S_per_m": (0.05, True),
    "pole.relative_permeability": (0.20, True),
    "drive.frequency_Hz": (0.02, True),
}
DRIVE_DEFAULT = 0.02

#: Keys varied on the validated design, not in its file: key -> (part, attribute). Their values
#: are the same numbers in the file and inside models/ (S/m, a ratio).
MATERIAL_KEYS = {
    "ring.conductivity_S_per_m": ("ring", "conductivity"),
    "target.conductivity_S_per_m": ("target", "conductivity"),
    "pole.relative_permeability": ("pole", "relative_permeability"),
}

#: What the tables report: (result attribute, words, display scale, display unit).
OUTPUTS = (
    ("pull_N", "pull", 1e3, "mN"),
    ("lift_ratio", "lift ratio", 1.0, "-"),
    ("input_power_W", "input power", 1.0, "W"),
    ("ring_loss_W", "ring loss", 1.0, "W"),
    ("coil_temperature_C", "coil temperature", 1.0, "degC"),
    ("ring_temperature_C", "ring temperature", 1.0, "degC"),
    ("target_temperature_C", "target temperature (steady)", 1.0, "degC"),
    ("target_hold_temperature_C", "target at end of hold", 1.0, "degC"),
)
_NUMERIC = ("pos", "nonneg", "num", "frac", "unit")


@dataclass(frozen=True)
class Tolerance:
    """One tolerance: the full file key, its half-width in the key's unit, the share it was given
    as (None: given in the key's unit), the design's value and where it came from ("default"
    or the tolerance file)."""

    key: str
    half_width: float
    relative: float | None
    nominal: float
    origin: str = "default"

    @property
    def unit(self) -> str:

        u = unit_of(self.key)
        return "" if u == "-" else u

    def words(self) -> str:
        """``+-0.05 mm`` or ``+-5 % (+-2.9e+06 S/m)``."""
        unit = f" {self.unit}" if self.unit else ""
        if self.relative is None:
            return f"+-{self.half_width:g}{unit}"
        return f"+-{100 * self.relative:g} % (+-{self.half_width:.4g}{unit})"


@dataclass
class ToleranceStudy:
    """What ``run_tolerance`` found (values in SI / result units, as ``OUTPUTS`` name them).

    nominal : output -> value of the design itself; sensitivities : one dict per tolerance,
    ranked by |effect on lift_ratio| (``key``, ``effect`` output -> change over one half-width,
    ``sided``: "central", "plus only", "minus only" or "refused"); spread : output -> {"p5",
    "p50", "p95", "linear_p5", "linear_p95", "rss", "span_ratio", "disagree"}; limits :
    margin name -> share of the evaluated samples with margin >= 0 (``"all limits"`` too);
    samples : one row per sample (the drawn deltas, the outputs, or the refusal)."""

    design: str
    tolerances: list
    nominal: dict
    sensitivities: list
    spread: dict
    limits: dict
    samples: list
    n_samples: int
    seed: int
    isothermal: bool
    refused: int = 0
    run_time_s: float = 0.0
    notes: list = field(default_factory=list)


# ----------------------------------------------------------------------------- the tolerances
def _drive_key(design) -> str:
    return "drive.current_A" if design.drive.current is not None else "drive.voltage_V"


def _nominal(design, key: str) -> float | None:
    """The design's value of ``key`` in file units; None when the design does not have one."""
    if key in MATERIAL_KEYS:
        part, attr = MATERIAL_KEYS[key]
        obj = getattr(design, part)
        return None if obj is None else float(getattr(obj, attr))
    table, k = key.split(".", 1)
    value = (design.source.get(table) or {}).get(k)
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return None
    return float(value)


def _make(design, key: str, value: float, relative: bool, origin: str) -> Tolerance:
    nominal = _nominal(design, key)
    half = abs(nominal) * value if relative else value
    return Tolerance(key, float(half), float(value) if relative else None, nominal, origin)


def default_tolerances(design) -> list[Tolerance]:
    """The default tolerances that apply to ``design`` (a design without a ring has none of the
    ring's, an air core none of the pole's), in ``DEFAULTS`` order with the drive's current or voltage before its frequency."""
    items = dict(DEFAULTS)
    items = {k: v for k, v in items.items() if not (k.startswith("ring.") and design.ring is None)}
    if design.pole is None:  # an air core has none of the pole's
        items = {k: v for k, v in items.items() if not k.startswith("pole.")}
    freq = items.pop("drive.frequency_Hz")
    items[_drive_key(design)] = (DRIVE_DEFAULT, True)
    items["drive.frequency_Hz"] = freq
    return [_make(design, k, v, rel, "default") for k, (v, rel) in items.items()]


def _parse_value(key: str, value, where: str, problems: list[str]):
    """A half-width: a number >= 0 (the key's unit) or a string "N %" (0 <= N < 100). Returns
    (value, relative) or None (with a problem)."""

    unit = unit_of(key)
    allowed = (
        f"must be a half-width >= 0 in {unit if unit != '-' else 'its own unit'} or a "
        'share such as "5 %" (0 to less than 100 %)'
    )
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        if math.isfinite(value) and value >= 0:
            return float(value), False
    elif isinstance(value, str) and value.strip().endswith("%"):
        try:
            share = float(value.strip()[:-1])
        except ValueError:
            share = math.nan
        if math.isfinite(share) and 0 <= share < 100:
            return share / 100.0, True
    problems.append(f"{where}.{key} = {value!r}: {allowed}")
    return None


def _full_key(design, key: str, value, where: str, problems: list[str]) -> str | None:
    """The full file key of a tolerance's key, or None (with a problem naming the key, its
    value and what is allowed): a numeric design key other than a whole number."""
    flat = [f"{t}.{k}" for t, ks in DESIGN_KEYS.items() for k in ks]
    allowed = 'allowed: a numeric design key as "table.key", e.g. "ring.depth_mm"'
    try:
        table, k = resolve_key(design, key) if design is not None else key.split(".", 1)
    except DesignError as err:
        reason = str(err).split(": ", 1)[-1]
        if "ambiguous" in reason:
            problems.append(f"{where}.{key} = {value!r}: {reason}")
            return None
        table, k = "", ""
    except ValueError:
        table, k = "", ""
    kind = DESIGN_KEYS.get(table, {}).get(k, (None,))[0]
    if kind is None:
        problems.append(
            f"{where}.{key} = {value!r}: not a design key; {allowed}{nearest(key, flat)}"
        )
        return None
    if kind not in _NUMERIC:
        what = "a whole number" if kind == "int" else f"not a number ({kind})"
        problems.append(
            f"{where}.{key} = {value!r}: {table}.{k} is {what}; {allowed}, other than a count"
        )
        return None
    return f"{table}.{k}"


def parse_tolerance_table(data, design=None, where: str = "tolerances") -> dict:
    """The ``[tolerances]`` table of a tolerance file: full key -> (half-width, relative).

    Raises
    ------
    DesignError
        One line per problem, naming the key, the value and what is allowed.
    """
    problems: list[str] = []
    if not isinstance(data, dict):
        raise DesignError(f"{where} = {data!r}: must be a table of key = half-width")
    out = {}
    for key, value in data.items():
        full = _full_key(design, str(key), value, where, problems)
        if full is None:
            continue  # one problem per entry
        parsed = _parse_value(str(key), value, where, problems)
        if parsed is not None:
            out[full] = parsed
    if problems:
        raise DesignError(problems)
    return out


def read_tolerance_spec(path, design=None) -> dict:
    """Read a tolerance file (TOML with one table, ``[tolerances]``): full key -> (half-width,
    relative). One-line DesignErrors for an unreadable file, other tables or keys, a bad key or
    value."""
    data = read_toml(path, "tolerance file")
    extra = [k for k in data if k != "tolerances"]
    if extra:
        raise DesignError(
            f"{extra[0]}: unknown table or key in the tolerance file; allowed: [tolerances]"
            f"{nearest(extra[0], ['tolerances'])}"
        )
    if "tolerances" not in data:
        raise DesignError("[tolerances]: missing table in the tolerance file")
    return parse_tolerance_table(data["tolerances"], design)


def tolerances_for(design, spec: dict | None = None) -> list[Tolerance]:
    """The defaults, overridden and extended by ``spec`` (``read_tolerance_spec``); tolerances
    of zero are dropped. A spec key the design has no value for is refused (one line each)."""
    tols = {t.key: t for t in default_tolerances(design)}
    problems = []
    for key, (value, relative) in (spec or {}).items():
        if _nominal(design, key) is None:
            given = f"{100 * value:g} %" if relative else value
            problems.append(
                f"tolerances.{key} = {given!r}: the design has no value for it (not in its file"
                + (", no [ring]" if key.startswith("ring.") and design.ring is None else "")
                + "); allowed: keys the design gives"
            )
            continue
        tols[key] = _make(design, key, value, relative, "tolerance file")
    if problems:
        raise DesignError(problems)
    return [t for t in tols.values() if t.half_width > 0]


def varied_design(design, deltas: dict):
    """``design`` with each key of ``deltas`` moved by its value (file units), through
    ``models.design.edit``: the file keys as file changes, the ``MATERIAL_KEYS`` as properties
    of the validated parts (so that a conductivity that comes from a material's name moves too).

    Raises
    ------
    DesignError
        The moved design breaks a design rule, or a property leaves its physical range.
    """
    changes, properties = {}, {}
    for key, delta in deltas.items():
        if delta == 0:
            continue
        if key not in MATERIAL_KEYS:
            table, k = key.split(".", 1)
            changes[key] = float(design.source[table][k]) + float(delta)
            continue
        part, attr = MATERIAL_KEYS[key]
        value = getattr(getattr(design, part), attr) + float(delta)
        least = 1.0 if attr == "relative_permeability" else 0.0
        if not value > least:
            raise DesignError(f"{key} = {value:.4g}: must be > {least:g}")
        properties[f"{part}.{attr}"] = value
    return edit(design, changes, properties=properties)


# ----------------------------------------------------------------------------- the evaluations
def _outputs(result) -> dict:
    """The reported outputs and the margins of one result, as plain floats (nan: none)."""
    out = {}
    for name, *_ in OUTPUTS:
        v = getattr(result, name)
        out[name] = math.nan if v is None else float(v)
    return {"outputs": out, "margins": {k: float(v) for k, v in result.margins.items()}}


def _evaluate_all(design, runs: list, isothermal: bool, evaluator=None) -> list:
    """Evaluate ``design`` moved by each of ``runs`` (dicts of deltas): ``_outputs`` or
    ``{"refused": reason}`` per run."""
    if evaluator is None:
        evaluator = evaluate
    out = []
    for deltas in runs:
        try:
            out.append(_outputs(evaluator(varied_design(design, deltas), isothermal)))
        except DesignError as err:
            out.append({"refused": str(err).splitlines()[0]})
    return out


def _effect(plus: dict, minus: dict, nominal: dict) -> tuple[dict, str]:
    """Change of each output over one half-width, and how it was taken."""
    if "refused" not in plus and "refused" not in minus:
        a, b, div, sided = plus["outputs"], minus["outputs"], 2.0, "central"
    elif "refused" not in plus:
        a, b, div, sided = plus["outputs"], nominal, 1.0, "plus only"
    elif "refused" not in minus:
        a, b, div, sided = nominal, minus["outputs"], 1.0, "minus only"
    else:
        return {name: math.nan for name, *_ in OUTPUTS}, "refused"
    return {name: (a[name] - b[name]) / div for name, *_ in OUTPUTS}, sided


def linear_spread(nominal: float, effects) -> dict:
    """The linear estimate of an output's spread from its sensitivities ``effects`` (changes over
    one half-width): ``rss`` = sqrt(sum effect^2), the half-width of the uniform spread of the
    same variance (sum effect^2 / 3), and its 5th and 95th percentiles nominal -+ 0.9 rss."""
    e = np.asarray([x for x in effects if math.isfinite(x)], float)
    rss = float(np.sqrt(np.sum(e**2))) if len(e) else math.nan
    return {
        "rss": rss,
        "linear_p5": nominal - UNIFORM_SPAN * rss,
        "linear_p95": nominal + UNIFORM_SPAN * rss,
    }


def _spread(nominal: dict, effects: list, rows: list) -> dict:
    """Monte Carlo percentiles beside the linear estimate, per output."""
    out = {}
    for name, *_ in OUTPUTS:
        values = np.asarray([r["outputs"][name] for r in rows], float)
        values = values[~np.isnan(values)]
        lin = linear_spread(nominal[name], [e[name] for e in effects])
        entry = {"p5": math.nan, "p50": math.nan, "p95": math.nan, **lin}
        if len(values):
            with np.errstate(invalid="ignore"):
                p5, p50, p95 = np.percentile(values, [5, 50, 95])
            entry.update(p5=float(p5), p50=float(p50), p95=float(p95))
        span_lin = 2 * UNIFORM_SPAN * lin["rss"]
        span_mc = entry["p95"] - entry["p5"]
        ratio = span_mc / span_lin if span_lin > 0 and math.isfinite(span_mc) else math.nan
        entry["span_ratio"] = ratio
        entry["disagree"] = bool(math.isfinite(ratio) and abs(ratio - 1.0) > DISAGREEMENT)
        out[name] = entry
    return out


def _limit_shares(nominal_margins: dict, rows: list) -> dict:
    """Share of the evaluated samples that keep each limit (margin >= 0), and all of them."""
    names = list(dict.fromkeys([*nominal_margins, *(k for r in rows for k in r["margins"])]))
    shares = {}
    for name in names:
        held = [r["margins"].get(name, math.nan) >= 0 for r in rows]
        shares[name] = float(np.mean(held)) if rows else math.nan
    if names:
        every = [all(r["margins"].get(n, math.nan) >= 0 for n in names) for r in rows]
        shares["all limits"] = float(np.mean(every)) if rows else math.nan
    return shares


def _capacitor_as_built(design, isothermal: bool, evaluator=None):
    """``design`` with a tuned capacitor fixed at its nominal value (models.supply): a built
    magnet's capacitor does not retune to each sample's coil."""
    drive = design.drive
    if getattr(drive, "compensation", "none") == "none" or drive.capacitance is not None:
        return design

    nominal = (evaluator or evaluate)(design, isothermal)
    capacitance_uF = getattr(nominal, "capacitor_uF", 0.0)
    if not capacitance_uF > 0:
        return design
    return with_fixed_capacitor(design, capacitance_uF * 1e-6)


def run_tolerance(
    design,
    tolerances: list[Tolerance],
    samples: int = DEFAULT_SAMPLES,
    seed: int = DEFAULT_SEED,
    isothermal: bool = False,
    evaluator=None,
) -> ToleranceStudy:
    """Sensitivities, Monte Carlo spread and limit shares of ``design`` under ``tolerances``.

    Parameters
    ----------
    design : models.design.Design
    tolerances : list of Tolerance
        From ``tolerances_for``.
    samples : int
        Monte Carlo designs, each key uniform in [nominal - h, nominal + h].
    seed : int
        Seed of ``numpy.random.default_rng``: the same seed draws the same designs.
    isothermal : bool
        Every part at 20 degC; default: the electro-thermal coupling (as ``evaluate``).
    evaluator : callable, optional
        ``evaluator(design, isothermal) -> Result`` in place of ``models.evaluate.evaluate``
        (tests use a stand-in).

    Returns
    -------
    ToleranceStudy
        ``1 + 2 len(tolerances) + samples`` evaluations.

    Raises
    ------
    DesignError
        The design itself cannot be evaluated.
    """
    t0 = time.perf_counter()
    design = _capacitor_as_built(design, isothermal, evaluator)
    keys = [t.key for t in tolerances]
    half = np.array([t.half_width for t in tolerances], float)
    rng = np.random.default_rng(seed)
    draws = rng.uniform(-1.0, 1.0, size=(samples, len(keys))) * half
    runs = [{}]
    for t in tolerances:
        runs += [{t.key: t.half_width}, {t.key: -t.half_width}]
    runs += [dict(zip(keys, row.tolist(), strict=True)) for row in draws]
    results = _evaluate_all(design, runs, isothermal, evaluator)
    if "refused" in results[0]:
        raise DesignError(results[0]["refused"])
    nominal = results[0]["outputs"]
    sens = []
    for k, t in enumerate(tolerances):
        effect, sided = _effect(results[1 + 2 * k], results[2 + 2 * k], nominal)
        sens.append({"key": t.key, "effect": effect, "sided": sided})
    sens.sort(
        key=lambda s: (
            -abs(s["effect"]["lift_ratio"]) if math.isfinite(s["effect"]["lift_ratio"]) else 0.0
        )
    )
    mc = results[1 + 2 * len(tolerances) :]
    ok = [r for r in mc if "refused" not in r]
    rows = [{"deltas": runs[1 + 2 * len(tolerances) + i], **r} for i, r in enumerate(mc)]
    study = ToleranceStudy(
        design=design.name,
        tolerances=list(tolerances),
        nominal=nominal,
        sensitivities=sens,
        spread=_spread(nominal, [s["effect"] for s in sens], ok),
        limits=_limit_shares(results[0]["margins"], ok),
        samples=rows,
        n_samples=samples,
        seed=seed,
        isothermal=isothermal,
        refused=len(mc) - len(ok),
    )
    study.notes = _notes(study)
    study.run_time_s = time.perf_counter() - t0
    return study


def _notes(study: ToleranceStudy) -> list[str]:
    """The notes under the tables: one-sided or refused differences, refused samples, and every
    output whose Monte Carlo and linear spreads disagree."""
    notes = []
    for s in study.sensitivities:
        if s["sided"] != "central":
            notes.append(
                f"{s['key']}: the design rules refuse "
                + ("both sides" if s["sided"] == "refused" else "one side")
                + f" of its tolerance; its sensitivity is {s['sided']}"
            )
    if study.refused:
        first = next(r["refused"] for r in study.samples if "refused" in r)
        notes.append(
            f"{study.refused} of {study.n_samples} samples were refused by the design rules and "
            f"left out (the first: {first})"
        )
    for name, words, *_ in OUTPUTS:
        e = study.spread[name]
        if e["disagree"]:
            notes.append(
                f"{words}: the Monte Carlo 5-95 % spread is {e['span_ratio']:.2f} x the linear "
                "estimate (more than 20 % apart): the output is not linear over these "
                "tolerances (a sign change, a limit or an interaction); trust the Monte Carlo"
                + (
                    f", though {study.n_samples} samples give rough percentiles"
                    if study.n_samples < 100
                    else ""
                )
            )
    return notes


# ----------------------------------------------------------------------------- the outputs
