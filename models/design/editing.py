"""Changing a design: ``edit`` (the one way), ``with_value``, ``with_gap`` and ``resolve_key``."""

from __future__ import annotations

from dataclasses import fields, replace

from models.design.files import (
    _deep_copy,
    design_from_dict,
)
from models.design.parts import (
    Design,
)
from models.design.schema import (
    _OPTIONAL_TABLES,
    DESIGN_KEYS,
    _is_finite,
)
from models.errors import DesignError, nearest


def resolve_key(design: Design, key: str) -> tuple[str, str]:
    """The (table, key) a design-file key names: ``"target.gap_mm"`` as written, a bare
    ``"gap_mm"`` where it names exactly one key of the design's tables.

    Raises
    ------
    DesignError
        Not a design key (with the nearest name), or a bare key that more than one table has.
    """
    data = design.source
    from models.coils import COILS_KEYS, coil_table_key

    numbered = coil_table_key(key)
    if numbered is not None:
        n, k = numbered
        count = len(data.get("coils", ()))
        if k not in COILS_KEYS:
            raise DesignError(f"{key}: not a key of a coil{nearest(k, COILS_KEYS)}")
        if n >= count:
            raise DesignError(f"{key}: the design has {count} [[coils]] table(s); N counts from 0")
        return f"coils.{n}", k
    if "." in key:
        table, k = key.split(".", 1)
        if table not in DESIGN_KEYS or k not in DESIGN_KEYS[table]:
            flat = [f"{t}.{kk}" for t, ks in DESIGN_KEYS.items() for kk in ks]
            raise DesignError(f"{key}: not a design key{nearest(key, flat)}")
        return table, k
    tables = [
        t for t in DESIGN_KEYS if key in DESIGN_KEYS[t] and (t in data or t in _OPTIONAL_TABLES)
    ]
    tables = [t for t in tables if t in data] or tables
    # a key of two tables (turns of [coil] and of a [ring] winding): the one the file gives
    tables = [t for t in tables if key in (data.get(t) or {})] or tables
    if len(tables) != 1:
        flat = sorted({kk for ks in DESIGN_KEYS.values() for kk in ks})
        if not tables:
            raise DesignError(f"{key}: not a design key{nearest(key, flat)}")
        raise DesignError(
            f"{key}: ambiguous; write one of {', '.join(t + '.' + key for t in tables)}"
        )
    return tables[0], key


