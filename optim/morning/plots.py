"""Morning-after plots of a study: fronts, parameter coupling, progress, pull against gap, section.

Every function writes a PNG and an SVG per figure into ``out_dir`` (atomically) and returns the
written paths. Figures are built on ``matplotlib.figure.Figure`` (Agg rendering, no pyplot state),
so nothing stays open after a call.

Input tables follow the study's trial table: one row per trial with ``trial`` (int), ``state``
("COMPLETE", "FAIL", "RUNNING"...), ``feasible`` (bool), ``on_front`` (bool), ``completed_at``
(datetime), ``reason`` (str), the searched parameters, the design's dimensions and the results
(``pull_N``, ``input_power_W``...). Objectives are a list of ``(column, "maximize"|"minimize")``.
Failed or running trials and NaN results are tolerated: they are counted, not drawn.
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from models.errors import DesignError
from optim.files import atomic_path, safe_child
from optim.morning.handoff import unit_of
from optim.study.progress import check_objectives, column, front_history, trial_flags

if TYPE_CHECKING:
    from matplotlib.figure import Figure

__all__ = [
    "plot_front_pairs",
    "plot_parameter_coupling",
    "plot_front_progress",
    "front_history",
    "words",
    "caption_for",
    "duration_words",
]

#: A scatter of more points than this is drawn as an image inside the SVG (and the PDF).
RASTER_ABOVE = 5000

_FAINT = {"infeasible": "0.55", "dominated": "tab:blue", "front": "tab:red"}


def _figure(**kwargs) -> Figure:
    """A matplotlib figure (matplotlib loads only when a plot is drawn)."""
    from matplotlib.figure import Figure

    return Figure(**kwargs)


def _slug(text: str) -> str:
    return re.sub(r"[^A-Za-z0-9_.-]+", "-", str(text)).strip("-.") or "plot"


def _save(fig: Figure, out_dir, stem: str) -> list[Path]:
    """Write ``stem``.png and ``stem``.svg into ``out_dir``; returns both paths."""
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    paths = []
    for ext in ("png", "svg"):
        path = safe_child(out_dir, f"{_slug(stem)}.{ext}")
        with atomic_path(path) as tmp:
            meta = {"Date": None} if ext == "svg" else {}  # reproducible SVG
            fig.savefig(tmp, format=ext, dpi=120, metadata=meta)
        paths.append(path)
    return paths


def _split_unit(name: str) -> tuple[str, str]:
    """``ring_loss_W`` -> (``ring_loss``, ``W``): the name without its unit suffix and the unit
    (`optim.morning.handoff.unit_of`; ``-`` for a plain number)."""
    unit = unit_of(name)
    parts = name.split("_")
    if unit not in ("-", ""):
        for k in range(1, len(parts)):
            if unit_of("x_" + "_".join(parts[-k:])) == unit:
                return "_".join(parts[:-k]), unit
    return name, unit


def words(name: str) -> str:
    """A column name in words with its unit: ``worst_lift_ratio`` -> ``worst lift ratio [-]``,
    ``input_power_W`` -> ``input power [W]``, ``margins.ring_temperature_C`` -> ``margin to
    ring temperature [degC]``."""
    name = str(name)
    prefix = ""
    for head, say in (("constraint_margin.", "margin to constraint "), ("margins.", "margin to ")):
        if name.startswith(head):
            prefix, name = say, name[len(head) :]
    stem, unit = _split_unit(name)
    return f"{prefix}{stem.replace('_', ' ').replace('.', ' ')} [{unit or '-'}]"


def _label(name: str, direction: str) -> str:
    return f"{words(name)}, {'higher' if direction == 'maximize' else 'lower'} is better"


def _stem_words(name: str) -> str:
    """A column name in words without its unit: ``input_power_W`` -> ``input power``."""
    return words(name).rsplit(" [", 1)[0]


def _is_lift_ratio(name: str) -> bool:
    return "lift_ratio" in str(name)


#: The lift ratio at which the pull just carries the part's weight.
_LIFT_LINE = dict(color="k", lw=1.0, ls="--", label="lift ratio 1: below it the part is not lifted")
_LIFT_LINE_X = {**_LIFT_LINE, "label": "lift ratio 1: left of it the part is not lifted"}


def duration_words(seconds: float) -> str:
    """A duration as people say it: ``40 seconds``, ``3 minutes``, ``2.5 hours``, ``3.1 days``."""
    s = float(seconds)
    steps = ((90, 1, "second"), (5400, 60, "minute"), (172800, 3600, "hour"))
    size, unit = next(((z, u) for limit, z, u in steps if s < limit), (86400, "day"))
    n = s / size
    text = f"{n:.0f}" if n >= 10 or unit in ("second", "minute") else f"{n:.2g}"
    return f"{text} {unit}{'' if text == '1' else 's'}"


def plot_front_pairs(trials: pd.DataFrame, objectives, out_dir) -> list[Path]:
    """The front for each pair of objectives, infeasible and dominated trials shown faintly.

    With one objective, the objective against the trial number with its best-so-far line.

    Parameters
    ----------
    trials : pandas.DataFrame
        All trials (module docstring).
    objectives : list of (str, str) or dict
        ``(column, "maximize" | "minimize")``; a missing column reads as NaN (nothing drawn).
    out_dir : str or Path

    Returns
    -------
    list of Path
        ``front_<a>__<b>.png/.svg`` per pair (``front_<a>.png/.svg`` for one objective).
    """
    objectives = check_objectives(trials, objectives)
    complete, feasible, front = trial_flags(trials)
    n_fail = int((~complete).sum())
    values = {n: column(trials, n) for n, _ in objectives}
    paths: list[Path] = []
    if len(objectives) == 1:
        return _one_objective(trials, objectives[0], values, n_fail, out_dir)
    names = [n for n, _ in objectives]
    for i in range(len(objectives)):
        for j in range(i + 1, len(objectives)):
            (a, da), (b, db) = objectives[i], objectives[j]
            xa, yb = values[a], values[b]
            fig = _figure(figsize=(6.5, 5))
            ax = fig.subplots()
            groups = (
                (complete & ~feasible, "infeasible", "x", 0.25, 14),
                (feasible & ~front, "feasible, dominated", "o", 0.25, 14),
                (front, "front", "o", 0.95, 30),
            )
            for mask, what, marker, alpha, size in groups:
                colour = _FAINT[what.split(",")[-1].strip()]
                m = mask & np.isfinite(xa) & np.isfinite(yb)
                ax.scatter(
                    xa[m],
                    yb[m],
                    s=size,
                    marker=marker,
                    color=colour,
                    alpha=alpha,
                    label=f"{what} ({int(m.sum())})",
                    zorder=3 if what == "front" else 2,
                    rasterized=bool(m.sum() > RASTER_ABOVE),  # SVG: one image, not 1e6 marks
                )
            m = front & np.isfinite(xa) & np.isfinite(yb)
            if len(objectives) == 2 and m.sum() > 1:
                order = np.argsort(xa[m])
                ax.plot(xa[m][order], yb[m][order], "-", color=_FAINT["front"], lw=1, alpha=0.6)
            if _is_lift_ratio(a):
                ax.axvline(1.0, **_LIFT_LINE_X)
            elif _is_lift_ratio(b):
                ax.axhline(1.0, **_LIFT_LINE)
            ax.set_xlabel(_label(a, da))
            ax.set_ylabel(_label(b, db))
            others = [_stem_words(n) for n in names if n not in (a, b)]
            note = (
                f"; front in {len(names)} objectives (also {', '.join(others)})" if others else ""
            )
            title = f"{_stem_words(a)} against {_stem_words(b)}"
            _finish(ax, fig, f"{title}: {n_fail} failed or unfinished not shown{note}")
            paths += _save(fig, out_dir, f"front_{a}__{b}")
    return paths


def _one_objective(trials, objective, values, n_fail: int, out_dir) -> list[Path]:
    """The front plot of a one-objective study: the objective against the trial number, with
    its best-so-far line."""
    name, direction = objective
    complete, feasible, _ = trial_flags(trials)
    y = values[name]
    x = trials["trial"].to_numpy() if "trial" in trials else np.arange(len(trials))
    fig = _figure(figsize=(7, 4.5))
    ax = fig.subplots()
    groups = [(complete & ~feasible, "infeasible", "x", 0.35), (feasible, "feasible", "o", 0.6)]
    for mask, what, marker, alpha in groups:
        ax.plot(
            x[mask],
            y[mask],
            marker,
            ls="",
            color=_FAINT["infeasible" if what == "infeasible" else "dominated"],
            alpha=alpha,
            label=f"{what} ({mask.sum()})",
        )
    if feasible.any():
        order = np.argsort(x[feasible], kind="stable")
        yf = y[feasible][order]
        best = np.fmax.accumulate(yf) if direction == "maximize" else np.fmin.accumulate(yf)
        ax.step(x[feasible][order], best, where="post", color=_FAINT["front"], label="best so far")
    if _is_lift_ratio(name):
        ax.axhline(1.0, **_LIFT_LINE)
    ax.set_xlabel("trial number")
    ax.set_ylabel(_label(name, direction))
    _finish(ax, fig, f"{_stem_words(name)} over the study; {n_fail} failed or unfinished not shown")
    return _save(fig, out_dir, f"front_{name}")


def _finish(ax, fig: Figure, title: str) -> None:
    ax.set_title(title, fontsize=9)
    ax.grid(alpha=0.3)
    if ax.get_legend_handles_labels()[0]:
        ax.legend(fontsize=8)
    fig.tight_layout()


def _empty(out_dir, stem: str, text: str) -> list[Path]:
    fig = _figure(figsize=(6, 3))
    ax = fig.subplots()
    ax.axis("off")
    ax.text(0.5, 0.5, text, ha="center", va="center")
    return _save(fig, out_dir, stem)


def plot_parameter_coupling(
    front: pd.DataFrame, params, out_dir, color_by: str | None = None, log=(), choices=None
) -> list[Path]:
    """How the searched parameters move together along the front.

    A parallel-coordinates plot (each front design a line, each parameter scaled to its range on
    the front, the range written under its axis) and, for 2 to 6 parameters, a scatter matrix.
    A text parameter (a material searched over a list of choices) is drawn as categories: each
    choice at a fixed place on its axis, named beside it (the parallel plot) or as the tick
    labels (the scatter matrix, whose diagonal then counts the designs of each choice).

    Parameters
    ----------
    front : pandas.DataFrame
        The front designs (rows), with a column per parameter.
    params : list of str
        Parameter columns.
    out_dir : str or Path
    color_by : str, optional
        A column (e.g. the first objective) that colours the lines.
    log : collection of str
        Parameters searched on a log scale: their axis is logarithmic (positions by the
        logarithm of the value, log axes in the scatter matrix).
    choices : dict of str to list of str, optional
        The choices of the text parameters, in the study's order (every choice gets its place,
        on the front or not). A column of text not named here is taken as categories too, its
        values in alphabetical order.

    Returns
    -------
    list of Path
        ``coupling_parallel.png/.svg`` and, when drawn, ``coupling_matrix.png/.svg``.
    """
    params = list(params)
    missing = [p for p in params if p not in front.columns]
    if missing:
        raise DesignError(f"params = {missing!r}: not columns of the front table")
    if len(front) == 0 or not params:
        return _empty(out_dir, "coupling_parallel", "empty front: no feasible design to show")
    data, cats = _coded(front, params, dict(choices or {}))
    is_log = np.array([p in set(log) and p not in cats for p in params], bool)
    with np.errstate(invalid="ignore", divide="ignore"):
        data = np.where(is_log & ~(data > 0), np.nan, data)  # a log axis holds positive values
        axis = np.where(is_log, np.log10(data), data)  # the value as placed on its axis
    finite = np.isfinite(axis)
    lo = np.array(
        [axis[finite[:, i], i].min() if finite[:, i].any() else np.nan for i in range(len(params))]
    )
    hi = np.array(
        [axis[finite[:, i], i].max() if finite[:, i].any() else np.nan for i in range(len(params))]
    )
    for i, names in cats.items():  # a category's place does not depend on the front
        lo[i], hi[i] = -0.5, len(names) - 0.5
    with np.errstate(invalid="ignore"):
        span = np.where(hi > lo, hi - lo, np.nan)
        scaled = np.where(np.isfinite(span), (axis - lo) / span, np.where(finite, 0.5, np.nan))
    lo[is_log], hi[is_log] = 10.0 ** lo[is_log], 10.0 ** hi[is_log]  # back to values
    colours = None
    if color_by is not None and color_by in front.columns:
        c = pd.to_numeric(front[color_by], errors="coerce").to_numpy(float)
        if np.isfinite(c).any():
            import matplotlib as mpl

            norm = mpl.colors.Normalize(np.nanmin(c), np.nanmax(c))
            cmap = mpl.colormaps["viridis"]
            colours = [cmap(norm(v)) if np.isfinite(v) else (0.6, 0.6, 0.6, 1) for v in c]
    fig = _figure(figsize=(max(6.0, 1.6 * len(params)), 4.8))
    ax = fig.subplots()
    x = np.arange(len(params))
    for k, row in enumerate(scaled):
        ax.plot(x, row, "-o", ms=3, lw=1, alpha=0.7, color=colours[k] if colours else "tab:red")
    if colours:
        import matplotlib as mpl

        fig.colorbar(mpl.cm.ScalarMappable(norm=norm, cmap=cmap), ax=ax, label=words(color_by))
    for i, names in cats.items():
        for code, name in enumerate(names):
            y = (code + 0.5) / len(names)
            ax.text(x[i] + 0.04, y, name, fontsize=6, va="center", ha="left", color="0.25")
    ax.set_xticks(x)
    ax.set_xticklabels(
        [
            f"{_stem_words(p)}\n(choices)"
            if i in cats
            else f"{words(p)}\n{_g(a)} .. {_g(b)}" + ("\n(log axis)" if g else "")
            for i, (p, a, b, g) in enumerate(zip(params, lo, hi, is_log, strict=True))
        ],
        fontsize=8,
    )
    ax.set_ylabel("position in the front's range [-]")
    ax.set_ylim(-0.05, 1.05)
    _finish(ax, fig, f"parameters along the front ({len(front)} designs)")
    paths = _save(fig, out_dir, "coupling_parallel")
    if 2 <= len(params) <= 6 and len(front) >= 2:
        fig = _scatter_matrix(params, data, axis, is_log, colours, cats)
        fig.suptitle(f"parameter coupling across the front ({len(front)} designs)", fontsize=9)
        fig.tight_layout()
        paths += _save(fig, out_dir, "coupling_matrix")
    return paths


def _coded(front: pd.DataFrame, params, choices: dict) -> tuple[np.ndarray, dict]:
    """The parameter columns as numbers: a text parameter's values replaced by their index in
    its choices (NaN for a value that is none of them). Returns (data, {column index: choices})."""
    data = np.full((len(front), len(params)), np.nan)
    cats: dict[int, list[str]] = {}
    for i, p in enumerate(params):
        col = front[p]
        text = p in choices or not (
            pd.api.types.is_numeric_dtype(col) or pd.api.types.is_bool_dtype(col)
        )
        if not text:
            data[:, i] = pd.to_numeric(col, errors="coerce").to_numpy(float)
            continue
        names = [str(c) for c in choices.get(p, ())] or sorted(
            {str(v) for v in col if isinstance(v, str)}
        )
        index = {name: k for k, name in enumerate(names)}
        data[:, i] = [index.get(v, np.nan) if isinstance(v, str) else np.nan for v in col]
        cats[i] = names
    return data, cats


def _scatter_matrix(params, data, axis, is_log, colours, cats=None) -> Figure:
    """The scatter matrix of the coupling plot: each parameter against each other one below the
    diagonal, its spread on the diagonal, log axes for the log-scaled ones; a text parameter's
    axis has its choices as tick labels and its diagonal counts the designs of each choice."""
    cats = cats or {}
    n = len(params)
    finite = np.isfinite(axis)
    fig = _figure(figsize=(2.2 * n, 2.2 * n))
    axes = np.asarray(fig.subplots(n, n, squeeze=False))
    for i in range(n):
        for j in range(n):
            a = axes[i, j]
            a.tick_params(labelsize=7)  # before the category names, which are smaller
            if j > i:
                a.axis("off")
            elif j == i and i in cats:
                codes = data[finite[:, i], i].astype(int)
                counts = np.bincount(codes, minlength=len(cats[i]))
                a.bar(np.arange(len(cats[i])), counts, color="0.6")
            elif j == i:
                bins = 10
                if is_log[i]:
                    bins = 10.0 ** np.histogram_bin_edges(axis[finite[:, i], i], 10)
                a.hist(data[finite[:, i], i], bins=bins, color="0.6")
            else:
                a.scatter(
                    data[:, j], data[:, i], s=10, c=colours if colours else "tab:red", alpha=0.8
                )
                if is_log[i]:
                    a.set_yscale("log")
                    _plain_log_ticks(a.yaxis, data[finite[:, i], i])
                if i in cats:
                    _category_axis(a.yaxis, a.set_ylim, cats[i], j == 0)
            if is_log[j]:
                a.set_xscale("log")
                _plain_log_ticks(a.xaxis, data[finite[:, j], j])
            if j in cats:
                _category_axis(a.xaxis, a.set_xlim, cats[j], i == n - 1)
            if i == n - 1:
                a.set_xlabel(_stem_words(params[j]) if j in cats else words(params[j]), fontsize=8)
            if j == 0 and i > 0:
                a.set_ylabel(_stem_words(params[i]) if i in cats else words(params[i]), fontsize=8)
    return fig


#: Mantissas of the ticks a log axis may take (1, 1.2, 1.5 ... 8 times a power of ten).
_LOG_MANTISSAS = (1.0, 1.2, 1.5, 2.0, 2.5, 3.0, 4.0, 5.0, 6.0, 8.0)


def _plain_log_ticks(axis, values, most: int = 4) -> None:
    """At most ``most`` ticks on a log axis over ``values``, at round numbers written plainly
    (``2000``, not ``2 x 10^3``), and no labels on the minor ticks: a range of less than a
    decade otherwise gets crowded labels in powers of ten."""
    from matplotlib.ticker import FixedLocator, FuncFormatter, NullFormatter

    values = np.asarray(values, float)
    values = values[np.isfinite(values) & (values > 0)]
    if not len(values):
        return
    lo, hi = float(values.min()), float(values.max())
    decades = range(int(np.floor(np.log10(lo))), int(np.floor(np.log10(hi))) + 1)
    ticks = [m * 10.0**k for k in decades for m in _LOG_MANTISSAS if lo <= m * 10.0**k <= hi]
    if len(ticks) > most:
        step = int(np.ceil(len(ticks) / most))
        ticks = ticks[::step]
    if not ticks:
        ticks = [lo, hi]
    axis.set_major_locator(FixedLocator(ticks))
    axis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:.4g}"))
    axis.set_minor_formatter(NullFormatter())


def _category_axis(axis, set_limits, names, labelled: bool) -> None:
    """An axis of categories: one tick per choice, labelled with its name when ``labelled``
    (the matrix's outer row and column)."""
    axis.set_ticks(np.arange(len(names)))
    if not labelled:
        axis.set_ticklabels([])
    elif axis.axis_name == "x":
        axis.set_ticklabels(names, fontsize=6, rotation=40, ha="right", rotation_mode="anchor")
    else:
        axis.set_ticklabels(names, fontsize=6)
    set_limits(-0.5, len(names) - 0.5)


def _g(x) -> str:
    return "nan" if not np.isfinite(x) else f"{x:.4g}"


def plot_front_progress(trials: pd.DataFrame, objectives, out_dir) -> list[Path]:
    """Progress of the front over the run: hypervolume and front size against finished trials
    (one objective: its best value so far).

    See `front_history` for the measure (normalised hypervolume, reference point 1.1). The title
    gives the elapsed time of the run when completion times are known.

    Returns
    -------
    list of Path
        ``progress.png/.svg``.
    """
    hist = front_history(trials, objectives)
    if hist.empty:
        return _empty(out_dir, "progress", "no finished trial yet")
    if "best" in hist:  # one objective: its best value so far says it all
        fig = _figure(figsize=(7, 4))
        ax1 = ax2 = fig.subplots()
        ax1.step(hist["finished"], hist["best"], where="post", color="tab:red")
        ax1.set_ylabel(f"best {_label(*list(dict(objectives).items())[0])}")
    else:
        fig = _figure(figsize=(7, 5.5))
        ax1, ax2 = fig.subplots(2, 1, sharex=True)
        ax1.step(hist["finished"], hist["hypervolume"], where="post", color="tab:red")
        ax1.set_ylabel("hypervolume [share of box]")
        ax2.step(hist["finished"], hist["front_size"], where="post", color="k")
        ax2.set_ylabel("designs on the front")
    ax2.set_xlabel("finished trials (completed or failed)")
    when = pd.to_datetime(hist["completed_at"], errors="coerce").dropna()
    elapsed = ""
    if len(when) > 1:
        elapsed = f" over {duration_words((when.max() - when.min()).total_seconds())}"
    ax2.grid(alpha=0.3)
    _finish(ax1, fig, f"front progress: {len(hist)} finished trials{elapsed}")
    return _save(fig, out_dir, "progress")


def caption_for(path, objectives=()) -> str:
    """The sentence under a plot in the report, from the plot's file name (as written above).

    ``objectives`` (``(column, direction)`` pairs or a dict) give the words of the front plots'
    axes; other plots need none.
    """
    stem = Path(path).stem
    names = {_slug(n): n for n in dict(objectives)}
    if stem.startswith("front_") and "__" in stem:
        a, b = (names.get(n, n) for n in stem[len("front_") :].split("__", 1))
        return (
            f"The front in {_stem_words(a)} and {_stem_words(b)}: red points are the designs no "
            "other feasible design beats in both, blue points feasible designs that one beats, "
            "grey crosses designs that break a limit."
        )
    if stem.startswith("front_"):
        a = names.get(stem[len("front_") :], stem[len("front_") :])
        return f"{_stem_words(a).capitalize()} of every trial, with the best found so far (red)."
    if stem.startswith("section_"):
        return (
            f"Cross-section of {stem[len('section_') :].replace('-', ' ')} to scale: the pole, "
            "coil window, shading ring and part, mirrored about the axis."
        )
    fixed = {
        "progress": "How the front grew over the run: the share of the objective box it "
        "dominates, and how many designs were on it, after each finished trial.",
        "coupling_parallel": "How the searched parameters move together along the front: each "
        "line is one front design, each axis spans that parameter's range on the front (a "
        "searched material's axis holds its choices, each named beside it).",
        "coupling_matrix": "The searched parameters of the front designs against each other, "
        "with each parameter's spread on the diagonal (for a searched material, the designs of "
        "each choice).",
        "pull_vs_gap": "Pull against gap for the picked designs: where a curve is under the "
        "part-weight line, the magnet does not lift the part at that gap.",
    }
    return fixed.get(stem, stem.replace("_", " ").replace("-", " ").capitalize() + ".")
