"""Half cross-section of a design in millimetres: the polygons, and the DXF profile for CAD.

The section is the r-z half plane of the axisymmetric magnet (DESIGN.md conventions): the radius r
runs along x >= 0, the axis z along y; the pole face is y = 0, the pole below it, the target above
it at its gap. Every part is a closed polygon in mm, one layer per part:

========  ==============================================================================
layer     content
========  ==============================================================================
POLE      steel pole outline, with the ring's groove cut out of its face (the notch)
RING      shading ring (fills the groove, flush with the face)
COIL      coil window (the winding's rectangular cross-section)
TARGET    target disc or washer at its gap
AXIS      axis of symmetry (a line on x = 0, dash-dot), not a part
========  ==============================================================================

Revolving each closed polyline about the y axis gives the solid of that part. `section_mm` is the
one source of this geometry: the DXF and the plotted section (`optim.morning.plots.plot_section`) both use
it.
"""

from __future__ import annotations

from pathlib import Path

from optim.files import atomic_path

__all__ = ["LAYERS", "section_mm", "write_profile_dxf"]

#: Layer name -> (AutoCAD colour index, description). Declared in every file we write.
LAYERS: dict[str, tuple[int, str]] = {
    "POLE": (8, "steel pole with the ring groove in its face"),
    "RING": (1, "shading ring inlaid flush in the pole face"),
    "COIL": (3, "coil window (winding cross-section)"),
    "TARGET": (5, "target part at its gap above the face"),
    "AXIS": (7, "axis of symmetry r = 0"),
}


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


def write_profile_dxf(design, path) -> Path:
    """Write the half cross-section as a DXF profile in millimetres.

    Parameters
    ----------
    design : models.design.Design
    path : str or Path
        Output file (written atomically).

    Returns
    -------
    Path
        The written file.

    Notes
    -----
    ``ezdxf.new()`` draws in metres by default: the drawing units ($INSUNITS = 4) and the metric
    measurement flag ($MEASUREMENT = 1) are set to millimetres here, and every layer in `LAYERS` is
    declared. Parts are closed LWPOLYLINEs; the axis is a LINE on the AXIS layer with the CENTER
    line type. Layers of the DXF reference (R2013 format).
    """
    import ezdxf
    from ezdxf import units

    doc = ezdxf.new("R2013", setup=True)  # setup: standard line types (CENTER) and text styles
    doc.units = units.MM
    doc.header["$INSUNITS"] = units.MM
    doc.header["$MEASUREMENT"] = 1
    doc.header["$LUNITS"] = 2  # decimal
    for name, (colour, description) in LAYERS.items():
        layer = doc.layers.add(name, color=colour)
        layer.description = description
    doc.layers.get("AXIS").dxf.linetype = "CENTER"
    msp = doc.modelspace()
    for name, points in section_mm(design).items():
        if name == "AXIS":
            msp.add_line(points[0], points[1], dxfattribs={"layer": "AXIS"})
        else:
            msp.add_lwpolyline(points, format="xy", close=True, dxfattribs={"layer": name})
    path = Path(path)
    with atomic_path(path) as tmp:
        doc.saveas(tmp)
    return path
