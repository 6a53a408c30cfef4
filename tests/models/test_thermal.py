"""Thermal network and electro-thermal coupling: correlations against their published values,
lumped-capacitance and network solutions against numerical integration, energy balance, the
coupling's identities, limits, runaway and the [thermal]/[supply] file tables."""

from __future__ import annotations

import copy
import json
import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from models import evaluate
from models.design import INSULATION_CLASSES, design_from_dict, with_value
from models.errors import DesignError
from models.materials import MATERIALS
from models.thermal.air import air_properties
from models.thermal.convection import churchill_chu_vertical, natural_convection_coefficient
from models.thermal.coupling import solve_coupled
from models.thermal.limits import hold_temperature, lumped_temperature, time_to_limits
from models.thermal.network import build_network, face_node_thickness
from tests.conftest import demo_dict

#: A demo machine on a realistic duty: 10 % on, emissive enamel and paint.
THERMAL = {
    "duty_cycle": 0.1,
    "period_s": 50.0,  # 5 s on in each cycle: the 5 s hold fits in it
    "hold_time_s": 5.0,
    "emissivity": 0.9,
    "coil_insulation_class": "F",
    "target_limit_C": 60.0,
    "ring_limit_C": 150.0,
}


def _design(thermal=THERMAL, supply=None, **drive):
    d = copy.deepcopy(demo_dict())
    d.pop("thermal", None)  # the demo file's own [thermal]; each test sets what it checks
    if thermal is not None:
        d["thermal"] = dict(thermal)
    if supply is not None:
        d["supply"] = supply
    d["drive"].update(drive)
    return design_from_dict(d)


@pytest.fixture(scope="module")
def coupled():
    return evaluate(_design())


# ---------------------------------------------------------------------------------------------
# Published correlations and properties


def test_churchill_chu_vertical_plate_published_example():
    # Incropera, Fundamentals of Heat and Mass Transfer, Example 9.2 (glass fire screen 0.71 m
    # high at 232 degC in 23 degC air): Ra_L = 1.813e9, Pr = 0.690 -> Nu_L = 147 (from memory).
    # 0.5 %: the book prints three digits.
    assert churchill_chu_vertical(1.813e9, 0.690) == pytest.approx(147.0, rel=0.005)
    # Same example, whole path with our air properties: h = 7.0 W/(m^2 K) (book, from memory).
    # 2 %: our Sutherland-law air is within ~2 % of Incropera Table A.4 at 400 K, and the book
    # rounds h to two digits.
    h = natural_convection_coefficient(0, 0.71, 232.0, 23.0)
    assert h == pytest.approx(7.0, rel=0.02)


def test_churchill_chu_horizontal_cylinder_published_example():
    # Incropera Example 9.3 (steam pipe D = 0.1 m at 165 degC in 23 degC air):
    # h = 7.29 W/(m^2 K) (from memory). 2 %: our air properties against Table A.4 (see above).
    h = natural_convection_coefficient(1, 0.1, 165.0, 23.0)
    assert h == pytest.approx(7.29, rel=0.02)


def test_air_properties_against_table():
    # Incropera Table A.4, air at 300 K (from memory): k = 0.0263 W/(m K), nu = 15.89e-6 m^2/s,
    # alpha = 22.5e-6 m^2/s, Pr = 0.707. 2 %: Sutherland's law and an ideal gas against the
    # tabulated data.
    k, nu, alpha, pr, beta = air_properties(300.0)
    assert k == pytest.approx(0.0263, rel=0.02)
    assert nu == pytest.approx(15.89e-6, rel=0.02)
    assert alpha == pytest.approx(22.5e-6, rel=0.02)
    assert pr == pytest.approx(0.707, rel=0.02)
    assert beta == pytest.approx(1 / 300.0, rel=1e-12)  # ideal gas (definition)


