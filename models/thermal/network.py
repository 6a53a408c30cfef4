"""Lumped thermal network of a shaded-pole magnet, coupled to the electrical losses.

Nodes: the coil (its mean winding temperature, which sets its resistance), the core (the pole's
mean temperature), the face (a slab of steel at the pole face, around the ring's groove), the ring
(if any) and the target. Conductances come from the geometry and the materials' thermal
conductivities; every outer surface loses heat to the ambient air by natural convection
(Churchill-Chu and the horizontal-plate correlations, air properties at the film temperature) or
a given coefficient, and by radiation when an emissivity is given. The target exchanges heat with
the face and the ring across the air gap (conduction through the still air layer, radiation).

Temperatures are in degC, everything else SI. The electrical side enters through a callback
(``losses_at``) so that this module does not depend on the circuit: models.evaluate passes one
that re-solves the assembled loop equations at new resistances.

Assumptions (each said again where it is used):

* the magnet is held by nothing that conducts heat (no mounting plate): conservative;
* iron losses of the laminated pole are not modelled (the linear model has none);
* the air gap is a still layer (conduction only), true for a face-down magnet (stable layer) and
  for gaps of a few mm (Rayleigh number below 1708, Incropera section 9.8);
* a duty cycle is replaced by its average losses (the period short next to the time constants;
  a warning says when it is not);
* a part is held at the gap ``target.gap`` for ``hold_time``, arriving at ambient temperature,
  with the magnet on and its other parts at their duty-averaged steady state.

Worked example (the demo design, studies/demo_design.toml, with this [thermal] and [supply])::

    [thermal]                                 [supply]
    duty_cycle = 0.1                          max_voltage_V = 120.0
    period_s = 10.0                           max_current_A = 10.0
    hold_time_s = 5.0                         max_VA = 600.0
    emissivity = 0.9
    coil_insulation_class = "F"
    target_limit_C = 60.0
    ring_limit_C = 150.0

At 20 degC the 6 A coil loses 37.82 W (R = 1.051 Ohm), the ring 1.535 W, the target 0.175 W.
Coupled (5 electrical solves): the coil's mean settles at 65.75 degC, so its loss is
37.82 x (1 + 0.00393 x 45.75) = 44.62 W on, 4.46 W averaged over the 10 % duty; the ring 1.606 W,
the target 0.168 W. Temperatures: coil hot spot 67.1 degC (mean + 1.4 K inside the winding),
core 63.7, face 63.4, ring 63.5, target 41.8 at steady state, a part held 5 s from 25 degC
30.6 degC. Supply: 83.6 V rms, 6 A, 501.5 VA, power factor 0.093. Margins: coil 87.9 K (class F,
155 degC), ring 86.5 K, held part 29.4 K, core flux 0.91 T (0.59 of 1.5 T), voltage 36.4 V,
current 4 A, apparent power 98.5 VA. Binding: the apparent power (98.5 / 600 = 16 % left; the
coil has 87.9 / 130 = 68 % of its allowed rise left). Run continuously from cold the coil's hot
spot reaches 155 degC in 3.4 min, the ring 150 degC in 5.7 min, a held part 60 degC in 74 s.
Pull 3.18 mN against 3.32 mN at 20 degC (-4 %: the hotter ring carries less current). The same
design at continuous duty (no [thermal]) is a runaway: its coil would pass 400 degC.

References
----------
Incropera, DeWitt, Bergman, Lavine, *Fundamentals of Heat and Mass Transfer*, 6th/7th ed.:
eq. 9.26-9.27 (Churchill-Chu, vertical plate), 9.30-9.32 (horizontal plates), 9.34 (Churchill-Chu,
horizontal cylinder), 5.6 (lumped capacitance), Table A.4 (air).
Churchill and Chu, Int. J. Heat Mass Transfer 18 (1975) 1323-1329 and 1049-1053.
White, *Viscous Fluid Flow*, Table 1-2 (Sutherland's law for air).
Mellor, Roberts and Turner, IEE Proc. B 138 (1991) 205-218 (lumped thermal model of a machine).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy.constants import R as GAS_CONSTANT
from scipy.constants import atm, g, zero_Celsius
from scipy.constants import sigma as STEFAN_BOLTZMANN

from models.materials import (
    BOBBIN_THERMAL_CONDUCTIVITY,
    COIL_MAX_TEMPERATURE_C,
    IMPREGNANT_THERMAL_CONDUCTIVITY,
    MATERIALS,
    UNNAMED_CONDUCTOR,
)

__all__ = [
    "air_properties",
    "churchill_chu_vertical",
    "churchill_chu_cylinder",
    "horizontal_plate_up",
    "horizontal_plate_down",
    "natural_convection_coefficient",
    "radiation_coefficient",
    "winding_conductivity",
    "lumped_temperature",
    "ThermalNetwork",
    "ThermalState",
    "build_network",
    "solve_coupled",
    "hold_temperature",
    "time_to_limits",
]

#: Molar mass of dry air [kg/mol] (ISO 2533 standard atmosphere, from memory).
_AIR_MOLAR_MASS = 0.0289644
#: Specific heat of air at 1 atm [J/(kg K)] against temperature [K] (Incropera Table A.4, from
#: memory).
_AIR_CP = (
    np.array([250.0, 300.0, 350.0, 400.0, 450.0, 500.0, 600.0, 800.0, 1000.0]),
    np.array([1006.0, 1007.0, 1009.0, 1014.0, 1021.0, 1030.0, 1051.0, 1099.0, 1141.0]),
)
#: Surface kinds of the convection correlations.
VERTICAL, CYLINDER, UP, DOWN = 0, 1, 2, 3


# ----------------------------------------------------------------------------------------------
# Air and the correlations


def air_properties(temperature_K):
    """Properties of dry air at 1 atm.

    Parameters
    ----------
    temperature_K : float or array
        Temperature [K].

    Returns
    -------
    (k, nu, alpha, Pr, beta)
        Thermal conductivity [W/(m K)], kinematic viscosity [m^2/s], thermal diffusivity [m^2/s],
        Prandtl number [-], expansion coefficient 1/T of an ideal gas [1/K].

    Notes
    -----
    Viscosity and conductivity by Sutherland's law (White, Viscous Fluid Flow, Table 1-2: air
    mu_0 = 1.716e-5 Pa s, S = 110.4 K; k_0 = 0.0241 W/(m K), S = 194 K, both at 273.15 K), density
    of an ideal gas, c_p from Incropera Table A.4. Within about 2 % of Table A.4 from 250 to 600 K.
    """
    T = np.asarray(temperature_K, dtype=float)
    t0 = zero_Celsius
    mu = 1.716e-5 * (T / t0) ** 1.5 * (t0 + 110.4) / (T + 110.4)
    k = 0.0241 * (T / t0) ** 1.5 * (t0 + 194.0) / (T + 194.0)
    rho = atm * _AIR_MOLAR_MASS / (GAS_CONSTANT * T)
    cp = np.interp(T, *_AIR_CP)
    nu = mu / rho
    alpha = k / (rho * cp)
    return k, nu, alpha, nu / alpha, 1.0 / T


def churchill_chu_vertical(rayleigh, prandtl):
    """Mean Nusselt number of a vertical plate (or a vertical cylinder thick enough), all Ra.

    Nu_L = {0.825 + 0.387 Ra_L^(1/6) / [1 + (0.492/Pr)^(9/16)]^(8/27)}^2
    (Churchill and Chu 1975; Incropera eq. 9.26).
    """
    psi = (1.0 + (0.492 / prandtl) ** (9.0 / 16.0)) ** (8.0 / 27.0)
    return (0.825 + 0.387 * np.asarray(rayleigh, dtype=float) ** (1.0 / 6.0) / psi) ** 2


def churchill_chu_cylinder(rayleigh, prandtl):
    """Mean Nusselt number of a long horizontal cylinder, Ra_D <= 1e12.

    Nu_D = {0.60 + 0.387 Ra_D^(1/6) / [1 + (0.559/Pr)^(9/16)]^(8/27)}^2
    (Churchill and Chu 1975; Incropera eq. 9.34).
    """
    psi = (1.0 + (0.559 / prandtl) ** (9.0 / 16.0)) ** (8.0 / 27.0)
    return (0.60 + 0.387 * np.asarray(rayleigh, dtype=float) ** (1.0 / 6.0) / psi) ** 2


#: Conduction limit of a small plate in still air: an isothermal disc of diameter D in an infinite
#: medium has the shape factor 2D for its two faces (Incropera Table 4.1), so Nu = 1/pi on the
#: length L = A/P = D/4 of one face. Floors the plate correlations at small Ra.
_PLATE_CONDUCTION_NU = 1.0 / math.pi


def horizontal_plate_up(rayleigh):
    """Nusselt number on L = A/P of the upper face of a hot plate (or lower face of a cold one).

    Nu = 0.54 Ra^(1/4) for Ra <= 1e7, 0.15 Ra^(1/3) above (Incropera eq. 9.30-9.31, stated for
    1e4 to 1e11; used below 1e4 down to the conduction limit of a disc, 1/pi).
    """
    ra = np.asarray(rayleigh, dtype=float)
    nu = np.where(ra <= 1e7, 0.54 * ra**0.25, 0.15 * np.cbrt(ra))
    return np.maximum(nu, _PLATE_CONDUCTION_NU)


def horizontal_plate_down(rayleigh):
    """Nusselt number on L = A/P of the lower face of a hot plate (or upper face of a cold one).

    Nu = 0.52 Ra^(1/5) (Incropera 7th ed. eq. 9.32, stated for 1e4 to 1e9; used below 1e4 down to
    the conduction limit of a disc, 1/pi).
    """
    ra = np.asarray(rayleigh, dtype=float)
    return np.maximum(0.52 * ra**0.2, _PLATE_CONDUCTION_NU)


def natural_convection_coefficient(kind, length, surface_C, ambient_C):
    """Mean natural-convection coefficient of surfaces [W/(m^2 K)], air at the film temperature.

    Parameters
    ----------
    kind : int or int array
        VERTICAL (plate or thick vertical cylinder; ``length`` = height), CYLINDER (horizontal;
        ``length`` = diameter), UP or DOWN (horizontal plate facing up or down; ``length`` = area /
        perimeter).
    length : float or array
        Characteristic length [m].
    surface_C, ambient_C : float or array
        Temperatures [degC].

    Notes
    -----
    Ra_L = g beta |T_s - T_inf| L^3 / (nu alpha), properties at (T_s + T_inf) / 2 (Incropera
    eq. 9.25). A hot surface facing up and a cold one facing down share a correlation.
    """
    ts = np.asarray(surface_C, dtype=float) + zero_Celsius
    ta = np.asarray(ambient_C, dtype=float) + zero_Celsius
    k, nu, alpha, pr, beta = air_properties(0.5 * (ts + ta))
    L = np.asarray(length, dtype=float)
    ra = g * beta * np.maximum(np.abs(ts - ta), 1e-6) * L**3 / (nu * alpha)
    kind = np.asarray(kind)
    hot = ts >= ta
    plume_up = np.where(hot, kind == UP, kind == DOWN)
    nusselt = np.where(
        kind == VERTICAL,
        churchill_chu_vertical(ra, pr),
        np.where(
            kind == CYLINDER,
            churchill_chu_cylinder(ra, pr),
            np.where(plume_up, horizontal_plate_up(ra), horizontal_plate_down(ra)),
        ),
    )
    return nusselt * k / L


def radiation_coefficient(emissivity, surface_C, ambient_C):
    """Linearised radiation coefficient to large surroundings [W/(m^2 K)].

    h_r = eps sigma (T_s^2 + T_inf^2)(T_s + T_inf), temperatures in K (Incropera eq. 1.9).
    """
    ts = np.asarray(surface_C, dtype=float) + zero_Celsius
    ta = np.asarray(ambient_C, dtype=float) + zero_Celsius
    return emissivity * STEFAN_BOLTZMANN * (ts * ts + ta * ta) * (ts + ta)


def winding_conductivity(fill_factor, wire_conductivity, impregnant_conductivity):
    """Effective thermal conductivity of a winding across its wires [W/(m K)].

    k = k_i [(1 + f) k_w + (1 - f) k_i] / [(1 - f) k_w + (1 + f) k_i] for a copper fill factor f:
    the Maxwell-Garnett / Rayleigh result for parallel cylinders in a matrix, heat across them
    (the Hashin-Shtrikman lower bound in two dimensions); Hashin and Shtrikman, J. Appl. Phys. 33
    (1962) 3125, from memory.
    """
    f, kw, ki = fill_factor, wire_conductivity, impregnant_conductivity
    return ki * ((1.0 + f) * kw + (1.0 - f) * ki) / ((1.0 - f) * kw + (1.0 + f) * ki)


def lumped_temperature(t, initial_C, final_C, time_constant):
    """Lumped-capacitance temperature [degC] at time ``t`` [s]:
    T(t) = T_inf + (T_0 - T_inf) exp(-t / tau) (Incropera eq. 5.6 with a source; tau < 0 is a
    runaway that grows exponentially)."""
    with np.errstate(over="ignore"):  # a runaway past the float range is inf, as it should be
        return final_C + (initial_C - final_C) * np.exp(-np.asarray(t, dtype=float) / time_constant)


# ----------------------------------------------------------------------------------------------
# The network


@dataclass
class ThermalNetwork:
    """Lumped network of one design (SI; temperatures in degC).

    nodes : node names; capacity : heat capacity of each node [J/K]; links : (i, j, G [W/K])
    fixed conductances; gap_links : (i, j, area [m^2]) exchanges across the air gap; surfaces :
    node, area [m^2], kind, length [m] and internal resistance [K/W] of each outer surface;
    ceiling_C : material limit of each node (models.materials.Material.max_temperature_C);
    ceiling_why : its words; hot_spot_factor : coil hot spot minus mean per watt of coil loss
    [K/W]; gap : air gap [m].
    """

    nodes: list
    capacity: np.ndarray
    links: list
    gap_links: list
    surf_node: np.ndarray
    surf_area: np.ndarray
    surf_kind: np.ndarray
    surf_length: np.ndarray
    surf_rint: np.ndarray
    ceiling_C: np.ndarray
    ceiling_why: list
    hot_spot_factor: float
    gap: float
    thermal: object
    notes: list = field(default_factory=list)

    def index(self, name: str) -> int:
        return self.nodes.index(name)

    # -- conductances at a temperature state
    def surface_conductance(self, T):
        """Conductance of each outer surface to the ambient [W/K] at node temperatures ``T``
        (shape (..., n_nodes)), with the surface temperature found from its internal resistance
        in series (two passes)."""
        th = self.thermal
        ta = th.ambient_C
        tn = np.asarray(T)[..., self.surf_node]
        ts = tn.copy()
        for _ in range(2):
            if th.convection is not None:
                h = np.full_like(ts, th.convection)
            else:
                h = natural_convection_coefficient(self.surf_kind, self.surf_length, ts, ta)
            if th.emissivity > 0:
                h = h + radiation_coefficient(th.emissivity, ts, ta)
            r_surf = 1.0 / (h * self.surf_area)
            ts = ta + (tn - ta) * r_surf / (r_surf + self.surf_rint)
        return 1.0 / (r_surf + self.surf_rint)

    def matrix(self, T, g_surf=None):
        """(A, b): heat out of each node A @ T - b [W] at node temperatures ``T`` (conductances
        frozen at ``T``); b holds the ambient terms."""
        n = len(self.nodes)
        A = np.zeros((n, n))
        for i, j, G in self.links:
            A[i, i] += G
            A[j, j] += G
            A[i, j] -= G
            A[j, i] -= G
        for i, j, G in self.gap_conductances(T):
            A[i, i] += G
            A[j, j] += G
            A[i, j] -= G
            A[j, i] -= G
        if g_surf is None:
            g_surf = self.surface_conductance(T)
        g_node = np.bincount(self.surf_node, weights=g_surf, minlength=n)
        A[np.diag_indices(n)] += g_node
        return A, g_node * self.thermal.ambient_C

    def gap_conductances(self, T):
        """(i, j, G [W/K]) across the air gap: conduction k_air / gap through the still layer at
        the mean temperature, plus radiation between grey parallel plates of equal emissivity,
        eps_eff = eps / (2 - eps) (Incropera eq. 13.24)."""
        out = []
        eps = self.thermal.emissivity
        for i, j, area in self.gap_links:
            tm = 0.5 * (T[i] + T[j])
            k_air = float(air_properties(tm + zero_Celsius)[0])
            h = k_air / self.gap
            if eps > 0:
                h += float(radiation_coefficient(eps / (2.0 - eps), T[i], T[j]))
            out.append((i, j, h * area))
        return out

    def heat_out(self, T):
        """Heat leaving each node [W] at temperatures ``T`` (to its neighbours and the air)."""
        A, b = self.matrix(T)
        return A @ T - b

    def jacobian(self, T):
        """d(heat out)/dT [W/K]: the conductance matrix plus the change of the surface
        coefficients with temperature (one-sided difference of 0.01 K, 1e-4 of a typical rise)."""
        dt = 0.01
        # A node's surfaces depend on its own temperature only: one call for all nodes moved.
        g0, g1 = self.surface_conductance(np.stack([T, T + dt]))
        A, b = self.matrix(T, g0)
        q0 = A @ T - b
        rise = T[self.surf_node] - self.thermal.ambient_C
        dg = ((rise + dt) * g1 - rise * g0) / dt - g0
        J = A.copy()
        J[np.diag_indices(len(T))] += np.bincount(self.surf_node, weights=dg, minlength=len(T))
        return J, q0, A, b


def _annulus_overlap(a0, a1, b0, b1):
    """Area of the overlap of the annuli a0 <= r <= a1 and b0 <= r <= b1 [m^2]."""
    lo, hi = max(a0, b0), min(a1, b1)
    return math.pi * (hi * hi - lo * lo) if hi > lo else 0.0


def _thermal_props(material_name, fallback):
    """(density, specific heat, thermal conductivity, ceiling, why) of a named library material,
    or the fallback's (None when the material is not named)."""
    if material_name is not None and material_name in MATERIALS:
        m = MATERIALS[material_name]
        why = (
            f"{m.name} Curie temperature" if m.is_magnetic else f"{m.name} starts to melt (solidus)"
        )
        return m.density, m.specific_heat, m.thermal_conductivity, m.max_temperature_C, why
    return fallback


