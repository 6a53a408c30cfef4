"""A tolerance study's outputs: the table ``eddypull tolerance`` prints, its JSON and its CSV
files (the study itself is optim.study.tolerance)."""

from __future__ import annotations

import csv
import io
import math
from pathlib import Path

from models.errors import DesignError
from optim.files import atomic_write_text, safe_child
from optim.jsonout import strict_json
from optim.study.tolerance import OUTPUTS, ToleranceStudy

__all__ = ["format_tolerance", "tolerance_json", "tolerance_csvs", "write_tolerance"]


def _show(name: str, value: float, digits: int = 4) -> str:
    scale = next(s for n, _, s, _ in OUTPUTS if n == name)
    return f"{value * scale:.{digits}g}" if math.isfinite(value) else "-"


_HEAD = {
    "pull_N": "pull_mN",
    "lift_ratio": "lift",
    "input_power_W": "P_in_W",
    "ring_loss_W": "ring_W",
    "coil_temperature_C": "coil_C",
    "ring_temperature_C": "ring_C",
    "target_temperature_C": "target_C",
    "target_hold_temperature_C": "hold_C",
}


def format_tolerance(study: ToleranceStudy) -> str:
    """The tolerance table as text: the tolerances, the sensitivities ranked by lift ratio, the
    Monte Carlo spread beside the linear estimate, the limits kept, the notes."""
    state = "20 degC, isothermal" if study.isothermal else "thermally coupled"
    lines = [
        f"tolerances of {study.design} ({state}; {study.n_samples} samples, seed {study.seed}; "
        f"{study.run_time_s:.1f} s)",
        "",
        "tolerance (half-width; the defaults are common practice, no source):",
    ]
    width = max(len(t.key) for t in study.tolerances) if study.tolerances else 10
    for t in study.tolerances:
        lines.append(f"  {t.key:{width}s}  {t.nominal:<10.5g} {t.words():32s} {t.origin}")
    names = [n for n, *_ in OUTPUTS]
    lines += [
        "",
        "sensitivity: change over +1 half-width (central difference), ranked by lift ratio",
        f"  {'key':{width}s} " + " ".join(f"{_HEAD[n]:>10s}" for n in names),
    ]
    for s in study.sensitivities:
        cells = " ".join(f"{_show(n, s['effect'][n], 3):>10s}" for n in names)
        lines.append(f"  {s['key']:{width}s} {cells}")
    lines += [
        "",
        f"spread over {study.n_samples - study.refused} designs, every key uniform within its "
        "tolerance; linear: root-sum-square of the sensitivities as a uniform spread",
        f"  {'output':36s} {'nominal':>9s} {'p5':>9s} {'p50':>9s} {'p95':>9s} "
        f"{'lin p5':>9s} {'lin p95':>9s} {'MC/lin':>7s}",
    ]
    for name, words, _, unit in OUTPUTS:
        e = study.spread[name]
        ratio = f"{e['span_ratio']:.2f}" if math.isfinite(e["span_ratio"]) else "-"
        cells = " ".join(
            f"{_show(name, v):>9s}"
            for v in (
                study.nominal[name],
                e["p5"],
                e["p50"],
                e["p95"],
                e["linear_p5"],
                e["linear_p95"],
            )
        )
        lines.append(f"  {words + ' [' + unit + ']':36s} {cells} {ratio:>7s}")
    lines += ["", "limits kept (margin >= 0) by the sampled designs:"]
    for name, share in study.limits.items():
        lines.append(f"  {name:36s} {100 * share:6.1f} %")
    if not study.limits:
        lines.append("  the design has no limit to keep")
    if study.notes:
        lines += ["", *(f"note: {n}" for n in study.notes)]
    return "\n".join(lines)


def tolerance_json(study: ToleranceStudy, files: dict | None = None) -> dict:
    """The tolerance study as a JSON-ready dict (``optim.jsonout.strict_json``)."""
    return {
        "design": study.design,
        "isothermal": study.isothermal,
        "samples": study.n_samples,
        "seed": study.seed,
        "refused_samples": study.refused,
        "tolerances": [
            {
                "key": t.key,
                "nominal": t.nominal,
                "half_width": t.half_width,
                "relative": t.relative,
                "unit": t.unit,
                "origin": t.origin,
            }
            for t in study.tolerances
        ],
        "defaults_source": "common practice, no source",
        "nominal": study.nominal,
        "sensitivities": study.sensitivities,
        "spread": study.spread,
        "limits_kept": study.limits,
        "notes": study.notes,
        "run_time_s": study.run_time_s,
        "files": {k: str(v) for k, v in (files or {}).items()},
    }


def _csv(header: list, rows) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(header)
    for row in rows:
        w.writerow([repr(float(v)) if isinstance(v, float) else v for v in row])
    return buf.getvalue()


def tolerance_csvs(study: ToleranceStudy) -> dict[str, str]:
    """The CSV tables: sensitivities (a row per tolerance), spread (a row per output), samples
    (a row per Monte Carlo design: its deltas, outputs and margins, or why it was refused)."""
    names = [n for n, *_ in OUTPUTS]
    by_key = {t.key: t for t in study.tolerances}
    sens = _csv(
        ["key", "nominal", "half_width", "relative", "sided", *names],
        (
            [
                s["key"],
                by_key[s["key"]].nominal,
                by_key[s["key"]].half_width,
                "" if by_key[s["key"]].relative is None else by_key[s["key"]].relative,
                s["sided"],
                *(s["effect"][n] for n in names),
            ]
            for s in study.sensitivities
        ),
    )
    cols = ["p5", "p50", "p95", "linear_p5", "linear_p95", "rss", "span_ratio", "disagree"]
    spread = _csv(
        ["output", "nominal", *cols],
        ([n, study.nominal[n], *(study.spread[n][c] for c in cols)] for n in names),
    )
    keys = [t.key for t in study.tolerances]
    margins = [k for k in study.limits if k != "all limits"]
    samples = _csv(
        [*(f"delta.{k}" for k in keys), *names, *(f"margins.{m}" for m in margins), "refused"],
        (
            [
                *(r["deltas"][k] for k in keys),
                *(r.get("outputs", {}).get(n, math.nan) for n in names),
                *(r.get("margins", {}).get(m, math.nan) for m in margins),
                r.get("refused", ""),
            ]
            for r in study.samples
        ),
    )
    return {
        "tolerance_sensitivity.csv": sens,
        "tolerance_spread.csv": spread,
        "tolerance_samples.csv": samples,
    }


def write_tolerance(study: ToleranceStudy, out_dir, extra: dict | None = None) -> dict[str, Path]:
    """Write tolerance.txt, tolerance.json and the CSV tables into ``out_dir`` (atomically);
    returns file name -> path. ``extra``: more keys of tolerance.json (``constraints_held``)."""

    out_dir = Path(out_dir)
    if out_dir.exists() and not out_dir.is_dir():
        raise DesignError(f"--out {str(out_dir)!r}: is a file; must be a folder")
    out_dir.mkdir(parents=True, exist_ok=True)
    paths = {}
    for name, text in tolerance_csvs(study).items():
        paths[name] = atomic_write_text(safe_child(out_dir, name), text)
    paths["tolerance.txt"] = safe_child(out_dir, "tolerance.txt")
    paths["tolerance.json"] = safe_child(out_dir, "tolerance.json")
    atomic_write_text(paths["tolerance.txt"], format_tolerance(study) + "\n")
    atomic_write_text(
        paths["tolerance.json"], strict_json(tolerance_json(study, paths) | (extra or {})) + "\n"
    )
    return paths
