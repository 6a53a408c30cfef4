"""Step 2 of reading a design: one parser per table (its own rules and materials), and the
notes on what the reader took on the user's behalf."""

from __future__ import annotations

import math

from models.design.parts import (
    DEFAULT_FILL_FACTOR,
    INSULATION_CLASSES,
    MM,
    ORIENTATIONS,
    ThermalSettings,
)
from models.design.schema import (
    _ALLOWED,
    _NO_VALUES,
    _Values,
)
from models.errors import DesignError, nearest
from models.materials import MATERIALS, get_material
from models.supply import COMPENSATIONS

# --- step 2: one parser per table. Each returns the keywords of its dataclass other than the
# sizes in mm (None where the table's own problems leave them unknown).


def _material(name, where: str, problems: list[str]):
    """The library material ``name``, or None (with its problem added)."""
    try:
        return get_material(name, where)
    except DesignError as err:
        problems.extend(err.problems)
        return None


def _parse_pole(p: _Values, problems: list[str]) -> dict | None:
    """[pole]: its steel, named (material) or given (relative_permeability and
    conductivity_S_per_m, 0 = laminated)."""
    mu_r, sigma = p.get("relative_permeability"), p.get("conductivity_S_per_m")
    pole_mat, bsat = p.get("material"), p.get("saturation_flux_density_T")
    lamination = (None, None)
    if not p.usable("material", "relative_permeability", "conductivity_S_per_m"):
        pass  # which of the two ways was meant is unknown
    elif pole_mat is not None:
        if mu_r is not None or sigma is not None:
            problems.append(
                "pole.material = "
                f"{pole_mat!r}: give either material or relative_permeability and "
                "conductivity_S_per_m, not both"
            )
        elif (m := _material(pole_mat, "pole.material", problems)) is not None:
            if not m.is_magnetic:
                problems.append(
                    f"pole.material = {pole_mat!r}: not a magnetic steel; allowed: "
                    + ", ".join(k for k, v in MATERIALS.items() if v.is_magnetic)
                )
            mu_r, sigma = m.relative_permeability, m.conductivity
            bsat = bsat if bsat is not None else m.saturation_flux_density
            lamination = (m.lamination_thickness, m.sheet_conductivity)
    elif mu_r is None or sigma is None:
        problems.append(
            "pole: give material, or both relative_permeability and conductivity_S_per_m "
            "(0 = laminated)"
        )
    if mu_r is not None and mu_r < 1.0:
        problems.append(f"pole.relative_permeability = {mu_r!r}: must be >= 1 (a magnetic steel)")
    given = _pole_sheets(p, pole_mat, sigma, problems)
    if mu_r is None or sigma is None:
        return None
    m = None if pole_mat is None else get_material(pole_mat)
    return {
        "relative_permeability": float(mu_r),
        "conductivity": float(sigma),
        "material": None if m is None else m.name,
        "saturation_flux_density": bsat,
        "lamination_thickness": lamination[0] if m is not None else given[0],
        "sheet_conductivity": lamination[1] if m is not None else given[1],
        "core_loss": None if m is None else m.core_loss,
        "density": 7700.0 if m is None else m.density,
    }


def _pole_sheets(p: _Values, pole_mat, sigma, problems: list[str]) -> tuple:
    """The sheets of a pole given by relative_permeability: (thickness [m], conductivity
    [S/m]), each None when not given; both or neither, and only for a laminated pole."""
    d, s = p.get("lamination_thickness_mm"), p.get("sheet_conductivity_S_per_m")
    if d is None and s is None:
        return None, None
    if pole_mat is not None:
        problems.append(
            f"pole.material = {pole_mat!r}: its sheets come from the library; leave out "
            "lamination_thickness_mm and sheet_conductivity_S_per_m"
        )
    elif (d is None) != (s is None):
        missing = "sheet_conductivity_S_per_m" if s is None else "lamination_thickness_mm"
        problems.append(
            f"pole.{missing}: missing; give both sheet keys of a laminated pole or neither"
        )
    elif sigma is not None and sigma != 0.0:
        problems.append(
            f"pole.conductivity_S_per_m = {sigma!r}: a pole with sheet keys is laminated; "
            "allowed: 0"
        )
    return (None if d is None else d * MM), s


