"""Install and run anywhere: the demo ships as package data and writes in the current folder, a
study's folder follows its study file (not the current folder), one hand-off folder rule, and
every output honours the umask.

The non-editable install itself (``pip install .`` into a fresh venv, then ``eddypull demo``) is
checked by ``.ci/run``.
"""

from __future__ import annotations

import os
import sys
import tomllib
from importlib.resources import files
from pathlib import Path

import pytest

from optim.cli import main
from optim.demo import DEMO_DESIGN, DEMO_STUDY
from optim.files import atomic_path, atomic_write_text
from optim.morning.outputs import handoff_folder
from optim.study.run import study_folder
from optim.study.spec import load_study_spec
from tests.conftest import ROOT
from tests.optim.study.test_study import QUICK, _study_file


def test_demo_files_are_package_data():
    package = files("optim.demo")
    assert (package / "demo_study.toml").is_file() and (package / "demo_design.toml").is_file()
    assert DEMO_STUDY.parent == DEMO_DESIGN.parent == Path(str(package))
    declared = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    assert "*.toml" in declared["tool"]["setuptools"]["package-data"]["optim.demo"]
    spec = load_study_spec(DEMO_STUDY)  # its relative design = "demo_design.toml" resolves
    assert spec.name == "harrowgate-night"
    # One copy only: no demo file left in the source tree's studies/ folder.
    assert not list(ROOT.glob("studies/demo_*.toml"))


def _fake_run(seen):
    def run_study(spec, folder, **_):
        seen.append(Path(folder))
        return {"errors": ["stopped by the test"]}

    return run_study


def test_demo_writes_in_the_current_folder(tmp_path, monkeypatch, capsys):
    seen = []
    monkeypatch.setattr(sys.modules["optim.cli.main"], "run_study", _fake_run(seen))
    monkeypatch.chdir(tmp_path)
    assert main(["demo", "--trials", "1"]) == 1
    assert seen == [tmp_path / "harrowgate-night"]
    assert main(["demo", "--trials", "1", "--out", "elsewhere"]) == 1
    assert seen[-1] == Path("elsewhere")
    assert not (DEMO_STUDY.parent / "harrowgate-night").exists()
    assert not (DEMO_STUDY.parent / "studies").exists()
    capsys.readouterr()


def test_study_folder_follows_the_study_file_not_the_current_folder(tmp_path, monkeypatch):
    spec = load_study_spec(_study_file(tmp_path, "washer-b", QUICK))
    monkeypatch.chdir(tmp_path)
    here = study_folder(spec, Path("washer-b.toml"))
    other = tmp_path / "other"
    other.mkdir()
    monkeypatch.chdir(other)
    assert study_folder(spec, Path("../washer-b.toml")) == here == tmp_path / "studies" / "washer-b"
    # A study file inside a `studies` folder keeps its outputs beside it.
    (tmp_path / "studies").mkdir()
    beside = tmp_path / "studies" / "washer-b.toml"
    assert study_folder(spec, beside) == tmp_path / "studies" / "washer-b"
    assert study_folder(spec, beside, Path("mine")) == Path("mine")


def test_study_run_names_its_folder_first(tmp_path, monkeypatch, capsys):
    path = _study_file(tmp_path, "washer-b", QUICK)
    other = tmp_path / "other"
    other.mkdir()
    monkeypatch.chdir(other)
    assert main(["study", "run", str(path), "--trials", "1", "--workers", "1"]) == 0
    first = capsys.readouterr().out.splitlines()[0]
    assert first == f"study folder: {tmp_path / 'studies' / 'washer-b'}"
    assert not (other / "studies").exists()


def test_one_hand_off_folder_rule(tmp_path):
    assert handoff_folder(tmp_path, 7) == tmp_path / "handoff-trial-7"
    assert handoff_folder(tmp_path, 7, "mine") == tmp_path / "mine"
    assert handoff_folder(tmp_path, 7, tmp_path / "abs") == tmp_path / "abs"


@pytest.mark.parametrize("umask", [0o022, 0o027, 0o077])
def test_every_output_honours_the_umask(tmp_path, umask):
    old = os.umask(umask)
    try:
        text = atomic_write_text(tmp_path / "front.csv", "a,b\n")
        with atomic_path(tmp_path / "plots" / "front.png") as tmp:
            tmp.write_bytes(b"png")  # a writer that reopens the temporary file by name
        journal = tmp_path / "journal.log"
        journal.write_text("{}\n")  # what the journal and the log get: open() with the umask
    finally:
        os.umask(old)
    expected = journal.stat().st_mode & 0o777
    assert expected == 0o666 & ~umask
    for path in (text, tmp_path / "plots" / "front.png"):
        assert path.stat().st_mode & 0o777 == expected, path
