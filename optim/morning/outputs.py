"""The morning after a study: front table and plots, the report, and the hand-off of one design.

``write_front`` writes, in the study folder: ``front.csv`` and ``front.parquet`` (the front's
rows of ``optim.morning.front.trials_table``), ``trials.csv`` (every trial), the plots (``plots/``, PNG and
SVG) and ``report.html``. ``export_trial`` writes the hand-off of one trial (``optim.morning.handoff``),
after re-evaluating its design and checking that the numbers are the ones the study stored, into
``handoff_folder``: ``handoff-trial-N`` in the study folder, or ``--out`` taken inside it.
"""

from __future__ import annotations

import io
import math
from datetime import UTC, datetime
from pathlib import Path

from models.checks import VALIDATED_RANGE
from models.errors import DesignError
from models.evaluate import evaluate
from optim.files import atomic_path, atomic_write_text
from optim.morning import design_plots, plots, robustness
from optim.morning.built_check import check_picks
from optim.morning.cards import CardStates
from optim.morning.front import constraint_lines, for_people, status_summary, trials_table
from optim.morning.handoff import write_handoff
from optim.morning.nearest import nearest_lines, nearest_trials
from optim.morning.report import binding_counts, write_report
from optim.morning.robustness import write_robustness
from optim.morning.rounding import DEFAULT_RESOLUTION_MM, rounded_for_handoff
from optim.morning.verify import run_verify
from optim.study.columns import StudyReadout
from optim.study.records import RESULT_NAMES_ATTR, StoredRecord
from optim.study.space import build_design
from optim.study.spec import spec_from_json
from optim.words import assumptions_text, limits_used_text

__all__ = ["write_front", "export_trial", "handoff_folder", "pick_trial", "design_of"]


def _spec(spec_json):

    return spec_from_json(spec_json)


def design_of(spec, params: dict):
    """The trial's design (validated) from the study's base design and the trial's parameters."""

    return build_design(spec.base, spec.params, params, spec.name)


def _picks(front, objectives: dict) -> list[tuple[str, int]]:
    """Front trials worth a closer look, each with why: the best in each objective, then the
    knee (closest to the ideal point in normalised objectives); a trial picked twice is listed
    once with both reasons."""
    picks: dict[int, list[str]] = {}
    if front.empty:
        return []
    for name, direction in objectives.items():
        col = front[name].astype(float)
        idx = col.idxmax() if direction == "maximize" else col.idxmin()
        picks.setdefault(int(front.loc[idx, "trial"]), []).append(f"best {name}")
    if len(objectives) > 1 and len(front) > 2:
        dist = 0.0
        for name, direction in objectives.items():
            col = front[name].astype(float)
            span = (col.max() - col.min()) or 1.0
            best = col.max() if direction == "maximize" else col.min()
            dist = dist + ((col - best) / span) ** 2
        picks.setdefault(int(front.loc[dist.idxmin(), "trial"]), []).append("knee of the front")
    return [(", ".join(why), t) for t, why in picks.items()]


def _notes(spec, df, front, design=None) -> list[str]:

    ranges = "; ".join(f"{k} {lo:g}-{hi:g}" for k, (lo, hi) in VALIDATED_RANGE.items())
    notes = [
        "Fast multi-loop model: linear steel (no saturation: a peak flux density near the "
        "steel's saturation makes its answers optimistic), laminated pole with its core losses "
        "(the sheets' eddy currents through a complex permeability, hysteresis and excess from "
        "a loss law fitted to the grade's specified loss; a flux-density-dependent permeability "
        "is not modelled). "
        f"Held to the finite-element reference over: {ranges}. Near a change of sign the pull is "
        "a small difference of large terms: check the chosen design with 'eddypull study export "
        "--verify' or 'eddypull verify'.",
        "Thermal limits come from a lumped network with a published convection correlation; "
        "treat temperatures within about 10-20 % of a limit as a reason for a bench test."
        if not spec.run.get("isothermal")
        else "This study evaluated every part at 20 degC (isothermal): its temperatures are not "
        "checked; re-evaluate the chosen design without --isothermal.",
    ]
    if design is not None:
        notes.append(_state_note(design, bool(spec.run.get("isothermal"))))
    if spec.parts:
        notes.append(_family_note(spec))
    note = _capacitor_note(spec, front)
    if note:
        notes.append(note)
    failed = df[df["state"] == "FAIL"] if not df.empty else df
    if len(failed):
        kinds: dict[str, int] = {}
        for r in failed["reason"]:
            key = str(r).split(":")[0]
            kinds[key] = kinds.get(key, 0) + 1
        notes.append(
            "Failed trials (never on the front): "
            + ", ".join(f"{v} {k}" for k, v in sorted(kinds.items(), key=lambda kv: -kv[1]))
        )
    return notes