def _parse_drive(d: _Values, problems: list[str]) -> dict:
    """[drive]: the frequency, exactly one of current and voltage, and the capacitor
    (``compensation`` one of models.supply.COMPENSATIONS; ``capacitance_uF`` only with one)."""
    if d.usable("current_A", "voltage_V") and ("current_A" in d) == ("voltage_V" in d):
        problems.append(
            "drive: give exactly one of current_A (rms) and voltage_V (rms); "
            f"got {'both' if 'current_A' in d else 'neither'}"
        )
    word = d.get("compensation", "none")
    if d.usable("compensation") and isinstance(word, str):
        word = word.strip().lower()
        if word not in COMPENSATIONS:
            problems.append(
                f"drive.compensation = {d.get('compensation')!r}: allowed: "
                + ", ".join(f'"{w}"' for w in COMPENSATIONS)
                + nearest(word, list(COMPENSATIONS))
            )
        elif word == "none" and "capacitance_uF" in d and d.usable("capacitance_uF"):
            problems.append(
                f"drive.capacitance_uF = {d.get('capacitance_uF'):g}: a capacitance needs "
                'drive.compensation = "series" or "parallel" (it is "none")'
            )
    c = d.get("capacitance_uF")
    return {
        "frequency": d.get("frequency_Hz"),
        "current": d.get("current_A"),
        "voltage": d.get("voltage_V"),
        "compensation": word,
        "capacitance": None if c is None else c * 1e-6,
    }


def _parse_coil(c: _Values, problems: list[str]) -> dict | None:
    """[coil]: the wire's material (copper unless named), which must conduct."""
    name = c.get("material", "copper")
    if not c.usable("material") or (m := _material(name, "coil.material", problems)) is None:
        return None
    if m.conductivity <= 0:
        problems.append(f"coil.material = {name!r}: the winding needs a conductor")
    return {
        "conductivity": m.conductivity,
        "temperature_coefficient": m.temperature_coefficient,
        "material": m.name,
    }


def _conductor(table: str, t: _Values, problems: list[str], default: str | None) -> dict | None:
    """Conductivity [S/m], temperature coefficient, density (None: unknown) and name of a
    conductor's material: a library material or an explicit conductivity, not both."""
    if not t.usable("material", "conductivity_S_per_m"):
        return None
    name = t.get("material")
    sigma = t.get("conductivity_S_per_m")
    if name is not None and sigma is not None:
        problems.append(
            f"{table}.conductivity_S_per_m = {sigma!r}: give either material or "
            "conductivity_S_per_m, not both"
        )
        return None
    explicit = [k for k in ("temperature_coefficient_per_K", "density_kg_per_m3") if k in t]
    if name is not None and explicit and table == "ring":
        problems.append(
            f"ring.{explicit[0]} = {t[explicit[0]]!r}: set by ring.material = {name!r}; give it "
            "only with conductivity_S_per_m"
        )
        return None
    if name is not None and "temperature_coefficient_per_K" in t:
        problems.append(
            f"{table}.temperature_coefficient_per_K = {t['temperature_coefficient_per_K']!r}: set "
            f"by {table}.material = {name!r}; give it only with conductivity_S_per_m"
        )
        return None
    if sigma is not None:
        # An explicit conductivity (its value at 20 degC): the temperature coefficient and the
        # density from the file, else from the library metal nearest in conductivity (the
        # result then carries a note saying so, models.design.Design.notes).
        near = nearest_metal(sigma)
        return {
            "conductivity": sigma,
            "temperature_coefficient": t.get(
                "temperature_coefficient_per_K", near.temperature_coefficient
            ),
            "density": t.get("density_kg_per_m3", near.density),
            "material": None,
        }
    name = name if name is not None else default
    if name is None:
        problems.append(f"{table}.material: missing; give material or conductivity_S_per_m")
        return None
    m = _material(name, f"{table}.material", problems)
    if m is None:
        return None
    if m.conductivity <= 0:
        problems.append(
            f"{table}.material = {name!r}: conductivity is 0 (a laminated steel); "
            f"a {table} needs a conductor, e.g. 'copper'"
        )
        return None
    return {
        "conductivity": m.conductivity,
        "temperature_coefficient": m.temperature_coefficient,
        "density": m.density,
        "material": m.name,
    }


