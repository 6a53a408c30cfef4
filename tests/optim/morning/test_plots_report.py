"""Study plots and report: Pareto dominance, front progress, every plot written (PNG + SVG, no
figure left open), and a report that parses as balanced HTML and holds every front row."""

from __future__ import annotations

import math
import shutil
import subprocess
import xml.etree.ElementTree as ET
from html.parser import HTMLParser

import matplotlib
import numpy as np
import pandas as pd
import pytest

from models.design import design_from_dict, with_value
from models.errors import DesignError
from optim.morning.design_plots import plot_pull_vs_gap, plot_section
from optim.morning.plots import (
    plot_front_pairs,
    plot_front_progress,
    plot_parameter_coupling,
)
from optim.morning.report import binding_counts, write_report
from optim.study.progress import front_history
from tests.conftest import demo_dict

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402  (only to check that no figure is left open)

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"  # PNG specification (ISO/IEC 15948), file signature
OBJECTIVES = [("pull_N", "maximize"), ("input_power_W", "minimize")]
PARAMS = ["frequency_Hz", "ring_depth_mm", "ring_outer_fraction"]


def dominates(a, b) -> bool:
    """Pareto dominance in minimisation form: no worse in all, better in one (Deb 2001,
    Multi-Objective Optimization Using Evolutionary Algorithms, Def. 2.5; from memory)."""
    return all(x <= y for x, y in zip(a, b, strict=True)) and any(
        x < y for x, y in zip(a, b, strict=True)
    )


def brute_front(values) -> list[bool]:
    """Non-dominated rows by the definition, pair by pair (no numpy, independent of the code)."""
    rows = [list(map(float, v)) for v in values]
    ok = [all(math.isfinite(x) for x in r) for r in rows]
    return [
        ok[i] and not any(ok[j] and dominates(rows[j], rows[i]) for j in range(len(rows)))
        for i in range(len(rows))
    ]


def make_trials(n: int = 80, seed: int = 3, objectives=OBJECTIVES) -> pd.DataFrame:
    """Synthetic study (seeded): invented smooth results, about 10 % failed, two running, a
    temperature limit that makes part of the completed trials infeasible."""
    rng = np.random.default_rng(seed)
    f, d, o = rng.uniform(100, 1000, n), rng.uniform(1, 5, n), rng.uniform(0.3, 0.95, n)
    pull = 1e-3 * d * o * np.sqrt(f) * (1 + 0.1 * rng.standard_normal(n))
    power = 0.01 * f * d * o**2
    temp = 25 + 30 * power + rng.normal(0, 2, n)
    state = np.where(rng.random(n) < 0.1, "FAIL", "COMPLETE")
    state[-2:] = "RUNNING"
    for arr in (pull, power, temp):
        arr[state != "COMPLETE"] = np.nan
    feasible = (state == "COMPLETE") & (temp < 110)
    t0 = pd.Timestamp("2026-12-01T22:00:00Z")
    df = pd.DataFrame(
        {
            "trial": np.arange(n),
            "state": state,
            "feasible": feasible,
            "completed_at": [
                t0 + pd.Timedelta(seconds=40 * i) if s != "RUNNING" else pd.NaT
                for i, s in enumerate(state)
            ],
            "reason": np.where(feasible, "", np.where(state == "FAIL", "failed", "too hot")),
            "frequency_Hz": f,
            "ring_depth_mm": d,
            "ring_outer_fraction": o,
            "pull_N": pull,
            "input_power_W": power,
            "ring_temperature_C": temp,
        }
    )
    values = [
        [(-1 if dr == "maximize" else 1) * row[c] for c, dr in objectives]
        for _, row in df.iterrows()
    ]
    values = [v if ok else [math.nan] * len(v) for v, ok in zip(values, feasible, strict=True)]
    df["on_front"] = brute_front(values)
    return df