def build_network(design) -> ThermalNetwork:
    """The lumped thermal network of ``design`` (models.design.Design, SI).

    Notes
    -----
    * Coil: a winding of effective conductivity ``winding_conductivity`` (copper fill factor =
      turns x wire area / window). From its mean-temperature node to each face the resistance is a
      third of the conduction resistance over half the winding's thickness: the mean of a parabolic
      profile with uniform heating (Mellor et al. 1991; for a slab cooled on both faces it gives
      T_mean - T_s = q t^2 / (12 k), exact). Inward it continues through the bobbin (the
      clearance between pole and coil, BOBBIN_THERMAL_CONDUCTIVITY) and the core's mean-temperature
      resistance 1 / (8 pi k L) (a solid cylinder with uniform heating). Its hot spot lies
      q t^2 / (24 k) above its mean, t the smaller of its radial and axial build (1-D slab: an
      upper bound of the 2-D rise).
    * Core and face: the pole is split into a face slab (the groove depth, at least a tenth and
      at most half of the pole unless the groove is deeper) and the core behind it, joined through k A / (t_f / 2 + L_c / 3)
      (the mean of a rod heated along its length and cooled at one end lies L / (3 k A) above it).
      The pole's side between coil and face belongs to the face, the rest of its side and its back
      to the core. No heat leaves through a mounting (conservative).
    * Ring: contact conductance over the groove's walls and bottom to the face; its exposed face
      to the air or, where the target covers it, across the gap to the target.
    * Target: across the gap to the face and the ring where it covers them; the rest of its
      surfaces to the air. Lumped (its Biot number is small: a metal part of a few mm).
    """
    th = design.thermal
    p, c, t, ring = design.pole, design.coil, design.target, design.ring
    face_down = th.orientation == "face-down"
    horizontal = th.orientation == "horizontal"
    toward_face = DOWN if face_down else UP  # a surface looking the way the face looks
    away = UP if face_down else DOWN

    def plate(kind_if_vertical_axis, height):
        """Kind and length of an end face: horizontal plate, or vertical plate of this height."""
        return (VERTICAL, height) if horizontal else (kind_if_vertical_axis, None)

    steel = _thermal_props(
        p.material, _thermal_props("electrical-steel-m400", None)
    )  # a pole given by mu_r only takes the laminated steel's thermal values
    rho_fe, c_fe, k_fe, ceil_fe, why_fe = steel
    unnamed = (
        UNNAMED_CONDUCTOR["volumetric_heat_capacity"],
        1.0,
        None,
        UNNAMED_CONDUCTOR["max_temperature_C"],
        "an unnamed conductor taken as aluminium starts to melt",
    )
    notes = []

    nodes = ["coil", "core", "face"] + (["ring"] if ring is not None else []) + ["target"]
    ix = {n: i for i, n in enumerate(nodes)}
    cap = np.zeros(len(nodes))
    ceiling = np.full(len(nodes), np.inf)
    why = [""] * len(nodes)
    links = []
    gap_links = []
    surfaces = []  # (node, area, kind, length, r_int)

    # --- coil
    wire = MATERIALS.get(c.material, MATERIALS["copper"])
    build_r = c.outer_radius - c.inner_radius
    fill = min(c.turns * c.wire_area / c.window_area, 0.9069)  # hexagonal packing at most
    k_w = th.winding_conductivity or winding_conductivity(
        fill, wire.thermal_conductivity, IMPREGNANT_THERMAL_CONDUCTIVITY
    )
    r_m = c.mean_radius
    lc = c.length
    cap[ix["coil"]] = c.turns * 2 * math.pi * r_m * c.wire_area * wire.density * wire.specific_heat
    ceiling[ix["coil"]] = min(COIL_MAX_TEMPERATURE_C, wire.max_temperature_C or math.inf)
    why[ix["coil"]] = "the winding's insulation decomposes"
    r_in = math.log(r_m / c.inner_radius) / (2 * math.pi * k_w * lc) / 3.0
    r_out = math.log(c.outer_radius / r_m) / (2 * math.pi * k_w * lc) / 3.0
    a_end = math.pi * (c.outer_radius**2 - c.inner_radius**2)
    r_end = (lc / 2) / (k_w * a_end) / 3.0
    r_bobbin = (
        math.log(c.inner_radius / p.radius) / (2 * math.pi * BOBBIN_THERMAL_CONDUCTIVITY * lc)
        if c.inner_radius > p.radius
        else 0.0
    )
    r_core_side = 1.0 / (8 * math.pi * k_fe * lc)
    links.append((ix["coil"], ix["core"], 1.0 / (r_in + r_bobbin + r_core_side)))
    side_kind, side_len = (CYLINDER, 2 * c.outer_radius) if horizontal else (VERTICAL, lc)
    surfaces.append((ix["coil"], 2 * math.pi * c.outer_radius * lc, side_kind, side_len, r_out))
    end_len = build_r / 2  # area / perimeter of an annulus
    for kind in (toward_face, away):
        k_, length = plate(kind, 2 * c.outer_radius)
        surfaces.append((ix["coil"], a_end, k_, length or end_len, r_end))
    volume = 2 * math.pi * r_m * c.window_area
    hot_spot_factor = min(build_r, lc) ** 2 / (24 * k_w * volume)

    # --- pole: face slab and core
    area_p = math.pi * p.radius**2
    depth = ring.depth if ring is not None else 0.0
    # at least the groove (whose volume it loses), else a tenth to half of the pole; the core
    # keeps the rest (the groove is shallower than the pole, models.design)
    t_f = max(min(max(depth, 0.1 * p.length), 0.5 * p.length), depth)
    l_core = p.length - t_f
    groove = (
        0.0 if ring is None else math.pi * (ring.outer_radius**2 - ring.inner_radius**2) * depth
    )
    cap[ix["face"]] = (area_p * t_f - groove) * rho_fe * c_fe
    cap[ix["core"]] = area_p * l_core * rho_fe * c_fe
    ceiling[ix["face"]] = ceiling[ix["core"]] = ceil_fe
    why[ix["face"]] = why[ix["core"]] = why_fe
    links.append((ix["face"], ix["core"], k_fe * area_p / (t_f / 2 + l_core / 3)))
    r_back = l_core / (3 * k_fe * area_p)
    k_, length = plate(away, 2 * p.radius)
    surfaces.append((ix["core"], area_p, k_, length or p.radius / 2, r_back))
    back_strip = p.length - c.setback - c.length
    side_kind = CYLINDER if horizontal else VERTICAL
    if back_strip > 0:
        length = 2 * p.radius if horizontal else back_strip
        surfaces.append((ix["core"], 2 * math.pi * p.radius * back_strip, side_kind, length, 0.0))
    if c.setback > 0:
        length = 2 * p.radius if horizontal else c.setback
        surfaces.append((ix["face"], 2 * math.pi * p.radius * c.setback, side_kind, length, 0.0))

    # --- the face: steel annuli, ring annulus, and what the target covers
    tgt = (t.inner_radius, t.radius)
    steel_annuli = (
        [(0.0, p.radius)]
        if ring is None
        else [(0.0, ring.inner_radius), (ring.outer_radius, p.radius)]
    )
    covered_steel = sum(_annulus_overlap(a, b, *tgt) for a, b in steel_annuli)
    exposed_steel = sum(math.pi * (b * b - a * a) for a, b in steel_annuli) - covered_steel
    k_, length = plate(toward_face, 2 * p.radius)
    if exposed_steel > 0:
        surfaces.append((ix["face"], exposed_steel, k_, length or p.radius / 2, 0.0))
    if covered_steel > 0:
        gap_links.append((ix["face"], ix["target"], covered_steel))
    covered_ring = 0.0
    if ring is not None:
        rho_r, c_r, _, ceil_r, why_r = _thermal_props(ring.material, unnamed)
        if ring.material is None:
            notes.append("ring material not named: heat capacity and melting as aluminium's")
        v_ring = math.pi * (ring.outer_radius**2 - ring.inner_radius**2) * ring.depth
        cap[ix["ring"]] = v_ring * rho_r * c_r
        ceiling[ix["ring"]] = ceil_r
        why[ix["ring"]] = why_r
        contact = 2 * math.pi * (ring.inner_radius + ring.outer_radius) * ring.depth + math.pi * (
            ring.outer_radius**2 - ring.inner_radius**2
        )
        links.append((ix["ring"], ix["face"], th.ring_contact_conductance * contact))
        covered_ring = _annulus_overlap(ring.inner_radius, ring.outer_radius, *tgt)
        exposed_ring = math.pi * (ring.outer_radius**2 - ring.inner_radius**2) - covered_ring
        if exposed_ring > 0:
            k_, length = plate(toward_face, 2 * ring.outer_radius)
            surfaces.append((ix["ring"], exposed_ring, k_, length or ring.width / 2, 0.0))
        if covered_ring > 0:
            gap_links.append((ix["ring"], ix["target"], covered_ring))

    # --- target
    rho_t, c_t, _, ceil_t, why_t = _thermal_props(t.material, unnamed)
    if t.material is None:
        notes.append("target material not named: heat capacity and melting as aluminium's")
        rho_t, c_t = t.density, UNNAMED_CONDUCTOR["volumetric_heat_capacity"] / t.density
    cap[ix["target"]] = t.volume * rho_t * c_t
    ceiling[ix["target"]] = ceil_t
    why[ix["target"]] = why_t
    a_t = math.pi * (t.radius**2 - t.inner_radius**2)
    half_width = (t.radius - t.inner_radius) / 2
    # its far side looks the way the face looks; its near side (where not across the gap) back
    k_, length = plate(toward_face, 2 * t.radius)
    surfaces.append((ix["target"], a_t, k_, length or half_width, 0.0))
    uncovered = a_t - covered_steel - covered_ring
    if uncovered > 1e-12 * a_t:
        k_, length = plate(away, 2 * t.radius)
        surfaces.append((ix["target"], uncovered, k_, length or half_width, 0.0))
    rim_kind, rim_len = (CYLINDER, 2 * t.radius) if horizontal else (VERTICAL, t.thickness)
    surfaces.append((ix["target"], 2 * math.pi * t.radius * t.thickness, rim_kind, rim_len, 0.0))

    s = list(zip(*surfaces, strict=True))
    return ThermalNetwork(
        nodes=nodes,
        capacity=cap,
        links=links,
        gap_links=gap_links,
        surf_node=np.array(s[0], dtype=int),
        surf_area=np.array(s[1], dtype=float),
        surf_kind=np.array(s[2], dtype=int),
        surf_length=np.array(s[3], dtype=float),
        surf_rint=np.array(s[4], dtype=float),
        ceiling_C=ceiling,
        ceiling_why=why,
        hot_spot_factor=hot_spot_factor,
        gap=t.gap,
        thermal=th,
        notes=notes,
    )


