"""Words that the command line, the study outputs and the verification share: the caution
printed with every result and the thermal assumptions and limits in one line each."""

from __future__ import annotations

__all__ = ["CAUTION", "assumptions_text", "limits_used_text", "unit_of"]

CAUTION = (
    "Caution: model results only. Rings, parts and coils get hot; coils run at mains voltage; the "
    "AC field can disturb implants. Follow local codes and have the design checked by a licensed "
    "professional."
)


def limits_used_text(a: dict) -> list:
    """Each part's temperature limit and where it comes from, in words."""
    out = []
    for part in ("coil", "ring", "target"):
        if f"{part}_limit_C" in a:
            out.append(f"{part} {a[f'{part}_limit_C']:g} degC ({a[f'{part}_limit_source']})")
    return out


def assumptions_text(a: dict) -> str:
    """The thermal assumptions in one line, those taken by default marked."""
    duty = (
        "continuous duty"
        if a["duty_cycle"] == 1.0
        else f"duty {a['duty_cycle']:g}" + (f" of {a['period_s']:g} s" if a.get("period_s") else "")
    )
    items = [
        ("ambient_C", f"ambient {a['ambient_C']:g} degC"),
        ("duty_cycle", duty),
        ("convection_W_per_m2K", a["convection"]),
        ("emissivity", f"radiation {a['radiation']}"),
        ("coil_insulation_class", f"class {a['coil_insulation_class']}"),
        ("hold_time_s", f"{a['hold_time_s']:g} s hold"),
        ("target_arrival_C", f"part arrives at {a['target_arrival_C']:g} degC"),
        ("orientation", a["orientation"]),
    ]
    defaults = set(a["defaults"])
    text = ", ".join(words + (" (default)" if key in defaults else "") for key, words in items)
    return text


#: File and result name suffixes and their units (longest first).
_SUFFIX_UNITS = sorted(
    {
        "_mm": "mm",
        "_Hz": "Hz",
        "_A": "A",
        "_V": "V",
        "_VA": "VA",
        "_W": "W",
        "_T": "T",
        "_C": "degC",
        "_K": "K",
        "_s": "s",
        "_N": "N",
        "_kg": "kg",
        "_S_per_m": "S/m",
        "_kg_per_m3": "kg/m^3",
        "_W_per_m2K": "W/(m^2 K)",
        "_W_per_mK": "W/(m K)",
        "_per_K": "1/K",
    }.items(),
    key=lambda kv: -len(kv[0]),
)


def unit_of(key: str, value=None) -> str:
    """Unit of a design-file key from its suffix (``gap_mm`` -> ``mm``); ``-`` for a plain number,
    ``""`` for text."""
    for suffix, unit in _SUFFIX_UNITS:
        if key.endswith(suffix):
            return unit
    return "" if isinstance(value, str) else "-"
