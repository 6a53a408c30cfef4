"""CAD hand-off of one chosen design: design.toml, handoff.json, parameters.csv, profile.dxf.

The folder is what a mechanical engineer receives in the morning:

* ``design.toml`` - the design file itself (mm, Hz, A rms), written so that ``eddypull evaluate``
  reproduces the predicted numbers exactly (floats are written with ``repr``, which round-trips);
* ``handoff.json`` - every dimension in mm, materials, drive, the winding (turns, wire bare and
  enamelled, fill, resistance cold and hot, supply voltage and current: `optim.morning.winding`),
  predicted results (the pull at the moment of pick and at the end of the hold), the thermal
  assumptions behind them, limits (and where each temperature limit comes from) and margins,
  ``time_to_limit_s`` labelled as continuous running beside the duty cycle's own figures, what
  rounding to the manufacturing resolution did (``rounding``, from ``study export``), tool and
  model version, study, trial (with its searched parameters, a chosen material among them) and
  time;
* ``parameters.csv`` - ``name,value,unit,description`` rows a parametric CAD model can read;
* every number of handoff.json and parameters.csv at `STATED_RESOLUTION` (lengths to 0.001 mm,
  predicted results to 4 significant digits, other values to 6), stated under ``resolution``;
* ``profile.dxf`` - the half cross-section in mm, one layer per part, the full section, linear
  dimensions and a text block (`optim.morning.dxf`, `optim.morning.dxfnotes`);
* ``verify.txt`` - the fast model beside the FEM reference, when a verification was run.

Non-finite numbers (a thermal runaway gives inf temperatures and -inf margins) are written to JSON
as ``null`` with their reason beside them in ``<key>_why`` (``optim.jsonout``), so the file stays
strict JSON and every number field holds a number or null.
"""

from __future__ import annotations

import csv
import datetime as _dt
import io
import json
import math
import numbers
import tomllib
from importlib.metadata import PackageNotFoundError, version
from pathlib import Path

from models.design import DESIGN_KEYS, design_from_dict
from models.errors import DesignError
from models.evaluate import MODEL_VERSION
from optim.files import atomic_write_text, redact_url, safe_child
from optim.jsonout import to_jsonable
from optim.morning.dxf import LAYERS, write_profile_dxf
from optim.morning.dxfnotes import sheets_words
from optim.morning.section import section_mm
from optim.morning.winding import winding_dict
from optim.tomlwrite import dumps_toml
from optim.words import unit_of

__all__ = ["write_handoff", "dumps_toml", "parameter_rows", "unit_of", "to_jsonable"]

HANDOFF_SCHEMA = "eddypull-handoff-1"

# Unit of a file key from its suffix (longest first); keys without one are dimensionless ("-") or
# text ("").

