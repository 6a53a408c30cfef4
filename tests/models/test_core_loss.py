"""Core losses of the laminated pole: the sheets' complex permeability against the exact
one-dimensional solution, the grades' specified losses, and the loss in the fast model's circuit,
energy balance and heat."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from scipy.constants import mu_0
from scipy.integrate import solve_bvp

from models.core_loss import (
    classical_specific_loss,
    coil_current_with_core_loss,
    lamination_permeability,
    sheet_loss_density,
)
from models.design import load_design, with_value
from models.evaluate import DEFAULT_FINENESS, evaluate, pole_model_for
from models.fast.circuit import assemble_circuit, solve_system
from models.materials import CORE_MATERIALS, MATERIALS
from models.pick import part_losses
from models.thermal.network import face_node_thickness
from optim.demo import DEMO_DESIGN

M400 = MATERIALS["electrical-steel-m400"]


def _frequency_for(ratio, steel=M400, mu_r=2000.0):
    """The frequency at which the sheets are ``ratio`` skin depths thick [Hz]."""
    delta = steel.lamination_thickness / ratio
    return 2.0 / (delta**2 * 2.0 * math.pi * mu_0 * mu_r * steel.sheet_conductivity)


def _sheet_by_bvp(mu_r, sigma, d, f):
    """The field in one sheet, H'' = j omega mu sigma H with H = 1 A/m on both faces, solved
    numerically (scipy.integrate.solve_bvp) instead of in closed form: (mean H, loss per unit
    volume (1/d) int |H'|^2 / sigma dx) [A/m], [W/m^3] (rms)."""
    k2 = 2.0 * math.pi * f * mu_0 * mu_r * sigma * d * d  # in u = x / d

    def rhs(u, y):  # y = (Re H, Im H, Re dH/du, Im dH/du); d2H/du2 = j k2 H
        return np.vstack([y[2], y[3], -k2 * y[1], k2 * y[0]])

    def bc(ya, yb):
        return np.array([ya[0] - 1.0, ya[1], yb[0] - 1.0, yb[1]])

    u = np.linspace(-0.5, 0.5, 401)
    y0 = np.vstack([np.ones_like(u), np.zeros_like(u), np.zeros_like(u), np.zeros_like(u)])
    sol = solve_bvp(rhs, bc, u, y0, tol=1e-9, max_nodes=100000)
    assert sol.success, sol.message
    us = np.linspace(-0.5, 0.5, 20001)
    h = sol.sol(us)
    mean_h = np.trapezoid(h[0] + 1j * h[1], us)
    loss = np.trapezoid(h[2] ** 2 + h[3] ** 2, us) / (sigma * d * d)  # (1/d) int |H'|^2/sigma dx
    return mean_h, loss


@pytest.mark.parametrize("ratio", [0.1, 0.5, 1.0, 2.0, 3.0, 5.0])
def test_sheet_permeability_and_loss_match_the_one_dimensional_solution(ratio):
    # One sheet in a uniform tangential field: the diffusion equation of a good conductor
    # (Maxwell's equations without displacement current), solved by a general-purpose boundary
    # value solver. mu_eff = mu <H> / H_s and the loss (1/d) int |J|^2 / sigma dx, J = H'.
    s, d = M400.sheet_conductivity, M400.lamination_thickness
    f = _frequency_for(ratio)
    mean_h, loss = _sheet_by_bvp(2000.0, s, d, f)
    mu = lamination_permeability(2000.0, s, d, f)
    assert mu == pytest.approx(2000.0 * mean_h, rel=1e-6)
    b_hat = math.sqrt(2.0) * abs(mu_0 * mu)  # mean peak flux density for H_s = 1 A/m rms
    assert sheet_loss_density(2000.0, s, d, f, b_hat) == pytest.approx(loss, rel=1e-6)


def test_sheet_loss_tends_to_the_classical_formula():
    # Low-frequency limit pi^2 sigma d^2 f^2 B_hat^2 / 6 (classical eddy loss of thin sheets,
    # e.g. Lammeraner & Stafl, Eddy Currents); at d/delta = 1.9-2.4 it overstates by 2-5 %.
    s, d = M400.sheet_conductivity, M400.lamination_thickness

    def exact_over_classical(ratio):
        f = _frequency_for(ratio)
        return sheet_loss_density(2000.0, s, d, f, 1.3) / classical_specific_loss(s, d, 1.0, f, 1.3)

    assert exact_over_classical(0.1) == pytest.approx(1.0, abs=1e-6)
    assert 0.95 < exact_over_classical(2.4) < exact_over_classical(1.9) < 0.985


@pytest.mark.parametrize(
    "name, thickness_mm, total_W_per_kg",
    # IEC 60404-8-4: the grade's name is its maximum specific total loss at 1.5 T, 50 Hz
    # (W/kg x 100) and its nominal thickness (mm x 100).
    [("electrical-steel-m400", 0.50, 4.00), ("electrical-steel-m270", 0.35, 2.70)],
)
def test_grade_loss_law_gives_the_specified_loss(name, thickness_mm, total_W_per_kg):
    m = MATERIALS[name]
    assert m.lamination_thickness == pytest.approx(thickness_mm * 1e-3)
    law = m.core_loss
    total = (
        classical_specific_loss(m.sheet_conductivity, m.lamination_thickness, m.density, 50.0, 1.5)
        + law.hysteresis(50.0, 1.5)
        + law.excess(50.0, 1.5)
    )
    assert total == pytest.approx(total_W_per_kg, rel=1e-12)
    assert law.alpha == 2.0 and law.k_h > 0 and law.k_e > 0


def test_every_core_material_fits_its_data_and_names_its_source():
    for name in CORE_MATERIALS:
        m = MATERIALS[name]
        if m.conductivity > 0:  # solid steel: the fast model refuses it, the FEM has its bulk eddy
            continue
        law = m.core_loss
        assert law is not None and law.source, name
        for b, f, total in law.points:
            classical = 0.0
            if m.sheet_conductivity:
                classical = classical_specific_loss(
                    m.sheet_conductivity, m.lamination_thickness, m.density, f, b
                )
            fitted = classical + law.hysteresis(f, b) + law.excess(f, b)
            assert fitted == pytest.approx(total, rel=1e-12), name
        assert "core_loss" in m.sources or law.source


def test_ferrite_saturation_falls_with_temperature():
    # From memory of makers' tables (models/materials.py): about 0.49 T at 25 degC, 0.39 T at
    # 100 degC, falling toward the Curie point near 210 degC; the library stops it at 200 degC.
    m = MATERIALS["ferrite-mnzn"]
    assert m.conductivity == 0.0 and m.lamination_thickness is None
    assert m.saturation_at(25.0) == pytest.approx(0.49)
    assert m.saturation_at(100.0) == pytest.approx(0.39)
    temps = np.linspace(25.0, 200.0, 30)
    assert np.all(np.diff([m.saturation_at(t) for t in temps]) < 0)
    assert m.max_temperature_C == 200.0


def test_series_resistance_current_is_the_linear_answer_for_a_quadratic_loss():
    # A loss R |I|^2 is an ordinary resistor: I = V / (z + R) exactly (Ohm's law).
    z, r = 3.0 + 40.0j, 2.5
    i = coil_current_with_core_loss(230.0, z, lambda x: r * x * x)
    assert i == pytest.approx(230.0 / (z + r), rel=1e-12)
    # a loss growing faster than |I|^2 still gives V = (z + P(|I|) / |I|^2) I
    i = coil_current_with_core_loss(230.0, z, lambda x: 0.3 * x**2.7)
    assert 230.0 == pytest.approx(abs((z + 0.3 * abs(i) ** 0.7) * i), rel=1e-12)


def _demo(**values):
    d = load_design(DEMO_DESIGN)
    for key, value in values.items():
        d = with_value(d, key, value)
    return d


def _lossless(design):
    """``design`` with its pole given by its permeability alone: no sheets, no loss law."""
    pole = dataclasses.replace(
        design.pole,
        material=None,
        lamination_thickness=None,
        sheet_conductivity=None,
        core_loss=None,
    )
    return dataclasses.replace(design, pole=pole)


def _solved(design):
    system = assemble_circuit(design, DEFAULT_FINENESS, pole_model_for(design, DEFAULT_FINENESS))
    return solve_system(system)


@pytest.mark.parametrize("frequency", [200.0, 2000.0])
def test_circuit_eddy_loss_equals_the_volume_integral_in_the_steel(frequency):
    # Poynting's theorem inside the homogenised stack: the loss the circuit takes from
    # Im(M_iron) equals int omega |Im mu| / (mu_0 |mu|^2) |B|^2 dV over the steel, here summed over
    # the steel's ~100 rectangles from the field the model computes (a coarse quadrature:
    # measured 1.2 % apart on the demo).
    design = _demo(**{"drive.frequency_Hz": frequency})
    sol = _solved(design)
    mu = design.pole.effective_permeability(frequency)
    br, bz = sol.core_grid.field(sol.cell_current)
    density = 2 * math.pi * frequency * abs(mu.imag) / (mu_0 * abs(mu) ** 2)
    integral = float((density * (np.abs(br) ** 2 + np.abs(bz) ** 2)) @ sol.core_grid.volume)
    assert sol.core.eddy == pytest.approx(integral, rel=0.03)


def test_core_eddy_loss_grows_as_f_squared_then_slower():
    # Classical thin-sheet loss ~ f^2 B^2 at fixed current (B nearly fixed), slower once the
    # sheets are thick against their skin depth (d/delta = 1 at 213 Hz, 3 at 1.9 kHz).
    loss = {f: _solved(_demo(**{"drive.frequency_Hz": f})).core.eddy for f in (20, 40, 2000, 4000)}
    assert loss[40] / loss[20] == pytest.approx(4.0, rel=0.01)
    assert loss[4000] / loss[2000] < 0.85 * 4.0


def test_voltage_drive_balance_includes_hysteresis():
    # Poynting at the terminals with the hysteresis and excess losses as a series resistance:
    # Re(V I*) = every loss, to rounding, under voltage drive too.
    design = _demo()
    design = dataclasses.replace(
        design, drive=dataclasses.replace(design.drive, current=None, voltage=60.0)
    )
    r = evaluate(design, isothermal=True)
    assert r.core_hysteresis_loss_W > 0 and r.core_excess_loss_W > 0
    total = r.coil_loss_W + r.ring_loss_W + r.target_loss_W + r.core_loss_W
    assert r.input_power_W == pytest.approx(total, rel=1e-12)


def test_core_loss_heats_the_face_and_core_nodes():
    # The face and core nodes receive the whole core loss (energy conservation), and with it the
    # coil, ring and part run hotter than beside a lossless pole of the same permeability.
    design = _demo(**{"drive.frequency_Hz": 2000.0})
    sol = _solved(design)
    losses = part_losses(sol, face_node_thickness(design))
    assert losses["face"] + losses["core"] == pytest.approx(sol.core.total, rel=1e-12)
    assert losses["face"] > 0 and losses["core"] > 0
    lossy = evaluate(design)
    lossless = evaluate(_lossless(design))
    assert lossless.core_loss_W == 0.0
    for part in ("coil", "core", "face", "ring", "target"):
        assert lossy.temperatures_C[part] > lossless.temperatures_C[part] + 1.0, part


def test_a_pole_without_sheet_data_is_lossless_and_says_so():
    design = _demo()
    r = evaluate(_lossless(design), isothermal=True)
    assert r.core_loss_W == 0.0
    assert any("taken as thin sheets without loss" in w for w in r.warnings)
