"""What a result is checked against: margins to every limit and the binding one, time to the
thermal limits, and the warnings (outside the validated range, near saturation, thermal runaway,
temperature swings, supply limits)."""

from __future__ import annotations

import math

import numpy as np

from models.design import Design
from models.fast.circuit import RING, TARGET, CircuitSolution
from models.fast.discretize import Fineness
from models.materials import skin_depth
from models.thermal.limits import time_to_limits

__all__ = [
    "FLUX_WARNING_FRACTION",
    "LIFT_WARNING_REYNOLDS",
    "LIFT_WARNING_RISE",
    "LIFT_WARNING_TRAVEL",
    "SWING_WARNING_K",
    "TYPICAL_SATURATION_T",
    "VALIDATED_RANGE",
    "lift_warnings",
    "gap_warnings",
    "WIRE_CURRENT_DENSITY_LIMIT",
    "limits_and_margins",
    "out_of_depth",
    "range_warnings",
    "thermal_assumptions",
    "thermal_warnings",
    "used_limits",
]

#: The range the fast model has been held to the FEM reference on (tests/tools/cross_model.py and
#: tests/data/cross_model.csv). Outside it a result carries a warning. The gaps reach from a part
#: held at contact through a wear plate (0.05 mm, cases g01 and g05) to picks from far below
#: (6 mm, case g04), on the cases' 10 mm pole: 0.005 to 0.6 pole radii.
VALIDATED_RANGE = {
    "frequency_Hz": (50.0, 5000.0),
    "target radius / pole radius": (0.3, 1.5),
    "gap_mm": (0.05, 6.0),
    "gap / pole radius": (0.005, 0.6),
    "target thickness_mm": (0.5, 5.0),
    "pole relative_permeability": (200.0, 5000.0),
}

#: Flux density above which a steel of unknown grade is taken to leave its linear range [T]:
#: silicon electrical steels reach their knee at about 1.3-1.6 T (from memory; the library's
#: M400 grade uses 1.5 T, models/materials.py).
TYPICAL_SATURATION_T = 1.5


#: Core flux density above this fraction of saturation warns (common practice, no source: the
#: B-H curve of electrical steel bends well before its nominal knee).
FLUX_WARNING_FRACTION = 0.9
#: A swing of a part's temperature over one on-off period above this warns [K] (common practice,
#: no source: a few K is within the lumped model's own accuracy).
SWING_WARNING_K = 2.0


def range_warnings(design: Design, sol: CircuitSolution, fineness: Fineness, electrical):
    """Warnings where the linear model or its discretisation leaves its validated range: flux
    density past saturation (at the core's temperature), a design outside VALIDATED_RANGE, a
    pole's sheets or loss law not given, sheets thick against their skin depth where flux runs
    across them, cells coarser than a part's skin depth."""
    out = []
    b_peak = electrical.core_peak_flux_density_T
    bsat = electrical.core_saturation_T
    if math.isfinite(bsat) and b_peak > bsat:
        out.append(
            f"core peak flux density {b_peak:.3g} T exceeds the steel's linear limit {bsat:.3g} T "
            "at its temperature: saturation makes the linear model optimistic"
        )
    elif not math.isfinite(bsat) and b_peak > TYPICAL_SATURATION_T:
        out.append(
            f"core peak flux density {b_peak:.3g} T is above {TYPICAL_SATURATION_T:g} T, where "
            "electrical steels saturate, and pole.saturation_flux_density_T is not given: the "
            "linear model may be optimistic"
        )
    f = design.drive.frequency
    out += _general_windings_warnings(design)
    values = {
        "frequency_Hz": f,
        "gap_mm": design.target.gap * 1e3,
        "target thickness_mm": design.target.thickness * 1e3,
    }
    if design.pole is not None:
        values["target radius / pole radius"] = design.target.radius / design.pole.radius
        values["gap / pole radius"] = design.target.gap / design.pole.radius
        values["pole relative_permeability"] = design.pole.relative_permeability
    for key, value in values.items():
        out += _outside(key, value)
    hold_gap = design.thermal.hold_gap
    if hold_gap is not None and abs(hold_gap - design.target.gap) > 1e-12:
        out += gap_warnings(design, [hold_gap * 1e3], "holding gap (thermal.hold_gap_mm)")
    if design.pole is not None:
        out += _core_warnings(design, electrical)
    out += _pull_warnings(electrical)
    for name, part, label in (("target", design.target, TARGET), ("ring", design.ring, RING)):
        if part is None or getattr(part, "winding", False):  # a winding's wire is stranded
            continue
        delta = skin_depth(f, part.conductivity)
        cells = sol.cells
        sel = cells.part == label
        finest = min(cells.dr[sel].min(), cells.dz[sel].min())
        if finest > 1.01 * fineness.surface_cell * delta and finest > 0:
            out.append(
                f"{name} skin depth {delta * 1e3:.3g} mm is finer than its cells "
                f"({finest * 1e3:.3g} mm): raise the cell limit for a converged answer"
            )
    return out


