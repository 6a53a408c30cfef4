"""Part families of a study: the ``[[parts]]`` tables, checked, and each part's design.

A study that sorts parts by size names each kind of part the magnet meets::

    [[parts]]
    name = "cap10"                    # letters, digits, _ and -, starting with a letter
    radius_mm = 5.0
    thickness_mm = 0.6
    material = "aluminium-1350"       # or conductivity_S_per_m (+ temperature_coefficient_per_K,
                                      #   density_kg_per_m3), as a design's [target] takes them
    gap_min_mm = 1.5                  # its gap range; default the study's [robust] keys, and
    gap_max_mm = 3.0                  #   without those the design's own gap
    points = 3
    role = "lift"                     # "lift" (default): picked; "leave": left where it lies

    [[parts]]
    name = "cap16"
    radius_mm = 8.0
    thickness_mm = 0.6
    material = "aluminium-1350"
    role = "leave"

A part takes the place of the design's ``[target]`` in everything but the gap: the design's
``target.gap_mm`` stays the design's own gap (where the first lift part's own evaluation sits and,
unless ``thermal.hold_gap_mm`` says otherwise, where a part is held). A part's keys go through the
design's own checks, so a part is refused for what a ``[target]`` would be; its problems name
``parts[i].<key>`` (``i`` counts from 0 in the file's order).

The family's results are ``optim.study.family``'s.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from models.design import DESIGN_KEYS, design_from_dict
from models.errors import DesignError, nearest

__all__ = ["Part", "ROLES", "PART_KEYS", "GAP_KEYS", "parse_parts", "part_source"]

#: What a part is to the station: picked (lift) or left where it lies (leave).
ROLES = ("lift", "leave")
#: The keys of a part's size and metal: the design's [target] keys but its gap.
PART_KEYS = tuple(k for k in DESIGN_KEYS["target"] if k != "gap_mm")
#: The keys of a part's gap range (as the study's [robust] table names them).
GAP_KEYS = ("gap_min_mm", "gap_max_mm", "points")
_ALLOWED = ("name", "role", *PART_KEYS, *GAP_KEYS)
_NAME = re.compile(r"^[A-Za-z][A-Za-z0-9_-]{0,39}$")
#: A design problem about one of these keys is a problem of the part that gave it.
_PART_KEY_IN_TEXT = re.compile(r"\btarget\.(" + "|".join(PART_KEYS) + r")\b")


@dataclass(frozen=True)
class Part:
    """One kind of part of a family.

    name : its name in the results (``parts.<name>.worst_lift_ratio``); role : "lift" or
    "leave"; target : its ``[target]`` keys in file units (mm, S/m, kg/m^3), without the gap;
    gaps_mm : the gaps [mm] it is picked at, evenly spaced (empty: the design's own gap).
    """

    name: str
    role: str
    target: dict
    gaps_mm: tuple = ()

    def to_json(self) -> dict:
        """The part as a ``[[parts]]`` table (its gap range resolved; kept in the storage)."""
        out = {"name": self.name, "role": self.role, **self.target}
        if self.gaps_mm:
            g = self.gaps_mm
            out |= {"gap_min_mm": g[0], "gap_max_mm": g[-1], "points": len(g)}
        return out


def part_source(source: dict, part: Part) -> dict:
    """A design file (dict, file units) with ``part`` in the place of its target: the target's
    size and metal replaced by the part's, the design's ``target.gap_mm`` kept."""
    data = {k: (dict(v) if isinstance(v, dict) else v) for k, v in source.items()}
    target = data.get("target") if isinstance(data.get("target"), dict) else {}
    data["target"] = {k: v for k, v in target.items() if k == "gap_mm"} | dict(part.target)
    return data


def parse_parts(table, base: dict | None, gaps_of, problems: list[str]) -> list[Part]:
    """The ``[[parts]]`` array of tables -> parts, checked against the base design.

    Parameters
    ----------
    table : list of dict
        The file's ``parts`` value.
    base : dict or None
        The base design (file units), to check each part's design with; None when the base
        design itself could not be read (its own problem is reported elsewhere).
    gaps_of : callable
        ``gaps_of(where, keys, problems) -> tuple``: a part's gap range [mm] from its own
        ``gap_min_mm``, ``gap_max_mm``, ``points`` merged over the study's ``[robust]`` keys
        (the spec's checker, problems named ``where``); () for none of them (the design's gap).
    problems : list of str
        One line per problem is appended; the parts are then not to be used.

    Returns
    -------
    list of Part
        In the file's order. At least one has role "lift"; the names are unique.
    """
    if not isinstance(table, list) or not table or not all(isinstance(t, dict) for t in table):
        shown = "an empty array" if table == [] else repr(table)
        problems.append(
            f"parts = {shown}: must be an array of tables, one [[parts]] table per kind of part"
        )
        return []
    parts, seen = [], {}
    for i, entry in enumerate(table):
        part = _part(i, entry, base, gaps_of, problems)
        if part is None:
            continue
        if part.name in seen:
            problems.append(
                f"parts[{i}].name = {part.name!r}: repeats parts[{seen[part.name]}].name; "
                "each part needs its own name"
            )
            continue
        seen[part.name] = i
        parts.append(part)
    if len(parts) == len(table) and not any(p.role == "lift" for p in parts):
        problems.append(
            "parts: no part has role = 'lift'; at least one must be a part the magnet picks"
        )
    return parts


def _part(i: int, entry: dict, base, gaps_of, problems: list[str]) -> Part | None:
    """One ``[[parts]]`` table -> a Part, or None with its problems."""
    where = f"parts[{i}]"
    before = len(problems)
    for key in entry:
        if key not in _ALLOWED:
            problems.append(
                f"{where}.{key}: unknown key; allowed: {', '.join(_ALLOWED)}"
                f"{nearest(key, _ALLOWED)}"
            )
    name = entry.get("name")
    if name is None:
        problems.append(f"{where}.name: missing; give each part a name (letters, digits, _, -)")
    elif not isinstance(name, str) or not _NAME.match(name):
        problems.append(
            f"{where}.name = {name!r}: must be 1-40 letters, digits, '_' or '-', starting with a "
            "letter"
        )
    role = entry.get("role", "lift")
    if role not in ROLES:
        problems.append(f"{where}.role = {role!r}: allowed: {', '.join(ROLES)}")
    gaps = gaps_of(where, {k: entry[k] for k in GAP_KEYS if k in entry}, problems)
    target = {k: entry[k] for k in PART_KEYS if k in entry}
    if base is not None:
        _check_design(where, base, target, problems)
    if len(problems) > before:
        return None
    return Part(name=name, role=role, target=target, gaps_mm=gaps)


def _check_design(where: str, base: dict, target: dict, problems: list[str]) -> None:
    """The base design with this part as its target must be a design: the design's own checks,
    their lines about the part's keys renamed to ``parts[i].<key>`` (the lines about the rest of
    the design are the base design's, reported once as such by the spec)."""
    source = part_source(base, Part("check", "lift", target))
    try:
        design_from_dict(source, name="part")
    except DesignError as err:
        for line in err.problems:
            renamed = _PART_KEY_IN_TEXT.sub(lambda m: f"{where}.{m.group(1)}", line)
            if renamed != line:
                problems.append(renamed if renamed.startswith(where) else f"{where}: {renamed}")
