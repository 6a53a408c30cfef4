"""A family's parts on a pick map (optim/morning/pickmap_parts.py): the figure takes them, the
map's CSV and JSON do not change with them, and the report's caption names them.

The map here is a made-up grid (no model evaluation): a lift ratio falling with radius and gap,
so that both lines cross it. No published values.
"""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

from models.design import load_design
from optim.jsonout import strict_json
from optim.morning.pickmap import MapAxis, PickMap, map_json, write_map
from optim.morning.pickmap_parts import STYLES, draw_parts, parts_caption
from optim.study.parts import Part
from tests.conftest import DEMO

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # the PNG specification (ISO/IEC 15948), section 5.2
CAP = {"thickness_mm": 1.0, "material": "aluminium-1350"}  # the demo design's own part's
PARTS = (
    Part("cap10", "lift", {"radius_mm": 5.0, **CAP}, (1.5, 2.25, 3.0)),
    Part("cap16", "leave", {"radius_mm": 8.0, **CAP}, (1.5, 2.25, 3.0)),
    Part("slug", "lift", {"radius_mm": 3.0, **CAP}),  # no gap range: the design's own gap
)


def _map() -> PickMap:
    x = MapAxis("target.radius_mm", np.linspace(2.0, 12.0, 6))
    y = MapAxis("target.gap_mm", np.linspace(0.75, 4.5, 5))
    X, Y = np.meshgrid(x.values, y.values)
    lift = 3.0 - 0.4 * X - 0.3 * Y  # made up: 1 and 0 both inside the grid
    weight = 2e-3  # [N], made up
    return PickMap(
        design="made-up",
        x=x,
        y=y,
        pull_N=lift * weight,
        pull_uncertainty_N=np.full(lift.shape, 1e-5),
        lift_ratio=lift,
        in_range=np.ones(lift.shape, bool),
        refused=[["" for _ in x.values] for _ in y.values],
        design_point=(5.0, 3.0),
        isothermal=True,
    )


def test_the_figure_marks_the_parts_and_the_grid_files_stay_the_same(tmp_path):
    pmap = _map()
    before = strict_json(map_json(pmap))
    plain = write_map(pmap, tmp_path / "plain", "pickmap_x")
    marked = write_map(pmap, tmp_path / "marked", "pickmap_x", parts=PARTS)
    assert marked["csv"].read_bytes() == plain["csv"].read_bytes()
    assert strict_json(map_json(pmap)) == before  # drawing the parts leaves the map as it was
    assert marked["png"].read_bytes()[:8] == PNG_SIGNATURE
    assert marked["png"].read_bytes() != plain["png"].read_bytes()  # something was drawn
    svg = marked["svg"].read_text(encoding="utf-8")
    for name in ("cap10", "cap16", "slug", "lift part", "leave part"):
        assert name in svg, name


def test_each_part_is_a_bar_over_its_gap_range_in_its_roles_style():
    ax = Figure().subplots()
    handles = draw_parts(ax, PARTS, "target.radius_mm", "target.gap_mm", own_gap_mm=3.0)
    assert [h.get_label() for h in handles] == [STYLES["lift"]["words"], STYLES["leave"]["words"]]
    lines = ax.get_lines()
    assert [(list(ln.get_xdata()), list(ln.get_ydata())) for ln in lines] == [
        ([5.0, 5.0], [1.5, 3.0]),
        ([8.0, 8.0], [1.5, 3.0]),
        ([3.0, 3.0], [3.0, 3.0]),
    ]
    assert lines[0].get_linestyle() != lines[1].get_linestyle()
    assert lines[0].get_color() != lines[1].get_color()
    assert [t.get_text() for t in ax.texts] == ["cap10", "cap16", "slug"]
    # other axes, or no parts: nothing drawn
    other = Figure().subplots()
    assert draw_parts(other, PARTS, "drive.frequency_Hz", "target.gap_mm", 3.0) == []
    assert draw_parts(other, (), "target.radius_mm", "target.gap_mm", 3.0) == []
    assert not other.get_lines()


def test_the_caption_names_the_bars_and_warns_when_a_part_differs():
    design = load_design(DEMO)
    assert parts_caption((), design) == ""
    same = parts_caption(PARTS[:2], design)
    assert "solid green: lifted" in same and "thickness" not in same
    thin = Part("thin", "leave", {"radius_mm": 8.0, "thickness_mm": 0.6, "material": "copper"})
    assert "another thickness or metal" in parts_caption((*PARTS[:1], thin), design)


def test_line_labels_keep_away_from_the_star_the_bars_and_each_other():
    """The spot where a line's name is written is farther from the star, the parts' bars and
    the other line than a tenth of the map (the made-up map's lines run a quarter of it apart)."""
    from optim.morning.pickmap import _label_spot, map_contours
    from optim.morning.pickmap_parts import part_points

    pmap = _map()
    lines = map_contours(pmap)
    bars = part_points(PARTS, pmap.x.key, pmap.y.key, 3.0)
    span = np.array([10.0, 3.75])
    for name, other in (("lift_ratio_1", "zero_pull"), ("zero_pull", "lift_ratio_1")):
        avoid = [pmap.design_point, *bars, *(tuple(p) for ln in lines[other] for p in ln)]
        spot = np.array(_label_spot(lines[name], avoid, pmap))
        nearest = min(np.hypot(*((np.array(a) - spot) / span)) for a in avoid)
        assert nearest > 0.1, (name, spot)
