"""The eddypull command line: evaluate, map, tolerance, verify, materials, demo.

Exit codes: 0 success, 2 bad input (one line per problem, no traceback), 1 a fault at run time
(a storage server down, a full disk), 130 and 143 a study run stopped by SIGINT (Ctrl-C) or
SIGTERM.
"""

from __future__ import annotations

import argparse
import errno
import logging
import os
import sys
from dataclasses import asdict
from importlib.metadata import PackageNotFoundError, version
from pathlib import Path

from models.design import load_design
from models.errors import DesignError
from models.evaluate import evaluate
from models.materials import MATERIALS
from models.result import MODEL_VERSION
from optim.cli.study import add_study_parser, check_budget
from optim.cli.summary import format_materials, format_result
from optim.cli.usage import UsageError
from optim.demo import SCENARIOS
from optim.jsonout import strict_json
from optim.morning.outputs import export_trial, write_front
from optim.morning.pickmap import evaluate_map, format_map, map_json, parse_axis, write_map
from optim.morning.sweep import format_sweep, parse_sweep, plot_sweep, run_sweep
from optim.morning.tolerance_out import format_tolerance, tolerance_json, write_tolerance
from optim.morning.verify import run_verify
from optim.study.columns import open_readout
from optim.study.run import run_study
from optim.study.spec import load_study_spec
from optim.study.storage import StorageFault, is_storage_error, storage_fault
from optim.study.tolerance import (
    DEFAULT_SAMPLES,
    DEFAULT_SEED,
    SAMPLES_RANGE,
    read_tolerance_spec,
    run_tolerance,
    tolerances_for,
)
from optim.words import CAUTION

__all__ = ["main"]


def _cmd_evaluate(args) -> int:

    design = load_design(args.design)
    if args.sweep:
        key, values, note = parse_sweep(args.sweep, args.points)
        rows = run_sweep(design, key, values, isothermal=args.isothermal)
        if note:  # once the sweep ran: a failing one shows only its error
            print(f"eddypull: note: {note}", file=sys.stderr)
        if args.json:
            print(strict_json({"key": key, "rows": [{key: v, **r.to_dict()} for v, r in rows]}))
        else:
            print(format_sweep(key, rows))
        if args.plot:
            plot_sweep(key, rows, args.plot, title=design.name)
            if not args.json:
                print(f"plot written to {args.plot}")
        return 0
    if args.plot:
        raise UsageError("--plot: needs --sweep KEY=START..STOP")
    if args.points is not None:
        raise UsageError(f"--points {args.points}: needs --sweep KEY=START..STOP")
    result = evaluate(design, isothermal=args.isothermal, lateral=True)
    if args.json:
        print(strict_json(result.to_dict()))
    else:
        print(format_result(design, result))
    return 0


def _cmd_map(args) -> int:
    """A pick map: the lift ratio over two design keys, drawn and tabulated."""

    design = load_design(args.design)
    x = parse_axis(design, args.x, args.points, "--x")
    y = parse_axis(design, args.y, args.points, "--y")
    pmap = evaluate_map(design, x, y, isothermal=args.isothermal)
    files = write_map(pmap, Path(args.out))
    print(strict_json(map_json(pmap, files)) if args.json else format_map(pmap, files))
    return 0


def _cmd_tolerance(args) -> int:
    """The tolerance table: sensitivities, Monte Carlo spread and the limits kept."""

    design = load_design(args.design)
    lo, hi = SAMPLES_RANGE
    if not lo <= args.samples <= hi:
        raise UsageError(f"--samples = {args.samples}: must be between {lo} and {hi}")
    if not 0 <= args.seed < 2**32:
        raise UsageError(f"--seed = {args.seed}: must be between 0 and {2**32 - 1}")
    spec = read_tolerance_spec(args.spec, design) if args.spec else None
    study = run_tolerance(
        design,
        tolerances_for(design, spec),
        samples=args.samples,
        seed=args.seed,
        isothermal=args.isothermal,
    )
    files = write_tolerance(study, Path(args.out)) if args.out else {}
    if args.json:
        print(strict_json(tolerance_json(study, files)))
    else:
        print(format_tolerance(study))
        for name, path in files.items():
            print(f"{name:26s} {path}")
    return 0


def _cmd_verify(args) -> int:

    design = load_design(args.design)
    out = run_verify(design, refine=args.refine)
    print(strict_json(out["json"]) if args.json else out["text"])
    return 0


def _cmd_materials(args) -> int:

    if args.json:
        print(strict_json({k: asdict(m) for k, m in MATERIALS.items()}))
    else:
        print(format_materials())
    return 0