def test_front_history_ends_on_the_front_and_never_loses_ground():
    three = [*OBJECTIVES, ("ring_temperature_C", "minimize")]
    for objectives in (OBJECTIVES, three, OBJECTIVES[:1]):
        trials = make_trials(objectives=objectives)
        hist = front_history(trials, objectives)
        finished = trials["state"].isin(["COMPLETE", "FAIL"]).sum()
        assert hist["finished"].tolist() == list(range(1, finished + 1))
        assert hist["front_size"].iloc[-1] == trials["on_front"].sum()
        # The dominated region only grows (a new point adds to it; common practice, no source).
        assert np.all(np.diff(hist["hypervolume"]) >= 0.0)
        assert 0.0 < hist["hypervolume"].iloc[-1] <= 1.0


def _tiny(values, directions):
    df = pd.DataFrame(values, columns=[f"o{i}" for i in range(len(directions))])
    return df.assign(
        trial=range(len(df)),
        state="COMPLETE",
        feasible=True,
        on_front=True,
        completed_at=pd.date_range("2026-12-01", periods=len(df), freq="min"),
    ), [(f"o{i}", d) for i, d in enumerate(directions)]


def test_hypervolume_by_hand():
    # 2 objectives, the first maximised: scaled to (0, 1), (1, 0), (0.5, 0.5) in minimisation form,
    # reference 1.1. Staircase area by hand: 1.1 * 0.1 + 0.6 * 0.5 + 0.1 * 0.5 = 0.46, of 1.21.
    trials, objectives = _tiny([[0.0, 10.0], [-10.0, 0.0], [-5.0, 5.0]], ["maximize", "minimize"])
    hist = front_history(trials, objectives)
    assert hist["hypervolume"].iloc[-1] == pytest.approx(0.46 / 1.21, rel=1e-12)
    assert hist["front_size"].tolist() == [1, 2, 3]
    # 3 objectives, points (0, 0, 1) and (1, 1, 0): boxes 1.21 * 0.1 and 0.01 * 1.1 overlapping in
    # 0.001, union 0.131 of 1.331 (by hand). Monte-Carlo share p from 20000 samples: standard
    # error sqrt(p (1 - p) / N) = 0.0021; allow 4 of them.
    trials, objectives = _tiny([[0, 0, 1], [1, 1, 0]], ["minimize"] * 3)
    assert front_history(trials, objectives)["hypervolume"].iloc[-1] == pytest.approx(
        0.131 / 1.331, abs=4 * 0.0021
    )


def _check_written(paths, stems):
    assert sorted(p.name for p in paths) == sorted(
        f"{s}.{e}" for s in stems for e in ("png", "svg")
    )
    for p in paths:
        data = p.read_bytes()
        if p.suffix == ".png":
            # Something drawn: a blank 6 x 3 in canvas at 120 dpi is 1935 bytes (measured).
            assert data.startswith(PNG_MAGIC) and len(data) > 3000
        else:
            assert ET.fromstring(data).tag.endswith("svg")
    assert plt.get_fignums() == []


@pytest.mark.slow
def test_study_plots_are_written(tmp_path):
    trials = make_trials()
    front = trials[trials["on_front"]]
    assert 3 <= len(front) < trials["feasible"].sum()  # the synthetic study has a real front
    _check_written(plot_front_pairs(trials, OBJECTIVES, tmp_path), ["front_pull_N__input_power_W"])
    three = [*OBJECTIVES, ("ring_temperature_C", "minimize")]
    pairs = plot_front_pairs(trials, three, tmp_path / "three")
    assert len(pairs) == 2 * 3  # 3 pairs, PNG + SVG
    _check_written(
        plot_parameter_coupling(front, PARAMS, tmp_path, color_by="pull_N"),
        ["coupling_parallel", "coupling_matrix"],
    )
    _check_written(plot_front_progress(trials, OBJECTIVES, tmp_path), ["progress"])


