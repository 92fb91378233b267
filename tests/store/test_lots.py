"""Two lots compared: Welch's t-test and the difference's uncertainty against scipy."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from benchlog.store.lots import compare


def test_welch_matches_scipy():
    rng = np.random.default_rng(11)
    a = 0.0100 + 0.0002 * rng.standard_normal(12)
    b = 0.0103 + 0.0005 * rng.standard_normal(7)
    c = compare("A", a, "B", b, usl=0.012)
    ref = stats.ttest_ind(a, b, equal_var=False)  # scipy's Welch test
    assert c.t == pytest.approx(ref.statistic, rel=1e-12)
    assert c.p_two_sided == pytest.approx(ref.pvalue, rel=1e-9)
    assert c.difference == pytest.approx(a.mean() - b.mean(), rel=1e-12)
    # Welch–Satterthwaite ν by the handbook formula (Welch 1947), written out here
    va, vb = a.var(ddof=1) / a.size, b.var(ddof=1) / b.size
    assert c.dof == pytest.approx((va + vb) ** 2 / (va ** 2 / (a.size - 1) + vb ** 2 / (b.size - 1)), rel=1e-12)
    assert c.expanded_u_95 == pytest.approx(stats.t.ppf(0.975, c.dof) * np.sqrt(va + vb), rel=1e-12)
    # capability with an upper limit only: Cpu = (USL − mean) / 3s (common practice)
    assert c.a.capability_name == "Cpu"
    assert c.a.capability == pytest.approx((0.012 - a.mean()) / (3 * a.std(ddof=1)), rel=1e-12)
