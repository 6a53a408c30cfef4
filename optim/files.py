"""Safe file writing for study outputs and hand-offs.

Every file eddypull writes goes through here: written to a temporary file in the same folder,
flushed to disk, then renamed onto its name (``os.replace`` is atomic on POSIX), so a crash leaves
either the old file or the new one, never half of one. The file gets the mode any new file gets
(0666 less the umask), as the journal and the log do, not ``mkstemp``'s owner-only 0600. Paths
that come from a user (an export folder, a study name) are checked not to escape the folder they
belong in, and database URLs lose their password before they are printed, logged or written.
"""

from __future__ import annotations

import contextlib
import errno
import os
import re
import tempfile
from pathlib import Path

from sqlalchemy.engine import make_url

from models.errors import DesignError

__all__ = [
    "atomic_write_text",
    "atomic_write_bytes",
    "atomic_path",
    "safe_child",
    "safe_name",
    "redact_url",
    "redact_text",
]


def _umask() -> int:
    """The process umask, read without changing it where the system tells (Linux's
    /proc/self/status), else by setting and restoring it."""
    try:
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError, IndexError):
        pass
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


@contextlib.contextmanager
def atomic_path(path):
    """Yield a temporary path beside ``path``; on success it replaces ``path`` atomically.

    For writers that want a file name (ezdxf's ``saveas``, matplotlib's ``savefig``). On an
    exception the temporary file is removed and ``path`` is left as it was.
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    try:
        fd, tmp = tempfile.mkstemp(
            prefix=f".{path.name}.", suffix=".tmp" + path.suffix, dir=path.parent
        )
    except OSError as err:
        raise _folder_error(err, path, None) from None
    try:
        try:
            os.fchmod(fd, 0o666 & ~_umask())  # mkstemp makes it owner-only; a colleague reads it
        finally:
            os.close(fd)
        yield Path(tmp)
        with open(tmp, "rb+") as fh:
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException as err:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        if isinstance(err, OSError) and err.filename in (None, tmp, str(path)):
            raise _folder_error(err, path, tmp) from None
        raise


#: A folder that takes no file: full, read-only, not ours, failing.
_FOLDER_ERRNOS = {errno.ENOSPC, errno.EDQUOT, errno.EROFS, errno.EACCES, errno.EPERM, errno.EIO}


def _folder_error(err: OSError, path: Path, tmp) -> OSError:
    """An error writing ``path`` (through its temporary file ``tmp``) that names its folder and
    the file, not the temporary one; other errors unchanged."""
    if err.errno not in _FOLDER_ERRNOS:
        return err
    return OSError(err.errno, f"cannot write {path.name} there ({err.strerror})", str(path.parent))


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


_QUERY_SECRET = re.compile(r"(?i)(password|passwd|pwd)=[^&\s]*")
_USERINFO = re.compile(r"(://[^:/@\s]*):[^\s]*@")


def redact_url(url: str) -> str:
    """The storage URL with any password replaced by '***' (safe to print, log and write).

    Parsed as the database layer parses it (a password may hold '/', '#', '?' unencoded), with a
    plain pattern as the fallback for text that does not parse at all.
    """
    if not isinstance(url, str) or "://" not in url:
        return url
    out = url
    try:
        parsed = make_url(url)
        if parsed.password is not None:
            out = parsed.render_as_string(hide_password=True)
    except Exception:  # not a URL the database layer reads: hide everything after user name
        out = _USERINFO.sub(r"\1:***@", url)
    return _QUERY_SECRET.sub(r"\1=***", out)


def redact_text(text: str, url) -> str:
    """``text`` (an error message, a log line) with the password of ``url`` replaced by '***'."""
    text = str(text)
    if isinstance(url, str) and "://" in url:
        try:
            password = make_url(url).password
        except Exception:
            password = None
        if password:
            text = text.replace(str(password), "***")
        text = text.replace(url, redact_url(url))
    return _USERINFO.sub(r"\1:***@", _QUERY_SECRET.sub(r"\1=***", text))
