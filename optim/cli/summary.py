"""Readable text for one fast-model result and the material library (the CLI's words)."""

from __future__ import annotations

import math

from models.materials import MATERIALS
from optim.words import CAUTION, assumptions_text, limits_used_text

__all__ = [
    "format_materials",
    "format_result",
    "out_of_depth_lines",
]


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


def _pick_dynamics_lines(design, r) -> list:
    """The pull's ripple at twice the frequency, the held part's chatter margin and the lift."""
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


def _supply_lines(design, r) -> list[str]:
    """The supply and its capacitor, where the drive has one (models.supply)."""
    comp = getattr(design.drive, "compensation", "none")
    if comp == "none":
        return []
    return [
        f"  supply             {_w(r.supply_current_A)} A rms, {_w(r.supply_voltage_V)} V rms, "
        f"{_w(r.supply_VA)} VA through a {comp} capacitor",
        f"  capacitor          {r.capacitor_uF:.4g} uF: {_w(r.capacitor_voltage_V)} V rms, "
        f"{_w(r.capacitor_current_A)} A rms here; rated for {_w(r.capacitor_rating_V)} V rms, "
        f"{_w(r.capacitor_reactive_VA)} var (its worst state: every gap, no part, coil cold)",
    ]


def out_of_depth_lines(result) -> list[str]:
    """The verdict that opens a result's text when the linear model is out of its depth
    (``Result.out_of_depth``): what it means, then each reason; empty otherwise."""
    reasons = list(getattr(result, "out_of_depth", None) or [])
    if not reasons:
        return []
    return [
        "NOT A VALID DESIGN: the linear model is out of its depth here; the numbers below are "
        "not what this magnet would do:",
        *(f"  - {why}" for why in reasons),
        "",
    ]


def _coil_rows(design, r) -> list[str]:
    """One line per coil of several (``[[coils]]``): its ampere-turns and loss."""
    if len(design.windings) < 2:
        return []
    return [
        f"    coils.{k}          {c.turns} turns, sense {c.sense:+d}, "
        f"{_w(r.ampere_turns_by_coil_A[str(k)])} A-turns, {_w(r.coil_loss_by_coil_W[str(k)])} W"
        for k, c in enumerate(design.windings)
    ]


def _winding_rows(design, r) -> list[str]:
    """A shading winding's ampere-turns, closing part and capacitor."""
    if design.ring is None or not design.ring.winding:
        return []
    ring = design.ring
    parts = []
    if ring.capacitance is not None:
        parts.append(f"{ring.capacitance * 1e6:.4g} uF ({_w(r.ring_capacitor_var)} var)")
    if ring.closing_resistance is not None:
        parts.append(f"{ring.closing_resistance:.4g} Ohm ({_w(r.ring_closing_loss_W)} W)")
    return [
        f"  shading winding    {ring.turns} turns, {_w(r.ring_ampere_turns_A)} A-turns, closed "
        f"by {' + '.join(parts)} at {_w(r.ring_closing_voltage_V)} V rms"
    ]


def format_result(design, result) -> str:
    """A few lines an engineer reads: pull and where it comes from, costs, validity."""
    r = result
    a = r.thermal_assumptions
    split = r.pull_by_source_N
    verdict = "PULL (toward the face)" if r.pull_N > 0 else "PUSH (away from the face)"
    form = "ring" if design.ring is not None else "plain pole (no ring)"
    if design.ring is not None and design.ring.winding:
        form = f"shading winding of {design.ring.turns} turns"
    if design.pole is None:
        form = "air core (no pole)"
    if len(design.windings) > 1:
        form += f", {len(design.windings)} coils in series"
    lines = out_of_depth_lines(r) + [
        f"design {design.name}: {design.drive.frequency:g} Hz, {form}, "
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
        *_pick_dynamics_lines(design, r),
        *_lateral_lines(design, r),
        f"  losses             target {_w(r.target_loss_W)} W, ring {_w(r.ring_loss_W)} W, "
        f"coil {_w(r.coil_loss_W)} W, core {_w(r.core_loss_W)} W (input {_w(r.input_power_W)} W)",
        f"  core loss          sheets' eddy currents {_w(r.core_eddy_loss_W)} W, hysteresis "
        f"{_w(r.core_hysteresis_loss_W)} W, excess {_w(r.core_excess_loss_W)} W",
        f"  coil               {_w(r.coil_current_A)} A rms, {_w(r.coil_voltage_V)} V rms, "
        f"{_w(r.coil_voltage_V * r.coil_current_A)} VA, Z = {r.coil_impedance_ohm[0]:.4g} + j{r.coil_impedance_ohm[1]:.4g} "
        "Ohm",
        *_supply_lines(design, r),
        *_coil_rows(design, r),
        *_winding_rows(design, r),
        f"  ring current       {_w(r.ring_current_A)} A rms at {r.ring_phase_deg:+.1f} deg to the "
        "coil current",
        f"  core peak flux     {r.core_peak_flux_density_T:.3g} T",
        f"  power factor       {r.power_factor:.3g}   pole mass {r.pole_mass_kg * 1e3:.4g} g   "
        f"{_core_flux(r)}",
        f"  thermal            {r.thermal_status}",
        f"  temperatures       {_temperatures(r)}",
        f"  coil limit         {r.coil_temperature_limit_C:g} degC (insulation class, hot spot)",
        f"  magnet envelope    {r.magnet_diameter_mm:.4g} mm diameter x {r.magnet_height_mm:.4g} mm "
        f"(pole and coil), {r.magnet_mass_kg * 1e3:.4g} g (copper {r.coil_copper_mass_kg * 1e3:.4g} g)",
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
