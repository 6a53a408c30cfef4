"""``eddypull study ...``: run, status, results, front and export of studies."""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

from optim.cli.usage import UsageError
from optim.files import redact_url, safe_name
from optim.jsonout import strict_json
from optim.morning.front import constraint_lines, format_status, status_summary
from optim.morning.nearest import nearest_lines
from optim.morning.outputs import export_trial, write_front
from optim.study.columns import open_readout
from optim.study.run import budget_minutes, run_study, study_folder
from optim.study.space import coupling_rules
from optim.study.spec import RUN_MAX, load_study_spec
from optim.study.storage import is_url, release, rewrite_journal
from optim.study.tolerance import SAMPLES_RANGE

__all__ = ["add_study_parser"]


def check_budget(workers, trials, minutes, flag: str = "--trials") -> None:
    """The run's workers, trials (``flag`` names them) and minutes, or a one-line DesignError."""

    for name, value in (("--workers", workers), (flag, trials)):
        if value is not None and (not isinstance(value, int) or value < 1):
            raise UsageError(f"{name} = {value!r}: must be a whole number >= 1")
    if minutes is not None and not 0 < minutes <= RUN_MAX["minutes"]:
        raise UsageError(
            f"--minutes/--hours = {minutes!r} min: must be > 0 and at most a year (525600 min)"
        )
    if workers > RUN_MAX["workers"]:
        raise UsageError(f"--workers = {workers}: must be at most {RUN_MAX['workers']}")


def _cmd_run(args) -> int:

    spec = load_study_spec(args.study)
    run = spec.run
    if args.trials is not None and args.more is not None:
        raise UsageError(
            f"--trials {args.trials} and --more {args.more}: give one (--trials: the study's "
            "total; --more: trials beyond what is there)"
        )
    minutes = budget_minutes(args.hours, args.minutes, spec)
    trials = args.trials if args.trials is not None else run.get("trials")
    if args.trials is None and (
        args.hours is not None or args.minutes is not None or args.more is not None
    ):
        trials = None  # a budget given on the command line replaces the file's whole budget
    workers = args.workers if args.workers is not None else run.get("workers", 1)
    check_budget(workers, trials, minutes)
    check_budget(workers, args.more, minutes, flag="--more")
    if args.seed is not None and not 0 <= args.seed <= RUN_MAX["seed"]:
        raise UsageError(f"--seed = {args.seed}: must be between 0 and {RUN_MAX['seed']}")
    if args.storage is not None and not is_url(args.storage):
        raise UsageError(
            f"--storage = {args.storage!r}: must be a database URL (scheme://...); leave it out "
            "for the study folder's journal"
        )
    if args.storage is not None and _has_password(args.storage):
        print(
            "eddypull: warning: the password in --storage shows in the process list to every "
            "user of this machine; put the URL in EDDYPULL_STORAGE_URL instead (or use the "
            "database client's password file)",
            file=sys.stderr,
        )
    # A password is safer in the environment than on a command line (shell history, ps).
    storage = args.storage or os.environ.get("EDDYPULL_STORAGE_URL") or run.get("storage")
    folder = study_folder(spec, Path(args.study), Path(args.out) if args.out else None)
    summary = run_study(
        spec,
        folder,
        storage_url=storage,
        workers=workers,
        trials=args.more,
        total_trials=trials,
        minutes=minutes,
        seed=args.seed,
        echo=(lambda *_: None) if args.json else print,
        tty=False if args.json else None,
    )
    if args.json:
        print(strict_json(summary))
    else:
        print(f"study folder: {summary['folder']}")
        if not summary["feasible_this_run"] and summary["trials_this_run"]:
            for line in _why_none_feasible(storage or summary["folder"], spec.name):
                print(line)
    for line in summary["errors"]:
        print(f"eddypull: error: {line}", file=sys.stderr)
    return 1 if summary["errors"] else summary["exit_code"]


def _has_password(url: str) -> bool:
    """True when a database URL carries a password (user:password@host, or ?password=...)."""

    return redact_url(url) != url


