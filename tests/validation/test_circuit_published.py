"""The multi-loop circuit model against published closed-form results and exact identities.

Rms phasors throughout (DESIGN.md): time averages carry no factor 1/2, <P> = |I|^2 R and
<F> = Re(I1 conj(I2)) dM/dz1. The e^{+j omega t} convention of the code is used in every
derivation below. Each expected value names its source beside it; each tolerance says why.

Checks
------
1. Conducting sphere in a uniform AC axial field: exact absorbed power (spherical Bessel solution).
2. Thin disc in a uniform field at low frequency: P = pi sigma omega^2 B0^2 d a^4 / 8 (rms B0).
3. Thomson's jumping ring: one-loop force formula; repulsion above an air-cored coil.
4. Reciprocity and energy: M symmetric and positive definite, dM/dz antisymmetric and equal to
   the derivative of M.
5. Energy balance at the coil terminals; voltage drive versus current drive.
6. Convergence of the pull with the skin-depth-graded fineness.
"""

from __future__ import annotations

import copy
import dataclasses
import importlib.util
import math
import tomllib

import numpy as np
import pytest
from scipy.constants import mu_0
from scipy.integrate import quad

from models.design import design_from_dict, load_design
from models.evaluate import DEFAULT_FINENESS, evaluate
from models.fast.circuit import COIL, TARGET, build_cells, cell_mutual_matrix
from models.fast.discretize import Cells, Fineness, conductor_cells, graded_edges
from models.fast.filaments import mutual, mutual_dz, self_inductance_rect
from optim.demo import DEMO_DESIGN
from tests.conftest import TEST_COIL

DEMO = DEMO_DESIGN
SIGMA_CU = 58.0e6  # annealed copper, 100 % IACS [S/m] (IEC 60028)
DENSITY_CU = 8890.0  # [kg/m^3] (common handbook value, from memory; only the weight uses it)
HAVE_POLE = importlib.util.find_spec("models.fast.pole") is not None


# ------------------------------------------------------------------------------------------------
# Helpers


def _air_design(frequency_Hz, target, coil=None, current_A=2.0, ring=None, drive=None):
    """An air-cored design: a non-magnetic, non-conducting 'pole' (mu_r = 1, sigma = 0), so
    evaluate() builds no pole model and the circuit is coil + target (+ ring) in free space."""
    data = {
        "pole": {
            "radius_mm": 5.0,
            "length_mm": 40.0,
            "relative_permeability": 1.0,
            "conductivity_S_per_m": 0.0,
        },
        "coil": coil
        or {
            "inner_radius_mm": 8.0,
            "outer_radius_mm": 12.0,
            "setback_mm": 0.0,
            "length_mm": 10.0,
            "turns": 100,
            "wire_diameter_mm": 0.5,
        },
        "drive": drive or {"frequency_Hz": frequency_Hz, "current_A": current_A},
        "target": {"conductivity_S_per_m": SIGMA_CU, "density_kg_per_m3": DENSITY_CU, **target},
    }
    if ring is not None:
        data["ring"] = ring
    return design_from_dict(data)


def _uniform_field_emf(cells: Cells, omega, b0):
    """EMF of a uniform axial field b0 [T rms] in each cell [V]: -j omega b0 <pi r^2>, the flux
    averaged over the cell's meridian section with the uniform current weight the cell carries:
    <r^2> = (r0^2 + r0 r1 + r1^2) / 3."""
    mean_r2 = (cells.r0**2 + cells.r0 * cells.r1 + cells.r1**2) / 3.0
    return -1j * omega * b0 * np.pi * mean_r2


def _driven_loss(cells: Cells, omega, b0):
    """Time-averaged loss [W] of cells shorted on themselves and driven by a uniform field:
    (R + j omega M) I = EMF, P = sum |I|^2 R."""
    M, _ = cell_mutual_matrix(cells)
    r = cells.resistance()
    z = 1j * omega * M
    z[np.diag_indices_from(z)] += r
    current = np.linalg.solve(z, _uniform_field_emf(cells, omega, b0))
    return float(np.sum(np.abs(current) ** 2 * r))


