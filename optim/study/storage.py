"""Where a study lives: the embedded journal file in the study folder (default) or a database URL.

* Embedded: ``<study folder>/journal.log``, optuna's append-only journal with a file lock, safe for
  several worker processes on one machine. Before it is opened a torn last line (a writer killed
  mid-write, a full disk) is cut off and kept beside it, so that the journal stays readable.
* Database: any URL optuna's RDB storage accepts; ``postgresql://`` is read as
  ``postgresql+psycopg://`` (the driver eddypull installs). Several machines share one study by
  running ``eddypull study run`` against the same URL.

The study's own definition (``StudySpec.to_json``) and its fingerprint are kept in the storage
as study attributes, so that ``status``, ``front`` and ``export`` work from the URL alone and a
resumed run with a changed search is refused. Passwords never leave this module unredacted.
"""

from __future__ import annotations

import json
import logging
import os
import re
import time
import uuid
from pathlib import Path

from models.errors import DesignError
from models.result import MODEL_VERSION
from optim.files import atomic_write_bytes, redact_text, redact_url, safe_child

__all__ = [
    "JOURNAL",
    "SPEC_ATTR",
    "FINGERPRINT_ATTR",
    "MODEL_ATTR",
    "is_url",
    "open_storage",
    "repair_journal",
    "rewrite_journal",
    "journal_damage_note",
    "check_stored",
    "create_or_load",
    "load_existing",
    "release",
    "StorageFault",
    "is_storage_error",
    "storage_fault",
]

JOURNAL = "journal.log"
SPEC_ATTR = "eddypull_spec"
FINGERPRINT_ATTR = "eddypull_fingerprint"
#: The fast model's version a study was recorded with (models.result.MODEL_VERSION); a study
#: from before it was recorded is of the first version.
MODEL_ATTR = "eddypull_model"
FIRST_MODEL_VERSION = "multiloop-1"

# optuna logs every trial at INFO; the study engine reports progress itself.
logging.getLogger("optuna").setLevel(logging.WARNING)


def is_url(text) -> bool:
    return isinstance(text, str) and "://" in text


def _database_url(url: str) -> str:
    """``postgres://`` (which the database layer no longer reads) and, when the psycopg2 driver
    is missing, ``postgresql://`` become ``postgresql+psycopg://`` (the driver eddypull installs)."""
    if url.startswith("postgres://"):
        return "postgresql+psycopg://" + url.split("://", 1)[1]
    if url.startswith("postgresql://"):
        try:
            import psycopg2  # noqa: F401
        except ImportError:
            return "postgresql+psycopg://" + url.split("://", 1)[1]
    return url


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
    from optim.study.ledger import JournalLock

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
    import shutil

    from optim.study.ledger import (
        _STUDY_ID,
        _TRIAL_PREFIX,
        JournalLock,
        placeholder_log,
        segments,
    )

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


class StorageFault(Exception):
    """A storage that fails at run time (a server down or refusing, a full disk): one line that
    names its cause (the CLI's exit code 1; bad input is a DesignError, exit code 2)."""

    def __init__(self, line: str):
        super().__init__(line)
        self.problems = [line]


#: What to do, by the server's or the driver's own words (first match).
_HINTS = (
    (
        r"refused|could not connect|timed? ?out",
        "is the server running on that host and accepting TCP/IP connections?",
    ),
    (
        r"password authentication failed|no password supplied|authentication",
        "check the user name and password (in the URL, EDDYPULL_STORAGE_URL or the password file)",
    ),
    (r"database \S+ does not exist", "create the database (createdb) or correct its name"),
    (r"resolve host|name or service not known|translate host", "check the host name"),
    (r"role \S+ does not exist", "check the user name"),
    (r"permission denied|must be owner", "grant the user the rights it needs on that database"),
    (
        r"relation \S+ does not exist|no such table",
        "the database holds no study yet: run 'eddypull study run' against it first",
    ),
    (
        r"closed the connection|terminating connection|connection (is )?(lost|closed)|shutdown",
        "the server went away: every recorded trial is kept; run the same command again once it "
        "is back",
    ),
)


