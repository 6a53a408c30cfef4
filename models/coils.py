"""Several coils: the ``[[coils]]`` tables of a design file, checked and built (SI inside).

``[coil]`` is the one-coil form; ``[[coils]]`` gives any number of coaxial coils, each with the
keys of ``[coil]`` and its ``sense`` (+1 or -1: the direction its turns are wound in), all in
series on the one drive: one current flows through every turn, each coil adding
``sense x turns`` ampere-turns. A coil's ``setback_mm`` is measured from the face plane (the
pole face, or without a pole the plane ``gap_mm`` is measured from) down to the coil's top.
Each coil's keys read as ``"coils.N.key"`` (N counted from 0) in sweeps and studies.
"""

from __future__ import annotations

import math

from models.design.geometry import _check_winding, _check_wire_fills
from models.design.parts import Coil, coil_fill, coil_turns
from models.design.schema import _ALLOWED, DESIGN_KEYS, _check_value, _Values
from models.design.tables import _parse_coil
from models.errors import nearest

__all__ = [
    "COILS_KEYS",
    "check_coils",
    "coils_fit_pole",
    "build_coils",
    "coils_resistance",
    "parse_coil_materials",
    "coil_table_key",
]

MM = 1e-3


#: The keys of one ``[[coils]]`` table: those of ``[coil]`` (its turns, or its wire and fill
#: factor, as ``[coil]`` takes them) and its ``sense`` (1 or -1).
COILS_KEYS = {**DESIGN_KEYS["coil"], "sense": ("sense", False)}


def coil_table_key(key: str) -> tuple[int, str] | None:
    """``(N, key)`` of a ``"coils.N.key"`` name, or None when ``key`` is not of that form."""
    parts = key.split(".")
    if len(parts) != 3 or parts[0] != "coils" or not parts[1].isdigit():
        return None
    return int(parts[1]), parts[2]


def check_coils(data: dict, problems: list[str]) -> list | None:
    """The checked values of each ``[[coils]]`` table (models.design.schema._Values, file units), None
    when the file has no ``[[coils]]``. Unknown keys, values, a missing key, a sense other than
    +1 or -1, ``[coil]`` beside ``[[coils]]``: one line each in ``problems``."""
    coils = data.get("coils")
    if coils is None:
        return None
    if not isinstance(coils, list) or not coils or not all(isinstance(c, dict) for c in coils):
        problems.append(
            f"coils = {coils!r}: must be one or more [[coils]] tables (an array of tables)"
        )
        return []
    if "coil" in data:
        problems.append(
            "[coil] beside [[coils]]: give one coil as [coil] or several as [[coils]], not both"
        )
    keys = COILS_KEYS
    out = []
    for n, table in enumerate(coils):
        where = f"coils.{n}"
        values, refused = {}, set()
        for key, value in table.items():
            if key not in keys:
                problems.append(
                    f"{where}.{key}: unknown key; allowed: {', '.join(keys)}{nearest(key, keys)}"
                )
                continue
            kind = keys[key][0]
            if kind == "sense":
                if isinstance(value, int) and not isinstance(value, bool) and value in (1, -1):
                    values[key] = value
                else:
                    problems.append(f"{where}.sense = {value!r}: must be 1 or -1")
                    refused.add(key)
                continue
            checked = _check_value(f"{where}.{key}", value, kind, problems)
            if checked is None:
                refused.add(key)
            else:
                values[key] = checked
        for key, (kind, required) in keys.items():
            if required and key not in table:
                problems.append(f"{where}.{key}: missing; must be {_ALLOWED[kind]}")
        vals = _Values(values, refused)
        _check_one(where, vals, problems)
        out.append(vals)
    _check_overlaps(out, problems)
    return out