def _outside(key: str, value: float, what: str = "") -> list[str]:
    """The warning of ``value`` of VALIDATED_RANGE's ``key`` outside its range ([] inside)."""
    lo, hi = VALIDATED_RANGE[key]
    if lo * (1 - 1e-9) <= value <= hi * (1 + 1e-9):
        return []
    name = f"{what}: {key}" if what else key
    return [
        f"{name} = {value:.4g} is outside the range checked against the FEM "
        f"({lo:g} to {hi:g}): confirm with 'eddypull verify'"
    ]


def gap_warnings(design: Design, gaps_mm, what: str) -> list[str]:
    """One warning for each gap of ``gaps_mm`` [mm] (``what``: "pick gap", "holding gap ...")
    outside VALIDATED_RANGE, in mm and against the pole's radius; the design's own gap is
    checked by ``range_warnings``."""
    out = []
    for g in dict.fromkeys(float(g) for g in gaps_mm):
        if abs(g * 1e-3 - design.target.gap) <= 1e-12:
            continue
        out += _outside("gap_mm", g, what)
        if design.pole is not None:
            out += _outside("gap / pole radius", g * 1e-3 / design.pole.radius, what)
    return out


def _general_windings_warnings(design: Design) -> list[str]:
    """Several coils, a coil wound in the -1 sense or an air core: checked against a published
    measurement and the FEM on one device only (TEAM Workshop Problem 28,
    tests/validation/test_team28.py), not over a range of designs."""
    coils = design.windings
    forms = []
    if len(coils) > 1 or any(c.sense != 1 for c in coils):
        forms.append(f"{len(coils)} coils in series" if len(coils) > 1 else "a coil of sense -1")
    if design.pole is None:
        forms.append("an air core (no pole)")
    out = []
    if forms:
        out.append(
            " and ".join(forms) + ": this form is validated only on TEAM Workshop Problem 28 (an "
            "air-core levitation device, measured and against the FEM); confirm with 'eddypull "
            "verify'"
        )
    ring = design.ring
    if ring is not None and ring.winding:
        out.append(
            "a shading winding: checked against a filament loop model and the solid ring's "
            "low-frequency limit only, not against the FEM (which models a solid ring); its wire "
            "is taken thin against its skin depth"
        )
        from models.shading import wire_area

        wire = math.sqrt(4.0 * wire_area(ring) / math.pi)  # a round wire of the turn's copper
        delta = skin_depth(design.drive.frequency, ring.conductivity)
        if wire > delta:
            out.append(
                f"the shading winding's wire ({wire * 1e3:.3g} mm) is thicker than its skin "
                f"depth ({delta * 1e3:.3g} mm): its AC resistance, loss and lag are higher than "
                "the stranded model's"
            )
    return out


#: A pull whose error estimate exceeds this fraction of it warns (common practice, no source: a
#: tenth is where a lift ratio's margin stops meaning what it says).
PULL_UNCERTAINTY_WARNING = 0.1


