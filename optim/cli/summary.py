"""Readable text for one fast-model result and the material library (the CLI's words)."""

from __future__ import annotations

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
    """Seconds in words: 'never', '42 s', '3.5 min', '2.1 h'."""
    if seconds == float("inf"):
        return "never"
    if seconds < 120:
        return f"{seconds:.3g} s"
    if seconds < 7200:
        return f"{seconds / 60:.3g} min"
    return f"{seconds / 3600:.3g} h"


def _pick_state(r) -> str:
    """Which state pull_N is in, in words."""
    a = r.thermal_assumptions
    if a["target_stays"]:
        return (
            f"pull above with the part at its steady state {r.target_temperature_C:.4g} degC "
            "(thermal.target_stays)"
        )
    return (
        f"pull above at the moment of pick: the part arriving at "
        f"{r.target_arrival_temperature_C:.4g} degC, the magnet at its steady state"
    )


def _pick_dynamics_lines(design, r) -> list:
    """The pull's ripple at twice the frequency, the held part's chatter margin and the lift."""
    import math

    hold_mm = r.thermal_assumptions["hold_gap_mm"]
    margin = r.hold_chatter_margin_N
    held = (
        "n/a (thermal runaway)"
        if not math.isfinite(margin)
        else f"{margin * 1e3:+.4g} mN "
        + ("(stays on the face)" if margin >= 0 else "(lifts off every half cycle: chatters)")
    )
    if r.pick_time_ms == 0.0:
        lift = "no lift (the holding gap is not below the pick gap: thermal.hold_gap_mm)"
    elif math.isinf(r.pick_time_ms):
        lift = "never reaches the face: it stalls (see the warnings)"
    else:
        lift = (
            f"{r.pick_time_ms:.3g} ms from {design.target.gap * 1e3:g} to {hold_mm:g} mm, "
            f"contact at {r.contact_speed_m_per_s:.3g} m/s"
        )
    return [
        f"  ripple at 2f       +-{r.pull_ripple_N * 1e3:.4g} mN about the pull; held at "
        f"{hold_mm:g} mm: chatter margin {held}",
        f"  lift               {lift}",
    ]


def _lateral_lines(design, r) -> list:
    """The part off the axis: the centring stiffness, and at an offset its pull, lateral force
    and tilt torque (models.fast.offset)."""
    import math

    out = []
    k = r.centring_stiffness_N_per_m
    if math.isfinite(k):
        words = "drawn back to the axis" if k > 0 else "thrown off the axis"
        out.append(
            f"  centring stiffness {k:+.4g} N/m (+-{r.centring_stiffness_uncertainty_N_per_m:.2g}):"
            f" {words}"
        )
    d = design.target.offset
    if d != 0.0:
        f = r.lateral_force_N
        toward = "toward the axis" if f * d < 0 else "away from the axis"
        out.append(
            f"  off the axis       {d * 1e3:+g} mm: lateral force {f * 1e3:+.4g} mN "
            f"(+-{r.lateral_force_uncertainty_N * 1e3:.2g}, {toward}), tilt torque "
            f"{r.tilt_torque_N_m:+.3g} N m; centred pull {r.pull_centred_N * 1e3:+.4g} mN"
        )
    return out


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
        f"  after the hold     pull {r.pull_hold_N * 1e3:+.4g} mN, lift ratio "
        f"{r.lift_ratio_hold:+.3g} (part at {r.target_hold_temperature_C:.4g} degC, "
        f"gap {a['hold_gap_mm']:g} mm)",
        *_pick_dynamics_lines(design, r),
        *_lateral_lines(design, r),
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
        f"core flux {r.core_flux_fraction:.0%} of saturation ({r.core_saturation_T:.3g} T at "
        f"{r.core_temperature_C:.4g} degC)",
        f"  thermal            {r.thermal_status}",
        "  temperatures       "
        + ", ".join(f"{k} {v:.4g}" for k, v in r.temperatures_C.items())
        + " degC",
        f"  coil limit         {r.coil_temperature_limit_C:g} degC (insulation class, hot spot)",
        "  limits used        " + "; ".join(limits_used_text(a)),
        "  thermal assumed    " + assumptions_text(a),
        "  margins            "
        + (", ".join(f"{k} {v:+.4g}" for k, v in r.margins.items()) or "none")
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