# ----------------------------------------------------------------------------------------------
# Electro-thermal coupling


@dataclass
class ThermalState:
    """Steady state of the network (duty-averaged losses) and how it was found.

    T : node temperatures [degC] (math.inf for every node after a runaway); coil_hot_spot_C;
    status : "isothermal", "converged" or "runaway: <why>"; iterations : electrical solves;
    losses_on : on-state loss of each node at T [W]; sensitivity : d ln(loss) / dT of each node
    [1/K] (0 when isothermal); solution : the last electrical solution (at T, or at the last
    iterate of a runaway); T_last : that iterate [degC].
    """

    network: ThermalNetwork
    T: np.ndarray
    coil_hot_spot_C: float
    status: str
    iterations: int
    losses_on: np.ndarray
    sensitivity: np.ndarray
    solution: object
    T_last: np.ndarray

    def temperature(self, node: str) -> float:
        return float(self.T[self.network.index(node)])


_LOSS_NODES = ("coil", "ring", "target")


def _losses_vector(network, losses: dict) -> np.ndarray:
    P = np.zeros(len(network.nodes))
    for name in _LOSS_NODES:
        if name in network.nodes:
            P[network.index(name)] = losses.get(name, 0.0)
    return P


def _temps_dict(network, T) -> dict:
    return {name: float(T[network.index(name)]) for name in _LOSS_NODES if name in network.nodes}