# ------------------------------------------------------------------------------------------------
# 1. Conducting sphere in a uniform AC axial field
#
# Derivation (e^{j omega t}; the same boundary-value problem as Landau & Lifshitz, Electrodynamics
# of Continuous Media, 2nd ed., sec. 59, problem 1 -- from memory; Smythe, Static and Dynamic
# Electricity, treats it too). Sphere of radius a, conductivity sigma, mu = mu0, in B0 z_hat.
# A = A_phi(r, theta): inside, curl curl A = -gamma^2 A with gamma^2 = j omega mu0 sigma, i.e.
# gamma = (1 + j) / delta, solved by A = C i1(gamma r) sin(theta) (modified spherical Bessel
# function i1(x) = cosh(x)/x - sinh(x)/x^2); outside A = (B0 r / 2 + D / r^2) sin(theta), the
# dipole D = mu0 m / (4 pi). Continuity of A and of d(r A)/dr (tangential H, mu = mu0) at r = a,
# with x i1'(x) = x i0(x) - 2 i1(x) and i1/i0 = coth x - 1/x, gives
#
#     m = (2 pi a^3 B0 / mu0) f(x),   f(x) = 3 coth(x) / x - 3 / x^2 - 1,   x = (1 + j) a / delta.
#
# Limits: f -> -1 as x -> inf (the superconducting sphere, m = -2 pi a^3 H0), f -> -x^2/15 as
# x -> 0. The power the source delivers to the induced dipole is P = -omega Im(m conj(B0)) (rms):
#
#     P = -(2 pi a^3 omega |B0|^2 / mu0) Im f(x).
#
# Independent checks of that formula (below): its low-frequency limit equals the integral of
# sigma |E|^2 with E_phi = omega B0 rho / 2 (rho = r sin(theta)), 2 pi sigma omega^2 B0^2 a^5 / 15
# (rms; pi/15 for peak amplitudes); its high-frequency limit equals the surface-resistance loss
# (1 / (sigma delta)) * integral |H_t|^2 dS with H_t = (3/2) H0 sin(theta) on the surface of a
# perfectly conducting sphere, 6 pi a^2 H0^2 / (sigma delta); and Landau & Lifshitz's form of the
# polarisability (e^{-i omega t}, from memory) alpha = -(3 / (8 pi)) [1 - 3/(k a)^2 + 3 cot(k a) /
# (k a)], k = (1 + i) / delta, m = 4 pi alpha V H0 in SI, gives the same number.


def _sphere_f(x):
    return 3.0 / (x * np.tanh(x)) - 3.0 / x**2 - 1.0


def _sphere_loss(radius, conductivity, omega, b0):
    """Exact time-averaged power [W] absorbed by a sphere in a uniform field b0 [T rms]."""
    delta = math.sqrt(2.0 / (omega * mu_0 * conductivity))
    x = (1.0 + 1.0j) * radius / delta
    return -(2.0 * math.pi * radius**3 * omega * b0**2 / mu_0) * float(np.imag(_sphere_f(x)))


def _sphere_loss_landau(radius, conductivity, omega, b0):
    """The same power from Landau & Lifshitz's polarisability (e^{-i omega t}, Gaussian alpha):
    P = omega mu0 V H0^2 Im(4 pi alpha) (rms)."""
    delta = math.sqrt(2.0 / (omega * mu_0 * conductivity))
    ka = (1.0 + 1.0j) * radius / delta
    alpha = -3.0 / (8.0 * np.pi) * (1.0 - 3.0 / ka**2 + 3.0 / (ka * np.tan(ka)))
    volume = 4.0 / 3.0 * math.pi * radius**3
    return omega * mu_0 * volume * (b0 / mu_0) ** 2 * float(np.imag(4.0 * np.pi * alpha))