def _check_one(where: str, c, problems: list[str]) -> None:
    """One coil's own rules: radii in order, its wire in its window, one way to give the fill."""
    radii = c.has("inner_radius_mm", "outer_radius_mm")
    if radii and c["outer_radius_mm"] <= c["inner_radius_mm"]:
        problems.append(
            f"{where}.outer_radius_mm = {c['outer_radius_mm']!r}: must be > "
            f"{where}.inner_radius_mm (= {c['inner_radius_mm']!r})"
        )
    before = len(problems)
    _check_winding(c, problems)  # the turns given one way, as [coil] gives them
    if radii and c.has("wire_diameter_mm", "length_mm") and "turns" not in c and c.usable("turns"):
        _check_wire_fills(c, problems)
    problems[before:] = [p.replace("coil.", f"{where}.") for p in problems[before:]]
    if radii and c.has("wire_diameter_mm", "turns", "length_mm"):
        wire_area = math.pi * c["wire_diameter_mm"] ** 2 / 4
        window = (c["outer_radius_mm"] - c["inner_radius_mm"]) * c["length_mm"]
        if window > 0 and c["turns"] * wire_area > window * math.pi / 4 * 1.0001:
            problems.append(
                f"{where}.wire_diameter_mm = {c['wire_diameter_mm']!r}: {c['turns']} turns do "
                f"not fit the {window:.4g} mm^2 window; must be <= "
                f"{math.sqrt(window / c['turns']):.4g} mm"
            )


def _extent(c):
    """(r0, r1, z0, z1) of a coil's window [mm], None when a size is unknown."""
    if not c.has("inner_radius_mm", "outer_radius_mm", "setback_mm", "length_mm"):
        return None
    top = -c["setback_mm"] + 0.0  # no "-0" in a message
    return c["inner_radius_mm"], c["outer_radius_mm"], top - c["length_mm"], top


def _check_overlaps(coils: list, problems: list[str]) -> None:
    """No two coil windows share an area of the meridian plane (touching is allowed)."""
    boxes = [_extent(c) for c in coils]
    for j, b in enumerate(boxes):
        for i in range(j):
            a = boxes[i]
            if a is None or b is None:
                continue
            if min(a[1], b[1]) > max(a[0], b[0]) and min(a[3], b[3]) > max(a[2], b[2]):
                problems.append(
                    f"coils.{j}: overlaps coils.{i} (r {b[0]:g}-{b[1]:g} mm, z {b[2]:g} to "
                    f"{b[3]:g} mm against r {a[0]:g}-{a[1]:g} mm, z {a[2]:g} to {a[3]:g} mm); "
                    "coil windows must not overlap"
                )


def coils_fit_pole(coils: list, pole, problems: list[str]) -> None:
    """With a pole, every coil outside it and along it (as ``[coil]`` must be)."""
    for n, c in enumerate(coils):
        where = f"coils.{n}"
        if c.has("inner_radius_mm") and pole.has("radius_mm"):
            if c["inner_radius_mm"] < pole["radius_mm"]:
                problems.append(
                    f"{where}.inner_radius_mm = {c['inner_radius_mm']!r}: must be >= "
                    f"pole.radius_mm (= {pole['radius_mm']!r}); the coil sits outside the pole"
                )
        if c.has("setback_mm", "length_mm") and pole.has("length_mm"):
            if c["setback_mm"] + c["length_mm"] > pole["length_mm"]:
                problems.append(
                    f"{where}.length_mm = {c['length_mm']!r}: setback_mm + length_mm must be "
                    f"<= pole.length_mm (= {pole['length_mm']!r}); the coil sits along the pole"
                )


def parse_coil_materials(coils: list, problems: list[str]) -> list | None:
    """Each coil's wire (models.design.tables._parse_coil's keywords), None if any is unknown."""
    out = []
    for n, c in enumerate(coils):
        before = len(problems)
        kw = _parse_coil(c, problems)
        # _parse_coil names the table "coil"; name the coil instead
        problems[before:] = [
            p.replace("coil.material", f"coils.{n}.material") for p in problems[before:]
        ]
        out.append(kw)
    return None if any(kw is None for kw in out) else out


def build_coils(coils: list, parsed: list) -> tuple:
    """The Coil of each checked ``[[coils]]`` table (SI), in file order."""
    return tuple(
        Coil(
            inner_radius=c["inner_radius_mm"] * MM,
            outer_radius=c["outer_radius_mm"] * MM,
            setback=c["setback_mm"] * MM,
            length=c["length_mm"] * MM,
            turns=coil_turns(c),
            wire_diameter=c["wire_diameter_mm"] * MM if "wire_diameter_mm" in c else None,
            sense=c.get("sense", 1),
            fill_factor=coil_fill(c),
            **kw,
        )
        for c, kw in zip(coils, parsed, strict=True)
    )


def coils_resistance(design, temperature_C: float = 20.0) -> float:
    """DC resistance [Ohm] of the winding in series, every coil at ``temperature_C`` [degC]
    (the thermal network lumps the coils into one node): the sum of ``Coil.resistance``."""
    return sum(c.resistance(temperature_C) for c in design.windings)