def _why_none_feasible(location, name: str) -> list[str]:
    """Which constraint rejected how many trials, and the best margin reached: the reason a run
    found no feasible design."""

    study = open_readout(location, name)
    spec_json = study.spec_json
    try:
        summary = status_summary(study, spec_json)
    finally:
        release(study)
    lines = constraint_lines(summary) + nearest_lines(summary.get("nearest") or [])
    return ["no feasible design yet:", *lines] if lines else []


def _location(args) -> tuple:
    """(storage location, study name) of a command's DIR|URL argument; a study file
    (``STUDY.toml``) stands for its study: its folder, or the database its runs use."""

    loc = args.location
    path = Path(loc)
    if is_url(loc) or path.suffix.lower() != ".toml" or not path.is_file():
        return loc, args.name

    spec = load_study_spec(path)
    storage = os.environ.get("EDDYPULL_STORAGE_URL") or spec.run.get("storage")
    return (storage or str(study_folder(spec, path))), (args.name or spec.name)


def _open(args):
    """The study to read: (readout, its definition, where it is) (optim.study.columns); what was
    skipped in its storage is said on stderr."""

    args.location, args.name = _location(args)
    readout = open_readout(args.location, args.name)
    for line in readout.notes:
        print(f"eddypull: warning: {line}", file=sys.stderr)
    return readout, readout.spec_json, readout.where


def _cmd_repair(args) -> int:

    location, _ = _location(args)
    if is_url(location):
        raise UsageError(f"repair {location!r}: only a study folder's journal can be repaired")
    print(rewrite_journal(Path(location)))
    return 0


def _cmd_status(args) -> int:

    study, spec_json, where = _open(args)
    try:
        s = status_summary(study, spec_json)
    finally:
        release(study)  # a database's connections closed
    print(strict_json(s) if args.json else format_status(s, where))
    return 0


def _cmd_results(args) -> int:

    spec = load_study_spec(args.study)
    print("results a study can optimise or constrain (units in the names):")
    for name in spec.result_names:
        print(f"  {name}")

    print("what follows the searched parameters (coupling rules):")
    for rule in coupling_rules(spec.base, spec.params):
        print(f"  {rule}")
    return 0


def _cmd_front(args) -> int:

    study, spec_json, where = _open(args)
    try:
        out = write_front(
            study,
            spec_json,
            where,
            _folder_for(args.location, spec_json, args.out),
            pick_maps=False if args.no_pick_maps else None,
            tolerance=False if args.no_tolerance else None,
        )
    finally:
        release(study)
    for line in out["lines"]:
        print(line)
    return 0


def _cmd_export(args) -> int:
    if (args.trial is not None) + (args.best is not None) + bool(args.nearest) != 1:
        raise UsageError("export: give exactly one of --trial N, --best OBJECTIVE and --nearest")
    if args.samples is not None:  # issue 30
        if not args.tolerance:
            raise UsageError("--samples: needs --tolerance (the samples of its table)")
        if not SAMPLES_RANGE[0] <= args.samples <= SAMPLES_RANGE[1]:
            raise UsageError(
                f"--samples = {args.samples}: must be between {SAMPLES_RANGE[0]} and "
                f"{SAMPLES_RANGE[1]}"
            )
    study, spec_json, where = _open(args)
    folder = _folder_for(args.location, spec_json, None)
    try:
        paths = export_trial(
            study,
            spec_json,
            where,
            folder,
            trial=args.trial,
            best=args.best,
            nearest=args.nearest,
            out=args.out,
            verify=args.verify,
            echo=print,
            resolution_mm=args.resolution_mm,
            tolerance=args.tolerance,
            samples=args.samples,  # issue 30
        )
    finally:
        release(study)
    for name, path in paths.items():
        print(f"{name:16s} {path}")
    return 0


def _folder_for(location, spec_json, out) -> Path:

    if out:
        return Path(out)
    if not is_url(location):
        return Path(location)
    return Path.cwd() / "studies" / safe_name(spec_json["name"], "name")


class _OneLineParser(argparse.ArgumentParser):
    """A bad flag (``--workers x``, ``--hours`` with ``--minutes``) is one line and exit code 2,
    as every other input error, instead of argparse's usage block."""

    def error(self, message):
        self.exit(2, f"eddypull: error: {message} (see '{self.prog} --help')\n")

    def parse_known_args(self, args=None, namespace=None):
        namespace, extras = super().parse_known_args(args, namespace)
        if extras:  # refused here: the top-level parser would print its usage block
            self.error(f"unrecognized arguments: {' '.join(extras)}")
        return namespace, extras


