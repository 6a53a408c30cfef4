"""What a winder needs to wind the coil: turns, wire (bare and enamelled), fill, resistance, supply.

The enamelled wire's overall diameter is IEC 60317-0-1's maximum overall diameter of round
enamelled copper wire for grade 1 (thinnest enamel) and grade 2 (the usual default). The table
below is a subset of the standard's nominal diameters with those maxima, written from memory of
IEC 60317-0-1 Table 1 (the 0.100 mm grade-1 figure, 0.117 mm, agrees with a wire maker's published
0.108-0.117 mm range); it has not been checked against the standard's text here: confirm the
overall diameter with the wire supplier's datasheet before fixing a bobbin. Between two listed
nominal diameters the maxima are interpolated linearly (said so in ``enamel_source``); outside the
table's range no value is given.

The fill factor is the copper fill: turns x bare wire area / coil window area (the window being
the rectangle (outer - inner radius) x length of the design file), not the enamelled-wire fill.

``STANDARD_BARE_DIAMETERS_MM`` is the series of nominal bare diameters a study searches a wire
over (``"coil.wire_diameter_mm" = { choices = [...] }``): IEC 60317-0-1's nominal conductor
diameters from 0.1 to 3.15 mm, the R20 series of preferred numbers (ISO 3, ratio 10^(1/20)
rounded), written from memory; the enamel table (``ENAMEL_MAX_OVERALL_MM``) holds a subset.
"""

from __future__ import annotations

import math

__all__ = [
    "ENAMEL_MAX_OVERALL_MM",
    "STANDARD_BARE_DIAMETERS_MM",
    "enamel_overall_mm",
    "standard_size",
    "winding_dict",
]

#: Nominal bare diameters of round enamelled copper wire [mm], IEC 60317-0-1 (the R20 series of
#: ISO 3 between 0.1 and 3.15 mm; from memory, see the module docstring).
STANDARD_BARE_DIAMETERS_MM: tuple[float, ...] = (
    0.100, 0.112, 0.125, 0.140, 0.160, 0.180, 0.200, 0.224, 0.250, 0.280,
    0.315, 0.355, 0.400, 0.450, 0.500, 0.560, 0.630, 0.710, 0.800, 0.900,
    1.000, 1.120, 1.250, 1.400, 1.600, 1.800, 2.000, 2.240, 2.500, 2.800,
    3.150,
)  # fmt: skip

#: Nominal bare copper diameter [mm] -> (grade 1, grade 2) maximum overall diameter [mm],
#: IEC 60317-0-1 Table 1 (from memory; see the module docstring).
ENAMEL_MAX_OVERALL_MM: dict[float, tuple[float, float]] = {
    0.100: (0.117, 0.125),
    0.200: (0.226, 0.239),
    0.250: (0.281, 0.297),
    0.315: (0.349, 0.367),
    0.400: (0.439, 0.459),
    0.500: (0.544, 0.566),
    0.630: (0.679, 0.704),
    0.710: (0.762, 0.789),
    0.800: (0.855, 0.884),
    1.000: (1.062, 1.093),
    1.250: (1.316, 1.349),
    1.600: (1.674, 1.711),
    2.000: (2.079, 2.118),
    2.500: (2.587, 2.631),
    3.150: (3.247, 3.294),
}

_SOURCE = "IEC 60317-0-1 Table 1, maximum overall diameter (from memory; check the datasheet)"