@pytest.mark.slow
def test_plots_survive_one_objective_empty_fronts_and_nans(tmp_path):
    trials = make_trials(objectives=OBJECTIVES[:1])
    _check_written(plot_front_pairs(trials, OBJECTIVES[:1], tmp_path / "one"), ["front_pull_N"])
    _check_written(plot_front_progress(trials, OBJECTIVES[:1], tmp_path / "one"), ["progress"])
    empty = trials.iloc[:0]
    _check_written(
        plot_front_pairs(empty, OBJECTIVES, tmp_path / "e"), ["front_pull_N__input_power_W"]
    )
    _check_written(plot_front_progress(empty, OBJECTIVES, tmp_path / "e"), ["progress"])
    _check_written(plot_parameter_coupling(empty, PARAMS, tmp_path / "e"), ["coupling_parallel"])
    nan = trials.assign(pull_N=np.nan, on_front=False, ring_depth_mm=np.nan)
    _check_written(
        plot_front_pairs(nan, OBJECTIVES, tmp_path / "n"), ["front_pull_N__input_power_W"]
    )
    _check_written(
        plot_parameter_coupling(nan.iloc[:5], PARAMS, tmp_path / "n"),
        ["coupling_parallel", "coupling_matrix"],
    )
    with pytest.raises(DesignError, match="direction = 'largest'"):
        plot_front_pairs(trials, [("pull_N", "largest")], tmp_path)
    # A study whose trials all failed records no result columns: empty plots, no error.
    bare = trials[["trial", "state", "completed_at"]].assign(state="FAIL")
    _check_written(
        plot_front_pairs(bare, dict(OBJECTIVES), tmp_path / "b"), ["front_pull_N__input_power_W"]
    )
    _check_written(plot_front_progress(bare, dict(OBJECTIVES), tmp_path / "b"), ["progress"])


def test_pull_against_gap_and_section_of_picked_designs(tmp_path):
    design = design_from_dict(demo_dict())
    wide = with_value(design, "ring.outer_radius_mm", 8.5)
    # -1 mm is refused by the design check (gap must be > 0): that point is left out, not fatal.
    paths = plot_pull_vs_gap([("demo", design), ("wide ring", wide)], tmp_path, gaps_mm=[-1, 2, 4])
    _check_written(paths, ["pull_vs_gap"])
    _check_written(plot_section(wide, tmp_path, "wide ring"), ["section_wide-ring"])


class _Checker(HTMLParser):
    """Balanced tags (HTML void elements excepted: WHATWG HTML, 13.1.2) and the front table."""

    VOID = {"meta", "img", "br", "hr", "link", "input", "col", "source", "wbr", "area", "base"}

    def __init__(self):
        super().__init__()
        self.stack, self.errors, self.rows, self.imgs, self.scripts = [], [], [], [], 0
        self._in_front, self._row = False, None
        self.heads, self.units, self._tr, self._th = [], [], 0, None  # the front's heading rows

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "img":
            self.imgs.append(a.get("src", ""))
        if tag == "script":
            self.scripts += 1
        if tag == "table" and a.get("id") == "front":
            self._in_front = True
        if self._in_front and tag == "tr":
            self._row = []
        self._tr += self._in_front and tag == "tr"
        self._th = "" if self._in_front and tag == "th" else None
        if self._in_front and tag == "td" and self._row is not None:
            self._row.append(a.get("data-v"))
        if tag not in self.VOID:
            self.stack.append(tag)

    def handle_data(self, data):
        if self._th is not None:
            self._th += data

    def handle_endtag(self, tag):
        if tag in self.VOID:
            return
        if tag == "th" and self._th is not None and self._tr in (1, 2):
            (self.heads, self.units)[self._tr - 1].append(self._th)
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"</{tag}> closes {self.stack[-1:]}")
            return
        self.stack.pop()
        if tag == "table":
            self._in_front = False
        if tag == "tr" and self._row:
            self.rows.append(self._row)
            self._row = None


