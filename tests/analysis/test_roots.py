"""Brent's method (analysis/roots.py) against scipy.optimize.brentq, the reference implementation."""

from __future__ import annotations

import math

import pytest
from scipy import optimize

from benchlog.analysis.roots import brent_root

CASES = [
    (lambda x: x * x - 2.0, 0.0, 2.0),  # √2
    (lambda x: math.cos(x) - x, 0.0, 1.0),  # the Dottie number 0.739085... (from memory)
    (lambda x: math.exp(x) - 1e6, 0.0, 20.0),
    (lambda x: x**3 - 2 * x - 5, 2.0, 3.0),  # Wallis's cubic, root 2.0945514815... (a classic test, from memory)
    (lambda x: 1e-3 * x + 1e-12 * (math.exp(x / 0.026) - 1) - 0.5, 0.0, 2.0),  # a diode beside a resistor
    (lambda x: math.tanh(50 * (x - 0.3)), -1.0, 1.0),
]


@pytest.mark.parametrize("f, a, b", CASES)
def test_root_matches_scipy_brentq(f, a, b):
    ref = optimize.brentq(f, a, b, xtol=1e-14, rtol=1e-14)
    root, info = brent_root(f, a, b, xtol=1e-14, rtol=1e-14)
    assert info.converged
    assert root == pytest.approx(ref, abs=4e-14 + 4e-14 * abs(ref))
    _, ref_info = optimize.brentq(f, a, b, xtol=1e-14, rtol=1e-14, full_output=True)
    assert info.iterations <= ref_info.iterations + 5  # the same method: about as many steps


def test_known_values():
    assert brent_root(lambda x: x * x - 2.0, 0.0, 2.0, xtol=1e-15)[0] == pytest.approx(math.sqrt(2), abs=1e-14)
    assert brent_root(lambda x: x**3 - 2 * x - 5, 2.0, 3.0)[0] == pytest.approx(2.0945514815423265, abs=1e-11)


def test_no_sign_change_is_refused_and_slow_search_is_reported():
    with pytest.raises(ValueError):
        brent_root(lambda x: x * x + 1.0, -1.0, 1.0)
    _, info = brent_root(lambda x: math.tanh(50 * (x - 0.3)), -1.0, 1.0, xtol=1e-15, maxiter=3)
    assert not info.converged and info.iterations == 3