def _sphere_cells(radius, delta, conductivity, slices=32, surface=0.2, growth=1.2):
    """Cells filling a sphere centred on z = 0: `slices` equal slices in z, each a disc divided in r
    (graded to `surface` skin depths at its rim).

    The staircase error. Cells must be rectangles, so each slice [z0, z1] is a disc of one outer
    radius rho_s. A plain staircase (rho_s = the sphere's radius at the slice centre, or cells whose
    centres fall inside) misplaces volume at first order in the slice thickness. Here rho_s is
    chosen so that the slice's integral of rho^4 equals the sphere's,
        rho_s^4 (z1 - z0) = integral_{z0}^{z1} (a^2 - z^2)^2 dz,
    which makes each slice's low-frequency loss (proportional to that integral, check 2) and its
    dipole moment exact; what remains is second order in (z1 - z0)/a and, at high frequency, the
    surface near the poles, where H_t ~ sin(theta) is small. Measured, model / exact - 1 with this
    helper's defaults (surface 0.2, growth 1.2):
        a/delta   32 slices   48 slices
        0.5       +0.00001    +0.000003
        1         +0.00006    +0.00003
        2         +0.00028    +0.00014
        5         -0.0023     -0.0022
    Earlier trials (surface 0.25, growth 1.3) at a/delta = 0.5: rho^4 matching +0.0001 / +0.0000 /
    +0.0000 at 16 / 24 / 32 slices, rho^2 (volume) matching -0.0032 / -0.0014 / -0.0008. So the
    geometric error is well below 0.1 %; the -0.2 % left at a/delta = 5 does not move with the
    slices and belongs to the cell model (surface cells, near-pair quadrature).
    """
    edges_z = np.linspace(-radius, radius, slices + 1)
    a2 = radius * radius

    def antiderivative(z):  # integral of (a^2 - z^2)^2 dz
        return a2 * a2 * z - 2.0 * a2 * z**3 / 3.0 + z**5 / 5.0

    parts = []
    h_max = min(2.0 * radius / slices, 1.5 * delta)
    for z0, z1 in zip(edges_z[:-1], edges_z[1:], strict=True):
        rho_s = ((antiderivative(z1) - antiderivative(z0)) / (z1 - z0)) ** 0.25
        h_rim = min(surface * delta, 0.5 * rho_s)
        re = graded_edges(0.0, rho_s, None, h_rim, h_max, growth, 2, 10_000)
        n = re.size - 1
        parts.append(
            Cells(
                r0=re[:-1],
                r1=re[1:],
                z0=np.full(n, z0),
                z1=np.full(n, z1),
                conductivity=np.full(n, conductivity),
                part=np.full(n, TARGET),
            )
        )
    return Cells.concat(*parts)


def test_sphere_formula_low_frequency_limit_is_the_sigma_e_squared_integral():
    """Low frequency: P -> sigma * integral (omega B0 rho / 2)^2 dV (derived in the header)."""
    a, sigma, b0 = 0.01, SIGMA_CU, 1e-3
    delta = a / 0.03
    omega = 2.0 / (mu_0 * sigma * delta**2)

    # Independent: sigma (omega B0 / 2)^2 * integral of rho^2 over the ball, by quadrature in theta
    # of the radial integral a^5/5: integral rho^2 dV = 2 pi (a^5 / 5) integral sin^3 = 8 pi a^5/15.
    angular, _ = quad(lambda t: math.sin(t) ** 3, 0.0, math.pi)
    p_integral = sigma * (omega * b0 / 2.0) ** 2 * 2.0 * math.pi * a**5 / 5.0 * angular
    p_closed = 2.0 * math.pi * sigma * omega**2 * b0**2 * a**5 / 15.0  # rms form (header)
    assert p_integral == pytest.approx(p_closed, rel=1e-12)  # quad of sin^3 is exact to rounding

    # The exact formula's next term is -(4/105)(a/delta)^4 relative (series of coth): 3e-8 at
    # a/delta = 0.03; rounding in f(x) (cancellation of 3/x^2 against 3 coth(x)/x) ~ 1e-9.
    assert _sphere_loss(a, sigma, omega, b0) == pytest.approx(p_integral, rel=1e-6)


def test_sphere_formula_high_frequency_limit_is_the_surface_resistance_loss():
    """High frequency: P -> (1/(sigma delta)) integral |H_t|^2 dS, H_t = (3/2) H0 sin(theta)."""
    a, sigma, b0 = 0.01, SIGMA_CU, 1e-3
    ratio_a_delta = 100.0
    delta = a / ratio_a_delta
    omega = 2.0 / (mu_0 * sigma * delta**2)
    h0 = b0 / mu_0
    angular, _ = quad(lambda t: math.sin(t) ** 3, 0.0, math.pi)
    p_surface = (1.0 / (sigma * delta)) * (1.5 * h0) ** 2 * 2.0 * math.pi * a**2 * angular
    assert p_surface == pytest.approx(6.0 * math.pi * a**2 * h0**2 / (sigma * delta), rel=1e-12)
    # The surface-impedance result is the leading term; the curvature of the surface corrects it
    # at first order in delta/a (the exact formula gives 1 - delta/a), so allow 2 delta/a.
    p = _sphere_loss(a, sigma, omega, b0)
    assert abs(p / p_surface - 1.0) < 2.0 / ratio_a_delta


@pytest.mark.parametrize("a_over_delta", [0.5, 1.0, 2.0, 5.0, 20.0])
def test_sphere_formula_agrees_with_landau_lifshitz_form(a_over_delta):
    """Two statements of one result (opposite time conventions): equal to rounding."""
    a, sigma, b0 = 0.01, SIGMA_CU, 1e-3
    omega = 2.0 / (mu_0 * sigma * (a / a_over_delta) ** 2)
    assert _sphere_loss(a, sigma, omega, b0) == pytest.approx(
        _sphere_loss_landau(a, sigma, omega, b0), rel=1e-10
    )


