"""The pick's dynamics in studies: pick_time_ms as an objective, hold_chatter_margin_N as a
constraint (issue 31), and the one-line refusal where the base design has no lift. Identities of
the project's own study machinery; no outside source needed."""

from __future__ import annotations

import copy
import math
import tomllib

import pytest

from models.errors import DesignError
from optim.cli import main
from optim.demo import DEMO_STUDY
from optim.study.objectives import margins, objective_values
from optim.study.spec import spec_from_dict


def _study(hold_gap_mm=None) -> dict:
    data = tomllib.loads(DEMO_STUDY.read_text(encoding="utf-8"))
    data = copy.deepcopy(data)
    if hold_gap_mm is not None:
        data["thermal"]["hold_gap_mm"] = hold_gap_mm
    data["objectives"] = {"pick_time_ms": "minimize", "input_power_W": "minimize"}
    data["constraints"]["hold_chatter_margin_N"] = {"min": 0.0}
    data["run"]["isothermal"] = True
    return data


def test_pick_time_objective_and_chatter_constraint():
    spec = spec_from_dict(_study(hold_gap_mm=0.5), folder=DEMO_STUDY.parent)
    for name in ("pick_time_ms", "contact_speed_m_per_s", "pull_ripple_N", "hold_chatter_margin_N"):
        assert name in spec.result_names
    from optim.study.objectives import results_of

    flat, _, _ = results_of(spec_design(spec), spec.gaps_mm, isothermal=True)
    (time_ms, _power) = objective_values(flat, spec.objectives)
    assert math.isfinite(time_ms) and time_ms > 0
    (chatter,) = [c for c in spec.constraints if c.name == "hold_chatter_margin_N"]
    assert margins(flat, [chatter])["hold_chatter_margin_N"] == flat["hold_chatter_margin_N"]


def spec_design(spec):
    from models.design import design_from_dict

    return design_from_dict(copy.deepcopy(spec.base), name=spec.name)


def test_pick_time_needs_a_lift():
    with pytest.raises(DesignError, match=r"objectives.pick_time_ms: the base design has no lift"):
        spec_from_dict(_study(), folder=DEMO_STUDY.parent)


def test_pick_time_without_a_lift_is_one_line_exit_2(tmp_path, capsys):
    from optim.tomlwrite import dumps_toml

    data = _study()
    data["design"] = str(DEMO_STUDY.parent / data["design"])
    path = tmp_path / "s.toml"
    path.write_text(dumps_toml(data))
    assert main(["study", "results", str(path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "pick_time_ms" in err[0] and "hold_gap_mm" in err[0]
    assert "Traceback" not in err[0]