def _cmd_demo(args) -> int:
    """The main job on the demo scenario: run the demo study (resuming it if it exists), then
    write its front, plots and report and the hand-off of its best design.

    ``--scenario`` picks the study: "lifter" (the default, ``demo_study.toml``) or "sorting"
    (``demo_sorting.toml``, a family of parts). The demo files are read from the installed
    package; every output goes to ``--out`` or to ``./<study name>`` (``harrowgate-night``,
    ``harrowgate-sorting``) in the current folder, never beside the package's files."""

    demo_study = SCENARIOS[args.scenario]
    spec = load_study_spec(demo_study)
    minutes = args.minutes if args.minutes is not None else spec.run.get("minutes", 3.0)
    if args.trials is not None:
        minutes = args.minutes
    workers = args.workers if args.workers is not None else spec.run.get("workers", 1)
    check_budget(workers, args.trials, minutes)
    folder = Path(args.out) if args.out else Path.cwd() / spec.name
    print(f"demo study {demo_study.name}: {spec.description}")
    summary = run_study(
        spec,
        folder,
        workers=workers,
        total_trials=args.trials,
        minutes=minutes,
    )
    for line in summary["errors"]:
        print(f"eddypull: error: {line}", file=sys.stderr)
    if summary["errors"]:
        return 1
    if summary["exit_code"]:
        return summary["exit_code"]
    study = open_readout(folder)
    spec_json, where = study.spec_json, study.where
    out = write_front(
        study,
        spec_json,
        where,
        folder,
        pick_maps=False if args.no_pick_maps else None,
        tolerance=False if args.no_tolerance else None,
    )
    for line in out["lines"]:
        print(line)
    first = next(iter(spec_json["objectives"]))

    if out["front"].empty:
        print("no feasible design yet: run the demo longer (eddypull demo --minutes 10)")
        print(CAUTION)
        return 0
    paths = export_trial(study, spec_json, where, folder, best=first)
    print(f"hand-off of the best {first} design (CAD): {paths['design.toml'].parent}")
    for name, path in paths.items():
        print(f"  {name:16s} {path}")
    print(f"open {out['paths']['report.html']} in a browser to read the study")
    print(CAUTION)
    return 0


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="eddypull",
        description="Design AC shaded-pole electromagnets that pull non-ferrous parts.",
    )
    p.add_argument("--version", action="version", version=version_line())
    sub = p.add_subparsers(dest="command", required=True)

    e = sub.add_parser("evaluate", help="evaluate one design file with the fast model")
    e.add_argument("design", help="design TOML file")
    e.add_argument("--json", action="store_true", help="print one JSON object")
    e.add_argument("--isothermal", action="store_true", help="resistivities at 20 degC, uncoupled")
    e.add_argument(
        "--sweep",
        metavar="KEY=START..STOP",
        help="sweep one numeric key from START to STOP (both included)",
    )
    e.add_argument(
        "--points",
        type=int,
        metavar="N",
        help="values of the sweep, evenly spaced (default 25)",
    )
    e.add_argument("--plot", metavar="PNG", help="with --sweep: plot pull against the key")
    e.set_defaults(func=_cmd_evaluate)

    mp = sub.add_parser("map", help="pick map: lift ratio over two design keys (PNG, SVG, CSV)")
    mp.add_argument("design", help="design TOML file")
    mp.add_argument(
        "--x", required=True, metavar="KEY=START..STOP", help="horizontal axis (a numeric key)"
    )
    mp.add_argument(
        "--y", required=True, metavar="KEY=START..STOP", help="vertical axis (a numeric key)"
    )
    mp.add_argument("--points", type=int, metavar="N", help="values per axis (default 25)")
    mp.add_argument("--out", metavar="DIR", default=".", help="output folder (default: here)")
    mp.add_argument("--json", action="store_true", help="print one JSON object")
    mp.add_argument("--isothermal", action="store_true", help="resistivities at 20 degC, uncoupled")
    mp.set_defaults(func=_cmd_map)

    t = sub.add_parser(
        "tolerance",
        help="tolerance table: sensitivities, Monte Carlo spread and the limits kept",
    )
    t.add_argument("design", help="design TOML file")
    t.add_argument(
        "--spec",
        metavar="TOL.toml",
        help='tolerance file: [tolerances] "key" = half-width or "N %%" (overrides the defaults)',
    )
    t.add_argument(
        "--samples",
        type=int,
        default=DEFAULT_SAMPLES,
        metavar="N",
        help=f"Monte Carlo designs (default {DEFAULT_SAMPLES})",
    )
    t.add_argument(
        "--seed", type=int, default=DEFAULT_SEED, help=f"sampling seed (default {DEFAULT_SEED})"
    )
    t.add_argument("--out", metavar="DIR", help="also write the tables (text, CSV, JSON) here")
    t.add_argument("--json", action="store_true", help="print one JSON object")
    t.add_argument("--isothermal", action="store_true", help="resistivities at 20 degC, uncoupled")
    t.set_defaults(func=_cmd_tolerance)

    v = sub.add_parser("verify", help="check one design against the finite-element reference")
    v.add_argument("design", help="design TOML file")
    v.add_argument("--json", action="store_true", help="print one JSON object")
    v.add_argument("--refine", type=float, default=1.0, help="FEM mesh refinement (default 1)")
    v.set_defaults(func=_cmd_verify)

    m = sub.add_parser("materials", help="list the material library with every value's source")
    m.add_argument("--json", action="store_true", help="print one JSON object")
    m.set_defaults(func=_cmd_materials)

    d = sub.add_parser(
        "demo", help="run the demo study, then write its front, report and best design's hand-off"
    )
    d.add_argument("--minutes", type=float, help="time budget (default: the study file's)")
    d.add_argument(
        "--trials", type=int, help="the demo study's total trials instead of the time budget"
    )
    d.add_argument("--workers", type=int, help="worker processes (default: the study file's)")
    d.add_argument(
        "--scenario",
        choices=list(SCENARIOS),
        default=next(iter(SCENARIOS)),
        help="lifter (default): lift one cap size; sorting: lift 10 mm caps, leave 16 mm ones",
    )
    d.add_argument(
        "--out",
        metavar="DIR",
        help="study folder (default ./harrowgate-night, or ./harrowgate-sorting for the sorting "
        "scenario, in the current folder)",
    )
    d.add_argument(
        "--no-pick-maps",
        action="store_true",
        help="leave the picked designs' pick maps out of the report (~25 s each)",
    )
    d.add_argument(
        "--no-tolerance",
        action="store_true",
        help="leave the first pick's tolerance table out of the report (~10 s to 1 min)",
    )
    d.set_defaults(func=_cmd_demo)

    add_study_parser(sub)
    return p


