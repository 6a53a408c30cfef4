"""The eddypull command line: evaluate, verify, materials, demo.

Exit codes: 0 success, 2 bad input (one line per problem, no traceback).
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from models.design import load_design
from models.errors import DesignError
from models.evaluate import evaluate
from optim.cli.usage import UsageError
from optim.jsonout import strict_json

__all__ = ["main"]


def _cmd_evaluate(args) -> int:
    from optim.cli.summary import format_result

    design = load_design(args.design)
    if args.sweep:
        from optim.morning.sweep import format_sweep, parse_sweep, plot_sweep, run_sweep

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
    result = evaluate(design, isothermal=args.isothermal)
    if args.json:
        print(strict_json(result.to_dict()))
    else:
        print(format_result(design, result))
    return 0


def _cmd_verify(args) -> int:
    from optim.morning.verify import run_verify

    design = load_design(args.design)
    out = run_verify(design, refine=args.refine)
    print(strict_json(out["json"]) if args.json else out["text"])
    return 0


def _cmd_materials(args) -> int:
    from optim.cli.summary import format_materials

    if args.json:
        from dataclasses import asdict

        from models.materials import MATERIALS

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
    from optim.cli.study import check_budget
    from optim.demo import SCENARIOS
    from optim.morning.outputs import export_trial, write_front
    from optim.study.run import run_study
    from optim.study.spec import load_study_spec
    from optim.study.storage import load_existing

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
        trials=args.trials,
        minutes=minutes,
    )
    for line in summary["errors"]:
        print(f"eddypull: error: {line}", file=sys.stderr)
    if summary["errors"]:
        return 1
    study, spec_json, where = load_existing(folder)
    out = write_front(study, spec_json, where, folder)
    for line in out["lines"]:
        print(line)
    first = next(iter(spec_json["objectives"]))
    from optim.cli.summary import CAUTION

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

    v = sub.add_parser("verify", help="check one design against the finite-element reference")
    v.add_argument("design", help="design TOML file")
    v.add_argument("--json", action="store_true", help="print one JSON object")
    v.add_argument("--refine", type=float, default=1.0, help="FEM mesh refinement (default 1)")
    v.set_defaults(func=_cmd_verify)

    m = sub.add_parser("materials", help="list the material library with every value's source")
    m.add_argument("--json", action="store_true", help="print one JSON object")
    m.set_defaults(func=_cmd_materials)

    from optim.demo import SCENARIOS

    d = sub.add_parser(
        "demo", help="run the demo study, then write its front, report and best design's hand-off"
    )
    d.add_argument("--minutes", type=float, help="time budget (default: the study file's)")
    d.add_argument("--trials", type=int, help="trial budget instead of the time budget")
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
    d.set_defaults(func=_cmd_demo)

    from optim.cli.study import add_study_parser

    add_study_parser(sub)
    return p


def _quiet_stdout() -> None:
    """Point stdout at the null device, so that the interpreter's last flush of a closed pipe
    does not print an error at exit."""
    import os

    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError):
        pass


def main(argv=None) -> int:
    args = _parser().parse_args(argv)
    try:
        return args.func(args)
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
        return 2


if __name__ == "__main__":
    sys.exit(main())
