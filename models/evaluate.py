"""The one entry point of the fast model: design -> result.

The pipeline: discretise and assemble the circuit (models.fast), solve it together with the
thermal network (models.thermal), take the pull and the losses, check the limits
(models.checks), and return a models.result.Result.
"""

from __future__ import annotations

import dataclasses
import functools
import math
import time

import numpy as np
from scipy.constants import g as standard_gravity

from models.checks import limits_and_margins, range_warnings, thermal_warnings
from models.design import Design
from models.errors import DesignError
from models.fast.circuit import RING, TARGET, CircuitSolution, assemble_circuit, solve_system
from models.fast.discretize import Fineness
from models.fast.flux import core_peak_flux_density, pole_flux_density
from models.fast.pull import pull_by_source
from models.materials import MATERIALS
from models.result import MODEL_VERSION, Electrical, Result, Thermal
from models.thermal.coupling import solve_coupled
from models.thermal.limits import hold_temperature
from models.thermal.network import build_network

__all__ = ["DEFAULT_FINENESS", "MODEL_VERSION", "Result", "evaluate"]

DEFAULT_FINENESS = Fineness()


def _panel_size(design: Design, fineness: Fineness) -> float:
    """Iron panel size at the face [m]: a fraction of the smallest feature near it."""
    features = [design.pole.radius, 2.0 * design.target.gap, design.target.radius]
    if design.ring is not None:
        features += [design.ring.width, design.ring.depth, design.ring.inner_radius]
    return fineness.panel_size * min(features)


def pole_model_for(design: Design, fineness: Fineness):
    """The magnetised-pole model of ``design`` (None if the pole is not magnetic).

    The model depends only on the pole's radius, length and permeability, the groove (ring
    radii and depth) and the panel size, not on frequency, drive, coil or target material: the
    last few built are kept (``_cached_pole_model``, keyed by those exact floats) so that sweeps
    and studies over the others reuse it. The same object is returned for equal keys; treat it
    as read-only.
    """
    if design.pole.relative_permeability <= 1.0:
        return None
    p, g = design.pole, design.ring
    groove = None if g is None else (g.inner_radius, g.outer_radius, g.depth)
    return _cached_pole_model(
        float(p.radius),
        float(p.length),
        float(p.relative_permeability),
        None if groove is None else tuple(float(x) for x in groove),
        float(_panel_size(design, fineness)),
    )


@functools.lru_cache(maxsize=8)
def _cached_pole_model(radius, length, relative_permeability, groove, panel_size):
    """MagnetisedPole of a pole (radius, length [m], mu_r) with the groove (inner radius, outer
    radius, depth [m]) or None, meshed with ``panel_size`` [m]. build_panels reads only these
    fields of the pole and the ring, so they stand in for the design's dataclasses here."""
    from types import SimpleNamespace

    from models.fast.pole import MagnetisedPole, build_panels

    pole = SimpleNamespace(radius=radius, length=length)
    ring = None
    if groove is not None:
        ring = SimpleNamespace(inner_radius=groove[0], outer_radius=groove[1], depth=groove[2])
    model = MagnetisedPole(build_panels(pole, ring, panel_size=panel_size), relative_permeability)
    # Shared between callers: lock the arrays so that an accidental in-place change fails loudly.
    for a in (*vars(model.panels).values(), model.matrix, *model._lu):
        if isinstance(a, np.ndarray):
            a.setflags(write=False)
    return model


def clear_pole_cache():
    """Forget the kept pole models (``pole_model_for``), e.g. to time a cold evaluation."""
    _cached_pole_model.cache_clear()


def _part_losses(sol: CircuitSolution) -> dict:
    """Joule losses [W] of coil, ring and target of one solution (rms: |I|^2 R)."""
    loss = np.abs(sol.cell_current) ** 2 * sol.cell_resistance
    part = sol.cells.part
    return {
        "coil": float(abs(sol.coil_current) ** 2 * sol.coil_resistance),
        "ring": float(loss[part == RING].sum()),
        "target": float(loss[part == TARGET].sum()),
    }


def pole_mass(design: Design) -> float:
    """Mass of the pole's steel with the ring's groove removed [kg]."""
    p, g = design.pole, design.ring
    volume = np.pi * p.radius**2 * p.length
    if g is not None:
        volume -= np.pi * (g.outer_radius**2 - g.inner_radius**2) * g.depth
    steel = MATERIALS.get(p.material or "", MATERIALS["electrical-steel-m400"])
    return float(volume * steel.density)


def evaluate(
    design: Design, isothermal: bool = False, fineness: Fineness | None = None, pole_model=None
) -> Result:
    """Evaluate one design with the fast multi-loop model and its thermal network.

    Parameters
    ----------
    design : models.design.Design
        A validated design (``load_design``).
    isothermal : bool
        True: every part's resistivity at 20 degC (no electro-thermal coupling); the temperatures
        reported are then the network's response to the 20 degC losses. False (default): losses
        and temperatures iterated to agree (models.thermal.coupling.solve_coupled), resistivities
        rho_20 (1 + alpha (T - 20 degC)). A design without [thermal] uses
        models.design.Thermal's defaults (25 degC ambient, natural convection, continuous duty).
    fineness : Fineness, optional
        Discretisation; DEFAULT_FINENESS converges the pull to about 1 %.
    pole_model : optional
        A prebuilt magnetised-pole model (reuse across designs that share the pole geometry).

    Returns
    -------
    Result
        A thermal runaway is a result (``thermal_status`` "runaway: ...", inf temperatures,
        a warning), never an exception.

    Raises
    ------
    DesignError
        For a conductive (solid) pole: the fast model covers laminated poles only.
    """
    t_start = time.perf_counter()
    fineness = fineness or DEFAULT_FINENESS
    _check_laminated(design)
    if pole_model is None:
        pole_model = pole_model_for(design, fineness)
    state = _solve(design, fineness, pole_model, isothermal)
    sol = state.solution
    electrical = _electrical(design, sol)
    thermal, hold_tau = _thermal(design, state, electrical)
    flat = _flat_for_checks(electrical, thermal)
    warnings = range_warnings(design, sol, fineness, electrical.core_peak_flux_density_T)
    warnings += thermal_warnings(design, state, flat, hold_tau)
    return Result(
        electrical=electrical,
        thermal=thermal,
        warnings=warnings,
        n_cells=int(sol.cells.n),
        n_panels=0 if sol.panels is None else int(sol.panels.n),
        run_time_s=time.perf_counter() - t_start,
    )


