"""The study report: one self-contained HTML page a person reads in the morning.

``report.html`` holds, in order: the picks (the best design in each objective and the knee of the
front, each a short card of its dimensions, searched materials, drive, pull, lift ratio, power,
temperatures and binding limit), their pick maps, the first pick's tolerance table
(``optim.morning.report_tolerance``), the study summary (budget, trials, feasible share, rate), the
front table (objectives and searched parameters first, a units row, bookkeeping columns last and
collapsed; sortable by any column with a few lines of inline JavaScript, numbers and dates as
such, text such as a searched material alphabetically), the
plots (embedded as base64 data URIs, so the page needs no other file, each with a caption), the
limits that bind the front's designs, the model's validity notes and the cautions. Every piece of
text is escaped with ``html.escape``.
"""

from __future__ import annotations

import base64
import datetime as _dt
import html
import math
import numbers
from importlib.metadata import PackageNotFoundError, version
from pathlib import Path

import pandas as pd

from models.errors import DesignError
from models.evaluate import MODEL_VERSION
from optim.files import atomic_write_text, safe_child
from optim.morning.cards import pick_cards
from optim.morning.handoff import unit_of
from optim.morning.report_tolerance import tolerance_section

__all__ = ["write_report", "render_report", "binding_counts", "CAUTIONS", "BOOKKEEPING"]

