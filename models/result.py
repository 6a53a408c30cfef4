"""The fast model's result, grouped as the physics is: an electrical part and a thermal part.

``Result.to_dict()`` flattens the groups to the public JSON fields (the same names, in the same
order, that ``--json``, study results and hand-offs carry), and every field of either group reads
as a flat attribute too (``result.pull_N`` is ``result.electrical.pull_N``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

__all__ = [
    "Electrical",
    "FIELDS",
    "FLAT_FIELDS",
    "ResultField",
    "field_names",
    "flat_for_checks",
    "null_reason",
    "unit_of",
    "words_of",
    "Envelope",
    "MODEL_VERSION",
    "RING_PHASE_FROM_DEG",
    "Result",
    "ThermalResults",
    "ring_phase",
]

#: The fast model's version: results of different versions mean different things and are never
#: mixed in one study. 2: pull at the part's arrival and end-of-hold states (was: at its steady
#: state), ring phase in [-270, 90). 3: the laminated pole loses power (its sheets' eddy currents
#: as a complex permeability, hysteresis and excess losses), in the terminal power and the heat;
#: cells couple to the iron through Gauss nodes within 6 cell sizes (was 1.5) and grow by 1.25
#: (was 1.5); an error bar on every pull. 4: the error bar's second level coarsens the cells only
#: and keeps the pole model (``pull_uncertainty_*`` move by up to 9 %; every other result is that
#: of 3 to 1e-11, now from compiled kernels). 5: the cells and panels set by the gap stop
#: shrinking at 0.02 pole radii (``Fineness.gap_floor``: a design with a gap below that moves by
#: up to 0.3 % in pull, every other result is that of 4), the envelope and masses
#: (``magnet_diameter_mm``, ``magnet_height_mm``, ``magnet_mass_kg``, ``coil_copper_mass_kg``),
#: a coil given by its wire and fill factor.
MODEL_VERSION = "multiloop-5"


#: ``ring_phase_deg`` lies in [RING_PHASE_FROM_DEG, RING_PHASE_FROM_DEG + 360): a ring's current
#: lags the coil's by 90 to 180 degrees alone (Lenz's law: -j omega M / (R + j omega L)) and by a
#: little more beside iron and a part, so the range starts at -270 to keep that lag unwrapped.
RING_PHASE_FROM_DEG = -270.0


def ring_phase(ring_current: complex, coil_current: complex) -> float:
    """Phase of the ring's current relative to the coil's [deg], in the range of
    RING_PHASE_FROM_DEG (continuous through -180)."""
    angle = math.degrees(np.angle(ring_current / coil_current))
    return (angle - RING_PHASE_FROM_DEG) % 360.0 + RING_PHASE_FROM_DEG


@dataclass(frozen=True)
class Electrical:
    """The circuit solution's outputs. Rms phasors; SI except where a name says otherwise.

    Everything but ``pull_hold_N`` and ``lift_ratio_hold`` is the moment of pick: the fixed parts
    (coil, ring) at their steady state, the part as it arrives, at the design's gap.

    pull_N : time-averaged axial force on the target, positive toward the face [N]
    pull_by_source_N : its split into "coil", "pole" (magnetised iron) and "ring" [N]
    pull_cancellation : sum of the terms' magnitudes over the net's [-] (large: the net is a
        small difference of large terms; its size is uncertain there, its sign is what to trust)
    pull_uncertainty_N : the pull's error estimate [N]: how far pull_N may be from a converged
        reference (models.fast.uncertainty: a second, coarser level and the terms' own error);
        pull_uncertainty_relative : it over |pull_N| [-]
    pull_hold_N, lift_ratio_hold : pull [N] and pull / weight at the end of the hold, the part
        warmed for thermal.hold_time_s at the holding gap (thermal.hold_gap_mm); nan after a
        thermal runaway
    target_loss_W, ring_loss_W, coil_loss_W : Joule losses [W]
    input_power_W : Re(V conj(I)) at the coil terminals [W] (the supply's real power too)
    coil_current_A, coil_voltage_V : rms magnitudes [A], [V]; supply_VA : |V||I| of the supply
        [VA]
    coil_impedance_ohm : (resistance, reactance) at the terminals [Ohm]
    ring_current_A : rms magnitude of the ring's total current [A]; ring_phase_deg : its phase
        relative to the coil current [deg], in [-270, 90) so that a ring's lag (90 to a little
        over 180 degrees) reads without a jump
    core_peak_flux_density_T : largest peak |B| found inside the pole [T]
    pole_flux_density_T : peak in time of the section-averaged axial flux density of the pole, the
        largest along its length [T] (the FEM reports the same quantity)
    target_weight_N, lift_ratio : weight of the target [N] and pull / weight [-]
    power_factor : input_power_W / supply_VA (the supply's); pole_mass_kg : the pole's steel, groove removed;
    core_flux_fraction : core_peak_flux_density_T / the steel's saturation flux density at the
        core's temperature (0 if unknown); core_saturation_T : that saturation flux density [T]
        (nan if unknown)
    core_loss_W : the pole's loss [W], the sum of core_eddy_loss_W (eddy currents in its sheets,
        from their complex permeability), core_hysteresis_loss_W and core_excess_loss_W (the
        grade's loss law at the computed flux densities); all in input_power_W and in the heat
        of the face and core
    core_radial_flux_fraction : share of the steel's |B|^2 dV that runs radially in the face
        slab [-]: there the flux crosses the sheets of a real stack, which the homogenised
        permeability (flux along the sheets) does not describe
    pull_ripple_N : amplitude of the pull's component at twice the drive frequency at the pick
        [N] (models.fast.ripple): the pull swings between pull_N -/+ pull_ripple_N
    hold_chatter_margin_N : at the holding gap, mean pull minus ripple minus the weight's
        component against the pull [N], the worse of arrival and end of the hold (negative: the
        held part lifts off the face every half cycle); nan after a thermal runaway
    pick_time_ms : time from rest at the pick gap to contact at the holding gap [ms]
        (models.motion, quasi-static); inf where the part stalls on the way, 0 where there is
        no lift (the holding gap not below the pick gap: the part is held where it is picked);
        contact_speed_m_per_s : its speed at contact [m/s] (nan where it stalls, 0 without a
        lift)
    supply_voltage_V, supply_current_A : rms magnitudes at the supply's terminals [V], [A]: the
        capacitor's other side (models.supply; drive.compensation); the coil's own without one.
        supply_VA and power_factor are the supply's, input_power_W its real power (an ideal
        capacitor takes none); coil_voltage_V, coil_current_A stay the coil's
    capacitor_uF : the capacitance [uF] (the file's, or tuned for unity power factor at the
        design point); 0 without a capacitor. capacitor_voltage_V, capacitor_current_A : its rms
        voltage [V] and current [A] at the design point
    capacitor_rating_V, capacitor_reactive_VA : its rms voltage [V] and reactive power [var] in
        its worst state (the highest voltage) over the gaps evaluated at the steady state and
        cold, and with no part present, hot and cold: what it must be bought for
    coil_loss_by_coil_W : Joule loss of each coil [W], by its index in the file ("0" for
        [coil]; "0", "1", ... for [[coils]]); they sum to coil_loss_W
    coil_resistance_by_coil_ohm : each coil's winding resistance at the coil node's mean
        temperature [Ohm] (the thermal network lumps several coils into one node)
    ampere_turns_by_coil_A : sense x turns x coil_current_A of each coil [A rms]
    ring_ampere_turns_A : turns x ring_current_A [A rms] (a solid ring: one turn); with a shading
        winding (``[ring] turns``) ring_current_A is the current in its wire, ring_loss_W its
        wire's loss, and ring_closing_voltage_V the voltage across what closes it [V rms],
        ring_capacitor_var the capacitor's reactive power |I|^2 / (omega C) [var] (its rating
        with the voltage), ring_closing_loss_W the closing resistor's loss [W] (outside the
        magnet: in input_power_W, not in the ring's heat); nan (JSON null) where there is none

    An air core (no [pole]) has no steel: pole_flux_density_T, core_peak_flux_density_T,
    core_flux_fraction, core_saturation_T, pole_mass_kg, the core losses and
    core_radial_flux_fraction are nan (JSON null with ``<key>_why``).
    """

    pull_N: float
    pull_by_source_N: dict
    target_loss_W: float
    ring_loss_W: float
    coil_loss_W: float
    input_power_W: float
    coil_current_A: float
    coil_voltage_V: float
    supply_VA: float
    coil_impedance_ohm: tuple
    ring_current_A: float
    ring_phase_deg: float
    core_peak_flux_density_T: float
    pole_flux_density_T: float
    target_weight_N: float
    lift_ratio: float
    power_factor: float
    pole_mass_kg: float
    core_flux_fraction: float
    pull_hold_N: float
    lift_ratio_hold: float
    pull_cancellation: float
    pull_uncertainty_N: float
    pull_uncertainty_relative: float
    core_saturation_T: float
    core_loss_W: float
    core_eddy_loss_W: float
    core_hysteresis_loss_W: float
    core_excess_loss_W: float
    core_radial_flux_fraction: float
    pull_ripple_N: float
    hold_chatter_margin_N: float
    pick_time_ms: float
    contact_speed_m_per_s: float
    supply_voltage_V: float
    supply_current_A: float
    capacitor_uF: float
    capacitor_voltage_V: float
    capacitor_current_A: float
    capacitor_rating_V: float
    capacitor_reactive_VA: float
    coil_loss_by_coil_W: dict
    coil_resistance_by_coil_ohm: dict
    ampere_turns_by_coil_A: dict
    ring_ampere_turns_A: float
    ring_closing_voltage_V: float
    ring_capacitor_var: float
    ring_closing_loss_W: float
    # The part off the axis (models.fast.offset: their rows in FIELDS).
    pull_centred_N: float
    lateral_force_N: float
    lateral_force_uncertainty_N: float
    tilt_torque_N_m: float
    tilt_torque_uncertainty_N_m: float
    centring_stiffness_N_per_m: float
    centring_stiffness_uncertainty_N_per_m: float


@dataclass(frozen=True)
class ThermalResults:
    """The thermal network's outputs (models.thermal; steady state at the duty-averaged losses).

    temperatures_C : [degC] "coil" (its hot spot), "coil_mean" (its mean, which sets its
        resistance; with several coils, their one lumped node: the hot spot is that of the coil
        whose own rise is largest), "core", "face" (not for an air core), "ring" (with a ring): the fixed parts at their duty-averaged
        steady state; "target" (the part's steady state, were it to stay under the pole),
        "target_arrival" (as it arrives: the state of pull_N), "target_hold" (after the hold: the
        state of pull_hold_N), "ambient". Each temperature is stored here once; the
        ``*_temperature_C`` properties read it.
    thermal_assumptions : every assumption the temperatures rest on, by [thermal] file key
        (ambient_C, duty_cycle, hold_time_s, hold_gap_mm, target_arrival_C, target_stays, ...),
        the limit each part is held to and its source (``<part>_limit_C``,
        ``<part>_limit_source``), and ``defaults``: the keys the file left out
    coil_temperature_limit_C : the insulation class temperature (IEC 60085)
    thermal_status : "isothermal" (resistivities at 20 degC; the temperatures are the network's
        response to those losses, without feedback), "converged" or "runaway: <why>" (then every
        temperature is inf and every temperature margin -inf)
    margins : limit name -> margin in the limit's unit, positive = satisfied:
        "coil_temperature_C", "ring_temperature_C" and "target_hold_temperature_C" (when
        [thermal] sets ring_limit_C, target_limit_C), "core_flux_density_T" (saturation minus
        peak), "supply_voltage_V", "supply_current_A", "supply_VA" (the supply's),
        "capacitor_rating_V" (with [supply] limits)
    binding_limit : the margin smallest relative to its limit (a temperature's relative to the
        allowed rise above ambient), "" if none
    time_to_limit_s : part -> seconds from cold to its limit run continuously (inf: never); the
        coil's limit is its class, the ring's and target's the user's or their material's
    thermal_time_constants_s : of the network, shortest first [s]
    """

    temperatures_C: dict
    thermal_assumptions: dict
    coil_temperature_limit_C: float
    thermal_status: str
    margins: dict
    binding_limit: str
    time_to_limit_s: dict
    thermal_time_constants_s: list

    @property
    def coil_temperature_C(self) -> float:
        """The winding's hot spot (what its insulation class limits) [degC]."""
        return self.temperatures_C["coil"]

    @property
    def core_temperature_C(self) -> float:
        """The core's temperature [degC] (nan for an air core: no steel)."""
        return self.temperatures_C.get("core", math.nan)

    @property
    def ring_temperature_C(self) -> float | None:
        """The ring's temperature [degC]; None without a ring (the face has its own,
        ``face_temperature_C``)."""
        return self.temperatures_C.get("ring")

    @property
    def face_temperature_C(self) -> float:
        """The pole face's temperature [degC] (nan for an air core: no steel)."""
        return self.temperatures_C.get("face", math.nan)

    @property
    def target_temperature_C(self) -> float:
        """The target's steady state [degC]."""
        return self.temperatures_C["target"]

    @property
    def target_hold_temperature_C(self) -> float:
        """The part at the end of its hold (thermal.hold_time_s) [degC]."""
        return self.temperatures_C["target_hold"]

    @property
    def target_arrival_temperature_C(self) -> float:
        """The part as it arrives [degC] (thermal.target_arrival_C, default the ambient)."""
        return self.temperatures_C["target_arrival"]


@dataclass(frozen=True)
class Envelope:
    """The magnet's envelope and masses (models.envelope: what counts and what is left out).

    magnet_diameter_mm : overall diameter of the magnet, twice the larger of the pole's radius
        and the coil's outer radius (the ring sits inside the pole) [mm]
    magnet_height_mm : the pole's length; the coil lies along the pole [mm]
    magnet_mass_kg : the pole's steel (groove removed), the ring and the winding's conductor [kg]
    coil_copper_mass_kg : the winding's conductor, turns x 2 pi r_mean x wire area x its
        density (copper unless coil.material names another metal) [kg]
    """

    magnet_diameter_mm: float
    magnet_height_mm: float
    magnet_mass_kg: float
    coil_copper_mass_kg: float


_RUNAWAY = "thermal runaway: no steady state below the materials' limits"
_AIR_CORE = "air core: the design has no pole (no steel)"


@dataclass(frozen=True)
class ResultField:
    """One public result field: a row of ``FIELDS``.

    name : the JSON field and flat attribute (``result.pull_N``)
    group : the part of the Result it lives in: "electrical", "thermal", "envelope" or "" (the
        Result itself)
    unit : its unit as labels write it ("N", "degC", "" for a ratio or a text)
    words : a label in words, without the unit ("pull at pick")
    stored : how it is stored: "float", "int", "dict" (a table by name), "list" or "text"
    null : why it may not be a number, by sign ("nan", "inf", "-inf") -> the reason a JSON null
        carries beside it (``<name>_why``); empty: always finite
    checked : read by the limit checks (models.checks; ``flat_for_checks``)
    """

    name: str
    group: str
    unit: str
    words: str
    stored: str = "float"
    null: tuple = ()
    checked: bool = False


def _f(name, group, unit, words, stored="float", null=(), checked=False) -> ResultField:
    return ResultField(name, group, unit, words, stored, tuple(null), checked)


_E, _T, _V = "electrical", "thermal", "envelope"
_STEEL = (("nan", _AIR_CORE),)

#: The public result fields in their JSON order: the one table the flat view (``FLAT_FIELDS``,
#: ``Result.to_dict``), the checks' view (``flat_for_checks``), units, labels and the reasons
#: for a null derive from. A new result field is one row here plus its formula.
#: Why the centring stiffness is null: it costs about one more evaluation and is asked for.
_NOT_ASKED = (
    (
        "nan",
        "not asked for: evaluate(..., lateral=True), `eddypull evaluate`, an offset part or a "
        "study that names it",
    ),
)

FIELDS: tuple[ResultField, ...] = (
    _f("pull_N", _E, "N", "pull at pick"),
    _f("pull_by_source_N", _E, "N", "pull by source", "dict"),
    _f("target_loss_W", _E, "W", "part loss"),
    _f("ring_loss_W", _E, "W", "ring loss"),
    _f("coil_loss_W", _E, "W", "coil loss"),
    _f("input_power_W", _E, "W", "input power"),
    _f("coil_current_A", _E, "A rms", "coil current", checked=True),
    _f("coil_voltage_V", _E, "V rms", "coil voltage", checked=True),
    _f("supply_VA", _E, "VA", "supply apparent power", checked=True),
    _f("coil_impedance_ohm", _E, "Ohm", "coil resistance and reactance", "list"),
    _f("ring_current_A", _E, "A rms", "ring current"),
    _f("ring_phase_deg", _E, "deg", "ring current phase"),
    _f(
        "core_peak_flux_density_T",
        _E,
        "T",
        "peak flux density in the core",
        null=_STEEL,
        checked=True,
    ),
    _f("pole_flux_density_T", _E, "T", "pole flux density", null=_STEEL),
    _f("target_weight_N", _E, "N", "part weight"),
    _f("lift_ratio", _E, "", "lift ratio (pull over weight)"),
    _f("temperatures_C", _T, "degC", "temperatures", "dict", (("inf", _RUNAWAY),)),
    _f("warnings", "", "", "warnings", "list"),
    _f("n_cells", "", "", "cells", "int"),
    _f("n_panels", "", "", "panels", "int"),
    _f("run_time_s", "", "s", "run time"),
    _f("model", "", "", "model version", "text"),
    _f("coil_temperature_C", _T, "degC", "coil hot spot", null=(("inf", _RUNAWAY),), checked=True),
    _f("core_temperature_C", _T, "degC", "core temperature", null=(("inf", _RUNAWAY), *_STEEL)),
    _f(
        "ring_temperature_C",
        _T,
        "degC",
        "ring temperature",
        null=(("inf", _RUNAWAY),),
        checked=True,
    ),
    _f("target_temperature_C", _T, "degC", "part steady temperature", null=(("inf", _RUNAWAY),)),
    _f(
        "target_hold_temperature_C",
        _T,
        "degC",
        "part temperature after the hold",
        null=(("inf", _RUNAWAY),),
        checked=True,
    ),
    _f("coil_temperature_limit_C", _T, "degC", "coil insulation class limit"),
    _f("power_factor", _E, "", "power factor"),
    _f("pole_mass_kg", _E, "kg", "pole mass", null=_STEEL),
    _f("core_flux_fraction", _E, "", "core flux over saturation", null=_STEEL, checked=True),
    _f("thermal_status", _T, "", "thermal status", "text"),
    _f("margins", _T, "", "margins to the limits", "dict", (("-inf", _RUNAWAY),)),
    _f("binding_limit", _T, "", "binding limit", "text"),
    _f(
        "time_to_limit_s",
        _T,
        "s",
        "time to limit",
        "dict",
        (("inf", "never: stays below its limit running continuously"),),
    ),
    _f("thermal_time_constants_s", _T, "s", "thermal time constants", "list"),
    _f("pull_hold_N", _E, "N", "pull at the end of the hold"),
    _f("lift_ratio_hold", _E, "", "lift ratio at the end of the hold"),
    _f(
        "pull_cancellation",
        _E,
        "",
        "pull cancellation",
        null=(("inf", "the net pull is zero"),),
        checked=True,
    ),
    _f(
        "target_arrival_temperature_C",
        _T,
        "degC",
        "part temperature on arrival",
        null=(("inf", _RUNAWAY),),
    ),
    _f("thermal_assumptions", _T, "", "thermal assumptions", "dict"),
    _f(
        "face_temperature_C", _T, "degC", "pole face temperature", null=(("inf", _RUNAWAY), *_STEEL)
    ),
    _f("pull_uncertainty_N", _E, "N", "pull uncertainty"),
    _f("pull_uncertainty_relative", _E, "", "relative pull uncertainty", checked=True),
    _f("core_loss_W", _E, "W", "core loss", null=_STEEL),
    _f("core_eddy_loss_W", _E, "W", "core eddy-current loss", null=_STEEL),
    _f("core_hysteresis_loss_W", _E, "W", "core hysteresis loss", null=_STEEL),
    _f("core_excess_loss_W", _E, "W", "core excess loss", null=_STEEL),
    _f("core_saturation_T", _E, "T", "core saturation flux density", checked=True),
    _f("core_radial_flux_fraction", _E, "", "radial flux share in the face slab", null=_STEEL),
    _f("pull_ripple_N", _E, "N", "pull ripple"),
    _f(
        "hold_chatter_margin_N",
        _E,
        "N",
        "hold chatter margin",
        null=(("nan", "thermal runaway: the hold has no end state"),),
    ),
    _f(
        "pick_time_ms",
        _E,
        "ms",
        "pick time",
        null=(("inf", "never: the part stalls on its way to the holding gap (see warnings)"),),
    ),
    _f(
        "contact_speed_m_per_s",
        _E,
        "m/s",
        "contact speed",
        null=(("nan", "never reaches contact: the part stalls on the way"),),
    ),
    _f("magnet_diameter_mm", _V, "mm", "magnet diameter"),
    _f("magnet_height_mm", _V, "mm", "magnet height"),
    _f("magnet_mass_kg", _V, "kg", "magnet mass"),
    _f("coil_copper_mass_kg", _V, "kg", "coil conductor mass"),
    _f("supply_voltage_V", _E, "V rms", "supply voltage", checked=True),
    _f("supply_current_A", _E, "A rms", "supply current", checked=True),
    _f("capacitor_uF", _E, "uF", "capacitance"),
    _f("capacitor_voltage_V", _E, "V rms", "capacitor voltage"),
    _f("capacitor_current_A", _E, "A rms", "capacitor current"),
    _f("capacitor_rating_V", _E, "V rms", "capacitor voltage rating", checked=True),
    _f("capacitor_reactive_VA", _E, "var", "capacitor reactive power"),
    _f("out_of_depth", "", "", "why the linear model is out of its depth", "list"),
    _f("coil_loss_by_coil_W", _E, "W", "loss by coil", "dict"),
    _f("coil_resistance_by_coil_ohm", _E, "Ohm", "resistance by coil", "dict"),
    _f("ampere_turns_by_coil_A", _E, "A rms", "ampere-turns by coil", "dict"),
    _f("ring_ampere_turns_A", _E, "A rms", "ring ampere-turns"),
    _f(
        "ring_closing_voltage_V",
        _E,
        "V rms",
        "ring closing voltage",
        null=(("nan", "no shading winding: a solid ring (or none) has no closing part"),),
    ),
    _f(
        "ring_capacitor_var",
        _E,
        "var",
        "ring capacitor reactive power",
        null=(("nan", "no capacitor closes the ring"),),
    ),
    _f("ring_closing_loss_W", _E, "W", "ring closing resistor loss"),
    #: The part off the axis (``[target] offset_mm``, models.fast.offset), its rows:
    #: pull_N and lift_ratio are at the offset; ``pull_centred_N`` the pull of the centred part
    #: (pull_by_source_N splits that one); lateral_force_N the force along +x (the offset's
    #: direction; negative at a positive offset draws the part back to the axis), tilt_torque_N_m
    #: about the line through the part's centre across the offset in the face plane (positive turns
    #: its +x edge toward the face), each with its error estimate; centring_stiffness_N_per_m is
    #: -dF_x/dx at the axis (positive draws the part in; nan where not asked for: evaluate's
    #: ``lateral``). Losses, temperatures, ripple, chatter and the lift are the centred part's.
    _f("pull_centred_N", _E, "N", "pull of the part centred"),
    _f("lateral_force_N", _E, "N", "lateral force (along the offset)"),
    _f("lateral_force_uncertainty_N", _E, "N", "lateral force error estimate"),
    _f("tilt_torque_N_m", _E, "N m", "tilt torque"),
    _f("tilt_torque_uncertainty_N_m", _E, "N m", "tilt torque error estimate"),
    _f("centring_stiffness_N_per_m", _E, "N/m", "centring stiffness", null=_NOT_ASKED),
    _f(
        "centring_stiffness_uncertainty_N_per_m",
        _E,
        "N/m",
        "centring stiffness error estimate",
        null=_NOT_ASKED,
    ),
)
_BY_NAME = {f.name: f for f in FIELDS}

#: The public flat fields in their JSON order, each with the group it lives in ("" = the Result).
FLAT_FIELDS = tuple((f.group, f.name) for f in FIELDS)
_GROUP_OF = {f.name: f.group for f in FIELDS if f.group}


def field_names() -> tuple[str, ...]:
    """The public result fields' names in their JSON order."""
    return tuple(f.name for f in FIELDS)


def unit_of(name: str) -> str:
    """The unit of result field ``name`` as labels write it ("" for a ratio or a text)."""
    return _BY_NAME[name].unit


def words_of(name: str) -> str:
    """Result field ``name`` in words, for a label (without its unit)."""
    return _BY_NAME[name].words


def null_reason(name: str, sign: str) -> str | None:
    """Why result field ``name`` is not a number when it is ``sign`` ("nan", "inf", "-inf");
    None where the table gives no reason (a field, or a sign, that is always finite)."""
    row = _BY_NAME.get(name)
    return dict(row.null).get(sign) if row is not None else None


def flat_for_checks(electrical: Electrical, thermal: ThermalResults) -> dict:
    """The flat values the limit checks read (models.checks): the ``checked`` rows of FIELDS."""
    parts = {"electrical": electrical, "thermal": thermal}
    return {f.name: getattr(parts[f.group], f.name) for f in FIELDS if f.checked}


@dataclass(frozen=True)
class Result:
    """Fast-model result of one design: ``electrical``, ``thermal`` and ``envelope`` parts, the warnings
    (where the linear model or its discretisation is outside its validated range, and a thermal
    runaway), the discretisation's size (``n_cells``, ``n_panels``), the run time [s] and the
    model's version. Every field of the two parts also reads as a flat attribute."""

    electrical: Electrical
    thermal: ThermalResults
    warnings: list = field(default_factory=list)
    n_cells: int = 0
    n_panels: int = 0
    run_time_s: float = 0.0
    model: str = MODEL_VERSION
    envelope: Envelope | None = None
    #: Why the linear model is out of its depth here (models.checks.out_of_depth): each reason a
    #: sentence; empty when its numbers stand for the magnet.
    out_of_depth: list = field(default_factory=list)

    def __getattr__(self, name):
        group = _GROUP_OF.get(name)
        if group is None:
            raise AttributeError(f"{type(self).__name__!r} object has no attribute {name!r}")
        return getattr(object.__getattribute__(self, group), name)

    def to_dict(self) -> dict:
        """Plain JSON-ready dict of every public field, flat (the groups' fields side by side)."""
        d = {}
        for group, name in FLAT_FIELDS:
            value = getattr(getattr(self, group) if group else self, name)
            if isinstance(value, dict):
                value = dict(value)
            elif isinstance(value, (list, tuple)):
                value = list(value)
            d[name] = value
        return d