def _quiet_stdout() -> None:
    """Point stdout at the null device, so that the interpreter's last flush of a closed pipe
    does not print an error at exit."""

    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError):
        pass


def version_line() -> str:
    """``eddypull --version``: the installed distribution's version and the fast model's."""

    try:
        number = version("eddypull")
    except PackageNotFoundError:  # run from a checkout that was never installed
        number = "(not installed)"
    return f"eddypull {number} (fast model {MODEL_VERSION})"


#: Faults of the machine, not of the input: exit code 1 (a full disk, a read-only one, I/O).
_RUNTIME_ERRNOS = {errno.ENOSPC, errno.EDQUOT, errno.EROFS, errno.EIO}


def _warnings_to_stderr() -> None:
    """eddypull's own warnings (the storage's notes) as one line each on stderr."""

    log = logging.getLogger("eddypull")
    if not any(getattr(h, "_eddypull", False) for h in log.handlers):
        handler = logging.StreamHandler(sys.stderr)
        handler.setFormatter(logging.Formatter("eddypull: warning: %(message)s"))
        handler._eddypull = True
        log.addHandler(handler)
        log.propagate = False


def _storage_of(args):
    """The storage a command was pointed at (for an error's wording, password hidden)."""

    return (
        getattr(args, "storage", None)
        or os.environ.get("EDDYPULL_STORAGE_URL")
        or getattr(args, "location", None)
        or ""
    )


def main(argv=None) -> int:

    args = _parser().parse_args(argv)
    _warnings_to_stderr()
    try:
        return args.func(args)
    except StorageFault as err:  # a server down or refusing: the cause in one line
        print(f"eddypull: error: {err.problems[0]}", file=sys.stderr)
        return 1
    except DesignError as err:
        for line in err.problems:
            print(f"eddypull: error: {line}", file=sys.stderr)
        return 2
    except BrokenPipeError:  # `eddypull ... | head`: the reader has what it wanted
        _quiet_stdout()
        return 0
    except OSError as err:  # a folder that cannot be made, a full disk, no permission
        where = f"{err.filename}: " if err.filename else ""
        print(f"eddypull: error: {where}{err.strerror or err}", file=sys.stderr)
        return 1 if err.errno in _RUNTIME_ERRNOS else 2
    except KeyboardInterrupt:
        print("eddypull: stopped by Ctrl-C (SIGINT)", file=sys.stderr)
        return 130
    except Exception as err:
        if not is_storage_error(err):
            raise
        print(
            f"eddypull: error: {storage_fault(err, _storage_of(args)).problems[0]}", file=sys.stderr
        )
        return 1


if __name__ == "__main__":
    sys.exit(main())
