"""A part off the pole's axis (models.fast.offset): the sheet model's kernel, its agreement with
the axisymmetric circuit at the axis, the symmetries of the forces, the centring stiffness as the
force's slope, the result's fields, the file key, studies over offsets and the text.

References: the mutual inductance of two coaxial loops as a Hankel integral,
mu0 pi a b int J1(ka) J1(kb) e^(-kh) dk (Smythe, Static and Dynamic Electricity, 1950,
sec. 7.14), against Maxwell's elliptic-integral formula (models.fast.filaments, checked against
published values in tests/models/fast/test_filaments.py); the axisymmetric circuit's pull for a centred
part; symmetry (the magnet is axisymmetric: the pull is even in the offset, the lateral force
and the tilt torque odd). The 3-D reference is tests/validation/test_offset_reference.py.
"""

from __future__ import annotations

import copy
import json
import math

import numpy as np
import pytest
from scipy.constants import mu_0
from scipy.special import j1

from models.design import design_from_dict, edit
from models.errors import DesignError
from models.evaluate import DEFAULT_FINENESS, evaluate, pole_model_for
from models.fast import offset
from models.fast.circuit import TARGET, assemble_circuit, solve_system
from models.fast.filaments import mutual
from models.fast.panel_kernels import panel_field
from models.fast.pull import pull_by_source
from optim.cli import main
from tests.conftest import DEMO, demo_dict
from tests.models.fast.loops import loop_field as textbook_field


def _design(**target):
    d = demo_dict()
    d["target"] = {**d["target"], **target}
    return design_from_dict(copy.deepcopy(d))


def _solved(design):
    system = assemble_circuit(design, DEFAULT_FINENESS, pole_model_for(design, DEFAULT_FINENESS))
    sol = solve_system(system)
    split = pull_by_source(sol)
    return system, sol, float(sum(split.values())), sum(abs(v) for v in split.values())


def test_hankel_form_of_two_loops_matches_maxwell():
    # The k-grid and weights of the sheet model integrate the classical Hankel form of two
    # coaxial loops' mutual inductance to Maxwell's formula (Smythe 1950, sec. 7.14); 1e-4:
    # 320 Gauss points in log k.
    k, wk = offset._k_grid(0.0, 5e-3, offset.DEFAULT_SHEET)
    for a, b, h in ((5e-3, 4e-3, 1e-3), (5e-3, 5e-3, 0.5e-3), (2e-3, 4.5e-3, 3e-3)):
        hankel = mu_0 * np.pi * a * b * np.sum(wk * j1(k * a) * j1(k * b) * np.exp(-k * h))
        assert hankel == pytest.approx(float(mutual(a, 0.0, b, h)), rel=1e-4)


@pytest.mark.parametrize(
    ("gap_mm", "inner_mm"), [(3.0, 0.0), (1.0, 0.0), (1.0, 2.0)], ids=["demo", "1mm", "washer"]
)
def test_centred_sheet_model_reproduces_the_circuit_pull(gap_mm, inner_mm):
    # The sheet model's own pull of the centred part (flat image, thin layers) against the
    # axisymmetric circuit's: within 1 % for parts well inside the pole's face (measured 0.1,
    # 0.6, 0.5 %); it enters the error bar as the model's error.
    design = _design(gap_mm=gap_mm, inner_radius_mm=inner_mm)
    system, sol, pull, terms = _solved(design)
    (at,) = offset.offset_forces(system, sol, [0.0], pull, terms)
    assert at.sheet_pull_centred == pytest.approx(pull, rel=0.01)
    assert at.pull == pytest.approx(pull, rel=1e-12)  # the centred part: the circuit's pull
    assert abs(at.lateral) < 1e-12 * pull and abs(at.tilt) < 1e-12 * pull * design.target.radius


def test_forces_are_even_and_odd_in_the_offset():
    # An axisymmetric magnet: pull(d) = pull(-d), F_x(-d) = -F_x(d), tilt(-d) = -tilt(d); to
    # rounding (1e-9), the phi grid being symmetric under d -> -d, phi -> pi - phi.
    system, sol, pull, terms = _solved(_design(gap_mm=1.0))
    plus, minus = offset.offset_forces(system, sol, [1.5e-3, -1.5e-3], pull, terms)
    assert minus.pull == pytest.approx(plus.pull, rel=1e-9)
    assert minus.lateral == pytest.approx(-plus.lateral, rel=1e-9)
    assert minus.tilt == pytest.approx(-plus.tilt, rel=1e-9)
    assert plus.pull < pull  # moved toward the pole's edge, the demo cap loses pull


