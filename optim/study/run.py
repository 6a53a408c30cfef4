"""Run a study: workers as processes on the shared storage, progress, clean stop and resume.

The same code runs one worker, several worker processes and several machines: each machine runs
``eddypull study run`` with the same study file and storage; every worker is an independent
optuna worker (see optim.study.engine). The parent process only starts workers, restarts one that dies
(a killed worker loses the trial it was evaluating, nothing else), shows progress and stops them
on Ctrl-C or when the budget ends.
"""

from __future__ import annotations

import logging
import multiprocessing as mp
import multiprocessing.connection as mp_connection
import os
import signal
import socket
import sys
import time
import zlib
from pathlib import Path

import numpy as np

from models.errors import DesignError
from optim.files import redact_text, redact_url
from optim.study.engine import run_worker
from optim.study.ledger import JournalLedger, LedgerUnfit, open_ledger
from optim.study.pareto import minimisation_signs, with_row
from optim.study.records import RESULT_NAMES_ATTR, ErrorMessage, TrialMessage, WorkerConfig
from optim.study.sampler import derive_seed
from optim.study.storage import (
    FINGERPRINT_ATTR,
    JOURNAL,
    SPEC_ATTR,
    check_stored,
    create_or_load,
    is_storage_error,
    is_url,
    journal_damage_note,
    open_storage,
    release,
    repair_journal,
    storage_fault,
)

__all__ = ["study_folder", "run_study", "Progress", "prepare"]

#: A worker that dies is restarted at most this many times per run.
MAX_RESTARTS = 20
#: Study attribute: how many runs have started on the study (the run number of the next one).
RUNS_ATTR = "eddypull_runs"


def study_folder(spec, study_file: Path | None = None, out: Path | None = None) -> Path:
    """Where a study's outputs live: ``out`` if given; else anchored to the study file's own
    folder, whatever the current folder: ``<its folder>/<name>`` when that folder is named
    ``studies``, ``<its folder>/studies/<name>`` otherwise (and ``./studies/<name>`` with no
    study file). One study file run from two folders is one study."""
    if out is not None:
        return Path(out)
    if study_file is None:
        return Path.cwd() / "studies" / spec.name
    here = Path(study_file).resolve().parent
    return here / spec.name if here.name == "studies" else here / "studies" / spec.name


class Progress:
    """Counts of one run and the front of its feasible objective vectors."""

    def __init__(self, spec, start_count: int, budget_trials, deadline):
        self.spec = spec
        self.t0 = time.time()
        self.start_count = start_count
        self.budget_trials = budget_trials
        self.deadline = deadline
        self.done = self.failed = self.feasible = self.copies = 0
        self.first_finish = self.last_finish = None
        self.best = [None] * len(spec.objectives)
        self.signs = minimisation_signs(spec.directions)
        self.front = np.empty((0, len(spec.objectives)))

    def add(self, state, feasible, values, copied: bool = False):
        """Count one finished trial; keep the front of feasible ones (minimisation form). A
        ``copied`` trial (a repeat, not evaluated: optim.study.engine) is counted apart and
        left out of the rate."""
        self.done += 1
        if copied:
            self.copies += 1
        else:
            now = time.time()
            self.first_finish = now if self.first_finish is None else self.first_finish
            self.last_finish = now
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
        self.front = with_row(self.front, v)

    def rate(self) -> float | None:
        """Trials evaluated per second between this run's first and last evaluation (the rate
        ``study status`` gives over the whole study); None before two have been evaluated."""
        evaluated = self.done - self.copies
        if evaluated < 2 or self.last_finish <= self.first_finish:
            return None
        return (evaluated - 1) / (self.last_finish - self.first_finish)

    def line(self, final: bool = False) -> str:
        """The progress line; ``final``: the run's last, without what is left."""
        rate = self.rate()
        share = self.feasible / self.done if self.done else 0.0
        best = ", ".join(
            f"{o.name} {'-' if b is None else format(s * b, '.4g')}"
            for o, b, s in zip(self.spec.objectives, self.best, self.signs, strict=True)
        )
        if final and not self.done:
            return f"this run 0 trials; the study now {self.start_count} trials"
        if final:
            return (
                f"this run {self.done} trials"
                + (f" ({rate:.2f}/s)" if rate is not None else "")
                + f", feasible {100 * share:.0f} %, failed {self.failed}, its front "
                f"{len(self.front)}, its best {best}; the study now {self.start_count + self.done}"
                " trials ('eddypull study status' for its front)"
            )
        text = (
            f"{self.start_count + self.done} trials ({self.done} this run"
            + (f", {self.copies} repeats copied" if self.copies else "")
            + (f", {rate:.2f}/s evaluated" if rate is not None else "")
            + f"), feasible {100 * share:.0f} %, failed {self.failed}, "
            f"front {len(self.front)}; best {best}"
        )
        return f"{text}; {self._left(rate)}"

    def _left(self, rate) -> str:
        """What is left of the budget: the trials to go and the time they take, or the time."""
        left = []
        if self.budget_trials is not None:
            to_go = max(self.budget_trials - self.done, 0)
            eta = f", about {to_go / rate / 60:.1f} min" if rate else ""
            left.append(f"{to_go} of {self.budget_trials} trials to go{eta}")
        if self.deadline is not None:
            left.append(f"{max(self.deadline - time.time(), 0.0) / 60:.1f} min of time left")
        return " or ".join(left)


