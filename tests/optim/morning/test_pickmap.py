"""Pick maps (optim/morning/pickmap.py, ``eddypull map``): the zero-pull line against a root
search on the fast model, the files written, bad flags."""

from __future__ import annotations

import csv
import json
import xml.etree.ElementTree as ET

import numpy as np
import pytest
from scipy.constants import g
from scipy.optimize import brentq

from models.design import load_design, with_value
from models.evaluate import evaluate
from optim.cli import main
from optim.morning.pickmap import (
    MapAxis,
    crossings,
    evaluate_map,
    map_contours,
    parse_axis,
    write_map,
)
from tests.conftest import DEMO

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # the PNG specification (ISO/IEC 15948), section 5.2


@pytest.fixture(scope="module")
def demo_map():
    """The demo design on a coarse radius x gap grid: 6 radii 2-16 mm (2.8 mm apart) and 7 gaps
    1-4 mm, the design's own 3 mm gap a row of the grid."""
    design = load_design(DEMO)
    x = MapAxis("target.radius_mm", np.linspace(2.0, 16.0, 6))
    y = MapAxis("target.gap_mm", np.linspace(1.0, 4.0, 7))
    return design, evaluate_map(design, x, y)


def test_zero_pull_line_at_the_design_gap_matches_a_root_search(demo_map):
    """The zero-pull contour crosses the design's gap where a one-dimensional root search on the
    fast model (scipy.optimize.brentq, a reference library) finds the pull's sign change in the
    part radius, within the grid's resolution (one step in x: the map interpolates linearly
    between grid points, so its crossing lies in the step that brackets the root)."""
    design, pmap = demo_map
    gap = design.target.gap * 1e3
    lines = map_contours(pmap)
    at_gap = crossings(lines["zero_pull"], gap)
    assert len(at_gap) == 1, at_gap  # one sign change: pull for small parts, push for large
    x_map = at_gap[0]

    def pull(radius_mm):
        return evaluate(with_value(design, "target.radius_mm", float(radius_mm))).pull_N

    xs = pmap.x.values
    k = int(np.searchsorted(xs, x_map)) - 1  # the grid step that holds the map's crossing
    root = brentq(pull, xs[k], xs[k + 1], xtol=1e-3)
    step = xs[1] - xs[0]
    assert abs(x_map - root) <= step
    assert xs[k] <= root <= xs[k + 1]
    # the map's own row at the design's gap brackets the root the same way
    row = int(np.argmin(abs(pmap.y.values - gap)))
    assert pmap.pull_N[row, k] > 0 > pmap.pull_N[row, k + 1]


def test_map_marks_the_design_and_the_range_checked_against_the_fem(demo_map):
    design, pmap = demo_map
    assert pmap.design_point == (5.0, 3.0)  # the demo file's target radius and gap
    # parts under 0.3 pole radii (3 mm) are outside models.checks.VALIDATED_RANGE, and every
    # gap of the grid (1-4 mm) is inside its 0.05-6 mm: the 4.8 mm column is in range throughout
    assert not pmap.in_range[:, pmap.x.values < 3.0].any()
    assert pmap.x.values[1] == pytest.approx(4.8) and pmap.in_range[:, 1].all()
    # lift ratio = pull / the disc's weight rho pi r^2 t g (g: scipy.constants, CODATA)
    t = design.target
    radius = pmap.x.values[None, :] * 1e-3
    weight = t.density * np.pi * radius**2 * t.thickness * g
    np.testing.assert_allclose(pmap.lift_ratio, pmap.pull_N / weight, rtol=1e-12)