#: Front-table columns about the run rather than the design: last, and hidden until asked for.
BOOKKEEPING = (
    "state",
    "feasible",
    "on_front",
    "completed_at",
    "eval_s",
    "copy_of",
    "reason",
    "worker",
)

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
figure { display: inline-block; margin: 0.5em; vertical-align: top; max-width: 36em; }
figure img { max-width: 36em; border: 1px solid #eee; }
figcaption { font-size: 0.8em; color: #555; }
.caution { background: #fff4e5; border-left: 4px solid #e69500; padding: 0.5em 1em; }
tr.units th { background: #fafafa; font-weight: normal; color: #666; top: 1.6em; }
#show-bookkeeping:not(:checked) ~ .scroll .bk { display: none; }
.picks { display: flex; flex-wrap: wrap; gap: 1em; }
.card { border: 1px solid #ccc; border-radius: 4px; padding: 0.5em 1em; min-width: 16em; }
.card h3 { font-size: 1em; margin: 0.2em 0 0.5em; }
.card table { font-size: 0.9em; } .card th { position: static; text-align: left; }
"""

# Sort the table by the clicked heading of the first header row: numbers numerically (data-v; a
# date's data-v is its POSIX time in seconds), text alphabetically; cells without a number ("-")
# after the numbers in both directions. Checked with node and a stub DOM (ascending, descending,
# second column) and in headless Chromium (tests/optim/morning/test_report_browser.py).
_JS = """
function eddypullNumber(x) { return x === null || x.trim() === "" ? NaN : Number(x); }
document.querySelectorAll("table.sortable").forEach(function (t) {
  t.querySelectorAll("thead tr:first-child th").forEach(function (th, i) {
    th.addEventListener("click", function () {
      var body = t.tBodies[0], rows = Array.from(body.rows);
      var asc = th.getAttribute("aria-sort") !== "ascending";
      t.querySelectorAll("thead th").forEach(function (h) { h.removeAttribute("aria-sort"); });
      th.setAttribute("aria-sort", asc ? "ascending" : "descending");
      rows.sort(function (a, b) {
        var x = a.cells[i].getAttribute("data-v"), y = b.cells[i].getAttribute("data-v");
        var nx = eddypullNumber(x), ny = eddypullNumber(y);
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


def _cell(v, tag: str = "td", cls: str = "") -> str:
    """A table cell; its data-v is what the sort compares: repr(float) for a number, the POSIX
    time in seconds for a date or time, the text otherwise."""
    if isinstance(v, _dt.datetime) and v is not pd.NaT:
        key = repr(v.timestamp())
    elif _is_number(v) and not (isinstance(v, float) and math.isnan(v)):
        key = repr(float(v))
    else:
        klass = f"text {cls}".strip()
        return f'<{tag} class="{klass}" data-v="{_e(_fmt(v))}">{_e(_fmt(v))}</{tag}>'
    klass = f' class="{cls}"' if cls else ""
    return f'<{tag}{klass} data-v="{_e(key)}">{_e(_fmt(v))}</{tag}>'


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


def _front_columns(front: pd.DataFrame, objectives, params) -> list[str]:
    """The front table's column order: trial, the objectives, the searched parameters, the
    binding limit, every other column as the table has them, then `BOOKKEEPING`."""
    cols = [str(c) for c in front.columns]
    lead = ["trial", *dict(objectives), *params, "binding_limit"]
    first = [c for c in dict.fromkeys(lead) if c in cols]
    rest = [c for c in cols if c not in first and c not in BOOKKEEPING]
    return first + rest + [c for c in BOOKKEEPING if c in cols]


def _is_text(column: pd.Series) -> bool:
    return not pd.api.types.is_numeric_dtype(column) or pd.api.types.is_bool_dtype(column)


def _unit(name: str, column: pd.Series) -> str:
    """The units-row entry of a column: the unit of its name's suffix, UTC for times, nothing
    for text and the trial number."""
    if pd.api.types.is_datetime64_any_dtype(column):
        return "UTC"
    if name == "trial" or _is_text(column):
        return ""
    return unit_of(name)


def _front_table(front: pd.DataFrame, objectives=(), params=()) -> str:
    """The front as a sortable table: `_front_columns` order, a units row under the headings,
    the bookkeeping columns hidden until the box above the table is ticked."""
    cols = _front_columns(front, objectives, params)
    front = front[cols]
    cls = {c: "bk" if c in BOOKKEEPING else "" for c in cols}

    def heading(c: str) -> str:
        klass = " ".join(x for x in ("text" if _is_text(front[c]) else "", cls[c]) if x)
        attr = f' class="{klass}"' if klass else ""
        return f'<th{attr} scope="col">{_e(c)}</th>'

    head = "".join(heading(c) for c in cols)
    units = "".join(
        f'<th class="{("text " + cls[c]).strip()}">{_e(_unit(c, front[c]))}</th>' for c in cols
    )
    body = "".join(
        "<tr>"
        + "".join(
            _cell(v.item() if hasattr(v, "item") else v, cls=cls[c])
            for c, v in zip(cols, row, strict=True)
        )
        + "</tr>"
        for row in front.itertuples(index=False, name=None)
    )
    hidden = [c for c in cols if cls[c]]
    toggle = (
        '<input type="checkbox" id="show-bookkeeping"> <label for="show-bookkeeping">show the '
        f"bookkeeping columns ({_e(', '.join(hidden))})</label>"
        if hidden
        else ""
    )
    return (
        f'{toggle}<div class="scroll"><table id="front" class="sortable" '
        f'data-columns="{len(cols)}"><thead><tr>{head}</tr><tr class="units">{units}</tr>'
        f"</thead><tbody>{body}</tbody></table></div>"
    )


def _figure(image) -> str:
    """An embedded image with its caption: ``image`` is a path or ``(path, caption)``; a bare
    path is captioned with its file name in words."""
    path, caption = image if isinstance(image, tuple) else (image, None)
    path = Path(path)
    if caption is None:
        caption = path.stem.replace("_", " ").replace("-", " ").capitalize() + "."
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
        f"<figcaption>{_e(caption)}</figcaption></figure>"
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


def _picks_section(front: pd.DataFrame, picks, states=None) -> list[str]:
    """The page's opening: the picked designs as cards (nothing when none is picked), every
    number labelled with its gap and state (`optim.morning.cards`)."""

    cards = pick_cards(front, picks, states)
    if not cards:
        return []
    return [
        "<h2>Picks</h2>",
        "<p>The best front design in each objective and the knee of the front (the design "
        "closest to the best of every objective at once). Export one with 'eddypull study "
        "export FOLDER --trial N'.</p>",
        cards,
    ]


def _pick_maps_section(pick_maps) -> list[str]:
    """The pick maps of the picked designs (``(image, caption)`` each), after their cards."""
    if not pick_maps:
        return []
    return [
        "<h2>Pick maps</h2>",
        "<p>Where each picked design lifts its part (lift ratio 1 or more), pulls it too weakly "
        "to lift it, or pushes it, as the part's size and the gap change. Draw a finer one with "
        "'eddypull map'.</p>",
        "<div>" + "".join(_figure(m) for m in pick_maps) + "</div>",
    ]


def _tolerance_section(tolerance) -> list[str]:
    """The first pick's tolerance table (`optim.morning.report_tolerance`), after the maps."""
    if tolerance is None:
        return []

    return tolerance_section(tolerance)


def render_report(
    summary: dict,
    front,
    images,
    binding: dict,
    notes,
    *,
    objectives=(),
    params=(),
    picks=(),
    pick_maps=(),
    tolerance=None,
    states=None,
) -> str:
    """The report page as a string (see `write_report`)."""

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
        *_picks_section(front, picks, states),
        *_pick_maps_section(pick_maps),
        *_tolerance_section(tolerance),
        "<h2>Summary</h2>",
        _kv_table(_summary(summary)),
        f"<h2>Front ({len(front)} designs)</h2>",
        "<p>Non-dominated feasible designs. Click a column heading to sort by it.</p>",
        _front_table(front, objectives, params)
        if len(front)
        else "<p>The front is empty: no feasible design.</p>",
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


def write_report(
    out_dir,
    summary: dict,
    front,
    images,
    binding: dict,
    notes,
    *,
    objectives=(),
    params=(),
    picks=(),
    pick_maps=(),
    tolerance=None,
    states=None,
) -> Path:
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
    images : list of Path or (Path, str)
        PNG (or SVG) files to embed, in order, each optionally with its caption (a sentence).
    binding : dict of str to int
        Limit name -> number of front designs it binds.
    notes : list of str
        The model's validity notes (e.g. its warnings on the front's designs).
    objectives : list of (str, str) or dict, optional
        The study's objectives ``(column, direction)``: the front table's first columns.
    params : list of str, optional
        The searched parameters: the front table's next columns.
    picks : list of (str, int), optional
        ``(why, trial)`` of the designs shown as cards at the top (e.g. ``("best pull_N", 12)``).
    pick_maps : list of Path or (Path, str), optional
        Pick maps of the picked designs (`optim.morning.robustness.pick_map_figures`), shown
        after the cards.
    tolerance : optim.morning.robustness.ReportTolerance, optional
        The first pick's tolerance table (`optim.morning.robustness.report_tolerance`), shown
        after the pick maps.
    states : optim.morning.cards.CardStates, optional
        The study's gap range and kind of run, which the cards' labels name.

    Returns
    -------
    Path
        The written ``report.html``.
    """
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    text = render_report(
        summary,
        front,
        list(images),
        dict(binding or {}),
        list(notes or []),
        objectives=objectives,
        params=list(params),
        picks=list(picks),
        pick_maps=list(pick_maps),
        tolerance=tolerance,
        states=states,
    )
    return atomic_write_text(safe_child(out_dir, "report.html"), text)