def prepare(spec, location, note=None):
    """Open (setting a torn last record aside) or create the study. Returns (ledger, where it
    is stored): ``optim.study.ledger``'s line to the study, which does not read its trials (a
    journal's existing study is read by one pass over its records' heads). ``note`` (a function
    of one line; default: a warning on stderr) hears what was set aside or skipped."""

    note = note or logging.getLogger("eddypull").warning
    if not is_url(str(location)):
        path = Path(location) / JOURNAL
        torn = repair_journal(path)
        if torn:
            note(torn)
        try:
            ledger = JournalLedger(path, spec.name)
        except (KeyError, LedgerUnfit):  # a new study, or a journal only optuna can follow
            ledger = None
        if ledger is not None:
            damaged = journal_damage_note(path, ledger.index.damage)
            if damaged:
                note(damaged)
        if ledger is not None and FINGERPRINT_ATTR in ledger.user_attrs:
            check_stored(ledger.user_attrs, ledger.directions, spec)
            if SPEC_ATTR not in ledger.user_attrs:  # its record was damaged: the same study's
                ledger.set_user_attr(SPEC_ATTR, spec.to_json())
            _result_names(ledger, spec)
            return ledger, str(path)
    storage, where = open_storage(location)
    study = create_or_load(storage, spec)
    _result_names(study, spec)
    release(study)
    return open_ledger(location, spec.name), where


