"""How robust a chosen design is: its tolerance table and pick map in the hand-off folder
(``eddypull study export --tolerance``); in the study report (``write_front``) a coarse pick map
of each picked design (``--no-pick-maps`` leaves them out) and a compact tolerance table of the
first pick (``--no-tolerance`` leaves it out).

They wrap ``optim.study.tolerance`` and ``optim.morning.pickmap``; the maps are the part's
radius against the gap around the design's own values (``pickmap.around_axes``). The report's
tolerance table evaluates each sample as the study evaluates a trial (``study_evaluator``: its
gap range, its family of parts), so that it can say how often each of the study's constraints
holds.
"""

from __future__ import annotations

import dataclasses
import math
import re
import time
from dataclasses import dataclass
from pathlib import Path
from types import SimpleNamespace

from models.errors import DesignError
from optim.morning.pickmap import DEFAULT_POINTS, offset_map_around, pick_map_around
from optim.morning.pickmap_parts import parts_caption
from optim.morning.tolerance_out import write_tolerance
from optim.study.built import study_tolerances
from optim.study.objectives import results_of, study_kwargs
from optim.study.tolerance import (
    DEFAULT_SAMPLES,
    DEFAULT_SEED,
    OUTPUTS,
    ToleranceStudy,
    _capacitor_as_built,
    run_tolerance,
    tolerances_for,
)

__all__ = [
    "HANDOFF_POINTS",
    "HANDOFF_SAMPLES",
    "REPORT_PICK_MAPS",
    "REPORT_POINTS",
    "REPORT_SAMPLES",
    "REPORT_TOLERANCE",
    "CONSTRAINT_PREFIX",
    "ReportTolerance",
    "constraint_words",
    "study_evaluator",
    "report_tolerance",
    "write_robustness",
    "pick_map_figures",
]

#: Points per axis of the hand-off's pick map (as ``eddypull map``'s default).
HANDOFF_POINTS = DEFAULT_POINTS
#: Monte Carlo samples of the hand-off's tolerance table (as ``eddypull tolerance``'s default).
HANDOFF_SAMPLES = DEFAULT_SAMPLES
#: Points per axis of the report's pick maps: coarse, 144 evaluations per pick.
REPORT_POINTS = 12
#: Whether ``write_front`` draws a pick map of each picked design by default (REPORT_POINTS per
#: axis: 144 evaluations, ~25 s per pick on one core of this 2-core machine).
REPORT_PICK_MAPS = True
#: Monte Carlo samples of the report's tolerance table (the first pick only): half the
#: hand-off's, so that the table costs 1 + 2 x (about 10 tolerances) + 100 evaluations of the
#: study's own kind (its gaps and parts): 15 s for the lifter demo (3 gaps, thermally coupled)
#: and 28-33 s for the sorting demo (2 parts x 3 gaps), one core of this 2-core machine,
#: 2026-12. 5th and 95th percentiles of 100 samples are rough (each moves by about one
#: sample's spacing), which the report says beside them.
REPORT_SAMPLES = 100
#: Whether ``write_front`` adds the first pick's tolerance table to the report by default.
REPORT_TOLERANCE = True
#: How the study's constraints are named among a tolerance table's limits (``study_evaluator``).
CONSTRAINT_PREFIX = "study constraint: "


