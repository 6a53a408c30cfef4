"""The fast model held to the FEM reference on the cross-model set (tests/tools/cross_model.py).

Bar: pull, target loss, ring loss and the pole's mean flux density within 5 % of the FEM wherever the FEM's own uncertainty
(mesh + far-boundary change, models.fem.reference.reference) is below 1 % and the pull is not at a sign change;
at a sign change, the sign of the pull on either side must agree. 5 % is the issue's bar: the fast
model's remaining errors are its cell and panel discretisation (about 1-2 % at the default, see
tests/perf/bench_evaluate.py), well inside it. The table kept in the repository is
tests/data/cross_model.csv (`python -m tests.tools.cross_model`).
"""

from __future__ import annotations

import pytest

from tests.tools.cross_model import CASES, QUANTITIES, run_case

BAR = 0.05
FEM_UNCERTAINTY_LIMIT = 0.01


@pytest.mark.slow
@pytest.mark.parametrize("name", list(CASES))
def test_fast_model_within_bar_of_fem(name):
    row = run_case(name)
    for q in QUANTITIES:
        fem, fast = row[f"fem_{q}"], row[f"fast_{q}"]
        if fem == 0.0:  # no ring: both must be zero
            assert fast == 0.0
            continue
        assert row[f"fem_unc_{q}"] < FEM_UNCERTAINTY_LIMIT, (name, q, row[f"fem_unc_{q}"])
        assert abs(fast - fem) <= BAR * abs(fem), (name, q, row[f"diff_pct_{q}"])


@pytest.mark.slow
def test_sign_of_pull_agrees_on_either_side_of_a_sign_change():
    # The demo geometry changes from pull to push as the target grows (tests/validation/test_trade_facts.py).
    # Near the change the pull is a small difference of large terms, so no relative bar applies:
    # the two models must agree on the sign 15 % either side of the fast model's crossing.
    from scipy.optimize import brentq

    from models import evaluate, load_design
    from models.design import with_value
    from models.fem.solve import solve
    from tests.conftest import DEMO

    design = load_design(DEMO)

    def fast(radius_mm):
        return evaluate(with_value(design, "target.radius_mm", radius_mm), isothermal=True).pull_N

    crossing = brentq(fast, 6.0, 14.0, xtol=0.01)
    for radius_mm, sign in ((0.85 * crossing, 1.0), (1.15 * crossing, -1.0)):
        assert sign * fast(radius_mm) > 0
        assert sign * solve(with_value(design, "target.radius_mm", radius_mm)).pull_N > 0


@pytest.mark.slow
def test_solid_pole_refusal_matches_what_the_fem_measures():
    # Measured with this test's design (demo, mu_r 1000, sigma 7 MS/m, a mild-steel value from
    # memory): treating the solid pole as laminated misses the FEM by +0.5 % in pull but +10.6 % in
    # ring loss at 50 Hz, +20 % in pull at 400 Hz and +39 % at 2 kHz, and ignores the pole's own eddy
    # loss (1.8 W, 36 W, 308 W). No single correction fits that, so the fast model refuses solid
    # poles; this test keeps the evidence for the refusal and the refusal itself.
    from models import design_from_dict, evaluate
    from models.errors import DesignError
    from models.fem.solve import solve
    from tests.conftest import demo_dict

    d = demo_dict()
    d["pole"] = {
        "radius_mm": 10.0,
        "length_mm": 40.0,
        "relative_permeability": 1000.0,
        "conductivity_S_per_m": 0.0,
    }
    laminated = evaluate(design_from_dict(d), isothermal=True)
    d["pole"]["conductivity_S_per_m"] = 7.0e6
    solid = design_from_dict(d)
    fem = solve(solid)
    assert abs(laminated.pull_N / fem.pull_N - 1.0) > 0.10
    assert fem.pole_loss_W > 10.0 * laminated.ring_loss_W
    with pytest.raises(DesignError, match=r"pole\.conductivity_S_per_m = 7e\+06: the fast model"):
        evaluate(solid)