def _pull_warnings(electrical) -> list[str]:
    """A pull whose size is not to be trusted: its error estimate over PULL_UNCERTAINTY_WARNING."""
    u = electrical.pull_uncertainty_relative
    if not u > PULL_UNCERTAINTY_WARNING:
        return []
    return [
        f"pull {electrical.pull_N * 1e3:+.4g} mN +- {electrical.pull_uncertainty_N * 1e3:.2g} mN "
        f"({100 * u:.0f} %; its terms sum to {electrical.pull_cancellation:.3g} x the net): trust "
        "its sign rather than its size, and check it with 'eddypull verify'"
    ]


def _core_warnings(design: Design, electrical) -> list[str]:
    """What the core-loss model leaves out: sheets or a loss law not given, and sheets over two
    skin depths thick where much of the flux runs across them."""
    p, f = design.pole, design.drive.frequency
    out = []
    if p.core_loss is None and p.lamination_thickness is None:
        out.append(
            "pole given by relative_permeability alone (no lamination_thickness_mm and "
            "sheet_conductivity_S_per_m, no loss data): taken as thin sheets without loss, "
            "core_loss_W = 0; name pole.material for a graded steel"
        )
    elif p.core_loss is None:
        out.append(
            "the pole's steel has no hysteresis and excess loss data (name pole.material for a "
            "graded steel): core_loss_W holds its sheets' eddy loss only"
        )
    if p.lamination_thickness and p.sheet_conductivity:
        delta = skin_depth(f, p.sheet_conductivity, p.relative_permeability)
        fraction = electrical.core_radial_flux_fraction
        if p.lamination_thickness > 2.0 * delta:
            out.append(
                f"the {p.lamination_thickness * 1e3:.3g} mm sheets are "
                f"{p.lamination_thickness / delta:.2g} skin depths thick at {f:g} Hz: their eddy "
                "loss and the pole's lower, lagging permeability are modelled for flux along the "
                f"sheets; {100 * fraction:.1f} % of the flux energy runs radially at the face, "
                "across them, where the loss is higher than modelled"
            )
    return out


#: Rms current density in the winding's copper [A/m^2] above which no wire carries it: enamelled
#: copper windings run at 2-6 A/mm^2 continuously and a few times that for seconds; at 40 A/mm^2
#: a winding heats by tens of kelvin a second adiabatically (rho J^2 / (density c): 1.7e-8 x
#: 1.6e15 / 3.4e6 ~ 8 K/s) and its insulation fails within a hold or two (common practice, no
#: source).
WIRE_CURRENT_DENSITY_LIMIT = 40e6


def out_of_depth(design: Design, electrical, thermal_status: str) -> list[str]:
    """Why the linear model's numbers do not describe this magnet, one sentence a reason (empty:
    none): the core's flux density above the steel's saturation (a linear pole keeps pulling
    where real steel stops), a thermal runaway (no steady state exists), a coil current density
    above ``WIRE_CURRENT_DENSITY_LIMIT`` (the wire would not survive it)."""
    out = []
    b, bsat = electrical.core_peak_flux_density_T, electrical.core_saturation_T
    limit = bsat if math.isfinite(bsat) and bsat > 0 else TYPICAL_SATURATION_T
    if b > limit:
        out.append(
            f"the core's peak flux density {b:.3g} T is above the steel's saturation "
            f"{limit:.3g} T: real steel stops there, the linear model keeps going"
        )
    if thermal_status.startswith("runaway"):
        out.append(f"thermal {thermal_status}")
    density = electrical.coil_current_A / design.coil.wire_area
    if density > WIRE_CURRENT_DENSITY_LIMIT:
        out.append(
            f"{electrical.coil_current_A:.4g} A rms is {density * 1e-6:.3g} A/mm^2 in the wire, "
            f"above the {WIRE_CURRENT_DENSITY_LIMIT * 1e-6:g} A/mm^2 no winding carries"
        )
    return out


