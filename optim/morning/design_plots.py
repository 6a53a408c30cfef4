"""Plots of one or a few designs rather than of a study: pull against gap, and the cross-section
to scale (the study's plots are optim.morning.plots)."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from models.design import with_value
from models.errors import DesignError
from models.evaluate import evaluate
from optim.morning.plots import _empty, _figure, _finish, _save
from optim.morning.section import section_mm

__all__ = ["plot_pull_vs_gap", "plot_section"]


def plot_pull_vs_gap(designs, out_dir, gaps_mm=None, isothermal: bool = False) -> list[Path]:
    """Pull against gap for picked designs, each evaluated with the fast model.

    Parameters
    ----------
    designs : list of (str, models.design.Design)
        Label and design.
    out_dir : str or Path
    gaps_mm : sequence of float, optional
        Gaps [mm]; default 15 points from half the smallest design gap to twice the largest.
    isothermal : bool
        Evaluate at 20 degC (as a study with ``isothermal = true`` does); default: thermally
        coupled, like ``models.evaluate.evaluate``.

    Returns
    -------
    list of Path
        ``pull_vs_gap.png/.svg``. Gaps a design refuses (DesignError) are left out of its curve.
    """

    if not designs:
        return _empty(out_dir, "pull_vs_gap", "no design picked")
    own = [d.target.gap * 1e3 for _, d in designs]
    if gaps_mm is None:
        gaps_mm = np.linspace(0.5 * min(own), 2.0 * max(own), 15)
    gaps_mm = np.asarray(gaps_mm, float)
    fig = _figure(figsize=(7, 4.8))
    ax = fig.subplots()
    refused = 0
    weights: list[float] = []
    for k, (label, design) in enumerate(designs):
        colour = f"C{k % 10}"
        pulls = []
        weight = math.nan
        for g in gaps_mm:
            try:
                r = evaluate(with_value(design, "target.gap_mm", float(g)), isothermal=isothermal)
                pulls.append(r.pull_N * 1e3)
                weight = r.target_weight_N * 1e3
            except DesignError:
                pulls.append(math.nan)
                refused += 1
        ax.plot(gaps_mm, pulls, "-o", ms=3, color=colour, label=str(label))
        ax.axvline(own[k], color=colour, lw=0.8, ls=":")
        if np.isfinite(weight) and not any(math.isclose(weight, w, rel_tol=1e-6) for w in weights):
            weights.append(weight)
    for k, weight in enumerate(weights):  # the part's weight is no trial's: black, not a colour
        text = "part weight" if len(weights) == 1 else f"part weight {weight:.3g} mN"
        ax.axhline(weight, color="k", lw=1.0, ls=("--", "-.", ":")[k % 3], label=text)
    ax.axhline(0.0, color="0.5", lw=0.8)
    ax.set_xlabel("gap between pole face and part [mm]")
    ax.set_ylabel("pull toward the face [mN]")
    note = f"; {refused} gaps refused by the model" if refused else ""
    _finish(ax, fig, f"pull against gap (dotted: each design's own gap){note}")
    return _save(fig, out_dir, "pull_vs_gap")


_PART_STYLE = {
    "POLE": ("0.7", "steel pole"),
    "RING": ("#c87533", "shading ring"),
    "COIL": ("#d9b44a", "coil window"),
    "TARGET": ("#7fa7c9", "target"),
}


def plot_section(design, out_dir, label: str) -> list[Path]:
    """Cross-section of a design to scale (the DXF's geometry, `optim.morning.dxf.section_mm`).

    The half-section r >= 0 is drawn solid, its mirror image faint, so the part reads as a full
    section; the axis is dash-dot; the pole face is y = 0.

    Returns
    -------
    list of Path
        ``section_<label>.png/.svg``.
    """
    from matplotlib.patches import Polygon

    poly = section_mm(design)
    fig = _figure(figsize=(6.5, 6.5))
    ax = fig.subplots()
    for layer, (colour, words) in _PART_STYLE.items():
        if layer not in poly:
            continue
        pts = np.array(poly[layer])
        ax.add_patch(Polygon(pts, closed=True, fc=colour, ec="k", lw=0.8, label=words))
        ax.add_patch(Polygon(pts * [-1, 1], closed=True, fc=colour, ec="0.5", lw=0.5, alpha=0.3))
    (x0, y0), (x1, y1) = poly["AXIS"]
    ax.plot([x0, x1], [y0, y1], "-.", color="k", lw=0.8)
    ax.axhline(0.0, color="0.4", lw=0.5, ls=":")
    ax.set_aspect("equal")
    xmax = max(max(p[0] for p in pts) for k, pts in poly.items() if k != "AXIS")
    ax.set_xlim(-1.08 * xmax, 1.08 * xmax)
    ax.set_ylim(y0, y1)
    ax.set_xlabel("r [mm]")
    ax.set_ylabel("z [mm] (pole face at 0)")
    t = design.target
    words = f"gap {t.gap * 1e3:.4g} mm"
    if design.ring is not None:
        g = design.ring
        words += (
            f", ring r {g.inner_radius * 1e3:.4g}..{g.outer_radius * 1e3:.4g} mm, "
            f"depth {g.depth * 1e3:.4g} mm"
        )
    _finish(ax, fig, f"{label}: {words} (to scale)")
    return _save(fig, out_dir, f"section_{label}")