def enamel_overall_mm(bare_mm: float) -> dict:
    """Grade-1 and grade-2 maximum overall diameters [mm] of an enamelled copper wire of nominal
    bare diameter ``bare_mm``: ``{"grade1_max_mm", "grade2_max_mm", "enamel_source"}``; the
    diameters are None outside the table's range."""
    sizes = sorted(ENAMEL_MAX_OVERALL_MM)
    d = round(bare_mm, 6)
    if d in ENAMEL_MAX_OVERALL_MM:
        g1, g2 = ENAMEL_MAX_OVERALL_MM[d]
        return {"grade1_max_mm": g1, "grade2_max_mm": g2, "enamel_source": _SOURCE}
    if not sizes[0] < d < sizes[-1]:
        return {
            "grade1_max_mm": None,
            "grade2_max_mm": None,
            "enamel_source": f"{d:g} mm is outside the table ({sizes[0]:g}-{sizes[-1]:g} mm): "
            "take the overall diameter from the wire supplier",
        }
    hi = next(s for s in sizes if s > d)
    lo = sizes[sizes.index(hi) - 1]
    f = (d - lo) / (hi - lo)
    g1, g2 = (
        round(a + f * (b - a), 3)
        for a, b in zip(ENAMEL_MAX_OVERALL_MM[lo], ENAMEL_MAX_OVERALL_MM[hi], strict=True)
    )
    return {
        "grade1_max_mm": g1,
        "grade2_max_mm": g2,
        "enamel_source": f"{_SOURCE}; {d:g} mm is not a listed nominal size: interpolated "
        f"between {lo:g} and {hi:g} mm",
    }


def standard_size(bare_mm: float) -> dict:
    """Whether ``bare_mm`` [mm] is a nominal size of STANDARD_BARE_DIAMETERS_MM, and if not the
    nearest sizes below and above it (None beyond the series)."""
    d = round(bare_mm, 6)
    below = [s for s in STANDARD_BARE_DIAMETERS_MM if s <= d]
    above = [s for s in STANDARD_BARE_DIAMETERS_MM if s >= d]
    standard = bool(below) and below[-1] == d
    return {
        "wire_standard_size": standard,
        "wire_standard_below_mm": None if standard or not below else below[-1],
        "wire_standard_above_mm": None if standard or not above else above[0],
        "wire_standard_means": "IEC 60317-0-1 nominal bare diameters, the R20 series of "
        "0.1-3.15 mm (from memory)",
    }


def winding_dict(design, result=None) -> dict:
    """The winding of ``design`` for the winder: turns, bare and enamelled wire diameters, copper
    fill factor, resistance at 20 degC and at the hot state, and the supply's voltage and current
    (rms) from ``result`` (a Result or its dict; without it those are None)."""
    coil = design.coil
    bare_mm = math.sqrt(4.0 * coil.wire_area / math.pi) * 1e3
    predicted = result.to_dict() if hasattr(result, "to_dict") else (result or {})
    hot_C = (predicted.get("temperatures_C") or {}).get("coil_mean")
    hot_ok = hot_C is not None and math.isfinite(hot_C)
    if coil.fill_factor is None:
        turns_source = "design file (coil.turns)"
    else:
        turns_source = (
            f"the whole turns of the wire that fill at most {coil.fill_factor:g} of the window "
            "(coil.fill_factor" + (")" if "fill_factor" in _coil_keys(design) else ", default)")
        )
    return {
        "turns": coil.turns,
        "turns_source": turns_source,
        "material": coil.material,
        "wire_bare_diameter_mm": round(bare_mm, 9),
        "wire_bare_diameter_source": "design file (coil.wire_diameter_mm)"
        if coil.wire_diameter is not None
        else "not in the design file: derived from the model's default copper fill",
        **standard_size(bare_mm),
        **{f"wire_overall_{k}": v for k, v in enamel_overall_mm(bare_mm).items()},
        "fill_factor": coil.turns * coil.wire_area / coil.window_area,
        "fill_factor_means": "copper fill: turns x bare wire area / coil window area "
        "((outer - inner radius) x length)",
        "resistance_20C_ohm": coil.resistance(20.0),
        "hot_state_C": hot_C,
        "hot_state_means": "the winding's mean temperature at the duty-averaged steady state "
        "(temperatures_C.coil_mean)",
        "resistance_hot_ohm": coil.resistance(hot_C) if hot_ok else None,
        "supply_voltage_V": predicted.get("coil_voltage_V"),
        "supply_current_A": predicted.get("coil_current_A"),
        "supply_means": "rms at the coil terminals, while the supply is on",
    }


def _coil_keys(design) -> dict:
    """The [coil] table of the design's file (empty if it has none)."""
    coil = (design.source or {}).get("coil")
    return coil if isinstance(coil, dict) else {}