@pytest.mark.parametrize("a_over_delta", [0.5, 1.0, 2.0, 5.0])
def test_sphere_loss_cell_model_matches_exact(a_over_delta):
    """Cell model of a copper sphere (a = 10 mm) in a uniform field against the exact power
    (header derivation; Landau & Lifshitz sec. 59 problem 1, from memory). Tolerance 2 %: the
    staircase geometry contributes a few 0.1 % (table in _sphere_cells); the rest is the cell
    model itself (uniform current per cell, 2 x 2 Gauss near pairs, GMD self terms)."""
    a, sigma, b0 = 0.01, SIGMA_CU, 1e-3
    delta = a / a_over_delta
    omega = 2.0 / (mu_0 * sigma * delta**2)
    cells = _sphere_cells(a, delta, sigma)
    p_model = _driven_loss(cells, omega, b0)
    p_exact = _sphere_loss(a, sigma, omega, b0)
    assert p_model == pytest.approx(p_exact, rel=0.02)


def test_sphere_loss_cell_model_is_converged_in_the_geometry():
    """Refining the slices by 1.5x changes the sphere's loss by far less than the 2 % tolerance of
    the check above (measured 0.004 % at a/delta = 5, the hardest case), so that check measures
    the cell model, not the staircase. 0.5 %: a quarter of that tolerance."""
    a, sigma, b0 = 0.01, SIGMA_CU, 1e-3
    delta = a / 5.0
    omega = 2.0 / (mu_0 * sigma * delta**2)
    p32 = _driven_loss(_sphere_cells(a, delta, sigma, slices=32), omega, b0)
    p48 = _driven_loss(_sphere_cells(a, delta, sigma, slices=48), omega, b0)
    assert p32 == pytest.approx(p48, rel=0.005)


# ------------------------------------------------------------------------------------------------
# 2. Thin disc at low frequency
#
# Derived here (the classical eddy-current loss of a disc, e.g. Lammeraner & Stafl, Eddy Currents,
# 1966 -- from memory): when a << delta and d << delta the induced currents do not disturb the
# applied field, so E_phi = omega B0 r / 2 (Faraday's law round a circle of radius r) and
#     P = integral sigma E^2 dV = sigma d (omega B0 / 2)^2 integral_0^a r^2 2 pi r dr
#       = pi sigma omega^2 B0^2 d a^4 / 8        (B0 rms; pi/16 for a peak amplitude).


def test_thin_disc_low_frequency_loss():
    """Copper disc a = 10 mm, d = 0.5 mm, a/delta = 0.05, discretised as the model does a target
    (conductor_cells, DEFAULT_FINENESS). Tolerance 1 %: the reaction of the induced currents on the
    field is of order (omega mu0 sigma a d)^2 = (2 a d / delta^2)^2 ~ 6e-8; a cell carrying a
    uniform current instead of J ~ r errs by second order in dr/r (+0.6 % on a cell spanning r/2
    to r, 0.05 % on a whole disc of three radial cells, worked out by hand). Measured: +0.01 %
    with 6 radial cells."""
    a, d, sigma, b0 = 0.01, 0.5e-3, SIGMA_CU, 1e-3
    delta = a / 0.05
    omega = 2.0 / (mu_0 * sigma * delta**2)
    frequency = omega / (2.0 * math.pi)
    cells = conductor_cells(
        0.0, a, 0.0, d, sigma, frequency, TARGET, DEFAULT_FINENESS, graded_r=(False, True)
    )
    expected = math.pi * sigma * omega**2 * b0**2 * d * a**4 / 8.0  # derived above (rms)
    assert _driven_loss(cells, omega, b0) == pytest.approx(expected, rel=0.01)


# ------------------------------------------------------------------------------------------------
# 3. Thomson's jumping ring
#
# A ring (one loop, R, L) coupled to a coil carrying I0 by M(z). Kirchhoff for the ring:
# (R + j omega L) I_r + j omega M I0 = 0, so I_r = -j omega M I0 / (R + j omega L), and the
# time-averaged force on the ring (rms) is
#     <F_z> = Re(I_r conj(I0)) dM/dz = -(omega^2 L M / (R^2 + omega^2 L^2)) |I0|^2 dM/dz.
# Above the coil dM/dz < 0 and M > 0: F_z > 0, the ring is repelled (Lenz). This is the "linear
# inductive model" of Tjossem & Cornejo, "Measurements and mechanisms of Thomson's jumping ring",
# Am. J. Phys. 68, 238 (2000) (force ~ sin * cos of the ring's phase lag); derived here.