def _capacitor_note(spec, front) -> str:
    """What a front design's capacitor is rated for (models.supply), when the study has one."""
    comp = (spec.base.get("drive") or {}).get("compensation", "none")
    searched = any(p.key == "drive.compensation" for p in spec.params)
    if comp == "none" and not searched:
        return ""
    text = (
        "Capacitor (drive.compensation): tuned for unity power factor at the design point and "
        "then fixed; supply_voltage_V, supply_current_A, supply_VA and power_factor are the "
        "supply's, coil_voltage_V the coil's. It must be rated for capacitor_rating_V and "
        "capacitor_reactive_VA: its worst state over the gaps evaluated, hot and cold, and with "
        "no part present (a series capacitor sees about Q times the supply voltage)."
    )
    if front is not None and len(front) and "capacitor_rating_V" in front:
        rating = front["capacitor_rating_V"].astype(float)
        rated = rating[rating > 0]
        if len(rated):
            text += (
                f" On this front: {len(rated)} of {len(front)} designs have one, rated "
                f"{rated.min():.4g}-{rated.max():.4g} V rms."
            )
    return text


def _family_note(spec) -> str:
    """What the results of a family of parts are (optim.study.family), part by part."""

    def words(part) -> str:
        t, g = part.target, part.gaps_mm
        metal = t.get("material") or f"{t.get('conductivity_S_per_m', 0):.3g} S/m"
        gaps = f"{g[0]:g}-{g[-1]:g} mm ({len(g)} gaps)" if g else "the design's gap"
        return (
            f"{part.name} ({part.role}: radius {t['radius_mm']:g} mm, {t['thickness_mm']:g} mm "
            f"thick, {metal}, {gaps})"
        )

    own = next(p for p in spec.parts if p.role == "lift")
    return (
        f"Parts: {'; '.join(words(p) for p in spec.parts)}. pull_N, the temperatures and the "
        f"other model results are {own.name}'s (the first lift part) at the design's own gap; "
        "every part sits under the magnet at that steady state. parts.<name>.worst_lift_ratio "
        "and best_lift_ratio are each part's smallest and largest pull over its weight (its "
        "gaps, at arrival and at the end of the hold); worst_lift_ratio is the smallest over "
        "the lift parts, best_leave_lift_ratio the largest over the leave parts, "
        "selectivity_margin their difference (a leave part pushed away counts as left)."
    )


def _state_note(design, isothermal: bool) -> str:
    """Which state the pulls refer to and the thermal assumptions, as the first picked design
    has them (the study's designs share the base design's [thermal] table unless it is searched)."""

    r = evaluate(design, isothermal=isothermal)
    a = r.thermal_assumptions
    if a["target_stays"]:
        state = (
            "pull_N and lift_ratio are the part at its steady state under the pole "
            "(thermal.target_stays)"
        )
    else:
        state = (
            f"pull_N and lift_ratio are the moment of pick: the part arriving at "
            f"{a['target_arrival_C']:g} degC at each pick gap, the magnet's coil and ring at "
            f"their duty-averaged steady state; pull_hold_N and lift_ratio_hold are the end of "
            f"a {a['hold_time_s']:g} s hold at the {a['hold_gap_mm']:g} mm holding gap; "
            "worst_pull_N and worst_lift_ratio take the worst of both"
        )
    return (
        f"{state}. Thermal assumptions: {assumptions_text(a)}. Limits: "
        f"{'; '.join(limits_used_text(a))}."
    )


