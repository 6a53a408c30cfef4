"""Process helpers for the study tests: children of a process from /proc (no procps needed),
and commands that never outlive their test."""

from __future__ import annotations

import contextlib
import os
import signal
import subprocess
import sys
from pathlib import Path

from tests.conftest import ROOT

ENV = {**os.environ, "PYTHONPATH": str(ROOT)}


def children(pid: int) -> list[int]:
    """Process ids whose parent is ``pid`` (read from /proc/<id>/stat)."""
    out = []
    for stat in Path("/proc").glob("[0-9]*/stat"):
        try:
            text = stat.read_text()
        except OSError:
            continue
        fields = text[text.rfind(")") + 2 :].split()
        if int(fields[1]) == pid:
            out.append(int(stat.parent.name))
    return out


def workers_of(pid: int) -> list[int]:
    """The study worker processes (spawned interpreters) of a `study run` process."""
    found = []
    for child in children(pid):
        try:
            if b"spawn_main" in Path(f"/proc/{child}/cmdline").read_bytes():
                found.append(child)
        except OSError:
            continue
    return found


@contextlib.contextmanager
def eddypull(*args, **kw):
    """Start `python -m optim.cli ARGS` in its own session; on leaving, kill whatever of it is
    still running (its workers included), so a failed or timed-out test leaves nothing behind."""
    proc = subprocess.Popen(
        [sys.executable, "-m", "optim.cli", *args],
        stdout=kw.pop("stdout", subprocess.PIPE),
        stderr=kw.pop("stderr", subprocess.PIPE),
        text=True,
        env=ENV,
        cwd=ROOT,
        start_new_session=True,
        **kw,
    )
    try:
        yield proc
    finally:
        with contextlib.suppress(ProcessLookupError, PermissionError):
            os.killpg(proc.pid, signal.SIGKILL)
        with contextlib.suppress(Exception):
            proc.communicate(timeout=10)


def run_eddypull(*args, timeout=300):
    """Run `python -m optim.cli ARGS` to the end (killed with its workers on a timeout)."""
    with eddypull(*args) as proc:
        out, err = proc.communicate(timeout=timeout)
        return subprocess.CompletedProcess(proc.args, proc.returncode, out, err)