def nearest_metal(conductivity: float):
    """The library's non-magnetic metal nearest to ``conductivity`` [S/m] (on a log scale)."""
    metals = [m for m in MATERIALS.values() if m.conductivity > 0 and not m.is_magnetic]
    return min(metals, key=lambda m: abs(math.log(m.conductivity / conductivity)))


def design_notes(vals: dict) -> tuple[str, ...]:
    """What the reader took on the user's behalf: a conductor given by its conductivity alone
    gets the temperature coefficient (and a ring its density) of the nearest library metal."""
    notes = []
    c = vals.get("coil", _NO_VALUES)
    if "wire_diameter_mm" in c and "turns" not in c and "fill_factor" not in c:
        notes.append(
            f"coil.wire_diameter_mm given without coil.turns or coil.fill_factor: the default "
            f"copper fill {DEFAULT_FILL_FACTOR:g} taken (common practice), the turns follow "
            "from the window"
        )
    for table in ("ring", "target"):
        t = vals.get(table)
        if t is None or "conductivity_S_per_m" not in t:
            continue
        near = nearest_metal(t["conductivity_S_per_m"])
        taken = []
        if "temperature_coefficient_per_K" not in t:
            taken.append(f"temperature_coefficient_per_K = {near.temperature_coefficient:g} 1/K")
        if table == "ring" and "density_kg_per_m3" not in t:
            taken.append(f"density_kg_per_m3 = {near.density:g}")
        if taken:
            notes.append(
                f"{table}.conductivity_S_per_m given without "
                + " and ".join(k.split(" = ")[0] for k in taken)
                + f": {near.name}'s values taken (the library metal nearest in conductivity): "
                + ", ".join(taken)
            )
    return tuple(notes)


def _parse_ring(r: _Values, problems: list[str]) -> dict | None:
    """[ring]: its conductor (copper unless named); a shading winding's keys (models.shading)."""
    from models.shading import parse_shading

    kw = _conductor("ring", r, problems, "copper")
    shading = parse_shading(r, problems)
    if kw is not None:
        kw["density"] = float(kw["density"])
        kw.update(shading)
    return kw


def _parse_target(g: _Values, problems: list[str]) -> dict | None:
    """[target]: its conductor (no default) and its density, from the file or the material."""
    kw = _conductor("target", g, problems, None)
    if kw is None or not g.usable("density_kg_per_m3"):
        return None
    if "density_kg_per_m3" in g:
        kw["density"] = g["density_kg_per_m3"]
    elif kw["material"] is None:  # it sets the part's weight: never a guess
        problems.append(
            "target.density_kg_per_m3: missing; needed with an explicit conductivity_S_per_m"
        )
        return None
    kw["density"] = float(kw["density"])
    return kw


