"""The pull at twice the drive frequency (models.fast.ripple) and the held part's chatter margin.

References: the instantaneous currents i(t) = sqrt(2) Re(I e^{jwt}) of rms phasors and the
Lorentz force of coaxial loops, -i_i(t) i_j(t) dM_ij/dz_i, sampled over a period and split by
numpy's FFT (a general-purpose library): its mean must be the model's pull and its 2f line the
model's ripple. A shorted ring beside a coil (Lenz's law, I_r = -j w M I / (R + j w L)) repels
with ripple / |mean| = sqrt(1 + (R / w L)^2), F proportional to cos^2 in the inductive limit:
the force of an unshaded AC magnet falls to zero twice a cycle, which is why AC relays carry
shading rings (from memory, e.g. Roters, Electromagnetic Devices, 1941, on AC magnets).
"""

from __future__ import annotations

import copy
import math
from types import SimpleNamespace

import numpy as np
import pytest
from scipy.constants import g as standard_gravity

from models.design import design_from_dict
from models.evaluate import DEFAULT_FINENESS, evaluate, pole_model_for
from models.fast.circuit import COIL, TARGET, assemble_circuit, solve_system
from models.fast.filaments import mutual_pair, self_inductance_round
from models.fast.pull import net_pull
from models.fast.ripple import (
    pair_force_phasors,
    pull_ripple,
    pull_twice_frequency,
    pull_waveform,
)
from tests.conftest import demo_dict


def _design(**tables):
    d = demo_dict()
    for name, values in tables.items():
        d[name] = {**d.get(name, {}), **values}
    return design_from_dict(copy.deepcopy(d))


def _solution(design):
    model = pole_model_for(design, DEFAULT_FINENESS)
    return solve_system(assemble_circuit(design, DEFAULT_FINENESS, model), None), model


@pytest.mark.parametrize(
    ("pole", "complex_mu"),
    [("electrical-steel-m400", True), ("ferrite-mnzn", False)],
)
@pytest.mark.parametrize("gap_mm", [3.0, 0.5])
def test_time_domain_reconstruction(pole, complex_mu, gap_mm):
    design = _design(pole={"material": pole}, target={"gap_mm": gap_mm})
    sol, model = _solution(design)
    # The laminated stack's complex permeability puts the sheet currents out of phase with their
    # sources; the ferrite's real one does not: both must reconstruct.
    assert np.iscomplexobj(model.matrix) == complex_mu
    t, force = pull_waveform(sol, samples=64)
    line = np.fft.rfft(force) / force.size
    pull, ripple = net_pull(sol), pull_ripple(sol)
    # Mean and 2f line of 64 samples of a signal with no harmonic above 2f: exact to rounding
    # (1e-10 of the pull: sums over ~10^5 products).
    assert line[0].real == pytest.approx(pull, rel=1e-10)
    assert 2.0 * abs(line[2]) == pytest.approx(ripple, rel=1e-10)
    assert max(abs(line[1]), abs(line[3]), abs(line[4])) < 1e-10 * abs(pull)
    # The extremes over the cycle are pull -/+ ripple (64 samples of a cos 2wt: the peaks are
    # sampled exactly only at the right phase; within 1 - cos(2 pi / 64) of the ripple).
    slack = (1 - math.cos(2 * math.pi / 64)) * ripple
    assert force.max() == pytest.approx(pull + ripple, abs=slack + 1e-12)
    assert force.min() == pytest.approx(pull - ripple, abs=slack + 1e-12)


def _ring_above_coil(resistance):
    """A 10 mm coil loop at z = 0 and a shorted ring of 8 mm radius, 1 mm wire, 3 mm above it,
    1 A rms at 1 kHz: the ring's current and the mean pull and 2f phasor on it."""
    omega = 2 * math.pi * 1000.0
    m, dmdz = mutual_pair(8e-3, 3e-3, 10e-3, 0.0)
    m, dmdz = float(m), float(dmdz)
    L = float(self_inductance_round(8e-3, 0.5e-3))
    i_coil = 1.0 + 0j
    i_ring = -1j * omega * m * i_coil / (resistance + 1j * omega * L)
    mean, p2 = pair_force_phasors([i_ring], [i_coil], [[dmdz]])
    return mean, p2, omega, L, m, dmdz


def test_shorted_ring_inductive_limit_is_cos_squared():
    mean, p2, omega, L, m, dmdz = _ring_above_coil(resistance=1e-12)
    # R -> 0: I_r = -M/L I, F = -(M/L) |I|^2 dM/dz (1 + cos 2wt) (Lenz: repulsion, zero twice a
    # cycle).
    assert mean < 0  # pushed away from the coil: "pull" counts toward the coil positive
    assert mean == pytest.approx((m / L) * dmdz, rel=1e-9)
    assert abs(p2) == pytest.approx(abs(mean), rel=1e-9)
    assert p2.real == pytest.approx(mean, rel=1e-9)  # in phase: pull(t) = mean (1 + cos 2wt)


