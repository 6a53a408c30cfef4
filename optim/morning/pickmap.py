"""Pick maps: where a design lifts, holds and pushes its part, over two design-file keys.

A pick map evaluates the fast model on a grid of two numeric design keys (by default the part's
radius against the gap) and shows the lift ratio (pull / the part's weight) as a filled map with
two lines on it: lift ratio 1, beyond which the pull carries the part, and zero pull, where the
time-averaged force turns from pull to push. The design's own point is marked and the grid's
region outside the range the fast model was checked on against the FEM
(``models.checks.VALIDATED_RANGE``) is hatched.

The pieces are pure functions, each usable alone: ``parse_axis`` (a KEY=START..STOP flag),
``evaluate_map`` (the grid's designs and results, a ``PickMap``), ``map_contours`` (the two lines
as point lists), ``plot_map`` (PNG and SVG), ``write_map`` (those and the CSV), ``map_json`` and
``format_map`` (what the command prints), ``pick_map_around`` (the part radius x gap map around a
design's own values, for hand-offs and the report).

Each point is a full ``models.evaluate.evaluate`` of the design with the two keys changed, as
``eddypull evaluate --sweep`` does: with the electro-thermal coupling unless ``isothermal``, so a
point's thermal state (the part held at the holding gap, by default the point's own gap) is its
own. Points are evaluated in the order of their pole model's key
(``models.evaluate.pole_model_key``), so that designs sharing a pole geometry run one after the
other and reuse the kept pole model.
"""

from __future__ import annotations

import csv
import io
import math
import time
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from models.coils import COILS_KEYS
from models.design import DESIGN_KEYS, edit, resolve_key
from models.errors import DesignError
from models.evaluate import evaluate, pole_model_key
from optim.files import atomic_write_text, safe_child
from optim.morning.handoff import DESCRIPTIONS, unit_of
from optim.morning.pickmap_parts import draw_parts, part_points
from optim.morning.plots import _save, words
from optim.morning.sweep import DEFAULT_POINTS, outside_checked_range

__all__ = [
    "DEFAULT_POINTS",
    "MAX_POINTS",
    "MapAxis",
    "PickMap",
    "parse_axis",
    "evaluate_map",
    "map_contours",
    "crossings",
    "plot_map",
    "write_map",
    "map_json",
    "format_map",
    "map_stem",
    "around_axes",
    "pick_map_around",
]

#: Points per axis above which a map is refused: 200 x 200 = 40,000 evaluations, about two hours
#: on one core at ~0.18 s each (measured on the demo design, 2 cores, 2026-12).
MAX_POINTS = 200
#: Spans of ``around_axes`` as factors of the design's own part radius and gap (common practice,
#: no source: wide enough to show the sign change of the demo design's pull).
AROUND_RADIUS = (0.4, 2.4)
AROUND_GAP = (0.25, 1.5)

#: Kinds of design keys (models.design.DESIGN_KEYS) that hold a number.
_NUMERIC = ("pos", "nonneg", "num", "int", "frac", "unit", "fill")
#: The two lines drawn and returned: name -> (field, level).
LINES = {"lift_ratio_1": ("lift_ratio", 1.0), "zero_pull": ("pull_N", 0.0)}
_LINE_WORDS = {"lift_ratio_1": "lift ratio 1", "zero_pull": "zero pull"}


@dataclass(frozen=True)
class MapAxis:
    """One axis of a map: the full design-file key (``table.key``) and its values (file
    units: mm, Hz, A...)."""

    key: str
    values: np.ndarray


