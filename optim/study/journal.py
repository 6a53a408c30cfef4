"""The journal file of a study folder, made safe against damaged records.

POSIX promises no atomic append to a regular file: a writer killed inside its write (or a full
disk) leaves a torn record, and optuna's lock is released 30 s later to the next writer. So
every record is written through ``journal_backend``, which, under the lock, starts a record on
a new line when the file does not end in one; and every reader (``optim.study.ledger``'s index
and ledger, the columns of ``status``/``front``/``export``, optuna's journal storage through the
same backend) reads records with ``segments``: a line that does not parse is cut before each
record start (``{"op_code":``, which cannot occur inside a JSON string), a damaged record is
skipped and listed, and a damaged trial record of a study still counts as that study's trial,
read as a failed trial (``placeholder_log``) with its reason, so that no later trial changes its
number and every reader agrees on the numbers.

Also here: the journal's lock (``JournalLock``: a dead writer's lock broken at once), a torn last
record set aside before a run (``repair_journal``), the one line on what a reader skipped
(``journal_damage_note``) and ``eddypull study repair``'s rewrite (``rewrite_journal``).
"""

from __future__ import annotations

import json
import logging
import os
import re
import shutil
import socket
import time
import uuid
from pathlib import Path

from optuna.storages.journal import JournalFileBackend

from models.errors import DesignError
from optim.files import atomic_write_bytes
from optim.study.location import JOURNAL
from optim.study.records import RECORD_ATTR

__all__ = [
    "JournalLock",
    "decode_trial",
    "is_trial_of",
    "is_whole",
    "journal_backend",
    "journal_damage_note",
    "journal_file_class",
    "placeholder_log",
    "repair_journal",
    "rewrite_journal",
    "segments",
    "split_line",
]

#: optuna journal operation codes (optuna.storages.journal JournalOperation), as stored.
CREATE_STUDY, DELETE_STUDY, SET_STUDY_USER_ATTR, SET_STUDY_SYSTEM_ATTR, CREATE_TRIAL = 0, 1, 2, 3, 4
#: How optuna's file backend writes a CREATE_TRIAL record (compact JSON, op_code first).
_TRIAL_PREFIX = b'{"op_code":4,'
_STUDY_ID = re.compile(rb'"study_id":(\d+)')


#: The start of every journal record (optuna's file backend writes compact JSON, op_code first).
#: Inside a record it cannot occur in a string (a quote there is written \\"), so a reader
#: resynchronises on it after damaged bytes.
_OP_PREFIX = b'{"op_code":'


def split_line(line: bytes) -> list[tuple[int, bytes]]:
    """A journal line as its records: (offset in the line, bytes). A line that parses, or holds
    one record start at most, is one record; a line that does not parse is cut before every
    record start after its first byte (a torn record with a whole one glued on after it)."""
    if line.find(_OP_PREFIX, 1) < 0:
        return [(0, line)]
    try:
        json.loads(line)
        return [(0, line)]
    except ValueError:
        pass
    starts = [0] + [m.start() for m in re.finditer(re.escape(_OP_PREFIX), line) if m.start() > 0]
    ends = starts[1:] + [len(line)]
    return [(a, line[a:b]) for a, b in zip(starts, ends, strict=True)]


def segments(fh, pos: int):
    """(byte offset, record bytes) of every whole line of ``fh`` from ``pos`` (at a record's
    start), split by ``split_line``; a last line without its newline is left (being written, or
    torn)."""
    fh.seek(pos)
    for line in fh:
        if not line.endswith(b"\n"):
            return
        for k, seg in split_line(line):
            yield pos + k, seg
        pos += len(line)


def damaged_reason(offset: int, length: int) -> str:
    """The reason a trial whose record is damaged carries (its number is kept)."""
    return f"record damaged in the journal ({length} bytes at byte {offset}); not evaluated again"