def test_resistivity_coefficients_against_standards():
    # IEC 60028: annealed copper 1/58 Ohm mm^2/m at 20 degC, alpha = 0.00393 /K.
    cu = MATERIALS["copper"]
    assert 1 / cu.conductivity == pytest.approx(1 / 58e6, rel=1e-12)
    assert cu.temperature_coefficient == pytest.approx(0.00393, abs=1e-6)
    # Aluminium 1350 (EC grade): 0.00403 /K (IEC 60889; ASM Metals Handbook, from memory).
    assert MATERIALS["aluminium-1350"].temperature_coefficient == pytest.approx(0.00403, abs=1e-6)
    # The winding applies rho(T) = rho_20 (1 + alpha (T - 20)): at 75 degC the IEC 60028 ratio
    # 1 + 0.00393 x 55 = 1.21615 (definition).
    coil = _design().coil
    assert coil.resistance(75.0) / coil.resistance(20.0) == pytest.approx(1.21615, rel=1e-12)


def test_insulation_classes_iec_60085():
    # IEC 60085:2007 Table 1: thermal classes in degC with their letters.
    assert INSULATION_CLASSES == {
        "Y": 90.0,
        "A": 105.0,
        "E": 120.0,
        "B": 130.0,
        "F": 155.0,
        "H": 180.0,
        "N": 200.0,
        "R": 220.0,
    }
    assert _design({"coil_insulation_class": "h"}).thermal.coil_class_C == 180.0
    d = _design({"coil_insulation_class": 155})
    assert (d.thermal.coil_class, d.thermal.coil_class_C) == ("F", 155.0)


# ---------------------------------------------------------------------------------------------
# Lumped capacitance and the network


def test_lumped_capacitance_solution_against_integration():
    # Incropera eq. 5.6 with a source: C dT/dt = P - G (T - T_a), T(0) = T_0, checked against a
    # numerical integration (scipy solve_ivp, rtol 1e-10): agreement to 1e-7.
    C, G, P, ta, t0 = 12.0, 0.3, 4.0, 25.0, 25.0
    t_end = 90.0
    num = solve_ivp(
        lambda t, y: (P - G * (y - ta)) / C, (0, t_end), [t0], rtol=1e-10, atol=1e-10
    ).y[0, -1]
    assert lumped_temperature(t_end, t0, ta + P / G, C / G) == pytest.approx(num, rel=1e-7)


def _linear_losses(p0=(30.0, 2.0, 0.2), alpha=0.0039):
    """A stand-in for the circuit: losses that grow like copper's resistance (current drive)."""

    def losses_at(temps):
        f = {k: 1 + alpha * (v - 20.0) for k, v in temps.items()}
        return {
            "coil": p0[0] * f["coil"],
            "ring": p0[1] * f.get("ring", 1.0),
            "target": p0[2] * f["target"],
        }, None

    return losses_at


def test_network_energy_balance_atsteady_state():
    design = _design()
    net = build_network(design)
    state = solve_coupled(net, _linear_losses())
    assert state.status == "converged"
    # Losses in = heat out to the air (the links between nodes cancel): Newton stops when the
    # last step is < 0.01 K, so the residual is at most the conductances times 0.01 K.
    A, b = net.matrix(state.T)
    heat_out = A @ state.T - b
    losses_in = net.thermal.duty_cycle * state.losses_on
    g_total = np.abs(A).sum()
    assert heat_out.sum() == pytest.approx(losses_in.sum(), abs=g_total * 0.01)
    np.testing.assert_allclose(heat_out, losses_in, atol=g_total * 0.01)
    # The losses are those at the final temperatures (consistency of the coupling)
    losses, _ = _linear_losses()({k: state.temperature(k) for k in ("coil", "ring", "target")})
    assert state.losses_on[net.index("coil")] == pytest.approx(losses["coil"], rel=1e-12)


def test_hold_temperature_against_integration():
    design = _design()
    net = build_network(design)
    state = solve_coupled(net, _linear_losses(p0=(30.0, 2.0, 0.3)))
    t_hold, _, tau = hold_temperature(state, 5.0)
    # The part's own ODE with its neighbours at their steady state, integrated numerically
    # (solve_ivp, rtol 1e-10): the closed form agrees to 1e-7.
    i = net.index("target")
    A, b = net.matrix(state.T)
    others = b[i] - sum(A[i, j] * state.T[j] for j in range(len(state.T)) if j != i)
    P, s, Ts = state.losses_on[i], state.sensitivity[i], state.T[i]

    def rhs(t, y):
        return (P * (1 + s * (y - Ts)) + others - A[i, i] * y) / net.capacity[i]

    ta = design.thermal.ambient_C
    num = solve_ivp(rhs, (0, 5.0), [ta], rtol=1e-10, atol=1e-10).y[0, -1]
    assert t_hold == pytest.approx(num, rel=1e-7)
    assert tau > 0 and ta < t_hold < state.T[i] + 1e-9  # a cold part warms toward its steady state


