"""Safe file writing for study outputs and hand-offs.

Every file eddypull writes goes through here: written to a temporary file in the same folder,
flushed to disk, then renamed onto its name (``os.replace`` is atomic on POSIX), so a crash leaves
either the old file or the new one, never half of one. Paths that come from a user (an export
folder, a study name) are checked not to escape the folder they belong in, and database URLs lose
their password before they are printed, logged or written.
"""

from __future__ import annotations

import contextlib
import os
import re
import tempfile
from pathlib import Path
from urllib.parse import urlsplit, urlunsplit

from models.errors import DesignError

__all__ = [
    "atomic_write_text",
    "atomic_write_bytes",
    "atomic_path",
    "safe_child",
    "safe_name",
    "redact_url",
]


@contextlib.contextmanager
def atomic_path(path):
    """Yield a temporary path beside ``path``; on success it replaces ``path`` atomically.

    For writers that want a file name (ezdxf's ``saveas``, matplotlib's ``savefig``). On an
    exception the temporary file is removed and ``path`` is left as it was.
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(
        prefix=f".{path.name}.", suffix=".tmp" + path.suffix, dir=path.parent
    )
    os.close(fd)
    try:
        yield Path(tmp)
        with open(tmp, "rb+") as fh:
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise


def atomic_write_bytes(path, data: bytes) -> Path:
    """Write ``data`` to ``path`` atomically (temporary file, fsync, rename). Returns the path."""
    path = Path(path)
    with atomic_path(path) as tmp, open(tmp, "wb") as fh:
        fh.write(data)
        fh.flush()
    return path


def atomic_write_text(path, text: str) -> Path:
    """Write ``text`` (UTF-8) to ``path`` atomically. Returns the path."""
    return atomic_write_bytes(path, text.encode("utf-8"))


_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._-]{0,99}$")


def safe_name(value, field: str) -> str:
    """Check a name that becomes a folder or file name: letters, digits, '.', '_', '-'; 1-100
    characters, not starting with '.'."""
    if not isinstance(value, str) or not _NAME.match(value) or value in (".", ".."):
        raise DesignError(
            f"{field} = {value!r}: must be 1-100 letters, digits, '.', '_' or '-', "
            "starting with a letter or digit"
        )
    return value


def safe_child(folder, name) -> Path:
    """``folder / name``, refused (DesignError) if it resolves outside ``folder``."""
    base = Path(folder).resolve()
    child = (base / name).resolve()
    if child != base and base not in child.parents:
        raise DesignError(f"path {str(name)!r}: must stay inside {str(base)!r}")
    return child


def redact_url(url: str) -> str:
    """The storage URL with any password replaced by '***' (safe to print, log and write)."""
    if not isinstance(url, str) or "://" not in url:
        return url
    try:
        parts = urlsplit(url)
    except ValueError:
        return re.sub(r"//[^@/]*@", "//***@", url)
    query = re.sub(r"(?i)(password|passwd|pwd)=[^&]*", r"\1=***", parts.query)
    netloc = parts.netloc
    if "@" not in netloc and query == parts.query:
        return url  # nothing secret; keep the URL exactly as given (sqlite:///x.db)
    if "@" in netloc:
        host = parts.hostname or ""
        if parts.port is not None:
            host = f"{host}:{parts.port}"
        user = parts.username or ""
        netloc = f"{user}:***@{host}" if parts.password is not None else f"{user}@{host}"
    # Query strings can carry a password too (e.g. ?password=...).
    return urlunsplit((parts.scheme, netloc, parts.path, query, parts.fragment))
