"""What a CAD user dimensions from: DIMENSION entities and the text block of profile.dxf.

`dimensions_mm` lists the linear dimensions of the half section (r along x, the axis z along y,
the pole face at y = 0; `optim.morning.dxf`): the ring's inner and outer radius and its depth, the
pole radius, the gap, and the coil window (its inner radius, radial width, axial length and
setback from the face). Each is measured between two points of the section's geometry, so the
value a CAD program reads from it (``Dimension.get_measurement``) is the design's value in mm.
`add_dimensions` draws them with ezdxf's ``add_linear_dim`` (rendered to the dimension's block),
`add_notes` writes the text block (an MTEXT) beside the section.
"""

from __future__ import annotations

from optim.morning.dxf import section_mm

__all__ = ["dimensions_mm", "add_dimensions", "add_notes", "default_notes"]


def _extent(poly: dict) -> tuple[float, float, float]:
    """Largest radius, lowest and highest z of the parts [mm]."""
    pts = [p for name, points in poly.items() if name != "AXIS" for p in points]
    return max(x for x, _ in pts), min(y for _, y in pts), max(y for _, y in pts)


def dimensions_mm(design) -> list[dict]:
    """The linear dimensions of the section: dicts of ``name`` (the design file's dotted key, or
    ``coil.window_width_mm``), ``value`` [mm], ``p1``, ``p2`` (measured points), ``base`` (a point
    on the dimension line) and ``angle`` (0 horizontal, 90 vertical)."""
    poly = section_mm(design)
    width, bottom, top = _extent(poly)
    step = 0.08 * max(width, top - bottom)  # spacing of stacked dimension lines
    rp = poly["POLE"][1][0]
    (rci, z_back), (rco, _), _, (_, z_front) = poly["COIL"]
    _, (tr, gap), _, _ = poly["TARGET"]
    out = []

    def add(name, value, p1, p2, base, angle):
        out.append({"name": name, "value": value, "p1": p1, "p2": p2, "base": base, "angle": angle})

    length = -poly["POLE"][0][1]
    add("pole.radius_mm", rp, (0.0, -length), (rp, -length), (0.0, bottom - 1.5 * step), 0)
    add("coil.inner_radius_mm", rci, (0.0, z_back), (rci, z_back), (0.0, bottom - 3 * step), 0)
    add(
        "coil.window_width_mm",
        rco - rci,
        (rci, z_back),
        (rco, z_back),
        (0.0, bottom - 4.5 * step),
        0,
    )
    right = width + 1.5 * step
    add("target.gap_mm", gap, (min(rp, tr), 0.0), (tr, gap), (right, 0.0), 90)
    add("coil.length_mm", z_front - z_back, (rco, z_back), (rco, z_front), (right, 0.0), 90)
    if z_front < 0:
        add("coil.setback_mm", -z_front, (rp, 0.0), (rco, z_front), (right + 1.5 * step, 0.0), 90)
    if "RING" in poly:
        (ri, depth), (ro, _), _, _ = poly["RING"]
        depth = -depth
        add("ring.inner_radius_mm", ri, (0.0, 0.0), (ri, 0.0), (0.0, top + 1.5 * step), 0)
        add("ring.outer_radius_mm", ro, (0.0, 0.0), (ro, 0.0), (0.0, top + 3 * step), 0)
        # In the pole's centre post, between the axis and the groove's inner wall.
        x = 0.5 * ri if ri > 0 else 0.5 * (ro + rp)
        add("ring.depth_mm", depth, (ri, 0.0), (ri, -depth), (x, 0.0), 90)
    return out


def _decimals(values) -> int:
    """Fewest decimals (2 to 6) that show every value exactly (to 1e-9 mm)."""
    for n in range(2, 7):
        if all(abs(round(v, n) - v) < 1e-9 for v in values):
            return n
    return 6


def _text_height(design) -> float:
    """Text height [mm] in proportion to the section (a fiftieth of its larger extent)."""
    width, bottom, top = _extent(section_mm(design))
    return max(width, top - bottom) / 50.0


def add_dimensions(msp, design) -> list:
    """Draw `dimensions_mm` on the DIMENSIONS layer of ``msp``; returns the DIMENSION entities."""
    dims = dimensions_mm(design)
    h = _text_height(design)
    override = {
        "dimtxt": h,
        "dimasz": h,
        "dimexo": 0.5 * h,
        "dimexe": 0.5 * h,
        "dimgap": 0.3 * h,
        "dimdec": _decimals([d["value"] for d in dims]),
        "dimtad": 1,  # text above the dimension line
        "dimlfac": 1.0,  # the drawing is in mm: show it as drawn (ezdxf's style has 100)
        "dimzin": 0,  # keep trailing zeros: 10.00, to the resolution
        "dimblk": "",  # closed filled arrows (ezdxf's style has architectural ticks)
    }
    out = []
    for d in dims:
        dim = msp.add_linear_dim(
            base=d["base"],
            p1=d["p1"],
            p2=d["p2"],
            angle=d["angle"],
            override=override,
            dxfattribs={"layer": "DIMENSIONS"},
        )
        dim.render()
        out.append(dim.dimension)
    return out


def default_notes(design) -> list[str]:
    """Text block lines from the design alone (the hand-off passes fuller ones)."""
    c, drive = design.coil, design.drive
    parts = [("pole", design.pole), ("coil", c), ("ring", design.ring), ("target", design.target)]
    lines = [f"design {design.name}", "units: mm; half section r >= 0, full section mirrored"]
    lines += [f"{name}: {part.material}" for name, part in parts if part is not None]
    wire = "" if c.wire_diameter is None else f", wire {c.wire_diameter * 1e3:g} mm bare copper"
    lines.append(f"coil: {c.turns} turns{wire}")
    supply = f"{drive.current:g} A rms" if drive.current is not None else f"{drive.voltage:g} V rms"
    lines.append(f"drive: {drive.frequency:g} Hz, {supply}")
    return lines


def add_notes(msp, design, lines: list[str]):
    """Write ``lines`` as one MTEXT on the NOTES layer, to the right of the section."""
    width, bottom, top = _extent(section_mm(design))
    h = _text_height(design)
    step = 0.08 * max(width, top - bottom)
    text = msp.add_mtext(
        "\\P".join(line.replace("\\", "/") for line in lines),
        dxfattribs={"layer": "NOTES", "char_height": h},
    )
    text.set_location((width + 6 * step, top), attachment_point=1)  # top left corner
    return text
