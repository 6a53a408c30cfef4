"""Storage errors in one line: the storage (password hidden), the server's host and port, the
database, the server's or driver's own words and what to do; never optuna's generic sentence
about the commit (its cause is in the exception's ``__cause__``).

A storage that fails at run time (a server down or refusing, a lost connection) is a
``StorageFault`` (the CLI's exit code 1); a malformed URL is bad input (a DesignError, exit 2).
"""

from __future__ import annotations

import re

from sqlalchemy.engine import make_url

from optim.files import redact_text, redact_url
from optim.study.location import database_url, is_url

__all__ = ["StorageFault", "is_storage_error", "storage_fault"]


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
        u = make_url(database_url(location))
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