def limits_and_margins(design: Design, state, result: dict):
    """(margins, binding limit, time to limits, thermal time constants) of a result (see
    models.result.ThermalResults); ``result`` holds the flat values the margins are taken of."""
    th = design.thermal
    ta = th.ambient_C
    net = state.network
    margins, scale = {}, {}

    def add(name, margin, size):
        margins[name] = float(margin)
        # a limit at the ambient (a class A coil in a 105 degC cell) leaves no span to scale
        # by: its margin is then compared in its own unit (1 K)
        scale[name] = float(size) if size > 0 else 1.0

    add("coil_temperature_C", th.coil_class_C - result["coil_temperature_C"], th.coil_class_C - ta)
    if th.ring_limit_C is not None and design.ring is not None:
        add(
            "ring_temperature_C",
            th.ring_limit_C - result["ring_temperature_C"],
            th.ring_limit_C - ta,
        )
    if th.target_limit_C is not None:
        add(
            "target_hold_temperature_C",
            th.target_limit_C - result["target_hold_temperature_C"],
            th.target_limit_C - ta,
        )
    bsat = result["core_saturation_T"]
    if math.isfinite(bsat) and bsat > 0:
        add("core_flux_density_T", bsat - result["core_peak_flux_density_T"], bsat)
    sup = design.supply
    if sup is not None:
        for name, limit, value in (
            ("supply_voltage_V", sup.max_voltage, result["supply_voltage_V"]),
            ("supply_current_A", sup.max_current, result["supply_current_A"]),
            ("supply_VA", sup.max_apparent_power, result["supply_VA"]),
            ("capacitor_rating_V", sup.max_capacitor_voltage, result["capacitor_rating_V"]),
        ):
            if limit is not None:
                add(name, limit - value, limit)
    relative = {k: margins[k] / scale[k] for k in margins}
    binding = min(relative, key=relative.get) if relative else ""

    limits = {part: limit for part, (limit, _) in used_limits(design, net).items()}
    times, taus = time_to_limits(state, limits)
    return margins, binding, times, taus


def thermal_warnings(design: Design, state, result: dict, hold_tau: float) -> list:
    """Warnings of the thermal state and the limits: a runaway (of the network or of the held
    part), flux density near saturation, temperature swings over an on-off period, a supply limit
    exceeded, and the network's own notes."""
    th = design.thermal
    out = []
    if state.status.startswith("runaway"):
        out.append(f"thermal {state.status}")
    if hold_tau < 0:
        out.append(
            "the held part heats faster than it can lose heat (its losses grow with its "
            "temperature): it runs away if held long enough"
        )
    frac = result["core_flux_fraction"]
    if FLUX_WARNING_FRACTION < frac <= 1.0:
        out.append(
            f"core peak flux density is {frac:.0%} of the steel's saturation flux density: "
            "close to the end of the linear model's validity"
        )
    elif frac > 1.0:
        out.append(
            "past saturation the fast model's answer is not valid (it is linear): reduce the "
            "ampere-turns or enlarge the pole"
        )
    if th.period is not None and th.duty_cycle < 1.0 and np.all(np.isfinite(state.T)):
        # First harmonic of the on-off losses, P_on (2 / pi) sin(pi D) (Fourier series of a
        # rectangular pulse train), through the network at omega = 2 pi / period: the swing of
        # each part about its duty average.
        net = state.network
        A, _ = net.matrix(state.T)
        p1 = state.losses_on * (2.0 / np.pi) * np.sin(np.pi * th.duty_cycle)
        swing = np.abs(np.linalg.solve(A + 2j * np.pi / th.period * np.diag(net.capacity), p1))
        for name in ("coil", "ring", "target"):
            if name in net.nodes and swing[net.index(name)] > SWING_WARNING_K:
                out.append(
                    f"thermal.period_s = {th.period:g} s: the {name}'s temperature swings about "
                    f"+-{swing[net.index(name)]:.2g} K around its duty average each period"
                )
    sup = design.supply
    if sup is not None:
        for limit, key, value, unit, who in (
            (sup.max_voltage, "max_voltage_V", result["supply_voltage_V"], "V rms", "supply"),
            (sup.max_current, "max_current_A", result["supply_current_A"], "A rms", "supply"),
            (sup.max_apparent_power, "max_VA", result["supply_VA"], "VA", "supply"),
            (
                sup.max_capacitor_voltage,
                "max_capacitor_voltage_V",
                result["capacitor_rating_V"],
                "V rms",
                "capacitor",
            ),
        ):
            if limit is not None and value > limit:
                needs = "the coil needs" if who == "supply" else "the capacitor sees up to"
                out.append(f"{needs} {value:.4g} {unit}, above supply.{key} = {limit:g}")
    out.extend(f"thermal: {n}" for n in state.network.notes)
    return out


