"""The state a part is picked in: a part arriving cold, a held part warming, the magnet's fixed
parts at their duty-averaged steady state; the thermal assumptions shown beside every result.

References outside the project: the temperature law of a metal's resistivity,
rho(T) = rho_20 (1 + alpha (T - 20 degC)) (IEC 60028 for annealed copper), used by hand to set a
part's conductivity at its held temperature; the energy balance (Poynting: terminal power =
sum of the Joule losses); and identities of the model itself (a part arriving at 20 degC beside a
magnet that does not warm is the isothermal case).
"""

from __future__ import annotations

import copy
import json
import math

import pytest

from models.design import design_from_dict, with_value
from models.evaluate import DEFAULT_FINENESS, evaluate, evaluate_pick_gaps, pole_model_for
from models.fast.circuit import assemble_circuit, solve_system
from models.fast.pull import pull_by_source
from models.materials import MATERIALS
from optim.cli import main
from tests.conftest import demo_dict

#: The copper washer a new user tries (8 mm outer radius, 2 mm inner, 1 mm thick, 1 mm gap,
#: 1 kHz, pole radius 8 mm, ring 3-6 mm x 2 mm deep, 200 turns at 4 A, no [thermal] table).
WASHER = {
    "name": "washer",
    "pole": {"radius_mm": 8.0, "length_mm": 40.0, "material": "electrical-steel-m400"},
    "coil": {
        "inner_radius_mm": 8.5,
        "outer_radius_mm": 20.0,
        "setback_mm": 2.0,
        "length_mm": 30.0,
        "turns": 200,
        "wire_diameter_mm": 0.8,
    },
    "drive": {"frequency_Hz": 1000.0, "current_A": 4.0},
    "ring": {"inner_radius_mm": 3.0, "outer_radius_mm": 6.0, "depth_mm": 2.0, "material": "copper"},
    "target": {
        "radius_mm": 8.0,
        "inner_radius_mm": 2.0,
        "thickness_mm": 1.0,
        "gap_mm": 1.0,
        "material": "copper",
    },
}


def _design(d: dict):
    return design_from_dict(copy.deepcopy(d))


def _demo(**thermal):
    d = demo_dict()
    d["thermal"] = {**d.get("thermal", {}), **thermal}
    return _design(d)


def _system(design):
    """The assembled circuit of ``design`` with its magnetised pole, as evaluate builds it."""
    return assemble_circuit(design, DEFAULT_FINENESS, pole_model_for(design, DEFAULT_FINENESS))


def _pull(sol) -> float:
    return float(sum(pull_by_source(sol).values()))


def test_arrival_at_20C_beside_a_cold_magnet_is_the_isothermal_pull():
    # Identity: ambient and arrival at 20 degC and a current so small that nothing warms
    # (losses ~1e-8 of the demo's): every resistivity sits at its 20 degC value.
    d = demo_dict()
    d["drive"]["current_A"] = 6e-4
    d["thermal"] = {"ambient_C": 20.0, "target_arrival_C": 20.0}
    design = _design(d)
    coupled, iso = evaluate(design), evaluate(design, isothermal=True)
    assert coupled.temperatures_C["coil_mean"] - 20.0 < 1e-5
    assert coupled.pull_N == pytest.approx(iso.pull_N, rel=1e-7)
    assert coupled.pull_hold_N == pytest.approx(iso.pull_N, rel=1e-6)


def test_arrival_pull_takes_the_part_cold_and_the_magnet_warm():
    design = _design(WASHER)
    r = evaluate(design)
    # The part arrives at the ambient (the default), not at its steady state.
    assert r.target_arrival_temperature_C == pytest.approx(r.temperatures_C["ambient"])
    assert r.target_temperature_C > r.target_hold_temperature_C > r.target_arrival_temperature_C
    # By hand: the circuit with the coil and ring at the steady state, the part at ambient.
    system = _system(design)
    t = r.temperatures_C
    by_hand = _pull(
        solve_system(
            system, {"coil": t["coil_mean"], "ring": t["ring"], "target": t["target_arrival"]}
        )
    )
    assert r.pull_N == pytest.approx(by_hand, rel=1e-12)
    # A part that stays (a holding application) is taken at its steady state, as before.
    stays = evaluate(with_value(design, "thermal.target_stays", True))
    steady = _pull(
        solve_system(system, {"coil": t["coil_mean"], "ring": t["ring"], "target": t["target"]})
    )
    assert stays.pull_N == pytest.approx(steady, rel=1e-12)
    assert stays.target_hold_temperature_C == pytest.approx(stays.target_temperature_C)


