"""Run a study: workers as processes on the shared storage, progress, clean stop and resume.

The same code runs one worker, several worker processes and several machines: each machine runs
``eddypull study run`` with the same study file and storage; every worker is an independent
optuna worker (see optim.engine). The parent process only starts workers, restarts one that dies
(a killed worker loses the trial it was evaluating, nothing else), shows progress and stops them
on Ctrl-C or when the budget ends.
"""

from __future__ import annotations

import logging
import multiprocessing as mp
import os
import queue as queue_mod
import sys
import time
from pathlib import Path

import numpy as np

from models.errors import DesignError
from optim.engine import RESULT_NAMES_ATTR, run_worker
from optim.files import redact_url
from optim.storage import create_or_load, is_url, open_storage, release

__all__ = ["study_folder", "run_study", "Progress", "prepare"]

#: A worker that dies is restarted at most this many times per run.
MAX_RESTARTS = 20


def study_folder(spec, study_file: Path | None = None, out: Path | None = None) -> Path:
    """Where a study's outputs live: ``out`` if given; else ``<studies>/<name>`` where
    ``<studies>`` is the folder of the study file when that folder is named ``studies``, and
    ``./studies`` otherwise."""
    if out is not None:
        return Path(out)
    if study_file is not None and Path(study_file).resolve().parent.name == "studies":
        return Path(study_file).resolve().parent / spec.name
    return Path.cwd() / "studies" / spec.name


class Progress:
    """Counts of one run and the front of its feasible objective vectors."""

    def __init__(self, spec, start_count: int, budget_trials, deadline):
        self.spec = spec
        self.t0 = time.time()
        self.start_count = start_count
        self.budget_trials = budget_trials
        self.deadline = deadline
        self.done = self.failed = self.feasible = 0
        self.best = [None] * len(spec.objectives)
        self.signs = np.array([1.0 if d == "minimize" else -1.0 for d in spec.directions])
        self.front = np.empty((0, len(spec.objectives)))

    def add(self, state, feasible, values):
        """Count one finished trial; keep the front of feasible ones (minimisation form)."""
        self.done += 1
        if state != "COMPLETE":
            self.failed += 1
            return
        if not feasible:
            return
        self.feasible += 1
        v = self.signs * np.asarray(values, float)
        for i, x in enumerate(v):
            if self.best[i] is None or x < self.best[i]:
                self.best[i] = float(x)
        f = self.front
        if len(f) and np.any(np.all(f <= v, axis=1) & np.any(f < v, axis=1)):
            return
        keep = ~(np.all(v <= f, axis=1) & np.any(v < f, axis=1))
        self.front = np.vstack([f[keep], v[None, :]])

    def line(self) -> str:
        elapsed = max(time.time() - self.t0, 1e-9)
        rate = self.done / elapsed
        share = self.feasible / self.done if self.done else 0.0
        best = ", ".join(
            f"{o.name} {'-' if b is None else format(s * b, '.4g')}"
            for o, b, s in zip(self.spec.objectives, self.best, self.signs, strict=True)
        )
        left = []
        if self.deadline is not None:
            left.append(max(self.deadline - time.time(), 0.0))
        if self.budget_trials is not None and rate > 0:
            left.append(max(self.budget_trials - self.done, 0) / rate)
        eta = f"{min(left) / 60:.1f} min left" if left else "no end set"
        return (
            f"{self.start_count + self.done} trials ({self.done} this run, {rate:.1f}/s), "
            f"feasible {100 * share:.0f} %, failed {self.failed}, front {len(self.front)}; "
            f"best {best}; {eta}"
        )


def prepare(spec, location):
    """Open (repairing a torn journal) or create the study. Returns (study, description, note)."""
    storage, where = open_storage(location)
    study = create_or_load(storage, spec)
    if RESULT_NAMES_ATTR not in study.user_attrs:
        study.set_user_attr(RESULT_NAMES_ATTR, list(spec.result_names))
    return study, where


