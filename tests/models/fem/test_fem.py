"""Proof of the reference FEM (models/fem/) against closed-form and integral solutions.

Every expected value is computed here from its published formula (source named beside it); every
tolerance says why it is what it is. The FEM's own discretisation error at refine = 1 is a few 1e-5 on
inductances and impedance changes (measured below by the convergence-rate test), and the Dirichlet far
boundary adds an error falling like (size / distance)^3, a few 1e-5 at the default distance.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import special
from scipy.constants import mu_0

from models.design import design_from_dict, load_design
from models.errors import DesignError
from models.fem.reference import reference
from models.fem.regions import Region
from models.fem.solve import solve, solve_regions
from optim.demo import DEMO_DESIGN
from optim.morning.verify import compare, format_table, to_json
from tests.conftest import TEST_COIL

DEMO = DEMO_DESIGN


# ---------------------------------------------------------------------------------------------
# Analytic references, written for these tests


def _gauss_segments(fun, upper: float, step: float, order: int = 40) -> complex:
    """int_0^upper fun(a) da by Gauss-Legendre on segments of width ``step`` (smooth integrands)."""
    x, w = np.polynomial.legendre.leggauss(order)
    edges = np.arange(0.0, upper + step, step)
    lo, hi = edges[:-1, None], edges[1:, None]
    a = 0.5 * (lo + hi) + 0.5 * (hi - lo) * x[None, :]
    return complex(np.sum(0.5 * (hi - lo) * w[None, :] * fun(a.ravel()).reshape(a.shape)))


def _int_x_j1(x):
    """int_0^x t J1(t) dt = (pi x / 2) [J1(x) H0(x) - J0(x) H1(x)] (H: Struve functions;
    Abramowitz & Stegun, Handbook of Mathematical Functions, 1964, eq. 11.1.8)."""
    return (
        0.5
        * np.pi
        * x
        * (special.j1(x) * special.struve(0, x) - special.j0(x) * special.struve(1, x))
    )


def _dd_coil_factor(r1, r2, length, turns, alpha):
    """pi mu0 N^2 / (l^2 (r2 - r1)^2) * P(alpha) / alpha^6, with P = [int_{a r1}^{a r2} x J1 dx]^2
    (Dodd & Deeds, J. Appl. Phys. 39, 2829 (1968), eqs. for a rectangular-section coil)."""
    p = (_int_x_j1(alpha * r2) - _int_x_j1(alpha * r1)) ** 2
    return math.pi * mu_0 * turns**2 / (length**2 * (r2 - r1) ** 2) * p / alpha**6


def dodd_deeds_air_inductance(r1, r2, length, turns):
    """Self-inductance [H] of a uniform rectangular-section coil in air (Dodd & Deeds 1968):
    L0 = K int P(a)/a^6 * 2 (l a + exp(-l a) - 1) da."""

    def f(a):
        return (
            _dd_coil_factor(r1, r2, length, turns, a) * 2.0 * (length * a + np.expm1(-length * a))
        )

    return _gauss_segments(f, 4000.0 / r2, 5.0 / r2).real


def plate_reflection(alpha, omega, sigma, thickness):
    """Reflection coefficient of A_phi for a plate (mu_r = 1) of given thickness on air, e^{j w t}:
    with a1 = sqrt(a^2 + j w mu0 sigma) and q = exp(-2 a1 c)(a1 - a)/(a1 + a),
    R = [a (1 + q) - a1 (1 - q)] / [a (1 + q) + a1 (1 - q)] (continuity of A and dA/dz at both
    faces; the same result as Dodd & Deeds 1968 for a conductor of thickness c on air)."""
    a1 = np.sqrt(alpha**2 + 1j * omega * mu_0 * sigma)
    q = np.exp(-2.0 * a1 * thickness) * (a1 - alpha) / (a1 + alpha)
    return (alpha * (1 + q) - a1 * (1 - q)) / (alpha * (1 + q) + a1 * (1 - q))


def dodd_deeds_plate(r1, r2, l1, l2, turns, frequency, sigma, thickness):
    """Impedance change dZ [Ohm] of a coil (radii r1..r2, from l1 to l2 above the plate) and the
    time-averaged axial force on the plate [N/A^2 rms], positive away from the coil (+z up here).

    dZ = j w K int P/a^6 (e^{-a l1} - e^{-a l2})^2 R(a) da (Dodd & Deeds 1968, coil above a plate);
    F_plate = +|I|^2 K int a Re R(a) P/a^6 (e^{-a l1} - e^{-a l2})^2 da, the force of the coil on the
    reflected field (f = Re J x B*, B_r = -dA/dz), derived here from the same modal expansion."""
    omega = 2.0 * math.pi * frequency
    length = l2 - l1

    def base(a):
        return _dd_coil_factor(r1, r2, length, turns, a) * (np.exp(-a * l1) - np.exp(-a * l2)) ** 2

    upper, step = 40.0 / l1, 2.0 / r2
    dl = _gauss_segments(
        lambda a: base(a) * plate_reflection(a, omega, sigma, thickness), upper, step
    )
    force = _gauss_segments(
        lambda a: a * base(a) * plate_reflection(a, omega, sigma, thickness).real, upper, step
    ).real
    return 1j * omega * dl, force


def maxwell_mutual(a, b, d):
    """Mutual inductance [H] of coaxial circles of radii a, b a distance d apart:
    M = mu0 sqrt(ab) [(2/k - k) K(m) - (2/k) E(m)], m = k^2 = 4ab / ((a+b)^2 + d^2)
    (Maxwell, Treatise on Electricity and Magnetism, 1873, art. 701; scipy's ellipk/ellipe take m)."""
    m = 4.0 * a * b / ((a + b) ** 2 + d**2)
    k = np.sqrt(m)
    return mu_0 * np.sqrt(a * b) * ((2.0 / k - k) * special.ellipk(m) - 2.0 / k * special.ellipe(m))


def coil_mutual(c1, c2, n1, n2, order=8):
    """Mutual inductance [H] of two uniform rectangular-section coils (r0, r1, z0, z1), by
    Gauss-Legendre quadrature of Maxwell's formula over both sections (separated sections: the
    kernel is smooth, the quadrature converges exponentially)."""
    x, w = np.polynomial.legendre.leggauss(order)

    def points(c):
        r0, r1, z0, z1 = c
        r = 0.5 * (r0 + r1) + 0.5 * (r1 - r0) * x
        z = 0.5 * (z0 + z1) + 0.5 * (z1 - z0) * x
        rr, zz = np.meshgrid(r, z)
        return rr.ravel(), zz.ravel(), (np.outer(w, w) / 4.0).ravel()

    ra, za, wa = points(c1)
    rb, zb, wb = points(c2)
    m = maxwell_mutual(ra[:, None], rb[None, :], za[:, None] - zb[None, :])
    return n1 * n2 * float(np.sum(wa[:, None] * wb[None, :] * m))


def stefan_square(a, side, turns):
    """Stefan's formula for a coil of mean radius a and square section side x side [H]:
    L = mu0 N^2 a [(1 + (3b^2 + c^2)/(96 a^2)) ln(8a/d) - y1 + (b^2 / (16 a^2)) y2], d^2 = b^2 + c^2
    (Grover, Inductance Calculations, 1946, eq. for Stefan's formula; square: y1 = 0.84834, y2 = 0.8162)."""
    b = c = side
    d = math.hypot(b, c)
    y1, y2 = 0.84834, 0.8162
    return (
        mu_0
        * turns**2
        * a
        * (
            (1 + (3 * b * b + c * c) / (96 * a * a)) * math.log(8 * a / d)
            - y1
            + b * b / (16 * a * a) * y2
        )
    )


# ---------------------------------------------------------------------------------------------
# The tests' own references agree with each other


def test_references_agree_stefan_vs_dodd_deeds():
    # Stefan's formula (Stefan 1892; Grover, Inductance Calculations, 1946, ch. 16; constants of a
    # square section y1 = 0.84834, y2 = 0.8162 from Grover's table / Rosa & Grover, Bull. Bur. Std.
    # 8, 1912) against the Dodd-Deeds integral: Stefan's neglected terms are O((c/a)^4) ~ 1e-3 times
    # a small coefficient; 1e-5 is ample for c/a = 0.2.
    assert stefan_square(0.05, 0.01, 100) == pytest.approx(
        dodd_deeds_air_inductance(0.045, 0.055, 0.01, 100), rel=1e-5
    )


# ---------------------------------------------------------------------------------------------
# Air-cored coils


def _air_coil(r1, r2, z0, z1, turns, **kw):
    return solve_regions([Region("coil", r1, r2, z0, z1, turns=turns)], 50.0, current=1.0, **kw)


def test_inductance_convergence_rate():
    # Known answer: Dodd & Deeds (1968) air-coil integral. Inductance is an energy functional, so with
    # biquadratic elements (p = 2) its error falls like h^(2p) = h^4 for a smooth solution; the jump of
    # the source at the coil's corners (A ~ rho^2 log rho) costs only a log factor. Far boundary
    # pushed out (far_factor 6: truncation ~1e-7) so that it stays below the discretisation error.
    exact = dodd_deeds_air_inductance(0.01, 0.02, 0.01, 100)
    refine = np.array([0.25, 0.5, 1.0])
    err = np.array(
        [
            abs(
                _air_coil(0.01, 0.02, 0.0, 0.01, 100, refine=r, far_factor=6).inductance.real
                / exact
                - 1
            )
            for r in refine
        ]
    )
    order = -np.polyfit(np.log(refine), np.log(err), 1)[0]
    # measured here: errors 5.6e-3, 3.6e-4, 2.7e-5 -> order about 3.8
    assert order >= 3.0, (order, err)
    assert err[-1] < 1e-4


def test_square_coil_against_stefan():
    # Stefan / Grover (see stefan_square). FEM error at refine 1: ~4e-5 (discretisation + far
    # boundary, measured); tolerance 2e-4 leaves room without hiding a wrong factor.
    a, side, n = 0.05, 0.01, 100
    fem = _air_coil(a - side / 2, a + side / 2, 0.0, side, n, far_factor=3).inductance.real
    assert fem == pytest.approx(stefan_square(a, side, n), rel=2e-4)


def test_long_solenoid_against_nagaoka():
    # Current sheet of radius a, length l: L = mu0 N^2 pi a^2 / l * K_N with Nagaoka's coefficient
    # K_N = 4/(3 pi k') [(k'^2/k^2)(K - E) + E - k], k^2 = 4a^2/(4a^2 + l^2) (Lorenz 1879 / Nagaoka,
    # J. Coll. Sci. Tokyo 27, 1909; Grover 1946 ch. 15). The FEM winding has a wall t = a/1000: a
    # uniform wall lowers L by about t/(3a) = 3.3e-4 relative (flux averaged across the wall, derived
    # in the long-solenoid limit), so the tolerance is 1e-3.
    a, length, t, n = 0.01, 0.04, 1e-5, 200
    m = 4 * a * a / (4 * a * a + length**2)
    k, kp = math.sqrt(m), math.sqrt(1 - m)
    kk, ee = special.ellipk(m), special.ellipe(m)
    nagaoka = 4 / (3 * math.pi * kp) * ((kp**2 / m) * (kk - ee) + ee - k)
    expected = mu_0 * n**2 * math.pi * a * a / length * nagaoka
    fem = _air_coil(a - t / 2, a + t / 2, 0.0, length, n).inductance.real
    assert fem == pytest.approx(expected, rel=1e-3)


# ---------------------------------------------------------------------------------------------
# Coil above a conducting plate (Dodd & Deeds 1968)


@pytest.mark.parametrize(
    "frequency, thickness",
    [(1000.0, 0.002), (20000.0, 0.002)],  # skin depth 2.7 mm (thin plate) and 0.6 mm (thick)
)
def test_coil_above_plate_dodd_deeds(frequency, thickness):
    r1, r2, l1, l2, n, sigma = 0.01, 0.02, 0.001, 0.011, 100, 35e6
    dz_exact, force_exact = dodd_deeds_plate(r1, r2, l1, l2, n, frequency, sigma, thickness)
    l0 = dodd_deeds_air_inductance(r1, r2, l2 - l1, n)
    sol = solve_regions(
        [
            Region("coil", r1, r2, l1, l2, turns=n),
            Region("plate", 0.0, math.inf, -thickness, 0.0, conductivity=sigma),
        ],
        frequency,
        current=1.0,
    )
    dz = sol.impedance - 1j * 2 * math.pi * frequency * l0
    # Measured FEM deviations at refine 1: <= 3.4e-5 on dR and dX and 3e-5 on the force (they fall
    # ~h^4 under refinement); 5e-4 is ten times that and far below any physics error (a wrong skin
    # depth or sign moves these by O(1)).
    assert dz.real == pytest.approx(dz_exact.real, rel=5e-4)
    assert dz.imag == pytest.approx(dz_exact.imag, rel=5e-4)
    assert sol.force_z_N["plate"] < 0.0  # pushed away from the coil
    assert sol.force_z_N["plate"] == pytest.approx(force_exact, rel=5e-4)
    # Newton's third law between the two volume integrals of J x B*.
    assert sol.force_z_N["coil"] == pytest.approx(-sol.force_z_N["plate"], rel=5e-4)
    # Power balance: a discrete identity of the Galerkin system (same quadrature), round-off only.
    assert sol.impedance.real == pytest.approx(sol.loss_W["plate"], rel=1e-9)


# ---------------------------------------------------------------------------------------------
# Coil above a high-permeability half-space: image solution


@pytest.mark.parametrize("mu_r", [100.0, 1000.0, 1000.0 - 300.0j, 5.0 - 3.0j])
def test_coil_above_iron_image(mu_r):
    # A magnetisable half-space acts above its surface like an image coil mirrored in the surface with
    # current lambda I, lambda = (mu_r - 1)/(mu_r + 1) (e.g. Jackson, Classical Electrodynamics, 3rd ed.,
    # sec. 5.10 / Smythe, Static and Dynamic Electricity, 1968). Hence dL = lambda M(coil, image) and
    # the force on the coil F_z = I^2 Re(lambda) dM/dd at d = centre distance (attraction). A complex
    # mu_r (a lossy magnet, no conduction) keeps the derivation, whose interface conditions are linear
    # with constant coefficients: lambda is complex and dR = Re(j omega lambda M) = -omega Im(lambda) M,
    # which is the half-space's magnetic loss omega int Im(nu) |B|^2 dV (the Galerkin identity).
    r1, r2, h, n = 0.0095, 0.0105, 0.003, 10
    coil = (r1, r2, h - 5e-4, h + 5e-4)
    image = (r1, r2, -h - 5e-4, -h + 5e-4)
    lam = complex((mu_r - 1) / (mu_r + 1))
    m_img = coil_mutual(coil, image, n, n)
    eps = 1e-7  # central difference of a smooth function: error ~ eps^2 M'''
    shifted = [coil_mutual(coil, (r1, r2, image[2] + s, image[3] + s), n, n) for s in (-eps, eps)]
    dm_dd = (shifted[0] - shifted[1]) / (2 * eps)
    air = solve_regions([Region("coil", *coil, turns=n)], 50.0, current=1.0, far_factor=3)
    iron = solve_regions(
        [
            Region("iron", 0.0, math.inf, -math.inf, 0.0, relative_permeability=mu_r),
            Region("coil", *coil, turns=n),
        ],
        50.0,
        current=1.0,
        far_factor=3,
    )
    # Measured: dL within 1.8e-5 (3.7e-5 on Im dL of the lossy ones), force within 6.6e-5 (far
    # boundary and mesh); tolerance 3e-4.
    d_l = iron.inductance - air.inductance
    assert d_l.real == pytest.approx(lam.real * m_img, rel=3e-4)
    assert iron.force_z_N["coil"] == pytest.approx(lam.real * dm_dd, rel=3e-4)
    assert iron.force_z_N["coil"] < 0.0
    if lam.imag != 0.0:
        assert d_l.imag == pytest.approx(lam.imag * m_img, rel=3e-4)
        omega = 2.0 * math.pi * 50.0
        loss = iron.magnetic_loss_W["iron"]
        assert loss == pytest.approx(-omega * lam.imag * m_img, rel=3e-4)
        assert iron.impedance.real == pytest.approx(loss, rel=1e-9)  # Galerkin identity
    else:
        assert iron.magnetic_loss_W == {}


# ---------------------------------------------------------------------------------------------
# Designs


def _demo_dict(**changes):
    """A shaded-pole design fixed here (the tests must not follow edits of the demo file)."""
    d = {
        "pole": {"radius_mm": 10.0, "length_mm": 40.0, "material": "electrical-steel-m400"},
        "coil": dict(TEST_COIL),
        "drive": {"frequency_Hz": 400.0, "current_A": 3.0},
        "ring": {
            "inner_radius_mm": 4.0,
            "outer_radius_mm": 7.0,
            "depth_mm": 3.0,
            "material": "copper",
        },
        "target": {
            "radius_mm": 4.0,
            "thickness_mm": 1.0,
            "gap_mm": 0.6,
            "material": "aluminium-1350",
        },
    }
    for table, value in changes.items():
        if value is None:
            d.pop(table)
        else:
            d[table] = value
    return d


def _power_balance(res):
    supplied = (res.coil_voltage_V * np.conj(res.coil_current_A)).real
    losses = res.coil_loss_W + res.ring_loss_W + res.target_loss_W + res.pole_loss_W
    return supplied, losses + res.core_loss_W


@pytest.mark.slow
def test_disc_above_air_cored_coil_is_repelled():
    # Sign convention check: a conducting disc above a coil with no iron is repelled (Elihu Thomson's
    # jumping ring; induced currents oppose the source), so pull (positive toward the face) < 0.
    design = design_from_dict(
        _demo_dict(
            pole={
                "radius_mm": 10.0,
                "length_mm": 40.0,
                "relative_permeability": 1.0,
                "conductivity_S_per_m": 0.0,
            },
            ring=None,
        )
    )
    res = solve(design)
    assert res.pull_N < 0.0
    supplied, losses = _power_balance(res)
    assert supplied == pytest.approx(losses, rel=1e-9)  # Galerkin identity, round-off only
    assert res.ring_current_A == 0.0 and math.isnan(res.ring_phase_deg)


@pytest.mark.slow
def test_shaded_pole_power_balance_and_outputs():
    res = solve(design_from_dict(_demo_dict()))
    supplied, losses = _power_balance(res)
    assert supplied == pytest.approx(losses, rel=1e-9)  # Galerkin identity, round-off only
    assert res.pole_loss_W == 0.0  # laminated pole: sigma = 0; its sheets' loss is a core loss
    assert res.core_eddy_loss_W > 0.0 and res.core_hysteresis_loss_W > 0.0
    assert res.coil_current_A == 3.0
    # A shorted ring lags the coil current by 90..180 deg: I_ring = -j w M I / (R + j w L).
    assert -180.0 < res.ring_phase_deg < -90.0
    d = res.to_dict()
    assert d["coil_impedance_ohm"] == [res.coil_impedance_ohm.real, res.coil_impedance_ohm.imag]
    assert d["ring_current_A"] == pytest.approx(abs(res.ring_current_A))


def test_solid_pole_has_eddy_losses_and_balances_power():
    design = design_from_dict(
        _demo_dict(pole={"radius_mm": 10.0, "length_mm": 40.0, "material": "steel-1010"})
    )
    res = solve(design)
    assert res.pole_loss_W > 0.0
    supplied, losses = _power_balance(res)
    assert supplied == pytest.approx(losses, rel=1e-9)  # Galerkin identity, round-off only


@pytest.mark.slow
def test_voltage_drive_matches_current_drive():
    # The field is linear and the core's hysteresis and excess losses a series resistance of the
    # coil: driving with the voltage the current drive needs gives back |I| = 3 A (the root is found to
    # 1e-13) and the same losses and pull (round-off only, the same mesh).
    by_current = solve(design_from_dict(_demo_dict()))
    volts = abs(by_current.coil_voltage_V)
    by_voltage = solve(
        design_from_dict(_demo_dict(drive={"frequency_Hz": 400.0, "voltage_V": volts}))
    )
    assert abs(by_voltage.coil_current_A) == pytest.approx(3.0, rel=1e-9)
    assert by_voltage.pull_N == pytest.approx(by_current.pull_N, rel=1e-9)
    assert by_voltage.ring_loss_W == pytest.approx(by_current.ring_loss_W, rel=1e-9)
    assert by_voltage.ring_phase_deg == pytest.approx(by_current.ring_phase_deg, abs=1e-7)
    assert by_voltage.core_loss_W == pytest.approx(by_current.core_loss_W, rel=1e-9)


@pytest.mark.slow
def test_reference_reports_its_own_uncertainty():
    ref = reference(load_design(DEMO))
    coarse, fine, far = ref.runs
    assert ref.result is far and fine.n_dofs > coarse.n_dofs
    # Measured on the demo design: about 1e-4 or less on pull, losses (core losses too) and
    # impedance, 3.3e-4 on the pole's field crossing fraction (mesh and far boundary together); 1e-2 is the
    # level at which the fast-vs-FEM comparison (a few %) would be spoiled.
    for key in (
        "pull_N",
        "target_loss_W",
        "ring_loss_W",
        "coil_impedance_ohm.im",
        "ring_current_A",
        "core_eddy_loss_W",
        "core_loss_W",
        "core_radial_flux_fraction",
    ):
        assert 0.0 <= ref.uncertainty[key] < 1e-2, (key, ref.uncertainty[key])
    assert ref.to_dict()["result"]["pull_N"] == far.pull_N


def test_region_input_errors():
    with pytest.raises(DesignError, match="r0 = 0.02, r1 = 0.01"):
        Region("coil", 0.02, 0.01, 0.0, 0.01, turns=10)
    with pytest.raises(DesignError, match="stranded coil must have conductivity 0"):
        Region("coil", 0.01, 0.02, 0.0, 0.01, conductivity=1.0, turns=10)
    with pytest.raises(DesignError, match="at least one region must be a coil"):
        solve_regions([Region("plate", 0.0, 0.02, 0.0, 0.01, conductivity=1e6)], 50.0, current=1.0)
    with pytest.raises(DesignError, match="exactly one of current"):
        solve_regions([Region("coil", 0.01, 0.02, 0.0, 0.01, turns=10)], 50.0)
    for mu in (-5.0, 2000.0 + 1.0j, complex(math.nan, -1.0), 1.0j, "2000"):
        with pytest.raises(DesignError, match="real part > 0 and imaginary part <= 0"):
            Region("pole", 0.0, 0.01, -0.04, 0.0, relative_permeability=mu)
    assert Region("pole", 0.0, 0.01, -0.04, 0.0, relative_permeability=2000.0 - 600.0j).lossy
    with pytest.raises(DesignError, match="refine = 0"):
        _air_coil(0.01, 0.02, 0.0, 0.01, 10, refine=0)
    with pytest.raises(DesignError, match="must not be overlapped"):
        solve_regions(
            [
                Region("coil", 0.01, 0.02, 0.0, 0.01, turns=10),
                Region("ring", 0.012, 0.014, 0.0, 0.005, conductivity=1e6),
            ],
            50.0,
            current=1.0,
        )


@pytest.mark.slow
def test_verify_rows_line_up_with_the_fast_model_names():
    res = solve(design_from_dict(_demo_dict()))
    fast = dict(res.to_dict())
    fast["pull_N"] *= 1.02  # a fast model 2 % high on pull
    fast["coil_impedance_ohm"] = complex(*fast["coil_impedance_ohm"])
    fast["ring_phase_deg"] = res.ring_phase_deg + 360.0 + 1.5  # phase wraps
    rows = {r["key"]: r for r in compare(fast, res, {"pull_N": 0.001})}
    assert rows["pull_N"]["difference_rel"] == pytest.approx(0.02, rel=1e-12)
    assert rows["pull_N"]["within_uncertainty"] is False
    assert rows["coil_impedance_ohm.im"]["difference"] == pytest.approx(0.0, abs=1e-12)
    assert rows["ring_phase_deg"]["difference"] == pytest.approx(1.5, abs=1e-9)
    text = format_table(list(rows.values()), 7.0, 0.005)
    assert "+2.00 %" in text and "+1.50 deg" in text
    out = to_json(list(rows.values()), 7.0, 0.005)
    assert out["rows"][0]["key"] == "pull_N"
    fem_only = compare(None, res, {})
    assert all(math.isnan(r["fast"]) for r in fem_only)
