"""The report's tolerance section: the first pick's tolerance table, compact.

Three small tables from one ``optim.morning.robustness.ReportTolerance``: the tolerances with
the largest effect on the lift ratio (``TOP_ROWS`` of them) and their effect on every output of
``optim.study.tolerance.OUTPUTS``; the Monte Carlo 5th, 50th and 95th percentiles of those
outputs; the share of the samples that keep each of the study's constraints and each of the
design's own limits. Every piece of text is escaped with ``html.escape``.
"""

from __future__ import annotations

import html
import math

from optim.morning.robustness import CONSTRAINT_PREFIX
from optim.study.tolerance import OUTPUTS

__all__ = ["TOP_ROWS", "tolerance_section"]

#: Tolerances shown in the report's sensitivity ranking (the rest: the hand-off's table).
TOP_ROWS = 6


def _e(x) -> str:
    return html.escape(str(x), quote=True)


def _num(value: float, scale: float = 1.0, digits: int = 4) -> str:
    """A number to ``digits`` significant digits after ``scale``; '-' when not finite."""
    if value is None or not math.isfinite(value):
        return "-"
    return f"{value * scale:.{digits}g}"


def _table(head: list[str], rows: list[list[str]], text_columns: int = 1) -> str:
    """A plain table: the first ``text_columns`` columns left-aligned text, the rest numbers."""

    def cell(tag: str, k: int, v: str) -> str:
        klass = ' class="text"' if k < text_columns else ""
        return f"<{tag}{klass}>{_e(v)}</{tag}>"

    thead = "".join(cell("th", k, h) for k, h in enumerate(head))
    body = "".join(
        "<tr>" + "".join(cell("td", k, v) for k, v in enumerate(row)) + "</tr>" for row in rows
    )
    return f"<table><thead><tr>{thead}</tr></thead><tbody>{body}</tbody></table>"


def _output_heads() -> list[str]:
    return [f"{words} [{unit}]" for _, words, _, unit in OUTPUTS]


def _sensitivity_table(study) -> str:
    """The ``TOP_ROWS`` tolerances ranked by their effect on the lift ratio."""
    words = {t.key: t.words() for t in study.tolerances}
    rows = []
    for s in study.sensitivities[:TOP_ROWS]:
        cells = [_num(s["effect"][name], scale, 3) for name, _, scale, _ in OUTPUTS]
        rows.append([s["key"], words[s["key"]], *cells])
    return _table(["tolerance", "half-width", *_output_heads()], rows, text_columns=2)


def _spread_table(study) -> str:
    """Nominal value and Monte Carlo percentiles of each output."""
    rows = []
    for name, words, scale, unit in OUTPUTS:
        e = study.spread[name]
        rows.append(
            [
                f"{words} [{unit}]",
                *(_num(v, scale) for v in (study.nominal[name], e["p5"], e["p50"], e["p95"])),
            ]
        )
    return _table(["output", "this design", "5 %", "50 %", "95 %"], rows)


def _limits_table(study, prefix: str) -> str:
    """Share of the evaluated samples keeping each study constraint, then each design limit."""
    constraints = [(k[len(prefix) :], v) for k, v in study.limits.items() if k.startswith(prefix)]
    limits = [
        (k, v) for k, v in study.limits.items() if not k.startswith(prefix) and k != "all limits"
    ]
    rows = [["study constraint", name, f"{100 * share:.1f} %"] for name, share in constraints]
    rows += [
        ["design limit", f"{name} within its limit", f"{100 * share:.1f} %"]
        for name, share in limits
    ]
    if "all limits" in study.limits:
        rows.append(["all at once", "every row above", f"{100 * study.limits['all limits']:.1f} %"])
    return _table(["kind", "holds when", "share of samples"], rows, text_columns=2)


def tolerance_section(table) -> list[str]:
    """The report's tolerance section of ``table`` (``optim.morning.robustness.
    ReportTolerance``), as HTML pieces."""

    study = table.study
    state = "isothermal: every part at 20 degC" if study.isothermal else "thermally coupled"
    evaluated = study.n_samples - study.refused
    words = (
        f"How {table.label} ({table.why}), the design the report leads with, moves when it is "
        f"made and driven within the default tolerances (common practice, no source). "
        f"{study.n_samples} Monte Carlo samples (seed {study.seed}"
        + (f", {study.refused} refused by the design rules" if study.refused else "")
        + f"), every tolerance uniform within its half-width, each sample evaluated as the "
        f"study evaluates a trial ({state}), in {study.run_time_s:.0f} s; with {evaluated} "
        f"samples the 5 % and 95 % columns are rough. The hand-off's table ('eddypull study "
        f"export --tolerance') takes {table.handoff_samples} samples and lists every tolerance."
    )
    if table.family:
        words += (
            " The outputs are the first lift part's at the design's gap; the constraints cover "
            "every part. The ring's conductivity and the pole's permeability vary the magnet for "
            "every part, the part's conductivity only the first lift part's."
        )
    shown = min(TOP_ROWS, len(study.sensitivities))
    pieces = [
        f"<h2>Tolerances of {_e(table.label)}</h2>",
        f"<p>{_e(words)}</p>",
        f"<h3>Sensitivity: the {shown} of {len(study.sensitivities)} tolerances with the largest "
        "effect on the lift ratio (change over one half-width, central difference)</h3>",
        _sensitivity_table(study),
        "<h3>Spread over the samples</h3>",
        _spread_table(study),
        "<h3>How often each constraint and limit holds</h3>",
        _limits_table(study, CONSTRAINT_PREFIX),
    ]
    if study.notes:
        pieces.append("<ul>" + "".join(f"<li>{_e(n)}</li>" for n in study.notes) + "</ul>")
    return pieces
