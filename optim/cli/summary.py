"""Readable text for one fast-model result and the material library (the CLI's words)."""

from __future__ import annotations

import math

from models.materials import MATERIALS

__all__ = [
    "CAUTION",
    "assumptions_text",
    "format_materials",
    "format_result",
    "limits_used_text",
]

CAUTION = (
    "Caution: model results only. Rings, parts and coils get hot; coils run at mains voltage; the "
    "AC field can disturb implants. Follow local codes and have the design checked by a licensed "
    "professional."
)


def _w(x):
    return f"{x:.4g}"


def _time(seconds):
    """Seconds in words: 'never', 'at switch-on', '42 s', '3.5 min', '2.1 h'; 'n/a' when not
    known."""
    if seconds == float("inf"):
        return "never"
    if not math.isfinite(seconds) or seconds < 0:
        return "n/a"
    if seconds == 0:
        return "at switch-on"
    if seconds < 120:
        return f"{seconds:.3g} s"
    if seconds < 7200:
        return f"{seconds / 60:.3g} min"
    return f"{seconds / 3600:.3g} h"


def _pick_state(r) -> str:
    """Which state pull_N is in, in words."""
    a = r.thermal_assumptions
    if r.thermal_status == "isothermal":
        return "pull above with every part's resistivity at 20 degC (isothermal run)"
    if a["target_stays"]:
        return (
            f"pull above with the part at its steady state {r.target_temperature_C:.4g} degC "
            "(thermal.target_stays)"
        )
    return (
        f"pull above at the moment of pick: the part arriving at "
        f"{r.target_arrival_temperature_C:.4g} degC, the magnet at its steady state"
    )


def _after_hold(r) -> str:
    """The pull at the end of the hold, or why there is none (a thermal runaway)."""
    a = r.thermal_assumptions
    if r.thermal_status == "isothermal":
        return (
            f"pull {r.pull_hold_N * 1e3:+.4g} mN, lift ratio {r.lift_ratio_hold:+.3g} (isothermal: "
            f"the part at 20 degC, as on arrival; gap {a['hold_gap_mm']:g} mm)"
        )
    if not (math.isfinite(r.pull_hold_N) and math.isfinite(r.target_hold_temperature_C)):
        return (
            f"n/a: no pull after a {a['hold_time_s']:g} s hold ({r.thermal_status}; the part has "
            "no temperature to evaluate it at)"
        )
    return (
        f"pull {r.pull_hold_N * 1e3:+.4g} mN, lift ratio {r.lift_ratio_hold:+.3g} (part at "
        f"{r.target_hold_temperature_C:.4g} degC after a {a['hold_time_s']:g} s hold, gap "
        f"{a['hold_gap_mm']:g} mm)"
    )


def _core_flux(r) -> str:
    """The core's peak flux against its saturation, or why that is not known."""
    if not (math.isfinite(r.core_saturation_T) and r.core_saturation_T > 0):
        return (
            "core flux vs saturation n/a: the pole's material has no saturation flux density "
            "(a pole given by its permeability); compare the peak above with the steel's own"
        )
    at = (
        f"at {r.core_temperature_C:.4g} degC"
        if math.isfinite(r.core_temperature_C)
        else "at 20 degC: the core's temperature is unknown after the runaway"
    )
    return f"core flux {r.core_flux_fraction:.0%} of saturation ({r.core_saturation_T:.3g} T {at})"


def _temperatures(r) -> str:
    """The temperatures [degC], saying what they are in an isothermal run (the losses at 20 degC
    put through the thermal network once, without feeding the temperatures back)."""
    values = ", ".join(
        f"{k} {v:.4g}" if math.isfinite(v) else f"{k} n/a (runaway)"
        for k, v in r.temperatures_C.items()
    )
    values += " degC"
    if r.thermal_status == "isothermal":
        return (
            "not coupled (every resistivity held at 20 degC, as the pulls above): the network's "
            f"response to those losses, not fed back: {values}"
        )
    return values


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