_RING_TARGET = {"inner_radius_mm": 9.5, "radius_mm": 10.5, "thickness_mm": 1.0, "gap_mm": 3.0}
_ONE_CELL = Fineness(min_cells=1, max_cells=1)


def _one_loop_ring(design):
    """R, L of the ring as one uniform-current loop and M, dM/dz to the whole coil (the coil's
    sub-filaments share its ampere-turns; the ring is more than a cell size away, so the model's
    centre-to-centre Maxwell formula is the right comparison)."""
    cells = build_cells(design, _ONE_CELL)
    tgt = cells.part == TARGET
    coil = cells.part == COIL
    assert tgt.sum() == 1
    t = design.target
    resistance = (
        2.0 * math.pi / (t.conductivity * t.thickness * math.log(t.radius / t.inner_radius))
    )
    rc = 0.5 * (t.radius + t.inner_radius)
    zc = t.gap + 0.5 * t.thickness
    inductance = float(self_inductance_rect(rc, t.radius - t.inner_radius, t.thickness))
    share = design.coil.turns / coil.sum()
    m = share * float(mutual(rc, zc, cells.rc[coil], cells.zc[coil]).sum())
    dm = share * float(mutual_dz(rc, zc, cells.rc[coil], cells.zc[coil]).sum())
    return resistance, inductance, m, dm


def _ring_force(omega, resistance, inductance, m, dm, i0):
    """<F_z> on the ring [N] (rms), from the header derivation."""
    return -(omega**2 * inductance * m / (resistance**2 + omega**2 * inductance**2)) * i0**2 * dm


def _design_at(omega_l_over_r):
    base = _air_design(100.0, _RING_TARGET)
    resistance, inductance, _, _ = _one_loop_ring(base)
    frequency = omega_l_over_r * resistance / inductance / (2.0 * math.pi)
    return _air_design(frequency, _RING_TARGET)


@pytest.mark.parametrize("omega_l_over_r", [0.1, 1.0, 10.0, 100.0])
def test_jumping_ring_single_cell_is_the_two_loop_formula(omega_l_over_r):
    """With one cell the ring is exactly the one-loop circuit: an algebraic identity (1e-9; the
    solve of a well-conditioned 2-unknown system is exact to ~1e-15)."""
    design = _design_at(omega_l_over_r)
    resistance, inductance, m, dm = _one_loop_ring(design)
    assert dm < 0.0 < m  # ring above the coil
    force = _ring_force(design.drive.omega, resistance, inductance, m, dm, design.drive.current)
    result = evaluate(design, fineness=_ONE_CELL, isothermal=True)
    assert result.pull_N == pytest.approx(-force, rel=1e-9)  # pull is -F_z (toward the face)
    ring_current = (
        design.drive.omega
        * m
        * design.drive.current
        / math.hypot(resistance, design.drive.omega * inductance)
    )
    assert result.target_loss_W == pytest.approx(ring_current**2 * resistance, rel=1e-9)


@pytest.mark.parametrize("omega_l_over_r", [0.1, 1.0])
def test_jumping_ring_cells_agree_with_one_loop_at_low_frequency(omega_l_over_r):
    """The fully discretised ring (DEFAULT_FINENESS) against the one-loop formula, 1 mm square
    section at 10 mm radius, 3 mm above the coil. Tolerance 1 %: with d/delta <= 1 the current is
    nearly the DC distribution; averaging M and dM/dz over the section instead of taking them at
    its centre differs by O((d / gap)^2 / 12) ~ 1 % at most. Measured: +0.006 % and -0.16 %."""
    design = _design_at(omega_l_over_r)
    resistance, inductance, m, dm = _one_loop_ring(design)
    force = _ring_force(design.drive.omega, resistance, inductance, m, dm, design.drive.current)
    assert evaluate(design, isothermal=True).pull_N == pytest.approx(-force, rel=0.01)


