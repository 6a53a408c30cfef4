"""The study report: one self-contained HTML page a person reads in the morning.

``report.html`` holds, in order: the study summary (budget, trials, feasible share, rate), the
front table (sortable by any column with a few lines of inline JavaScript), the plots (embedded as
base64 data URIs, so the page needs no other file), the limits that bind the front's designs, the
model's validity notes and the cautions. Every piece of text is escaped with ``html.escape``.
"""

from __future__ import annotations

import base64
import datetime as _dt
import html
import math
import numbers
from pathlib import Path

import pandas as pd

from models.errors import DesignError
from optim.files import atomic_write_text, safe_child

__all__ = ["write_report", "render_report", "binding_counts", "CAUTIONS"]

#: The cautions of the README (section "Cautions"), shown at the end of every report.
CAUTIONS = (
    (
        "Design aid only",
        "eddypull is a design aid, not a safety assessment. Check every design against your local "
        "codes and have it reviewed by a licensed professional before it is built or energised.",
    ),
    (
        "Hot parts",
        "Shading rings, targets and coils dissipate watts in a few grams of metal and can reach "
        "temperatures that burn skin and damage insulation within seconds to minutes. Guard hot "
        "parts and let them cool.",
    ),
    (
        "Mains voltage",
        "Coils are usually driven from mains-derived supplies. Wiring, insulation class, protective "
        "earth and over-current protection must follow the applicable electrical codes (for example "
        "IEC 60204-1 for machinery); work on energised equipment only when qualified to.",
    ),
    (
        "Strong AC fields",
        "The field near the pole face can exceed exposure limits for workers and can disturb "
        "implanted medical devices (pacemakers, defibrillators, insulin pumps); keep people with "
        "implants away and assess exposure under your local rules. Rings, watches and tools heat "
        "up and are pushed in the field.",
    ),
    (
        "Model limits",
        "The fast model is linear: above the steel's saturation flux density its answers are "
        "optimistic. Check the design you build with 'eddypull verify' (or export --verify) and on "
        "the bench.",
    ),
)

_MIME = {".png": "image/png", ".svg": "image/svg+xml", ".jpg": "image/jpeg", ".jpeg": "image/jpeg"}

_CSS = """
body { font-family: system-ui, sans-serif; margin: 1.5em auto; max-width: 75em; color: #222; }
h1 { font-size: 1.5em; } h2 { font-size: 1.2em; border-bottom: 1px solid #ccc; margin-top: 2em; }
table { border-collapse: collapse; font-size: 0.85em; }
th, td { border: 1px solid #ddd; padding: 0.2em 0.5em; text-align: right; }
th { background: #f3f3f3; position: sticky; top: 0; }
td.text, th.text { text-align: left; }
table.sortable th { cursor: pointer; }
th[aria-sort=ascending]::after { content: " \\25B2"; }
th[aria-sort=descending]::after { content: " \\25BC"; }
.scroll { overflow: auto; max-height: 40em; }
figure { display: inline-block; margin: 0.5em; vertical-align: top; }
figure img { max-width: 36em; border: 1px solid #eee; }
figcaption { font-size: 0.8em; color: #555; }
.caution { background: #fff4e5; border-left: 4px solid #e69500; padding: 0.5em 1em; }
"""

# Sort the table by the clicked column: numbers numerically (data-v), text alphabetically; cells
# without a number ("-") after the numbers in both directions. Checked by hand with node and a
# stub DOM (ascending, descending, second column).
_JS = """
document.querySelectorAll("table.sortable").forEach(function (t) {
  t.querySelectorAll("thead th").forEach(function (th, i) {
    th.addEventListener("click", function () {
      var body = t.tBodies[0], rows = Array.from(body.rows);
      var asc = th.getAttribute("aria-sort") !== "ascending";
      t.querySelectorAll("thead th").forEach(function (h) { h.removeAttribute("aria-sort"); });
      th.setAttribute("aria-sort", asc ? "ascending" : "descending");
      rows.sort(function (a, b) {
        var x = a.cells[i].getAttribute("data-v"), y = b.cells[i].getAttribute("data-v");
        var nx = parseFloat(x), ny = parseFloat(y);
        if (isNaN(nx) !== isNaN(ny)) { return isNaN(nx) ? 1 : -1; }
        var c = isNaN(nx) ? x.localeCompare(y) : nx - ny;
        return asc ? c : -c;
      });
      rows.forEach(function (r) { body.appendChild(r); });
    });
  });
});
"""


