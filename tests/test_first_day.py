"""The new user's list (issue 27): what broke or misled on a first day, each fixed and held here."""

from __future__ import annotations

import math

import pytest

from models.design import design_from_dict
from models.evaluate import evaluate
from optim.morning.verify import compare, format_table
from tests.conftest import demo_dict


def test_verify_reads_a_result_with_two_warnings():
    # A gap of 3.5 mm is outside the FEM-checked range twice (gap, gap / pole radius): the result
    # carries exactly two warnings, a two-item list of texts that is not a complex number.
    d = demo_dict()
    d["target"]["gap_mm"] = 3.5
    fast = evaluate(design_from_dict(d))
    assert len(fast.warnings) == 2
    fem = dict(fast.to_dict())
    fem["pull_N"] = 1.01 * fem["pull_N"]  # a stand-in reference 1 % above the fast model
    rows = compare(fast.to_dict(), fem, {"pull_N": 0.002})
    by_key = {r["key"]: r for r in rows}
    # compare(): difference_rel = (fast - fem) / |fem| = 1/1.01 - 1 for a reference 1 % high.
    assert by_key["pull_N"]["difference_rel"] == pytest.approx(1 / 1.01 - 1, rel=1e-9)
    # The impedance (a [re, im] pair by name) is still split into its two parts.
    re, im = fast.to_dict()["coil_impedance_ohm"]
    assert (by_key["coil_impedance_ohm.re"]["fast"], by_key["coil_impedance_ohm.im"]["fast"]) == (
        re,
        im,
    )
    assert "coil reactance" in format_table(rows, 1.0, 0.01)
    assert not any(k.startswith(("warnings", "thermal_time_constants")) for k in by_key)


def test_verify_refuses_a_malformed_impedance_by_name():
    with pytest.raises(ValueError, match="coil_impedance_ohm must be a complex number"):
        compare({"coil_impedance_ohm": "1+2j"}, {"coil_impedance_ohm": [1.0, 2.0]}, {})
    rows = compare(None, {"coil_impedance_ohm": [1.0, 2.0], "pull_N": 0.01}, {})
    assert all(math.isnan(r["fast"]) for r in rows)