def used_limits(design: Design, network) -> dict:
    """Temperature limit of each part [degC] that times to limit use, with its source:
    {"coil": (limit, why), "ring": ..., "target": ...}.

    Without a user's limit the ring is held to the coil's insulation class (or its own melting
    point, if lower): it is inlaid in the face of the pole that carries the winding and heats it,
    so the pole's hottest part runs no hotter than the winding may (common practice, no source);
    a part (the target) to its material's own limit (melting or Curie point,
    ``network.ceiling_C``): it leaves the magnet with each pick.
    """
    th = design.thermal
    out = {"coil": (th.coil_class_C, f"insulation class {th.coil_class}, IEC 60085")}
    for part, user in (("ring", th.ring_limit_C), ("target", th.target_limit_C)):
        if part not in network.nodes:
            continue
        k = network.index(part)
        if user is not None:
            out[part] = (user, f"thermal.{part}_limit_C")
        elif part == "ring" and th.coil_class_C < network.ceiling_C[k]:
            out[part] = (
                float(th.coil_class_C),
                f"the coil's insulation class {th.coil_class} beside it in the pole; no "
                "thermal.ring_limit_C given",
            )
        else:
            out[part] = (
                float(network.ceiling_C[k]),
                f"{network.ceiling_why[k]}; no thermal.{part}_limit_C given",
            )
    return out


def thermal_assumptions(design: Design, network) -> dict:
    """Every thermal assumption a result depends on, by its [thermal] file key, the limits each
    part is held to, and ``defaults``: the keys the design file left out (their default used)."""
    th = design.thermal
    given = set((design.source or {}).get("thermal", {}) or {})
    arrival = th.ambient_C if th.target_arrival_C is None else th.target_arrival_C
    hold_gap = design.target.gap if th.hold_gap is None else th.hold_gap
    values = {
        "ambient_C": th.ambient_C,
        "duty_cycle": th.duty_cycle,
        "period_s": th.period,
        "hold_time_s": th.hold_time,
        "hold_gap_mm": hold_gap * 1e3,
        "target_arrival_C": arrival,
        "target_stays": th.target_stays,
        "convection_W_per_m2K": th.convection,
        "emissivity": th.emissivity,
        "coil_insulation_class": th.coil_class,
        "orientation": th.orientation,
    }
    limits = used_limits(design, network)
    out = dict(values)
    out["convection"] = (
        "natural convection (Churchill-Chu and horizontal-plate correlations)"
        if th.convection is None
        else f"convection {th.convection:g} W/(m^2 K) (given)"
    )
    out["radiation"] = "none" if th.emissivity == 0 else f"emissivity {th.emissivity:g}"
    for part, (limit, why) in limits.items():
        out[f"{part}_limit_C"] = float(limit)
        out[f"{part}_limit_source"] = why
    out["defaults"] = sorted(k for k in values if k not in given)
    return out


#: Where the quasi-static lift (models.motion) stops holding, each a warning above it (common
#: practice, no source: a tenth is where a neglected effect starts to move a result by more than
#: the pull's own error bar): the magnetic Reynolds number mu0 sigma v L at the contact speed
#: (the low-Rm approximation needs Rm << 1), the travel in one drive period against the pole's
#: radius (the cycle-averaged pull assumes the part stands still over a period), and the field's
#: rise time under a resonant drive, 2 Q / omega, against the pick time.
LIFT_WARNING_REYNOLDS = 0.1
LIFT_WARNING_TRAVEL = 0.1
LIFT_WARNING_RISE = 0.1