def solve_coupled(
    network: ThermalNetwork,
    losses_at,
    coupled: bool = True,
    coil_sensitivity=None,
    max_iterations: int = 40,
    tolerance_K: float = 0.01,
) -> ThermalState:
    """Temperatures and losses that agree with each other, at the duty-averaged losses.

    Parameters
    ----------
    network : ThermalNetwork
    losses_at : callable
        ``losses_at({"coil": T, "ring": T, "target": T}) -> (losses, solution)``: on-state losses
        [W] by part at those temperatures [degC] (resistivity rho_20 (1 + alpha (T - 20))) and the
        electrical solution behind them.
    coupled : bool
        False: the losses at 20 degC (one call) heat the network, with no feedback (isothermal
        electrical model).
    coil_sensitivity : callable, optional
        d ln(coil loss) / dT [1/K] at a coil temperature, when known in closed form (current
        drive: alpha / (1 + alpha (T - 20))); otherwise it is found by secant like the others.
    max_iterations : int
        Electrical solves at most before giving up (reported as a runaway, never an exception).
    tolerance_K : float
        Largest temperature change of the last step [K]; 0.01 K changes a copper resistance by
        4e-5, far below the model's accuracy.

    Notes
    -----
    Newton's method on F(T) = heat_out(T) - D P(T) (D the duty cycle): the Jacobian is the
    network's (conductances and the change of the surface coefficients with temperature) minus
    D diag(P s), with s = d ln P / dT by secant between iterates (the coil's in closed form under
    current drive). Each step re-solves the electrical model once. A node pushed past its
    material limit (``ceiling_C``) is held there; held three steps in a row, its steady state lies
    above the limit: a runaway. The part temperatures never fall below the ambient (all losses
    are >= 0).
    """
    th = network.thermal
    n = len(network.nodes)
    ta = th.ambient_C
    D = th.duty_cycle if coupled else 1.0
    duty = th.duty_cycle
    T = np.full(n, float(ta))
    s = np.zeros(n)
    i_coil = network.index("coil")
    held = np.zeros(n, dtype=int)
    if not coupled:
        losses, solution = losses_at({"coil": 20.0, "ring": 20.0, "target": 20.0})
        P = _losses_vector(network, losses) * duty
    T_prev = P_prev = None
    status = None
    iterations = 0
    for _ in range(max_iterations):
        if coupled:
            losses, solution = losses_at(_temps_dict(network, T))
            iterations += 1
            P = _losses_vector(network, losses)
            if P_prev is not None:
                dT = T - T_prev
                ok = (np.abs(dT) > 1e-6) & (P > 0)
                s[ok] = (P[ok] - P_prev[ok]) / (P[ok] * dT[ok])
            if coil_sensitivity is not None:
                s[i_coil] = coil_sensitivity(T[i_coil])
        J, q, A, b = network.jacobian(T)
        F = q - D * P
        Jt = J - np.diag(D * P * s)
        try:
            if np.linalg.eigvalsh(0.5 * (Jt + Jt.T))[0] > 0:
                step = np.linalg.solve(Jt, -F)  # Newton
            else:
                # Losses grow faster than the cooling at this temperature: Newton would step
                # the wrong way. A fixed-point step (conductances and losses frozen) always
                # moves toward the balance.
                step = np.linalg.solve(A, D * P + b) - T
        except np.linalg.LinAlgError:
            step = np.full(n, np.inf)
        if not np.all(np.isfinite(step)):
            status = "runaway: the heat balance has no solution (losses grow as fast as cooling)"
            break
        if np.max(np.abs(step)) < tolerance_K:
            status = "converged" if coupled else "isothermal"
            break
        T_new = np.maximum(T + step, ta)
        if coupled:
            over = T_new > network.ceiling_C
            held = np.where(over, held + 1, 0)
            T_new = np.minimum(T_new, network.ceiling_C)
            if held.max() >= 3:
                k = int(np.argmax(held))
                status = (
                    f"runaway: the {network.nodes[k]} would pass {network.ceiling_C[k]:.0f} degC "
                    f"({network.ceiling_why[k]}); no steady state below it"
                )
                break
        T_prev, P_prev = T, P
        T = T_new
    else:
        status = (
            f"runaway: no consistent temperatures in {max_iterations} iterations "
            f"(last change {np.max(np.abs(step)):.3g} K)"
        )
    if not coupled and status is None:
        status = "isothermal"
    hot = float(T[i_coil] + network.hot_spot_factor * D * P[i_coil])
    T_last = T.copy()
    if status.startswith("runaway"):
        T = np.full(n, math.inf)
        hot = math.inf
    return ThermalState(
        network=network,
        T=T,
        coil_hot_spot_C=hot,
        status=status,
        iterations=iterations if coupled else 1,
        losses_on=P / duty if not coupled else P,
        sensitivity=s,
        solution=solution,
        T_last=T_last,
    )


