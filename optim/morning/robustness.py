"""How robust a chosen design is: its tolerance table and pick map in the hand-off folder
(``eddypull study export --tolerance``) and a coarse pick map of each picked design in the study
report (``write_front``; ``--no-pick-maps`` leaves them out).

Both wrap ``optim.morning.tolerance`` and ``optim.morning.pickmap``; the maps are the part's
radius against the gap around the design's own values (``pickmap.around_axes``).
"""

from __future__ import annotations

import re
import time
from pathlib import Path

from models.errors import DesignError
from optim.morning.pickmap import DEFAULT_POINTS, pick_map_around
from optim.morning.tolerance import (
    DEFAULT_SAMPLES,
    DEFAULT_SEED,
    run_tolerance,
    tolerances_for,
    write_tolerance,
)

__all__ = [
    "HANDOFF_POINTS",
    "HANDOFF_SAMPLES",
    "REPORT_PICK_MAPS",
    "REPORT_POINTS",
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


def write_robustness(design, out_dir, isothermal: bool = False, echo=None) -> dict[str, Path]:
    """Write the tolerance table (tolerance.txt, tolerance.json, CSVs; default tolerances,
    HANDOFF_SAMPLES samples, the default seed) and the part radius x gap pick map (PNG, SVG,
    CSV; HANDOFF_POINTS per axis) of ``design`` into ``out_dir``. Returns file name -> path;
    ``echo`` gets one line per piece with its time."""
    t0 = time.perf_counter()
    study = run_tolerance(
        design,
        tolerances_for(design),
        samples=HANDOFF_SAMPLES,
        seed=DEFAULT_SEED,
        isothermal=isothermal,
    )
    paths = write_tolerance(study, out_dir)
    if echo is not None:
        echo(f"tolerance table: {study.n_samples} samples in {time.perf_counter() - t0:.0f} s")
        for note in study.notes:
            echo(f"note: {note}")
    t1 = time.perf_counter()
    _, files = pick_map_around(design, out_dir, points=HANDOFF_POINTS, isothermal=isothermal)
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
    designs, out_dir, isothermal: bool = False, points: int | None = None
) -> list[tuple[Path, str]]:
    """A coarse pick map (``points`` per axis, default REPORT_POINTS) of each ``(label,
    design)``, written to ``out_dir`` as ``pickmap_<label>.png/.svg/.csv``; returns ``(png,
    caption)`` per design for the report. A design the model refuses as a whole (a solid pole)
    gets no map."""
    points = REPORT_POINTS if points is None else points
    out = []
    for label, design in designs:
        try:
            pmap, files = pick_map_around(
                design,
                out_dir,
                points=points,
                isothermal=isothermal,
                stem=f"pickmap_{_slug(label)}",
            )
        except DesignError:
            continue
        r, g = design.target.radius * 1e3, design.target.gap * 1e3
        caption = (
            f"Pick map of {label}: the lift ratio (pull / part weight) over the part's radius and "
            f"the gap around its own {r:.3g} mm and {g:.3g} mm (star); dashed: lift ratio 1, "
            "solid: zero pull (push beyond it), hatched: outside the range the model was "
            f"checked on; {points} x {points} points."
        )
        out.append((Path(files["png"]), caption))
    return out
