"""TEAM Workshop Problem 28 (electrodynamic levitation device): the design, the force against
height from the fast model and the FEM, the equilibrium height; the table and plot of
DEVELOPERS.md.

Source: TEAM Workshop Problem 28 (electrodynamic levitation device), from the problem's published
definition, values from memory / as given in the issue (issue 29). The document itself could not
be fetched here, and a search of the stored pages for "TEAM problem 28 levitation" found no copy
of it, so no number below is confirmed against the document.

* plate: aluminium disc, outer radius 65 mm, thickness 3 mm, conductivity 3.4e7 S/m, mass
  0.107 kg. Published copies of the definition disagree on a small central hole: we use a solid disc (no hole), whose
  volume at 2700 kg/m^3 gives 0.1075 kg, the stated mass; its density is set from that mass;
* inner coil 960 turns, 27-55 mm radially, 52 mm high; outer coil 576 turns, 80-95 mm, 52 mm
  high; both tops in one plane, the plate's height measured from it to the plate's lower face;
* 50 Hz, 20 A peak in each coil (14.142 A rms, our files being rms), in opposite senses;
* measured equilibrium height 11.3 mm; published computations put the force-height curve's
  equilibrium at about 11.0-11.1 mm.

The levitation force (upward, away from the coils) is -pull_N. A quasi-static time-harmonic
model gives the force at a fixed height; the published transient (height against time after
switch-on) needs the motional EMF of the moving plate and the switch-on transient of the coils'
currents, which neither of our models has, so it is not reproduced here.

Run ``python -m tests.validation.team28 [plot.png]`` for the table (fast model, FEM on two
meshes) and, with a path, the plot of force against height with the weight line.
"""

from __future__ import annotations

import math
import sys

from scipy.constants import g as standard_gravity
from scipy.optimize import brentq

from models.design import design_from_dict, with_gap
from models.evaluate import DEFAULT_FINENESS
from models.fast.circuit import assemble_circuit, solve_system
from models.fast.pull import net_pull

#: The plate's radius and thickness [m] and mass [kg] (TEAM 28, as given in issue 29).
PLATE_RADIUS_MM, PLATE_THICKNESS_MM, PLATE_MASS_KG = 65.0, 3.0, 0.107
#: The plate's weight [N]: 0.107 kg x standard gravity (scipy.constants.g, 9.80665 m/s^2).
WEIGHT_N = PLATE_MASS_KG * standard_gravity
#: Measured equilibrium height [mm] (TEAM 28's table, as given in issue 29).
MEASURED_HEIGHT_MM = 11.3
#: Heights of the table [mm]: 3.8 to 20 mm (above that the force is a few mN).
HEIGHTS_MM = (3.8, 5.0, 7.5, 10.0, 11.3, 12.5, 15.0, 17.5, 20.0)


def team28_source(height_mm: float = MEASURED_HEIGHT_MM) -> dict:
    """The TEAM 28 device as a design file (mm, Hz, A rms): two coils in opposite senses, no
    pole (an air core), the plate at ``height_mm`` above the coils' tops."""
    volume_mm3 = math.pi * PLATE_RADIUS_MM**2 * PLATE_THICKNESS_MM
    return {
        "name": "team28",
        "drive": {"frequency_Hz": 50.0, "current_A": 14.142},  # 20 A peak
        "coils": [
            {
                "inner_radius_mm": 27.0,
                "outer_radius_mm": 55.0,
                "setback_mm": 0.0,
                "length_mm": 52.0,
                "turns": 960,
                "sense": 1,
            },
            {
                "inner_radius_mm": 80.0,
                "outer_radius_mm": 95.0,
                "setback_mm": 0.0,
                "length_mm": 52.0,
                "turns": 576,
                "sense": -1,
            },
        ],
        "target": {
            "radius_mm": PLATE_RADIUS_MM,
            "thickness_mm": PLATE_THICKNESS_MM,
            "gap_mm": height_mm,
            "conductivity_S_per_m": 3.4e7,
            "temperature_coefficient_per_K": 0.004,
            "density_kg_per_m3": PLATE_MASS_KG / (volume_mm3 * 1e-9),
        },
    }


def team28_design(height_mm: float = MEASURED_HEIGHT_MM):
    return design_from_dict(team28_source(height_mm), name="team28")


def fast_force(height_mm: float, fineness=None) -> float:
    """Levitation force [N] (upward, -pull) from the fast model at ``height_mm``, the plate at
    the conductivity given (20 degC, no thermal state: the problem's data)."""
    design = team28_design(height_mm)
    system = assemble_circuit(design, fineness or DEFAULT_FINENESS, None, pull_only=True)
    return -net_pull(solve_system(system))


def fem_force(height_mm: float, refine: float = 1.0) -> float:
    """Levitation force [N] from the FEM reference (models.fem.solve) at ``height_mm``."""
    from models.fem.solve import solve

    return -solve(with_gap(team28_design(), height_mm), refine=refine).pull_N


def equilibrium_height_mm(force=fast_force, low: float = 8.0, high: float = 15.0) -> float:
    """Height [mm] where ``force`` equals the plate's weight: Brent's root in [low, high]
    (bracketed: the force falls with height)."""
    return brentq(lambda h: force(h) - WEIGHT_N, low, high, xtol=1e-4)


def table(with_fem: bool = True) -> list[tuple]:
    """(height [mm], fast [N], FEM refine 1 [N], FEM refine 2 [N]) at HEIGHTS_MM."""
    rows = []
    for h in HEIGHTS_MM:
        fem = (fem_force(h, 1.0), fem_force(h, 2.0)) if with_fem else (math.nan, math.nan)
        rows.append((h, fast_force(h), *fem))
    return rows


def _plot(rows, path: str) -> None:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots(figsize=(6, 4))
    h = [r[0] for r in rows]
    ax.plot(h, [r[1] for r in rows], "o-", label="fast model")
    ax.plot(h, [r[3] for r in rows], "x--", label="FEM (fine mesh)")
    ax.axhline(WEIGHT_N, color="k", lw=0.8, label=f"weight {WEIGHT_N:.4g} N")
    ax.axvline(MEASURED_HEIGHT_MM, color="r", lw=0.8, ls=":", label="measured 11.3 mm")
    ax.set_xlabel("plate height above the coils [mm]")
    ax.set_ylabel("levitation force [N]")
    ax.set_title("TEAM Workshop Problem 28: force against height")
    ax.legend()
    fig.tight_layout()
    fig.savefig(path, dpi=120)
    plt.close(fig)


def main(argv=None) -> None:
    argv = sys.argv[1:] if argv is None else argv
    rows = table()
    print("| height [mm] | fast [N] | FEM [N] | FEM, mesh / 2 [N] | fast / FEM - 1 |")
    print("|---:|---:|---:|---:|---:|")
    for h, fast, fem1, fem2 in rows:
        print(
            f"| {h:g} | {fast:.4f} | {fem1:.4f} | {fem2:.4f} | {100 * (fast / fem2 - 1):+.2f} % |"
        )
    print(f"fast model's equilibrium height: {equilibrium_height_mm():.2f} mm (measured 11.3 mm)")
    if argv:
        _plot(rows, argv[0])
        print(f"plot: {argv[0]}")


if __name__ == "__main__":
    main()