def write_front(
    study,
    spec_json: dict,
    where: str,
    folder: Path,
    echo=print,
    pick_maps: bool | None = None,
    tolerance: bool | None = None,
) -> dict:
    """Write the front table, plots and report of a study into ``folder``; returns the paths and
    the lines to print. ``pick_maps``: a coarse pick map of each picked design in the report
    (None: ``optim.morning.robustness.REPORT_PICK_MAPS``, on). ``tolerance``: the first pick's
    tolerance table in the report (None: ``optim.morning.robustness.REPORT_TOLERANCE``, on;
    ``REPORT_SAMPLES`` samples)."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    spec = _spec(spec_json)
    objectives = dict(spec_json["objectives"])
    df = trials_table(study, spec_json)
    front = df[df["on_front"]].copy() if not df.empty else df
    if not front.empty:
        first, direction = next(iter(objectives.items()))
        front = front.sort_values(first, ascending=direction == "minimize")
    paths = _write_tables(folder, df, front)
    picks = _picks(front, objectives)
    check_lines = []  # issue 30: the picks checked as built, those that hold first
    if picks and (robustness.REPORT_TOLERANCE if tolerance is None else tolerance):
        picks, check_lines = check_picks(spec, front, picks, design_of)
    picked = [t for _, t in picks][:3]  # the first three get a pull-against-gap curve
    designs = []
    for t in picked:
        row = front[front["trial"] == t].iloc[0]
        designs.append((f"trial {t}", design_of(spec, {p.name: row[p.name] for p in spec.params})))
    images = _write_plots(folder / "plots", spec, objectives, df, front, designs)

    maps = []
    if designs and (robustness.REPORT_PICK_MAPS if pick_maps is None else pick_maps):
        isothermal = bool(spec.run.get("isothermal", False))
        maps = robustness.pick_map_figures(
            designs, folder / "plots", isothermal=isothermal, parts=spec.parts, gaps_mm=spec.gaps_mm
        )
    table = None
    if designs and (robustness.REPORT_TOLERANCE if tolerance is None else tolerance):
        table = _report_tolerance(spec, picks[0][0], designs[0])
    paths["report.html"] = _write_study_report(
        folder, study, spec_json, spec, where, df, front, images, picks, designs, maps, table
    )
    lines = [
        f"study {spec.name}: {len(df)} trials, {int(df['feasible'].sum()) if len(df) else 0} "
        f"feasible, front of {len(front)}",
        f"front table   {paths['front.csv']} (and .parquet)",
        f"all trials    {paths['trials.csv']}",
        f"plots         {folder / 'plots'} ({len(images)} files)",
        f"report        {paths['report.html']}",
        *check_lines,  # issue 30
    ]
    if table is not None:
        t = table.study
        lines.append(
            f"tolerances    {table.label}: {t.n_samples} samples in {t.run_time_s:.0f} s (in the "
            "report)"
        )
    return {"paths": paths, "lines": lines, "picked": picked, "front": front}


def _report_tolerance(spec, why: str, labelled):
    """The report's tolerance table of the first pick ``(label, design)``; None when the model
    refuses the design as a whole (as the pick maps leave such a design out)."""

    label, design = labelled
    try:
        return robustness.report_tolerance(spec, label, why, design)
    except DesignError:
        return None


def _write_tables(folder: Path, df, front) -> dict[str, Path]:
    """front.csv, trials.csv (states in our words) and front.parquet."""
    paths: dict[str, Path] = {}
    csv = io.StringIO()
    for_people(front).to_csv(csv, index=False)
    paths["front.csv"] = atomic_write_text(folder / "front.csv", csv.getvalue())
    paths["trials.csv"] = _write_trials_csv(folder / "trials.csv", for_people(df))
    with atomic_path(folder / "front.parquet") as tmp:
        front.reset_index(drop=True).to_parquet(tmp, index=False)
    paths["front.parquet"] = folder / "front.parquet"
    return paths


#: Above this many trials trials.csv is written by Arrow's CSV writer (pyarrow, compiled: ~10x
#: faster than pandas' on 10^6 rows); the same columns and values, read back alike by
#: ``pandas.read_csv``; Arrow writes true/false and times with a "Z".
LARGE_TABLE = 100_000


def _write_trials_csv(path: Path, df) -> Path:
    if len(df) <= LARGE_TABLE:
        out = io.StringIO()
        df.to_csv(out, index=False)
        return atomic_write_text(path, out.getvalue())
    import pyarrow as pa
    import pyarrow.csv as pacsv

    with atomic_path(path) as tmp:
        pacsv.write_csv(pa.Table.from_pandas(df, preserve_index=False), str(tmp))
    return path


def _write_plots(plot_dir: Path, spec, objectives: dict, df, front, designs) -> list[Path]:
    """The study's plots: front pairs and progress, parameter coupling, and pull against gap and
    the section of the picked designs."""

    images: list[Path] = []
    pairs = list(objectives.items())  # [(name, direction)] in the study's order
    if len(df):
        images += plots.plot_front_pairs(df, pairs, plot_dir)
        images += plots.plot_front_progress(df, pairs, plot_dir)
    if len(front):
        log = [p.name for p in spec.params if p.log]
        choices = {p.name: list(p.choices) for p in spec.params if p.categorical}
        images += plots.plot_parameter_coupling(
            front, [p.name for p in spec.params], plot_dir, log=log, choices=choices
        )
    if designs:
        isothermal = bool(spec.run.get("isothermal", False))
        images += design_plots.plot_pull_vs_gap(designs, plot_dir, isothermal=isothermal)
        images += design_plots.plot_section(designs[0][1], plot_dir, designs[0][0])
    return images


def _write_study_report(
    folder, study, spec_json, spec, where, df, front, images, picks, designs, maps=(), table=None
) -> Path:
    """report.html: the picks, their pick maps, the first pick's tolerance table, the summary
    (with what the constraints rejected), the front, the plots with their captions and the
    model's notes."""

    pairs = list(dict(spec_json["objectives"]).items())
    pngs = [(p, plots.caption_for(p, pairs)) for p in images if Path(p).suffix == ".png"]
    summary = status_summary(study, spec_json, df)
    summary.pop("best_trials", None)  # the picks' cards show the best designs
    summary.update(
        {
            "study": spec.name,
            "storage": where,
            "budget": _budget_text(spec.run),
            "sampler": spec.run.get("sampler", "auto"),
            "picked trials": ", ".join(str(t) for _, t in picks[:3]) or "-",
            "constraints": "; ".join(x.strip() for x in constraint_lines(summary))
            or "no done trial rejected by a constraint",
        }
    )
    nearest = summary.pop("nearest", None) or []
    if nearest:  # nothing feasible: the nearest trials, what they break, bounds worth moving
        summary["nearest to feasible"] = "; ".join(x.strip() for x in nearest_lines(nearest)[1:])
    notes = _notes(spec, df, front, designs[0][1] if designs else None)

    states = CardStates(
        gaps_mm=tuple(spec.gaps_mm),
        family=bool(spec.parts),
        isothermal=bool(spec.run.get("isothermal", False)),
    )
    report = write_report(
        folder,
        summary,
        for_people(front),
        pngs,
        binding_counts(front),
        notes,
        objectives=pairs,
        params=[p.name for p in spec.params],
        picks=picks,
        pick_maps=maps,
        tolerance=table,
        states=states,
    )
    return Path(report)