def _result_names(study, spec) -> None:
    if RESULT_NAMES_ATTR not in study.user_attrs:
        study.set_user_attr(RESULT_NAMES_ATTR, list(spec.result_names))


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
    salt: int | None = None,
    total_trials: int | None = None,
) -> dict:
    """Run ``spec`` until the budget ends or Ctrl-C; return a summary dict.

    ``trials`` counts this run's trials on this machine; ``total_trials`` instead the study's
    total (the run makes what is missing, nothing when it is reached); ``minutes`` its wall
    time. At least one must be given. Stopped by a signal, the summary names it (``signal``)
    and gives the shell's ``exit_code`` (130 for SIGINT, 143 for SIGTERM, 129 for SIGHUP).

    Seeds: with a seed (``seed``, else ``[run] seed``) worker ``i``'s sampler is seeded from
    (seed, i, run number, restarts) only, so one worker repeats the same trials each time; with
    none, a per-process salt takes the seed's place. ``salt``, when given, is mixed in as well.
    """
    if trials is None and minutes is None and total_trials is None:
        raise DesignError("budget: give --trials, --minutes or --hours (or [run] in the file)")
    folder.mkdir(parents=True, exist_ok=True)
    location = storage_url if storage_url else folder
    log = _file_logger(folder)

    def note(line: str) -> None:  # what the storage set aside or skipped: stderr and run.log
        log.warning(line)
        print(f"eddypull: warning: {line}", file=sys.stderr)

    ledger, where = prepare(spec, location, note)
    start_count = ledger.n_trials
    if total_trials is not None:
        trials = max(total_trials - start_count, 0)
    run_number = int(ledger.user_attrs.get(RUNS_ATTR, 0))
    ledger.set_user_attr(RUNS_ATTR, run_number + 1)
    release(getattr(ledger, "storage", None) or getattr(ledger, "study", None))
    deadline = time.time() + 60.0 * minutes if minutes is not None else None
    progress = Progress(spec, start_count, trials, deadline)
    tty = sys.stdout.isatty() if tty is None else tty
    msg = (
        f"study {spec.name}: {start_count} trials so far; storage {where}; {workers} worker(s); "
        f"budget {_budget_words(trials, total_trials, start_count)}, "
        f"{f'{minutes:g} min' if minutes is not None else 'no time limit'}"
    )
    echo(
        f"study folder: {folder.resolve()}"
    )  # first: one study file run from anywhere is one folder
    echo(msg)
    log.info(msg)
    base_seed = seed if seed is not None else spec.run.get("seed")
    config = WorkerConfig(
        spec=spec.to_json(),
        location=str(location),
        deadline=deadline,
        sync_s=sync_s,
        evaluator=evaluator,
        parent_pid=os.getpid(),
    )
    pool = _WorkerPool(config, _split(trials, workers), progress, log, echo)
    pool.seed_parts = _seed_parts(base_seed, salt, run_number)
    signum = pool.run(tty) if trials != 0 else None
    if tty:
        sys.stdout.write("\n")
    end = progress.line(final=True)
    stopped = f"stopped by {_SIGNAL_WORDS.get(signum, f'signal {signum}')}: " if signum else ""
    stopped = stopped or ("stopped by an error (below): " if pool.errors else "")
    echo((stopped or "done: ") + end)
    log.info((stopped or "done: ") + end)
    return {
        "name": spec.name,
        "folder": str(folder),
        "storage": redact_url(str(location)) if is_url(str(location)) else str(location),
        "trials_before": start_count,
        "trials_this_run": progress.done,
        "failed_this_run": progress.failed,
        "feasible_this_run": progress.feasible,
        "trials_in_study": start_count + progress.done,
        "elapsed_s": time.time() - progress.t0,
        "interrupted": bool(signum),
        "signal": signal.Signals(signum).name if signum else None,
        "exit_code": 128 + signum if signum else 0,
        "restarts": pool.restarts,
        "errors": pool.errors,
    }


#: How a stop by each signal is named (the shell's exit code is 128 + its number).
_SIGNAL_WORDS = {
    signal.SIGINT: "Ctrl-C (SIGINT)",
    signal.SIGTERM: "SIGTERM (a kill or a shutdown)",
    signal.SIGHUP: "SIGHUP (its terminal closed)",
}


def _budget_words(trials, total_trials, start_count: int) -> str:
    """The trial budget in words: the study's total or this run's trials, and which."""
    if total_trials is not None:
        if trials == 0:
            return (
                f"{total_trials} trials in all, reached ({start_count} there): nothing to run "
                "(--more N adds N)"
            )
        return f"{total_trials} trials in all ({trials} to run; --more N adds N beyond)"
    if trials is None:
        return "no trial limit"
    return f"{trials} more trials ({start_count + trials} in all)"


