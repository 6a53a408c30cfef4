"""The lumped thermal network of a design: nodes, conductances, outer surfaces, and the heat
balance (conductance matrix, heat out, its Jacobian) at a temperature state.

Nodes: the coil (its mean winding temperature, which sets its resistance), the core (the pole's
mean temperature), the face (a slab of steel at the pole face, around the ring's groove), the ring
(if any) and the target. Conductances come from the geometry and the materials' thermal
conductivities; every outer surface loses heat to the ambient air (models.thermal.convection:
natural convection or a given coefficient, and radiation when an emissivity is given). The target
exchanges heat with the face and the ring across the air gap (conduction through the still air
layer, radiation). Temperatures are in degC, everything else SI.

Assumptions (each said again where it is used): the magnet is held by nothing that conducts heat
(no mounting plate): conservative; the pole's core losses heat the face and core nodes where
the field puts them (models.fast.core); the air gap is a still layer (conduction only), true for a face-down magnet
(stable layer) and for gaps of a few mm (Rayleigh number below 1708, Incropera section 9.8).

References
----------
Incropera, DeWitt, Bergman, Lavine, *Fundamentals of Heat and Mass Transfer*, 6th/7th ed.,
eq. 13.24 (parallel grey plates), section 9.8 (enclosures).
Mellor, Roberts and Turner, IEE Proc. B 138 (1991) 205-218 (lumped thermal model of a machine).
Hashin and Shtrikman, J. Appl. Phys. 33 (1962) 3125 (conductivity of a winding).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy.constants import zero_Celsius

from models.materials import (
    BOBBIN_THERMAL_CONDUCTIVITY,
    COIL_MAX_TEMPERATURE_C,
    IMPREGNANT_THERMAL_CONDUCTIVITY,
    MATERIALS,
)
from models.thermal.air import air_properties
from models.thermal.convection import (
    CYLINDER,
    DOWN,
    UP,
    VERTICAL,
    natural_convection_coefficient,
    radiation_coefficient,
)

__all__ = ["ThermalNetwork", "build_network", "winding_conductivity"]


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


def winding_conductivity(fill_factor, wire_conductivity, impregnant_conductivity):
    """Effective thermal conductivity of a winding across its wires [W/(m K)].

    k = k_i [(1 + f) k_w + (1 - f) k_i] / [(1 - f) k_w + (1 + f) k_i] for a copper fill factor f:
    the Maxwell-Garnett / Rayleigh result for parallel cylinders in a matrix, heat across them
    (the Hashin-Shtrikman lower bound in two dimensions); Hashin and Shtrikman, J. Appl. Phys. 33
    (1962) 3125, from memory.
    """
    f, kw, ki = fill_factor, wire_conductivity, impregnant_conductivity
    return ki * ((1.0 + f) * kw + (1.0 - f) * ki) / ((1.0 - f) * kw + (1.0 + f) * ki)


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
    if design.pole is None:  # an air core: coil(s) and part only
        net = _Assembly.start(th.orientation, False, steel=False)
        hot_spot_factor = _add_coils(net, design, k_fe=None)
        _add_target(net, design, 0.0, 0.0)
        return net.finish(hot_spot_factor, design.target.gap, th)
    # a pole given by mu_r only takes the laminated steel's thermal values
    steel = _thermal_props(design.pole.material, _thermal_props("electrical-steel-m400", None))
    net = _Assembly.start(th.orientation, design.ring is not None)
    hot_spot_factor = _add_coils(net, design, k_fe=steel[2])
    _add_pole(net, design, steel)
    covered_steel = _add_face(net, design)
    covered_ring = _add_ring(net, design) if design.ring is not None else 0.0
    _add_target(net, design, covered_steel, covered_ring)
    return net.finish(hot_spot_factor, design.target.gap, th)


def _unnamed(conductivity: float, density: float):
    """Thermal values (as _thermal_props returns them) of a conductor given by its conductivity
    alone: the library metal nearest in conductivity, the same one whose temperature coefficient
    the design took (models.design.nearest_metal), at the part's own density: one metal for every
    property, not a mix (common practice, no source)."""
    from models.design import nearest_metal

    m = nearest_metal(conductivity)
    why = (
        f"{m.name} starts to melt (solidus): the library metal nearest in conductivity, taken "
        "for a conductor given by its conductivity alone"
    )
    return density, m.specific_heat, m.thermal_conductivity, m.max_temperature_C, why


def _unnamed_note(part: str, conductivity: float) -> str:
    from models.design import nearest_metal

    return (
        f"{part} material not named: heat capacity and melting point of {nearest_metal(conductivity).name}, "
        "the library metal nearest in conductivity (as its temperature coefficient)"
    )


@dataclass
class _Assembly:
    """A network being assembled: per node its capacity, ceiling and the ceiling's words; links,
    gap links and surfaces (node, area, kind, length, r_int) in the order they are added (the
    conductance matrix sums them in that order); the surface kinds of the orientation."""

    nodes: list
    horizontal: bool
    toward_face: int  # a surface looking the way the face looks
    away: int
    cap: np.ndarray
    ceiling: np.ndarray
    why: list
    links: list = field(default_factory=list)
    gap_links: list = field(default_factory=list)
    surfaces: list = field(default_factory=list)
    notes: list = field(default_factory=list)

    @classmethod
    def start(cls, orientation: str, has_ring: bool, steel: bool = True) -> _Assembly:
        """No conductances yet, the nodes of a design with or without a ring (an air core,
        ``steel`` False: no core and face nodes)."""
        nodes = ["coil"] + (["core", "face"] if steel else [])
        nodes += (["ring"] if has_ring else []) + ["target"]
        face_down = orientation == "face-down"
        return cls(
            nodes=nodes,
            horizontal=orientation == "horizontal",
            toward_face=DOWN if face_down else UP,
            away=UP if face_down else DOWN,
            cap=np.zeros(len(nodes)),
            ceiling=np.full(len(nodes), np.inf),
            why=[""] * len(nodes),
        )

    def ix(self, name: str) -> int:
        return self.nodes.index(name)

    def plate(self, kind_if_vertical_axis, height):
        """Kind and length of an end face: horizontal plate, or vertical plate of this height."""
        return (VERTICAL, height) if self.horizontal else (kind_if_vertical_axis, None)

    def part(self, name: str, capacity: float, ceiling: float, why: str) -> None:
        """A node's heat capacity [J/K] and material limit [degC] with its words."""
        i = self.ix(name)
        self.cap[i] = capacity
        self.ceiling[i] = ceiling
        self.why[i] = why

    def finish(self, hot_spot_factor, gap, thermal) -> ThermalNetwork:
        s = list(zip(*self.surfaces, strict=True))
        return ThermalNetwork(
            nodes=self.nodes,
            capacity=self.cap,
            links=self.links,
            gap_links=self.gap_links,
            surf_node=np.array(s[0], dtype=int),
            surf_area=np.array(s[1], dtype=float),
            surf_kind=np.array(s[2], dtype=int),
            surf_length=np.array(s[3], dtype=float),
            surf_rint=np.array(s[4], dtype=float),
            ceiling_C=self.ceiling,
            ceiling_why=self.why,
            hot_spot_factor=hot_spot_factor,
            gap=gap,
            thermal=thermal,
            notes=self.notes,
        )