def test_written_files_parse(demo_map, tmp_path):
    _, pmap = demo_map
    files = write_map(pmap, tmp_path)
    assert files["png"].read_bytes()[:8] == PNG_SIGNATURE
    assert ET.parse(files["svg"]).getroot().tag.endswith("svg")
    with files["csv"].open(encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    assert len(rows) == pmap.pull_N.size
    assert list(rows[0]) == [
        "target.radius_mm",
        "target.gap_mm",
        "pull_N",
        "lift_ratio",
        "in_validated_range",
        "pull_uncertainty_N",
        "refused",
    ]
    first = rows[0]
    assert float(first["pull_N"]) == pmap.pull_N[0, 0]  # repr round-trips
    assert first["in_validated_range"] in ("True", "False")


def test_cli_map_json_and_files(tmp_path, capsys):
    out = tmp_path / "maps"
    argv = ["map", str(DEMO), "--x", "target.radius_mm=3..12", "--y", "gap_mm=1..3.5"]
    assert main([*argv, "--points", "3", "--out", str(out), "--json", "--isothermal"]) == 0
    doc = json.loads(capsys.readouterr().out, parse_constant=lambda c: pytest.fail(c))
    assert doc["x"]["key"] == "target.radius_mm" and doc["y"]["key"] == "target.gap_mm"
    assert np.asarray(doc["lift_ratio"]).shape == (3, 3)
    assert set(doc["contours"]) == {"lift_ratio_1", "zero_pull"}
    for line in doc["contours"]["zero_pull"]:
        assert all(len(point) == 2 for point in line)
    for kind in ("png", "svg", "csv"):
        assert (out / f"pickmap_target.radius_mm__target.gap_mm.{kind}").stat().st_size > 0
    assert doc["files"]["csv"].endswith(".csv")


def test_points_refused_by_the_design_rules_are_recorded():
    # ring outer radius past pole radius - 0.2 mm (models.design.MIN_WALL_MM) is refused
    design = load_design(DEMO)
    x = MapAxis("ring.outer_radius_mm", np.array([6.0, 9.9]))
    y = MapAxis("target.gap_mm", np.array([2.0, 3.0]))
    pmap = evaluate_map(design, x, y, isothermal=True)
    assert np.isnan(pmap.pull_N[:, 1]).all() and np.isfinite(pmap.pull_N[:, 0]).all()
    assert "ring.outer_radius_mm" in pmap.refused[0][1]
    assert pmap.refused[0][0] == ""


@pytest.mark.parametrize(
    "flags, message",
    [
        (["--x", "target.radius_mm=2-16", "--y", "gap_mm=1..2"], "must be KEY=START..STOP"),
        (["--x", "radius_mm=2..16", "--y", "gap_mm=1..2"], "--x radius_mm: ambiguous"),
        (["--x", "target.radius_mm=2..16", "--y", "gapp_mm=1..2"], "not a design key"),
        (["--x", "target.radius_mm=2..16", "--y", "pole.material=1..2"], "not a numeric"),
        (["--x", "gap_mm=1..2", "--y", "target.gap_mm=1..3"], "must differ"),
        (["--x", "target.radius_mm=2..2", "--y", "gap_mm=1..2"], "finite and differ"),
        (["--x", "target.radius_mm=2..16", "--y", "gap_mm=1..2", "--points", "1"], "--points"),
    ],
)
def test_bad_map_flags_exit_2_with_one_line(flags, message, tmp_path, capsys):
    assert main(["map", str(DEMO), *flags, "--out", str(tmp_path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("eddypull: error: ") and message in err[0]


def test_parse_axis_reads_bare_keys_as_sweeps_do():
    design = load_design(DEMO)
    axis = parse_axis(design, "gap_mm=0.5..4")
    assert axis.key == "target.gap_mm" and len(axis.values) == 25  # the sweep's default
    assert axis.values[0] == 0.5 and axis.values[-1] == 4.0


def test_offset_axes_run_from_the_axis_to_the_poles_edge():
    # issue 31: the first pick's offset x gap map spans offsets from 0 to the pole's radius
    # (the part's centre over the pole's edge) and the gaps of the radius x gap map
    from optim.morning.pickmap import around_axes, offset_axes

    design = load_design(DEMO)
    x, y = offset_axes(design, 5, gaps_mm=(1.5, 3.0))
    assert x.key == "target.offset_mm"
    assert x.values[0] == 0.0 and x.values[-1] == pytest.approx(design.pole.radius * 1e3)
    assert list(y.values) == list(around_axes(design, 5, (1.5, 3.0))[1].values)


@pytest.mark.slow
def test_the_first_pick_gets_an_offset_map(tmp_path):
    from optim.morning.robustness import pick_map_figures

    design = load_design(DEMO)
    out = pick_map_figures([("a", design), ("b", design)], tmp_path, isothermal=True, points=4)
    names = [p.name for p, _ in out]
    assert names == ["pickmap_a.png", "offsetmap_a.png", "pickmap_b.png"]
    assert "offset from the pole's axis" in out[1][1]
