"""Where a study lives: the journal file's name in a study folder, and a database URL told from a
folder and put in the form the database layer reads."""

from __future__ import annotations

__all__ = ["JOURNAL", "is_url", "database_url"]

#: The journal file of a study folder.
JOURNAL = "journal.log"


def is_url(text) -> bool:
    return isinstance(text, str) and "://" in text


def database_url(url: str) -> str:
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