def test_time_to_limits_against_integration():
    design = _design()
    net = build_network(design)
    state = solve_coupled(net, _linear_losses())
    limit = 60.0
    times, taus = time_to_limits(state, {"coil": limit})
    # The linearised network integrated numerically (solve_ivp with an event): the refinement
    # interpolates within 1e-4 of the time (a 7 % bracket cut 64 times), so 2e-4.
    A, b = net.matrix(state.T)
    P, s = state.losses_on, state.sensitivity
    i = net.index("coil")

    def rhs(t, y):
        return (P * (1 + s * (y - state.T)) - (A @ y - b)) / net.capacity

    def hot_spot_reaches(t, y):
        return y[i] + net.hot_spot_factor * P[i] * (1 + s[i] * (y[i] - state.T[i])) - limit

    hot_spot_reaches.terminal = True
    y0 = np.full(len(state.T), design.thermal.ambient_C)
    sol = solve_ivp(rhs, (0, 1e6), y0, events=hot_spot_reaches, rtol=1e-10, atol=1e-9)
    assert times["coil"] == pytest.approx(sol.t_events[0][0], rel=2e-4)
    assert np.all(np.diff(taus) >= 0)


def test_runaway_is_reported_not_raised():
    design = _design({"duty_cycle": 1.0})
    net = build_network(design)
    state = solve_coupled(net, _linear_losses(p0=(400.0, 2.0, 0.2)))
    assert state.status.startswith("runaway: the coil would pass")
    assert np.all(np.isinf(state.T))


# ---------------------------------------------------------------------------------------------
# evaluate: the coupling and the fields the studies read


def test_coupled_result_fields(coupled):
    r = coupled
    assert r.thermal_status == "converged"
    flat = [
        "coil_temperature_C",
        "core_temperature_C",
        "ring_temperature_C",
        "target_temperature_C",
        "target_hold_temperature_C",
        "coil_temperature_limit_C",
        "power_factor",
        "pole_mass_kg",
        "core_flux_fraction",
    ]
    assert all(math.isfinite(getattr(r, k)) for k in flat)
    t = r.temperatures_C
    assert (t["coil"], t["core"], t["ring"], t["target"], t["target_hold"]) == (
        r.coil_temperature_C,
        r.core_temperature_C,
        r.ring_temperature_C,
        r.target_temperature_C,
        r.target_hold_temperature_C,
    )
    assert r.coil_temperature_limit_C == 155.0  # class F, IEC 60085
    # hot spot above the mean above the ambient (a heated winding; definition)
    assert t["coil"] > t["coil_mean"] > t["ambient"]
    # margins in the limits' own units (definitions)
    assert r.margins["coil_temperature_C"] == pytest.approx(155.0 - r.coil_temperature_C)
    assert r.margins["ring_temperature_C"] == pytest.approx(150.0 - r.ring_temperature_C)
    assert r.margins["target_hold_temperature_C"] == pytest.approx(
        60.0 - r.target_hold_temperature_C
    )
    assert r.margins["core_flux_density_T"] == pytest.approx(1.5 - r.core_peak_flux_density_T)
    assert r.binding_limit in r.margins
    assert r.power_factor == pytest.approx(r.input_power_W / r.supply_VA, rel=1e-12)
    d = json.loads(json.dumps(r.to_dict()))
    for k in [*flat, "margins", "binding_limit", "time_to_limit_s", "thermal_status"]:
        assert k in d