def write_robustness(
    design,
    out_dir,
    isothermal: bool = False,
    echo=None,
    parts=(),
    gaps_mm=(),
    spec=None,
    samples: int | None = None,
) -> dict[str, Path]:
    """Write the tolerance table (tolerance.txt, tolerance.json, CSVs; default tolerances,
    HANDOFF_SAMPLES samples, the default seed) and the part radius x gap pick map (PNG, SVG,
    CSV; HANDOFF_POINTS per axis; a study's family ``parts`` marked; its gap axis takes in the
    study's pick gaps ``gaps_mm`` [mm] and the parts') of ``design`` into
    ``out_dir``. Returns file name -> path; ``echo`` gets one line per piece with its time.

    With the study's ``spec`` (issue 30) each sample is evaluated as the study evaluates a trial
    (``study_evaluator``), the tolerances are the study's where it is judged as built
    (``optim.study.built.study_tolerances``), and tolerance.json gains ``constraints_held``:
    study constraint -> share of the samples that keep it (``built_check.constraints_held``).
    ``samples``: the Monte Carlo count (default HANDOFF_SAMPLES)."""
    t0 = time.perf_counter()
    n = HANDOFF_SAMPLES if samples is None else samples
    if spec is not None:  # issue 30: a tuned capacitor fixed as built, then its tolerance
        design = _capacitor_as_built(design, isothermal, study_evaluator(spec))
    study = run_tolerance(
        design,
        check_tolerances(spec, design),
        samples=n,
        seed=DEFAULT_SEED,
        isothermal=isothermal,
        evaluator=None if spec is None else study_evaluator(spec),
    )
    extra = {} if spec is None else {"constraints_held": constraints_held(spec, study)}
    paths = write_tolerance(study, out_dir, extra=extra)
    if echo is not None:
        echo(f"tolerance table: {study.n_samples} samples in {time.perf_counter() - t0:.0f} s")
        for note in study.notes:
            echo(f"note: {note}")
    t1 = time.perf_counter()
    _, files = pick_map_around(
        design,
        out_dir,
        points=HANDOFF_POINTS,
        isothermal=isothermal,
        parts=parts,
        gaps_mm=gaps_mm,
    )
    for path in files.values():
        paths[Path(path).name] = Path(path)
    if echo is not None:
        echo(
            f"pick map: {HANDOFF_POINTS} x {HANDOFF_POINTS} points in "
            f"{time.perf_counter() - t1:.0f} s"
        )
    return paths


def _slug(text: str) -> str:
    return re.sub(r"[^A-Za-z0-9_.-]+", "-", str(text)).strip("-.") or "design"


def pick_map_figures(
    designs, out_dir, isothermal: bool = False, points: int | None = None, parts=(), gaps_mm=()
) -> list[tuple[Path, str]]:
    """A coarse pick map (``points`` per axis, default REPORT_POINTS) of each ``(label,
    design)``, written to ``out_dir`` as ``pickmap_<label>.png/.svg/.csv``, each of a study's
    family ``parts`` (``optim.study.parts.Part``) marked at its radius over its gap range, the
    gap axis taking in the study's pick gaps ``gaps_mm`` [mm] and the parts';
    returns ``(png, caption)`` per design for the report. A design the model refuses as a whole
    (a solid pole) gets no map."""

    points = REPORT_POINTS if points is None else points
    out = []
    for label, design in designs:
        titled = dataclasses.replace(design, name=f"{design.name}, {label}")  # the figure's title
        try:
            pmap, files = pick_map_around(
                titled,
                out_dir,
                points=points,
                isothermal=isothermal,
                stem=f"pickmap_{_slug(label)}",
                parts=parts,
                gaps_mm=gaps_mm,
            )
        except DesignError:
            continue
        r, g = design.target.radius * 1e3, design.target.gap * 1e3
        caption = (
            f"Pick map of {label}: the lift ratio (pull / part weight) over the part's radius and "
            f"the gap around its own {r:.3g} mm and {g:.3g} mm (star); dashed: lift ratio 1, "
            "solid: zero pull (push beyond it), hatched: outside the range the model was "
            f"checked on; {points} x {points} points.{parts_caption(parts, design)}"
        )
        out.append((Path(files["png"]), caption))
        if len(out) == 1 and not parts:  # the first pick: a part arriving off the axis too
            out += _offset_figure(titled, label, out_dir, points, isothermal, gaps_mm)
    return out


