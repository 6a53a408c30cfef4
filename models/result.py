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
    "MODEL_VERSION",
    "RING_PHASE_FROM_DEG",
    "Result",
    "Thermal",
    "ring_phase",
]

#: The fast model's version: results of different versions mean different things and are never
#: mixed in one study. 2: pull at the part's arrival and end-of-hold states (was: at its steady
#: state), ring phase in [-270, 90). 3: the laminated pole loses power (its sheets' eddy currents
#: as a complex permeability, hysteresis and excess losses), in the terminal power and the heat;
#: cells couple to the iron through Gauss nodes within 6 cell sizes (was 1.5) and grow by 1.25
#: (was 1.5); an error bar on every pull. 4: the error bar's second level coarsens the cells only
#: and keeps the pole model (``pull_uncertainty_*`` move by up to 9 %; every other result is that
#: of 3 to 1e-11, now from compiled kernels).
MODEL_VERSION = "multiloop-4"


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
    input_power_W : Re(V conj(I)) at the coil terminals [W]
    coil_current_A, coil_voltage_V : rms magnitudes [A], [V]; supply_VA : |V||I| [VA]
    coil_impedance_ohm : (resistance, reactance) at the terminals [Ohm]
    ring_current_A : rms magnitude of the ring's total current [A]; ring_phase_deg : its phase
        relative to the coil current [deg], in [-270, 90) so that a ring's lag (90 to a little
        over 180 degrees) reads without a jump
    core_peak_flux_density_T : largest peak |B| found inside the pole [T]
    pole_flux_density_T : peak in time of the section-averaged axial flux density of the pole, the
        largest along its length [T] (the FEM reports the same quantity)
    target_weight_N, lift_ratio : weight of the target [N] and pull / weight [-]
    power_factor : input_power_W / supply_VA; pole_mass_kg : the pole's steel, groove removed;
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
    # The part off the axis (models.fast.offset; FLAT_LATERAL at the end of this module).
    pull_centred_N: float
    lateral_force_N: float
    lateral_force_uncertainty_N: float
    tilt_torque_N_m: float
    tilt_torque_uncertainty_N_m: float
    centring_stiffness_N_per_m: float
    centring_stiffness_uncertainty_N_per_m: float


@dataclass(frozen=True)
class Thermal:
    """The thermal network's outputs (models.thermal; steady state at the duty-averaged losses).

    temperatures_C : [degC] "coil" (its hot spot), "coil_mean" (its mean, which sets its
        resistance), "core", "face", "ring" (with a ring): the fixed parts at their duty-averaged
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
        peak), "supply_voltage_V", "supply_current_A", "supply_VA" (with [supply])
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
        return self.temperatures_C["core"]

    @property
    def ring_temperature_C(self) -> float | None:
        """The ring's temperature [degC]; None without a ring (the face has its own,
        ``face_temperature_C``)."""
        return self.temperatures_C.get("ring")

    @property
    def face_temperature_C(self) -> float:
        """The pole face's temperature [degC]."""
        return self.temperatures_C["face"]

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


#: The public flat fields in their JSON order, each with the group it lives in ("" = the Result).
FLAT_FIELDS = (
    *(
        ("electrical", name)
        for name in (
            "pull_N",
            "pull_by_source_N",
            "target_loss_W",
            "ring_loss_W",
            "coil_loss_W",
            "input_power_W",
            "coil_current_A",
            "coil_voltage_V",
            "supply_VA",
            "coil_impedance_ohm",
            "ring_current_A",
            "ring_phase_deg",
            "core_peak_flux_density_T",
            "pole_flux_density_T",
            "target_weight_N",
            "lift_ratio",
        )
    ),
    ("thermal", "temperatures_C"),
    ("", "warnings"),
    ("", "n_cells"),
    ("", "n_panels"),
    ("", "run_time_s"),
    ("", "model"),
    ("thermal", "coil_temperature_C"),
    ("thermal", "core_temperature_C"),
    ("thermal", "ring_temperature_C"),
    ("thermal", "target_temperature_C"),
    ("thermal", "target_hold_temperature_C"),
    ("thermal", "coil_temperature_limit_C"),
    ("electrical", "power_factor"),
    ("electrical", "pole_mass_kg"),
    ("electrical", "core_flux_fraction"),
    ("thermal", "thermal_status"),
    ("thermal", "margins"),
    ("thermal", "binding_limit"),
    ("thermal", "time_to_limit_s"),
    ("thermal", "thermal_time_constants_s"),
    ("electrical", "pull_hold_N"),
    ("electrical", "lift_ratio_hold"),
    ("electrical", "pull_cancellation"),
    ("thermal", "target_arrival_temperature_C"),
    ("thermal", "thermal_assumptions"),
    ("thermal", "face_temperature_C"),
    ("electrical", "pull_uncertainty_N"),
    ("electrical", "pull_uncertainty_relative"),
    ("electrical", "core_loss_W"),
    ("electrical", "core_eddy_loss_W"),
    ("electrical", "core_hysteresis_loss_W"),
    ("electrical", "core_excess_loss_W"),
    ("electrical", "core_saturation_T"),
    ("electrical", "core_radial_flux_fraction"),
    ("electrical", "pull_ripple_N"),
    ("electrical", "hold_chatter_margin_N"),
    ("electrical", "pick_time_ms"),
    ("electrical", "contact_speed_m_per_s"),
)
_GROUP_OF = {name: group for group, name in FLAT_FIELDS if group}


@dataclass(frozen=True)
class Result:
    """Fast-model result of one design: ``electrical`` and ``thermal`` parts, the warnings
    (where the linear model or its discretisation is outside its validated range, and a thermal
    runaway), the discretisation's size (``n_cells``, ``n_panels``), the run time [s] and the
    model's version. Every field of the two parts also reads as a flat attribute."""

    electrical: Electrical
    thermal: Thermal
    warnings: list = field(default_factory=list)
    n_cells: int = 0
    n_panels: int = 0
    run_time_s: float = 0.0
    model: str = MODEL_VERSION

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


#: The part off the axis (``[target] offset_mm``, models.fast.offset), flat after the rest.
#: pull_N and lift_ratio are at the offset; ``pull_centred_N`` the pull of the centred part
#: (pull_by_source_N splits that one); lateral_force_N the force along +x (the offset's
#: direction; negative at a positive offset draws the part back to the axis), tilt_torque_N_m
#: about the line through the part's centre across the offset in the face plane (positive turns
#: its +x edge toward the face), each with its error estimate; centring_stiffness_N_per_m is
#: -dF_x/dx at the axis (positive draws the part in; nan where not asked for: evaluate's
#: ``lateral``). Losses, temperatures, ripple, chatter and the lift are the centred part's.
FLAT_LATERAL = (
    "pull_centred_N",
    "lateral_force_N",
    "lateral_force_uncertainty_N",
    "tilt_torque_N_m",
    "tilt_torque_uncertainty_N_m",
    "centring_stiffness_N_per_m",
    "centring_stiffness_uncertainty_N_per_m",
)
FLAT_FIELDS = FLAT_FIELDS + tuple(("electrical", name) for name in FLAT_LATERAL)
_GROUP_OF.update({name: "electrical" for name in FLAT_LATERAL})