def test_pull_at_the_end_of_the_hold_matches_the_part_set_to_its_held_temperature_by_hand():
    design = _design(WASHER)
    r = evaluate(design)
    t_hold = r.target_hold_temperature_C
    copper = MATERIALS["copper"]
    # IEC 60028: rho(T) = rho_20 (1 + alpha (T - 20)); the part given that conductivity and no
    # temperature coefficient, everything else as in the evaluation.
    sigma_hold = copper.conductivity / (1.0 + copper.temperature_coefficient * (t_hold - 20.0))
    d = copy.deepcopy(WASHER)
    target = d["target"]
    del target["material"]
    target.update(
        conductivity_S_per_m=sigma_hold,
        temperature_coefficient_per_K=0.0,
        density_kg_per_m3=copper.density,
    )
    by_hand = _design(d)
    system = _system(by_hand)
    t = r.temperatures_C
    manual = _pull(solve_system(system, {"coil": t["coil_mean"], "ring": t["ring"]}))
    assert r.pull_hold_N == pytest.approx(manual, rel=1e-9)
    assert r.lift_ratio_hold == pytest.approx(manual / r.target_weight_N, rel=1e-9)


def test_hold_at_its_own_gap_and_a_hotter_arrival():
    design = _demo(hold_gap_mm=1.0, target_arrival_C=60.0)
    r = evaluate(design)
    assert r.thermal_assumptions["hold_gap_mm"] == pytest.approx(1.0)
    assert r.target_arrival_temperature_C == pytest.approx(60.0)
    # The held part at 1 mm is pulled harder than the picked one at the design's 3 mm.
    assert r.pull_hold_N > r.pull_N > 0
    # Picked at another gap, the magnet at the same steady state: the same as evaluating the
    # design at that gap with the hold (hence the steady state) pinned to 1 mm.
    _, (pull_2mm,) = evaluate_pick_gaps(design, (2.0,))
    alone = evaluate(with_value(design, "target.gap_mm", 2.0))
    assert pull_2mm == pytest.approx(alone.pull_N, rel=1e-12)


@pytest.mark.parametrize("isothermal", [False, True])
def test_energy_balance_closes_in_the_state_of_pick(isothermal):
    # Poynting: the power into the terminals is dissipated in the coil, ring, part and core.
    r = evaluate(_design(WASHER), isothermal=isothermal)
    total = r.coil_loss_W + r.ring_loss_W + r.target_loss_W + r.core_loss_W
    assert r.input_power_W == pytest.approx(total, rel=1e-12)


def test_ring_phase_is_continuous_through_minus_180():
    # The washer's ring lags the coil by a little more than 180 degrees when isothermal: read
    # in [-270, 90) it stays a lag (once +170.7 beside -160.1 coupled).
    for isothermal in (False, True):
        phase = evaluate(_design(WASHER), isothermal=isothermal).ring_phase_deg
        assert -270.0 <= phase < 90.0
        assert -200.0 < phase < -90.0


