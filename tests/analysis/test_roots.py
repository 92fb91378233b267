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


def test_many_seeded_brackets_match_scipy_brentq():
    # reference: scipy.optimize.brentq on 300 seeded functions of three shapes met in the tool
    # (cubic, diode law beside a resistor, thermal runaway-like exponential), each bracket drawn at random
    import numpy as np

    rng = np.random.default_rng(14)
    for _ in range(100):
        c = rng.normal(size=4)
        cubic = lambda x, c=c: ((c[0] * x + c[1]) * x + c[2]) * x + c[3] + 0.0  # noqa: E731
        r_ohm, i_s, n_vt = 10 ** rng.uniform(-3, 0), 10 ** rng.uniform(-14, -6), rng.uniform(0.025, 0.06)
        target = rng.uniform(0.01, 3.0)
        diode = lambda v, r=r_ohm, s=i_s, nv=n_vt, t=target: v / r + s * math.expm1(v / nv) - t  # noqa: E731
        k, a0 = rng.uniform(0.01, 0.5), rng.uniform(1.0, 50.0)
        runaway = lambda x, k=k, a0=a0: a0 * math.exp(k * x) - x - a0  # noqa: E731
        for f in (cubic, diode, runaway):
            lo, hi = -20.0, 20.0
            xs = np.linspace(lo, hi, 401) if f is not diode else np.linspace(0.0, 3.0, 401)
            vals = np.array([f(float(x)) for x in xs])
            change = np.nonzero(np.sign(vals[:-1]) * np.sign(vals[1:]) < 0)[0]
            if change.size == 0:
                continue
            a, b = float(xs[change[0]]), float(xs[change[0] + 1])
            ref = optimize.brentq(f, a, b, xtol=1e-13, rtol=1e-13)
            root, info = brent_root(f, a, b, xtol=1e-13, rtol=1e-13)
            assert info.converged
            assert root == pytest.approx(ref, abs=4e-13 + 4e-13 * abs(ref))