def test_coupling_identity_coil_loss(coupled):
    # Current drive: the coil loss is I^2 R(T), so its ratio to the 20 degC loss is exactly
    # 1 + alpha (T_mean - 20) (IEC 60028 law); 1e-9: rounding.
    iso = evaluate(_design(), isothermal=True)
    alpha = MATERIALS["copper"].temperature_coefficient
    t_mean = coupled.temperatures_C["coil_mean"]
    assert coupled.coil_loss_W / iso.coil_loss_W == pytest.approx(
        1 + alpha * (t_mean - 20.0), rel=1e-9
    )
    assert iso.thermal_status == "isothermal"
    # Hotter ring, higher resistance: less ring current (common practice, no source)
    assert coupled.ring_current_A < iso.ring_current_A
    # Energy balance holds at any temperature (internal identity of the circuit)
    total = coupled.coil_loss_W + coupled.ring_loss_W + coupled.target_loss_W
    assert coupled.input_power_W == pytest.approx(total + coupled.core_loss_W, rel=1e-12)


def test_pole_mass():
    # steel 7700 kg/m^3 (M400-50A, IEC 60404-8-4, from memory) x (pole - groove) (definition)
    r = evaluate(_design(), isothermal=True)
    volume = math.pi * (10e-3**2 * 40e-3 - (7e-3**2 - 4e-3**2) * 3e-3)
    assert r.pole_mass_kg == pytest.approx(7700 * volume, rel=1e-12)


def test_supply_limits_and_binding():
    d = _design(supply={"max_voltage_V": 60.0, "max_current_A": 10.0, "max_VA": 2000.0})
    r = evaluate(d, isothermal=True)
    assert r.margins["supply_voltage_V"] == pytest.approx(60.0 - r.coil_voltage_V)
    assert r.margins["supply_voltage_V"] < 0  # the demo needs about 83 V (its own result)
    assert r.binding_limit == "supply_voltage_V"
    assert any(
        w.startswith("the coil needs 83") and "supply.max_voltage_V = 60" in w for w in r.warnings
    )
    assert r.margins["supply_current_A"] == pytest.approx(4.0)


def test_runaway_result(coupled):
    # Continuous duty, no radiation: the demo coil's 38 W cannot leave its 65 cm^2 of surface
    # below 400 degC (h of order 10 W/(m^2 K) in still air, common practice, no source).
    r = evaluate(_design({"duty_cycle": 1.0}))
    assert r.thermal_status.startswith("runaway")
    assert math.isinf(r.coil_temperature_C) and r.margins["coil_temperature_C"] == -math.inf
    assert any(w.startswith("thermal runaway") for w in r.warnings)
    assert math.isfinite(r.time_to_limit_s["coil"])  # how long it may run from cold
    assert math.isfinite(r.pull_N)


def test_flux_margin_warns_near_saturation():
    # The linear model's peak flux density scales with the current (DESIGN.md); 94 % of 1.5 T
    base = evaluate(_design(), isothermal=True)
    current = 6.0 * 0.94 / base.core_flux_fraction
    r = evaluate(_design(current_A=current), isothermal=True)
    assert r.core_flux_fraction == pytest.approx(0.94, rel=1e-6)
    assert any("of the steel's saturation flux density" in w for w in r.warnings)


def test_no_thermal_table_uses_defaults():
    r = evaluate(_design(thermal=None), isothermal=True)
    assert r.temperatures_C["ambient"] == 25.0
    assert r.coil_temperature_limit_C == 130.0  # class B default


@pytest.mark.parametrize(
    "thermal, message",
    [
        ({"duty_cycle": 0}, "thermal.duty_cycle = 0: must be a number > 0 and <= 1"),
        ({"emissivity": 1.5}, "thermal.emissivity = 1.5: must be a number from 0 to 1"),
        ({"coil_insulation_class": "Q"}, "thermal.coil_insulation_class = 'Q': must be an IEC"),
        ({"coil_insulation_class": 400}, "must be between 90 and 250 degC"),
        ({"orientation": "face-dwn"}, "did you mean 'face-down'"),
        ({"target_limit_C": 20.0}, "thermal.target_limit_C = 20.0: must be above thermal.ambient"),
        ({"ambient_C": 300.0}, "thermal.ambient_C = 300.0: must be between -50 and 150"),
        ({"hold_time": 3.0}, "thermal.hold_time: unknown key"),
    ],
)
def test_thermal_table_errors(thermal, message):
    with pytest.raises(DesignError, match=message.replace("(", r"\(").replace(")", r"\)")):
        _design(thermal)


