"""The compensating capacitor (models.supply, [drive] compensation): the series and parallel RLC
identities, the energy balance, the capacitor fixed at its tuning while the part moves, the
results and limits of the supply, and the bad values of the drive table.

Textbook: J. W. Nilsson and S. A. Riedel, *Electric Circuits*, 9th ed. (from memory): series
resonance omega_0 = 1/sqrt(LC) and the quality factor Q = omega_0 L / R with the capacitor's
voltage Q times the source's at resonance (ch. 14, the series RLC band-pass); power factor
correction by a parallel capacitor, C = Q_load / (omega V^2), i.e. X / (omega |Z|^2) for a load
Z = R + jX (ch. 10, sinusoidal steady-state power).
"""

from __future__ import annotations

import dataclasses
import math
import tomllib

import numpy as np
import pytest

from models.design import design_from_dict, with_gap
from models.errors import DesignError
from models.evaluate import DEFAULT_FINENESS, evaluate, evaluate_pick_gaps, pole_model_for
from models.fast.circuit import assemble_circuit, solve_system
from models.fast.pull import net_pull
from models.supply import supply_state, tuned_capacitance
from optim.cli import main
from tests.conftest import DEMO

# A coil of the demo's size: R = 2 Ohm, L = 3.3 mH at 400 Hz (made-up values, the identities
# hold for any).
R, L, F = 2.0, 3.3e-3, 400.0
OMEGA = 2 * math.pi * F


def _demo(**drive) -> dict:
    data = tomllib.loads(DEMO.read_text())
    for key, value in drive.items():
        if value is None:
            data["drive"].pop(key, None)
        else:
            data["drive"][key] = value
    return data


def test_series_tuning_is_resonance_and_the_capacitor_sees_q_times_the_supply():
    z = complex(R, OMEGA * L)
    c = tuned_capacitance("series", OMEGA, z)
    # omega_0 = 1/sqrt(LC) (Nilsson & Riedel ch. 14): tuned at the drive frequency
    assert 1 / math.sqrt(L * c) == pytest.approx(OMEGA, rel=1e-12)
    v = 10.0
    i = v / (z + 1 / (1j * OMEGA * c))  # a voltage source across the series circuit
    st = supply_state("series", c, OMEGA, i * z, i)
    assert abs(st.supply_voltage) == pytest.approx(v, rel=1e-12)
    assert abs(i) == pytest.approx(v / R, rel=1e-12)  # at resonance the source sees R
    q = OMEGA * L / R  # Q = omega_0 L / R (same chapter)
    assert abs(st.capacitor_voltage) == pytest.approx(q * v, rel=1e-12)
    assert st.supply_VA == pytest.approx(st.supply_power_W, rel=1e-12)  # power factor 1


def test_parallel_tuning_corrects_the_power_factor_to_one():
    z = complex(R, OMEGA * L)
    c = tuned_capacitance("parallel", OMEGA, z)
    # C = Q_load / (omega V^2) with Q_load = |I|^2 X and |I| = V/|Z| (Nilsson & Riedel ch. 10)
    v = 230.0
    q_load = (v / abs(z)) ** 2 * z.imag
    assert c == pytest.approx(q_load / (OMEGA * v**2), rel=1e-12)
    st = supply_state("parallel", c, OMEGA, v, v / z)
    assert st.supply_current.imag == pytest.approx(0.0, abs=1e-12 * abs(st.supply_current))
    # the line carries the real power only: |I_line| = P / V
    assert abs(st.supply_current) == pytest.approx(st.supply_power_W / v, rel=1e-12)
    # with R -> 0 it is the parallel LC resonance, omega_0 = 1/sqrt(LC) (ch. 14)
    c0 = tuned_capacitance("parallel", OMEGA, complex(0.0, OMEGA * L))
    assert 1 / math.sqrt(L * c0) == pytest.approx(OMEGA, rel=1e-12)


def test_without_a_capacitor_the_supply_is_the_coil():
    st = supply_state("none", None, OMEGA, 3 + 4j, 1 - 1j)
    assert (st.supply_voltage, st.supply_current) == (3 + 4j, 1 - 1j)
    assert st.capacitor_reactive_VA == 0.0


