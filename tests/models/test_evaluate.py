"""The evaluate entry point: result fields, identities and the warnings that mark its limits."""

from __future__ import annotations

import math

import pytest

from models import evaluate, load_design
from models.design import with_value
from tests.conftest import DEMO


@pytest.fixture(scope="module")
def demo_result():
    return evaluate(load_design(DEMO), isothermal=True)


def test_result_identities(demo_result):
    r = demo_result
    # pull is the sum of its split; lift ratio is pull over weight (definitions)
    assert r.pull_N == pytest.approx(sum(r.pull_by_source_N.values()), rel=1e-12)
    assert r.lift_ratio == pytest.approx(r.pull_N / r.target_weight_N, rel=1e-12)
    # weight = rho V g with rho = 2703 kg/m^3 (IEC 60889, from memory), g = 9.80665 m/s^2 (CGPM)
    assert r.target_weight_N == pytest.approx(2703.0 * math.pi * 5e-3**2 * 1e-3 * 9.80665)
    # energy balance (Poynting): the terminal power is every loss, the core's included
    total = r.target_loss_W + r.ring_loss_W + r.coil_loss_W + r.core_loss_W
    assert r.core_loss_W > 0
    assert r.input_power_W == pytest.approx(total, rel=1e-12)
    assert r.core_loss_W == pytest.approx(
        r.core_eddy_loss_W + r.core_hysteresis_loss_W + r.core_excess_loss_W, rel=1e-12
    )
    # |V| = |Z| |I| and VA = |V| |I| (definitions)
    z = complex(*r.coil_impedance_ohm)
    assert r.coil_voltage_V == pytest.approx(abs(z) * r.coil_current_A, rel=1e-12)
    assert r.supply_VA == pytest.approx(r.coil_voltage_V * r.coil_current_A, rel=1e-12)
    assert r.warnings == []


def test_ring_current_lags_the_coil_current(demo_result):
    # Lenz's law: a shorted ring's current opposes the coil's (phase between -90 and -180 deg when
    # it is inductive, common practice, no source)
    assert -180.0 < demo_result.ring_phase_deg < -90.0


def test_to_dict_is_json_ready(demo_result):
    import json

    d = json.loads(json.dumps(demo_result.to_dict()))
    assert d["pull_N"] == demo_result.pull_N


def test_outside_validated_range_warns():
    d = load_design(DEMO)
    r = evaluate(with_value(d, "frequency_Hz", 20000.0), isothermal=True)
    assert any("frequency_Hz = 2e+04 is outside the range checked" in w for w in r.warnings)
    assert any("the 0.5 mm sheets are 9.7 skin depths thick at 20000 Hz" in w for w in r.warnings)


def test_saturation_warns():
    # 10x the current: the linear model's core flux density scales with it, past 1.5 T
    d = with_value(load_design(DEMO), "current_A", 60.0)
    r = evaluate(d, isothermal=True)
    assert r.core_peak_flux_density_T > 1.5
    assert any("exceeds the steel's linear limit" in w for w in r.warnings)


def test_linearity_in_current():
    # A linear model: pull and losses scale with I^2, the ring current with I (internal identity)
    d = load_design(DEMO)
    a = evaluate(d, isothermal=True)
    b = evaluate(with_value(d, "current_A", 12.0), isothermal=True)
    assert b.pull_N == pytest.approx(4 * a.pull_N, rel=1e-9)
    assert b.ring_loss_W == pytest.approx(4 * a.ring_loss_W, rel=1e-9)
    assert b.ring_current_A == pytest.approx(2 * a.ring_current_A, rel=1e-9)
