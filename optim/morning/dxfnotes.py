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

from optim.morning.section import section_mm

__all__ = [
    "dimensions_mm",
    "add_dimensions",
    "add_laminations",
    "add_notes",
    "default_notes",
    "sheets_words",
]


def _extent(poly: dict) -> tuple[float, float, float]:
    """Largest radius, lowest and highest z of the parts [mm]."""
    pts = [p for name, points in poly.items() if name != "AXIS" for p in points]
    return max(x for x, _ in pts), min(y for _, y in pts), max(y for _, y in pts)


#: Lettering height at 1:1 [mm]: ISO 3098-0 lists 2.5 mm as the smallest standard height for
#: dimensions on a drawing (common practice); the text grows with a large section.
MIN_TEXT_HEIGHT_MM = 2.5


def dimensions_mm(design) -> list[dict]:
    """The linear dimensions of the section: dicts of ``name`` (the design file's dotted key, a
    diameter as ``<part>.<what>_diameter_mm``), ``value`` [mm], ``p1``, ``p2`` (measured points),
    ``base`` (a point on the dimension line), ``angle`` (0 horizontal, 90 vertical) and ``text``
    (``"Ø<>"`` for a diameter: the measurement after the diameter sign; ``"<>"`` otherwise).

    A turned part is dimensioned by its diameters, across the full section (from -r to +r): the
    pole, the ring's groove walls and the coil window's inner and outer walls (the bobbin). The
    pole's length and the ring's depth stand on the left of the full section, clear of the centre
    line; the gap and the coil window's length and setback on the right.
    """
    poly = section_mm(design)
    width, bottom, top = _extent(poly)
    step = _step(design)  # spacing of stacked dimension lines
    rp = poly["POLE"][1][0]
    (rci, z_back), (rco, _), _, (_, z_front) = poly["COIL"]
    _, (tr, gap), _, _ = poly["TARGET"]
    out = []

    def add(name, value, p1, p2, base, angle, text="<>"):
        out.append(
            {
                "name": name,
                "value": value,
                "p1": p1,
                "p2": p2,
                "base": base,
                "angle": angle,
                "text": text,
            }
        )

    def diameter(name, r, z, level):
        add(name, 2.0 * r, (-r, z), (r, z), (0.0, level), 0, "Ø<>")

    length = -poly["POLE"][0][1]
    diameter("pole.diameter_mm", rp, -length, bottom - 1.5 * step)
    diameter("coil.inner_diameter_mm", rci, z_back, bottom - 3 * step)
    diameter("coil.outer_diameter_mm", rco, z_back, bottom - 4.5 * step)
    right, left = width + 1.5 * step, -(width + 1.5 * step)
    add("target.gap_mm", gap, (min(rp, tr), 0.0), (tr, gap), (right, 0.0), 90)
    add("coil.length_mm", z_front - z_back, (rco, z_back), (rco, z_front), (right, 0.0), 90)
    if z_front < 0:
        add("coil.setback_mm", -z_front, (rp, 0.0), (rco, z_front), (right + 1.5 * step, 0.0), 90)
    add("pole.length_mm", length, (-rp, -length), (-rp, 0.0), (left - 1.5 * step, 0.0), 90)
    if "RING" in poly:
        (ri, depth), (ro, _), _, _ = poly["RING"]
        depth = -depth
        diameter("ring.inner_diameter_mm", ri, 0.0, top + 1.5 * step)
        diameter("ring.outer_diameter_mm", ro, 0.0, top + 3 * step)
        add("ring.depth_mm", depth, (-ro, 0.0), (-ro, -depth), (left, 0.0), 90)
    return out


def _step(design) -> float:
    """Spacing of stacked dimension lines [mm]: 8 % of the section, at least three text heights."""
    width, bottom, top = _extent(section_mm(design))
    return max(0.08 * max(width, top - bottom), 3.0 * _text_height(design))


def _decimals(values) -> int:
    """Fewest decimals (2 to 6) that show every value exactly (to 1e-9 mm)."""
    for n in range(2, 7):
        if all(abs(round(v, n) - v) < 1e-9 for v in values):
            return n
    return 6