class _WorkerPool:
    """The worker processes of one run on this machine.

    Worker ``index`` owns budget slot ``index``: its share of the trial budget (``quotas``), its
    count of trials started (a shared counter, one lock per worker) and its own pipe, on which it
    sends one message per recorded trial and, if it fails, one error line. A worker killed by a
    signal is restarted in the same slot (a new seed per generation) while the budget lasts; an
    error or a non-zero exit stops every worker.
    """

    def __init__(self, config: WorkerConfig, quotas: list, progress: Progress, log, echo):
        self.config = config
        self.quotas = quotas
        self.progress = progress
        self.log = log
        self.echo = echo
        #: what a worker's seed derives from, before (index, generation): see _seed_parts
        self.seed_parts: tuple = ()
        self.ctx = mp.get_context("spawn")
        self.stop = self.ctx.Event()
        self.procs: dict[int, mp.Process] = {}
        self.counters: dict[int, object] = {}
        self.readers: dict[object, int] = {}
        self.done = [0] * len(quotas)
        self.errors: list[str] = []
        self.reported_error = [False] * len(quotas)
        self.restarts = 0
        self.last_print = 0.0

    def start(self, index: int, generation: int) -> None:
        """Start the worker of slot ``index`` (``generation``: how many restarts so far)."""
        c = self.config.but(
            index=index,
            trials=self.quotas[index],
            seed=derive_seed(*self.seed_parts, index, generation),
        )
        counter = self.ctx.Value("q", self.done[index])  # this slot's trials so far
        self.counters[index] = counter  # kept alive until the child has attached to it
        reader, writer = self.ctx.Pipe(duplex=False)  # one pipe per worker: a kill blocks no other
        p = self.ctx.Process(target=_worker_entry, args=(c, writer, self.stop, counter))
        old = signal.signal(signal.SIGINT, signal.SIG_IGN)  # inherited: Ctrl-C is the parent's
        try:
            p.start()
        finally:
            signal.signal(signal.SIGINT, old)
        writer.close()
        self.procs[index] = p
        self.readers[reader] = index

    def receive(self, reader, index: int) -> None:
        """Read every waiting message of worker ``index``; forget its pipe once it is closed."""
        try:
            while reader.poll():
                msg = reader.recv()
                if isinstance(msg, TrialMessage):
                    self.done[index] += 1
                    self.progress.add(msg.state, msg.feasible, msg.values, copied=msg.copied)
                elif isinstance(msg, ErrorMessage):
                    self.reported_error[index] = True
                    if msg.text not in self.errors:
                        self.errors.append(msg.text)
                        self.log.error(msg.text)
                    self.stop.set()
        except (EOFError, OSError):
            self.readers.pop(reader, None)
            reader.close()

    def run(self, tty: bool) -> int | None:
        """Start every worker and serve them until all have ended. Returns the number of the
        signal that stopped the run (SIGINT: Ctrl-C, SIGTERM, SIGHUP), None if none did."""
        stopped_by = None
        previous = {sig: signal.getsignal(sig) for sig in (signal.SIGTERM, signal.SIGHUP)}
        for sig in previous:  # a terminal closed or a `kill`: stop like Ctrl-C, workers included
            signal.signal(sig, _interrupt)
        try:
            for i in range(len(self.quotas)):
                self.start(i, 0)
            while self.procs:
                for reader in mp_connection.wait(list(self.readers), timeout=0.5):
                    self.receive(reader, self.readers[reader])
                for index, p in list(self.procs.items()):
                    if not p.is_alive():
                        self._reap(index, p)
                self._show_progress(tty)
        except KeyboardInterrupt as stop:
            stopped_by = getattr(stop, "signum", signal.SIGINT)
            for sig in previous:  # a second signal must not break the stop either
                signal.signal(sig, signal.SIG_IGN)
            self.shutdown()
        finally:
            for sig, handler in previous.items():
                signal.signal(sig, handler)
            if stopped_by is not None:
                signal.signal(signal.SIGINT, signal.default_int_handler)
        return stopped_by

    def _reap(self, index: int, p) -> None:
        """A worker has ended: read its last messages, report how it ended, restart it if it was
        killed and its slot has budget left."""
        p.join()
        del self.procs[index]
        for reader, slot in list(self.readers.items()):
            if slot == index:
                self.receive(reader, index)
                self.readers.pop(reader, None)
                reader.close()
        code = p.exitcode
        if code is not None and code > 0 and not self.reported_error[index]:
            self.errors.append(f"worker {index} ended with exit code {code}")
            self.log.error(self.errors[-1])
            self.stop.set()
        if code is not None and code < 0 and not self.stop.is_set():
            why = (
                f"worker {index} was killed (signal {-code}); only the trial it was "
                "evaluating is lost"
            )
            self.log.warning(why)
            self.echo(why)
            if self._budget_left(index) and self.restarts < MAX_RESTARTS:
                self.restarts += 1
                self.start(index, self.restarts)

    def _budget_left(self, index: int) -> bool:
        """True while the run's time and slot ``index``'s share of the trials are not spent."""
        deadline = self.config.deadline
        quota = self.quotas[index]
        return (deadline is None or time.time() < deadline) and (
            quota is None or self.done[index] < quota
        )

    def _show_progress(self, tty: bool) -> None:
        """The progress line: rewritten in place each second on a terminal, else every 30 s."""
        now = time.time()
        if tty and now - self.last_print > 1.0:
            sys.stdout.write("\r" + self.progress.line()[:200].ljust(200))
            sys.stdout.flush()
            self.last_print = now
        elif not tty and now - self.last_print > 30.0:
            self.echo(self.progress.line())
            self.log.info(self.progress.line())
            self.last_print = now

    def shutdown(self) -> None:
        """Stop on Ctrl-C: every worker finishes its trial (a minute at most, then it is
        terminated) and its last messages are read."""
        self.stop.set()
        signal.signal(signal.SIGINT, signal.SIG_IGN)  # a second Ctrl-C must not break the stop
        for p in self.procs.values():
            p.join(timeout=60)
            if p.is_alive():
                p.terminate()
                p.join(timeout=5)
        for reader, index in list(self.readers.items()):
            self.receive(reader, index)


