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
import time
import uuid
from pathlib import Path

from models.errors import DesignError
from models.result import MODEL_VERSION
from optim.files import redact_text, redact_url, safe_child

__all__ = [
    "JOURNAL",
    "SPEC_ATTR",
    "FINGERPRINT_ATTR",
    "MODEL_ATTR",
    "is_url",
    "open_storage",
    "repair_journal",
    "check_stored",
    "create_or_load",
    "load_existing",
    "release",
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
    """Cut a torn or unreadable last record off the journal at ``path``.

    Done under the journal's own lock, so that a writer of another process is never cut short;
    only the last ``TAIL_BYTES`` are read. The cut bytes are kept beside the journal in
    ``<name>.torn-<time>-<id>``. Returns a one-line description of what was done, or None if the
    journal ended with a whole record. A journal damaged before its last record is left alone:
    opening it then fails with one line (``open_storage``).
    """
    from optuna.storages.journal import JournalFileOpenLock

    path = Path(path)
    if not path.exists() or path.stat().st_size == 0:
        return None
    lock = JournalFileOpenLock(str(path))
    lock.acquire()
    try:
        with open(path, "rb") as fh:
            size = fh.seek(0, os.SEEK_END)
            start = max(0, size - TAIL_BYTES)
            fh.seek(start)
            tail = fh.read()
        if tail.endswith(b"\n"):
            last = tail.rfind(b"\n", 0, len(tail) - 1) + 1
            try:
                json.loads(tail[last:])
                return None
            except ValueError:
                cut = start + last
        else:
            newline = tail.rfind(b"\n")
            if newline < 0 and start > 0:
                raise DesignError(
                    f"storage {str(path)!r}: its last {TAIL_BYTES} bytes hold no whole record; "
                    "the file is damaged (restore it from a copy)"
                )
            cut = start + newline + 1
        torn = tail[cut - start :]
        keep = path.with_name(
            f"{path.name}.torn-{time.strftime('%Y%m%dT%H%M%S')}-{uuid.uuid4().hex[:6]}"
        )
        try:
            keep.write_bytes(torn)
        except OSError as err:
            raise DesignError(
                f"storage {str(path)!r}: ends in a torn record that cannot be set aside "
                f"({err.strerror}); free space and run again"
            ) from None
        with open(path, "rb+") as fh:
            fh.truncate(cut)
            os.fsync(fh.fileno())
    finally:
        lock.release()
    return (
        f"storage {path.name}: cut {len(torn)} bytes of a torn last record "
        f"(kept in {keep.name}); every whole record is kept"
    )


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


def open_storage(location, repair: bool = True, create: bool = True):
    """An optuna storage for a study folder's journal (a Path) or a database URL (a str).

    Returns (storage, description) with the description safe to print.
    """

    if is_url(location):
        try:
            storage = _rdb_storage(location, create)
        except Exception as err:  # sqlalchemy/driver errors: one line, no password
            msg = str(err).splitlines()[0] if str(err) else type(err).__name__
            raise DesignError(
                f"storage = {redact_url(location)!r}: cannot be opened "
                f"({redact_text(msg, location)[:200]})"
            ) from None
        return storage, redact_url(location)
    folder = Path(location)
    folder.mkdir(parents=True, exist_ok=True)
    path = safe_child(folder, JOURNAL)
    note = repair_journal(path) if repair else None
    from optuna.storages.journal import JournalFileBackend, JournalFileOpenLock, JournalStorage

    backend = JournalFileBackend(str(path), lock_obj=JournalFileOpenLock(str(path)))
    try:
        storage = JournalStorage(backend)
    except (ValueError, json.JSONDecodeError) as err:
        raise DesignError(
            f"storage {str(path)!r}: cannot be read, a record before the last is damaged "
            f"({str(err).splitlines()[0][:120]}); restore the file from a copy"
        ) from None
    if note:
        logging.getLogger("eddypull").warning(note)
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
        raise DesignError(
            f"name = {spec.name!r}: a study of that name already exists in this storage with a "
            "different base design, search, objectives or constraints; give the study a new name"
        )
    if list(directions) != list(spec.directions):
        raise DesignError(
            f"name = {spec.name!r}: the stored study optimises other directions; use a new name"
        )


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
    storage, where = open_storage(location, repair=False, create=False)
    try:
        try:
            summaries = optuna.get_all_study_summaries(storage, include_best_trial=False)
        except DesignError:
            raise
        except Exception as err:  # e.g. a database without optuna's tables
            why = str(err).splitlines()[0] if str(err) else type(err).__name__
            raise DesignError(
                f"study {where!r}: holds no study that can be read ({redact_text(why, location)[:160]})"
            ) from None
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
    return study, spec, where


def release(study_or_storage) -> None:
    """Close the database connections behind a study or storage (a no-op for a journal)."""
    storage = getattr(study_or_storage, "_storage", study_or_storage)
    backend = getattr(storage, "_backend", storage)
    engine = getattr(backend, "engine", None)
    if engine is not None:
        engine.dispose()