def _text_height(design) -> float:
    """Text height [mm]: a fiftieth of the section's larger extent, at least
    `MIN_TEXT_HEIGHT_MM` (readable printed at 1:1)."""
    width, bottom, top = _extent(section_mm(design))
    return max(max(width, top - bottom) / 50.0, MIN_TEXT_HEIGHT_MM)


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
            text=d["text"],
            location=_outside(d, h),
            override=override,
            dxfattribs={"layer": "DIMENSIONS"},
        )
        dim.render()
        out.append(dim.dimension)
    return out


def _outside(d: dict, h: float):
    """Where the text of a short dimension goes [mm]: beyond the end of its dimension line, clear
    of the arrows, when the text (about 2.5 text heights long) does not fit between them; None
    (centred on the line) otherwise."""
    if abs(d["value"]) >= 4.0 * h:
        return None
    if d["angle"] == 90:
        top = max(d["p1"][1], d["p2"][1])
        return (d["base"][0] - 0.7 * h, top + 2.5 * h)
    right = max(d["p1"][0], d["p2"][0])
    return (right + 3.0 * h, d["base"][1] + 0.7 * h)


def default_notes(design) -> list[str]:
    """Text block lines from the design alone (the hand-off passes fuller ones)."""
    c, drive = design.coil, design.drive
    parts = [("pole", design.pole), ("coil", c), ("ring", design.ring), ("target", design.target)]
    lines = [f"design {design.name}", "units: mm; half section r >= 0, full section mirrored"]
    lines += [f"{name}: {part.material}" for name, part in parts if part is not None]
    if sheets_words(design):
        lines.append(sheets_words(design))
    wire = "" if c.wire_diameter is None else f", wire {c.wire_diameter * 1e3:g} mm bare copper"
    lines.append(f"coil: {c.turns} turns{wire}")
    supply = f"{drive.current:g} A rms" if drive.current is not None else f"{drive.voltage:g} V rms"
    lines.append(f"drive: {drive.frequency:g} Hz, {supply}")
    return lines


def sheets_words(design) -> str | None:
    """The pole's sheets in words (None for a pole that is not laminated)."""
    p = design.pole
    if not p.laminated or not p.lamination_thickness:
        return None
    return (
        f"pole: laminated, {p.lamination_thickness * 1e3:g} mm sheets parallel to the axis "
        "(the flux runs along them)"
    )


def add_laminations(msp, design) -> list:
    """Mark the sheets' direction on a laminated pole, on the LAMINATIONS layer: lines parallel
    to the axis across the left half of the full section (stopping at the groove) and the words
    "sheets ∥ axis" along them. Nothing for a pole that is not laminated."""
    if sheets_words(design) is None:
        return []
    poly = section_mm(design)
    rp, length = poly["POLE"][1][0], -poly["POLE"][0][1]
    ri, ro, depth = (
        (poly["RING"][0][0], poly["RING"][1][0], -poly["RING"][0][1])
        if ("RING" in poly)
        else (0.0, 0.0, 0.0)
    )
    out = []
    n = 6
    for k in range(1, n):
        r = rp * k / n
        top = -depth if ri <= r <= ro else 0.0
        out.append(msp.add_line((-r, -length), (-r, top), dxfattribs={"layer": "LAMINATIONS"}))
    h = _text_height(design)
    label = msp.add_mtext(
        f"sheets ∥ axis ({design.pole.lamination_thickness * 1e3:g} mm)",
        dxfattribs={"layer": "LAMINATIONS", "char_height": h, "rotation": 90.0},
    )
    label.set_location((-0.5 * rp, -0.5 * length), attachment_point=5)  # middle centre
    out.append(label)
    return out


def add_notes(msp, design, lines: list[str]):
    """Write ``lines`` as one MTEXT on the NOTES layer, to the right of the section."""
    width, bottom, top = _extent(section_mm(design))
    h = _text_height(design)
    step = _step(design)
    text = msp.add_mtext(
        "\\P".join(line.replace("\\", "/") for line in lines),
        dxfattribs={"layer": "NOTES", "char_height": h},
    )
    text.set_location((width + 6 * step, top), attachment_point=1)  # top left corner
    return text
