"""A shading winding ([ring] turns closed through a capacitor or resistor): against a filament
loop model, the solid ring's low-frequency limit, the capacitor's identities, its mistakes."""

from __future__ import annotations

import math

import numpy as np
import pytest

from models.design import design_from_dict, load_design, with_value
from models.errors import DesignError
from models.evaluate import evaluate
from models.fast.filaments import mutual, self_inductance_rect
from models.shading import winding_resistance
from optim.cli import main
from optim.demo import DEMO_DESIGN, DEMO_SHADING_WINDING
from tests.conftest import demo_dict


def _winding(**ring) -> dict:
    d = demo_dict()
    d["ring"].update(ring)
    return d


def _air_pole(d: dict) -> dict:
    """The demo's pole made non-magnetic (mu_r 1: no iron in the fast model) and its part far
    away (60 mm: its reaction on the winding is negligible), leaving coil and winding alone."""
    d["pole"] = {"radius_mm": 10.0, "length_mm": 40.0, "relative_permeability": 1.0}
    d["pole"]["conductivity_S_per_m"] = 0.0
    d["target"].update(gap_mm=60.0)
    return d


def test_a_thin_shorted_winding_is_a_filament_loop():
    # Maxwell's mutual inductance (models.fast.filaments.mutual, checked against its published
    # values in tests/models/fast/test_filaments.py) between a 40 x 80 grid of coil filaments and a 10 x 10
    # grid of filaments over the groove sharing the winding's 50 turns (one filament at the
    # section's centre is 2.3 % low: the flux through a loop grows as r^2, whose mean over
    # 4-7 mm exceeds r_mean^2 by 2.5 %); the winding's own inductance N^2 L of its section
    # (self_inductance_rect, a uniform density: a stranded winding); its wire's resistance.
    # I_w = -j omega M I / (R + j omega L). 1 %: the fast model's 4 x 8 sub-cells of coil and
    # winding against these grids (the pull's own error against the FEM is ~1 %, DEVELOPERS.md).
    data = _air_pole(_winding(turns=50, wire_diameter_mm=0.1, resistance_ohm=0.0))
    design = design_from_dict(data)
    r = evaluate(design, isothermal=True)
    coil, ring = design.coil, design.ring
    rr = np.linspace(coil.inner_radius, coil.outer_radius, 41)
    zz = np.linspace(coil.z_back, coil.z_front, 81)
    rc, zc = np.meshgrid(0.5 * (rr[1:] + rr[:-1]), 0.5 * (zz[1:] + zz[:-1]))
    r_mean = 0.5 * (ring.inner_radius + ring.outer_radius)
    wr = np.linspace(ring.inner_radius, ring.outer_radius, 11)
    wz = np.linspace(-ring.depth, 0.0, 11)
    wr, wz = np.meshgrid(0.5 * (wr[1:] + wr[:-1]), 0.5 * (wz[1:] + wz[:-1]))
    pairs = [
        mutual(rc.ravel(), zc.ravel(), a, b) for a, b in zip(wr.ravel(), wz.ravel(), strict=True)
    ]
    m = coil.turns * ring.turns * float(np.mean(pairs))
    self_l = ring.turns**2 * float(self_inductance_rect(r_mean, ring.width, ring.depth))
    omega = design.drive.omega
    i_w = -1j * omega * m * design.drive.current / (winding_resistance(ring) + 1j * omega * self_l)
    assert r.ring_current_A == pytest.approx(abs(i_w), rel=0.01)
    phase = math.degrees(np.angle(i_w))
    assert (r.ring_phase_deg - phase + 180.0) % 360.0 - 180.0 == pytest.approx(0.0, abs=1.0)
    assert r.ring_ampere_turns_A == pytest.approx(50 * r.ring_current_A, rel=1e-12)
    assert r.ring_loss_W == pytest.approx(r.ring_current_A**2 * winding_resistance(ring), 1e-9)


@pytest.mark.parametrize("frequency_Hz", [1.0])
def test_one_full_turn_shorted_tends_to_the_solid_ring(frequency_Hz):
    # At 1 Hz the skin depth in copper (65 mm) dwarfs the 3 x 3 mm section and the ring's
    # reactance is a few per cent of its resistance: both carry the current the EMF drives
    # through their own resistance, lagging the coil's by 90 degrees. The stranded turn (a
    # uniform density) has R = rho 2 pi r_mean / A, the solid ring (a density ~ 1 / r at DC)
    # R = 2 pi rho / (d ln(ro / ri)): 2.6 % apart here, so it is I R that must agree. Not to
    # round-off: the winding averages the EMF over its section by area, the solid ring weights
    # each radius by its conductance ~ 1 / r, and the EMF grows across the 4-7 mm (measured 1.0 %
    # apart); 3 % is that weighting's size, (7 - 4) / 5.5 squared over 12, with room.
    solid = demo_dict()
    solid["drive"]["frequency_Hz"] = frequency_Hz
    wound = _winding(turns=1, resistance_ohm=0.0)
    wound["drive"]["frequency_Hz"] = frequency_Hz
    a = evaluate(design_from_dict(solid), isothermal=True)
    design = design_from_dict(wound)
    b = evaluate(design, isothermal=True)
    ring = design.ring
    r_solid = 2 * math.pi / (ring.conductivity * ring.depth * math.log(7.0 / 4.0))
    assert b.ring_current_A * winding_resistance(ring) == pytest.approx(
        a.ring_current_A * r_solid, rel=0.03
    )
    assert b.ring_phase_deg == pytest.approx(a.ring_phase_deg, abs=0.1)  # measured 0.005 deg