def add_study_parser(sub) -> None:
    s = sub.add_parser("study", help="run and read optimisation studies")
    ss = s.add_subparsers(dest="study_command", required=True, parser_class=_OneLineParser)

    r = ss.add_parser("run", help="run (or resume) a study from its study file")
    r.add_argument("study", help="study TOML file")
    budget = r.add_mutually_exclusive_group()
    budget.add_argument("--hours", type=float, help="wall-time budget of this run [h]")
    budget.add_argument("--minutes", type=float, help="wall-time budget of this run [min]")
    r.add_argument(
        "--trials",
        type=int,
        help="the study's total trials: a rerun makes what is missing (as [run] trials)",
    )
    r.add_argument("--more", type=int, metavar="N", help="N trials beyond what the study has")
    r.add_argument("--workers", type=int, help="worker processes on this machine")
    r.add_argument("--storage", metavar="URL", help="database URL shared by several machines")
    r.add_argument("--seed", type=int, help="sampler seed (overrides [run] seed)")
    r.add_argument(
        "--out",
        metavar="DIR",
        help="study folder (default: beside the study file whatever the current folder: "
        "studies/<name> next to it, or <name> when the file sits in a studies folder)",
    )
    r.add_argument("--json", action="store_true", help="print only a JSON summary at the end")
    r.set_defaults(func=_cmd_run)

    for cmd, helptext, func in (
        ("status", "summary of a running or finished study", _cmd_status),
        ("front", "write the front table, plots and report.html", _cmd_front),
        ("export", "write the hand-off of one design for CAD", _cmd_export),
    ):
        p = ss.add_parser(cmd, help=helptext)
        p.add_argument(
            "location", metavar="DIR|URL", help="study folder, storage URL or the study file"
        )
        p.add_argument("--name", help="study name (a URL can hold several studies)")
        p.set_defaults(func=func)
        if cmd == "status":
            p.add_argument("--json", action="store_true", help="print one JSON object")
        if cmd == "front":
            p.add_argument("--out", metavar="DIR", help="output folder (default: the study's)")
            p.add_argument(
                "--no-pick-maps",
                action="store_true",
                help="leave the picked designs' pick maps out of the report (~25 s each)",
            )
            p.add_argument(
                "--no-tolerance",
                action="store_true",
                help="leave the first pick's tolerance table out of the report (~10 s to 1 min)",
            )
        if cmd == "export":
            p.add_argument("--trial", type=int, help="trial number")
            p.add_argument("--best", metavar="OBJECTIVE", help="best front design for it")
            p.add_argument(
                "--nearest",
                action="store_true",
                help="the trial nearest to feasible (least total violation), marked infeasible",
            )
            p.add_argument(
                "--out",
                metavar="FOLDER",
                help="hand-off folder, taken inside the study folder when relative (default "
                "handoff-trial-N there; an absolute path is used as it is)",
            )
            p.add_argument("--verify", action="store_true", help="add the FEM side-by-side")
            p.add_argument(
                "--tolerance",
                action="store_true",
                help="add the tolerance table and a part radius x gap pick map (~2-3 min)",
            )
            p.add_argument(  # issue 30
                "--samples",
                type=int,
                help="Monte Carlo samples of --tolerance's table (default 200; 10 to 100000)",
            )
            p.add_argument(
                "--resolution-mm",
                type=float,
                help="round every dimension to this step [mm] (default 0.01)",
            )

    rp = ss.add_parser(
        "repair",
        help="rewrite a study folder's journal without its damaged records (a copy is kept); "
        "stop the study's runs first",
    )
    rp.add_argument("location", metavar="DIR", help="study folder (or its study file)")
    rp.add_argument("--name", help=argparse.SUPPRESS)
    rp.set_defaults(func=_cmd_repair)

    q = ss.add_parser("results", help="list the result names a study file can use")
    q.add_argument("study", help="study TOML file")
    q.set_defaults(func=_cmd_results)