@pytest.mark.parametrize("r_over_wl", [0.1, 1.0, 10.0, 1000.0])
def test_shorted_ring_ripple_against_closed_form(r_over_wl):
    omega = 2 * math.pi * 1000.0
    L = float(self_inductance_round(8e-3, 0.5e-3))
    mean, p2, *_ = _ring_above_coil(resistance=r_over_wl * omega * L)
    # ripple / |mean| = sqrt(1 + (R / w L)^2) (module docstring: Lenz's law by hand).
    assert abs(p2) / abs(mean) == pytest.approx(math.sqrt(1 + r_over_wl**2), rel=1e-9)


def test_chatter_margin_is_mean_minus_ripple_minus_weight():
    # Isothermal, holding gap = pick gap: arrival, hold and pick are one state, so the margin
    # is pull_N - pull_ripple_N - weight exactly (the definition, issue 31).
    design = _design(thermal={"orientation": "face-down"})
    r = evaluate(design, isothermal=True)
    assert r.hold_chatter_margin_N == pytest.approx(
        r.pull_N - r.pull_ripple_N - r.target_weight_N, rel=1e-12
    )
    up = evaluate(_design(thermal={"orientation": "face-up"}), isothermal=True)
    # Face up the part lies on the face: its weight holds it there.
    assert up.hold_chatter_margin_N == pytest.approx(
        r.pull_N - r.pull_ripple_N + r.target_weight_N, rel=1e-12
    )
    weight = design.target.density * design.target.volume * standard_gravity
    assert r.target_weight_N == pytest.approx(weight, rel=1e-12)


def test_chatter_margin_takes_the_worse_state_at_the_holding_gap():
    design = _design(thermal={"hold_gap_mm": 1.0, "hold_time_s": 30.0, "period_s": 300.0})
    r = evaluate(design)
    held = _design(
        target={"gap_mm": 1.0}, thermal={"hold_gap_mm": 1.0, "hold_time_s": 30.0, "period_s": 300.0}
    )
    model = pole_model_for(held, DEFAULT_FINENESS)
    system = assemble_circuit(held, DEFAULT_FINENESS, model)
    temps = {k: v for k, v in r.temperatures_C.items() if k in ("ring",)}
    coil = r.temperatures_C["coil_mean"]
    margins = []
    for target_c in (r.target_arrival_temperature_C, r.target_hold_temperature_C):
        sol = solve_system(system, {**temps, "coil": coil, "target": target_c})
        margins.append(net_pull(sol) - pull_ripple(sol) - r.target_weight_N)
    # The same circuits solved by hand at the result's temperatures (rounding of the
    # temperatures' own solve: 1e-9).
    assert r.hold_chatter_margin_N == pytest.approx(min(margins), rel=1e-9)
    assert r.hold_chatter_margin_N <= margins[0] and r.hold_chatter_margin_N <= margins[1]


def test_result_fields_against_the_waveform():
    # Isothermal: the pick state is every part at 20 degC, the circuit solved here by hand; the
    # waveform's mean is the result's pull_N and its 2f line pull_ripple_N (rounding, 1e-10).
    design = _design()
    r = evaluate(design, isothermal=True)
    sol, _ = _solution(design)
    _, force = pull_waveform(sol, samples=64)
    line = np.fft.rfft(force) / force.size
    assert line[0].real == pytest.approx(r.pull_N, rel=1e-10)
    assert 2.0 * abs(line[2]) == pytest.approx(r.pull_ripple_N, rel=1e-10)


def test_pull_twice_frequency_of_two_loops_is_the_product_to_sum_identity():
    # i_k(t) = sqrt 2 Re(I_k e^{jwt}): i_1 i_2 = Re(I_1 conj(I_2)) + Re(I_1 I_2 e^{2jwt})
    # (product-to-sum, trigonometry), so the force -i_1 i_2 dM/dz has the 2f phasor
    # -I_1 I_2 dM/dz; its size is the ripple.
    i_t, i_c, dmdz = 0.8 - 2.0j, 150.0 + 60.0j, -3.0e-6
    sol = SimpleNamespace(
        cells=SimpleNamespace(part=np.array([TARGET, COIL])),
        cell_current=np.array([i_t, i_c]),
        dMdz=np.array([[0.0, dmdz], [0.0, 0.0]]),
        panel_dMdz=None,
        panel_current=np.zeros(0),
    )
    p2 = pull_twice_frequency(sol)
    assert p2 == pytest.approx(-i_t * i_c * dmdz, rel=1e-12)
    assert pull_ripple(sol) == pytest.approx(abs(i_t * i_c * dmdz), rel=1e-12)