def test_jumping_ring_cells_at_high_frequency_lie_between_dc_and_surface_inductance():
    """At omega L / R = 100 the force tends to -M dM/dz I0^2 / L (formula above), but the current in
    a real ring crowds to its surface (d/delta ~ 10), so L falls from the uniform-current value to
    the external inductance mu0 r (ln(8 r / a_eq) - 2), a_eq = 0.59 d the equivalent radius of a
    square conductor (Balanis, Antenna Theory, sec. on equivalent radius -- from memory). So the
    cell model's force must exceed the one-loop force by a factor between 1 and L_dc / L_hf
    (= 1.095 here; measured 1.090 at DEFAULT_FINENESS, 1.094 at scaled(2)). Margins: -0.2 % for
    the factor omega^2 L^2 / (R^2 + omega^2 L^2) with R raised by the skin effect, +1 % for the
    section-averaging of M (previous test)."""
    design = _design_at(100.0)
    resistance, inductance, m, dm = _one_loop_ring(design)
    omega, i0 = design.drive.omega, design.drive.current
    force = _ring_force(omega, resistance, inductance, m, dm, i0)
    t = design.target
    rc = 0.5 * (t.radius + t.inner_radius)
    l_surface = mu_0 * rc * (math.log(8.0 * rc / (0.59 * t.thickness)) - 2.0)
    ratio = evaluate(design, isothermal=True).pull_N / -force
    assert 0.998 < ratio < inductance / l_surface * 1.01
    # and the ratio grows with frequency (the current crowds further out)
    assert _cell_to_loop_ratio(10.0) < ratio


def _cell_to_loop_ratio(omega_l_over_r):
    design = _design_at(omega_l_over_r)
    resistance, inductance, m, dm = _one_loop_ring(design)
    force = _ring_force(design.drive.omega, resistance, inductance, m, dm, design.drive.current)
    return evaluate(design, isothermal=True).pull_N / -force


@pytest.mark.parametrize("frequency_Hz", [10.0, 100.0, 1e3, 1e4, 1e5])
@pytest.mark.parametrize(
    "target",
    [
        {"radius_mm": 15.0, "thickness_mm": 2.0, "gap_mm": 1.0},
        {"radius_mm": 4.0, "thickness_mm": 1.0, "gap_mm": 0.6},
        _RING_TARGET,
    ],
    ids=["disc-15mm", "disc-4mm", "ring"],
)
def test_target_above_air_cored_coil_is_repelled_at_every_frequency(frequency_Hz, target):
    """Lenz's law: without iron the induced currents oppose the coil's flux, so a target above an
    air-cored coil is pushed away (pull < 0) at every frequency (the FEM shows the same). Exact in
    sign: each term of the pull is -omega^2 L M dM/dz / |Z|^2 > 0 in the one-loop limit."""
    result = evaluate(_air_design(frequency_Hz, target), isothermal=True)
    assert result.pull_N < 0.0
    assert result.pull_by_source_N["coil"] < 0.0
    assert result.pull_by_source_N["ring"] == 0.0
    assert result.pull_by_source_N["pole"] == 0.0


# ------------------------------------------------------------------------------------------------
# 4. Reciprocity


def _mixed_cells():
    """Ring, target and coil cells of an air-cored design at 20 kHz (skin depth 0.46 mm in copper:
    graded, high-aspect surface cells, the hardest case for the near-pair quadrature)."""
    ring = {"inner_radius_mm": 2.0, "outer_radius_mm": 4.0, "depth_mm": 2.0}
    design = _air_design(2e4, {"radius_mm": 6.0, "thickness_mm": 1.5, "gap_mm": 0.5}, ring=ring)
    return build_cells(design, DEFAULT_FINENESS)


@pytest.mark.parametrize("which", ["design-20kHz", "sphere"])
def test_cell_mutual_matrix_is_reciprocal_and_positive_definite(which):
    """M_ij = M_ji (reciprocity: Neumann's formula is symmetric), dM_ij/dz_i = -dM_ji/dz_j (the
    kernel depends on z_i - z_j only), both to 1e-12 of the largest entry (rounding); M positive
    definite (the magnetic energy (1/2) I^T M I of any real current pattern is > 0)."""
    if which == "sphere":  # cells on the axis and thin surface cells (check 1 at a/delta = 5)
        cells = _sphere_cells(0.01, 0.002, SIGMA_CU)
    else:
        cells = _mixed_cells()
    M, D = cell_mutual_matrix(cells)
    assert cells.n > 100
    scale_m = np.abs(M).max()
    scale_d = np.abs(D).max()
    assert np.abs(M - M.T).max() <= 1e-12 * scale_m
    assert np.abs(D + D.T).max() <= 1e-12 * scale_d
    assert np.all(np.diag(D) == 0.0)
    # Jacobi-scaled (unit diagonal) so that definiteness is judged against O(1), not against the
    # largest self-inductance; Cholesky succeeds iff the matrix is positive definite. Measured
    # smallest eigenvalue of the scaled matrix: 0.050 (design cells), 0.071 (sphere).
    s = 1.0 / np.sqrt(np.diag(M))
    np.linalg.cholesky(M * s[:, None] * s[None, :])  # raises LinAlgError if not