@dataclass
class PickMap:
    """A map's grid and results. Arrays are (len(y), len(x)): row j is ``y.values[j]``.

    pull_N : time-averaged pull on the part [N], positive toward the face (nan: refused)
    pull_uncertainty_N : the fast model's error estimate of that pull [N]
        (``Result.pull_uncertainty_N``): near the zero-pull line it says how far the line may sit
    lift_ratio : pull / part weight [-] (nan: refused)
    in_range : the point lies inside models.checks.VALIDATED_RANGE (False: refused too)
    refused : the design rules' reason a point was not evaluated ("" where it was)
    design_point : the design's own (x, y) values, None where the file does not give a key
    """

    design: str
    x: MapAxis
    y: MapAxis
    pull_N: np.ndarray
    pull_uncertainty_N: np.ndarray
    lift_ratio: np.ndarray
    in_range: np.ndarray
    refused: list
    design_point: tuple | None
    isothermal: bool
    run_time_s: float = 0.0

    @property
    def evaluations(self) -> int:
        return int(np.isfinite(self.pull_N).sum())


def _numeric_key(design, key: str, flag: str) -> str:
    """The full key (``table.key``) of a numeric design key, or a one-line DesignError."""
    try:
        table, k = resolve_key(design, key)
    except DesignError as err:
        raise DesignError(f"{flag} {err}") from None
    kind = (COILS_KEYS if table.startswith("coils.") else DESIGN_KEYS[table])[k][0]
    if kind not in _NUMERIC:
        raise DesignError(f"{flag} {table}.{k}: not a numeric design key (it holds {kind})")
    if table == "ring" and design.ring is None:
        raise DesignError(f"{flag} {table}.{k}: the design has no [ring]")
    return f"{table}.{k}"


def parse_axis(design, text: str, points: int | None = None, flag: str = "--x") -> MapAxis:
    """``'target.radius_mm=2..16'`` -> MapAxis with ``points`` values (default DEFAULT_POINTS),
    both ends included. Bare keys read as sweeps read them (``gap_mm``; ``radius_mm`` is
    ambiguous and refused, naming the choices).

    Raises
    ------
    DesignError
        One line naming the flag, the text and what is allowed.
    """
    key, sep, rng = str(text).partition("=")
    parts = rng.split("..")
    if not (sep and key.strip() and len(parts) == 2):
        raise DesignError(
            f"{flag} {text!r}: must be KEY=START..STOP (e.g. target.gap_mm=0.5..4 --points 25)"
        )
    try:
        start, stop = float(parts[0]), float(parts[1])
    except ValueError:
        raise DesignError(f"{flag} {text!r}: START and STOP must be numbers") from None
    if not (math.isfinite(start) and math.isfinite(stop)) or start == stop:
        raise DesignError(f"{flag} {text!r}: START and STOP must be finite and differ")
    count = DEFAULT_POINTS if points is None else points
    if not 2 <= count <= MAX_POINTS:
        raise DesignError(
            f"--points = {count}: must be between 2 and {MAX_POINTS} (a map evaluates "
            "points x points designs)"
        )
    full = _numeric_key(design, key.strip(), flag)
    values = np.linspace(start, stop, count)
    if full.endswith(".turns"):
        values = np.round(values)
    return MapAxis(full, values)


def _file_value(design, key: str):
    """The design file's value of ``key`` (``table.key``), None when the file leaves it out."""
    table, k = key.rsplit(".", 1)
    if table.startswith("coils."):  # coils.N.key
        coils = design.source.get("coils") or []
        value = coils[int(table.split(".")[1])].get(k)
    else:
        value = (design.source.get(table) or {}).get(k)
    return float(value) if isinstance(value, (int, float)) and not isinstance(value, bool) else None


def _value(key: str, v: float):
    return int(round(v)) if key.endswith(".turns") else float(v)


def _point_design(design, x: MapAxis, xv: float, y: MapAxis, yv: float):
    """The design at one grid point (both keys in one validation)."""
    return edit(design, {x.key: _value(x.key, xv), y.key: _value(y.key, yv)})


def _evaluate_points(design, x: MapAxis, y: MapAxis, cells, isothermal: bool) -> list:
    """Evaluate grid cells ``[(j, i), ...]`` in order; returns ``[(j, i, pull, its uncertainty,
    lift, in range, refused reason)]``. A point the design rules refuse is recorded, not
    raised."""

    out = []
    for j, i in cells:
        try:
            r = evaluate(_point_design(design, x, x.values[i], y, y.values[j]), isothermal)
        except DesignError as err:
            out.append((j, i, math.nan, math.nan, math.nan, False, str(err).splitlines()[0]))
            continue
        ok = not outside_checked_range(r)
        out.append((j, i, r.pull_N, r.pull_uncertainty_N, r.lift_ratio, ok, ""))
    return out


