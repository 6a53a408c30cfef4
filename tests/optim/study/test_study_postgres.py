"""Studies on a real PostgreSQL server shared by several `study run` processes ("machines").

The server comes from Debian's packages: .ci/run starts one (.ci/postgres) and exports
EDDYPULL_TEST_POSTGRES_URL; without it these tests skip, unless EDDYPULL_REQUIRE_POSTGRES is set
(as in CI), where a missing server is a failure.
"""

from __future__ import annotations

import json
import os
import signal
import time
import uuid
from pathlib import Path

import pytest

from optim.study.storage import load_existing, release
from tests.conftest import DEMO
from tests.optim.study.test_study import QUICK
from tests.tools.proc_tools import eddypull, run_eddypull, workers_of

URL = os.environ.get("EDDYPULL_TEST_POSTGRES_URL")
PASSWORD = "pw-Zq7-never-printed"

if not URL:
    if os.environ.get("EDDYPULL_REQUIRE_POSTGRES"):
        raise RuntimeError("EDDYPULL_REQUIRE_POSTGRES is set but EDDYPULL_TEST_POSTGRES_URL is not")
    pytest.skip("no PostgreSQL server (set EDDYPULL_TEST_POSTGRES_URL)", allow_module_level=True)


def _with_password(url: str) -> str:
    """The same server with a password in the URL (the test server trusts loopback, so the
    password is accepted and ignored; what matters is that it is never written anywhere)."""
    scheme, rest = url.split("://", 1)
    user, host = rest.split("@", 1)
    return f"{scheme}://{user.split(':')[0]}:{PASSWORD}@{host}"


def _study(tmp_path: Path, name: str) -> Path:
    path = tmp_path / f"{name}.toml"
    path.write_text(f'name = "{name}"\ndesign = "{DEMO.as_posix()}"\n{QUICK}', encoding="utf-8")
    return path


@pytest.mark.slow
def test_two_machines_share_one_postgresql_study_without_loss_or_duplicates(tmp_path):
    name = f"pg-{uuid.uuid4().hex[:8]}"
    study_file = _study(tmp_path, name)
    url = _with_password(URL)
    args = [
        (
            "study",
            "run",
            str(study_file),
            "--storage",
            url,
            "--workers",
            "2",
            "--trials",
            "30",
            "--out",
            str(tmp_path / f"m{i}"),
            "--json",
        )
        for i in range(2)
    ]
    with eddypull(*args[0]) as p0, eddypull(*args[1]) as p1:
        procs = [p0, p1]
        outs = [p.communicate(timeout=600) for p in procs]
    reported = 0
    for p, (out, err) in zip(procs, outs, strict=True):
        assert p.returncode == 0, err
        assert PASSWORD not in out + err
        reported += json.loads(out.strip().splitlines()[-1])["trials_this_run"]
    assert reported == 60
    study, spec_json, where = load_existing(url, name)
    assert PASSWORD not in where
    trials = study.get_trials(deepcopy=False)
    release(study)
    assert len(trials) == 60  # none lost
    ids = [t.user_attrs["eddypull"]["id"] for t in trials]
    assert len(set(ids)) == 60  # none duplicated
    assert sorted(t.number for t in trials) == list(range(60))
    assert all(t.state.name in ("COMPLETE", "FAIL") for t in trials)
    workers = {t.user_attrs["eddypull"]["worker"] for t in trials}
    assert len(workers) >= 2  # both "machines" contributed (each ran up to two processes)
    for i in range(2):
        log = (tmp_path / f"m{i}" / "run.log").read_text()
        assert PASSWORD not in log and "ERROR" not in log