#: Words for the design file's keys (table.key); other keys get a generic description.
DESCRIPTIONS = {
    "name": "design name",
    "description": "free-text description of the design",
    "pole.radius_mm": "radius of the steel pole (cylinder)",
    "pole.length_mm": "length of the pole from its face to its back",
    "pole.material": "pole steel (eddypull material library)",
    "pole.relative_permeability": "relative permeability of the pole steel",
    "pole.conductivity_S_per_m": "conductivity of the pole steel (0 = laminated)",
    "pole.saturation_flux_density_T": "saturation flux density of the pole steel",
    "coil.inner_radius_mm": "inner radius of the coil window",
    "coil.outer_radius_mm": "outer radius of the coil window",
    "coil.setback_mm": "distance from the pole face to the coil's front end",
    "coil.length_mm": "axial length of the coil window",
    "coil.turns": "number of turns",
    "coil.wire_diameter_mm": "copper diameter of the winding wire",
    "coil.material": "winding conductor",
    "drive.frequency_Hz": "supply frequency",
    "drive.current_A": "coil current (rms)",
    "drive.voltage_V": "supply voltage (rms)",
    "ring.inner_radius_mm": "inner radius of the shading ring (= groove inner wall)",
    "ring.outer_radius_mm": "outer radius of the shading ring (= groove outer wall)",
    "ring.depth_mm": "depth of the ring and of its groove below the pole face (flush)",
    "ring.material": "shading ring conductor",
    "ring.conductivity_S_per_m": "conductivity of the ring at 20 degC",
    "target.radius_mm": "outer radius of the target part",
    "target.thickness_mm": "thickness of the target part",
    "target.gap_mm": "air gap from the pole face to the target",
    "target.inner_radius_mm": "inner radius of the target (0 = solid disc)",
    "target.offset_mm": "the target's centre off the pole's axis (along +x)",
    "target.material": "target conductor",
    "target.conductivity_S_per_m": "conductivity of the target at 20 degC",
    "target.density_kg_per_m3": "density of the target",
    "thermal.ambient_C": "ambient air temperature",
    "thermal.convection_W_per_m2K": "heat transfer coefficient to the air (given, not computed)",
    "thermal.emissivity": "surface emissivity for radiation",
    "thermal.duty_cycle": "on-time fraction of the supply",
    "thermal.period_s": "period of the duty cycle",
    "thermal.hold_time_s": "how long a part is held at the face",
    "thermal.coil_insulation_class": "coil insulation thermal class (IEC 60085)",
    "thermal.ring_limit_C": "temperature limit of the shading ring",
    "thermal.target_limit_C": "temperature limit of the target part",
    "supply.max_voltage_V": "largest supply voltage available (rms)",
    "supply.max_current_A": "largest supply current available (rms)",
    "supply.max_VA": "largest apparent power the supply gives",
}


# ------------------------------------------------------------------------------- tables and JSON
def _derived_mm(design) -> list[tuple[str, float, str]]:
    """Dimensions a drawing wants that the file does not hold directly: (name, value_mm, words)."""
    src = design.source
    rows = []

    def get(table, key, default=None):
        return src.get(table, {}).get(key, default)

    for table, key, words in (
        ("pole", "radius_mm", "pole diameter"),
        ("coil", "inner_radius_mm", "coil window inner diameter"),
        ("coil", "outer_radius_mm", "coil window outer diameter"),
        ("ring", "inner_radius_mm", "shading ring inner diameter (groove inner wall)"),
        ("ring", "outer_radius_mm", "shading ring outer diameter (groove outer wall)"),
        ("target", "radius_mm", "target outer diameter"),
        ("target", "inner_radius_mm", "target inner diameter (0 = solid disc)"),
    ):
        value = get(table, key, 0.0 if (table, key) == ("target", "inner_radius_mm") else None)
        if value is not None and (table != "ring" or design.ring is not None):
            name = f"{table}_{key.replace('radius', 'diameter')}"
            rows.append((name, 2.0 * value, f"{words} (derived: 2 x {table}.{key})"))
    if design.ring is not None:
        width = get("ring", "outer_radius_mm") - get("ring", "inner_radius_mm")
        rows.append(("ring_width_mm", width, "radial width of the ring and its groove (derived)"))
    back = get("coil", "setback_mm") + get("coil", "length_mm")
    rows.append(("coil_back_mm", back, "distance from the pole face to the coil's back (derived)"))
    return rows


def parameter_rows(design) -> list[dict]:
    """Rows ``name, value, unit, description`` of every design-file value and derived dimension.

    Names are ``<table>_<key>`` of the design file (``ring_inner_radius_mm``), top-level keys as they
    are (``name``); values exactly as in the file (file units: mm, Hz, A rms, V rms).
    """
    rows = []
    src = dict(design.source)
    src.setdefault("name", design.name)

    def walk(d: dict, prefix: tuple[str, ...]):
        for key, value in d.items():
            if isinstance(value, dict):
                walk(value, (*prefix, key))
                continue
            dotted = ".".join((*prefix, key))
            words = DESCRIPTIONS.get(dotted, f"{dotted} of the design file")
            rows.append(
                {
                    "name": "_".join((*prefix, key)),
                    "value": value,
                    "unit": unit_of(key, value),
                    "description": words,
                }
            )

    walk(src, ())
    for name, value, words in _derived_mm(design):
        rows.append({"name": name, "value": value, "unit": "mm", "description": words})
    return rows


