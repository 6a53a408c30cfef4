"""The magnet's envelope and masses: what a machine builder must find room and a mount for.

The envelope is the smallest cylinder, coaxial with the pole, that holds every part of the magnet
the design describes: the pole (the ring sits inside its face) and the coil around it. Its
diameter is twice the largest of the pole's radius and the coils' outer radii; its height is the
pole's length (a coil lies along the pole, ``setback + length <= pole length``, a rule of
models.design), or without a pole the deepest coil's setback plus length. Left out, because the design does not describe them: a bobbin's flanges, the
enamel's and the leads' share of the winding, a housing, the mount, the terminals and any
capacitor.

The masses come from the volumes and the materials' densities (models.materials, each with its
source): the pole's steel with the ring's groove removed (``pole_mass_kg``), the ring's metal, and
the winding's conductor, turns x 2 pi r_mean x wire area (``coil_copper_mass_kg``; the enamel,
the impregnant and the leads left out).
"""

from __future__ import annotations

import math

from models.design import Design
from models.materials import MATERIALS
from models.result import Envelope

__all__ = ["envelope"]


def envelope(design: Design, pole_mass_kg: float) -> Envelope:
    """The envelope [mm] and masses [kg] of ``design`` (models.result.Envelope), with its pole's
    steel mass ``pole_mass_kg`` [kg] (models.evaluate.pole_mass; nan for an air core, which
    has no steel: its envelope is that of its coils)."""
    p, coils, g = design.pole, design.windings, design.ring
    copper = sum(
        c.conductor_volume * MATERIALS.get(c.material, MATERIALS["copper"]).density for c in coils
    )
    ring = 0.0
    if g is not None:
        ring = math.pi * (g.outer_radius**2 - g.inner_radius**2) * g.depth * g.density
    radius = max(c.outer_radius for c in coils)
    height = max(c.setback + c.length for c in coils)
    steel = 0.0
    if p is not None:
        radius, height, steel = max(p.radius, radius), max(p.length, height), pole_mass_kg
    return Envelope(
        magnet_diameter_mm=2e3 * radius,
        magnet_height_mm=1e3 * height,
        magnet_mass_kg=float(steel + ring + copper),
        coil_copper_mass_kg=float(copper),
    )
