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

Beside the half section, for a CAD user (`ANNOTATION_LAYERS`, `optim.morning.dxfnotes`):

============  ==========================================================================
layer         content
============  ==========================================================================
FULL_SECTION  the full section, both halves (mirrored about the axis), one closed polyline
              per part region: a part that touches the axis is one outline across it
DIMENSIONS    linear dimensions (DIMENSION entities) measured from the geometry: diameters
              (Ø) across the full section of the pole, the ring's groove and the coil window;
              the pole's length and the ring's depth left of it, the gap and the coil window's
              length and setback right of it
NOTES         a text block: design, study and trial, materials, the pole's sheets, turns, wire,
              frequency, current
LAMINATIONS   a laminated pole's sheets: lines parallel to the axis in the pole's left half
              and the words "sheets ∥ axis"
============  ==========================================================================

Revolving each closed polyline about the y axis gives the solid of that part. `section_mm` is the
one source of this geometry: the DXF and the plotted section (`optim.morning.design_plots.plot_section`) both use
it.
"""

from __future__ import annotations

from pathlib import Path

from optim.files import atomic_path
from optim.morning.dxfnotes import add_dimensions, add_laminations, add_notes, default_notes
from optim.morning.section import full_section_mm, section_mm

__all__ = ["LAYERS", "ANNOTATION_LAYERS", "write_profile_dxf"]

#: Layer name -> (AutoCAD colour index, description). Declared in every file we write.
LAYERS: dict[str, tuple[int, str]] = {
    "POLE": (8, "steel pole with the ring groove in its face"),
    "RING": (1, "shading ring inlaid flush in the pole face"),
    "COIL": (3, "coil window (winding cross-section)"),
    "TARGET": (5, "target part at its gap above the face"),
    "AXIS": (7, "axis of symmetry r = 0"),
}

#: Layers of the CAD annotations (same form as `LAYERS`), declared in every file we write.
ANNOTATION_LAYERS: dict[str, tuple[int, str]] = {
    "FULL_SECTION": (4, "full section, both halves mirrored about the axis"),
    "DIMENSIONS": (6, "diameters and lengths of the pole, ring, coil window and the gap"),
    "NOTES": (7, "design, materials, winding and drive"),
    "LAMINATIONS": (8, "direction of a laminated pole's sheets (parallel to the axis)"),
}


def write_profile_dxf(design, path, notes: list[str] | None = None) -> Path:
    """Write the half cross-section as a DXF profile in millimetres.

    Parameters
    ----------
    design : models.design.Design
    path : str or Path
        Output file (written atomically).
    notes : list of str, optional
        Lines of the NOTES text block (default: `optim.morning.dxfnotes.default_notes`).

    Returns
    -------
    Path
        The written file.

    Notes
    -----
    ``ezdxf.new()`` draws in metres by default: the drawing units ($INSUNITS = 4) and the metric
    measurement flag ($MEASUREMENT = 1) are set to millimetres here, and every layer in `LAYERS` is
    declared. Parts are closed LWPOLYLINEs; the axis is a LINE on the AXIS layer with the CENTER
    line type. Layers of the DXF reference (R2013 format). The full section, the dimensions and
    the text block go on their own layers (`ANNOTATION_LAYERS`).
    """
    import ezdxf
    from ezdxf import units

    doc = ezdxf.new("R2013", setup=True)  # setup: standard line types (CENTER) and text styles
    doc.units = units.MM
    doc.header["$INSUNITS"] = units.MM
    doc.header["$MEASUREMENT"] = 1
    doc.header["$LUNITS"] = 2  # decimal
    for name, (colour, description) in {**LAYERS, **ANNOTATION_LAYERS}.items():
        layer = doc.layers.add(name, color=colour)
        layer.description = description
    doc.layers.get("AXIS").dxf.linetype = "CENTER"
    msp = doc.modelspace()
    for name, points in section_mm(design).items():
        if name == "AXIS":
            msp.add_line(points[0], points[1], dxfattribs={"layer": "AXIS"})
        else:
            msp.add_lwpolyline(points, format="xy", close=True, dxfattribs={"layer": name})
    for part, points in full_section_mm(design):
        colour = LAYERS[part][0]  # each part in its own colour on the FULL_SECTION layer
        msp.add_lwpolyline(
            points, format="xy", close=True, dxfattribs={"layer": "FULL_SECTION", "color": colour}
        )
    add_dimensions(msp, design)
    add_laminations(msp, design)
    add_notes(msp, design, default_notes(design) if notes is None else notes)
    path = Path(path)
    with atomic_path(path) as tmp:
        doc.saveas(tmp)
    return path