def _materials(design) -> dict:
    p, c, g, t = design.pole, design.coil, design.ring, design.target
    out = {
        "pole": {
            "material": p.material,
            "relative_permeability": p.relative_permeability,
            "conductivity_S_per_m": p.conductivity,
            "laminated": p.laminated,
            "saturation_flux_density_T": p.saturation_flux_density,
            "lamination_thickness_mm": None
            if p.lamination_thickness is None
            else p.lamination_thickness * 1e3,
        },
        "coil": {
            "material": c.material,
            "conductivity_S_per_m": c.conductivity,
            "temperature_coefficient_per_K": c.temperature_coefficient,
        },
        "target": {
            "material": t.material,
            "conductivity_S_per_m": t.conductivity,
            "temperature_coefficient_per_K": t.temperature_coefficient,
            "density_kg_per_m3": t.density,
        },
    }
    if g is not None:
        out["ring"] = {
            "material": g.material,
            "conductivity_S_per_m": g.conductivity,
            "temperature_coefficient_per_K": g.temperature_coefficient,
            "density_kg_per_m3": g.density,
        }
    return out


def _tool_version() -> str:

    try:
        return version("eddypull")
    except PackageNotFoundError:  # running from a source tree that was never installed
        return "unknown"


def _command(meta: dict) -> str:
    """The command that reproduces the predicted numbers (the study's evaluation mode)."""
    flag = " --isothermal" if meta.get("isothermal") else ""
    return f"eddypull evaluate{flag} design.toml"


def _duty_figures(predicted: dict) -> dict:
    """What ``time_to_limit_s`` assumes (continuous running), and the duty cycle's own figures:
    on and off time per period and, per part, its duty-averaged steady state beside its limit."""
    assumed = predicted.get("thermal_assumptions") or {}
    if "time_to_limit_s" not in predicted:
        return {}
    out = {
        "time_to_limit_s_means": "seconds from cold (every part at ambient) to the part's limit "
        "with the supply on continuously (100 % duty), whatever the design's duty cycle",
    }
    duty, period = assumed.get("duty_cycle"), assumed.get("period_s")
    if duty is None or period is None:
        return out
    temps = predicted.get("temperatures_C") or {}
    parts = {}
    for part in predicted["time_to_limit_s"]:
        limit, steady = assumed.get(f"{part}_limit_C"), temps.get(part)
        if limit is None or steady is None:
            continue
        parts[part] = {
            "steady_state_C": steady,
            "limit_C": limit,
            "reaches_limit": not steady < limit,
        }
    out["duty_cycle"] = {
        "duty_cycle": duty,
        "period_s": period,
        "on_time_s": duty * period,
        "off_time_s": (1.0 - duty) * period,
        "parts": parts,
        "means": f"running at {duty:.0%} duty ({duty * period:g} s on in every {period:g} s): "
        "each part settles at its duty-averaged steady state (steady_state_C; the coil's hot "
        "spot); a part whose steady state stays below its limit never reaches it, and one that "
        "does reaches it later than time_to_limit_s (continuous running heats faster)",
    }
    return out


#: The resolution of every number in handoff.json and parameters.csv (design.toml, and
#: handoff.json's copy of it under design.file, keep every digit: they reproduce the predicted
#: numbers exactly). Lengths to 0.001 mm: finer than the 0.01 mm manufacturing step, so a rounded
#: dimension reads exactly and a derived one (a diameter, a width) without binary noise; the
#: design's other values (frequency, current, material constants, thermal conditions) to 6
#: significant digits; predicted results to 4 (their error bar is about 1 %, so 4 digits round
#: 100 times finer than the model knows) (common practice, no source).
STATED_RESOLUTION = {
    "lengths_mm": 0.001,
    "design_values_significant_digits": 6,
    "predicted_significant_digits": 4,
    "design_file": "exact: as design.toml",
}
_PREDICTED_SECTIONS = ("predicted", "limits", "thermal_assumptions", "verify")


