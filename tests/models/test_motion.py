"""The lift in time (models.motion) and its results in an evaluation.

References: uniform acceleration for a constant force, t = sqrt(2 d m / (F - W)) and
v = sqrt(2 d (F - W) / m) (any mechanics text, from memory); scipy's solve_ivp (a general-purpose
library) integrating m x'' = pull(g0 - x) - W on the same curve.
"""

from __future__ import annotations

import copy
import json
import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from models.design import design_from_dict
from models.evaluate import evaluate, evaluate_pick_gaps, lift_gaps
from models.motion import (
    PullCurve,
    lift_in_time,
    quasi_static_numbers,
    weight_against_pull,
)
from optim.cli import main
from tests.conftest import demo_dict

MASS = 2.1e-4  # [kg] about the demo's 10 mm aluminium cap, 1 mm thick
WEIGHT = MASS * 9.80665


def _ode(curve, mass, against, pick, hold):
    """(time, speed) at contact, or (inf, stall gap) where the speed returns to zero first."""

    def rhs(_t, y):
        return [y[1], (float(curve(pick - y[0])) - against) / mass]

    def contact(_t, y):
        return y[0] - (pick - hold)

    def stop(t, y):
        return y[1] if t > 0 else 1.0

    contact.terminal = stop.terminal = True
    stop.direction = -1
    sol = solve_ivp(rhs, (0.0, 10.0), [0.0, 0.0], events=[contact, stop], rtol=1e-11, atol=1e-15)
    if sol.t_events[0].size:
        return sol.t_events[0][0], sol.y_events[0][0][1]
    return math.inf, pick - sol.y_events[1][0][0]


def test_constant_force_against_closed_form():
    force, d = 0.008, 2.5e-3
    curve = PullCurve((0.5e-3, 3e-3), (force, force))
    lift = lift_in_time(curve, MASS, WEIGHT, 3e-3, 0.5e-3)
    # Uniform acceleration (module docstring): to rounding of the quadrature, 1e-10.
    assert lift.pick_time_s == pytest.approx(math.sqrt(2 * d * MASS / (force - WEIGHT)), rel=1e-10)
    assert lift.contact_speed_m_per_s == pytest.approx(
        math.sqrt(2 * d * (force - WEIGHT) / MASS), rel=1e-10
    )
    assert math.isnan(lift.stall_gap_m)


@pytest.mark.parametrize(
    "pulls",
    [
        (0.012, 0.006, 0.0025),  # positive: log-polynomial curve
        (-0.001, 0.006, 0.008),  # pushed near the face: polynomial curve, still arrives
        (0.009, 0.004),  # two points: an exponential
    ],
)
def test_against_solve_ivp_on_the_same_curve(pulls):
    gaps = (0.5e-3, 3e-3) if len(pulls) == 2 else (0.5e-3, 1.5e-3, 3e-3)
    curve = PullCurve(gaps, pulls)
    lift = lift_in_time(curve, MASS, WEIGHT, 3e-3, 0.5e-3)
    t, v = _ode(curve, MASS, WEIGHT, 3e-3, 0.5e-3)
    # solve_ivp at rtol 1e-11 against 128 Gauss points of a smooth integrand: 1e-7.
    assert lift.pick_time_s == pytest.approx(t, rel=1e-7)
    assert lift.contact_speed_m_per_s == pytest.approx(v, rel=1e-7)


def test_stall_on_the_way_against_solve_ivp():
    # Strong at the start, weak in the middle: the part rises, slows and falls back.
    curve = PullCurve((0.5e-3, 1.5e-3, 3e-3), (0.012, 0.0005, 0.0045))
    lift = lift_in_time(curve, MASS, WEIGHT, 3e-3, 0.5e-3)
    t, stall = _ode(curve, MASS, WEIGHT, 3e-3, 0.5e-3)
    assert math.isinf(lift.pick_time_s) and math.isinf(t)
    assert math.isnan(lift.contact_speed_m_per_s)
    # Where the speed returns to zero: the energy integral's root and the ODE's event, 1e-7.
    assert lift.stall_gap_m == pytest.approx(stall, rel=1e-7)


def test_no_start_and_no_lift():
    weak = PullCurve((0.5e-3, 3e-3), (0.01, 0.9 * WEIGHT))
    lift = lift_in_time(weak, MASS, WEIGHT, 3e-3, 0.5e-3)
    assert math.isinf(lift.pick_time_s) and lift.stall_gap_m == 3e-3
    same = lift_in_time(weak, MASS, WEIGHT, 3e-3, 3e-3)  # held where picked
    assert same.pick_time_s == 0.0 and same.contact_speed_m_per_s == 0.0
    # Face up the weight helps; horizontal it is across the pull (models.design ORIENTATIONS).
    assert weight_against_pull(2.0, "face-down") == 2.0
    assert weight_against_pull(2.0, "face-up") == -2.0
    assert weight_against_pull(2.0, "horizontal") == 0.0


def test_quasi_static_numbers_by_hand():
    q = quasi_static_numbers(0.5, 0.02, 3.5e7, 5e-3, 10e-3, 2 * math.pi * 400, 10.0)
    # mu0 sigma v L = 4 pi 1e-7 x 3.5e7 x 0.5 x 5e-3 = 0.1100 (by hand).
    assert q["magnetic_reynolds"] == pytest.approx(0.10996, rel=1e-4)
    assert q["speed_ratio"] == pytest.approx(0.5 / (2 * math.pi * 400 * 10e-3), rel=1e-12)
    assert q["rise_time_s"] == pytest.approx(20.0 / (2 * math.pi * 400), rel=1e-12)
    assert q["rise_fraction"] == pytest.approx(q["rise_time_s"] / 0.02, rel=1e-12)