class _Stop(KeyboardInterrupt):
    """A stop by SIGTERM or SIGHUP, raised where the parent is, as Ctrl-C's KeyboardInterrupt."""

    def __init__(self, signum: int):
        super().__init__(signum)
        self.signum = signum


def _interrupt(signum, frame):
    raise _Stop(signum)


def _seed_parts(seed: int | None, salt: int | None, run_number: int) -> tuple:
    """What every worker seed of this run derives from: (seed, run number), the salt appended
    when one is given; without a seed, a salt of this process (host, pid, clock) in its place, so
    that unseeded runs started at once never propose the same trials."""
    if seed is None:
        own = zlib.crc32(f"{socket.gethostname()}:{os.getpid()}:{time.time_ns()}".encode())
        return (own if salt is None else salt, run_number, 1)
    return (int(seed), run_number, 0) + (() if salt is None else (int(salt),))


def _split(trials: int | None, workers: int) -> list:
    """Each worker's share of a trial budget (None: no budget)."""
    if trials is None:
        return [None] * workers
    return [trials // workers + (1 if i < trials % workers else 0) for i in range(workers)]


class _Sender:
    """The worker's end of its pipe with the ``put`` of a queue."""

    def __init__(self, conn):
        self.conn = conn

    def put(self, msg):
        self.conn.send(msg)


def _worker_entry(config: WorkerConfig, conn, stop, counter):
    """Process target: run the worker; report an unexpected error as one line, not a traceback.
    The message is written to the pipe before the process ends (a pipe write is synchronous)."""
    sender = _Sender(conn)
    code = 0
    try:
        run_worker(config, sender, stop, counter)
    except DesignError as err:
        sender.put(ErrorMessage(redact_text("; ".join(err.problems), config.location)))
        code = 3
    except Exception as err:  # reported once by the parent; the study itself is intact
        if is_storage_error(err):
            text = str(storage_fault(err, config.location, "a worker stopped"))
        else:
            text = redact_text(f"{type(err).__name__}: {err}", config.location)[:500]
        sender.put(ErrorMessage(text))
        code = 3
    finally:
        conn.close()
    sys.exit(code)


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