def is_storage_error(err: BaseException) -> bool:
    """Whether ``err`` (or an exception it was raised from) is a database layer's error."""
    return any(_is_db(e) for e in _chain(err))


def _chain(err: BaseException) -> list:
    seen, out = set(), []
    while err is not None and id(err) not in seen:
        seen.add(id(err))
        out.append(err)
        err = err.__cause__ or err.__context__
    return out


def _is_db(err: BaseException) -> bool:
    module = type(err).__module__
    return module.startswith(("sqlalchemy", "psycopg", "sqlite3")) or (
        type(err).__name__ == "StorageInternalError"
    )


def _server_words(err: BaseException) -> str:
    """The server's or driver's own words from the deepest database error behind ``err``, on
    one line (never optuna's generic sentence about the commit)."""
    dbs = [e for e in _chain(err) if _is_db(e) and type(e).__name__ != "StorageInternalError"]
    e = dbs[-1] if dbs else err
    text = str(getattr(e, "orig", None) or e)
    text = text.split("(Background on this error", 1)[0].split("[SQL:", 1)[0]
    lines = [
        ln.strip() for ln in text.splitlines() if ln.strip() and not ln.strip().startswith("^")
    ]
    words = "; ".join(lines) or type(e).__name__
    return " ".join(words.split())[:300]


def _server_of(location: str) -> str:
    """host:port and database of a URL, for a message (no user, no password)."""
    try:
        from sqlalchemy.engine import make_url

        u = make_url(_database_url(location))
    except Exception:
        return "?"
    if u.host is None:
        return f"database {u.database}"
    port = u.port or {"postgresql": 5432, "mysql": 3306}.get(u.get_backend_name(), "")
    return f"server {u.host}:{port}, database {u.database}"


def storage_fault(err: BaseException, location, doing: str = "failed") -> StorageFault:
    """One line for a database error: the URL (password hidden), host and port, database, the
    server's own words and what to do."""
    words = redact_text(_server_words(err), location)
    hint = next((h for pattern, h in _HINTS if re.search(pattern, words, re.I)), None)
    if hint and hint.lower().rstrip("?") in words.lower():  # the driver said it already
        hint = None
    where = redact_url(str(location)) if is_url(str(location)) else str(location)
    server = f" ({_server_of(str(location))})" if is_url(str(location)) else ""
    return StorageFault(
        f"storage {where}{server}: {doing}: {words}" + (f"; {hint}" if hint else "")
    )


def _dispose_half_made(err: BaseException) -> None:
    """Close the connections of a database storage whose construction failed (optuna's
    RDBStorage checks its tables after making its engine; the engine would be left open)."""
    tb = err.__traceback__
    while tb is not None:
        engine = getattr(tb.tb_frame.f_locals.get("self"), "engine", None)
        if engine is not None and hasattr(engine, "dispose"):
            engine.dispose()
        tb = tb.tb_next


def _malformed_url(err: BaseException) -> bool:
    names = {type(e).__name__ for e in _chain(err)}
    return bool(names & {"ArgumentError", "NoSuchModuleError", "ValueError"})


def _rdb_storage(location: str, create: bool):
    """optuna's database storage. Two machines starting on a new database at once race to create
    its tables (the loser sees a unique-key violation): a failed first attempt is retried once the
    other has finished, a few times with growing pauses."""
    import optuna

    for attempt in range(5):
        try:
            return optuna.storages.RDBStorage(
                _database_url(location),
                engine_kwargs={"pool_pre_ping": True},
                skip_table_creation=not create,
            )
        except Exception as err:
            text = str(err)
            racing = "UniqueViolation" in text or "already exists" in text
            if not create or not racing or attempt == 4:
                raise
            time.sleep(0.5 * (attempt + 1))
    raise AssertionError("unreachable")