def _e(x) -> str:
    return html.escape(str(x), quote=True)


def _is_number(v) -> bool:
    return isinstance(v, numbers.Real) and not isinstance(v, bool)


def _fmt(v) -> str:
    """Cell text: 5 significant digits for floats, '-' for NaN or missing."""
    if v is None or (isinstance(v, float) and math.isnan(v)) or v is pd.NaT:
        return "-"
    if isinstance(v, bool):
        return "yes" if v else "no"
    if _is_number(v) and not float(v).is_integer():
        return f"{float(v):.5g}"
    if _is_number(v):
        return str(int(v)) if abs(float(v)) < 1e15 else f"{float(v):.5g}"
    if hasattr(v, "isoformat"):
        return v.isoformat(timespec="seconds") if hasattr(v, "hour") else v.isoformat()
    return str(v)


def _cell(v, tag: str = "td") -> str:
    if _is_number(v) and not (isinstance(v, float) and math.isnan(v)):
        return f'<{tag} data-v="{_e(repr(float(v)))}">{_e(_fmt(v))}</{tag}>'
    return f'<{tag} class="text" data-v="{_e(_fmt(v))}">{_e(_fmt(v))}</{tag}>'


def _kv_table(items) -> str:
    rows = "".join(
        f'<tr><th class="text">{_e(str(k).replace("_", " "))}</th>{_cell(v)}</tr>' for k, v in items
    )
    return f"<table><tbody>{rows}</tbody></table>"


def _summary(summary: dict) -> list[tuple[str, object]]:
    """Summary rows; the feasible share is derived from trials and feasible when not given."""
    items = list(summary.items())
    keys = dict(items)
    if "feasible_share" not in keys and _is_number(keys.get("feasible")):
        done = keys.get("complete", keys.get("trials"))
        if _is_number(done) and done > 0:
            items.append(("feasible_share", keys["feasible"] / done))
    return [(k, _fmt_summary(k, v)) for k, v in items]


def _fmt_summary(key: str, v):
    if isinstance(v, (list, tuple)):
        return ", ".join(
            _fmt(x) if not isinstance(x, (list, tuple)) else " ".join(map(str, x)) for x in v
        )
    if isinstance(v, dict):
        return ", ".join(f"{k}: {_fmt(x)}" for k, x in v.items())
    if key.endswith("share") and _is_number(v):
        return f"{100.0 * float(v):.1f} %"
    return v


def _front_table(front: pd.DataFrame) -> str:
    cols = [str(c) for c in front.columns]
    head = "".join(
        f'<th class="text" scope="col">{_e(c)}</th>'
        if not pd.api.types.is_numeric_dtype(front[c]) or pd.api.types.is_bool_dtype(front[c])
        else f'<th scope="col">{_e(c)}</th>'
        for c in front.columns
    )
    body = "".join(
        "<tr>" + "".join(_cell(v.item() if hasattr(v, "item") else v) for v in row) + "</tr>"
        for row in front.itertuples(index=False, name=None)
    )
    return (
        f'<div class="scroll"><table id="front" class="sortable" data-columns="{len(cols)}">'
        f"<thead><tr>{head}</tr></thead><tbody>{body}</tbody></table></div>"
    )


def _figure(path: Path) -> str:
    path = Path(path)
    mime = _MIME.get(path.suffix.lower())
    if mime is None:
        raise DesignError(
            f"image {str(path)!r}: cannot be embedded; must be one of {', '.join(_MIME)}"
        )
    try:
        data = base64.b64encode(path.read_bytes()).decode("ascii")
    except OSError as err:
        raise DesignError(f"image {str(path)!r}: cannot be read ({err.strerror})") from None
    return (
        f'<figure><img alt="{_e(path.stem)}" src="data:{mime};base64,{data}">'
        f"<figcaption>{_e(path.stem.replace('_', ' '))}</figcaption></figure>"
    )