def run_study(
    spec,
    folder: Path,
    storage_url: str | None = None,
    workers: int = 1,
    trials: int | None = None,
    minutes: float | None = None,
    seed: int | None = None,
    echo=print,
    tty: bool | None = None,
    sync_s: float | None = None,
    evaluator: str | None = None,
) -> dict:
    """Run ``spec`` until the budget ends or Ctrl-C; return a summary dict.

    ``trials`` counts this run's trials on this machine; ``minutes`` its wall time. At least one
    must be given. A resumed study adds to what it has.
    """
    if trials is None and minutes is None:
        raise DesignError("budget: give --trials, --minutes or --hours (or [run] in the file)")
    folder.mkdir(parents=True, exist_ok=True)
    location = storage_url if storage_url else folder
    log = _file_logger(folder)
    study, where = prepare(spec, location)
    start_count = len(study.get_trials(deepcopy=False))
    release(study)
    deadline = time.time() + 60.0 * minutes if minutes is not None else None
    progress = Progress(spec, start_count, trials, deadline)
    tty = sys.stdout.isatty() if tty is None else tty
    msg = (
        f"study {spec.name}: {start_count} trials so far; storage {where}; {workers} worker(s); "
        f"budget {trials if trials is not None else 'open'} trials, "
        f"{f'{minutes:g} min' if minutes is not None else 'no time limit'}"
    )
    echo(msg)
    log.info(msg)
    base_seed = seed if seed is not None else spec.run.get("seed")
    ctx = mp.get_context("spawn")
    q = ctx.Queue()
    stop = ctx.Event()
    counter = ctx.Value("q", 0)
    cfg = {
        "spec": spec.to_json(),
        "location": str(location),
        "deadline": deadline,
        "trials": trials,
        "sync_s": sync_s if sync_s is not None else _sync_period(start_count),
        "evaluator": evaluator,
    }
    procs: dict[int, mp.Process] = {}
    restarts = 0

    def start(index, generation):
        c = dict(cfg, index=index)
        if base_seed is not None:
            c["seed"] = int(base_seed) + index + 1000 * generation + start_count
        p = ctx.Process(target=_worker_entry, args=(c, q, stop, counter), daemon=False)
        p.start()
        procs[index] = p

    for i in range(workers):
        start(i, 0)
    interrupted = False
    errors: list[str] = []
    last_print = 0.0
    try:
        while procs:
            try:
                msg = q.get(timeout=0.5)
                if msg[0] == "trial":
                    progress.add(msg[1], msg[2], msg[3])
                elif msg[0] == "error":
                    if msg[1] not in errors:
                        errors.append(msg[1])
                        log.error(msg[1])
                    stop.set()
            except queue_mod.Empty:
                pass
            for index, p in list(procs.items()):
                if p.is_alive():
                    continue
                p.join()
                del procs[index]
                if p.exitcode is not None and p.exitcode < 0 and not stop.is_set():
                    budget_left = (deadline is None or time.time() < deadline) and (
                        trials is None or counter.value < trials
                    )
                    why = (
                        f"worker {index} was killed (signal {-p.exitcode}); only the trial it was "
                        "evaluating is lost"
                    )
                    log.warning(why)
                    echo(why)
                    if budget_left and restarts < MAX_RESTARTS:
                        restarts += 1
                        start(index, restarts)
            now = time.time()
            if tty and now - last_print > 1.0:
                sys.stdout.write("\r" + progress.line()[:200].ljust(200))
                sys.stdout.flush()
                last_print = now
            elif not tty and now - last_print > 30.0:
                echo(progress.line())
                log.info(progress.line())
                last_print = now
    except KeyboardInterrupt:
        interrupted = True
        stop.set()
        for p in procs.values():
            p.join(timeout=30)
            if p.is_alive():
                p.terminate()
    while True:  # messages still in flight
        try:
            msg = q.get_nowait()
        except (queue_mod.Empty, OSError, ValueError):
            break
        if msg[0] == "trial":
            progress.add(msg[1], msg[2], msg[3])
        elif msg[0] == "error" and msg[1] not in errors:
            errors.append(msg[1])
            log.error(msg[1])
    if tty:
        sys.stdout.write("\n")
    end = progress.line()
    echo(("stopped by Ctrl-C: " if interrupted else "done: ") + end)
    log.info(end)
    return {
        "name": spec.name,
        "folder": str(folder),
        "storage": redact_url(str(location)) if is_url(str(location)) else str(location),
        "trials_this_run": progress.done,
        "failed_this_run": progress.failed,
        "feasible_this_run": progress.feasible,
        "elapsed_s": time.time() - progress.t0,
        "interrupted": interrupted,
        "restarts": restarts,
        "errors": errors,
    }


def _sync_period(n_trials: int) -> float:
    """Seconds between imports of other workers' trials: short while the study is small (the
    sampler's early generations matter), longer as each import reads more."""
    return float(min(60.0, max(2.0, n_trials / 2000.0)))


def _worker_entry(cfg, q, stop, counter):
    """Process target: run the worker; report an unexpected error as one line, not a traceback."""
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)  # the parent stops workers through ``stop``
    try:
        run_worker(cfg, q, stop, counter)
    except DesignError as err:
        q.put(("error", "; ".join(err.problems)))
        os._exit(3)
    except Exception as err:  # reported once by the parent; the study itself is intact
        q.put(("error", redact_url(f"{type(err).__name__}: {err}")[:500]))
        os._exit(3)


def _file_logger(folder: Path) -> logging.Logger:
    log = logging.getLogger(f"eddypull.study.{folder}")
    if not log.handlers:
        handler = logging.FileHandler(folder / "run.log", encoding="utf-8")
        handler.setFormatter(logging.Formatter("%(asctime)s %(levelname)s %(message)s"))
        log.addHandler(handler)
        log.setLevel(logging.INFO)
        log.propagate = False
    return log


def budget_minutes(hours, minutes, spec) -> float | None:
    """The wall-time budget [min] from the command line, else from ``[run]``."""
    if hours is not None or minutes is not None:
        return (hours or 0.0) * 60.0 + (minutes or 0.0)
    run = spec.run
    if "hours" in run or "minutes" in run:
        return run.get("hours", 0.0) * 60.0 + run.get("minutes", 0.0)
    return None