def test_the_capacitor_identities():
    # Rms phasors through a capacitor alone: V = |I| / (omega C), Q = |I|^2 / (omega C) = V |I|
    # (circuit theory); no loss in it, so the terminal power is every loss (to round-off).
    design = load_design(DEMO_SHADING_WINDING)
    r = evaluate(design, isothermal=True)
    omega, c = design.drive.omega, design.ring.capacitance
    assert r.ring_closing_voltage_V == pytest.approx(r.ring_current_A / (omega * c), rel=1e-12)
    assert r.ring_capacitor_var == pytest.approx(r.ring_closing_voltage_V * r.ring_current_A, 1e-12)
    assert r.ring_closing_loss_W == 0.0
    parts = r.coil_loss_W + r.ring_loss_W + r.target_loss_W + r.core_loss_W
    assert r.input_power_W == pytest.approx(parts, rel=1e-9)


def test_a_closing_resistor_takes_its_loss_outside_the_ring():
    # |I|^2 R in the resistor, in the terminal power, not in the ring's wire (circuit theory).
    design = design_from_dict(_winding(turns=200, wire_diameter_mm=0.18, resistance_ohm=2.0))
    r = evaluate(design, isothermal=True)
    assert r.ring_closing_loss_W == pytest.approx(2.0 * r.ring_current_A**2, rel=1e-12)
    assert r.ring_closing_voltage_V == pytest.approx(2.0 * r.ring_current_A, rel=1e-12)
    assert r.ring_loss_W == pytest.approx(
        r.ring_current_A**2 * winding_resistance(design.ring), rel=1e-9
    )
    parts = r.coil_loss_W + r.ring_loss_W + r.target_loss_W + r.core_loss_W
    assert r.input_power_W == pytest.approx(parts + r.ring_closing_loss_W, rel=1e-9)
    assert math.isnan(r.ring_capacitor_var)


def test_the_demo_winding_pulls_harder_than_the_solid_ring():
    # The example's claim (optim/demo/demo_shading_winding.toml): 5.07 against 3.39 mN at the
    # demo's thermal state (regression values, fast model; the solid ring is the demo design).
    winding = evaluate(load_design(DEMO_SHADING_WINDING))
    solid = evaluate(load_design(DEMO_DESIGN))
    assert winding.pull_N == pytest.approx(5.069e-3, rel=0.01)
    assert solid.pull_N == pytest.approx(3.391e-3, rel=0.01)
    assert any("a shading winding: checked against" in w for w in winding.warnings)


def test_its_keys_are_design_keys():
    design = load_design(DEMO_SHADING_WINDING)
    assert with_value(design, "ring.capacitance_uF", 50.0).ring.capacitance == pytest.approx(5e-5)
    # a bare key of two tables names the one the file gives, else it is ambiguous
    assert with_value(load_design(DEMO_DESIGN), "turns", 250).coil.turns == 250
    with pytest.raises(DesignError, match="turns: ambiguous"):
        with_value(design, "turns", 250)


@pytest.mark.parametrize(
    "ring, message",
    [
        (
            {"turns": 20},
            "ring.turns = 20: a winding needs what closes it: give capacitance_uF and / or "
            "resistance_ohm (0: shorted)",
        ),
        ({"capacitance_uF": 3.0}, "ring.capacitance_uF = 3.0: a solid ring is closed on itself"),
        ({"resistance_ohm": 0.0}, "ring.resistance_ohm = 0.0: a solid ring is closed on itself"),
        (
            {"turns": 200, "wire_diameter_mm": 0.3, "resistance_ohm": 0.0},
            "ring.wire_diameter_mm = 0.3: 200 turns do not fit the 9 mm^2 groove; must be <= "
            "0.2121 mm",
        ),
        ({"turns": 20, "capacitance_uF": -1.0}, "ring.capacitance_uF = -1.0: must be a number > 0"),
    ],
)
def test_each_mistake_is_one_line(ring, message):
    with pytest.raises(DesignError) as info:
        design_from_dict(_winding(**ring))
    assert len(info.value.problems) == 1
    assert info.value.problems[0].startswith(message)


def test_the_fem_refuses_a_winding_in_one_line(capsys):
    assert main(["verify", str(DEMO_SHADING_WINDING)]) == 2
    err = capsys.readouterr().err.strip()
    assert err == (
        "eddypull: error: ring.turns = 200: the FEM reference models a solid ring only; a "
        "shading winding is checked by the fast model alone"
    )