@pytest.mark.parametrize(
    "drive",
    [{}, {"current_A": None, "voltage_V": 40.0}],
    ids=["current", "voltage"],
)
@pytest.mark.parametrize("compensation", ["series", "parallel"])
def test_tuned_capacitor_gives_unity_power_factor_and_balances_energy(drive, compensation):
    r = evaluate(design_from_dict(_demo(**drive, compensation=compensation)))
    assert r.power_factor == pytest.approx(1.0, abs=1e-9)  # tuned at this very state
    # energy balance: the supply's real power is every loss; an ideal capacitor takes none
    losses = r.coil_loss_W + r.ring_loss_W + r.target_loss_W + r.core_loss_W
    assert r.supply_VA * r.power_factor == pytest.approx(losses, rel=1e-9)
    assert r.input_power_W == pytest.approx(losses, rel=1e-9)
    c = r.capacitor_uF * 1e-6
    omega = 2 * math.pi * 400.0
    if compensation == "series":
        assert r.capacitor_current_A == pytest.approx(r.coil_current_A, rel=1e-12)
        assert r.capacitor_voltage_V == pytest.approx(r.coil_current_A / (omega * c), rel=1e-12)
        assert r.supply_current_A == pytest.approx(r.coil_current_A, rel=1e-12)
        # the supply sees R alone: V_supply = R I, V_C = X I = Q V_supply
        resistance, reactance = r.coil_impedance_ohm
        assert r.supply_voltage_V == pytest.approx(resistance * r.coil_current_A, rel=1e-9)
        assert r.capacitor_voltage_V == pytest.approx(
            reactance / resistance * r.supply_voltage_V, rel=1e-9
        )
    else:
        assert r.capacitor_voltage_V == pytest.approx(r.coil_voltage_V, rel=1e-12)
        assert r.supply_voltage_V == pytest.approx(r.coil_voltage_V, rel=1e-12)
        assert r.capacitor_current_A == pytest.approx(omega * c * r.coil_voltage_V, rel=1e-12)
    if drive:
        assert r.supply_voltage_V == pytest.approx(40.0, rel=1e-12)  # voltage_V is the supply's
    else:
        assert r.coil_current_A == pytest.approx(6.0, rel=1e-12)  # current_A stays the coil's
    assert r.capacitor_rating_V >= r.capacitor_voltage_V * (1 - 1e-12)
    if compensation == "series" and not drive:  # V_C = I / (omega C) whatever the state
        assert r.capacitor_rating_V == pytest.approx(r.capacitor_voltage_V, rel=1e-12)
    assert r.capacitor_reactive_VA >= r.capacitor_voltage_V * r.capacitor_current_A * (1 - 1e-9)


def test_a_capacitor_changes_no_pull_where_it_cannot_change_the_coil_current():
    # Under current drive the coil's current is given; in parallel on a voltage the coil sees the
    # supply's voltage: neither capacitor moves the pull (Kirchhoff's laws, no source needed).
    gaps = (1.5, 2.25, 3.0)
    for drive, comp in (
        ({}, "series"),
        ({}, "parallel"),
        ({"current_A": None, "voltage_V": 40.0}, "parallel"),
    ):
        bare, bare_pulls = evaluate_pick_gaps(design_from_dict(_demo(**drive)), gaps)
        cap, cap_pulls = evaluate_pick_gaps(
            design_from_dict(_demo(**drive, compensation=comp)), gaps
        )
        assert cap.pull_N == pytest.approx(bare.pull_N, rel=1e-12)
        assert cap_pulls == pytest.approx(bare_pulls, rel=1e-12)
        assert cap.coil_voltage_V == pytest.approx(bare.coil_voltage_V, rel=1e-12)


def test_a_fixed_series_capacitor_detunes_as_the_part_moves():
    # A voltage-driven series-resonant magnet: the capacitor tuned at the design's 3 mm gap
    # cancels the coil's reactance there only; at 1.5 mm and 5 mm (same temperatures) the coil's
    # reactance has moved, the supply sees a reactance again and the current moves with it.
    data = _demo(current_A=None, voltage_V=10.0, compensation="series")
    data["target"]["radius_mm"] = 9.0  # a part nearly the pole's size moves the reactance most
    r = evaluate(design_from_dict(data))
    fixed = dict(data, drive={**data["drive"], "capacitance_uF": r.capacitor_uF})
    fixed = design_from_dict(fixed)
    temps = {
        "coil": r.temperatures_C["coil_mean"],
        "ring": r.temperatures_C["ring"],
        "target": r.target_arrival_temperature_C,
    }
    c, omega = r.capacitor_uF * 1e-6, 2 * math.pi * 400.0
    tan_phase, pulls = {}, {}
    for gap in (1.5, 3.0, 5.0):
        d = with_gap(fixed, gap)
        system = assemble_circuit(d, DEFAULT_FINENESS, pole_model_for(d, DEFAULT_FINENESS))
        sol = solve_system(system, temps)
        z = sol.coil_voltage / sol.coil_current + 1 / (1j * omega * c)  # what the supply sees
        tan_phase[gap] = abs(z.imag) / z.real  # tan of the supply's phase
        pulls[gap] = net_pull(sol)
    assert tan_phase[3.0] == pytest.approx(0.0, abs=1e-9)
    assert tan_phase[1.5] > 1e-3 and tan_phase[5.0] > 1e-3
    # the worst pull of a study takes the pull at each gap under this same fixed capacitor
    _, gap_pulls = evaluate_pick_gaps(design_from_dict(data), (1.5, 5.0))
    assert gap_pulls == pytest.approx([pulls[1.5], pulls[5.0]], rel=1e-9)


def test_the_rating_is_the_worst_state_and_a_limit_holds_it():
    data = _demo(current_A=None, voltage_V=10.0, compensation="series")
    data["supply"] = {"max_capacitor_voltage_V": 50.0, "max_voltage_V": 12.0}
    r = evaluate(design_from_dict(data))
    # no part present and the coil cold: a sharper resonance than the design point's
    assert r.capacitor_rating_V > r.capacitor_voltage_V
    assert r.margins["capacitor_rating_V"] == pytest.approx(50.0 - r.capacitor_rating_V, rel=1e-12)
    assert r.margins["supply_voltage_V"] == pytest.approx(12.0 - 10.0, rel=1e-9)