def hold_temperature(state: ThermalState, hold_time: float):
    """Temperature of a part held for ``hold_time`` [s], arriving at ambient temperature.

    Returns
    -------
    (T_hold, T_final, tau)
        Temperature at the end of the hold [degC], the temperature it tends to [degC] and the
        time constant [s] (negative: it runs away exponentially).

    Notes
    -----
    Lumped capacitance (Incropera eq. 5.6 with a source): C dT/dt = P(T) + sum G_j (T_j - T),
    the magnet on (on-state losses) and its other parts at their duty-averaged steady state,
    conductances at the steady state, the part's own loss linear in its temperature about the
    steady state, P(T) = P* (1 + s (T - T*)). Then T(t) = T_f + (T_0 - T_f) exp(-t / tau) with
    tau = C / (G - P* s) and T_f = (P* (1 - s T*) + sum G_j T_j) / (G - P* s).
    """
    net = state.network
    if not np.all(np.isfinite(state.T)):
        return math.inf, math.inf, math.nan
    i = net.index("target")
    T = state.T
    A, b = net.matrix(T)
    G = A[i, i]
    drive = b[i] - sum(A[i, j] * T[j] for j in range(len(T)) if j != i)
    P, s = state.losses_on[i], state.sensitivity[i]
    beta = G - P * s
    a = P * (1.0 - s * T[i]) + drive
    C = net.capacity[i]
    ta = net.thermal.ambient_C
    if abs(beta) < 1e-15 * G:
        return float(ta + a * hold_time / C), math.inf, math.inf
    t_final, tau = a / beta, C / beta
    return float(lumped_temperature(hold_time, ta, t_final, tau)), float(t_final), float(tau)