def placeholder_log(study_id: int, offset: int, length: int) -> dict:
    """The record of a failed trial that stands in for a damaged one, so that later trials keep
    their numbers."""
    reason = damaged_reason(offset, length)
    return {
        "op_code": CREATE_TRIAL,
        "worker_id": "eddypull-damaged",
        "study_id": study_id,
        "state": 3,  # optuna TrialState.FAIL
        "value": None,
        "values": None,
        "datetime_start": None,
        "distributions": {},
        "params": {},
        "user_attrs": {RECORD_ATTR: {"reason": reason}},
        "system_attrs": {},
        "intermediate_values": {},
    }


def is_whole(seg: bytes) -> bool:
    """Whether a record parses as a JSON object."""
    try:
        return isinstance(json.loads(seg), dict)
    except ValueError:
        return False


def is_trial_of(line: bytes, study_id: int) -> bool:
    """Whether a journal line is a trial record of study ``study_id``."""
    return line.startswith(_TRIAL_PREFIX) and _is_study(line, study_id)


def decode_trial(seg: bytes, pos: int, study_id: int) -> dict:
    """A trial record decoded, or the failed trial that stands in for it when it is damaged."""
    try:
        log = json.loads(seg)
        if isinstance(log, dict):
            return log
    except ValueError:
        pass
    return placeholder_log(study_id, pos, len(seg))


def _is_study(line: bytes, study_id: int) -> bool:
    m = _STUDY_ID.search(line, 0, 400)
    return m is not None and int(m.group(1)) == study_id


class JournalLock:
    """The journal's lock file (``<journal>.lock``, created exclusively, as optuna's
    ``JournalFileOpenLock``), holding its holder's host and process id. A lock left by a process
    of this machine that has ended (a writer killed) is released at once with one line; one of
    another holder is released after ``grace_s`` seconds without change, with one line too
    (instead of optuna's repeated warnings)."""

    def __init__(self, journal, grace_s: float = 30.0):
        self._lock_file = str(journal) + ".lock"
        self.grace_s = grace_s
        self.me = f"{socket.gethostname()} {os.getpid()}"

    def acquire(self) -> bool:
        pause, waited_since, mtime, said = 0.001, time.monotonic(), None, False
        while True:
            try:
                fd = os.open(self._lock_file, os.O_CREAT | os.O_EXCL | os.O_WRONLY)
            except FileExistsError:
                holder = self._holder()
                if holder is not None and not _alive(holder):
                    self._break(f"was held by process {holder}, which has ended")
                    continue
                try:
                    now_mtime = os.stat(self._lock_file).st_mtime
                except OSError:
                    continue
                if now_mtime != mtime:
                    mtime, waited_since = now_mtime, time.monotonic()
                waited = time.monotonic() - waited_since
                if waited > self.grace_s:
                    self._break(f"was not released for {self.grace_s:.0f} s")
                    continue
                if waited > 10.0 and not said:
                    _warn(f"waiting for the journal's lock {self._lock_file} ({waited:.0f} s)")
                    said = True
                time.sleep(pause)
                pause = min(2 * pause, 0.5)
                continue
            try:
                os.write(fd, self.me.encode())
            finally:
                os.close(fd)
            return True

    def _holder(self) -> int | None:
        """The process id in the lock file when it names this machine, else None."""
        try:
            with open(self._lock_file, encoding="utf-8") as fh:
                host, _, pid = fh.read(200).partition(" ")
        except (OSError, ValueError):
            return None
        if host != socket.gethostname() or not pid.isdigit():
            return None
        return int(pid)

    def _break(self, why: str) -> None:
        try:
            self.release()
        except RuntimeError:  # another waiter broke it first
            return
        _warn(f"journal lock {Path(self._lock_file).name} {why}: released")

    def release(self) -> None:
        gone = f"{self._lock_file}.{uuid.uuid4().hex}.rename"
        try:
            os.rename(self._lock_file, gone)
            os.unlink(gone)
        except OSError:
            raise RuntimeError("the journal's lock was not held") from None


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def _warn(text: str) -> None:

    logging.getLogger("eddypull").warning(text)