def _check_laminated(design: Design) -> None:
    """Refuse a conductive (solid) pole: the fast model covers laminated poles only."""
    if not design.pole.laminated:
        raise DesignError(
            f"pole.conductivity_S_per_m = {design.pole.conductivity:.4g}: the fast model covers "
            "laminated poles only (0); check a solid pole with 'eddypull verify'"
        )


def _solve(design: Design, fineness: Fineness, pole_model, isothermal: bool):
    """Assemble the circuit and solve it with the thermal network: the coupled thermal state,
    whose ``solution`` is the circuit solution at its temperatures."""
    system = assemble_circuit(design, fineness, pole_model)
    network = build_network(design)

    def losses_at(temps):
        sol = solve_system(system, temps)
        return _part_losses(sol), sol

    coil_sensitivity = None
    if design.drive.current is not None:  # P = I^2 R(T) exactly
        a = design.coil.temperature_coefficient
        coil_sensitivity = lambda t: a / (1.0 + a * (t - 20.0))  # noqa: E731
    return solve_coupled(
        network, losses_at, coupled=not isothermal, coil_sensitivity=coil_sensitivity
    )


def _electrical(design: Design, sol: CircuitSolution) -> Electrical:
    """Pull, losses, terminal quantities and flux densities of one circuit solution."""
    split = pull_by_source(sol)
    pull = sum(split.values())
    losses = _part_losses(sol)
    z_coil = sol.coil_voltage / sol.coil_current
    ring_current = complex(sol.cell_current[sol.cells.part == RING].sum())
    ring_phase = (
        math.degrees(np.angle(ring_current / sol.coil_current)) if design.ring is not None else 0.0
    )
    b_peak = core_peak_flux_density(design, sol)
    weight = design.target.density * design.target.volume * standard_gravity
    input_power = float(np.real(sol.coil_voltage * np.conj(sol.coil_current)))
    va = abs(sol.coil_voltage) * abs(sol.coil_current)
    bsat = design.pole.saturation_flux_density
    return Electrical(
        pull_N=pull,
        pull_by_source_N=split,
        target_loss_W=losses["target"],
        ring_loss_W=losses["ring"],
        coil_loss_W=losses["coil"],
        input_power_W=input_power,
        coil_current_A=abs(sol.coil_current),
        coil_voltage_V=abs(sol.coil_voltage),
        supply_VA=va,
        coil_impedance_ohm=(float(z_coil.real), float(z_coil.imag)),
        ring_current_A=abs(ring_current),
        ring_phase_deg=ring_phase,
        core_peak_flux_density_T=b_peak,
        pole_flux_density_T=pole_flux_density(design, sol),
        target_weight_N=weight,
        lift_ratio=pull / weight,
        power_factor=input_power / va if va > 0 else 0.0,
        pole_mass_kg=pole_mass(design),
        core_flux_fraction=b_peak / bsat if bsat else 0.0,
    )


def _thermal(design: Design, state, electrical: Electrical) -> tuple[Thermal, float]:
    """The temperatures of the coupled state (and of a held part), the margins to every limit
    and the time to them; with the held part's thermal time constant [s] (negative: it runs
    away), which the warnings read."""
    t_hold, _, hold_tau = hold_temperature(state, design.thermal.hold_time)
    temps = {
        "coil": state.coil_hot_spot_C,
        "coil_mean": state.temperature("coil"),
        "core": state.temperature("core"),
        "face": state.temperature("face"),
    }
    if design.ring is not None:
        temps["ring"] = state.temperature("ring")
    temps["target"] = state.temperature("target")
    temps["target_hold"] = t_hold
    temps["ambient"] = design.thermal.ambient_C
    no_limits_yet = Thermal(
        temperatures_C=temps,
        coil_temperature_limit_C=design.thermal.coil_class_C,
        thermal_status=state.status,
        margins={},
        binding_limit="",
        time_to_limit_s={},
        thermal_time_constants_s=[],
    )
    margins, binding, times, taus = limits_and_margins(
        design, state, _flat_for_checks(electrical, no_limits_yet)
    )
    thermal = dataclasses.replace(
        no_limits_yet,
        margins=margins,
        binding_limit=binding,
        time_to_limit_s=times,
        thermal_time_constants_s=[float(x) for x in taus],
    )
    return thermal, hold_tau


def _flat_for_checks(electrical: Electrical, thermal: Thermal) -> dict:
    """The flat values the limit checks read (models.checks)."""
    return {
        "coil_temperature_C": thermal.coil_temperature_C,
        "ring_temperature_C": thermal.ring_temperature_C,
        "target_hold_temperature_C": thermal.target_hold_temperature_C,
        "core_peak_flux_density_T": electrical.core_peak_flux_density_T,
        "core_flux_fraction": electrical.core_flux_fraction,
        "coil_voltage_V": electrical.coil_voltage_V,
        "coil_current_A": electrical.coil_current_A,
        "supply_VA": electrical.supply_VA,
    }
