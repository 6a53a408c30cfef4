"""The command line: output, JSON fields, sweeps, plots and exit code 2 on bad input."""

from __future__ import annotations

import json

import pytest

from optim.cli import main
from tests.conftest import DEMO

JSON_FIELDS = [
    "pull_N",
    "pull_by_source_N",
    "target_loss_W",
    "ring_loss_W",
    "coil_loss_W",
    "coil_current_A",
    "coil_voltage_V",
    "ring_current_A",
    "ring_phase_deg",
    "core_peak_flux_density_T",
    "target_weight_N",
    "lift_ratio",
]


def test_evaluate_json_has_the_public_fields(capsys):
    assert main(["evaluate", str(DEMO), "--json", "--isothermal"]) == 0
    out = json.loads(capsys.readouterr().out)
    for key in JSON_FIELDS:
        assert key in out
    assert set(out["pull_by_source_N"]) == {"coil", "pole", "ring"}
    assert out["pull_N"] == pytest.approx(sum(out["pull_by_source_N"].values()), rel=1e-12)
    assert out["lift_ratio"] == pytest.approx(out["pull_N"] / out["target_weight_N"], rel=1e-12)


def test_evaluate_summary_is_readable(capsys):
    assert main(["evaluate", str(DEMO)]) == 0
    text = capsys.readouterr().out
    assert "pull" in text and "from ring" in text and "core peak flux" in text


def test_sweep_table_and_plot(tmp_path, capsys):
    png = tmp_path / "pull.png"
    assert main(["evaluate", str(DEMO), "--sweep", "gap_mm=0.3:2:4", "--plot", str(png)]) == 0
    lines = capsys.readouterr().out.strip().splitlines()
    assert lines[0].split()[0] == "gap_mm"
    assert len(lines) == 1 + 4 + 1
    assert png.stat().st_size > 1000


@pytest.mark.parametrize(
    "argv, message",
    [
        (["evaluate", "missing.toml"], "cannot be read"),
        (["evaluate", str(DEMO), "--sweep", "gap_mm=1:2"], "must be KEY=START:STOP:COUNT"),
        (["evaluate", str(DEMO), "--sweep", "gapp_mm=1:2:3"], "not a design key"),
        (["evaluate", str(DEMO), "--sweep", "gap_mm=-1:2:3"], "target.gap_mm = -1.0"),
        (["evaluate", str(DEMO), "--plot", "x.png"], "needs --sweep"),
    ],
)
def test_bad_input_exits_2_with_one_line(argv, message, capsys):
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert message in err
    assert "Traceback" not in err
    assert all(line.startswith("eddypull: error: ") for line in err.strip().splitlines())


def test_bad_design_file_lists_each_problem(tmp_path, capsys):
    text = (
        DEMO.read_text()
        .replace("gap_mm = 3.0", "gap_mm = -0.6")
        .replace("turns = 300", "turns = 0")
    )
    path = tmp_path / "bad.toml"
    path.write_text(text)
    assert main(["evaluate", str(path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 2
    assert any("target.gap_mm = -0.6" in e for e in err)
    assert any("coil.turns = 0" in e for e in err)


def test_solid_pole_is_refused_by_the_fast_model(tmp_path, capsys):
    text = DEMO.read_text().replace('material = "electrical-steel-m400"', 'material = "steel-1010"')
    path = tmp_path / "solid.toml"
    path.write_text(text)
    assert main(["evaluate", str(path)]) == 2
    err = capsys.readouterr().err
    assert "pole.conductivity_S_per_m" in err and "laminated poles only" in err


def test_materials_lists_sources(capsys):
    assert main(["materials"]) == 0
    text = capsys.readouterr().out
    assert "IEC 60028" in text and "aluminium-6061-t6" in text
    assert main(["materials", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["copper"]["conductivity"] == 58.0e6  # IEC 60028


def test_console_script_runs_as_a_process():
    import subprocess
    import sys

    proc = subprocess.run(
        [sys.executable, "-m", "optim.cli", "evaluate", "nope.toml"],
        capture_output=True,
        text=True,
        check=False,
    )
    assert proc.returncode == 2
    assert "Traceback" not in proc.stderr


def test_target_size_sweep_shows_the_sign_change(capsys):
    # The demo design swept over target radius: the pull turns to push as the target outgrows
    # the pole face (common practice, no source). The demo study itself is tested in
    # tests/optim/morning/test_morning.py.
    assert main(["evaluate", str(DEMO), "--isothermal", "--sweep", "target.radius_mm=2:14:13"]) == 0
    out = capsys.readouterr().out
    rows = [line.split() for line in out.splitlines() if line.strip()[:1].isdigit()]
    pulls = [float(r[1]) for r in rows if len(r) == 8]
    assert len(pulls) == 13
    assert pulls[0] > 0 > pulls[-1]


def test_json_output_is_strict_even_for_a_runaway(tmp_path, capsys):
    """A runaway puts infinite temperatures in the result; --json still parses with a strict
    parser (RFC 8259 has no Infinity): they are written as null, the reason beside them in
    ``<key>_why``."""
    from optim.tomlwrite import dumps_toml
    from tests.conftest import demo_dict

    d = demo_dict()
    d.pop("thermal", None)  # continuous duty at 6 A: the demo coil runs away
    path = tmp_path / "runaway.toml"
    path.write_text(dumps_toml(d))
    assert main(["evaluate", str(path), "--json"]) == 0
    out = json.loads(capsys.readouterr().out, parse_constant=lambda c: pytest.fail(c))
    assert out["thermal_status"].startswith("runaway")
    assert out["coil_temperature_C"] is None
    assert out["coil_temperature_C_why"].startswith("thermal runaway")
    assert out["margins"]["coil_temperature_C"] is None
    assert out["margins_why"]["coil_temperature_C"].startswith("thermal runaway")
    # Numbers or null everywhere (no "inf" strings), each null of a table explained beside it.

    def no_inf_strings(v):
        if isinstance(v, dict):
            return all(no_inf_strings(x) for x in v.values())
        if isinstance(v, list):
            return all(no_inf_strings(x) for x in v)
        return v not in ("inf", "-inf")

    assert no_inf_strings(out)
    for table in ("margins", "time_to_limit_s", "temperatures_C"):
        for key, why in out.get(f"{table}_why", {}).items():
            assert out[table][key] is None and why