def _budget_text(run: dict) -> str:
    parts = []
    if "trials" in run:
        parts.append(f"{run['trials']} trials")
    if "hours" in run or "minutes" in run:
        parts.append(f"{run.get('hours', 0) * 60 + run.get('minutes', 0):g} min")
    parts.append(f"{run.get('workers', 1)} worker(s) per machine")
    return ", ".join(parts)


def pick_trial(study, spec_json: dict, trial: int | None, best: str | None, nearest=False):
    """The stored trial to export: by number, the front's best in one objective, or (``nearest``)
    the completed trial of least total violation (optim.morning.nearest)."""

    readout = study if isinstance(study, StudyReadout) else StudyReadout(study, spec_json, "")
    if nearest:
        found = nearest_trials(trials_table(readout, spec_json, dimensions=False), spec_json, 1)
        if not found:
            raise DesignError("--nearest: the study has no completed trial yet")
        trial = found[0]["trial"]
    if trial is not None:
        n = readout.n_trials
        if not 0 <= trial < n:
            raise DesignError(f"--trial {trial}: must be a trial number from 0 to {n - 1}")
        t = readout.trial(trial)
        if t.state.name != "COMPLETE":
            reason = StoredRecord.of(t.user_attrs).reason
            raise DesignError(
                f"--trial {trial}: state {t.state.name} ({reason or 'no result'}); pick a "
                "completed trial, e.g. one of the front"
            )
        return t
    objectives = dict(spec_json["objectives"])
    if best not in objectives:
        raise DesignError(
            f"--best {best!r}: must be one of the objectives: {', '.join(objectives)}"
        )
    df = trials_table(readout, spec_json)
    front = df[df["on_front"]] if not df.empty else df
    if front.empty:
        why = [x.strip() for x in constraint_lines(status_summary(readout, spec_json, df))]
        raise DesignError(
            f"--best {best}: the study has no feasible design yet"
            + (f" ({'; '.join(why)})" if why else "")
        )
    col = front[best].astype(float)
    idx = col.idxmax() if objectives[best] == "maximize" else col.idxmin()
    return readout.trial(int(front.loc[idx, "trial"]))


