"""Words that the command line, the study outputs and the verification share: the caution
printed with every result and the thermal assumptions and limits in one line each."""

from __future__ import annotations

__all__ = ["CAUTION", "assumptions_text", "limits_used_text"]

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
