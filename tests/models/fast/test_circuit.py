"""The loop equations' public entry points (models.fast.circuit): coil_shares, solve_circuit and
the two records (CircuitSystem, CircuitSolution).

References: Tellegen's theorem / conservation of energy, the terminal power Re(V conj(I)) equals
every loss (Desoer & Kuh 1969, ch. 9); the resistance of annealed copper rises by 0.00393 per K
from 20 degC (IEC 60028); a coil's ampere-turns are its turns times its current (Ampere's law).
"""

from __future__ import annotations

import copy
from types import SimpleNamespace

import numpy as np
import pytest

from models.design import design_from_dict
from models.evaluate import DEFAULT_FINENESS, pole_model_for
from models.fast.circuit import (
    COIL,
    CircuitSolution,
    CircuitSystem,
    assemble_circuit,
    coil_shares,
    solve_circuit,
    solve_system,
)
from tests.conftest import demo_dict


def _coils(*pairs):
    return SimpleNamespace(windings=tuple(SimpleNamespace(turns=t, sense=s) for t, s in pairs))


def test_coil_shares_of_one_coil_is_one_number():
    share = coil_shares(_coils((300, 1)), 32)
    assert np.isscalar(share) and share == pytest.approx(300 / 32, rel=1e-15)


def test_coil_shares_of_several_coils_add_to_their_turns():
    # two coils in series, the second wound the other way: each keeps its ampere-turns
    shares = coil_shares(_coils((300, 1), (120, -1)), 64)
    assert shares.shape == (64,)
    assert shares[:32].sum() == pytest.approx(300.0, rel=1e-14)
    assert shares[32:].sum() == pytest.approx(-120.0, rel=1e-14)
    assert np.all(shares[:32] > 0.0) and np.all(shares[32:] < 0.0)
    # one coil wound -1: an array, every share negative
    assert np.all(coil_shares(_coils((200, -1)), 8) == -25.0)


@pytest.fixture(scope="module")
def demo():
    design = design_from_dict(copy.deepcopy(demo_dict()))
    return design, pole_model_for(design, DEFAULT_FINENESS)


def test_solve_circuit_is_assemble_then_solve(demo):
    design, model = demo
    one = solve_circuit(design, DEFAULT_FINENESS, model)
    system = assemble_circuit(design, DEFAULT_FINENESS, model)
    two = solve_system(system)
    assert isinstance(one, CircuitSolution) and isinstance(system, CircuitSystem)
    assert np.array_equal(one.cell_current, two.cell_current)
    assert one.coil_voltage == two.coil_voltage


def test_terminal_power_is_every_loss(demo):
    # Tellegen / energy: Re(V conj(I)) = sum |I_k|^2 R_k over the solid cells + the coil's copper
    # + the core's losses (measured equal to rounding on the demo, 40.6 W).
    design, model = demo
    sol = solve_circuit(design, DEFAULT_FINENESS, model)
    supplied = float(np.real(sol.coil_voltage * np.conj(sol.coil_current)))
    solid = sol.cells.part != COIL
    cells = float(np.abs(sol.cell_current[solid]) ** 2 @ sol.cell_resistance[solid])
    losses = cells + sol.coil_resistance * abs(sol.coil_current) ** 2 + sol.core.total
    assert supplied == pytest.approx(losses, rel=1e-9)
    # the coil's sub-cells carry its ampere-turns (current drive: I = 6 A rms, N = 300)
    assert sol.cell_current[sol.cells.part == COIL].sum() == pytest.approx(300 * 6.0, rel=1e-12)


def test_temperatures_raise_the_coil_resistance_by_coppers_coefficient(demo):
    design, model = demo
    cold = solve_circuit(design, DEFAULT_FINENESS, model)
    hot = solve_circuit(
        design, DEFAULT_FINENESS, model, {"ring": 100.0, "target": 100.0, "coil": 100.0}
    )
    # annealed copper: 1 + 0.00393 (100 - 20) (IEC 60028)
    assert hot.coil_resistance / cold.coil_resistance == pytest.approx(1 + 0.00393 * 80, rel=1e-3)