def _parse_thermal(t: _Values, problems: list[str]) -> dict:
    """[thermal]: the Thermal keywords (defaults where a key is missing)."""
    kw = {}
    ambient = t.get("ambient_C", ThermalSettings.ambient_C)
    # -50 to 150 degC: from arctic outdoor to inside an oven line (common practice, no source)
    if not -50.0 <= ambient <= 150.0:
        problems.append(f"thermal.ambient_C = {ambient!r}: must be between -50 and 150 degC")
    kw["ambient_C"] = ambient
    if "coil_insulation_class" in t:
        kw.update(_insulation_class(t["coil_insulation_class"], problems))
    for key in ("ring_limit_C", "target_limit_C"):
        if key in t:
            if t.usable("ambient_C") and t[key] <= ambient:
                problems.append(
                    f"thermal.{key} = {t[key]!r}: must be above thermal.ambient_C (= {ambient!r})"
                )
            kw[key] = t[key]
    orientation = t.get("orientation", ThermalSettings.orientation)
    if orientation not in ORIENTATIONS:
        problems.append(
            f"thermal.orientation = {orientation!r}: must be one of {', '.join(ORIENTATIONS)}"
            f"{nearest(str(orientation), ORIENTATIONS)}"
        )
    kw["orientation"] = orientation
    for key, name in (
        ("convection_W_per_m2K", "convection"),
        ("emissivity", "emissivity"),
        ("duty_cycle", "duty_cycle"),
        ("period_s", "period"),
        ("hold_time_s", "hold_time"),
        ("ring_contact_W_per_m2K", "ring_contact_conductance"),
        ("winding_conductivity_W_per_mK", "winding_conductivity"),
        ("target_arrival_C", "target_arrival_C"),
        ("target_stays", "target_stays"),
    ):
        if key in t:
            kw[name] = t[key]
    if "hold_gap_mm" in t:
        kw["hold_gap"] = t["hold_gap_mm"] * MM
    _check_hold_within_on_time(t, problems)
    return kw


def _check_hold_within_on_time(t: _Values, problems: list[str]) -> None:
    """A part is held by the field, so a hold (thermal.hold_time_s) cannot outlast the magnet's
    on-time in each cycle (thermal.duty_cycle x thermal.period_s); refused, not warned: no such
    cycle exists (the rounding allowance 1e-9 is far below any stated time)."""
    if not all(k in t and t.usable(k) for k in ("hold_time_s", "period_s", "duty_cycle")):
        return
    hold, duty, period = t["hold_time_s"], t["duty_cycle"], t["period_s"]
    on = duty * period
    if duty < 1.0 and hold > on * (1.0 + 1e-9):
        problems.append(
            f"thermal.hold_time_s = {hold!r}: must be at most the magnet's on-time in each cycle, "
            f"thermal.duty_cycle x thermal.period_s = {duty:g} x {period:g} s = {on:g} s (the "
            "field holds the part, so the magnet is on for the whole hold)"
        )


def _insulation_class(cls, problems: list[str]) -> dict:
    """thermal.coil_insulation_class (an IEC 60085 letter or a temperature in degC): the
    keywords coil_class and coil_class_C, or {} (with a problem)."""
    if isinstance(cls, str):
        key = cls.strip().upper()
        if key in INSULATION_CLASSES:
            return {"coil_class": key, "coil_class_C": INSULATION_CLASSES[key]}
        try:
            cls = float(key)
        except ValueError:
            problems.append(
                f"thermal.coil_insulation_class = {cls!r}: must be "
                + _ALLOWED["class"]
                + " (IEC 60085)"
            )
            return {}
    # IEC 60085 classes run from 90 (Y) to 250 degC; a custom rating stays in that span.
    if not 90.0 <= cls <= 250.0:
        problems.append(
            f"thermal.coil_insulation_class = {cls!r}: a temperature must be between "
            "90 and 250 degC (the IEC 60085 classes)"
        )
        return {}
    named = [k for k, v in INSULATION_CLASSES.items() if v == cls]
    return {"coil_class": named[0] if named else f"{cls:g} degC", "coil_class_C": float(cls)}


def _parse_supply(t: _Values, problems: list[str]) -> dict:
    """[supply]: the limits of the supply (no rule beyond each value's own)."""
    return {
        "max_voltage": t.get("max_voltage_V"),
        "max_current": t.get("max_current_A"),
        "max_apparent_power": t.get("max_VA"),
        "max_capacitor_voltage": t.get("max_capacitor_voltage_V"),
    }


#: Step 2, table by table, in this order.
_PARSERS = {
    "pole": _parse_pole,
    "drive": _parse_drive,
    "coil": _parse_coil,
    "ring": _parse_ring,
    "target": _parse_target,
    "thermal": _parse_thermal,
    "supply": _parse_supply,
}