def open_storage(location, repair: bool = True, create: bool = True, notes=None):
    """An optuna storage for a study folder's journal (a Path) or a database URL (a str).

    Returns (storage, description) with the description safe to print. What a journal's
    reading set aside or skipped goes to ``notes`` (a list) when given, else to the warnings.
    """

    if is_url(location):
        try:
            storage = _rdb_storage(location, create)
        except Exception as err:  # sqlalchemy/driver errors: one line, no password
            _dispose_half_made(err)
            if re.search(
                r"(relation|table:?) \W?version_info\W? does not exist|no such table: "
                r"version_info",
                _server_words(err),
            ):
                raise DesignError(
                    f"storage = {redact_url(location)!r}: the database holds no study yet "
                    "(none of optuna's tables)"
                ) from None
            if _malformed_url(err):
                raise DesignError(
                    f"storage = {redact_url(location)!r}: not a database URL that can be used "
                    f"({redact_text(_server_words(err), location)[:200]}); write it as "
                    "postgresql://USER@HOST:PORT/DATABASE"
                ) from None
            if "unable to open database file" in _server_words(err):  # SQLite: a bad path
                raise DesignError(
                    f"storage = {redact_url(location)!r}: the database file cannot be opened "
                    "(no such folder, or no permission)"
                ) from None
            raise storage_fault(err, location, "cannot be opened") from None
        return storage, redact_url(location)
    folder = Path(location)
    folder.mkdir(parents=True, exist_ok=True)
    path = safe_child(folder, JOURNAL)
    note = repair_journal(path) if repair else None
    from optuna.storages.journal import JournalStorage

    from optim.study.ledger import journal_backend

    backend = journal_backend(path)
    storage = JournalStorage(backend)
    for line in (note, journal_damage_note(path, backend.damage.items())):
        if line and notes is not None:
            notes.append(line)
        elif line:
            logging.getLogger("eddypull").warning(line)
    return storage, str(path)


def create_or_load(storage, spec):
    """The optuna study of ``spec`` in ``storage``: created with its definition, or loaded and
    checked against it (a changed search, objectives or constraints is refused)."""
    import optuna

    optuna.logging.set_verbosity(optuna.logging.WARNING)
    study = optuna.create_study(
        study_name=spec.name,
        storage=storage,
        directions=spec.directions,
        load_if_exists=True,
    )
    check_stored(study.user_attrs, [d.name.lower() for d in study.directions], spec)
    if FINGERPRINT_ATTR not in study.user_attrs:
        study.set_user_attr(SPEC_ATTR, spec.to_json())
        study.set_user_attr(FINGERPRINT_ATTR, spec.fingerprint())
        study.set_user_attr(MODEL_ATTR, MODEL_VERSION)
    return study


def check_stored(attrs: dict, directions: list[str], spec) -> None:
    """Refuse to resume a stored study (its attributes and directions) with ``spec`` when the
    model version, the search, objectives or constraints, or the directions differ."""
    fp = spec.fingerprint()
    recorded = attrs.get(MODEL_ATTR, FIRST_MODEL_VERSION)
    if FINGERPRINT_ATTR in attrs and recorded != MODEL_VERSION:
        raise DesignError(
            f"name = {spec.name!r}: this study was recorded with model {recorded} and this "
            f"eddypull evaluates with {MODEL_VERSION}, whose results mean different things; "
            "they are not mixed: give the study a new name (or a new folder)"
        )
    if FINGERPRINT_ATTR in attrs and attrs[FINGERPRINT_ATTR] != fp:
        changed = changed_keys(attrs.get(SPEC_ATTR), spec.to_json())
        raise DesignError(
            f"name = {spec.name!r}: a study of that name already exists in this storage with a "
            f"different {changed or 'base design, search, objectives or constraints'}; give the "
            "study a new name (or put the file back as it was)"
        )
    if list(directions) != list(spec.directions):
        raise DesignError(
            f"name = {spec.name!r}: the stored study optimises other directions; use a new name"
        )