@pytest.mark.slow
def test_killed_worker_on_postgresql_loses_nothing_completed(tmp_path):
    name = f"pgkill-{uuid.uuid4().hex[:8]}"
    study_file = _study(tmp_path, name)
    args = (
        "study",
        "run",
        str(study_file),
        "--storage",
        URL,
        "--workers",
        "2",
        "--trials",
        "200",
        "--out",
        str(tmp_path / "o"),
        "--json",
    )
    kills, seen = 0, 0
    with eddypull(*args) as proc:
        deadline = time.time() + 300
        while time.time() < deadline and kills < 2 and proc.poll() is None:
            time.sleep(1.0)
            pids = workers_of(proc.pid)
            try:
                study = load_existing(URL, name)[0]
            except Exception:  # the study may not exist yet
                continue
            n = len(study.get_trials(deepcopy=False))
            release(study)
            assert n >= seen
            seen = n
            if pids and 8 * (kills + 1) < n < 150:
                try:
                    os.kill(pids[0], signal.SIGKILL)
                except ProcessLookupError:  # it had just finished its budget
                    continue
                kills += 1
        out, err = proc.communicate(timeout=600)
    assert proc.returncode == 0, err
    assert kills >= 1
    summary = json.loads(out.strip().splitlines()[-1])
    study = load_existing(URL, name)[0]
    trials = study.get_trials(deepcopy=False)
    release(study)
    assert not [t for t in trials if t.state.name == "RUNNING"]
    assert summary["trials_this_run"] <= len(trials) <= summary["trials_this_run"] + kills


@pytest.mark.slow
def test_password_never_reaches_outputs(tmp_path):
    name = f"pgpw-{uuid.uuid4().hex[:8]}"
    study_file = _study(tmp_path, name)
    url = _with_password(URL)
    folder = tmp_path / "o"
    texts = []
    for args in (
        ("study", "run", str(study_file), "--storage", url, "--trials", "12", "--out", str(folder)),
        ("study", "status", url, "--name", name),
        ("study", "status", url, "--name", name, "--json"),
        ("study", "front", url, "--name", name, "--out", str(folder)),
        ("study", "export", url, "--name", name, "--trial", "0", "--out", str(folder / "h")),
        (
            "study",
            "status",
            url.replace(PASSWORD, PASSWORD + "x").replace("/eddypull_test", "/no_such_db"),
        ),
    ):
        done = run_eddypull(*args, timeout=600)
        out, err = done.stdout, done.stderr
        texts.append(out + err)
        assert "Traceback" not in err
    assert "cannot be opened" in texts[-1]  # the bad URL: one line, still redacted
    for path in folder.rglob("*"):
        if path.is_file():
            texts.append(path.read_bytes().decode("utf-8", "replace"))
    assert any("***" in t for t in texts)  # the URL is shown, redacted
    assert all(PASSWORD not in t for t in texts)


@pytest.mark.slow
def test_status_and_front_beside_a_live_run_on_two_workers(tmp_path, capsys):
    """A study watched while two workers write to it: every `study status` and `study front`
    reads one consistent snapshot (no IndexError from trials that arrived meanwhile) and the
    counts only grow."""
    from optim.cli import main

    name = f"pglive-{uuid.uuid4().hex[:8]}"
    study_file = _study(tmp_path, name)
    args = ("study", "run", str(study_file), "--storage", URL, "--workers", "2")
    args += ("--minutes", "0.6", "--out", str(tmp_path / "o"), "--json")
    seen, reads, fronts = 0, 0, 0
    with eddypull(*args) as proc:
        while proc.poll() is None:
            capsys.readouterr()
            code = main(["study", "status", URL, "--name", name, "--json"])
            out, err = capsys.readouterr()
            if code == 2 and any(w in err for w in ("no study", "not an eddypull", ": not in")):
                time.sleep(0.5)
                continue
            assert code == 0, err
            n = json.loads(out)["trials"]
            assert n >= seen
            seen, reads = n, reads + 1
            if fronts < 2 and n > 5:
                front = ["study", "front", URL, "--name", name, "--out", str(tmp_path / f"f{n}")]
                assert main([*front, "--no-pick-maps", "--no-tolerance"]) == 0
                fronts += 1
        out, err = proc.communicate(timeout=120)
    assert proc.returncode == 0, err
    assert reads >= 5 and fronts == 2