def test_supply_table_errors():
    with pytest.raises(DesignError, match="supply.max_VA = -1: must be a number > 0"):
        _design(supply={"max_VA": -1})


def _damped_fixed_point(design):
    """The coupled steady state by a different route: half-damped fixed-point iteration (losses
    and conductances frozen per step), 1e-4 K. None if it passes 3000 degC (no steady state)."""
    from models.evaluate import DEFAULT_FINENESS, pole_model_for
    from models.fast.circuit import assemble_circuit, solve_system
    from models.pick import part_losses

    system = assemble_circuit(design, DEFAULT_FINENESS, pole_model_for(design, DEFAULT_FINENESS))
    net = build_network(design)
    names = [n for n in ("coil", "ring", "target") if n in net.nodes]
    face = face_node_thickness(design)
    T = np.full(len(net.nodes), design.thermal.ambient_C)
    for _ in range(400):
        sol = solve_system(system, {n: T[net.index(n)] for n in names})
        losses = part_losses(sol, face)
        P = np.zeros(len(T))
        for n in [*names, "core", "face"]:
            P[net.index(n)] = losses[n]
        A, b = net.matrix(T)
        new = np.linalg.solve(A, design.thermal.duty_cycle * P + b)
        if new.max() > 3000:
            return None
        if np.max(np.abs(new - T)) < 1e-4:
            return new
        T = 0.5 * (T + new)
    raise AssertionError("the reference iteration did not settle")


@pytest.mark.parametrize("seed", range(6))
def test_coupling_agrees_with_fixed_point_iteration(seed):
    # Seeded variations of the demo (drive, duty, orientation, radiation, target): Newton's
    # answer equals the damped fixed point's to 0.05 K (Newton stops at 0.01 K steps), and a
    # runaway is reported exactly when the fixed point has no solution below the coil's 400 degC.
    rng = np.random.default_rng(100 + seed)
    d = copy.deepcopy(demo_dict())
    drive = "current_A" if rng.random() < 0.7 else "voltage_V"
    d["drive"] = {"frequency_Hz": float(rng.choice([50, 400, 3000]))}
    d["drive"][drive] = float(rng.uniform(1, 8)) * (15 if drive == "voltage_V" else 1)
    d["thermal"] = {
        "duty_cycle": float(rng.uniform(0.02, 1)),
        "emissivity": float(rng.choice([0.0, 0.9])),
        "orientation": str(rng.choice(["face-down", "face-up", "horizontal"])),
    }
    d["target"]["gap_mm"] = float(rng.uniform(0.3, 3))
    d["target"]["radius_mm"] = float(rng.uniform(3, 12))
    design = design_from_dict(d)
    r = evaluate(design)
    ref = _damped_fixed_point(design)
    if r.thermal_status == "converged":
        assert ref is not None
        assert r.temperatures_C["coil_mean"] == pytest.approx(ref[0], abs=0.05)
        assert r.target_temperature_C == pytest.approx(ref[-1], abs=0.05)
    else:
        assert r.thermal_status.startswith("runaway")
        assert ref is None or ref[0] > 400.0


def test_with_value_reaches_thermal_keys():
    d = _design()
    assert with_value(d, "duty_cycle", 0.5).thermal.duty_cycle == 0.5
    assert with_value(d, "supply.max_VA", 300).supply.max_apparent_power == 300.0


def test_deep_groove_keeps_positive_heat_capacities():
    # A groove deeper than half the pole (legal: depth < length) still leaves steel in the face
    # slab and the core: every node stores heat (a capacity is a mass times c_p > 0).
    d = copy.deepcopy(demo_dict())
    # groove 0.2-9.8 mm by 35 mm: more steel than half the 10 x 40 mm pole
    d["ring"].update(inner_radius_mm=0.2, outer_radius_mm=9.8, depth_mm=35.0)
    net = build_network(design_from_dict(d))
    assert np.all(net.capacity > 0)
