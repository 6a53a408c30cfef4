"""The quadrature rules of models.fast.quadrature, each against a result outside the project.

References: Gauss-Legendre with n points is exact for polynomials of degree 2n - 1 and not of
degree 2n (Abramowitz & Stegun 1964, 25.4.29 and its error term); int_0^1 x^k dx = 1 / (k + 1)
and int_0^1 ln x dx = -1 (calculus); the mean of r^2 over a straight segment (calculus, checked
against scipy.integrate.quad, a general-purpose library).
"""

from __future__ import annotations

import math
from types import SimpleNamespace

import numpy as np
import pytest
from scipy.integrate import quad

from models.fast.quadrature import (
    AXIS,
    FAR,
    GRADE,
    MID2,
    NEAR,
    gauss01,
    graded01,
    moment_radius,
    read_only,
)


@pytest.mark.parametrize("n", [1, 2, 3, 4, 5, 8])
def test_gauss01_is_exact_to_degree_2n_minus_1_and_not_beyond(n):
    x, w = gauss01(n)
    assert x.shape == w.shape == (n,)
    assert np.all((x > 0.0) & (x < 1.0))
    assert w.sum() == pytest.approx(1.0, abs=1e-14)  # int_0^1 1 dx = 1 (calculus)
    for k in range(2 * n):
        # A&S 25.4.29: exact for degree <= 2n - 1 (to rounding, 1e-13)
        assert w @ x**k == pytest.approx(1.0 / (k + 1), abs=1e-13), k
    # ... and not for degree 2n: the error is A&S 25.4.29's remainder on [0, 1] with
    # f^(2n) = (2n)!, i.e. (n!)^4 / ((2n + 1) ((2n)!)^2), the rule falling short of the integral
    remainder = math.factorial(n) ** 4 / ((2 * n + 1) * math.factorial(2 * n) ** 2)
    assert 1.0 / (2 * n + 1) - w @ x ** (2 * n) == pytest.approx(remainder, rel=1e-5)


def test_gauss01_is_symmetric_cached_and_read_only():
    x, w = gauss01(4)
    # Legendre nodes are symmetric about the interval's middle (A&S 25.4.29, table 25.4)
    assert np.allclose(x + x[::-1], 1.0, atol=1e-15)
    assert np.allclose(w, w[::-1], atol=1e-15)
    assert gauss01(4.0)[0] is x  # the cache takes the integer count
    with pytest.raises(ValueError):
        x[0] = 0.5


@pytest.mark.parametrize(("levels", "n"), [(6, 3), (10, 5)])
def test_graded01_is_a_composite_rule_exact_for_polynomials(levels, n):
    x, w = graded01(levels, n)
    assert x.shape == w.shape == ((levels + 1) * n,)
    assert np.all(np.diff(x) > 0.0) and 0.0 < x[0] and x[-1] < 1.0
    for k in range(2 * n):  # each interval a Gauss rule: exact to degree 2n - 1 (A&S 25.4.29)
        assert w @ x**k == pytest.approx(1.0 / (k + 1), abs=1e-13), k


def test_graded01_intervals_shrink_by_grade_toward_zero():
    levels, n = 6, 3
    _, w = graded01(levels, n)
    widths = w.reshape(levels + 1, n).sum(axis=1)  # weights of one interval sum to its width
    # The edges are GRADE^j (module docstring): widths GRADE^(j) (1 - GRADE), the innermost GRADE^6
    expected = np.concatenate(
        [[GRADE**levels], GRADE ** np.arange(levels - 1, -1, -1) * (1 - GRADE)]
    )
    assert np.allclose(widths, expected, rtol=1e-12)


def _log_error(x, w):
    return abs(w @ np.log(x) + 1.0)  # int_0^1 ln x dx = -1 (calculus)


@pytest.mark.parametrize(("levels", "n"), [(6, 3), (10, 5)])
def test_graded01_integrates_a_log_singularity_better_than_plain_gauss(levels, n):
    # Against a plain Gauss rule with as many points, which ignores the singularity: measured
    # 1.4e-3 vs 1.8e-4 (21 points) and 2.0e-4 vs 7.5e-7 (55 points).
    graded = _log_error(*graded01(levels, n))
    plain = _log_error(*gauss01((levels + 1) * n))
    assert graded < plain / 5.0


def test_graded01_log_error_converges_as_the_grading_deepens():
    # Each interval [a, a / GRADE] contributes an error proportional to a (ln x is scale-free
    # there, calculus), so the error falls with the levels to a plateau set by the outer
    # intervals and the points per interval: measured 6.3e-7 with 5 points (the kernels' count).
    errors = [_log_error(*graded01(levels, 5)) for levels in (2, 4, 6, 8, 10, 14)]
    assert all(a > b for a, b in zip(errors, errors[1:], strict=False))
    assert errors[-1] < 1e-6
    assert errors[0] > 1e-3


def test_graded01_is_cached_and_read_only():
    x, w = graded01(6, 3)
    assert graded01(6, 3)[0] is x
    with pytest.raises(ValueError):
        w[0] = 1.0


def test_read_only_freezes_each_array_and_returns_them():
    a, b = np.arange(3.0), np.ones(2)
    out = read_only(a, b)
    assert out[0] is a and out[1] is b
    for arr in out:
        with pytest.raises(ValueError):
            arr[0] = 7.0


@pytest.mark.parametrize(("mid_r", "length", "tr"), [(0.01, 0.004, 1.0), (0.002, 0.004, 0.6)])
def test_moment_radius_is_the_rms_radius_of_the_panel(mid_r, length, tr):
    panel = SimpleNamespace(mid_r=np.array([mid_r]), length=np.array([length]), tr=np.array([tr]))
    # <r^2> over the panel, r(s) = mid_r + s length tr, s uniform on [-1/2, 1/2] (scipy quad)
    mean_r2, _ = quad(lambda s: (mid_r + s * length * tr) ** 2, -0.5, 0.5)
    assert moment_radius(panel)[0] == pytest.approx(math.sqrt(mean_r2), rel=1e-12)


def test_moment_radius_of_an_axial_panel_is_its_radius():
    # A panel along z (tr = 0) keeps one radius: its moment radius is that radius (geometry).
    panel = SimpleNamespace(mid_r=np.array([0.01]), length=np.array([0.003]), tr=np.array([0.0]))
    assert moment_radius(panel)[0] == 0.01


def test_the_tiers_are_ordered():
    # The tiers step from the midpoint rule down to the graded rule (module docstring): the
    # thresholds in panel lengths must decrease, and the graded rule's ratio lie in (0, 1).
    assert FAR > MID2 > NEAR > 0.0 and AXIS > 0.0
    assert 0.0 < GRADE < 1.0
