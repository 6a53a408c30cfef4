"""Step 3 of reading a design: the geometry rules across tables."""

from __future__ import annotations

import math

from models.design.parts import (
    DEFAULT_FILL_FACTOR,
    MIN_WALL_MM,
    turns_in_window,
)
from models.design.schema import (
    _NO_VALUES,
    MAX_FEATURE_RATIO,
    MAX_POLE_ASPECT,
    _Values,
)

# --- step 3: the geometry across tables


def _check_geometry(vals: dict[str, _Values], problems: list[str]) -> None:
    """Step 3: the rules between sizes (the coil outside and along the pole, the ring inside its
    face, face features the fast model resolves, the target washer). A rule whose sizes are
    missing or were refused is skipped."""
    p = vals.get("pole", _NO_VALUES)
    r = vals.get("ring")
    if "coil" in vals:  # [[coils]] are checked by models.coils
        _check_coil_fits(p, vals["coil"], problems)
    if r is not None:
        _check_ring_fits(p, r, problems)
    if p.has("radius_mm", "length_mm") and p["length_mm"] > MAX_POLE_ASPECT * p["radius_mm"]:
        problems.append(
            f"pole.length_mm = {p['length_mm']!r}: must be <= {MAX_POLE_ASPECT:g} x pole.radius_mm "
            f"(= {MAX_POLE_ASPECT * p['radius_mm']:.4g}); the fast model's panels cannot follow a "
            "longer pole"
        )
    g = vals.get("target", _NO_VALUES)
    if p.has("radius_mm"):
        _check_face_features(p["radius_mm"], r, g, problems)
    if g.has("radius_mm") and g.usable("inner_radius_mm"):
        tri = g.get("inner_radius_mm", 0.0)
        if tri >= g["radius_mm"]:
            problems.append(
                f"target.inner_radius_mm = {tri!r}: must be < target.radius_mm "
                f"(= {g['radius_mm']!r})"
            )
    if p.has("radius_mm") and g.has("radius_mm") and g.usable("offset_mm"):
        off, reach = g.get("offset_mm", 0.0), p["radius_mm"] + g["radius_mm"]
        if abs(off) >= reach:
            problems.append(
                f"target.offset_mm = {off!r}: must lie within +-(target.radius_mm + "
                f"pole.radius_mm) = +-{reach:g} mm (beyond it the part is clear of the pole)"
            )


def _check_coil_fits(p: _Values, c: _Values, problems: list[str]) -> None:
    """The coil outside the pole and along it, its radii in order, its wire in its window."""
    if c.has("inner_radius_mm") and p.has("radius_mm") and c["inner_radius_mm"] < p["radius_mm"]:
        problems.append(
            f"coil.inner_radius_mm = {c['inner_radius_mm']!r}: must be >= pole.radius_mm "
            f"(= {p['radius_mm']!r}); the coil sits outside the pole"
        )
    radii = c.has("inner_radius_mm", "outer_radius_mm")
    if radii and c["outer_radius_mm"] <= c["inner_radius_mm"]:
        problems.append(
            f"coil.outer_radius_mm = {c['outer_radius_mm']!r}: must be > coil.inner_radius_mm "
            f"(= {c['inner_radius_mm']!r})"
        )
    if c.has("setback_mm", "length_mm") and p.has("length_mm"):
        if c["setback_mm"] + c["length_mm"] > p["length_mm"]:
            problems.append(
                f"coil.length_mm = {c['length_mm']!r}: setback_mm + length_mm must be <= "
                f"pole.length_mm (= {p['length_mm']!r}); the coil sits along the pole"
            )
    _check_winding(c, problems)
    if radii and c.has("wire_diameter_mm", "turns", "length_mm"):
        wire_area = math.pi * c["wire_diameter_mm"] ** 2 / 4
        window = (c["outer_radius_mm"] - c["inner_radius_mm"]) * c["length_mm"]
        if window > 0 and c["turns"] * wire_area > window * math.pi / 4 * 1.0001:
            problems.append(
                f"coil.wire_diameter_mm = {c['wire_diameter_mm']!r}: {c['turns']} turns do not "
                f"fit the {window:.4g} mm^2 window; must be <= "
                f"{math.sqrt(window / c['turns']):.4g} mm"
            )
    if radii and c.has("wire_diameter_mm", "length_mm") and "turns" not in c and c.usable("turns"):
        _check_wire_fills(c, problems)