def test_defaults_are_shown_in_text_json_and_hand_off(tmp_path, capsys):
    path = tmp_path / "washer.toml"
    from optim.tomlwrite import dumps_toml

    path.write_text(dumps_toml(WASHER), encoding="utf-8")
    assert main(["evaluate", str(path)]) == 0
    text = capsys.readouterr().out
    for words in (
        "continuous duty (default)",
        "radiation none (default)",
        "class B (default)",
        "10 s hold (default)",
        "part arrives at 25 degC (default)",
        # the default class B coil's 130 degC (IEC 60085), which the ring beside it is held to
        "ring 130 degC (the coil's insulation class B",
        "no thermal.ring_limit_C given",
    ):
        assert words in text, words
    assert main(["evaluate", str(path), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    a = out["thermal_assumptions"]
    assert a["duty_cycle"] == 1.0 and a["coil_insulation_class"] == "B"
    assert a["hold_time_s"] == 10.0 and a["emissivity"] == 0.0
    assert {"duty_cycle", "hold_time_s", "target_arrival_C"} <= set(a["defaults"])
    assert math.isfinite(out["pull_hold_N"]) and out["pull_cancellation"] >= 1.0


def test_the_washer_of_the_issue_no_longer_pulls_at_itssteady_state():
    # Before: +6.46 mN with the part at 304 degC (its steady state); the part never gets there.
    r = evaluate(_design(WASHER))
    iso = evaluate(_design(WASHER), isothermal=True)
    assert r.target_temperature_C > 200.0  # were it to stay
    assert r.target_arrival_temperature_C == pytest.approx(25.0)
    # At arrival only the ring and coil are warm: the pull is near the isothermal one, far
    # from the steady state's.
    steady = evaluate(_design({**WASHER, "thermal": {"target_stays": True}}))
    assert abs(r.pull_N - iso.pull_N) < abs(steady.pull_N - iso.pull_N)


LIFT_STUDY = """
[thermal]
ambient_C = 30.0
duty_cycle = 0.3
period_s = 2.0
hold_time_s = 0.5
coil_insulation_class = "F"
[target]
thickness_mm = 0.6
gap_mm = 2.0
[search]
ring_depth_mm = { low = 0.5, high = 6.0 }
frequency_Hz = { low = 100.0, high = 3000.0, scale = "log" }
current_A = { low = 1.0, high = 8.0 }
[objectives]
worst_lift_ratio = "maximize"
input_power_W = "minimize"
[robust]
gap_min_mm = 1.5
gap_max_mm = 3.0
points = 3
[constraints]
worst_lift_ratio = { min = 1.0 }
[run]
sampler = "nsga2"
population = 8
seed = 5
"""


@pytest.mark.slow
def test_a_lift_study_front_lifts_a_part_arriving_at_ambient(tmp_path):
    from optim.morning.front import trials_table
    from optim.morning.outputs import design_of
    from optim.study.run import run_study
    from optim.study.spec import load_study_spec
    from optim.study.storage import load_existing
    from tests.conftest import DEMO

    path = tmp_path / "lift.toml"
    path.write_text(f'name = "lift"\ndesign = "{DEMO.as_posix()}"\n{LIFT_STUDY}', encoding="utf-8")
    spec = load_study_spec(path)
    run_study(
        spec, tmp_path / "lift", workers=1, trials=32, echo=lambda *_: None, tty=False, salt=0
    )
    study, spec_json, _ = load_existing(tmp_path / "lift")
    df = trials_table(study, spec_json)
    front = df[df["on_front"]]
    assert len(front) >= 1
    for _, row in front.iterrows():
        design = design_of(spec, {p.name: row[p.name] for p in spec.params})
        # Independently: the design evaluated on its own at each pick gap, its hold pinned to
        # the design's gap (2 mm), the cap arriving at the ambient (the default).
        pinned = with_value(design, "thermal.hold_gap_mm", 2.0)
        for gap in (1.5, 2.25, 3.0):
            r = evaluate(with_value(pinned, "target.gap_mm", gap))
            assert r.target_arrival_temperature_C == pytest.approx(30.0)
            assert r.lift_ratio >= 1.0 - 1e-9, (row["trial"], gap, r.lift_ratio)
        assert evaluate(pinned).lift_ratio_hold >= 1.0 - 1e-9


def test_a_study_recorded_with_another_model_version_is_refused_on_resume(tmp_path, capsys):
    from optim.study.storage import MODEL_ATTR, load_existing, release
    from tests.conftest import DEMO

    path = tmp_path / "old.toml"
    body = LIFT_STUDY.replace('sampler = "nsga2"', 'sampler = "random"')
    path.write_text(f'name = "old"\ndesign = "{DEMO.as_posix()}"\n{body}', encoding="utf-8")
    out = str(tmp_path / "old")
    assert main(["study", "run", str(path), "--trials", "1", "--out", out]) == 0
    capsys.readouterr()
    study, _, _ = load_existing(out)
    study.set_user_attr(MODEL_ATTR, "multiloop-1")  # as a study from before the change reads
    release(study)
    assert main(["study", "run", str(path), "--trials", "1", "--out", out]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "recorded with model multiloop-1" in err[0], err
    assert "Traceback" not in "\n".join(err)


def test_held_part_warming_against_integration_of_its_own_loss_law():
    # A part whose loss follows its resistivity, P(T) = P_a rho(T_a) / rho(T) (a thin part in a
    # given field, resistance-limited), integrated numerically (scipy's solve_ivp) with its
    # neighbours at their steady state: the chord between arrival and steady state follows it
    # closely; the tangent at the steady state does not.
    from scipy.integrate import solve_ivp

    from models.pick import steady_state
    from models.thermal.limits import hold_temperature

    design = _design(WASHER)
    system = _system(design)
    state = steady_state(design, system, isothermal=False)
    net = state.network
    i = net.index("target")
    alpha = MATERIALS["copper"].temperature_coefficient
    t_star, p_star = state.T[i], state.losses_on[i]

    def loss(t):
        return p_star * (1 + alpha * (t_star - 20)) / (1 + alpha * (t - 20))

    A, b = net.matrix(state.T)
    others = b[i] - sum(A[i, j] * state.T[j] for j in range(len(state.T)) if j != i)
    t0, hold = 25.0, 10.0

    def rhs(t, y):
        return (loss(y) + others - A[i, i] * y) / net.capacity[i]

    exact = solve_ivp(rhs, (0, hold), [t0], rtol=1e-10, atol=1e-10).y[0, -1]
    chord, _, _ = hold_temperature(state, hold, initial_C=t0, initial_loss_W=float(loss(t0)))
    tangent, _, _ = hold_temperature(state, hold, initial_C=t0)
    rise = exact - t0
    assert abs(chord - exact) < 0.05 * rise
    assert abs(chord - exact) < abs(tangent - exact)


def test_defaults_reach_the_report_note_and_the_hand_off(tmp_path):
    from optim.morning.handoff import write_handoff
    from optim.morning.outputs import _state_note

    design = _design(WASHER)
    note = _state_note(design, isothermal=False)
    assert "moment of pick" in note and "Thermal assumptions:" in note
    assert "continuous duty (default)" in note and "10 s hold (default)" in note
    assert "no thermal.ring_limit_C given" in note
    paths = write_handoff(design, evaluate(design), tmp_path, {})
    data = json.loads(paths["handoff.json"].read_text(encoding="utf-8"))
    assert data["thermal_assumptions"]["duty_cycle"] == 1.0
    assert "hold_time_s" in data["thermal_assumptions"]["defaults"]
    used = data["limits"]["temperature_limits_used"]
    assert used["ring"]["limit_C"] == pytest.approx(130.0)  # class B, IEC 60085 (the default coil)
    assert "no thermal.ring_limit_C given" in used["ring"]["source"]


def test_energy_balance_closes_at_the_end_of_the_hold():
    # Poynting again, in the held state: the part warm, at the holding gap.
    from models.pick import at_hold_gap, part_losses, pick_state, steady_state

    design = _design({**WASHER, "thermal": {"hold_gap_mm": 0.8, "hold_time_s": 30.0}})
    held = at_hold_gap(design)
    system = _system(held)
    state = steady_state(held, system, isothermal=False)
    part = pick_state(
        design, state, False, lambda t: part_losses(solve_system(system, t))["target"]
    )
    assert part.target_hold_C > part.target_arrival_C + 5.0
    sol = solve_system(system, part.hold)
    losses = part_losses(sol)
    terminal = float((sol.coil_voltage * sol.coil_current.conjugate()).real)
    assert terminal == pytest.approx(sum(losses.values()) + sol.core.total, rel=1e-12)