def _parse(path):
    checker = _Checker()
    checker.feed(path.read_text(encoding="utf-8"))
    checker.close()
    assert checker.errors == [] and checker.stack == []
    return checker


def test_report_holds_every_front_row_and_is_valid_html(tmp_path):
    trials = make_trials()
    front = trials[trials["on_front"]].reset_index(drop=True)
    images = plot_front_pairs(trials, OBJECTIVES, tmp_path) + plot_section(
        design_from_dict(demo_dict()), tmp_path, "demo"
    )
    pngs = [p for p in images if p.suffix == ".png"]
    hostile = "<script>alert('x')</script> & co"
    summary = {
        "study": hostile,
        "budget": "80 trials",
        "trials": 80,
        "complete": 70,
        "feasible": 20,
        "rate_per_h": 93.3,
    }
    path = write_report(
        tmp_path,
        summary,
        front,
        pngs,
        {"ring_temperature_C": 4},
        [hostile],
        objectives=OBJECTIVES,
        params=PARAMS,
        picks=[("best pull_N", int(front["trial"].iloc[0])), ("knee of the front", 10**6)],
    )
    html_doc = _parse(path)
    # The answer first: trial, objectives, searched parameters; the units under them; the
    # bookkeeping last.
    assert html_doc.heads[:6] == ["trial", "pull_N", "input_power_W", *PARAMS]
    assert html_doc.units[:6] == ["", "N", "W", "Hz", "mm", "-"]
    assert html_doc.heads[-5:] == ["state", "feasible", "on_front", "completed_at", "reason"]
    assert html_doc.units[html_doc.heads.index("completed_at")] == "UTC"
    assert html_doc.scripts == 1  # only the sorting script: user text is escaped
    assert len(html_doc.imgs) == len(pngs) and all(
        s.startswith("data:image/png;base64,") for s in html_doc.imgs
    )
    # Every front row, every value: numbers carry repr(float) in data-v (exact).
    assert len(html_doc.rows) == len(front)
    for row, (_, expected) in zip(html_doc.rows, front.iterrows(), strict=True):
        assert float(row[0]) == expected["trial"]
        assert float(row[html_doc.heads.index("pull_N")]) == expected["pull_N"]
    text = path.read_text(encoding="utf-8")
    assert "feasible share" in text and "28.6 %" in text  # 20 of 70 complete trials
    # One card (trial 10**6 is not on the front): the picked trial with its frequency and pull.
    assert text.count('class="card"') == 1 and text.index("Picks") < text.index("Summary")
    best = front.iloc[0]
    assert f"Trial {best['trial']}: best pull_N" in text
    assert f"{best['ring_depth_mm']:.2f} mm" in text and f"{1e3 * best['pull_N']:.4g} mN" in text
    for word in ("hot", "mains", "implant", "licensed professional", "local codes"):
        assert word in text
    assert "http://" not in text and "https://" not in text  # self-contained


_STUB_DOM = """
function cell(v) { return {getAttribute: function (k) { return k === "data-v" ? v : null; }}; }
var rows = [["3.0", "b"], ["-1.5", "a"], ["10.0", "c"], ["-", "d"]].map(function (c) {
  return {cells: c.map(cell), id: c[1]}; });
var body = {rows: rows.slice(), appendChild: function (r) {
  this.rows = this.rows.filter(function (x) { return x !== r; }); this.rows.push(r); }};
var ths = [0, 1].map(function () { return {a: {}, h: [],
  addEventListener: function (e, f) { this.h.push(f); },
  getAttribute: function (k) { return k in this.a ? this.a[k] : null; },
  setAttribute: function (k, v) { this.a[k] = v; }, removeAttribute: function (k) { delete this.a[k]; }}; });
var table = {tBodies: [body], querySelectorAll: function () { return ths; }};
var document = {querySelectorAll: function () { return [table]; }};
var ids = function () { return body.rows.map(function (r) { return r.id; }).join(""); };
"""