def test_dmdz_is_the_derivative_of_m():
    """dM/dz between target and the other cells equals the central difference of M when the target
    moves rigidly by +-h (force = gradient of the co-energy), h = 1 um. Rounding ~ eps M / h ~ 1e-10
    relative; truncation below."""
    cells = _mixed_cells()
    _, D = cell_mutual_matrix(cells)
    tgt = cells.part == TARGET
    h = 1e-6

    def shifted(dz):
        z0 = np.where(tgt, cells.z0 + dz, cells.z0)
        z1 = np.where(tgt, cells.z1 + dz, cells.z1)
        return Cells(cells.r0, cells.r1, z0, z1, cells.conductivity, cells.part)

    m_up, _ = cell_mutual_matrix(shifted(h))
    m_dn, _ = cell_mutual_matrix(shifted(-h))
    fd = (m_up - m_dn)[np.ix_(tgt, ~tgt)] / (2.0 * h)
    exact = D[np.ix_(tgt, ~tgt)]
    # The target sits 0.5 mm above the ring (cells of 0.2-0.5 mm): pairs are not adjacent, so the
    # central difference is accurate to (h / 0.5 mm)^2 ~ 4e-6 of each entry.
    assert np.abs(fd - exact).max() <= 1e-5 * np.abs(exact).max()


# ------------------------------------------------------------------------------------------------
# 5. Energy balance and voltage drive
#
# With current drive the solid loops satisfy Z_ss I_s = -Z_sc I0 and V = Z_cs I_s + Z_cc I0, so
# V conj(I0) = I^H Z I (all loops) = sum R |I|^2 + j omega I^H L I. For a real symmetric L the
# last term is purely imaginary, so Re(V conj(I0)) = sum R |I|^2 exactly: the reactive elements
# (free inductances, the magnetised laminated pole) store energy and dissipate none. 1e-9: the
# identity holds to the residual of the linear solve, ~cond(Z) * eps.


def _air_with_ring(drive=None):
    return _air_design(
        400.0,
        {"radius_mm": 4.0, "thickness_mm": 1.0, "gap_mm": 0.6},
        ring={"inner_radius_mm": 2.0, "outer_radius_mm": 4.5, "depth_mm": 3.0},
        current_A=3.0,
        drive=drive,
    )


def _demo_dict():
    with DEMO.open("rb") as fh:
        return tomllib.load(fh)


def test_energy_balance_air_cored():
    r = evaluate(_air_with_ring(), isothermal=True)
    assert r.ring_loss_W > 0.0 and r.target_loss_W > 0.0
    total = r.target_loss_W + r.ring_loss_W + r.coil_loss_W
    assert r.input_power_W == pytest.approx(total, rel=1e-9)


@pytest.mark.skipif(not HAVE_POLE, reason="models/fast/pole.py (laminated pole) is not there yet")
def test_energy_balance_laminated_demo():
    """Energy balance (Poynting's theorem at the terminals): Re(V I*) = coil + ring + target +
    core losses, each loss summed on its own (the core's eddy loss from Im(M_iron), not from the
    terminals). A pole without sheet data or loss law adds a real, symmetric inductance: no loss."""
    r = evaluate(load_design(DEMO), isothermal=True)
    assert r.n_panels > 0 and r.core_eddy_loss_W > 0 and r.core_hysteresis_loss_W > 0
    total = r.target_loss_W + r.ring_loss_W + r.coil_loss_W + r.core_loss_W
    assert r.input_power_W == pytest.approx(total, rel=1e-12)
    lossless = _with(load_design(DEMO), relative_permeability=2000.0)
    r = evaluate(lossless, isothermal=True)
    assert r.core_loss_W == 0.0
    total = r.target_loss_W + r.ring_loss_W + r.coil_loss_W
    assert r.input_power_W == pytest.approx(total, rel=1e-12)


def _with(design, **pole):
    """``design`` with its pole given by these fields instead of a library material."""
    fields = dict(material=None, lamination_thickness=None, sheet_conductivity=None, core_loss=None)
    return dataclasses.replace(design, pole=dataclasses.replace(design.pole, **fields, **pole))


def _voltage_twin(data, result):
    twin = copy.deepcopy(data)
    twin["drive"] = {
        "frequency_Hz": data["drive"]["frequency_Hz"],
        "voltage_V": result.coil_voltage_V,
    }
    return design_from_dict(twin)