def edit(design: Design, changes=None, *, properties=None) -> Design:
    """A copy of ``design`` with ``changes`` made: the one way every caller changes a design.

    Parameters
    ----------
    design : Design
    changes : mapping of str to value, optional
        Design-file keys in file units (``{"target.gap_mm": 2.0}``, or a bare key that names
        one key of the design's tables, ``"gap_mm"``), checked as the file would be; ``None``
        removes the key from the file.
    properties : mapping of str to float, optional
        Properties of the validated parts in SI, by ``part.attribute``
        (``{"ring.conductivity": 5.0e7, "pole.relative_permeability": 800.0}``): values the
        file need not give directly (a conductivity that comes from a material's name).

    Returns
    -------
    Design
        Whatever was set before is kept: a part whose file table no change touches is kept as
        ``design`` has it (however it was set), and a part rebuilt from the changed file gets
        the properties ``edit`` set on it before, unless this edit sets them anew or makes it
        another part: a change of any of its keys but a dimension (``*_mm``), or a removal,
        drops the properties set on that part (a tolerance sample's part conductivity is not
        carried to another metal).

    Raises
    ------
    DesignError
        A key that is not a file key (with the nearest one), a property of no part the design
        has, a non-finite property, or a changed file that breaks a design rule.

    Examples
    --------
    >>> from models.design import load_design
    >>> from optim.demo import DEMO_DESIGN
    >>> design = edit(load_design(DEMO_DESIGN), properties={"ring.conductivity": 5.0e7})
    >>> closer = edit(design, {"gap_mm": 1.0})
    >>> closer.target.gap, closer.ring.conductivity
    (0.001, 50000000.0)
    """
    file_changes = {resolve_key(design, key): value for key, value in (changes or {}).items()}
    # the part a table builds: "coils.N" the coil(s)
    part_of = {t: ("coil" if t.startswith("coils.") else t) for t, _ in file_changes}
    redefined = {
        part_of[t] for (t, k), v in file_changes.items() if v is None or not k.endswith("_mm")
    }
    props = {key: v for key, v in design.properties if key[0] not in redefined}
    for key, value in (properties or {}).items():
        part, _, attr = key.partition(".")
        if attr not in _property_names(design, part):
            raise DesignError(
                f"{key}: not a property of a part of this design; allowed: part.attribute of "
                f"{', '.join(t for t in DESIGN_KEYS if _property_names(design, t))}"
            )
        if not _is_finite(value):
            raise DesignError(f"{key} = {value!r}: must be a finite number")
        props[(part, attr)] = float(value)
    edited = design
    if file_changes:
        data = _deep_copy(design.source)
        for (table, k), value in file_changes.items():
            if table.startswith("coils."):
                where = data["coils"][int(table.split(".")[1])]
            else:
                where = data.setdefault(table, {})
            if value is None:
                where.pop(k, None)
            else:
                where[k] = value
        built = design_from_dict(data, name=design.name)
        touched = set(part_of.values())
        edited = replace(built, **{t: getattr(design, t) for t in DESIGN_KEYS if t not in touched})
    for (part, attr), value in props.items():
        obj = getattr(edited, part)
        if obj is not None:
            edited = replace(edited, **{part: replace(obj, **{attr: value})})
    return replace(edited, properties=tuple(props.items()))


def _property_names(design: Design, part: str) -> tuple[str, ...]:
    """The attribute names of the design's part ``part`` (empty: no such part)."""
    obj = getattr(design, part, None) if part in DESIGN_KEYS else None
    return tuple(f.name for f in fields(obj)) if obj is not None else ()


def with_value(design: Design, key: str, value) -> Design:
    """``edit(design, {key: value})`` for one file key (``"gap_mm"`` or ``"target.gap_mm"``).

    A bare key must name exactly one key of the design's tables (``resolve_key``).

    Examples
    --------
    >>> from models.design import load_design
    >>> from optim.demo import DEMO_DESIGN
    >>> closer = with_value(load_design(DEMO_DESIGN), "gap_mm", 1.0)
    >>> closer.source["target"]["gap_mm"]
    1.0
    """
    return edit(design, {key: value})


def with_gap(design: Design, gap_mm: float) -> Design:
    """``design`` with its part at another gap [mm]: ``edit(design, {"target.gap_mm": gap_mm})``.

    Every validated part but the target is kept as ``design`` has it, and the target keeps the
    properties set on it by ``edit`` (a tolerance table's part conductivity).
    """
    return edit(design, {"target.gap_mm": gap_mm})


def with_capacitance(design: Design, capacitance_F: float) -> Design:
    """``design`` with its drive's capacitor fixed at ``capacitance_F`` [F] (a tuned one):
    ``edit(design, properties={"drive.capacitance": capacitance_F})``."""
    return edit(design, properties={"drive.capacitance": float(capacitance_F)})


def with_fixed_capacitor(design: Design, capacitance_F: float) -> Design:
    """``design`` with its capacitor fixed at ``capacitance_F`` [F] in the drive and in its file
    values (``drive.capacitance_uF``), so that a design rebuilt from the file (a tolerance sample)
    keeps the capacitor as built instead of tuning a new one."""
    capacitance_F = float(capacitance_F)
    return edit(
        design,
        {"drive.capacitance_uF": capacitance_F * 1e6},
        properties={"drive.capacitance": capacitance_F},
    )
