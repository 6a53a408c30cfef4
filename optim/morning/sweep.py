"""Sweep one design-file key and tabulate (and optionally plot) the fast model's results."""

from __future__ import annotations

import numpy as np

from models.checks import VALIDATED_RANGE
from models.design import with_value
from models.errors import DesignError
from models.evaluate import evaluate
from optim.morning.plots import words

__all__ = ["parse_sweep", "run_sweep", "format_sweep", "plot_sweep"]

COLUMNS = [
    ("pull_N", "pull_mN", 1e3),
    ("target_loss_W", "target_loss_W", 1.0),
    ("ring_loss_W", "ring_loss_W", 1.0),
    ("core_loss_W", "core_loss_W", 1.0),
    ("coil_voltage_V", "coil_voltage_V", 1.0),
    ("lift_ratio", "lift_ratio", 1.0),
    ("core_peak_flux_density_T", "core_peak_flux_density_T", 1.0),
]
#: Points of a sweep when --points is not given (as for pick maps).
DEFAULT_POINTS = 25


def parse_sweep(text: str, points: int | None = None):
    """'gap_mm=0.2..4' (with ``points`` values, default DEFAULT_POINTS) -> ("gap_mm", values).

    The older 'gap_mm=0.2:4:30' (START:STOP:COUNT) still reads, for one release: it returns a
    third item, the deprecation line to show (None for the new form).
    """
    key, sep, rng = text.partition("=")
    usage = (
        f"--sweep {text!r}: must be KEY=START..STOP (e.g. gap_mm=0.2..4 --points 30); the "
        "older form must be KEY=START:STOP:COUNT"
    )
    note = None
    if sep and key and ".." in rng:
        parts = rng.split("..")
        if len(parts) != 2:
            raise DesignError(usage)
        count = DEFAULT_POINTS if points is None else points
    elif sep and key and len(rng.split(":")) == 3:
        parts = rng.split(":")[:2]
        try:
            count = int(rng.split(":")[2])
        except ValueError:
            raise DesignError(
                f"--sweep {text!r}: START and STOP must be numbers and COUNT a whole number"
            ) from None
        note = (
            f"--sweep {text}: START:STOP:COUNT is deprecated and goes in the next release; "
            f"write --sweep {key}={parts[0]}..{parts[1]} --points {count}"
        )
    else:
        raise DesignError(usage)
    try:
        start, stop = float(parts[0]), float(parts[1])
    except ValueError:
        raise DesignError(f"--sweep {text!r}: START and STOP must be numbers") from None
    if not (np.isfinite(start) and np.isfinite(stop)):
        raise DesignError(f"--sweep {text!r}: START and STOP must be finite numbers")
    if count < 2 or count > 10_000:
        raise DesignError(f"--points = {count}: must be between 2 and 10000")
    return key.strip(), np.linspace(start, stop, count), note


def run_sweep(design, key: str, values, isothermal=True):
    """Evaluate ``design`` at each value of ``key``; returns a list of (value, Result)."""
    table = "ring" if key.startswith("ring.") else None
    if table and design.ring is None:
        raise DesignError(f"--sweep {key}: the design has no [ring]")
    rows = []
    for v in values:
        as_int = key.split(".")[-1] == "turns"
        d = with_value(design, key, int(round(v)) if as_int else float(v))
        rows.append((float(v), evaluate(d, isothermal=isothermal)))
    return rows


def format_sweep(key: str, rows) -> str:
    """The sweep as a table; each warning once below it, with the values it applies to."""
    widths = [max(14, len(c[1])) for c in COLUMNS]
    head = f"{key:>14s} " + " ".join(f"{c[1]:>{w}s}" for c, w in zip(COLUMNS, widths, strict=True))
    lines = [head]
    warned: dict[str, list[float]] = {}
    for v, r in rows:
        cells = (
            f"{getattr(r, a) * s:{w}.5g}" for (a, _, s), w in zip(COLUMNS, widths, strict=True)
        )
        lines.append(f"{v:14.5g} " + " ".join(cells))
        for w in r.warnings:
            warned.setdefault(w.split(":")[0], []).append(v)
    for what, values in warned.items():
        where = ", ".join(f"{v:g}" for v in values[:6]) + (" ..." if len(values) > 6 else "")
        lines.append(f"WARNING at {key} = {where}: {what}")
    return "\n".join(lines)


def outside_checked_range(result) -> bool:
    """Whether the model flagged this result's design as outside the range it was checked on
    against the FEM (``models.checks.VALIDATED_RANGE``; the result's range warnings)."""

    return any(
        w.startswith(f"{key} = ") and "outside the range checked" in w
        for w in result.warnings
        for key in VALIDATED_RANGE
    )


def _shade_outside(ax, x, rows) -> bool:
    """Shade the stretches of the swept axis where the model is outside its checked range (half
    way to the neighbouring points); returns whether anything was shaded."""
    flags = [outside_checked_range(r) for _, r in rows]
    edges = [x[0]] + [0.5 * (a + b) for a, b in zip(x[:-1], x[1:], strict=True)] + [x[-1]]
    shaded = False
    for i, flag in enumerate(flags):
        if flag:
            label = None if shaded else "outside the model's checked range"
            ax.axvspan(edges[i], edges[i + 1], color="0.85", lw=0, zorder=0, label=label)
            shaded = True
    return shaded


def plot_sweep(key: str, rows, path, title: str = "") -> None:
    """Pull against the swept value, with its split by source and the part's weight, to a PNG
    file; where the model is outside its checked range is shaded."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    x = [v for v, _ in rows]
    fig, ax = plt.subplots(figsize=(7, 4.5))
    try:
        _shade_outside(ax, x, rows)
        ax.plot(x, [r.pull_N * 1e3 for _, r in rows], "k-", lw=2, label="pull")
        for src, style in (("coil", "--"), ("pole", ":"), ("ring", "-.")):
            ax.plot(x, [r.pull_by_source_N[src] * 1e3 for _, r in rows], style, label=f"from {src}")
        weight = [r.target_weight_N * 1e3 for _, r in rows]
        ax.plot(x, weight, color="tab:red", lw=1.2, label="part weight")
        ax.axhline(0.0, color="0.6", lw=0.8)
        ax.set_xlabel(words(key))
        ax.set_ylabel("pull toward the face [mN]")
        ax.set_title(title)
        ax.legend(fontsize=8)
        ax.grid(alpha=0.3)
        fig.tight_layout()
        fig.savefig(path, dpi=120)
    finally:
        plt.close(fig)
