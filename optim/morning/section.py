"""The half and the full cross-section of a design in millimetres, as closed polygons: the
geometry the DXF profile (optim.morning.dxf), its annotations (optim.morning.dxfnotes), the
cross-section plot and the hand-off draw (the conventions are in optim.morning.dxf's docstring).
"""

from __future__ import annotations

__all__ = ["section_mm", "full_section_mm"]


def _mm(x_m: float) -> float:
    """Metres to millimetres, rounded to 1e-9 mm (undoes the 1e-3 of the file reader exactly for
    every value a design file holds)."""
    return round(x_m * 1e3, 9)


def section_mm(design) -> dict[str, list[tuple[float, float]]]:
    """Closed polygons of the half cross-section, in mm, keyed by layer.

    Parameters
    ----------
    design : models.design.Design

    Returns
    -------
    dict
        ``"POLE"``, ``"COIL"``, ``"TARGET"`` and (when the design has a ring) ``"RING"``: lists of
        (r, z) vertices [mm], counter-clockwise, first vertex not repeated; ``"AXIS"``: the two
        end points of the axis line, 10 % beyond the parts.
    """
    p, c, t, g = design.pole, design.coil, design.target, design.ring
    rp, length = _mm(p.radius), _mm(p.length)
    out: dict[str, list[tuple[float, float]]] = {}
    if g is None:
        out["POLE"] = [(0.0, -length), (rp, -length), (rp, 0.0), (0.0, 0.0)]
    else:
        ri, ro, depth = _mm(g.inner_radius), _mm(g.outer_radius), _mm(g.depth)
        # Walk the outline counter-clockwise: back face, side, face outside the groove, down the
        # groove's outer wall, along its bottom, up its inner wall, face of the post, axis.
        out["POLE"] = [
            (0.0, -length),
            (rp, -length),
            (rp, 0.0),
            (ro, 0.0),
            (ro, -depth),
            (ri, -depth),
            (ri, 0.0),
            (0.0, 0.0),
        ]
        out["RING"] = [(ri, -depth), (ro, -depth), (ro, 0.0), (ri, 0.0)]
    rci, rco = _mm(c.inner_radius), _mm(c.outer_radius)
    z_front, z_back = -_mm(c.setback), -round(_mm(c.setback) + _mm(c.length), 9)
    out["COIL"] = [(rci, z_back), (rco, z_back), (rco, z_front), (rci, z_front)]
    tri, tr, gap = _mm(t.inner_radius), _mm(t.radius), _mm(t.gap)
    top = round(gap + _mm(t.thickness), 9)
    out["TARGET"] = [(tri, gap), (tr, gap), (tr, top), (tri, top)]
    span = top + length
    out["AXIS"] = [(0.0, -length - 0.1 * span), (0.0, top + 0.1 * span)]
    return out


def _mirror_part(points: list[tuple[float, float]]) -> list[list[tuple[float, float]]]:
    """Both halves of one part's half-section polygon (counter-clockwise, r >= 0).

    A polygon with an edge on the axis (two consecutive vertices at r = 0) becomes one outline
    across the axis, without the axis vertices that fall mid-edge; any other polygon and its
    mirror image are two outlines."""
    n = len(points)
    on_axis = [i for i in range(n) if points[i][0] == 0.0 and points[(i + 1) % n][0] == 0.0]
    mirrored = [(-x if x else 0.0, y) for x, y in reversed(points)]
    if not on_axis:
        return [list(points), mirrored]
    start = (on_axis[0] + 1) % n  # the axis vertex the outline leaves the axis from
    walk = points[start:] + points[:start]  # a0, p1 ... pk, a1 (a1 -> a0 is the axis edge)
    inner = walk[1:-1]
    loop = [walk[0], *inner, walk[-1], *[(-x, y) for x, y in reversed(inner)]]
    out = []
    for i, (x, y) in enumerate(loop):
        before, after = loop[i - 1], loop[(i + 1) % len(loop)]
        if x == 0.0 and before[1] == y == after[1]:
            continue  # an axis point in the middle of a straight edge
        out.append((x, y))
    return [out]


def full_section_mm(design) -> list[tuple[str, list[tuple[float, float]]]]:
    """The full section (both halves, mirrored about the axis), in mm: (part layer, closed
    polygon) pairs, counter-clockwise, first vertex not repeated."""
    return [
        (name, poly)
        for name, points in section_mm(design).items()
        if name != "AXIS"
        for poly in _mirror_part(points)
    ]
