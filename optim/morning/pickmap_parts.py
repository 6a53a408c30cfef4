"""A family's parts on a pick map: each part (``[[parts]]``) at its radius over its gap range.

On a part radius x gap map (``target.radius_mm`` against ``target.gap_mm``) each part of a
study's family is a vertical bar at its radius from its ``gap_min_mm`` to its ``gap_max_mm``
(a dot at the design's own gap when it has no range), labelled with its name: lift parts solid
green with round ends, leave parts dotted magenta with square ends, each outlined in white so
that it reads on the map's blue and red alike. The map's colours are the lift ratio of the
design's own part; a part of another thickness or metal is marked where it sits, and reads on
the map only as the design's own part would at that size (``parts_caption`` says so).
"""

from __future__ import annotations

import numpy as np

__all__ = ["STYLES", "draw_parts", "part_points", "parts_caption"]

#: Line style, colour and end marker by role.
STYLES = {
    "lift": {"ls": "-", "color": "#1a9641", "marker": "o", "words": "lift part (its gap range)"},
    "leave": {"ls": ":", "color": "#c51b7d", "marker": "s", "words": "leave part (its gap range)"},
}
_AXES = ("target.radius_mm", "target.gap_mm")


def _gap_range(part, own_gap_mm: float | None) -> tuple[float, float] | None:
    """A part's gap range [mm]: its first and last gap, or the design's own gap twice."""
    if part.gaps_mm:
        return float(min(part.gaps_mm)), float(max(part.gaps_mm))
    return None if own_gap_mm is None else (own_gap_mm, own_gap_mm)


def part_points(parts, x_key: str, y_key: str, own_gap_mm: float | None = None, per_bar=8):
    """Points along the bars ``draw_parts`` draws (``per_bar`` each; [] on other axes): where a
    line's label should not go."""
    if not parts or (x_key, y_key) != _AXES:
        return []
    out = []
    for part in parts:
        gaps = _gap_range(part, own_gap_mm)
        if gaps is not None:
            r = float(part.target["radius_mm"])
            out += [(r, g) for g in np.linspace(gaps[0], gaps[1], per_bar)]
    return out


def draw_parts(ax, parts, x_key: str, y_key: str, own_gap_mm: float | None = None) -> list:
    """Mark ``parts`` (``optim.study.parts.Part``) on the axes ``ax`` of a part radius x gap map;
    returns the legend handles (one per role present). Other axes, or no parts: nothing drawn.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
    parts : sequence of optim.study.parts.Part
        Each with ``name``, ``role``, ``target["radius_mm"]`` [mm] and ``gaps_mm`` [mm].
    x_key, y_key : str
        The map's keys; parts are drawn only on ``target.radius_mm`` x ``target.gap_mm``.
    own_gap_mm : float, optional
        The design's own gap [mm], where a part without a gap range is picked.
    """
    from matplotlib import patheffects
    from matplotlib.lines import Line2D

    if not parts or (x_key, y_key) != _AXES:
        return []
    outline = [patheffects.withStroke(linewidth=5, foreground="white")]
    roles = []
    for part in parts:
        gaps = _gap_range(part, own_gap_mm)
        if gaps is None:
            continue
        style = STYLES.get(part.role, STYLES["lift"])
        r = float(part.target["radius_mm"])
        (line,) = ax.plot(
            [r, r],
            list(gaps),
            ls=style["ls"],
            color=style["color"],
            lw=2.5,
            marker=style["marker"],
            ms=6,
            mec="white",
            zorder=5,
        )
        line.set_path_effects(outline)
        ax.annotate(
            part.name,
            (r, gaps[1]),
            xytext=(9, 2),
            textcoords="offset points",
            fontsize=8,
            color=style["color"],
            fontweight="bold",
            zorder=6,
            bbox={"boxstyle": "round,pad=0.15", "fc": "white", "ec": "none", "alpha": 0.8},
        )
        if part.role not in roles:
            roles.append(part.role)
    return [
        Line2D(
            [],
            [],
            ls=STYLES[role]["ls"],
            color=STYLES[role]["color"],
            lw=2.5,
            marker=STYLES[role]["marker"],
            mec="white",
            label=STYLES[role]["words"],
        )
        for role in ("lift", "leave")
        if role in roles
    ]


def parts_caption(parts, design) -> str:
    """The caption's sentence on the marked parts ('' without parts): what the bars are and,
    when a part's thickness or metal differs from the design's own part, that the colours are
    the design's own part's."""
    if not parts:
        return ""
    own = design.source.get("target", {})
    keys = ({*own} | {k for p in parts for k in p.target}) - {"radius_mm", "gap_mm"}
    differs = any(p.target.get(k) != own.get(k) for p in parts for k in keys)
    words = (
        " Bars: the family's parts at their radius over their gap range (solid green: lifted, "
        "dotted magenta: left)"
    )
    if differs:
        words += (
            "; the colours are for the design's own part's thickness and metal, so a part of "
            "another thickness or metal reads only as that part would at its size"
        )
    return words + "."