class _Cable:
    """A TCP relay between eddypull and the server that can be pulled out and put back: the
    server as the study sees it stopped (every connection cut, new ones refused) and restarted."""

    def __init__(self, host: str, port: int):
        import socket

        self.upstream = (host, port)
        probe = socket.socket()
        probe.bind(("127.0.0.1", 0))
        self.port = probe.getsockname()[1]
        probe.close()
        self.conns: list = []
        self.listener = None

    def plug(self) -> None:
        import socket
        import threading

        self.listener = socket.socket()
        self.listener.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        self.listener.bind(("127.0.0.1", self.port))
        self.listener.listen(64)
        threading.Thread(target=self._accept, args=(self.listener,), daemon=True).start()

    def _accept(self, listener) -> None:
        import socket
        import threading

        while True:
            try:
                client, _ = listener.accept()
            except OSError:
                return
            server = socket.create_connection(self.upstream)
            self.conns += [client, server]
            for a, b in ((client, server), (server, client)):
                threading.Thread(target=_pump, args=(a, b), daemon=True).start()

    def pull(self) -> None:
        import socket

        self.listener.close()
        for c in self.conns:
            try:
                c.shutdown(socket.SHUT_RDWR)
            except OSError:
                pass
            c.close()
        self.conns = []


def _pump(a, b) -> None:
    try:
        while data := a.recv(65536):
            b.sendall(data)
    except OSError:
        pass


@pytest.mark.slow
def test_server_stopped_mid_run_then_restarted_loses_nothing(tmp_path):
    """The server goes away while two workers write: the run stops with one line naming the
    server, its words and what to do (exit code 1, never optuna's generic sentence), `status`
    says the same kind of line; once it is back, the study resumes with every trial it had."""
    from sqlalchemy.engine import make_url

    real = make_url(URL)
    cable = _Cable(real.host, real.port or 5432)
    cable.plug()
    url = real.set(host="127.0.0.1", port=cable.port).render_as_string(hide_password=False)
    name = f"pgdown-{uuid.uuid4().hex[:8]}"
    study_file = _study(tmp_path, name)
    out_dir = str(tmp_path / "o")
    args = ("study", "run", str(study_file), "--storage", url, "--workers", "2", "--out", out_dir)
    seen = 0
    with eddypull(*args, "--minutes", "3") as proc:
        deadline = time.time() + 120
        while seen < 8 and time.time() < deadline and proc.poll() is None:
            time.sleep(0.5)
            try:
                study = load_existing(URL, name)[0]
            except Exception:  # not created yet
                continue
            seen = len(study.get_trials(deepcopy=False))
            release(study)
        cable.pull()  # the server, as the run sees it, stops
        out, err = proc.communicate(timeout=180)
    assert proc.returncode == 1, (out, err)
    assert "Traceback" not in err and "An exception is raised during the commit" not in err
    (line,) = [e for e in err.splitlines() if e.startswith("eddypull: error:")][:1]
    assert f"(server 127.0.0.1:{cable.port}, database {real.database})" in line, line
    study = load_existing(URL, name)[0]
    before = study.get_trials(deepcopy=False)
    release(study)
    assert len(before) >= 8 and not [t for t in before if t.state.name == "RUNNING"]
    down = run_eddypull("study", "status", url, "--name", name)
    assert down.returncode == 1 and len(down.stderr.strip().splitlines()) == 1
    assert "Connection refused" in down.stderr and "commit" not in down.stderr
    cable.plug()  # back
    again = run_eddypull(*args, "--more", "3", "--json", timeout=300)
    assert again.returncode == 0, again.stderr
    study = load_existing(URL, name)[0]
    after = study.get_trials(deepcopy=False)
    release(study)
    assert len(after) == len(before) + 3
    assert [t.params for t in after[: len(before)]] == [t.params for t in before]
    cable.pull()