def handoff_folder(folder, trial_number: int, out=None) -> Path:
    """Where the hand-off of one trial goes: ``handoff-trial-N`` in the study folder, or ``out``.

    One rule for both: a relative ``out`` is taken inside the study folder (``--out mine`` writes
    ``<study folder>/mine``), an absolute one is used as it is.
    """
    return Path(folder) / (f"handoff-trial-{trial_number}" if out is None else Path(out))


def export_trial(
    study,
    spec_json: dict,
    where: str,
    folder: Path,
    trial: int | None = None,
    best: str | None = None,
    nearest: bool = False,
    out=None,
    verify: bool = False,
    echo=None,
    resolution_mm: float | None = None,
    tolerance: bool = False,
    samples: int | None = None,
) -> dict:
    """Write the hand-off of one trial; returns file name -> path.

    The trial's dimensions are rounded to ``resolution_mm`` (default
    `optim.morning.rounding.DEFAULT_RESOLUTION_MM`) and the rounded design is handed off with its
    own results, checked against the study's constraints (``rounding`` in handoff.json).
    ``echo`` receives what rounding did (and whether it broke a constraint) and a note when the
    re-evaluated numbers differ from the stored ones (the model changed since the study).
    ``tolerance`` adds the rounded design's tolerance table and pick map
    (`optim.morning.robustness.write_robustness`).
    """

    spec = _spec(spec_json)
    t = pick_trial(study, spec_json, trial, best, nearest)
    design = design_of(spec, t.params)
    isothermal = bool(spec.run.get("isothermal", False))
    result = evaluate(design, isothermal=isothermal)
    record = StoredRecord.of(t.user_attrs)
    names = study.user_attrs.get(RESULT_NAMES_ATTR, [])
    stored = dict(zip(names, record.results, strict=False))
    target = handoff_folder(folder, t.number, out)
    objective_values = dict(zip(spec_json["objectives"], t.values, strict=True))
    now = result.to_dict()
    drift = [
        name
        for name in ("pull_N", "input_power_W", "ring_loss_W")
        if name in stored
        and math.isfinite(stored[name])
        and abs(now[name] - stored[name]) > 1e-9 * max(abs(stored[name]), 1e-12)
    ]
    resolution = DEFAULT_RESOLUTION_MM if resolution_mm is None else resolution_mm
    design, result, rounding = rounded_for_handoff(spec, design, resolution, isothermal)
    meta = {
        "study": spec.name,
        "trial": t.number,
        "storage": where,
        "parameters": dict(t.params),
        "objectives": objective_values,
        "constraint_margins": rounding["constraint_margins"],
        "constraint_margins_unrounded": record.margins,
        "feasible": rounding["constraints_met"] and not rounding["broken"],
        "broken_constraints": rounding["broken"],
        "feasible_unrounded": all(v <= 0 for v in t.constraints.values()),
        "created_at": datetime.now(UTC).isoformat(timespec="seconds"),
        "isothermal": isothermal,
        "stored_results_match": not drift,
        "rounding": rounding,
    }
    checked = None
    if verify:
        checked = run_verify(design)
    paths = write_handoff(design, result, target, meta, verify=checked)
    if tolerance:
        paths.update(
            write_robustness(
                design,
                target,
                isothermal=isothermal,
                echo=echo,
                parts=spec.parts,
                gaps_mm=spec.gaps_mm,
                spec=spec,  # issue 30: samples as the study evaluates a trial
                samples=samples,
            )
        )
    if echo is not None and not meta["feasible_unrounded"]:
        broken = ", ".join(f"{b['name']} (margin {b['margin']:+.4g})" for b in rounding["broken"])
        echo(
            f"warning: trial {t.number} is not feasible as the study found it: it breaks "
            f"{broken or 'a constraint'}; every file of the hand-off says so"
        )
    elif echo is not None:
        echo(("warning: " if rounding["broken_constraints"] else "") + rounding["words"])
    if drift and echo is not None:
        echo(
            f"note: re-evaluated {', '.join(drift)} differ from the study's stored values (the "
            "model changed since the study ran); the hand-off carries the new values"
        )
    return paths