def _add_coils(net: _Assembly, design, k_fe: float | None) -> float:
    """The coil node of every coil of ``design``: one coil as ``_add_coil`` adds it; several
    (``[[coils]]``) lumped into the one node (their capacities, links and surfaces side by
    side: one mean winding temperature), the hot spot that of the coil whose own rise is the
    largest, each taking its share R_k / R of the loss (one current in series). Returns the
    hot-spot factor [K/W of the total coil loss]."""
    coils = design.windings
    if len(coils) == 1:
        return _add_coil(net, design, coils[0], k_fe)
    r_total = sum(c.resistance() for c in coils)
    factors = [_add_coil(net, design, c, k_fe) * c.resistance() / r_total for c in coils]
    cap = sum(_coil_capacity(c) for c in coils)
    net.cap[net.ix("coil")] = cap
    return max(factors)


def _coil_capacity(c) -> float:
    """Heat capacity of a coil's copper [J/K]."""
    wire = MATERIALS.get(c.material, MATERIALS["copper"])
    return c.turns * 2 * math.pi * c.mean_radius * c.wire_area * wire.density * wire.specific_heat


def _add_coil(net: _Assembly, design, c, k_fe: float | None) -> float:
    """The coil node: its capacity and insulation limit, its link through bobbin and core to the
    core node (an air core, ``k_fe`` None: its bore to the air instead), its side and end
    surfaces (each behind a third of the winding's conduction resistance). Returns the hot-spot
    factor [K/W]."""
    th, p = design.thermal, design.pole
    horizontal = net.horizontal
    ic = net.ix("coil")
    wire = MATERIALS.get(c.material, MATERIALS["copper"])
    build_r = c.outer_radius - c.inner_radius
    fill = min(c.turns * c.wire_area / c.window_area, 0.9069)  # hexagonal packing at most
    k_w = th.winding_conductivity or winding_conductivity(
        fill, wire.thermal_conductivity, IMPREGNANT_THERMAL_CONDUCTIVITY
    )
    r_m = c.mean_radius
    lc = c.length
    net.part(
        "coil",
        _coil_capacity(c),
        min(COIL_MAX_TEMPERATURE_C, wire.max_temperature_C or math.inf),
        "the winding's insulation decomposes",
    )
    r_in = math.log(r_m / c.inner_radius) / (2 * math.pi * k_w * lc) / 3.0
    r_out = math.log(c.outer_radius / r_m) / (2 * math.pi * k_w * lc) / 3.0
    a_end = math.pi * (c.outer_radius**2 - c.inner_radius**2)
    r_end = (lc / 2) / (k_w * a_end) / 3.0
    side_kind, side_len = (CYLINDER, 2 * c.outer_radius) if horizontal else (VERTICAL, lc)
    if p is None:  # an air core: the bore is an outer surface (taken as a cylinder's side)
        net.surfaces.append((ic, 2 * math.pi * c.inner_radius * lc, side_kind, side_len, r_in))
    else:
        r_bobbin = (
            math.log(c.inner_radius / p.radius) / (2 * math.pi * BOBBIN_THERMAL_CONDUCTIVITY * lc)
            if c.inner_radius > p.radius
            else 0.0
        )
        r_core_side = 1.0 / (8 * math.pi * k_fe * lc)
        net.links.append((ic, net.ix("core"), 1.0 / (r_in + r_bobbin + r_core_side)))
    net.surfaces.append((ic, 2 * math.pi * c.outer_radius * lc, side_kind, side_len, r_out))
    end_len = build_r / 2  # area / perimeter of an annulus
    for kind in (net.toward_face, net.away):
        k_, length = net.plate(kind, 2 * c.outer_radius)
        net.surfaces.append((ic, a_end, k_, length or end_len, r_end))
    volume = 2 * math.pi * r_m * c.window_area
    return min(build_r, lc) ** 2 / (24 * k_w * volume)


