"""Round a design's dimensions to a manufacturing resolution and re-check it against the study.

A study hands back dimensions with every digit of a double (``ring_depth_mm = 0.9132379628928807``);
a workshop works to a resolution (0.01 mm by default). `round_design` rounds every dimension of
the parts (the ``*_mm`` keys of [pole], [coil], [ring] and [target]) to the nearest multiple of the
resolution; the wire diameter is left as it is (wire is bought to its nominal size, which IEC
60317 gives to 0.001 mm), as are [thermal] keys (operating conditions, not dimensions). The drive
is rounded to what an inverter is set to (`DRIVE_RESOLUTION`: 1 Hz, 0.01 A rms, 0.1 V rms).
`rounded_for_handoff` re-evaluates the rounded design the way the study evaluated its trials and
says which of the study's constraints rounding broke, if any.
"""

from __future__ import annotations

import math

from models.design import design_from_dict
from models.errors import DesignError
from models.evaluate import evaluate
from optim.morning.nearest import broken_constraints
from optim.study.objectives import results_of, study_kwargs

__all__ = ["DEFAULT_RESOLUTION_MM", "DRIVE_RESOLUTION", "round_design", "rounded_for_handoff"]

#: Default manufacturing resolution [mm] (a common machining step; no source).
DEFAULT_RESOLUTION_MM = 0.01

#: The drive's set-point resolution: frequency [Hz], current [A rms], voltage [V rms]. An
#: inverter's frequency is set in steps of 0.1-1 Hz and its current or voltage limit in steps of
#: 0.01 A and 0.1 V; the coarser 1 Hz keeps a kHz set point whole (common practice, no source).
DRIVE_RESOLUTION = {"frequency_Hz": 1.0, "current_A": 0.01, "voltage_V": 0.1}

_PART_TABLES = ("pole", "coil", "ring", "target")
_NOT_ROUNDED = {("coil", "wire_diameter_mm")}


def _round_to(value: float, resolution: float) -> float:
    """``value`` to the nearest multiple of ``resolution``, written with no more digits than the
    resolution has (0.91 rather than 0.9100000000000001)."""
    digits = max(0, -math.floor(math.log10(resolution))) + 3
    return round(round(value / resolution) * resolution, digits)


def round_design(design, resolution_mm: float = DEFAULT_RESOLUTION_MM):
    """The design with its part dimensions rounded to ``resolution_mm`` and its drive to
    `DRIVE_RESOLUTION`.

    Returns
    -------
    (Design, dict)
        The rounded, validated design and the changed keys: ``"table.key" -> [before, after]``.

    Raises
    ------
    DesignError
        ``resolution_mm`` is not a positive number, or the rounded design is not a valid design
        (a dimension rounded to zero, radii that cross).
    """
    if not (isinstance(resolution_mm, (int, float)) and math.isfinite(resolution_mm)):
        raise DesignError(f"--resolution-mm {resolution_mm!r}: must be a positive number [mm]")
    if resolution_mm <= 0:
        raise DesignError(f"--resolution-mm {resolution_mm:g}: must be a positive number [mm]")
    source = {k: dict(v) if isinstance(v, dict) else v for k, v in design.source.items()}
    changed: dict[str, list[float]] = {}
    for table in _PART_TABLES:
        for key, value in source.get(table, {}).items():
            if not key.endswith("_mm") or (table, key) in _NOT_ROUNDED:
                continue
            if isinstance(value, bool) or not isinstance(value, (int, float)):
                continue
            new = _round_to(float(value), resolution_mm)
            if new != value:
                changed[f"{table}.{key}"] = [value, new]
            source[table][key] = new
    for key, step in DRIVE_RESOLUTION.items():
        value = source.get("drive", {}).get(key)
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            new = _round_to(float(value), step)
            if new != value:
                changed[f"drive.{key}"] = [value, new]
            source["drive"][key] = new
    try:
        rounded = design_from_dict(source, name=design.name)
    except DesignError as exc:
        raise DesignError(
            f"rounding design {design.name!r} to {resolution_mm:g} mm gives no valid design "
            f"({exc}); use a finer --resolution-mm"
        ) from exc
    return rounded, changed


def rounded_for_handoff(spec, design, resolution_mm: float, isothermal: bool):
    """Round ``design``, re-evaluate it as the study did and check the study's constraints.

    Returns
    -------
    (Design, Result, dict)
        The rounded design, its result, and the ``rounding`` record of the hand-off:
        resolution, changed keys, the rounded design's constraint margins (positive = met),
        ``constraints_met`` and ``broken_constraints`` (names; empty when rounding broke none)
        and the words to print.
    """

    rounded, changed = round_design(design, resolution_mm)
    result = evaluate(rounded, isothermal=isothermal)
    flat, _, _ = results_of(rounded, spec.gaps_mm, isothermal=isothermal, **study_kwargs(spec))
    margins = {c.name: c.margin(flat[c.name]) for c in spec.constraints if c.name in flat}
    broken = [name for name, m in margins.items() if not m >= 0]

    detail = broken_constraints(
        flat,
        {
            "constraints": {
                c.name: {k: v for k, v in (("min", c.low), ("max", c.high)) if v is not None}
                for c in spec.constraints
            },
            "run": dict(getattr(spec, "run", None) or {}),
        },
    )
    if broken:
        words = (
            f"rounding to {resolution_mm:g} mm broke the constraint(s) {', '.join(broken)} "
            f"(margins {', '.join(f'{margins[n]:.4g}' for n in broken)}); the hand-off is the "
            "rounded design with its own results: pick another trial or a finer --resolution-mm"
        )
    else:
        words = (
            f"dimensions rounded to {resolution_mm:g} mm, the drive to "
            f"{_drive_words()} ({len(changed)} changed); the rounded design still meets every "
            "constraint of the study"
        )
    record = {
        "resolution_mm": resolution_mm,
        "drive_resolution": dict(DRIVE_RESOLUTION),
        "changed": changed,
        "not_rounded": sorted(".".join(k) for k in _NOT_ROUNDED),
        "constraint_margins": margins,
        "constraints_met": not broken,
        "broken_constraints": broken,
        "broken": [{k: b[k] for k in ("name", "value", "limit", "margin")} for b in detail],
        "words": words,
    }
    return rounded, result, record


def _drive_words() -> str:
    r = DRIVE_RESOLUTION
    return f"{r['frequency_Hz']:g} Hz, {r['current_A']:g} A, {r['voltage_V']:g} V"