def _demo(**thermal):
    d = demo_dict()
    d["thermal"] = {**d.get("thermal", {}), **thermal}
    return design_from_dict(copy.deepcopy(d))


@pytest.fixture(scope="module")
def lifted():
    design = _demo(hold_gap_mm=1.0)
    return design, evaluate(design)


def test_evaluation_lifts_on_the_pulls_of_the_robust_evaluation(lifted):
    design, r = lifted
    assert math.isfinite(r.pick_time_ms) and r.contact_speed_m_per_s > 0
    # The curve's ends are the pulls evaluate_pick_gaps gives at those gaps (its pull at the
    # pick gap and at arrival at the holding gap): the same lift by hand, to rounding.
    _, pulls = evaluate_pick_gaps(design, (1.0, 3.0))
    curve = PullCurve((1e-3, 3e-3), tuple(pulls))
    lift = lift_in_time(curve, r.target_weight_N / 9.80665, r.target_weight_N, 3e-3, 1e-3)
    assert r.pick_time_ms == pytest.approx(lift.pick_time_s * 1e3, rel=1e-9)
    assert r.contact_speed_m_per_s == pytest.approx(lift.contact_speed_m_per_s, rel=1e-9)


@pytest.mark.slow
def test_two_point_curve_against_a_finer_one(lifted):
    design, r = lifted
    fine = evaluate(design, lift_points=5)
    # Measured on the demo and five more lifts (DEVELOPERS.md): the two-point exponential is
    # within 2.5 % of a five-point curve in time and speed; 3 % here (regression bound).
    assert r.pick_time_ms == pytest.approx(fine.pick_time_ms, rel=0.03)
    assert r.contact_speed_m_per_s == pytest.approx(fine.contact_speed_m_per_s, rel=0.03)
    assert fine.pull_N == r.pull_N  # the curve changes nothing else


def test_lift_gaps_are_lobatto_points_with_exact_ends():
    g = lift_gaps(3e-3, 1e-3, 5)
    assert g[0] == 1e-3 and g[-1] == 3e-3
    # Chebyshev-Lobatto points of [1, 3] mm: 2 - cos(k pi / 4) (by hand).
    assert np.allclose(g * 1e3, 2 - np.cos(np.arange(5) * np.pi / 4), rtol=0, atol=1e-12)
    with pytest.raises(ValueError, match="lift_points = 1: must be at least 2"):
        lift_gaps(3e-3, 1e-3, 1)


def test_json_nulls_carry_their_reason(tmp_path, capsys):
    from optim.tomlwrite import dumps_toml

    src = tmp_path / "d.toml"
    d = demo_dict()
    d["thermal"]["hold_gap_mm"] = 3.0
    src.write_text(dumps_toml(d))
    assert main(["evaluate", str(src), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["pick_time_ms"] == 0.0 and out["contact_speed_m_per_s"] == 0.0  # no lift
    assert math.isfinite(out["pull_ripple_N"]) and math.isfinite(out["hold_chatter_margin_N"])
    # A part that cannot leave its pick gap: a 3 mm thick cap is too heavy.
    d["target"]["thickness_mm"] = 4.0
    d["thermal"]["hold_gap_mm"] = 0.5
    src.write_text(dumps_toml(d))
    assert main(["evaluate", str(src), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["pick_time_ms"] is None and out["pick_time_ms_why"].startswith("never")
    assert out["contact_speed_m_per_s_why"].startswith("never reaches contact")
    assert any("does not leave the pick gap" in w for w in out["warnings"])


def test_quasi_static_warnings_name_their_numbers():
    # A thin cap lifted fast at 2 kHz: the motion's own eddy currents and the field's rise
    # under a resonant drive are no longer small (models.checks.LIFT_WARNING_*).
    d = demo_dict()
    d["drive"] = {"frequency_Hz": 2000.0, "current_A": 8.0}
    d["target"].update(thickness_mm=0.6, gap_mm=2.5)
    d["thermal"]["hold_gap_mm"] = 0.5
    r = evaluate(design_from_dict(copy.deepcopy(d)), isothermal=True)
    assert math.isfinite(r.pick_time_ms)
    words = " | ".join(r.warnings)
    assert "magnetic Reynolds number" in words and "2Q/omega" in words
    # The Reynolds number the warning states is mu0 sigma v r_part at the contact speed.
    conductivity = design_from_dict(copy.deepcopy(d)).target.conductivity
    rm = 4e-7 * math.pi * conductivity * r.contact_speed_m_per_s * 5e-3
    assert f"magnetic Reynolds number {rm:.2g}" in words


def test_text_shows_ripple_chatter_and_lift(tmp_path, capsys):
    from optim.tomlwrite import dumps_toml

    d = demo_dict()
    d["thermal"]["hold_gap_mm"] = 1.0
    src = tmp_path / "d.toml"
    src.write_text(dumps_toml(d))
    assert main(["evaluate", str(src), "--isothermal"]) == 0
    text = capsys.readouterr().out
    assert "ripple at 2f" in text and "chatter margin" in text
    assert "ms from 3 to 1 mm, contact at" in text