def _journal_file_class():

    class _JournalFile(JournalFileBackend):
        """optuna's journal file backend, made safe against torn records.

        Writing: under the lock, a record is started on a new line when the file does not end
        in one (a writer killed in its write left a torn record), so the torn bytes stay a line
        of their own. Reading: damaged records are skipped (``split_line`` resynchronises on the
        next record start), a damaged trial record read as a failed trial (``placeholder_log``)
        so that trial ids stay what they were; ``damage`` lists the (offset, bytes) skipped."""

        def __init__(self, file_path: str):
            super().__init__(file_path, lock_obj=JournalLock(file_path))
            self.damage: dict[int, int] = {}

        def append_logs(self, logs: list) -> None:
            text = "\n".join(json.dumps(log, separators=(",", ":")) for log in logs) + "\n"
            data = text.encode("utf-8")
            self._lock.acquire()
            try:
                with open(self._file_path, "ab+") as fh:
                    size = fh.seek(0, os.SEEK_END)
                    if size:
                        fh.seek(size - 1)
                        if fh.read(1) != b"\n":
                            data = b"\n" + data
                    fh.write(data)
                    fh.flush()
                    os.fsync(fh.fileno())
            finally:
                self._lock.release()

        def read_logs(self, log_number_from: int):
            known = max(k for k in self._log_number_offset if k <= log_number_from)
            number = known
            with open(self._file_path, "rb") as fh:
                for pos, seg in segments(fh, self._log_number_offset[known]):
                    log = self._log_of(pos, seg)
                    if log is None:
                        continue
                    number += 1
                    self._log_number_offset[number] = pos + len(seg)
                    if number > log_number_from:
                        yield log

        def _log_of(self, pos: int, seg: bytes):
            try:
                log = json.loads(seg)
                if isinstance(log, dict):
                    return log
            except ValueError:
                pass
            self.damage[pos] = len(seg)
            m = _STUDY_ID.search(seg, 0, 400) if seg.startswith(_TRIAL_PREFIX) else None
            return placeholder_log(int(m.group(1)), pos, len(seg)) if m else None

    return _JournalFile


_JOURNAL_FILE = None


def journal_file_class():
    """The class of ``journal_backend`` (made on first use: optuna is imported late)."""
    global _JOURNAL_FILE
    if _JOURNAL_FILE is None:
        _JOURNAL_FILE = _journal_file_class()
    return _JOURNAL_FILE


def journal_backend(path):
    """optuna's file backend of the journal at ``path`` with eddypull's rules: torn records
    harmless to write after and read past."""
    return journal_file_class()(str(path))


#: How much of the journal's end is checked for a torn record [bytes] (records are ~1-2 kB).
TAIL_BYTES = 1 << 20


def repair_journal(path: Path) -> str | None:
    """Set a torn last record (no newline at its end: a writer killed mid-write, a full disk)
    aside from the journal at ``path``.

    Done under the journal's own lock, so that a writer of another process is never cut short;
    only the last ``TAIL_BYTES`` are read. The cut bytes are kept beside the journal in
    ``<name>.torn-<time>-<id>``. Returns a one-line description of what was done, or None if the
    journal ended with a whole line. Damaged whole lines, the last included, are left where they
    are: every reader skips them and says so (``journal_damage_note``).
    """
    path = Path(path)
    if not path.exists() or path.stat().st_size == 0:
        return None
    lock = JournalLock(path)
    lock.acquire()
    try:
        with open(path, "rb") as fh:
            size = fh.seek(0, os.SEEK_END)
            start = max(0, size - TAIL_BYTES)
            fh.seek(start)
            tail = fh.read()
        if tail.endswith(b"\n"):
            return None
        newline = tail.rfind(b"\n")
        cut = start + newline + 1 if newline >= 0 or start == 0 else start
        torn = tail[cut - start :]
        keep = path.with_name(
            f"{path.name}.torn-{time.strftime('%Y%m%dT%H%M%S')}-{uuid.uuid4().hex[:6]}"
        )
        try:
            keep.write_bytes(torn)
        except OSError as err:
            keep.unlink(missing_ok=True)  # no empty or partial copy left behind
            raise DesignError(
                f"storage {str(path)!r}: ends in a torn record of {len(torn)} bytes that cannot "
                f"be set aside ({err.strerror}); free space and run again"
            ) from None
        with open(path, "rb+") as fh:
            fh.truncate(cut)
            os.fsync(fh.fileno())
    finally:
        lock.release()
    return (
        f"storage {path.name}: cut {len(torn)} bytes of a torn last record at byte {cut} "
        f"(kept in {keep.name}); every whole record is kept"
    )