def stated(value, key: str = "", digits: int = 6, mm: bool = False):
    """``value`` at `STATED_RESOLUTION`: a length (a key ending ``_mm``, or inside a table of
    lengths) to 0.001 mm, any other float to ``digits`` significant digits; dicts and lists
    throughout; whole numbers, texts and non-finite numbers unchanged."""
    mm = mm or key.endswith("_mm")
    if isinstance(value, dict):
        return {k: stated(v, str(k), digits, mm) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [stated(v, key, digits, mm) for v in value]
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        return value
    if isinstance(value, numbers.Integral) or not math.isfinite(float(value)):
        return value
    step = STATED_RESOLUTION["lengths_mm"]
    out = round(float(value), 3) if mm and step == 0.001 else float(f"{float(value):.{digits}g}")
    return out + 0.0  # no -0.0


def _stated_content(out: dict) -> dict:
    """handoff.json's numbers at `STATED_RESOLUTION` (the design file's copy kept exact)."""
    design = dict(out["design"])
    file = design.pop("file")
    design = stated(design)
    design["file"] = file
    result = {**out, "design": design, "resolution": dict(STATED_RESOLUTION)}
    for key in ("study", "rounding"):
        if key in out:
            result[key] = stated(out[key])
    for key in _PREDICTED_SECTIONS:
        if out.get(key) is not None:
            result[key] = stated(out[key], digits=STATED_RESOLUTION["predicted_significant_digits"])
    return result


def handoff_dict(design, result, meta: dict, verify: dict | None = None) -> dict:
    """The content of handoff.json (see the module docstring), strict-JSON ready."""

    predicted = result.to_dict() if hasattr(result, "to_dict") else result
    predicted = dict(predicted) if predicted is not None else None
    study = dict(meta or {})
    for key in ("storage", "storage_url"):
        if isinstance(study.get(key), str):
            study[key] = redact_url(study[key])
    dims = {}
    for table, keys in DESIGN_KEYS.items():
        for key in keys:
            if key.endswith("_mm") and key in design.source.get(table, {}):
                dims[f"{table}_{key}"] = design.source[table][key]
    if design.ring is None:
        dims.update({"ring_inner_radius_mm": None, "ring_outer_radius_mm": None})
    dims.setdefault("target_inner_radius_mm", 0.0)
    dims.update({name: value for name, value, _ in _derived_mm(design)})
    rounding = study.pop("rounding", None)
    limits = {}
    if predicted is not None:
        for key in ("binding_limit", "margins", "thermal_status", "time_to_limit_s"):
            if key in predicted:
                limits[key] = predicted[key]
        limits.update(_duty_figures(predicted))
        limits.update({k: v for k, v in predicted.items() if k.endswith("_limit_C")})
        assumed = predicted.get("thermal_assumptions") or {}
        limits["temperature_limits_used"] = {
            part: {"limit_C": assumed[f"{part}_limit_C"], "source": assumed[f"{part}_limit_source"]}
            for part in ("coil", "ring", "target")
            if f"{part}_limit_C" in assumed
        }
    for key in ("constraint_margins", "constraints", "margins"):
        if key in study:
            limits[f"study_{key}"] = study[key]
    out = {
        "schema": HANDOFF_SCHEMA,
        "tool": {"name": "eddypull", "version": _tool_version(), "model": MODEL_VERSION},
        "written_at": _dt.datetime.now(_dt.UTC).isoformat(timespec="seconds"),
        "study": study,
        "design": {
            "name": design.name,
            "dimensions_mm": dims,
            "materials": _materials(design),
            "drive": {
                "frequency_Hz": design.drive.frequency,
                "current_A": design.drive.current,
                "voltage_V": design.drive.voltage,
                "turns": design.coil.turns,
                **_capacitor(design, predicted),
            },
            "winding": winding_dict(design, predicted),
            "file": design.source,
            "section_mm": {
                "layers": {k: v[1] for k, v in LAYERS.items()},
                "polygons": section_mm(design),
            },
        },
        "predicted": predicted,
        "predicted_by": _command(study),
        "thermal_assumptions": None if predicted is None else predicted.get("thermal_assumptions"),
        "limits": limits,
    }
    if "feasible" in study:  # a study's trial: whether it meets the study, and what it breaks
        out = {
            **{k: out[k] for k in ("schema", "tool", "written_at")},
            "feasible": bool(study["feasible"]),
            "broken_constraints": list(study.get("broken_constraints") or []),
            **out,
        }
    if rounding is not None:
        out["rounding"] = rounding
    if verify is not None:
        out["verify"] = verify.get("json", {k: v for k, v in verify.items() if k != "reference"})
    return to_jsonable(_stated_content(out))


def _capacitor(design, predicted) -> dict:
    """The drive's capacitor for handoff.json (models.supply): how it is connected, its
    capacitance and what it must be rated for; nothing without one."""
    comp = getattr(design.drive, "compensation", "none")
    if comp == "none":
        return {}
    p = predicted or {}
    return {
        "compensation": comp,
        "capacitance_uF": p.get("capacitor_uF"),
        "capacitance_source": "design file (drive.capacitance_uF)"
        if design.drive.capacitance is not None
        else "tuned for unity power factor at the design point",
        "capacitor_rating_V": p.get("capacitor_rating_V"),
        "capacitor_reactive_VA": p.get("capacitor_reactive_VA"),
        "capacitor_rating_means": "rms voltage and reactive power of its worst state over the "
        "gaps evaluated, hot and cold, and with no part present",
    }


def _dxf_notes(design, content: dict, meta: dict) -> list[str]:
    """The DXF's text block: design, study and trial, materials, winding and drive."""
    w = content["design"]["winding"]
    ident = f"design {design.name}" + (f", study {meta['study']}" if "study" in meta else "")
    ident += f", trial {meta['trial']}" if "trial" in meta else ""
    lines = [ident, "units: mm; half section r >= 0 (parts' layers), FULL_SECTION mirrored"]
    for part, m in content["design"]["materials"].items():
        lines.append(f"{part}: {m['material']}")

    if sheets_words(design):
        lines.append(sheets_words(design))
    wire = f"wire {w['wire_bare_diameter_mm']:.3f} mm bare copper"
    if w["wire_overall_grade1_max_mm"] is not None:
        wire += (
            f" (enamelled max {w['wire_overall_grade1_max_mm']:.3f} grade 1, "
            f"{w['wire_overall_grade2_max_mm']:.3f} grade 2, IEC 60317-0-1)"
        )
    lines.append(f"coil: {w['turns']} turns, {wire}, copper fill {w['fill_factor']:.2f}")
    drive = content["design"]["drive"]
    current, voltage = w["supply_current_A"], w["supply_voltage_V"]
    supply = "" if current is None else f", {current:.3g} A rms"
    supply += "" if voltage is None else f" at {voltage:.4g} V rms"
    lines.append(f"drive: {drive['frequency_Hz']:g} Hz{supply}")
    if drive.get("compensation") and drive.get("capacitance_uF") is not None:
        rating = drive.get("capacitor_rating_V")
        lines.append(
            f"capacitor: {drive['capacitance_uF']:.4g} uF in {drive['compensation']}"
            + ("" if rating is None else f", rated {rating:.4g} V rms")
        )
    rounding = content.get("rounding")
    if rounding is not None:
        lines.append(f"dimensions rounded to {rounding['resolution_mm']:g} mm")
    infeasible = _infeasible_words(meta)
    return ([infeasible] if infeasible else []) + lines


def _infeasible_words(meta: dict) -> str:
    """One line for a hand-off of a trial that does not meet its study ("" otherwise)."""
    if meta.get("feasible", True):
        return ""
    broken = meta.get("broken_constraints") or []
    what = ", ".join(f"{b['name']} (margin {b['margin']:+.4g})" for b in broken)
    return f"NOT FEASIBLE: this design breaks {what or 'the study'}; not a solution of the study"


def write_handoff(design, result, out_dir, meta: dict, verify: dict | None = None) -> dict:
    """Write the hand-off folder of one design.

    Parameters
    ----------
    design : models.design.Design
        The chosen design; ``design.source`` (file units) becomes design.toml.
    result : models.result.Result or dict
        Its fast-model result (``to_dict()`` is used; thermal fields such as ``margins`` and
        ``binding_limit`` are carried when present).
    out_dir : str or Path
        Folder to write into (created if missing).
    meta : dict
        Study context written under ``"study"`` in handoff.json: e.g. ``study``, ``trial``,
        ``parameters`` (the trial's searched values: numbers, or text for a chosen material),
        ``storage`` (a URL loses its password here again), ``objectives``, ``constraint_margins``,
        ``created_at``, ``isothermal`` (True when the study evaluated at 20 degC: the reproducing
        command then carries ``--isothermal``).
    verify : dict, optional
        What `optim.morning.verify.run_verify` returns: its ``text`` goes to verify.txt, its ``json`` under
        ``"verify"`` in handoff.json.

    Returns
    -------
    dict of str to Path
        File name -> written path (``design.toml``, ``handoff.json``, ``parameters.csv``,
        ``profile.dxf`` and ``verify.txt`` when verified).

    Raises
    ------
    DesignError
        ``out_dir`` is an existing file, or the design cannot be written back exactly, or it
        has several coils or no pole (the profile and winding table draw one coil on a pole).
    """
    if design.pole is None or len(design.windings) > 1:
        raise DesignError(
            f"design {design.name!r}: the hand-off (DXF profile, winding table) draws one coil "
            "on a pole; a design with several [[coils]] or without [pole] is not handed off "
            "(its design file and 'eddypull evaluate --json' carry every value)"
        )
    out_dir = Path(out_dir)
    if out_dir.exists() and not out_dir.is_dir():
        raise DesignError(f"out_dir = {str(out_dir)!r}: is a file; must be a folder")
    out_dir.mkdir(parents=True, exist_ok=True)
    meta = dict(meta or {})
    written: dict[str, Path] = {}

    source = dict(design.source)
    source.setdefault("name", design.name)
    header = (
        f"eddypull hand-off of design {design.name!r}"
        + (f", study {meta['study']!r}" if "study" in meta else "")
        + (f", trial {meta['trial']}" if "trial" in meta else "")
        + f"\nunits: mm, Hz, A rms, V rms; reproduce with: {_command(meta)}"
    )
    if _infeasible_words(meta):
        header = _infeasible_words(meta) + "\n" + header
    text = dumps_toml(source, header=header)
    # Prove the round trip before handing it over: same values, same validated design.
    back = tomllib.loads(text)
    if back != source or design_from_dict(back, name=design.name) != design:
        raise DesignError(f"design {design.name!r}: design.toml does not read back to the design")
    written["design.toml"] = atomic_write_text(safe_child(out_dir, "design.toml"), text)

    content = handoff_dict(design, result, meta, verify)
    written["handoff.json"] = atomic_write_text(
        safe_child(out_dir, "handoff.json"),
        json.dumps(content, indent=2, allow_nan=False, ensure_ascii=False) + "\n",
    )

    buf = io.StringIO()
    writer = csv.DictWriter(buf, fieldnames=["name", "value", "unit", "description"])
    writer.writeheader()
    for row in parameter_rows(design):
        value = row["value"]
        if isinstance(value, numbers.Real) and not isinstance(value, numbers.Integral):
            value = repr(stated(float(value), mm=row["unit"] == "mm"))
        writer.writerow({**row, "value": value})
    written["parameters.csv"] = atomic_write_text(
        safe_child(out_dir, "parameters.csv"), buf.getvalue()
    )

    written["profile.dxf"] = write_profile_dxf(
        design, safe_child(out_dir, "profile.dxf"), notes=_dxf_notes(design, content, meta)
    )
    if verify is not None:
        written["verify.txt"] = atomic_write_text(
            safe_child(out_dir, "verify.txt"), str(verify.get("text", "")).rstrip() + "\n"
        )
    return written
