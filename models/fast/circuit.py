"""Assemble and solve the multi-loop circuit of one design (rms phasors, SI).

Loops: every ring and target cell is a shorted loop; the coil is one loop of N turns spread over
sub-cells of its window. The laminated pole enters through bound sheet currents on its contour that
follow linearly from all free currents (models.fast.pole), so it adds a symmetric inductance
M_iron = M_cp P to the loop matrix, complex when the sheets carry eddy currents (its imaginary
part is the sheets' loss: Re(j omega I^H M_iron I) = -omega I^H Im(M_iron) I). Loop equations
(Kirchhoff's voltage law for each loop)::

    (R + j omega (M + M_iron)) I = V,   V = 0 for cells, V = supply - R_he I_coil for the coil

R_he carries the core's hysteresis and excess losses (models.core_loss) in series with the coil,
so that the terminal power is every loss; it depends on the coil current (the loss law is not
quadratic in the flux density), and the cell currents per ampere of coil current do not depend on
it, so the loop equations are solved for 1 A in the coil and scaled.

Time averages of rms phasors carry no factor 1/2: <P> = |I|^2 R.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from types import SimpleNamespace

import numpy as np

from models.coils import coils_resistance
from models.core_loss import coil_current_with_core_loss, peak_flux_density
from models.fast.core import CoreGrid, CoreLosses, core_grid, core_losses, hysteresis_excess_at
from models.fast.discretize import (
    Cells,
    Fineness,
    coil_filaments,
    conductor_cells,
    resolved_gap,
)
from models.fast.filaments import self_inductance_rect
from models.fast.kernels import cell_mutual, cell_mutual_cross, cell_panel_sums, real_matmul
from models.supply import series_impedance

__all__ = [
    "CircuitSolution",
    "CircuitSystem",
    "assemble_circuit",
    "build_cells",
    "coil_shares",
    "WINDING",
    "cell_mutual_matrix",
    "solve_circuit",
    "solve_system",
]

RING, TARGET, COIL = 0, 1, 2
#: Sub-cells of a shading winding (models.shading): stranded as the coil's, one loop closed
#: through its capacitor / resistor.
WINDING = 3

# Two-point Gauss-Legendre abscissae on [-1/2, 1/2] (unit weights 1/2 each).
_G2 = np.array([-0.5, 0.5]) / np.sqrt(3.0)


def build_cells(design, fineness: Fineness) -> Cells:
    """Cells of ring, target and coil window (coil cells carry part = COIL, conductivity 1; a
    shading winding's sub-cells part = WINDING, conductivity 1)."""
    f = design.drive.frequency
    parts = []
    if design.ring is not None and design.ring.winding:
        parts.append(_winding_cells(design.ring, fineness))
    elif design.ring is not None:
        ring = design.ring
        parts.append(
            conductor_cells(
                ring.inner_radius,
                ring.outer_radius,
                -ring.depth,
                0.0,
                ring.conductivity,
                f,
                RING,
                fineness,
                gap=resolved_gap(design.target.gap, design.pole.radius, fineness),
            )
        )
    t = design.target
    if design.pole is None:  # an air core: the coils' edges are the features across the gap
        corners = [r for c in design.windings for r in (c.inner_radius, c.outer_radius)]
    else:
        corners = [design.pole.radius]
    if design.ring is not None:
        corners += [design.ring.inner_radius, design.ring.outer_radius]
    parts.append(
        conductor_cells(
            t.inner_radius,
            t.radius,
            t.gap,
            t.gap + t.thickness,
            t.conductivity,
            f,
            TARGET,
            fineness,
            graded_r=(t.inner_radius > 0, True),
            gap=t.gap if design.pole is None else resolved_gap(t.gap, design.pole.radius, fineness),
            corners_r=corners,
        )
    )
    sub = fineness
    if design.pole is None or len(design.windings) > 1:
        # Coils alone shape the field: twice the sub-cells each way (TEAM Workshop Problem 28
        # against the FEM: pull -1.0 % at a 20 mm height with 4 x 8, -0.1 % with 8 x 16)
        sub = dataclasses.replace(fineness, coil_r=2 * fineness.coil_r, coil_z=2 * fineness.coil_z)
    for coil in design.windings:
        rc, zc, dr, dz = coil_filaments(coil, sub)
        parts.append(
            Cells(
                r0=rc - dr / 2,
                r1=rc + dr / 2,
                z0=zc - dz / 2,
                z1=zc + dz / 2,
                conductivity=np.ones_like(rc),
                part=np.full(rc.size, COIL),
            )
        )
    return Cells.concat(*parts)


def _winding_cells(ring, fineness: Fineness) -> Cells:
    """Sub-cells of a shading winding's groove section, as a coil window's."""
    window = SimpleNamespace(
        inner_radius=ring.inner_radius,
        outer_radius=ring.outer_radius,
        z_back=-ring.depth,
        z_front=0.0,
        length=ring.depth,
    )
    rc, zc, dr, dz = coil_filaments(window, fineness)
    return Cells(
        r0=rc - dr / 2,
        r1=rc + dr / 2,
        z0=zc - dz / 2,
        z1=zc + dz / 2,
        conductivity=np.ones_like(rc),
        part=np.full(rc.size, WINDING),
    )


def coil_shares(design, n_sub: int):
    """Turns carried by each coil sub-cell (``build_cells`` order): turns / sub-cells of its coil
    times its sense. One coil wound +1: the scalar turns / n_sub (every sub-cell alike); several
    coils, or a sense of -1: an array (one entry per sub-cell), the coils in series."""
    coils = design.windings
    if len(coils) == 1 and coils[0].sense == 1:
        return coils[0].turns / n_sub
    per_coil = n_sub // len(coils)  # every coil has coil_r x coil_z sub-cells
    return np.concatenate([np.full(per_coil, c.sense * c.turns / per_coil) for c in coils])


def _gauss_nodes(cells: Cells, idx):
    """2 x 2 Gauss nodes of the cells ``idx``: (len(idx), 4) arrays of r and z."""
    gr = cells.rc[idx, None] + cells.dr[idx, None] * np.repeat(_G2, 2)[None, :]
    gz = cells.zc[idx, None] + cells.dz[idx, None] * np.tile(_G2, 2)[None, :]
    return gr, gz


def cell_mutual_matrix(cells: Cells, dz_rows=None):
    """Inductance matrix of the cells (each a uniform-current ring) [H], and dM/dz_i [H/m].

    Far pairs use Maxwell's formula between centres; pairs within one cell size average it over 2 x 2
    Gauss nodes of both cells, with the kernel's logarithmic part, mu0 R ln(1/rho), averaged exactly
    (models.fast.filaments.rect_log_mean, the cells' GMD) in place of its Gauss average, so that long
    thin neighbours keep M positive definite; the diagonal is the self-inductance of a rectangular-section ring
    (models.fast.filaments.self_inductance_rect). dMdz[i, j] is the derivative with respect to the axial
    position of cell i.

    Parameters
    ----------
    cells : Cells
    dz_rows : bool array, optional
        Cells whose dMdz rows are wanted (the pull needs only the target's rows, against every
        other cell); other rows are left 0. Default: all.
    """
    rows = np.ones(cells.n, bool) if dz_rows is None else np.asarray(dz_rows, bool)
    runs = _part_runs(cells)
    M = np.empty((cells.n, cells.n))
    D = np.empty((cells.n, cells.n))
    for u, (a, b, key_a) in enumerate(runs):
        for c, d, key_c in runs[u:]:
            m, d_ac, d_ca = _mutual_block(cells, (a, b, key_a), (c, d, key_c))
            M[a:b, c:d] = m
            D[a:b, c:d] = d_ac
            if c != a:
                M[c:d, a:b] = m.T
                D[c:d, a:b] = d_ca
    D[~rows] = 0.0
    np.fill_diagonal(M, _self_inductances(cells.rc, cells.dr, cells.dz))
    return M, D


def _part_runs(cells: Cells):
    """(start, stop, key) of each run of consecutive cells of one part; the key is the run's cell
    edges to the last bit."""
    part = cells.part
    starts = np.flatnonzero(np.r_[True, part[1:] != part[:-1]]).tolist()
    stops = [*starts[1:], part.size]
    return [
        (
            a,
            b,
            np.concatenate((cells.r0[a:b], cells.r1[a:b], cells.z0[a:b], cells.z1[a:b])).tobytes(),
        )
        for a, b in zip(starts, stops, strict=True)
    ]


#: Blocks of the cell mutual-inductance matrix (``kernels.cell_mutual`` within a run of one
#: part's cells, ``kernels.cell_mutual_cross`` between two runs), kept for the last
#: _BLOCKS_KEPT pairs of runs by the runs' cell edges to the last bit: a part that does not move
#: (the coil at every gap, a ring whose grading the gap does not set) reuses its blocks. Each
#: holds (M, dM/dz in the first run's rows, dM/dz in the second's), read-only.
_BLOCKS: dict = {}
_BLOCKS_KEPT = 48


def _mutual_block(cells: Cells, run_a, run_c):
    """The block of ``cell_mutual`` between the runs ``run_a`` and ``run_c`` (each (start,
    stop, key), run_a not after run_c), with dM/dz in every row, from ``_BLOCKS`` where kept."""
    (a, b, key_a), (c, d, key_c) = run_a, run_c
    key = (key_a, key_c) if c != a else (key_a,)
    kept = _BLOCKS.get(key)
    if kept is None:
        if c == a:
            m, der = cell_mutual(
                cells.r0[a:b], cells.r1[a:b], cells.z0[a:b], cells.z1[a:b], np.ones(b - a, bool)
            )
            kept = (m, der, der)
        else:
            kept = cell_mutual_cross(
                (cells.r0[a:b], cells.r1[a:b], cells.z0[a:b], cells.z1[a:b]),
                (cells.r0[c:d], cells.r1[c:d], cells.z0[c:d], cells.z1[c:d]),
            )
        for x in kept:
            x.setflags(write=False)
        if len(_BLOCKS) >= _BLOCKS_KEPT:
            _BLOCKS.pop(next(iter(_BLOCKS)))
        _BLOCKS[key] = kept
    return kept


#: Self-inductances of cell sections already computed, by (mean radius, dr, dz) [m] to the last
#: bit: a section's self depends on nothing else, and the coil's, the target's and (at one gap)
#: the ring's cells recur from one assembly to the next (other gaps, the error bar, a study's
#: trials). Cleared when it holds _SELF_KEPT sections.
_SELF: dict = {}
_SELF_KEPT = 50_000


def _self_inductances(rc, dr, dz):
    """``self_inductance_rect`` of each section, from ``_SELF`` where known."""
    keys = list(zip(rc.tolist(), dr.tolist(), dz.tolist(), strict=True))
    out = np.array([_SELF.get(k, np.nan) for k in keys])
    miss = np.flatnonzero(np.isnan(out))
    if miss.size:
        out[miss] = self_inductance_rect(rc[miss], dr[miss], dz[miss])
        if len(_SELF) + miss.size > _SELF_KEPT:
            _SELF.clear()
        _SELF.update(zip((keys[i] for i in miss), out[miss].tolist(), strict=True))
    return out


#: The cells' sums with the panels (``kernels.cell_panel_sums``) of one part's cells, kept for
#: the last _PANEL_ROWS_KEPT (panels, cells) pairs, keyed by the panels' identity, the rule and the
#: part's cell edges to the last bit: each cell's row depends on nothing else, so a part that does
#: not move (the coil at every gap of a trial, a ring at every gap below the gap floor, the parts
#: of a conductivity, current or frequency change that keeps the skin-depth grading) reuses its
#: rows. Each entry holds its panels, so that an identity is never reused for other panels.
_PANEL_ROWS: dict = {}
_PANEL_ROWS_KEPT = 24


def _cell_panel_rows(panels, cells: Cells, order, reach):
    """``cell_panel_sums`` of ``cells`` with ``panels``: (mutual inductance, its z derivative,
    applied field), each (n_cells, n_panels), assembled from the rows of each run of cells of
    one part (taken from ``_PANEL_ROWS`` where known; the same numbers as one call on all
    cells, bit for bit: every row is computed on its own)."""
    blocks = []
    for a, b, edges in _part_runs(cells):
        key = (id(panels), int(order), float(reach), edges)
        kept = _PANEL_ROWS.get(key)
        if kept is None or kept[0] is not panels:
            sums = cell_panel_sums(
                panels, cells.rc[a:b], cells.zc[a:b], cells.dr[a:b], cells.dz[a:b], order, reach
            )
            sums.setflags(write=False)
            if len(_PANEL_ROWS) >= _PANEL_ROWS_KEPT:
                _PANEL_ROWS.pop(next(iter(_PANEL_ROWS)))
            kept = _PANEL_ROWS[key] = (panels, sums)
        blocks.append(kept[1])
    sums = blocks[0].copy() if len(blocks) == 1 else np.concatenate(blocks, axis=1)
    return sums[0], sums[1], sums[2]


@dataclass(frozen=True)
class CircuitSolution:
    """Currents of one solved design (rms phasors, SI).

    cells : the cells (ring, target, coil sub-cells); cell_current : complex current of each cell
    [A] (a coil sub-cell carries its share of the ampere-turns); coil_current, coil_voltage [A, V];
    panel_current : bound sheet currents of the pole's panels [A] (empty without iron);
    M, dMdz : cell matrices [H], [H/m] (free part; dMdz filled in the target's rows only);
    panel_M, panel_dMdz : cells x panels [H], [H/m]; winding_current : the current in a
    shading winding's wire [A] (None without one), winding_resistance : its wire's resistance
    [Ohm] at the ring's temperature, winding_closing : the closing part's impedance [Ohm]
    """

    cells: Cells
    cell_current: np.ndarray
    coil_current: complex
    coil_voltage: complex
    coil_resistance: float
    cell_resistance: np.ndarray
    panel_current: np.ndarray
    M: np.ndarray
    dMdz: np.ndarray
    panel_M: np.ndarray | None
    panel_dMdz: np.ndarray | None
    panels: object
    omega: float
    core: CoreLosses | None = None
    core_grid: CoreGrid | None = None
    winding_current: complex | None = None
    winding_resistance: float = 0.0
    winding_closing: complex = 0.0j


@dataclass(frozen=True)
class CircuitSystem:
    """The assembled loop equations of one design, everything but the temperatures (rms, SI).

    Only the resistances depend on temperature, so ``solve_system`` re-solves this at new part
    temperatures for the cost of one dense solve (the electro-thermal coupling of
    models.evaluate). Treat as read-only.

    cells : the cells; solid, coil : indices of solid cells and coil sub-cells; winding :
    indices of a shading winding's sub-cells (None: a solid ring or none) with
    winding_share turns each; share : turns per
    coil sub-cell (a float, or an array with several coils or a sense of -1: ``coil_shares``);
    L_loop : loop inductance matrix (solid cells, then the coil) [H];
    cell_resistance_20 : resistance of each cell at 20 degC [Ohm]; P : panels x cells operator
    (None without iron); M, dMdz, panel_M, panel_dMdz, panels as in CircuitSolution;
    iron_loss : cells x cells, -omega Im(M_iron) [Ohm] (None without iron): the sheets' eddy
    loss is I^H iron_loss I; core_grid : the steel's field map (models.fast.core; None without
    iron).
    """

    design: object
    cells: Cells
    solid: np.ndarray
    coil: np.ndarray
    share: float
    L_loop: np.ndarray
    cell_resistance_20: np.ndarray
    P: np.ndarray | None
    M: np.ndarray
    dMdz: np.ndarray
    panel_M: np.ndarray | None
    panel_dMdz: np.ndarray | None
    panels: object
    omega: float
    iron_loss: np.ndarray | None = None
    core_grid: CoreGrid | None = None
    winding: np.ndarray | None = None
    winding_share: float = 0.0


def assemble_circuit(
    design, fineness: Fineness, pole_model=None, pull_only: bool = False
) -> CircuitSystem:
    """Cells, inductance matrices and the iron's operator of ``design`` (no temperatures yet).

    Parameters
    ----------
    design : models.design.Design
    fineness : Fineness
    pole_model : object or None
        Magnetised-pole model with ``panels`` and ``operator(r, z)`` (models.fast.pole); None: no iron.
    pull_only : bool
        The system serves for currents and the pull alone (another gap, the error bar's second
        level): under current drive the steel's field map is then left out, since it sets only
        the terminal voltage and the core's losses there (``core_grid`` None, no core losses).
    """
    cells = build_cells(design, fineness)
    omega = design.drive.omega
    M, D = cell_mutual_matrix(cells, dz_rows=cells.part == TARGET)

    panels = None
    panel_M = panel_D = None
    P = iron_loss = grid = None
    if pole_model is not None:
        panels = pole_model.panels
        # Each cell with each panel: its mutual inductance, the derivative in the cell's z and
        # the panel-averaged tangential field of 1 A in it, the cell averaged over Gauss nodes
        # where it is within iron_reach cell sizes of the panel (models.fast.kernels).
        panel_M, panel_D, applied = _cell_panel_rows(
            panels, cells, fineness.iron_nodes, fineness.iron_reach
        )  # (n_cells, n_panels) each
        P = pole_model.response(applied.T)  # (n_panels, n_cells)
        M_iron = real_matmul(panel_M, P)
        M_iron = 0.5 * (M_iron + M_iron.T)
        M_total = M + M_iron
        iron_loss = -omega * M_iron.imag if np.iscomplexobj(M_iron) else None
        if not (pull_only and design.drive.current is not None):
            grid = core_grid(design, cells, panels, P)
    else:
        M_total = M

    # Incidence: loops = solid cells individually, then the coil.
    coil_mask = cells.part == COIL
    wind_mask = cells.part == WINDING
    solid = np.flatnonzero(~coil_mask & ~wind_mask)
    n_sub = int(coil_mask.sum())
    # L_loop = C.T @ M_total @ C for the incidence C (cells x loops): 1 from each solid cell to
    # its loop, sense x turns / sub-cells from each coil sub-cell to the coil (all coils in
    # series: one loop); applied by index.
    coil = np.flatnonzero(coil_mask)
    share = coil_shares(design, n_sub)
    n = solid.size
    wind = np.flatnonzero(wind_mask)
    size = n + 1 + (1 if wind.size else 0)  # a shading winding is one more loop, the last
    L_loop = np.empty((size, size), dtype=M_total.dtype)
    L_loop[:n, :n] = M_total[np.ix_(solid, solid)]
    if np.ndim(share) == 0:
        L_loop[:n, n] = M_total[np.ix_(solid, coil)].sum(axis=1) * share
        L_loop[n, :n] = M_total[np.ix_(coil, solid)].sum(axis=0) * share
        L_loop[n, n] = M_total[np.ix_(coil, coil)].sum() * share * share
    else:
        L_loop[:n, n] = M_total[np.ix_(solid, coil)] @ share
        L_loop[n, :n] = share @ M_total[np.ix_(coil, solid)]
        L_loop[n, n] = share @ M_total[np.ix_(coil, coil)] @ share
    winding_share = 0.0
    if wind.size:
        winding_share = design.ring.turns / wind.size
        _winding_loop(L_loop, M_total, solid, coil, share, wind, winding_share)
    return CircuitSystem(
        design=design,
        cells=cells,
        solid=solid,
        coil=coil,
        share=share,
        L_loop=L_loop,
        cell_resistance_20=cells.resistance(),
        P=P,
        M=M,
        dMdz=D,
        panel_M=panel_M,
        panel_dMdz=panel_D,
        panels=panels,
        omega=omega,
        iron_loss=iron_loss,
        core_grid=grid,
        winding=wind if wind.size else None,
        winding_share=winding_share,
    )


def _winding_loop(L_loop, M_total, solid, coil, share, wind, winding_share) -> None:
    """Fill the last row and column of ``L_loop``: the winding's loop (``winding_share`` turns
    per sub-cell) with the solid cells, the coil and itself (M_total is symmetric)."""
    n = solid.size
    w = n + 1
    col = M_total[np.ix_(solid, wind)].sum(axis=1) * winding_share
    L_loop[:n, w] = col
    L_loop[w, :n] = col
    per_coil_cell = M_total[np.ix_(coil, wind)].sum(axis=1) * winding_share
    L_loop[n, w] = L_loop[w, n] = (
        per_coil_cell.sum() * share if np.ndim(share) == 0 else share @ per_coil_cell
    )
    L_loop[w, w] = M_total[np.ix_(wind, wind)].sum() * winding_share**2


def solve_system(system: CircuitSystem, temperatures=None) -> CircuitSolution:
    """Solve assembled loop equations with the resistances at the part temperatures.

    Parameters
    ----------
    system : CircuitSystem
        From ``assemble_circuit``.
    temperatures : dict or None
        Part temperatures [degC] by "ring", "target", "coil"; None: all at 20 degC. Resistivity
        follows rho(T) = rho_20 (1 + alpha (T - 20 degC)) (IEC 60028 for copper).
    """
    design = system.design
    temps = {"ring": 20.0, "target": 20.0, "coil": 20.0, **(temperatures or {})}
    cells, solid, coil, share = system.cells, system.solid, system.coil, system.share
    n = solid.size
    alpha = np.zeros(cells.n)
    if design.ring is not None:
        alpha[cells.part == RING] = design.ring.temperature_coefficient * (temps["ring"] - 20.0)
    alpha[cells.part == TARGET] = design.target.temperature_coefficient * (temps["target"] - 20.0)
    r_cells = system.cell_resistance_20 * (1.0 + alpha)
    r_coil = coils_resistance(design, temps["coil"])

    Z = 1j * system.omega * system.L_loop
    loops = np.arange(n + 1)  # the solid cells and the coil (a winding adds its own)
    Z[loops, loops] += np.concatenate([r_cells[solid], [r_coil]])
    # The cells' currents for 1 A in the coil, and the input impedance without R_he.
    unit = np.empty(cells.n, complex)
    unit[coil] = share
    winding = None
    if system.winding is None:
        unit[solid] = np.linalg.solve(Z[:n, :n], -Z[:n, n])
        z_in = complex(Z[n, n] + Z[n, :n] @ unit[solid])
    else:
        unit, z_in, winding = _solve_with_winding(system, Z, unit, temps["ring"])
    loss_at = _hysteresis_excess_of(design, system.core_grid, unit)
    # A series capacitor (models.supply) sits between a voltage supply and the coil.
    z_series = series_impedance(design.drive)
    z_drive = z_in + z_series if z_series else z_in
    if design.drive.current is not None:
        i0 = complex(design.drive.current)
    elif loss_at is None:
        i0 = complex(design.drive.voltage) / z_drive
    else:
        i0 = coil_current_with_core_loss(complex(design.drive.voltage), z_drive, loss_at)
    r_he = 0.0 if loss_at is None or i0 == 0 else loss_at(abs(i0)) / abs(i0) ** 2
    v0 = (z_in + r_he) * i0
    cell_current = unit * i0
    P = system.P
    panel_current = P @ cell_current if P is not None else np.zeros(0, complex)
    core = None
    if system.core_grid is not None:
        eddy = 0.0
        if system.iron_loss is not None:
            eddy = float(np.real(np.conj(cell_current) @ (system.iron_loss @ cell_current)))
        core = core_losses(
            design.pole, design.drive.frequency, system.core_grid, cell_current, eddy
        )
    return CircuitSolution(
        cells=cells,
        cell_current=cell_current,
        winding_current=None if winding is None else complex(winding[0] * i0),
        winding_resistance=0.0 if winding is None else winding[1],
        winding_closing=0.0j if winding is None else winding[2],
        coil_current=i0,
        coil_voltage=v0,
        coil_resistance=r_coil,
        cell_resistance=r_cells,
        panel_current=panel_current,
        M=system.M,
        dMdz=system.dMdz,
        panel_M=system.panel_M,
        panel_dMdz=system.panel_dMdz,
        panels=system.panels,
        omega=system.omega,
        core=core,
        core_grid=system.core_grid,
    )


def _solve_with_winding(system: CircuitSystem, Z, unit, ring_C: float):
    """The loop equations with a shading winding (the last loop: its wire's resistance at
    ``ring_C`` [degC] and its closing part in series, models.shading), for 1 A in the coil.
    Returns (cell currents, input impedance without R_he, (winding current per coil ampere,
    wire resistance [Ohm], closing impedance [Ohm]))."""
    from models.shading import closing_impedance, winding_resistance

    ring = system.design.ring
    n = system.solid.size
    r_wire = winding_resistance(ring, ring_C)
    z_close = closing_impedance(ring, system.omega)
    Z[n + 1, n + 1] += r_wire + z_close
    others = np.r_[0:n, n + 1]
    x = np.linalg.solve(Z[np.ix_(others, others)], -Z[others, n])
    unit[system.solid] = x[:n]
    unit[system.winding] = system.winding_share * x[n]
    z_in = complex(Z[n, n] + Z[n, others] @ x)
    return unit, z_in, (complex(x[n]), float(r_wire), complex(z_close))


def _hysteresis_excess_of(design, grid, unit):
    """loss_at(|I_coil|) [W]: the core's hysteresis and excess loss at a coil current, from the
    peak flux densities at 1 A (``unit`` cell currents), which scale with the current; None
    when the pole has no loss law."""
    if grid is None or design.pole.core_loss is None:
        return None
    br, bz = grid.field(unit)
    b_unit = peak_flux_density(br, bz)
    f = design.drive.frequency

    def loss_at(x):
        h, e = hysteresis_excess_at(design.pole, f, b_unit * x, grid.volume)
        return float(h.sum() + e.sum())

    return loss_at


def solve_circuit(
    design, fineness: Fineness, pole_model=None, temperatures=None
) -> CircuitSolution:
    """Solve the loop equations of ``design`` (``assemble_circuit`` then ``solve_system``).

    Parameters
    ----------
    design : models.design.Design
    fineness : Fineness
    pole_model : object or None
        Magnetised-pole model with ``panels`` and ``operator(r, z)`` (models.fast.pole); None: no iron.
    temperatures : dict or None
        Part temperatures [degC] by "ring", "target", "coil"; None: all at 20 degC.
    """
    return solve_system(assemble_circuit(design, fineness, pole_model), temperatures)
