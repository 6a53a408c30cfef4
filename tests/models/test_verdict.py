"""Verdict first: a design whose linear model is out of its depth says so before any number,
and a study counts it infeasible by a design rule unless ``[run] allow_out_of_depth = true``."""

from __future__ import annotations

import re
import tomllib

import pytest

from models.checks import WIRE_CURRENT_DENSITY_LIMIT, out_of_depth
from models.design import design_from_dict
from models.evaluate import evaluate
from optim.cli.summary import format_result
from optim.study.engine import evaluate_trial
from optim.study.objectives import OUT_OF_DEPTH_RULE, design_rule_violations
from optim.study.spec import spec_from_dict
from tests.conftest import DEMO


def _mains() -> dict:
    # The demo's coil put straight on 230 V 50 Hz (the "absurd state"): its bare
    # impedance draws tens of amperes, the core passes saturation and the coil runs away.
    data = tomllib.loads(DEMO.read_text())
    data["drive"] = {"frequency_Hz": 50.0, "voltage_V": 230.0}
    return data


def test_an_absurd_state_opens_with_the_verdict_before_any_number():
    design = design_from_dict(_mains())
    r = evaluate(design)
    reasons = " | ".join(r.out_of_depth)
    assert "saturation" in reasons and "runaway" in reasons and "A/mm^2" in reasons
    text = format_result(design, r)
    first_digit = re.search(r"\d", text).start()
    verdict = text.index("NOT A VALID DESIGN")
    assert verdict == 0 < first_digit
    # each reason comes before the first number of the result (the design line)
    assert text.index("design harrowgate") > text.index("A/mm^2")


def test_a_sound_design_has_no_verdict():
    design = design_from_dict(tomllib.loads(DEMO.read_text()))
    r = evaluate(design)
    assert r.out_of_depth == []
    assert "NOT A VALID DESIGN" not in format_result(design, r)


def test_the_wire_limit_reads_the_current_density():
    from types import SimpleNamespace

    design = design_from_dict(tomllib.loads(DEMO.read_text()))  # 0.8 mm wire: 0.503 mm^2
    area = design.coil.wire_area
    for current, expected in (
        (0.99 * WIRE_CURRENT_DENSITY_LIMIT * area, 0),
        (1.01 * WIRE_CURRENT_DENSITY_LIMIT * area, 1),
    ):
        e = SimpleNamespace(
            core_peak_flux_density_T=1.0, core_saturation_T=1.5, coil_current_A=current
        )
        assert len(out_of_depth(design, e, "converged")) == expected


def test_the_design_rule_and_its_switch():
    assert design_rule_violations({"out_of_depth": 2.0}, {}) == {OUT_OF_DEPTH_RULE: 1.0}
    assert design_rule_violations({"out_of_depth": 2.0}, {"allow_out_of_depth": True}) == {}
    assert design_rule_violations({"out_of_depth": 0.0}, {}) == {}


@pytest.mark.parametrize("allow", [False, True])
def test_a_study_counts_an_out_of_depth_trial_infeasible_unless_allowed(tmp_path, allow):
    design = tmp_path / "d.toml"
    from optim.tomlwrite import dumps_toml

    design.write_text(dumps_toml(_mains()))
    run = {"trials": 1, "allow_out_of_depth": True} if allow else {"trials": 1}
    spec = spec_from_dict(
        {
            "name": "mains",
            "design": "d.toml",
            "search": {"frequency_Hz": {"low": 50.0, "high": 60.0}},
            "objectives": {"pull_N": "maximize"},
            "run": run,
        },
        folder=tmp_path,
    )
    out = evaluate_trial(spec, {"frequency_Hz": 50.0})
    assert out.complete
    if allow:
        assert out.violations == {} and out.reason == ""
    else:
        assert out.violations == {OUT_OF_DEPTH_RULE: 1.0}
        assert out.reason == f"infeasible: {OUT_OF_DEPTH_RULE}"