def _offset_figure(design, label, out_dir, points, isothermal, gaps_mm) -> list:
    """The first pick's offset x gap map (``pickmap.offset_map_around``), ``points`` // 2 a side
    (each point evaluates the part off the axis: about twice an evaluation), with its caption;
    none for a design the model refuses there."""
    n = max(4, points // 2)
    try:
        _, files = offset_map_around(
            design, out_dir, n, isothermal, f"offsetmap_{_slug(label)}", gaps_mm
        )
    except DesignError:
        return []
    caption = (
        f"Offset map of {label}: the lift ratio over the part's offset from the pole's axis (0 "
        "to the pole's radius) and the gap, the part off the axis by the first azimuthal "
        f"harmonics (models.fast.offset); dashed: lift ratio 1, solid: zero pull; {n} x {n} points."
    )
    return [(Path(files["png"]), caption)]


def constraint_words(constraint) -> str:
    """A study constraint in words: ``worst_lift_ratio >= 1``, ``ring_temperature_C <= 180``,
    ``0 <= x <= 5``."""
    name, lo, hi = constraint.name, constraint.low, constraint.high
    if lo is not None and hi is not None:
        return f"{lo:g} <= {name} <= {hi:g}"
    return f"{name} >= {lo:g}" if lo is not None else f"{name} <= {hi:g}"


def study_evaluator(spec):
    """An ``evaluator(design, isothermal)`` for ``optim.study.tolerance.run_tolerance`` that
    evaluates a design as the study evaluates a trial (``optim.study.objectives.results_of``
    with its gaps and parts): the table's outputs are the flat results of that name (the first
    lift part's at the design's gap, as ``evaluate`` gives them), its margins the design's own
    limits (``Result.margins``) and, named ``CONSTRAINT_PREFIX`` + ``constraint_words``, the
    margin of each of the study's constraints (positive: it holds; a non-finite result counts
    as broken)."""

    def evaluator(design, isothermal: bool):
        flat, _, _ = results_of(design, spec.gaps_mm, isothermal=isothermal, **study_kwargs(spec))
        margins = {k[len("margins.") :]: v for k, v in flat.items() if k.startswith("margins.")}
        for c in spec.constraints:
            value = flat.get(c.name, math.nan)
            margin = c.margin(value) if math.isfinite(value) else -math.inf
            margins[CONSTRAINT_PREFIX + constraint_words(c)] = margin
        values = {name: flat.get(name, math.nan) for name, *_ in OUTPUTS}
        # issue 30: the tuned capacitor's value, so that run_tolerance fixes it as built
        values["capacitor_uF"] = flat.get("capacitor_uF", 0.0)
        return SimpleNamespace(**values, margins=margins)

    return evaluator


@dataclass(frozen=True)
class ReportTolerance:
    """The report's tolerance table of one pick: its label (``trial N``), why it was picked,
    the tolerance study (``run_tolerance`` with ``study_evaluator``) and the sample count of the
    hand-off's own table (for the report's words)."""

    label: str
    why: str
    study: ToleranceStudy
    handoff_samples: int
    family: bool = False


def report_tolerance(
    spec, label: str, why: str, design, samples: int | None = None
) -> ReportTolerance:
    """The first pick's tolerance table for the report: the default tolerances of ``design``,
    ``samples`` (default REPORT_SAMPLES) Monte Carlo samples with the default seed, each sample
    evaluated as the study's trials are (``study_evaluator``; the study's isothermal setting).

    Raises
    ------
    DesignError
        The design itself cannot be evaluated (the report then has no table).
    """
    study = run_tolerance(
        design,
        tolerances_for(design),
        samples=REPORT_SAMPLES if samples is None else samples,
        seed=DEFAULT_SEED,
        isothermal=bool(spec.run.get("isothermal", False)),
        evaluator=study_evaluator(spec),
    )
    return ReportTolerance(label, why, study, HANDOFF_SAMPLES, family=bool(spec.parts))


def check_tolerances(spec, design) -> list:
    """The tolerances a check uses: the study's where it is judged as built, else the
    defaults (``design`` with its capacitor already fixed, so that it has a capacitance)."""
    if spec is not None and getattr(spec, "built", None) is not None:
        return study_tolerances(design, spec.built, spec.gaps_mm)
    return tolerances_for(design)


def constraints_held(spec, study) -> dict[str, float]:
    """Study constraint name -> share of the evaluated samples of ``study`` (a ToleranceStudy
    run with ``study_evaluator(spec)``) that keep it; ``"all"``: all of them at once."""
    rows = [r for r in study.samples if "refused" not in r]
    n = len(study.samples)
    out = {}
    keys = [CONSTRAINT_PREFIX + constraint_words(c) for c in spec.constraints]
    for c, key in zip(spec.constraints, keys, strict=True):
        out[c.name] = (
            sum(r["margins"].get(key, -math.inf) >= 0 for r in rows) / n if n else math.nan
        )
    if keys:
        every = [all(r["margins"].get(k, -math.inf) >= 0 for k in keys) for r in rows]
        out["all"] = float(sum(every)) / n if n else math.nan
    return out