def _ordered_cells(design, x: MapAxis, y: MapAxis) -> list:
    """Every grid cell (j, i), sorted by its design's pole-model key so that points sharing a
    pole geometry (and then a permeability) run one after another; refused points first."""

    keyed = []
    for j in range(len(y.values)):
        for i in range(len(x.values)):
            try:
                k = pole_model_key(_point_design(design, x, x.values[i], y, y.values[j]))
            except DesignError:
                k = None
            if k is None:
                keyed.append(((0,), (j, i)))
            else:
                radius, length, mu, groove, panel = k
                keyed.append(((1, radius, length, groove or (), panel, mu.real, mu.imag), (j, i)))
    keyed.sort(key=lambda kv: kv[0])
    return [cell for _, cell in keyed]


def evaluate_map(design, x: MapAxis, y: MapAxis, isothermal: bool = False) -> PickMap:
    """Evaluate ``design`` on the grid ``x`` by ``y`` with the fast model.

    Parameters
    ----------
    design : models.design.Design
    x, y : MapAxis
        The two keys and their values (file units), from ``parse_axis`` or built directly.
    isothermal : bool
        Every part at 20 degC (as ``--isothermal``); default: the electro-thermal coupling.

    Returns
    -------
    PickMap

    Raises
    ------
    DesignError
        The two keys are the same, or every point of the grid is refused (with the first
        reason); a design the fast model refuses as a whole (a solid pole).

    Examples
    --------
    The demo cap lifter's lift ratio over 3 gaps (columns) by 3 cap radii (rows), each part at
    20 degC (``eddypull map`` does the same from the command line):

    >>> from models import load_design
    >>> from optim.demo import DEMO_DESIGN
    >>> design = load_design(DEMO_DESIGN)
    >>> x = parse_axis(design, "target.gap_mm=0.5..2", points=3)
    >>> y = parse_axis(design, "target.radius_mm=4..8", points=3, flag="--y")
    >>> evaluate_map(design, x, y, isothermal=True).lift_ratio.round(1)
    array([[2.4, 2.1, 1.6],
           [7.3, 5.1, 3.5],
           [8.7, 5.7, 3.6]])
    """
    if x.key == y.key:
        raise DesignError(f"--y {y.key}: must differ from --x {x.key}")
    t0 = time.perf_counter()
    rows = _evaluate_points(design, x, y, _ordered_cells(design, x, y), isothermal)
    shape = (len(y.values), len(x.values))
    pull, error, lift = (np.full(shape, math.nan) for _ in range(3))
    in_range = np.zeros(shape, bool)
    refused = [["" for _ in range(shape[1])] for _ in range(shape[0])]
    for j, i, p, u, lr, ok, why in rows:
        pull[j, i], error[j, i], lift[j, i], in_range[j, i], refused[j][i] = p, u, lr, ok, why
    if not np.isfinite(pull).any():
        why = next((r[6] for r in rows if r[6]), "no finite pull")
        raise DesignError(f"map: every point of the grid is refused; the first: {why}")
    xv, yv = _file_value(design, x.key), _file_value(design, y.key)
    return PickMap(
        design=design.name,
        x=x,
        y=y,
        pull_N=pull,
        pull_uncertainty_N=error,
        lift_ratio=lift,
        in_range=in_range,
        refused=refused,
        design_point=None if xv is None or yv is None else (xv, yv),
        isothermal=isothermal,
        run_time_s=time.perf_counter() - t0,
    )