def _check_winding(c: _Values, problems: list[str]) -> None:
    """The coil's turns given one way: ``turns``, or ``wire_diameter_mm`` with an optional
    ``fill_factor`` (the turns then follow from the window), not both."""
    if not c.usable("turns", "fill_factor", "wire_diameter_mm"):
        return
    if "turns" in c and "fill_factor" in c:
        problems.append(
            f"coil.fill_factor = {c['fill_factor']!r}: give coil.turns or coil.fill_factor "
            "(with coil.wire_diameter_mm; the turns then follow from the window), not both"
        )
    elif "fill_factor" in c and "wire_diameter_mm" not in c:
        problems.append(
            f"coil.fill_factor = {c['fill_factor']!r}: needs coil.wire_diameter_mm (the turns "
            "follow from the wire and the window)"
        )
    elif "turns" not in c and "wire_diameter_mm" not in c:
        problems.append(
            "coil.turns: missing; give coil.turns, or coil.wire_diameter_mm and coil.fill_factor "
            f"(default {DEFAULT_FILL_FACTOR:g}) and the turns follow from the window"
        )


def _check_wire_fills(c: _Values, problems: list[str]) -> None:
    """A wire given without turns: one turn of it must fit the window's build and length, and
    its fill factor must give at least one whole turn."""
    d = c["wire_diameter_mm"]
    build = c["outer_radius_mm"] - c["inner_radius_mm"]
    if build <= 0:
        return  # reported by the radii's own rule
    if d > min(build, c["length_mm"]):
        problems.append(
            f"coil.wire_diameter_mm = {d!r}: one turn does not fit the window ({build:.4g} mm "
            f"build x {c['length_mm']:.4g} mm long); must be <= {min(build, c['length_mm']):.4g} mm"
        )
        return
    fill = c.get("fill_factor", DEFAULT_FILL_FACTOR)
    if c.usable("fill_factor") and turns_in_window(build * c["length_mm"], d, fill) < 1:
        largest = math.sqrt(4.0 * fill * build * c["length_mm"] / math.pi)
        problems.append(
            f"coil.wire_diameter_mm = {d!r}: at a fill factor of {fill:g} not one turn fits "
            f"the {build * c['length_mm']:.4g} mm^2 window; must be <= {largest:.4g} mm"
        )


def _check_ring_fits(p: _Values, r: _Values, problems: list[str]) -> None:
    """The ring's radii in order, inside the pole face with steel left on both sides, its
    groove shallower than the pole is long."""
    ri, ro, depth = (r.get(k) for k in ("inner_radius_mm", "outer_radius_mm", "depth_mm"))
    if r.has("inner_radius_mm", "outer_radius_mm") and ro <= ri:
        problems.append(f"ring.outer_radius_mm = {ro!r}: must be > ring.inner_radius_mm (= {ri!r})")
    if ro is not None and p.has("radius_mm") and ro > p["radius_mm"] - MIN_WALL_MM:
        problems.append(
            f"ring.outer_radius_mm = {ro!r}: must be <= pole.radius_mm - {MIN_WALL_MM} "
            f"(= {p['radius_mm'] - MIN_WALL_MM:.4g}); the ring sits inside the pole with a wall "
            "of steel left"
        )
    if ri is not None and ri < MIN_WALL_MM:
        problems.append(
            f"ring.inner_radius_mm = {ri!r}: must be >= {MIN_WALL_MM} mm; a post of steel "
            "stays inside the ring"
        )
    if depth is not None and p.has("length_mm") and depth >= p["length_mm"]:
        problems.append(
            f"ring.depth_mm = {depth!r}: must be < pole.length_mm (= {p['length_mm']!r})"
        )


def _check_face_features(Rp: float, r: _Values | None, g: _Values, problems: list[str]) -> None:
    """Every feature of the face (2 x gap, target radius, ring inner radius, depth and width) at
    least pole.radius_mm / MAX_FEATURE_RATIO."""
    face = [("target.gap_mm", g.get("gap_mm"), 2.0), ("target.radius_mm", g.get("radius_mm"), 1.0)]
    if r is not None:
        width = None
        if r.has("inner_radius_mm", "outer_radius_mm"):
            width = r["outer_radius_mm"] - r["inner_radius_mm"]
        face += [
            ("ring.inner_radius_mm", r.get("inner_radius_mm"), 1.0),
            ("ring.depth_mm", r.get("depth_mm"), 1.0),
            ("ring.outer_radius_mm - ring.inner_radius_mm", width, 1.0),
        ]
    for where, value, factor in face:
        least = Rp / (MAX_FEATURE_RATIO * factor)
        # 1e-9: rounding of mm values such as 0.22 - 0.2
        if value is not None and 0 < value < least * (1 - 1e-9):
            problems.append(
                f"{where} = {value:.4g}: must be >= pole.radius_mm / {MAX_FEATURE_RATIO * factor:g}"
                f" (= {least:.4g}); the fast model resolves face features down to that size"
            )