#: The parts of a study's definition its fingerprint covers, as the file names them.
_DEFINING = {
    "base": "base design",
    "search": "[search]",
    "objectives": "[objectives]",
    "robust": "[robust]",
    "constraints": "[constraints]",
    "parts": "[[parts]]",
}


def changed_keys(stored, now: dict) -> str:
    """What differs between a stored definition (``StudySpec.to_json``, maybe None) and
    ``now``: e.g. "[search] frequency_Hz (low 100 -> 200), ring_depth_mm (added)"; "" when the
    stored one is missing or nothing named differs."""
    if not isinstance(stored, dict):
        return ""
    out = []
    for key, label in _DEFINING.items():
        a, b = stored.get(key), now.get(key)
        if a == b:
            continue
        if isinstance(a, dict) and isinstance(b, dict):
            names = [k for k in sorted(set(a) | set(b)) if a.get(k) != b.get(k)]
            items = [_change(k, a.get(k), b.get(k)) for k in names[:6]]
            if key == "objectives" and not names:
                items = ["their order"]
            out.append(f"{label} " + ", ".join(items) + (" ..." if len(names) > 6 else ""))
        else:
            out.append(label)
    if stored.get("run", {}).get("isothermal", False) != now.get("run", {}).get(
        "isothermal", False
    ):
        out.append("[run] isothermal")
    return "; ".join(out)


def _change(name: str, was, now) -> str:
    if was is None:
        return f"{name} (added)"
    if now is None:
        return f"{name} (removed)"
    if isinstance(was, dict) and isinstance(now, dict):
        keys = [k for k in sorted(set(was) | set(now)) if was.get(k) != now.get(k)]
        return f"{name} (" + ", ".join(f"{k} {was.get(k)} -> {now.get(k)}" for k in keys) + ")"
    return f"{name} ({was} -> {now})"


def load_existing(location, name: str | None = None):
    """Open a finished or running study from its folder or URL: (study, spec dict, description).

    A folder holds one study; a URL may hold several, chosen by ``name``.
    """
    import optuna

    if not is_url(location):
        folder = Path(location)
        if not (folder / JOURNAL).exists():
            raise DesignError(
                f"study {str(location)!r}: no {JOURNAL} there; give a study folder or a URL"
            )
    notes: list[str] = []
    storage, where = open_storage(location, repair=False, create=False, notes=notes)
    try:
        try:
            summaries = optuna.get_all_study_summaries(storage, include_best_trial=False)
        except DesignError:
            raise
        except Exception as err:  # a server down, a database without optuna's tables
            raise storage_fault(err, location, "holds no study that can be read") from None
        names = [s.study_name for s in summaries]
        if not names:
            raise DesignError(f"study {where!r}: the storage holds no study")
        if name is None:
            if len(names) > 1:
                raise DesignError(
                    f"study {where!r}: holds {len(names)} studies ({', '.join(names)}); pick "
                    "one with --name"
                )
            name = names[0]
        elif name not in names:
            raise DesignError(f"--name {name!r}: not in {where!r}; it holds {', '.join(names)}")
        study = optuna.load_study(study_name=name, storage=storage)
        spec = study.user_attrs.get(SPEC_ATTR)
        if spec is None:
            raise DesignError(f"study {name!r} in {where!r}: not an eddypull study (no definition)")
    except BaseException:
        release(storage)
        raise
    for line in notes:  # said once the study is found (a file of nothing but damage is refused)
        logging.getLogger("eddypull").warning(line)
    return study, spec, where


def release(study_or_storage) -> None:
    """Close the database connections behind a study or storage (a no-op for a journal)."""
    storage = getattr(study_or_storage, "_storage", study_or_storage)
    backend = getattr(storage, "_backend", storage)
    engine = getattr(backend, "engine", None)
    if engine is not None:
        engine.dispose()