def map_contours(pmap: PickMap) -> dict:
    """The map's lines as point lists in file units: ``{"lift_ratio_1": [[[x, y], ...], ...],
    "zero_pull": [...]}``, each a list of polylines (linear interpolation between grid points,
    contourpy's marching squares; refused points masked)."""
    import contourpy

    out = {}
    for name, (what, level) in LINES.items():
        z = np.ma.masked_invalid(getattr(pmap, what))
        gen = contourpy.contour_generator(pmap.x.values, pmap.y.values, z, line_type="Separate")
        out[name] = [np.asarray(line).tolist() for line in gen.lines(level) if len(line) > 1]
    return out


def crossings(lines, y_value: float) -> list[float]:
    """Where the polylines ``lines`` (as ``map_contours`` gives them) cross the row ``y =
    y_value``: the x values, sorted, by linear interpolation along each segment."""
    xs = []
    for line in lines:
        pts = np.asarray(line, float)
        for (x0, y0), (x1, y1) in zip(pts[:-1], pts[1:], strict=True):
            if (y0 - y_value) * (y1 - y_value) <= 0 and y0 != y1:
                xs.append(float(x0 + (x1 - x0) * (y_value - y0) / (y1 - y0)))
            elif y0 == y1 == y_value:
                xs += [float(x0), float(x1)]
    xs = sorted(xs)
    return [v for k, v in enumerate(xs) if k == 0 or not math.isclose(v, xs[k - 1], abs_tol=1e-12)]


def _axis_words(key: str) -> str:
    """Axis label: the hand-off's description of the key with its unit."""

    if key in DESCRIPTIONS:
        unit = unit_of(key)
        return f"{DESCRIPTIONS[key]} [{unit if unit not in ('', '-') else '-'}]"
    return words(key)


def _norm(lift: np.ndarray):
    """Colour scale of the lift ratio: diverging about zero (pull blue, push red)."""
    from matplotlib.colors import Normalize, TwoSlopeNorm

    finite = lift[np.isfinite(lift)]
    lo, hi = float(finite.min()), float(finite.max())
    if lo < 0.0 < hi:
        return TwoSlopeNorm(vmin=lo, vcenter=0.0, vmax=hi), lo, hi
    if lo == hi:
        lo, hi = lo - 0.5, hi + 0.5
    return Normalize(vmin=lo, vmax=hi), lo, hi


def _label_spot(lines, avoid, pmap: PickMap):
    """Where to write a line's name: the point of the polylines ``lines`` (file units) farthest
    from every point of ``avoid`` (the design's star, the parts' bars, the other line) and from
    the map's edges, distances in shares of each axis' span; away from the lines' ends. None
    when there is no line."""
    span = np.array([np.ptp(pmap.x.values), np.ptp(pmap.y.values)], float)
    origin = np.array([pmap.x.values.min(), pmap.y.values.min()], float)
    far = np.asarray(avoid, float).reshape(-1, 2)
    best, best_distance = None, -np.inf
    for line in lines:
        pts = np.asarray(line, float)
        trim = len(pts) // 10
        candidates = pts[trim : len(pts) - trim] if len(pts) > 2 * trim else pts
        for c in candidates:
            u = (c - origin) / span
            edge = min(u[0], 1 - u[0], u[1], 1 - u[1])
            near = np.min(np.hypot(*((far - c) / span).T)) if len(far) else np.inf
            distance = min(near, 2.0 * edge)
            if distance > best_distance:
                best, best_distance = (float(c[0]), float(c[1])), distance
    return best