def test_centring_stiffness_is_the_force_slope_at_the_axis():
    # -dF_x/dx at 0 against the full model's force at 0.05 mm (all harmonics): linear there to
    # 1e-3 (the next term is cubic in d; measured 3e-5).
    system, sol, pull, terms = _solved(_design(gap_mm=1.0))
    k, uk = offset.centring_stiffness(system, sol, pull, terms)
    (at,) = offset.offset_forces(system, sol, [5e-5], pull, terms)
    assert k == pytest.approx(-at.lateral / 5e-5, rel=1e-3)
    assert k > 0 and 0 < uk < 0.05 * k  # the demo cap at 1 mm is drawn in, its bar a few %


def test_evaluate_at_an_offset():
    base = _design(gap_mm=1.0)
    centred = evaluate(base, isothermal=True)
    assert math.isnan(centred.centring_stiffness_N_per_m)  # not asked for (lateral=None)
    assert centred.lateral_force_N == 0.0 and centred.pull_centred_N == centred.pull_N
    moved = evaluate(edit(base, {"target.offset_mm": 2.0}), isothermal=True)
    assert moved.pull_centred_N == pytest.approx(centred.pull_N, rel=1e-12)
    assert moved.pull_N < centred.pull_N
    assert moved.lift_ratio == pytest.approx(moved.pull_N / moved.target_weight_N, rel=1e-12)
    assert moved.lateral_force_N < 0  # drawn back toward the axis
    assert moved.centring_stiffness_N_per_m > 0
    assert moved.pull_uncertainty_N >= centred.pull_uncertainty_N
    flat = moved.to_dict()
    for name in ("lateral_force_N", "tilt_torque_N_m", "centring_stiffness_N_per_m"):
        assert name in flat
    with pytest.raises(ValueError, match="lateral = False with an offset part"):
        evaluate(edit(base, {"target.offset_mm": 2.0}), isothermal=True, lateral=False)


@pytest.mark.parametrize(
    ("value", "message"),
    [
        (15.0, r"target.offset_mm = 15.0: must lie within \+-\(target.radius_mm \+ pole"),
        (-16.0, r"target.offset_mm = -16.0: must lie within"),
        ("2", r"target.offset_mm = '2': must be a number"),
    ],
)
def test_offset_beyond_the_pole_is_refused(value, message, tmp_path, capsys):
    with pytest.raises(DesignError, match=message):
        _design(offset_mm=value)
    d = demo_dict()
    d["target"]["offset_mm"] = value
    path = tmp_path / "far.toml"
    path.write_text(
        "\n".join(
            f"[{t}]\n" + "\n".join(f"{k} = {json.dumps(v)}" for k, v in vals.items())
            for t, vals in d.items()
            if isinstance(vals, dict)
        )
    )
    assert main(["evaluate", str(path)]) == 2
    err = capsys.readouterr().err
    assert "offset_mm" in err and "Traceback" not in err


def _study(tmp_path, robust: str, extra: str = "") -> str:
    (tmp_path / "design.toml").write_text(DEMO.read_text())
    path = tmp_path / "s.toml"
    path.write_text(
        'name = "offs"\ndesign = "design.toml"\n[search]\n'
        "ring_outer_fraction = { low = 0.5, high = 0.9 }\n[objectives]\n"
        'worst_pull_N = "maximize"\n' + extra + "[robust]\n" + robust + "\n[run]\ntrials = 2\n"
    )
    return str(path)


def test_study_robust_offsets(tmp_path):
    from optim.study.objectives import results_of, study_kwargs
    from optim.study.spec import load_study_spec, spec_from_json

    path = _study(
        tmp_path,
        "gap_min_mm = 2.5\ngap_max_mm = 3.0\npoints = 2\noffset_max_mm = 2.0",
        "[constraints]\ncentring_stiffness_N_per_m = { min = 0 }\n",
    )
    spec = load_study_spec(path)
    assert spec.offsets_mm == (0.0, 1.0, 2.0) and spec.lateral is True
    assert spec_from_json(spec.to_json()).offsets_mm == spec.offsets_mm
    design = design_from_dict(spec.base)
    flat, _, _ = results_of(design, spec.gaps_mm, isothermal=True, **study_kwargs(spec))
    centred, _, _ = results_of(design, spec.gaps_mm, isothermal=True)
    # The worst over offsets is below the centred worst (the demo cap loses pull off the axis)
    # and is the pull at 2 mm off the axis at the 3 mm gap (regression of this model).
    assert flat["worst_pull_N"] < centred["worst_pull_N"]
    moved = evaluate(edit(design, {"target.offset_mm": 2.0}), isothermal=True)
    assert flat["worst_pull_N"] == pytest.approx(moved.pull_N, rel=1e-9)
    assert flat["centring_stiffness_N_per_m"] > 0


