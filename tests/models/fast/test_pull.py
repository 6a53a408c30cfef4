"""The pull on the target and its split by source (models.fast.pull).

References: the Lorentz force on a loop, F = I dl x B, i.e. F_z = -2 pi r Re(I conj(B_r)) for
rms phasors (Jackson 1999 eq. 5.12, averaged over a period); Newton's third law between two loops
(F on one = -F on the other); Ampere's force law: parallel currents attract, antiparallel repel
(Jackson 1999 sec. 5.2); dM/dz of Maxwell's formula by a central difference of scipy's elliptic
integrals (a general-purpose library).
"""

from __future__ import annotations

import copy
import math
from types import SimpleNamespace

import numpy as np
import pytest

from models.design import design_from_dict
from models.evaluate import DEFAULT_FINENESS, pole_model_for
from models.fast.circuit import COIL, RING, TARGET, assemble_circuit, solve_system
from models.fast.filaments import mutual_dz
from models.fast.panel_kernels import panel_field
from models.fast.pull import net_pull, pull_by_source
from tests.conftest import demo_dict
from tests.models.fast.loops import loop_field, maxwell_mutual


def _solve(data):
    design = design_from_dict(copy.deepcopy(data))
    return solve_system(
        assemble_circuit(design, DEFAULT_FINENESS, pole_model_for(design, DEFAULT_FINENESS))
    )


@pytest.fixture(scope="module")
def demo_solution():
    return _solve(demo_dict())


def test_net_pull_is_the_sum_of_the_sources(demo_solution):
    split = pull_by_source(demo_solution)
    assert set(split) == {"coil", "ring", "pole"}
    assert net_pull(demo_solution) == pytest.approx(sum(split.values()), rel=1e-14)
    # each source pulls with some force on the demo (a shaded pole lifting a cap)
    assert all(abs(v) > 1e-4 for v in split.values()) and net_pull(demo_solution) > 0.0


def test_each_term_is_the_lorentz_force_of_that_source(demo_solution):
    # F_z = -2 pi r Re(I conj(B_r)) on each target cell (Jackson 5.12) from the field of each
    # source at the cell's centre (the loops' B_r from Jackson 5.37, tests/models/fast/loops.py;
    # the pole's from its panels): the model's dM/dz (virtual work) must agree. Measured: the
    # loops' terms to rounding, the pole's 0.14 % apart (panel quadrature against the Galerkin
    # pairing of the circuit).
    sol = demo_solution
    part = sol.cells.part
    tgt = part == TARGET
    r, z, i_t = sol.cells.rc[tgt], sol.cells.zc[tgt], sol.cell_current[tgt]

    def lorentz_pull(b_r):
        return float(np.sum(2 * math.pi * r * np.real(i_t * np.conj(b_r))))

    split = pull_by_source(sol)
    for name, label in (("coil", COIL), ("ring", RING)):
        src = part == label
        br, _ = loop_field(
            sol.cells.rc[src][None, :], sol.cells.zc[src][None, :], r[:, None], z[:, None]
        )
        assert lorentz_pull(br @ sol.cell_current[src]) == pytest.approx(split[name], rel=1e-9), (
            name
        )
    br, _ = panel_field(sol.panels, r, z)
    assert lorentz_pull(br @ sol.panel_current) == pytest.approx(split["pole"], rel=5e-3)


def _two_loops(first, second, i_first, i_second):
    """A solution of two loops, the first the target and the second the coil."""
    d_first = mutual_dz(first[0], first[1], second[0], second[1])
    return SimpleNamespace(
        cells=SimpleNamespace(part=np.array([TARGET, COIL])),
        cell_current=np.array([i_first, i_second], dtype=complex),
        dMdz=np.array([[0.0, d_first], [0.0, 0.0]]),
        panel_dMdz=None,
        panel_current=np.zeros(0),
    )


TARGET_LOOP, COIL_LOOP = (5e-3, 3e-3), (15e-3, -10e-3)


def test_two_loops_obey_newtons_third_law():
    i_t, i_c = 2.0 - 1.0j, 300.0 + 40.0j
    on_target = pull_by_source(_two_loops(TARGET_LOOP, COIL_LOOP, i_t, i_c))["coil"]
    on_coil = pull_by_source(_two_loops(COIL_LOOP, TARGET_LOOP, i_c, i_t))["coil"]
    assert on_target == pytest.approx(-on_coil, rel=1e-12)  # Newton's third law
    # and its size from Maxwell's formula differentiated numerically (central difference)
    h = 1e-8
    a, z0 = COIL_LOOP
    r, z = TARGET_LOOP
    dmdz = (maxwell_mutual(a, z0, r, z + h) - maxwell_mutual(a, z0, r, z - h)) / (2 * h)
    assert on_target == pytest.approx(-np.real(i_t * np.conj(i_c)) * dmdz, rel=1e-6)


@pytest.mark.parametrize(("phase", "sign"), [(0.0, 1.0), (math.pi, -1.0), (math.pi / 2, 0.0)])
def test_parallel_currents_attract_and_antiparallel_repel(phase, sign):
    # Ampere: in-phase currents pull the target toward the coil below it (toward the face, a
    # positive pull); in anti-phase (an eddy current's Lenz sign) they repel; in quadrature the
    # time-averaged force is zero.
    sol = _two_loops(TARGET_LOOP, COIL_LOOP, 1.0 * np.exp(1j * phase), 100.0)
    pull = pull_by_source(sol)
    assert pull["ring"] == 0.0 and pull["pole"] == 0.0  # no such sources
    if sign == 0.0:
        assert abs(pull["coil"]) < 1e-12
    else:
        assert np.sign(pull["coil"]) == sign


def test_the_pull_scales_as_the_current_squared(demo_solution):
    # All currents are linear in the coil current: every term scales as I^2 (linearity).
    scaled = SimpleNamespace(**vars(demo_solution))
    scaled.cell_current = 3.0 * demo_solution.cell_current
    scaled.panel_current = 3.0 * demo_solution.panel_current
    base, tripled = pull_by_source(demo_solution), pull_by_source(scaled)
    for name in base:
        assert tripled[name] == pytest.approx(9.0 * base[name], rel=1e-12)


def test_without_a_ring_its_term_is_zero():
    data = demo_dict()
    del data["ring"]
    split = pull_by_source(_solve(data))
    assert split["ring"] == 0.0 and split["coil"] != 0.0 and split["pole"] != 0.0