def journal_damage_note(path: Path, damage, advice: bool = True) -> str | None:
    """One line on the damaged records a reader skipped in the journal at ``path`` (``damage``:
    (offset, bytes) pairs): how many bytes at which offsets, and where they were saved (once,
    in ``<name>.damaged-<first offset>``, beside the journal). None when nothing was skipped."""
    damage = sorted(dict(damage).items())
    if not damage:
        return None
    path = Path(path)
    total = sum(n for _, n in damage)
    where = ", ".join(f"{n} at byte {o}" for o, n in damage[:5])
    if len(damage) > 5:
        where += f" and {len(damage) - 5} more"
    keep = path.with_name(f"{path.name}.damaged-{damage[0][0]}-{len(damage)}")
    try:
        if not keep.exists():
            with open(path, "rb") as fh:
                parts = []
                for offset, n in damage:
                    fh.seek(offset)
                    parts.append(fh.read(n).rstrip(b"\n") + b"\n")
            atomic_write_bytes(keep, b"".join(parts))
        saved = f"saved in {keep.name}"
    except OSError as err:
        saved = f"not saved: {err.strerror or err}"
    return (
        f"storage {path.name}: skipped {len(damage)} damaged record(s), {total} bytes ({where}; "
        f"{saved}); every whole record is read, a damaged trial is kept as a failed one"
        + (f"; 'eddypull study repair {path.parent}' writes a clean journal" if advice else "")
    )


def rewrite_journal(folder) -> str:
    """``eddypull study repair``: write the study folder's journal again without its damaged
    records, the original kept beside it (``<name>.orig-<time>``). A damaged trial record becomes
    the failed trial every reader already shows in its place (its number kept); other damaged
    records and a torn last record are dropped. Done under the journal's lock; runs on the
    study must be stopped first (their workers hold byte offsets into the file). Returns one
    line."""

    path = Path(folder) / JOURNAL
    if not path.exists():
        raise DesignError(f"study {str(folder)!r}: no {JOURNAL} there; give a study folder")
    lock = JournalLock(path)
    lock.acquire()
    try:
        out, skipped, kept_as_failed, end = [], [], 0, 0
        with open(path, "rb") as fh:
            for pos, seg in segments(fh, 0):
                end = pos + len(seg)
                try:
                    ok = isinstance(json.loads(seg), dict)
                except ValueError:
                    ok = False
                if ok:
                    out.append(seg if seg.endswith(b"\n") else seg + b"\n")
                    continue
                skipped.append((pos, len(seg)))
                m = _STUDY_ID.search(seg, 0, 400) if seg.startswith(_TRIAL_PREFIX) else None
                if m:
                    log = placeholder_log(int(m.group(1)), pos, len(seg))
                    out.append(json.dumps(log, separators=(",", ":")).encode() + b"\n")
                    kept_as_failed += 1
            size = fh.seek(0, os.SEEK_END)
        note = journal_damage_note(path, skipped, advice=False)
        clean = b"".join(out)
        if not skipped and size == end:
            return f"storage {path}: no damaged record; nothing to do"
        orig = path.with_name(f"{path.name}.orig-{time.strftime('%Y%m%dT%H%M%S')}")
        shutil.copy2(path, orig)
        atomic_write_bytes(path, clean)
    finally:
        lock.release()
    torn = f"; a torn last record of {size - end} bytes dropped" if size > end else ""
    return (
        f"storage {path}: rewritten with {len(out)} records ({kept_as_failed} damaged trial(s) "
        f"kept as failed ones{torn}); the original is kept in {orig.name}"
        + (f". {note}" if note else "")
    )