def test_a_given_capacitance_is_used_as_it_is():
    r = evaluate(design_from_dict(_demo(compensation="parallel", capacitance_uF=10.0)))
    assert r.capacitor_uF == pytest.approx(10.0, rel=1e-12)
    assert r.power_factor < 0.5  # 10 uF is a third of the tuned ~28 uF: undercompensated


def test_no_compensation_is_the_default():
    plain = evaluate(design_from_dict(_demo()))
    named = evaluate(design_from_dict(_demo(compensation="none")))
    a, b = plain.to_dict(), named.to_dict()
    a.pop("run_time_s"), b.pop("run_time_s")
    assert a == b
    assert a["supply_voltage_V"] == a["coil_voltage_V"] and a["capacitor_uF"] == 0.0
    assert a["supply_VA"] == a["coil_voltage_V"] * a["coil_current_A"]


@pytest.mark.parametrize(
    "drive, message",
    [
        ({"capacitance_uF": 10.0}, "drive.capacitance_uF = 10: a capacitance needs"),
        ({"compensation": "series", "capacitance_uF": -1.0}, "drive.capacitance_uF = -1"),
        ({"compensation": "series", "capacitance_uF": 0.0}, "drive.capacitance_uF = 0"),
        ({"compensation": "resonant"}, "drive.compensation = 'resonant': allowed"),
    ],
)
def test_bad_capacitor_values_are_one_line_and_exit_2(tmp_path, capsys, drive, message):
    from optim.tomlwrite import dumps_toml

    data = _demo(**drive)
    path = tmp_path / "d.toml"
    path.write_text(dumps_toml(data))
    with pytest.raises(DesignError):
        design_from_dict(data)
    assert main(["evaluate", str(path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and message in err[0] and "Traceback" not in err[0]


def test_compensation_is_searchable_like_a_text_key():
    from optim.study.space import parse_search

    problems: list[str] = []
    params = parse_search(
        {
            "drive.compensation": {"choices": ["none", "series", "parallel"]},
            "drive.capacitance_uF": {"low": 1.0, "high": 50.0},
        },
        problems,
    )
    assert problems == []
    assert [p.categorical for p in params] == [True, False]
    problems = []
    parse_search({"drive.compensation": {"choices": ["none", "resonant"]}}, problems)
    assert len(problems) == 1 and "resonant" in problems[0]


def test_supply_state_is_kirchhoff():
    # series: one current, voltages add; parallel: one voltage, currents add (KVL/KCL)
    v, i, c = 12 + 5j, 2 - 1j, 4.7e-6
    s = supply_state("series", c, OMEGA, v, i)
    assert s.supply_voltage == pytest.approx(v + s.capacitor_voltage)
    assert np.isclose(s.capacitor_voltage, i / (1j * OMEGA * c))
    p = supply_state("parallel", c, OMEGA, v, i)
    assert p.supply_current == pytest.approx(i + p.capacitor_current)
    assert np.isclose(p.capacitor_current, 1j * OMEGA * c * v)
    assert dataclasses.is_dataclass(s)


def test_the_handoff_names_the_capacitor_and_its_rating(tmp_path):
    from optim.morning.handoff import write_handoff

    design = design_from_dict(_demo(current_A=None, voltage_V=10.0, compensation="series"))
    r = evaluate(design)
    paths = write_handoff(design, r, tmp_path / "h", {})
    import json

    drive = json.loads(paths["handoff.json"].read_text())["design"]["drive"]
    assert drive["compensation"] == "series"
    # handoff.json states predicted values to 4 significant digits (handoff.STATED_RESOLUTION)
    assert drive["capacitance_uF"] == pytest.approx(r.capacitor_uF, rel=5e-4)
    assert drive["capacitor_rating_V"] == pytest.approx(r.capacitor_rating_V, rel=5e-4)
    assert f"capacitor: {r.capacitor_uF:.4g} uF in series" in paths["profile.dxf"].read_text()


def test_a_tolerance_sample_keeps_the_capacitor_as_built():
    # a built magnet's capacitor does not retune to each sample's coil: the samples of a
    # tolerance table carry the nominal design's tuned capacitance (file value included)
    from optim.study.tolerance import _capacitor_as_built, varied_design

    design = design_from_dict(_demo(current_A=None, voltage_V=10.0, compensation="series"))
    r = evaluate(design)
    built = _capacitor_as_built(design, False)
    assert built.drive.capacitance == pytest.approx(r.capacitor_uF * 1e-6, rel=1e-12)
    sample = varied_design(built, {"coil.length_mm": 0.5})
    assert sample.drive.capacitance == built.drive.capacitance
    assert evaluate(sample).capacitor_uF == pytest.approx(r.capacitor_uF, rel=1e-12)
    assert _capacitor_as_built(design_from_dict(_demo()), False).drive.capacitance is None