def binding_counts(front: pd.DataFrame, column: str = "binding_limit") -> dict[str, int]:
    """Limit name -> number of front designs it binds, from the front's ``binding_limit`` column
    (empty or missing values: no limit binds that design)."""
    if column not in getattr(front, "columns", ()):
        return {}
    counts: dict[str, int] = {}
    for value in front[column]:
        if isinstance(value, str) and value:
            counts[value] = counts.get(value, 0) + 1
    return counts


def render_report(summary: dict, front, images, binding: dict, notes) -> str:
    """The report page as a string (see `write_report`)."""
    from importlib.metadata import PackageNotFoundError, version

    from models.evaluate import MODEL_VERSION

    try:
        tool = version("eddypull")
    except PackageNotFoundError:
        tool = "unknown"
    front = pd.DataFrame() if front is None else pd.DataFrame(front)
    name = summary.get("study", summary.get("name", "study"))
    binding_rows = sorted(binding.items(), key=lambda kv: (-kv[1], str(kv[0])))
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        f"<title>eddypull study {_e(name)}</title><style>{_CSS}</style></head><body>",
        f"<h1>eddypull study {_e(name)}</h1>",
        f'<p class="caution">{_e(CAUTIONS[0][1])}</p>',
        "<h2>Summary</h2>",
        _kv_table(_summary(summary)),
        f"<h2>Front ({len(front)} designs)</h2>",
        "<p>Non-dominated feasible designs. Click a column heading to sort by it.</p>",
        _front_table(front) if len(front) else "<p>The front is empty: no feasible design.</p>",
        "<h2>Plots</h2>",
        "<div>" + "".join(_figure(p) for p in images) + "</div>" if images else "<p>None.</p>",
        "<h2>Binding limits</h2>",
        "<p>How many front designs each limit binds (the limit with the smallest margin).</p>",
        _kv_table(binding_rows) if binding_rows else "<p>No front design is bound by a limit.</p>",
        "<h2>Model validity</h2>",
        "<ul>" + "".join(f"<li>{_e(n)}</li>" for n in notes) + "</ul>"
        if notes
        else "<p>No validity notes were recorded.</p>",
        "<h2>Cautions</h2>",
        '<ul class="caution">'
        + "".join(f"<li><strong>{_e(t)}.</strong> {_e(x)}</li>" for t, x in CAUTIONS)
        + "</ul>",
        f"<p><small>eddypull {_e(tool)}, model {_e(MODEL_VERSION)}, written "
        f"{_e(_dt.datetime.now(_dt.UTC).isoformat(timespec='seconds'))}</small></p>",
        f"<script>{_JS}</script>",
        "</body></html>",
    ]
    return "\n".join(parts) + "\n"


def write_report(out_dir, summary: dict, front, images, binding: dict, notes) -> Path:
    """Write ``report.html`` into ``out_dir``: one self-contained page.

    Parameters
    ----------
    out_dir : str or Path
        The study folder.
    summary : dict
        Study summary, shown in order: e.g. ``study``, ``budget``, ``trials``, ``complete``,
        ``failed``, ``feasible``, ``feasible_share`` (0-1; derived from ``feasible`` and
        ``complete`` or ``trials`` when missing), ``rate_per_h``, ``elapsed_h``, ``storage``
        (already without its password).
    front : pandas.DataFrame
        The front table (every row shown, every column sortable).
    images : list of Path
        PNG (or SVG) files to embed, in order.
    binding : dict of str to int
        Limit name -> number of front designs it binds.
    notes : list of str
        The model's validity notes (e.g. its warnings on the front's designs).

    Returns
    -------
    Path
        The written ``report.html``.
    """
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    text = render_report(summary, front, list(images), dict(binding or {}), list(notes or []))
    return atomic_write_text(safe_child(out_dir, "report.html"), text)