def time_to_limits(state: ThermalState, limits: dict):
    """Seconds from cold (all at ambient) until each part reaches its limit, run continuously.

    Parameters
    ----------
    state : ThermalState
        The steady state about which losses and conductances are linearised (the last iterate
        of a runaway).
    limits : dict
        Node name -> limit [degC]; "coil" is its hot spot.

    Returns
    -------
    (times, time_constants)
        dict node -> seconds (math.inf if the limit is never reached); the network's time
        constants [s], shortest first (negative ones grow).

    Notes
    -----
    C dT/dt = P(T) - (A T - b) with A, b the network at the steady state (exact at ambient and at
    the steady state: heat out is 0 at ambient), P(T) = P* (1 + s (T - T*)) on-state. Symmetric
    form y = C^(1/2) T: the modes of C^(-1/2) (A - diag(P* s)) C^(-1/2), each
    z(t) = z0 exp(-l t) + f (1 - exp(-l t)) / l. The first crossing is found on a logarithmic grid
    and refined on 64 points inside the bracket with linear interpolation (better than 1e-4 of the time).
    """
    net = state.network
    T_star = state.T if np.all(np.isfinite(state.T)) else state.T_last
    A, b = net.matrix(T_star)
    P, s = state.losses_on, state.sensitivity
    K = A - np.diag(P * s)
    c0 = b + P * (1.0 - s * T_star)
    w = 1.0 / np.sqrt(net.capacity)
    Ks = w[:, None] * K * w[None, :]
    lam, V = np.linalg.eigh(0.5 * (Ks + Ks.T))
    ta = net.thermal.ambient_C
    z0 = V.T @ (np.full(len(T_star), ta) / w)
    f = V.T @ (c0 * w)
    i_coil = net.index("coil")
    taus = np.where(np.abs(lam) > 0, 1.0 / np.where(lam == 0, 1.0, lam), np.inf)

    def temps(t):
        t = np.atleast_1d(t)[:, None]
        lt = lam[None, :] * t
        gain = np.where(np.abs(lt) > 1e-12, -np.expm1(-lt) / np.where(lam == 0, 1, lam), t)
        z = z0 * np.exp(-lt) + f * gain
        out = (z @ V.T) * w
        out[:, i_coil] += (
            net.hot_spot_factor * P[i_coil] * (1.0 + s[i_coil] * (out[:, i_coil] - T_star[i_coil]))
        )
        return out

    positive = taus[np.isfinite(taus) & (taus > 0)]
    t_lo = 1e-3 * (positive.min() if positive.size else 1.0)
    t_hi = min(50.0 * np.abs(taus[np.isfinite(taus)]).max(), 1e9)
    if lam.min() < 0:  # a growing mode: stop before exp(-l t) leaves the float range
        t_hi = min(t_hi, 500.0 / -lam.min())
    grid = np.geomspace(t_lo, max(t_hi, 10 * t_lo), 200)
    curve = temps(grid)
    out = {}
    for name, limit in limits.items():
        k = net.index(name)
        above = np.flatnonzero(curve[:, k] >= limit)
        if above.size == 0:
            out[name] = math.inf
            continue
        j = above[0]
        lo, hi = (grid[j - 1] if j > 0 else 0.0), grid[j]
        # one finer pass inside the bracket, then linear interpolation between its points
        sub = np.linspace(lo, hi, 65)
        vals = temps(sub)[:, k]
        m = max(int(np.argmax(vals >= limit)), 1)
        t0, t1, v0, v1 = sub[m - 1], sub[m], vals[m - 1], vals[m]
        hi = t1 if v1 == v0 else t0 + (limit - v0) * (t1 - t0) / (v1 - v0)
        out[name] = float(hi)
    return out, np.sort(taus)