def face_node_thickness(design) -> float | None:
    """Thickness [m] of the pole's face node: at least the groove (whose volume it loses), else a
    tenth to half of the pole; the core node keeps the rest (the groove is shallower than the
    pole, models.design). None for an air core. A node of the thermal network, which also splits
    the core's loss between face and core (models.pick.steady_state); not the slab where flux
    crosses the sheets (models.core_loss.radial_flux_slab_depth)."""
    p, ring = design.pole, design.ring
    if p is None:
        return None  # an air core has no steel
    depth = ring.depth if ring is not None else 0.0
    return max(min(max(depth, 0.1 * p.length), 0.5 * p.length), depth)


def _add_pole(net: _Assembly, design, steel) -> None:
    """The face slab and the core behind it: capacities, their link, the core's back and the
    pole's side beyond the coil (core) and between coil and face (face)."""
    p, ring = design.pole, design.ring
    horizontal = net.horizontal
    rho_fe, c_fe, k_fe, ceil_fe, why_fe = steel
    area_p = math.pi * p.radius**2
    depth = ring.depth if ring is not None else 0.0
    t_f = face_node_thickness(design)
    l_core = p.length - t_f
    groove = (
        0.0 if ring is None else math.pi * (ring.outer_radius**2 - ring.inner_radius**2) * depth
    )
    net.part("face", (area_p * t_f - groove) * rho_fe * c_fe, ceil_fe, why_fe)
    net.part("core", area_p * l_core * rho_fe * c_fe, ceil_fe, why_fe)
    i_face, i_core = net.ix("face"), net.ix("core")
    net.links.append((i_face, i_core, k_fe * area_p / (t_f / 2 + l_core / 3)))
    r_back = l_core / (3 * k_fe * area_p)
    k_, length = net.plate(net.away, 2 * p.radius)
    net.surfaces.append((i_core, area_p, k_, length or p.radius / 2, r_back))
    back_strip = min(p.length - c.setback - c.length for c in design.windings)
    setback = min(c.setback for c in design.windings)
    side_kind = CYLINDER if horizontal else VERTICAL
    if back_strip > 0:
        length = 2 * p.radius if horizontal else back_strip
        net.surfaces.append((i_core, 2 * math.pi * p.radius * back_strip, side_kind, length, 0.0))
    if setback > 0:
        length = 2 * p.radius if horizontal else setback
        net.surfaces.append((i_face, 2 * math.pi * p.radius * setback, side_kind, length, 0.0))