def format_result(design, result) -> str:
    """A few lines an engineer reads: pull and where it comes from, costs, validity."""
    r = result
    a = r.thermal_assumptions
    split = r.pull_by_source_N
    verdict = "PULL (toward the face)" if r.pull_N > 0 else "PUSH (away from the face)"
    lines = [
        f"design {design.name}: {design.drive.frequency:g} Hz, "
        f"{'ring' if design.ring is not None else 'plain pole (no ring)'}, "
        f"target r = {design.target.radius * 1e3:g} mm at gap {design.target.gap * 1e3:g} mm",
        f"  pull               {r.pull_N * 1e3:+.4g} mN   {verdict}",
        f"    error bar        +-{r.pull_uncertainty_N * 1e3:.2g} mN "
        f"({100 * r.pull_uncertainty_relative:.2g} %; terms sum to {r.pull_cancellation:.3g} x "
        "the net)",
        f"    from coil        {split['coil'] * 1e3:+.4g} mN",
        f"    from pole (iron) {split['pole'] * 1e3:+.4g} mN",
        f"    from ring        {split['ring'] * 1e3:+.4g} mN",
        f"  target weight      {r.target_weight_N * 1e3:.4g} mN   lift ratio {r.lift_ratio:+.3g}",
        f"  part state         {_pick_state(r)}",
        f"  after the hold     {_after_hold(r)}",
        f"  losses             target {_w(r.target_loss_W)} W, ring {_w(r.ring_loss_W)} W, "
        f"coil {_w(r.coil_loss_W)} W, core {_w(r.core_loss_W)} W (input {_w(r.input_power_W)} W)",
        f"  core loss          sheets' eddy currents {_w(r.core_eddy_loss_W)} W, hysteresis "
        f"{_w(r.core_hysteresis_loss_W)} W, excess {_w(r.core_excess_loss_W)} W",
        f"  coil               {_w(r.coil_current_A)} A rms, {_w(r.coil_voltage_V)} V rms, "
        f"{_w(r.supply_VA)} VA, Z = {r.coil_impedance_ohm[0]:.4g} + j{r.coil_impedance_ohm[1]:.4g} "
        "Ohm",
        f"  ring current       {_w(r.ring_current_A)} A rms at {r.ring_phase_deg:+.1f} deg to the "
        "coil current",
        f"  core peak flux     {r.core_peak_flux_density_T:.3g} T",
        f"  power factor       {r.power_factor:.3g}   pole mass {r.pole_mass_kg * 1e3:.4g} g   "
        f"{_core_flux(r)}",
        f"  thermal            {r.thermal_status}",
        f"  temperatures       {_temperatures(r)}",
        f"  coil limit         {r.coil_temperature_limit_C:g} degC (insulation class, hot spot)",
        "  limits used        " + "; ".join(limits_used_text(a)),
        "  thermal assumed    " + assumptions_text(a),
        "  margins            "
        + (
            ", ".join(
                f"{k} {v:+.4g}" if math.isfinite(v) else f"{k} exceeded (runaway)"
                for k, v in r.margins.items()
            )
            or "none"
        )
        + (f"   binding: {r.binding_limit}" if r.binding_limit else ""),
        "  time to limit      "
        + ", ".join(f"{k} {_time(v)}" for k, v in r.time_to_limit_s.items())
        + " (from cold, run continuously)",
        f"  model              {r.model}: {r.n_cells} cells, {r.n_panels} iron panels, "
        f"{r.run_time_s * 1e3:.1f} ms",
    ]
    for w in r.warnings:
        lines.append(f"  WARNING: {w}")
    lines.append(CAUTION)
    return "\n".join(lines)


def format_materials() -> str:
    """The material library, each value with its source."""
    rows = []
    labels = [
        ("conductivity", "conductivity at 20 degC", "S/m"),
        ("temperature_coefficient", "temperature coefficient", "1/K"),
        ("density", "density", "kg/m^3"),
        ("specific_heat", "specific heat", "J/(kg K)"),
        ("thermal_conductivity", "thermal conductivity", "W/(m K)"),
        ("relative_permeability", "relative permeability", "-"),
        ("saturation_flux_density", "saturation flux density", "T"),
        ("lamination_thickness", "lamination thickness", "mm"),
        ("sheet_conductivity", "sheet conductivity", "S/m"),
    ]
    for m in MATERIALS.values():
        rows.append(f"{m.name}: {m.description}")
        for key, label, unit in labels:
            value = getattr(m, key)
            if value is None or (key == "relative_permeability" and value == 1.0):
                continue
            src = m.sources.get(key, "no source recorded")
            if key == "lamination_thickness":
                value = value * 1e3  # files give it in mm
            rows.append(f"  {label:26s} {value:<10.4g} {unit:9s} {src}")
        rows += _core_rows(m)
        rows.append("")
    return "\n".join(rows).rstrip()


def _core_rows(m) -> list[str]:
    """A core material's saturation against temperature, temperature limit and loss law."""
    rows = []
    if m.saturation_vs_temperature:
        table = ", ".join(f"{b:g} T at {t:g} degC" for t, b in m.saturation_vs_temperature)
        rows.append(f"  {'saturation by temperature':26s} {table}")
    if m.is_magnetic and m.max_temperature_C is not None:
        src = m.sources.get("max_temperature_C", "no source recorded")
        rows.append(f"  {'temperature limit':26s} {m.max_temperature_C:<10.4g} {'degC':9s} {src}")
    law = m.core_loss
    if law is not None:
        sheets = "classical (sheets) + " if m.sheet_conductivity else ""
        rows.append(
            f"  {'core loss law':26s} {sheets}{law.k_h:.4g} f B^{law.alpha:g} + "
            f"{law.k_e:.4g} (f B)^1.5 W/kg (B peak in T, f in Hz)"
        )
        points = "; ".join(f"{total:.4g} W/kg at {b:g} T, {f:g} Hz" for b, f, total in law.points)
        rows.append(f"  {'  fitted to':26s} {points}: {law.source}")
    return rows