def plot_map(pmap: PickMap, out_dir, stem: str, parts=()) -> list[Path]:
    """Draw the map to ``stem``.png and ``stem``.svg in ``out_dir`` (atomic writes, Agg).

    Filled lift ratio; the lift-ratio-1 line (dashed) and the zero-pull line (solid), each
    labelled; the region outside the validated range hatched; refused points as grey crosses;
    the design's own point as a star; on a part radius x gap map, each of ``parts`` (a study's
    family, ``optim.study.parts.Part``) as a bar over its gap range
    (``optim.morning.pickmap_parts``). Returns both paths."""
    from matplotlib.figure import Figure
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    X, Y = np.meshgrid(pmap.x.values, pmap.y.values)
    lift = np.ma.masked_invalid(pmap.lift_ratio)
    norm, lo, hi = _norm(pmap.lift_ratio)
    fig = Figure(figsize=(7.5, 5.6))
    ax = fig.subplots()
    from matplotlib.ticker import MaxNLocator

    levels = MaxNLocator(nbins=20).tick_values(lo, hi)
    levels = np.unique(np.r_[levels, [v for v in (0.0, 1.0) if lo < v < hi]])  # edges at 0, 1
    filled = ax.contourf(X, Y, lift, levels=levels, cmap="RdBu", norm=norm, extend="both")
    fig.colorbar(filled, ax=ax, label="lift ratio: pull / part weight [-] (negative: push)")

    own_gap = pmap.design_point[1] if pmap.design_point is not None else None
    handles = []
    lines = map_contours(pmap)
    marks = [pmap.design_point] if pmap.design_point is not None else []
    marks += part_points(parts, pmap.x.key, pmap.y.key, own_gap)
    for name, (what, level) in LINES.items():
        z = np.ma.masked_invalid(getattr(pmap, what))
        if not z.count() or not z.min() < level < z.max():
            continue
        style = "--" if name == "lift_ratio_1" else "-"
        cs = ax.contour(X, Y, z, levels=[level], colors="k", linewidths=1.6, linestyles=style)
        others = [tuple(p) for n, ls in lines.items() if n != name for line in ls for p in line]
        spot = _label_spot(lines[name], [*marks, *others], pmap)
        manual = [spot] if spot is not None else False
        texts = ax.clabel(
            cs, fmt={level: _LINE_WORDS[name]}, fontsize=8, inline=True, manual=manual
        )
        for text in texts:  # readable over the hatching too
            text.set_bbox({"boxstyle": "round,pad=0.1", "fc": "white", "ec": "none", "alpha": 0.7})
        handles.append(Line2D([], [], color="k", ls=style, lw=1.6, label=_LINE_WORDS[name]))
    outside = (~pmap.in_range) & np.isfinite(pmap.pull_N)
    if outside.any():
        hatch = ax.contourf(
            X, Y, outside.astype(float), levels=[0.5, 1.5], colors="none", hatches=["//"]
        )
        hatch.set_edgecolor("0.25")
        hatch.set_linewidth(0)
        handles.append(
            Patch(fc="none", ec="0.25", hatch="//", label="outside the model's checked range")
        )
    refused = ~np.isfinite(pmap.pull_N)
    if refused.any():
        ax.plot(X[refused], Y[refused], "x", color="0.45", ms=5)
        handles.append(
            Line2D([], [], marker="x", ls="", color="0.45", label="refused by the design rules")
        )
    if pmap.design_point is not None:
        x0, y0 = pmap.design_point
        ax.plot([x0], [y0], marker="*", ms=15, color="gold", mec="k", ls="", zorder=7)
        handles.append(
            Line2D([], [], marker="*", ms=12, color="gold", mec="k", ls="", label="this design")
        )
    handles += draw_parts(ax, parts, pmap.x.key, pmap.y.key, own_gap)
    ax.set_xlabel(_axis_words(pmap.x.key))
    ax.set_ylabel(_axis_words(pmap.y.key))
    state = "20 degC (isothermal)" if pmap.isothermal else "thermally coupled"
    ax.set_title(
        f"{pmap.design}: lift ratio (1 or more lifts the part, below 0 pushes it), {state}",
        fontsize=9,
    )
    if handles:
        ax.legend(handles=handles, fontsize=7, loc="best", framealpha=0.85)
    fig.tight_layout()
    return _save(fig, out_dir, stem)


def map_stem(pmap: PickMap) -> str:
    """File stem of a map: ``pickmap_<x key>__<y key>``."""
    return f"pickmap_{pmap.x.key}__{pmap.y.key}"