@pytest.mark.skipif(shutil.which("node") is None, reason="needs node to run the page's script")
def test_report_table_sorts_by_any_column(tmp_path):
    from optim.morning.report import _JS

    # Click column 0 twice, then column 1, on a stub DOM; numbers sort numerically, "-" stays last.
    script = (
        _STUB_DOM
        + _JS
        + """
ths[0].h[0](); var a = ids(); ths[0].h[0](); var d = ids(); ths[1].h[0]();
console.log([a, d, ids(), ths[0].a["aria-sort"] || "none", ths[1].a["aria-sort"]].join(" "));
"""
    )
    (tmp_path / "sort.js").write_text(script, encoding="utf-8")
    out = subprocess.run(
        ["node", str(tmp_path / "sort.js")], capture_output=True, text=True, timeout=60, check=True
    ).stdout.split()
    assert out == ["abcd", "cbad", "abcd", "none", "ascending"]


def test_binding_counts():
    front = pd.DataFrame(
        {
            "binding_limit": [
                "ring_temperature_C",
                "",
                None,
                "ring_temperature_C",
                "supply_voltage_V",
            ]
        }
    )
    assert binding_counts(front) == {"ring_temperature_C": 2, "supply_voltage_V": 1}
    assert binding_counts(pd.DataFrame()) == {}


def test_report_with_an_empty_front(tmp_path):
    path = write_report(tmp_path, {"study": "none-feasible"}, pd.DataFrame(), [], {}, [])
    _parse(path)
    assert "The front is empty" in path.read_text(encoding="utf-8")
    with pytest.raises(DesignError, match="cannot be embedded"):
        write_report(tmp_path, {}, pd.DataFrame(), [tmp_path / "report.html"], {}, [])


def test_a_log_axis_under_a_decade_has_a_few_plain_ticks():
    """A frequency searched on a log scale over 1.6-2.9 kHz: round ticks written plainly (2000,
    2500), no labelled minor ticks (the scatter matrix's log axes)."""
    from matplotlib.figure import Figure

    from optim.morning.plots import _plain_log_ticks

    ax = Figure().subplots()
    values = np.array([1641.0, 2100.0, 2901.0])
    ax.scatter(values, values)
    ax.set_xscale("log")
    _plain_log_ticks(ax.xaxis, values)
    ticks = list(ax.xaxis.get_major_locator()())
    assert ticks == [2000.0, 2500.0]
    assert [ax.xaxis.get_major_formatter()(t, 0) for t in ticks] == ["2000", "2500"]
    assert ax.xaxis.get_minor_formatter()(1800.0, 0) == ""
    wide = np.array([300.0, 3000.0])  # a decade and more: at most four ticks
    _plain_log_ticks(ax.xaxis, wide)
    assert 2 <= len(ax.xaxis.get_major_locator()()) <= 4


def test_front_history_at_counts_equals_the_trial_by_trial_history_there():
    """The thinned history of a large study (values at evenly spaced counts) is the
    trial-by-trial history read at those counts (an internal identity)."""
    three = [*OBJECTIVES, ("ring_temperature_C", "minimize")]
    for objectives in (OBJECTIVES, three, OBJECTIVES[:1]):
        trials = make_trials(objectives=objectives)
        full = front_history(trials, objectives).set_index("finished")
        thin = front_history(trials, objectives, points=7)
        assert len(thin) == 7 and thin["finished"].iloc[-1] == full.index[-1]
        at = full.loc[thin["finished"]]
        assert thin["front_size"].tolist() == at["front_size"].tolist()
        assert np.allclose(thin["hypervolume"], at["hypervolume"], rtol=1e-12, atol=0)
        assert thin["trial"].tolist() == at["trial"].tolist()
