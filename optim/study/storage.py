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

import logging
import re
import time
from pathlib import Path

import optuna
from optuna.storages.journal import JournalStorage

from models.errors import DesignError
from models.result import MODEL_VERSION
from optim.files import redact_text, redact_url, safe_child
from optim.study.journal import (
    journal_backend,
    journal_damage_note,
    repair_journal,
    rewrite_journal,
)
from optim.study.location import JOURNAL, database_url, is_url
from optim.study.storage_errors import (
    StorageFault,
    _dispose_half_made,
    _malformed_url,
    _server_words,
    is_storage_error,
    storage_fault,
)

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

SPEC_ATTR = "eddypull_spec"
FINGERPRINT_ATTR = "eddypull_fingerprint"
#: The fast model's version a study was recorded with (models.result.MODEL_VERSION); a study
#: from before it was recorded is of the first version.
MODEL_ATTR = "eddypull_model"
FIRST_MODEL_VERSION = "multiloop-1"

# optuna logs every trial at INFO; the study engine reports progress itself.
logging.getLogger("optuna").setLevel(logging.WARNING)


def _rdb_storage(location: str, create: bool):
    """optuna's database storage. Two machines starting on a new database at once race to create
    its tables (the loser sees a unique-key violation): a failed first attempt is retried once the
    other has finished, a few times with growing pauses."""

    for attempt in range(5):
        try:
            return optuna.storages.RDBStorage(
                database_url(location),
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