def map_csv(pmap: PickMap) -> str:
    """The grid as CSV: one row per point, x and y under their keys, then pull_N, lift_ratio,
    in_validated_range, pull_uncertainty_N and refused (the reason, empty where evaluated)."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    head = ["pull_N", "lift_ratio", "in_validated_range", "pull_uncertainty_N", "refused"]
    w.writerow([pmap.x.key, pmap.y.key, *head])
    for j, yv in enumerate(pmap.y.values):
        for i, xv in enumerate(pmap.x.values):
            w.writerow(
                [
                    repr(float(xv)),
                    repr(float(yv)),
                    repr(float(pmap.pull_N[j, i])),
                    repr(float(pmap.lift_ratio[j, i])),
                    bool(pmap.in_range[j, i]),
                    repr(float(pmap.pull_uncertainty_N[j, i])),
                    pmap.refused[j][i],
                ]
            )
    return buf.getvalue()


def write_map(pmap: PickMap, out_dir, stem: str | None = None, parts=()) -> dict[str, Path]:
    """Write the map's PNG, SVG and CSV into ``out_dir``; returns ``{"png", "svg", "csv"}``.
    ``parts`` are marked on the figures only (``plot_map``); the CSV is the grid's."""

    stem = stem or map_stem(pmap)
    png, svg = plot_map(pmap, out_dir, stem, parts)
    path = atomic_write_text(safe_child(Path(out_dir), f"{Path(png).stem}.csv"), map_csv(pmap))
    return {"png": png, "svg": svg, "csv": path}


def _at_design(pmap: PickMap, lines: dict) -> dict:
    """Where each line crosses the design's own y value: {"y": ..., name: [x, ...]} or {}."""
    if pmap.design_point is None:
        return {}
    y0 = pmap.design_point[1]
    if not min(pmap.y.values) <= y0 <= max(pmap.y.values):
        return {}
    return {"y": y0, **{name: crossings(pts, y0) for name, pts in lines.items()}}


def map_json(pmap: PickMap, files: dict | None = None) -> dict:
    """The map as a JSON-ready dict (``optim.jsonout.strict_json`` turns nan into null): the
    axes, the grid's arrays (rows along y), the lines, the crossings at the design's y, the
    files written."""
    lines = map_contours(pmap)
    return {
        "design": pmap.design,
        "x": {"key": pmap.x.key, "values": pmap.x.values.tolist()},
        "y": {"key": pmap.y.key, "values": pmap.y.values.tolist()},
        "isothermal": pmap.isothermal,
        "pull_N": pmap.pull_N.tolist(),
        "pull_uncertainty_N": pmap.pull_uncertainty_N.tolist(),
        "lift_ratio": pmap.lift_ratio.tolist(),
        "in_validated_range": pmap.in_range.tolist(),
        "refused": pmap.refused,
        "design_point": None if pmap.design_point is None else list(pmap.design_point),
        "contours": lines,
        "at_design": _at_design(pmap, lines),
        "evaluations": pmap.evaluations,
        "run_time_s": pmap.run_time_s,
        "files": {k: str(v) for k, v in (files or {}).items()},
    }


def format_map(pmap: PickMap, files: dict | None = None) -> str:
    """What ``eddypull map`` prints: the grid, the lift ratio's span, the share of points that
    lift the part or push it, where the lines cross the design's y value, the files."""
    lift = pmap.lift_ratio[np.isfinite(pmap.lift_ratio)]
    ny, nx = pmap.lift_ratio.shape
    lines = [
        f"pick map of {pmap.design}: {pmap.x.key} {pmap.x.values[0]:g}..{pmap.x.values[-1]:g} "
        f"x {pmap.y.key} {pmap.y.values[0]:g}..{pmap.y.values[-1]:g} ({nx} x {ny} points, "
        f"{'isothermal' if pmap.isothermal else 'thermally coupled'}, "
        f"{pmap.run_time_s:.1f} s)",
        f"lift ratio {lift.min():.3g} to {lift.max():.3g}; lifts the part (>= 1) at "
        f"{100 * np.mean(lift >= 1):.0f} % of the points, pushes it (< 0) at "
        f"{100 * np.mean(lift < 0):.0f} %",
    ]
    n_refused = int((~np.isfinite(pmap.pull_N)).sum())
    if n_refused:
        first = next(r for row in pmap.refused for r in row if r)
        lines.append(f"{n_refused} points refused by the design rules (the first: {first})")
    outside = int(((~pmap.in_range) & np.isfinite(pmap.pull_N)).sum())
    if outside:
        lines.append(
            f"{outside} points outside the range checked against the FEM (hatched): confirm "
            "there with 'eddypull verify'"
        )
    at = _at_design(pmap, map_contours(pmap))
    if at:
        for name in LINES:
            xs = ", ".join(f"{v:.4g}" for v in at[name]) or "none in the map"
            lines.append(f"{_LINE_WORDS[name]} at {pmap.y.key} = {at['y']:g}: {pmap.x.key} {xs}")
    for kind, path in (files or {}).items():
        lines.append(f"{kind:4s} {path}")
    return "\n".join(lines)


