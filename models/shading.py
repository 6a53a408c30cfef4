"""A shading winding: ``[ring]`` as a few turns of wire in the groove, closed through a
capacitor and / or a resistor, instead of a solid ring.

A solid ring's current lags the coil's by its own L / R; a winding closed through a capacitor
has a lag chosen by the capacitance. The winding is stranded (its wire thin against its skin
depth: a uniform current density over the groove's section, as the coil's), ``turns`` turns of
wire of diameter ``wire_diameter_mm`` (default: the copper fills the groove's section), with the
closing part in series: Z_close = R + 1 / (j omega C). Rms phasors: the closing part's voltage is
|I| |Z_close|, the capacitor's reactive power |I|^2 / (omega C).
"""

from __future__ import annotations

import math

__all__ = ["SHADING_KEYS", "closing_impedance", "parse_shading", "winding_resistance", "wire_area"]

MM = 1e-3
#: The keys of [ring] that make it a winding.
SHADING_KEYS = ("turns", "wire_diameter_mm", "capacitance_uF", "resistance_ohm")


def parse_shading(r, problems: list[str]) -> dict:
    """The Ring keywords of a winding (``turns``, ``wire_diameter``, ``capacitance``,
    ``closing_resistance``), {} for a solid ring; one line in ``problems`` per mistake:
    turns without a closing part, a closing part or a wire on a solid ring, a wire that does
    not fit the groove."""
    if not r.usable(*SHADING_KEYS):
        return {}
    closing = [k for k in ("capacitance_uF", "resistance_ohm") if k in r]
    if "turns" not in r:
        for k in [k for k in ("wire_diameter_mm", *closing) if k in r]:
            problems.append(
                f"ring.{k} = {r[k]!r}: a solid ring is closed on itself; give ring.turns (a "
                "shading winding, closed through capacitance_uF or resistance_ohm) or leave it out"
            )
        return {}
    if not closing:
        problems.append(
            f"ring.turns = {r['turns']!r}: a winding needs what closes it: give "
            "capacitance_uF and / or resistance_ohm (0: shorted)"
        )
        return {}
    if r.has("wire_diameter_mm", "inner_radius_mm", "outer_radius_mm", "depth_mm"):
        section = (r["outer_radius_mm"] - r["inner_radius_mm"]) * r["depth_mm"]
        d = r["wire_diameter_mm"]
        if section > 0 and r["turns"] * math.pi * d * d / 4 > section * math.pi / 4 * 1.0001:
            problems.append(
                f"ring.wire_diameter_mm = {d!r}: {r['turns']} turns do not fit the "
                f"{section:.4g} mm^2 groove; must be <= {math.sqrt(section / r['turns']):.4g} mm"
            )
    return {
        "turns": r["turns"],
        "wire_diameter": r["wire_diameter_mm"] * MM if "wire_diameter_mm" in r else None,
        "capacitance": r["capacitance_uF"] * 1e-6 if "capacitance_uF" in r else None,
        "closing_resistance": r.get("resistance_ohm"),
    }


def wire_area(ring) -> float:
    """Copper section of one turn [m^2]: the wire's, or the groove's section over the turns."""
    if ring.wire_diameter is not None:
        return math.pi * ring.wire_diameter**2 / 4.0
    return ring.width * ring.depth / ring.turns


def winding_resistance(ring, temperature_C: float = 20.0) -> float:
    """DC resistance of the winding's wire [Ohm] at ``temperature_C``: rho(T) N 2 pi r_mean / A
    (the closing part not included)."""
    rho = (1.0 + ring.temperature_coefficient * (temperature_C - 20.0)) / ring.conductivity
    r_mean = 0.5 * (ring.inner_radius + ring.outer_radius)
    return rho * ring.turns * 2.0 * math.pi * r_mean / wire_area(ring)


def closing_impedance(ring, omega: float) -> complex:
    """Impedance of the closing part [Ohm]: R + 1 / (j omega C) (either may be absent)."""
    z = complex(ring.closing_resistance or 0.0)
    if ring.capacitance is not None:
        z += 1.0 / (1j * omega * ring.capacitance)
    return z