@pytest.mark.parametrize(
    ("robust", "message"),
    [
        (
            "gap_min_mm = 2.5\ngap_max_mm = 3.0\noffset_points = 4",
            "robust.offset_points = 4: needs",
        ),
        ("offset_max_mm = 20.0", r"robust.offset_max_mm = 20: must be < target.radius_mm"),
        ("offset_max_mm = 2.0\noffset_points = 1", "robust.offset_points = 1: must be between"),
    ],
)
def test_study_offset_errors(tmp_path, capsys, robust, message):
    assert main(["study", "run", _study(tmp_path, robust)]) == 2
    err = capsys.readouterr().err
    assert message in err and "Traceback" not in err
    assert len(err.strip().splitlines()) == 1


def test_text_shows_the_part_off_the_axis(capsys, tmp_path):
    from optim.cli.summary import format_result

    design = _design(gap_mm=1.0, offset_mm=1.0)
    text = format_result(design, evaluate(design, isothermal=True))
    assert "centring stiffness +" in text and "drawn back to the axis" in text
    assert "off the axis       +1 mm: lateral force -" in text and "toward the axis" in text


def test_map_over_the_offset():
    from optim.morning.pickmap import evaluate_map, parse_axis

    design = _design(gap_mm=1.0)
    x = parse_axis(design, "target.offset_mm=0..3", points=2)
    y = parse_axis(design, "target.gap_mm=1..2", points=2, flag="--y")
    pmap = evaluate_map(design, x, y, isothermal=True)
    assert np.all(np.isfinite(pmap.pull_N))
    assert np.all(pmap.pull_N[:, 1] < pmap.pull_N[:, 0])  # 3 mm off loses pull at both gaps


def test_source_field_is_the_field_of_every_current_but_the_parts():
    # Coil and ring cells by the loop formulas written afresh (tests/models/fast/loops.py,
    # Jackson 1999 eq. 5.37; on the axis mu_0 I a^2 / (2 (a^2 + zeta^2)^(3/2)), Griffiths 2017
    # ex. 5.6, and B_r = 0 by symmetry), plus the pole's sheets driven by those currents alone.
    design = _design()
    system, sol, _, _ = _solved(design)
    layers = np.array([design.target.gap + 0.25e-3, design.target.gap + 0.75e-3])
    field = offset.source_field(system, sol, layers, 1.5 * design.target.radius)
    cells = sol.cells
    other = cells.part != TARGET
    a, z0, i_src = cells.rc[other], cells.zc[other], sol.cell_current[other]
    i_pan = system.P[:, other] @ i_src
    for layer, z in enumerate(layers):
        r = field.r[1:]
        br, bz = textbook_field(a[None, :], z0[None, :], r[:, None], np.full((r.size, 1), z))
        pbr, pbz = panel_field(system.panels, r, np.full(r.size, z))
        exp_r, exp_z = br @ i_src + pbr @ i_pan, bz @ i_src + pbz @ i_pan
        scale = np.abs(exp_z).max()
        assert np.abs(field.br[layer, 1:] - exp_r).max() < 1e-9 * scale
        assert np.abs(field.bz[layer, 1:] - exp_z).max() < 1e-9 * scale
        axis = mu_0 * a**2 / (2 * (a**2 + (z - z0) ** 2) ** 1.5) @ i_src
        _, pbz0 = panel_field(system.panels, [0.0], [z])
        assert field.bz[layer, 0] == pytest.approx(axis + (pbz0 @ i_pan)[0], rel=1e-9)
        assert abs(field.br[layer, 0]) < 1e-9 * scale
        # at the grid's radii, SourceField.at returns the grid's values (linear interpolation)
        at_r, at_z = field.at(layer, field.r[5:8])
        assert np.allclose(at_r, field.br[layer, 5:8], rtol=0, atol=1e-15 * scale)
        assert np.allclose(at_z, field.bz[layer, 5:8], rtol=0, atol=1e-15 * scale)


def test_sheet_fineness_coarse_is_coarser_within_its_floors():
    fine = offset.SheetFineness()
    coarse = fine.coarse()
    assert coarse.elements < fine.elements and coarse.k_points < fine.k_points
    assert coarse.layers < fine.layers and coarse.harmonics < fine.harmonics
    floor = offset.SheetFineness(elements=8, layers=2, harmonics=2, k_points=3).coarse()
    assert (floor.elements, floor.layers, floor.harmonics) == (8, 2, 2)
