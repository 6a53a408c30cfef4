"""When nothing is feasible: the nearest trials in `study run`'s last lines, `study status` and
the report; `study export --nearest` and a hand-off marked infeasible in every file."""

from __future__ import annotations

import json
import math

import pandas as pd

from optim.cli import main
from optim.morning.nearest import broken_constraints, nearest_trials


def _spec_json(**run):
    return {
        "constraints": {"coil_voltage_V": {"max": 10.0}, "lift_ratio": {"min": 1.0}},
        "search": {
            "frequency_Hz": {"low": 100.0, "high": 1000.0, "scale": "log"},
            "current_A": {"low": 1.0, "high": 8.0},
        },
        "run": run,
    }


def test_nearest_is_the_least_total_scaled_violation():
    df = pd.DataFrame(
        {
            "trial": [0, 1, 2],
            "state": ["COMPLETE"] * 3,
            # trial 0: 20 V against 10 (violation 1.0); trial 1: 12 V (0.2) and lift 0.5 (0.5);
            # trial 2: 11 V (0.1) but out of its depth (the design rule's 1.0)
            "coil_voltage_V": [20.0, 12.0, 11.0],
            "lift_ratio": [2.0, 0.5, 3.0],
            "out_of_depth": [0.0, 0.0, 1.0],
            "frequency_Hz": [500.0, 100.5, 300.0],
            "current_A": [4.0, 7.99, 2.0],
        }
    )
    near = nearest_trials(df, _spec_json())
    assert [n["trial"] for n in near] == [1, 0, 2]
    assert math.isclose(
        near[0]["total_violation"], 0.2 + 0.5, rel_tol=1e-12
    )  # (12-10)/10 + (1-0.5)/1
    assert {b["name"] for b in near[0]["broken"]} == {"coil_voltage_V", "lift_ratio"}
    by_name = {b["name"]: b for b in near[0]["broken"]}
    assert (
        by_name["coil_voltage_V"]["limit"] == 10.0 and by_name["coil_voltage_V"]["margin"] == -2.0
    )
    assert by_name["lift_ratio"]["limit"] == 1.0 and by_name["lift_ratio"]["margin"] == -0.5
    # 100.5 Hz is 0.2 % of the log range above 100 Hz; 7.99 A is 0.1 % below 8 A
    assert {(a["name"], a["bound"]) for a in near[0]["at_bound"]} == {
        ("frequency_Hz", "low"),
        ("current_A", "high"),
    }
    # with the switch, the design rule no longer counts
    near = nearest_trials(df, _spec_json(allow_out_of_depth=True))
    assert near[0]["trial"] == 2


def test_broken_constraints_lists_name_value_limit_margin():
    broken = broken_constraints({"coil_voltage_V": 5.0, "lift_ratio": 0.9}, _spec_json())
    assert broken == [
        {
            "name": "lift_ratio",
            "value": 0.9,
            "limit": 1.0,
            "margin": -0.09999999999999998,
            "violation": 0.09999999999999998,
        }
    ]


def test_an_infeasible_study_names_its_nearest_and_exports_it_marked(tmp_path, capsys):
    from tests.conftest import DEMO as demo

    study = tmp_path / "tight.toml"
    study.write_text(
        f'name = "tight"\ndesign = "{demo.as_posix()}"\n'
        "[search]\nfrequency_Hz = { low = 100.0, high = 900.0 }\n"
        '[objectives]\npull_N = "maximize"\n[constraints]\ncoil_voltage_V = { max = 1.0 }\n'
        '[run]\ntrials = 3\nisothermal = true\nsampler = "random"\n',
        encoding="utf-8",
    )
    out = str(tmp_path / "out")
    assert main(["study", "run", str(study), "--out", out]) == 0
    text = capsys.readouterr()
    assert "nearest to feasible" in text.out + text.err
    assert main(["study", "status", out]) == 0
    status = capsys.readouterr().out
    assert "nearest to feasible" in status and "breaks coil_voltage_V" in status
    assert main(["study", "export", out, "--nearest"]) == 0
    said = capsys.readouterr().out
    assert "is not feasible" in said and "rounding" not in said.split("is not feasible")[1]
    folder = next((tmp_path / "out").glob("handoff-trial-*"))
    handoff = json.loads((folder / "handoff.json").read_text())
    assert handoff["feasible"] is False
    (b,) = handoff["broken_constraints"]
    assert b["name"] == "coil_voltage_V" and b["limit"] == 1.0 and b["margin"] < 0
    assert set(b) == {"name", "value", "limit", "margin"}
    assert (folder / "design.toml").read_text().startswith("# NOT FEASIBLE")
    assert "NOT FEASIBLE" in (folder / "profile.dxf").read_text()
    assert main(["study", "front", out, "--no-pick-maps", "--no-tolerance"]) == 0
    capsys.readouterr()
    assert "nearest to feasible" in (tmp_path / "out" / "report.html").read_text()
    assert main(["study", "export", out, "--nearest", "--trial", "0"]) == 2