def test_voltage_drive_reproduces_current_drive_air_cored():
    """Driving with |V| of a current-driven solution gives back |I| and the same pull, losses and
    impedance: the circuit is linear and |V| = |Z| |I| (1e-9: two solves of the same system)."""
    design = _air_with_ring()
    r_i = evaluate(design, isothermal=True)
    r_v = evaluate(_voltage_twin(design.source, r_i), isothermal=True)
    assert r_v.coil_current_A == pytest.approx(r_i.coil_current_A, rel=1e-9)
    assert r_v.pull_N == pytest.approx(r_i.pull_N, rel=1e-9)
    assert r_v.target_loss_W == pytest.approx(r_i.target_loss_W, rel=1e-9)
    assert r_v.coil_impedance_ohm == pytest.approx(r_i.coil_impedance_ohm, rel=1e-9)


@pytest.mark.skipif(not HAVE_POLE, reason="models/fast/pole.py (laminated pole) is not there yet")
def test_voltage_drive_reproduces_current_drive_laminated_demo():
    data = _demo_dict()
    r_i = evaluate(design_from_dict(data), isothermal=True)
    r_v = evaluate(_voltage_twin(data, r_i), isothermal=True)
    assert r_v.coil_current_A == pytest.approx(r_i.coil_current_A, rel=1e-9)
    assert r_v.pull_N == pytest.approx(r_i.pull_N, rel=1e-9)


# ------------------------------------------------------------------------------------------------
# 6. Skin-depth convergence of the pull
#
# Aluminium disc above the air-cored coil of the demo (10.5-22 mm, 30 mm long, 300 turns, 3 A).
# Measured (regression values of this model, Fineness.min_cells = 6), pull relative to
# DEFAULT_FINENESS.scaled(3):
#   case                          delta    scaled(0.5)  default   scaled(2)  | target loss, default
#   r 15 mm, 2 mm thick, 400 Hz   4.2 mm   -1.80 %      -0.72 %   -0.16 %    | -1.3 %
#   r 15 mm, 2 mm thick, 20 kHz   0.60 mm  -1.96 %      -0.60 %   -0.13 %    | -1.7 %
#   r 4 mm, 1 mm thick, 5 kHz     1.2 mm   -3.78 %      -0.56 %   -0.08 %    | -1.1 %
#   r 4 mm, 1 mm thick, 400 Hz    4.2 mm   +1.06 %      -0.09 %   -0.03 %    | -0.9 %
# Convergence is roughly h^1.5, so extrapolated the default is ~0.9 % short of the limit in the
# worst case: "within about 1 %", as evaluate() claims, holds for the pull but only just; the
# target loss converges more slowly (default ~1-2 % low).

_CONVERGENCE_COIL = TEST_COIL
_SIGMA_AL = 0.61 * 58.0e6  # aluminium 1350, 61 % IACS (IEC 60889, from memory)


@pytest.mark.parametrize(
    ("frequency_Hz", "target"),
    [
        (400.0, {"radius_mm": 15.0, "thickness_mm": 2.0, "gap_mm": 1.0}),
        (2e4, {"radius_mm": 15.0, "thickness_mm": 2.0, "gap_mm": 1.0}),
        (5e3, {"radius_mm": 4.0, "thickness_mm": 1.0, "gap_mm": 0.6}),
    ],
    ids=["disc15-400Hz", "disc15-20kHz", "disc4-5kHz"],
)
def test_pull_converges_with_fineness(frequency_Hz, target):
    """Default within 1 % of scaled(3) (DESIGN/evaluate claim); the differences shrink as the
    cells are refined (0.5 -> 1 -> 2 against 3), i.e. the sequence converges."""
    target = {**target, "conductivity_S_per_m": _SIGMA_AL, "density_kg_per_m3": 2703.0}
    design = _air_design(frequency_Hz, target, coil=_CONVERGENCE_COIL, current_A=3.0)
    pulls = {
        f: evaluate(design, fineness=DEFAULT_FINENESS.scaled(f), isothermal=True).pull_N
        for f in (0.5, 1, 2, 3)
    }
    finest = pulls[3]
    err = {f: abs(pulls[f] / finest - 1.0) for f in (0.5, 1, 2)}
    assert err[1] < 0.01
    # Below ~0.5 % the error no longer falls strictly with every step (cell edges move relative to
    # the field's features as the grading changes): each step must be better than the coarser one
    # or within 0.5 % of scaled(3).
    assert err[1] < max(err[0.5], 0.005)
    assert err[2] < max(err[1], 0.005)
