"""Strict JSON for everything the package prints or writes: the one converter of results to JSON."""

from __future__ import annotations

import json
import math
from pathlib import Path

__all__ = ["to_jsonable", "strict_json"]


#: Why a value is not finite, by the field (or the table it sits in) and its sign.
_WHY = {
    ("time_to_limit_s", "inf"): "never: stays below its limit running continuously",
    ("margins", "-inf"): "thermal runaway: no steady state below the materials' limits",
    ("temperatures_C", "inf"): "thermal runaway: no steady state below the materials' limits",
    ("_temperature_C", "inf"): "thermal runaway: no steady state below the materials' limits",
    ("pull_cancellation", "inf"): "the net pull is zero",
    ("pick_time_ms", "inf"): "never: the part stalls on its way to the holding gap (see warnings)",
    ("contact_speed_m_per_s", "nan"): "never reaches contact: the part stalls on the way",
    ("hold_chatter_margin_N", "nan"): "thermal runaway: the hold has no end state",
    # an air core (no [pole]): what needs the steel is not a number (models.result.Electrical)
    **{
        (name, "nan"): "air core: the design has no pole (no steel)"
        for name in (
            "pole_flux_density_T",
            "core_peak_flux_density_T",
            "core_flux_fraction",
            "pole_mass_kg",
            "core_loss_W",
            "core_eddy_loss_W",
            "core_hysteresis_loss_W",
            "core_excess_loss_W",
            "core_radial_flux_fraction",
            "core_temperature_C",
            "face_temperature_C",
        )
    },
    ("ring_closing_voltage_V", "nan"): "no shading winding: a solid ring (or none) has no "
    "closing part",
    ("ring_capacitor_var", "nan"): "no capacitor closes the ring",
    **{
        (name, "nan"): "not asked for: evaluate(..., lateral=True), `eddypull evaluate`, an offset "
        "part or a study that names it"
        for name in ("centring_stiffness_N_per_m", "centring_stiffness_uncertainty_N_per_m")
    },
}


def _why(key: str, parent: str, value: float) -> str:
    sign = "nan" if math.isnan(value) else ("inf" if value > 0 else "-inf")
    for name in (key, parent):
        for (field, s), text in _WHY.items():
            if s == sign and (name == field or (field.startswith("_") and name.endswith(field))):
                return text
    if sign == "nan":
        return "not defined for this design"
    return "+infinity" if sign == "inf" else "-infinity"


def _numeric_table(d: dict) -> bool:
    """A table of numbers only (margins, times to limit): its values stay numbers or null."""
    return all(
        isinstance(_scalar(v), (int, float)) and not isinstance(_scalar(v), bool)
        for v in d.values()
    )


def _non_finite(v) -> bool:
    return isinstance(v, float) and not math.isfinite(v)


def _scalar(v):
    """A numpy scalar as its Python value; anything else unchanged."""
    if hasattr(v, "item") and getattr(v, "ndim", None) == 0:
        return v.item()
    return v


def to_jsonable(value, _parent: str = ""):
    """Strict-JSON copy: a non-finite number -> null, with its reason beside it in ``<key>_why``;
    in a table of numbers only (margins, times to limit) beside the table, in ``<table>_why``
    (``"time_to_limit_s": {"ring": null}, "time_to_limit_s_why": {"ring": "never: ..."}``), so
    that the table holds numbers or null; a non-finite number in a list -> null;
    complex -> [re, im], numpy scalars and arrays -> Python, times -> ISO 8601, paths -> str.
    CSV files keep inf / -inf, which pandas reads as numbers."""
    if isinstance(value, dict):
        out = {}
        for k, v in value.items():
            key = str(k)
            v = _scalar(v)
            if _non_finite(v):
                out[key] = None
                out[f"{key}_why"] = _why(key, _parent, v)
            elif isinstance(v, dict) and _numeric_table(v):
                inner = {str(kk): _scalar(vv) for kk, vv in v.items()}
                out[key] = {
                    kk: None if _non_finite(vv) else to_jsonable(vv, key)
                    for kk, vv in inner.items()
                }
                why = {kk: _why(kk, key, vv) for kk, vv in inner.items() if _non_finite(vv)}
                if why:
                    out[f"{key}_why"] = why
            else:
                out[key] = to_jsonable(v, key)
        return out
    if isinstance(value, (list, tuple, set)):
        return [to_jsonable(v, _parent) for v in value]
    if hasattr(value, "tolist") and not isinstance(value, (str, bytes)):  # numpy
        return to_jsonable(value.tolist(), _parent)
    if isinstance(value, complex):
        return [to_jsonable(value.real), to_jsonable(value.imag)]
    if isinstance(value, bool) or value is None or isinstance(value, (int, str)):
        return value
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if hasattr(value, "isoformat"):
        return value.isoformat()
    if isinstance(value, Path):
        return str(value)
    return str(value)


def strict_json(obj) -> str:
    """Strict JSON text (a non-finite number as null with its ``<key>_why``): what every parser
    reads."""
    return json.dumps(to_jsonable(obj), allow_nan=False)