def around_axes(design, points: int = DEFAULT_POINTS, gaps_mm=()) -> tuple[MapAxis, MapAxis]:
    """Part radius x gap around the design's own values: radius AROUND_RADIUS times its own
    (above the part's inner radius), gap AROUND_GAP times its own, widened to take in every gap
    of ``gaps_mm`` [mm] (a study's pick gaps) and the design's holding gap
    (``thermal.hold_gap_mm``), so that the map shows every gap the design is judged at."""
    r = design.target.radius * 1e3
    g = design.target.gap * 1e3
    judged = [float(x) for x in gaps_mm]
    if design.thermal.hold_gap is not None:
        judged.append(design.thermal.hold_gap * 1e3)
    g_lo = min([AROUND_GAP[0] * g, *judged])
    g_hi = max([AROUND_GAP[1] * g, *judged])
    r_lo = max(AROUND_RADIUS[0] * r, 1.05 * design.target.inner_radius * 1e3)
    x = MapAxis("target.radius_mm", np.linspace(r_lo, AROUND_RADIUS[1] * r, points))
    y = MapAxis("target.gap_mm", np.linspace(g_lo, g_hi, points))
    return x, y


def offset_axes(design, points: int = DEFAULT_POINTS, gaps_mm=()) -> tuple[MapAxis, MapAxis]:
    """The part's offset from the axis x gap for ``design``: the offset from 0 to the pole's
    radius (the part's centre over the pole's edge), the gap axis of ``around_axes``."""
    _, y = around_axes(design, points, gaps_mm)
    reach = design.pole.radius if design.pole is not None else design.target.radius
    return MapAxis("target.offset_mm", np.linspace(0.0, reach * 1e3, points)), y


def pick_map_around(
    design,
    out_dir,
    points: int = DEFAULT_POINTS,
    isothermal: bool = False,
    stem: str | None = None,
    parts=(),
    gaps_mm=(),
) -> tuple[PickMap, dict[str, Path]]:
    """The part radius x gap map around ``design``'s own values (``around_axes``; its gap axis
    takes in ``gaps_mm`` [mm], every part's gaps and the holding gap), written to ``out_dir``
    (PNG, SVG, CSV), ``parts`` marked on the figures. Returns the map and the paths."""
    judged = [*gaps_mm, *(g for part in parts for g in part.gaps_mm)]
    x, y = around_axes(design, points, judged)
    pmap = evaluate_map(design, x, y, isothermal=isothermal)
    return pmap, write_map(pmap, out_dir, stem, parts)


def offset_map_around(
    design, out_dir, points: int = DEFAULT_POINTS, isothermal: bool = False, stem=None, gaps_mm=()
) -> tuple[PickMap, dict[str, Path]]:
    """The part's offset x gap map of ``design`` (``offset_axes``) written to ``out_dir``: where
    a part that arrives off the axis is still lifted. Returns the map and the paths."""
    x, y = offset_axes(design, points, gaps_mm)
    pmap = evaluate_map(design, x, y, isothermal=isothermal)
    return pmap, write_map(pmap, out_dir, stem)
