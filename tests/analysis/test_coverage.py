"""The coverage factor k_p of a budget's combined distribution (analysis/coverage.py) against published cases.

Each check names its source. p = 95.45 % is the probability the expanded uncertainty is stated for.
"""

import math

import numpy as np
import pytest
from scipy import stats

from benchlog.analysis.coverage import COVERAGE_P, coverage_factor
from benchlog.analysis.uncertainty import Component, combine

from .monte_carlo import monte_carlo_k

INF = math.inf


@pytest.mark.parametrize("p", [0.95, 0.9545, 0.99])
def test_one_rectangular_term_has_k_p_equal_to_p_root_3(p):
    # GUM (JCGM 100:2008) G.1.3: for a rectangular distribution k_p = √3·p (1.65 at p = 95 %)
    assert coverage_factor([("rectangular", 0.7, INF)], p) == pytest.approx(p * math.sqrt(3.0), abs=2e-4)


def test_worked_values_of_the_rectangular_case():
    # GUM G.1.3 gives 1.65 for 95 %; at 95.45 %: 1.653
    assert round(coverage_factor([("rectangular", 1.0, INF)], 0.95), 2) == 1.65
    assert round(coverage_factor([("rectangular", 1.0, INF)], COVERAGE_P), 3) == 1.653


def test_a_normal_term_has_k_2_at_95_45_percent():
    # GUM table G.1: p = 95.45 % <-> k_p = 2.000 for the normal distribution
    assert coverage_factor([("normal", 3e-6, INF)]) == pytest.approx(2.000, abs=5e-4)
    # several normal terms combine to a normal (their sum): still 2.000
    assert coverage_factor([("normal", 1.0, INF), ("normal", 0.4, INF), ("normal", 2.0, INF)]) == \
        pytest.approx(2.000, abs=5e-4)


@pytest.mark.parametrize("dof, table_g2", [(1, 13.97), (2, 4.53), (3, 3.31), (4, 2.87), (5, 2.65), (10, 2.28),
                                           (20, 2.13), (50, 2.05)])
def test_one_t_term_has_the_student_t_quantile(dof, table_g2):
    # GUM G.3.2 and table G.2 (column p = 95.45 %); the exact value from scipy.stats.t.ppf
    k = coverage_factor([("t", 2.5, float(dof))])
    assert round(k, 2) == table_g2
    assert k == pytest.approx(stats.t.ppf(0.5 + COVERAGE_P / 2.0, dof), rel=2e-3)


@pytest.mark.parametrize("a1, a2", [(1.0, 1.0), (1.0, 0.5), (1.0, 0.2)])
def test_two_rectangular_terms_give_the_trapezoid(a1, a2):
    # GUM 4.3.9: the sum of two rectangulars of half-widths a1 >= a2 is the symmetric trapezoid of half-width
    # a = a1 + a2 and top β·a, β = (a1 − a2)/a, with u² = a²(1 + β²)/6 (eq. 9b). Its tail beyond x ≥ βa has
    # probability (a − x)²/(a²(1 − β²)) (the two triangles), so x_p = a·(1 − √((1 − p)(1 − β²))).
    a, beta = a1 + a2, (a1 - a2) / (a1 + a2)
    u = a * math.sqrt((1 + beta**2) / 6.0)
    x_p = a * (1.0 - math.sqrt((1.0 - COVERAGE_P) * (1.0 - beta**2)))
    assert x_p >= beta * a
    k = coverage_factor([("rectangular", a1 / math.sqrt(3), INF), ("rectangular", a2 / math.sqrt(3), INF)])
    assert k == pytest.approx(x_p / u, abs=5e-4)


@pytest.mark.parametrize("terms", [
    # a rectangular read-back gain that dominates, with the fit's t term and a normal temperature term
    [("rectangular", 1.0, INF), ("t", 0.25, 23.0), ("normal", 0.2, INF)],
    # the rectifier's shape: an offset (rectangular) and the junction temperature (normal) of similar size
    [("rectangular", 0.78, INF), ("normal", 0.48, INF), ("t", 0.2, 21.0), ("rectangular", 0.17, INF)],
    # a small-ν type A term beside a rectangular one
    [("t", 1.0, 4.0), ("rectangular", 1.0, INF)],
])
def test_agrees_with_a_jcgm_101_monte_carlo(terms):
    # JCGM 101:2008 §7 with numpy (tests/analysis/monte_carlo.py), 2·10⁶ draws: the quantile's own
    # standard error is below 1e-3 here
    assert coverage_factor(terms) == pytest.approx(monte_carlo_k(terms), abs=4e-3)


def test_same_terms_same_k_and_order_does_not_matter():
    terms = [("rectangular", 1.0, INF), ("t", 0.3, 7.0), ("normal", 0.5, INF)]
    assert coverage_factor(terms) == coverage_factor(list(terms))
    assert coverage_factor(terms) == pytest.approx(coverage_factor(terms[::-1]), abs=1e-9)


def test_k_p_moves_from_rectangular_towards_normal_as_terms_are_added():
    # the central limit theorem (GUM G.2.1): more comparable terms, closer to the normal's 2.000
    ks = [coverage_factor([("rectangular", 1.0, INF)] * n) for n in (1, 2, 3, 6)]
    assert ks == sorted(ks) and ks[0] == pytest.approx(1.653, abs=1e-3) and 1.95 < ks[-1] < 2.0


def test_bad_shape_and_probability_are_refused():
    with pytest.raises(ValueError, match="unknown distribution"):
        coverage_factor([("triangle", 1.0, INF)])
    with pytest.raises(ValueError, match="coverage probability"):
        coverage_factor([("normal", 1.0, INF)], 1.0)


def test_combine_expands_with_k_p_and_models_terms_by_kind():
    comps = [Component("fit residuals", "A", 0.2, 10.0), Component("meter gain", "B", 1.0),
             Component("junction temperature", "B", 0.3, shape="normal")]
    assert [c.distribution for c in comps] == ["t", "rectangular", "normal"]
    assert Component("fit residuals", "A", 0.2).distribution == "normal"  # ν = ∞
    b = combine(comps)
    k = coverage_factor([("t", 0.2, 10.0), ("rectangular", 1.0, INF), ("normal", 0.3, INF)])
    assert b.k == k and b.expanded_u == pytest.approx(k * b.u) and b.coverage_probability == COVERAGE_P
    assert b.u == pytest.approx(math.sqrt(0.2**2 + 1.0 + 0.3**2))  # GUM 5.1.2
    assert b.k < 2.0 < b.k_t + 1e-9  # rectangular-dominated: below the Welch–Satterthwaite t factor
    assert b.k == pytest.approx(monte_carlo_k([("t", 0.2, 10.0), ("rectangular", 1.0, INF), ("normal", 0.3, INF)]),
                                abs=4e-3)


def test_a_budget_is_fast_enough_for_a_lot_of_runs():
    # not a timing assertion on the machine: the grid stays at its smallest size for ν >= 3 budgets
    from benchlog.analysis import coverage

    terms = [("rectangular", 1.0, INF), ("t", 0.3, 23.0), ("normal", 0.2, INF)]
    reach = sum(coverage._half_width(s, u / math.sqrt(1.13), d) for s, u, d in terms)
    assert 4.0 * reach / coverage.CELL_U <= coverage.GRID_CELLS[0]
    assert np.isfinite(coverage_factor(terms))