def lift_warnings(design: Design, electrical, lift) -> list[str]:
    """Warnings on the lift in time (``lift``: models.motion.Lift): where it stalls, and where the
    quasi-static assumption fails (``LIFT_WARNING_*``; models.motion.quasi_static_numbers)."""
    from models.motion import quasi_static_numbers

    if math.isinf(lift.pick_time_s):
        pick, hold = design.target.gap * 1e3, (design.target.gap - lift.travel_m) * 1e3
        if lift.stall_gap_m >= design.target.gap:
            return [
                f"the part does not leave the pick gap {pick:.3g} mm: its pull there does not "
                "exceed its weight (pick_time_ms null)"
            ]
        return [
            f"the part stalls at gap {lift.stall_gap_m * 1e3:.3g} mm on its way from {pick:.3g} "
            f"mm to the holding gap {hold:.3g} mm: the pull falls below its weight on the way "
            "(pick_time_ms null)"
        ]
    if not lift.travel_m > 0:  # no lift
        return []
    r, x = electrical.coil_impedance_ohm
    omega = 2.0 * math.pi * design.drive.frequency
    q = quasi_static_numbers(
        lift.contact_speed_m_per_s,
        lift.pick_time_s,
        design.target.conductivity,
        design.target.radius,
        design.pole.radius,
        omega,
        x / r if r > 0 else math.inf,
    )
    out = []
    if q["magnetic_reynolds"] > LIFT_WARNING_REYNOLDS:
        out.append(
            f"magnetic Reynolds number {q['magnetic_reynolds']:.2g} at the contact speed "
            f"{lift.contact_speed_m_per_s:.3g} m/s (mu0 sigma v r_part): the motion's own "
            "eddy currents (a drag) are not in the quasi-static pick time"
        )
    travel = 2.0 * math.pi * q["speed_ratio"]
    if travel > LIFT_WARNING_TRAVEL:
        out.append(
            f"at contact the part moves {100 * travel:.2g} % of the pole's radius in one drive "
            "period: the cycle-averaged pull behind pick_time_ms assumes it stands still"
        )
    if q["rise_fraction"] > LIFT_WARNING_RISE:
        out.append(
            f"switched on for the pick, the field builds up over about 2Q/omega = "
            f"{q['rise_time_s'] * 1e3:.3g} ms under a resonant drive, {100 * q['rise_fraction']:.2g} "
            "% of the pick time: the lift starts later than pick_time_ms says (and a switch-on "
            "transient may jolt the part)"
        )
    return out


def lateral_warnings(design: Design, electrical) -> list[str]:
    """Where the part off the axis (models.fast.offset) is less sure: its part overhangs the
    pole's edge at its offset (the sheet model takes the face as unbounded for the part's own
    currents: within 8 % of the 3-D reference there, tests/validation/offset_reference.csv), or
    its lateral force's error bar exceeds a quarter of the force."""
    out = []
    t = design.target
    if t.offset != 0.0 and abs(t.offset) + t.radius > design.pole.radius:
        out.append(
            f"lateral: the part overhangs the pole's edge at its offset ({abs(t.offset) * 1e3:g} "
            f"+ {t.radius * 1e3:g} mm > {design.pole.radius * 1e3:g} mm): lateral force and pull "
            "there within about 10 % (the face taken unbounded for the part's own currents)"
        )
    f, u = electrical.lateral_force_N, electrical.lateral_force_uncertainty_N
    if t.offset != 0.0 and math.isfinite(u) and u > 0.25 * abs(f):
        out.append(
            f"lateral: lateral_force_N = {f:.3g} N +- {u:.2g} N: the error bar exceeds a quarter "
            "of the force; its sign is not sure"
        )
    return out