def _add_face(net: _Assembly, design) -> float:
    """The steel annuli of the pole face: to the air where exposed, across the gap to the target
    where it covers them. Returns the covered steel area [m^2]."""
    p, t, ring = design.pole, design.target, design.ring
    i_face = net.ix("face")
    steel_annuli = (
        [(0.0, p.radius)]
        if ring is None
        else [(0.0, ring.inner_radius), (ring.outer_radius, p.radius)]
    )
    covered_steel = sum(_annulus_overlap(a, b, t.inner_radius, t.radius) for a, b in steel_annuli)
    exposed_steel = sum(math.pi * (b * b - a * a) for a, b in steel_annuli) - covered_steel
    k_, length = net.plate(net.toward_face, 2 * p.radius)
    if exposed_steel > 0:
        net.surfaces.append((i_face, exposed_steel, k_, length or p.radius / 2, 0.0))
    if covered_steel > 0:
        net.gap_links.append((i_face, net.ix("target"), covered_steel))
    return covered_steel


def _add_ring(net: _Assembly, design) -> float:
    """The ring node: capacity and melting limit, contact conductance over the groove's walls
    and bottom to the face, its face to the air where exposed and across the gap to the target
    where covered. Returns the covered ring area [m^2]."""
    t, ring = design.target, design.ring
    i_ring = net.ix("ring")
    unnamed = _unnamed(ring.conductivity, ring.density) if ring.material is None else None
    rho_r, c_r, _, ceil_r, why_r = _thermal_props(ring.material, unnamed)
    if ring.material is None:
        net.notes.append(_unnamed_note("ring", ring.conductivity))
    v_ring = math.pi * (ring.outer_radius**2 - ring.inner_radius**2) * ring.depth
    net.part("ring", v_ring * rho_r * c_r, ceil_r, why_r)
    contact = 2 * math.pi * (ring.inner_radius + ring.outer_radius) * ring.depth + math.pi * (
        ring.outer_radius**2 - ring.inner_radius**2
    )
    net.links.append((i_ring, net.ix("face"), design.thermal.ring_contact_conductance * contact))
    covered_ring = _annulus_overlap(ring.inner_radius, ring.outer_radius, t.inner_radius, t.radius)
    exposed_ring = math.pi * (ring.outer_radius**2 - ring.inner_radius**2) - covered_ring
    if exposed_ring > 0:
        k_, length = net.plate(net.toward_face, 2 * ring.outer_radius)
        net.surfaces.append((i_ring, exposed_ring, k_, length or ring.width / 2, 0.0))
    if covered_ring > 0:
        net.gap_links.append((i_ring, net.ix("target"), covered_ring))
    return covered_ring


def _add_target(net: _Assembly, design, covered_steel: float, covered_ring: float) -> None:
    """The target node: capacity and limit, its far side, its near side where not across the
    gap (``covered_steel`` + ``covered_ring``) and its rim to the air."""
    t = design.target
    i_t = net.ix("target")
    unnamed = _unnamed(t.conductivity, t.density) if t.material is None else None
    rho_t, c_t, _, ceil_t, why_t = _thermal_props(t.material, unnamed)
    if t.material is None:
        net.notes.append(_unnamed_note("target", t.conductivity))
    net.part("target", t.volume * rho_t * c_t, ceil_t, why_t)
    a_t = math.pi * (t.radius**2 - t.inner_radius**2)
    half_width = (t.radius - t.inner_radius) / 2
    # its far side looks the way the face looks; its near side (where not across the gap) back
    k_, length = net.plate(net.toward_face, 2 * t.radius)
    net.surfaces.append((i_t, a_t, k_, length or half_width, 0.0))
    uncovered = a_t - covered_steel - covered_ring
    if uncovered > 1e-12 * a_t:
        k_, length = net.plate(net.away, 2 * t.radius)
        net.surfaces.append((i_t, uncovered, k_, length or half_width, 0.0))
    horizontal = net.horizontal
    rim_kind, rim_len = (CYLINDER, 2 * t.radius) if horizontal else (VERTICAL, t.thickness)
    net.surfaces.append((i_t, 2 * math.pi * t.radius * t.thickness, rim_kind, rim_len, 0.0))
