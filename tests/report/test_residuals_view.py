"""The residual view shows only the points the fit weighed, and its scatter s is theirs (s = √(Σe²/ν))."""

import math
from pathlib import Path

import numpy as np

from benchlog.analysis.fits import fit_run
from benchlog.report.from_analysis import residuals
from benchlog.runs import load

SAMPLES = Path(__file__).resolve().parents[2] / "sample_runs"


def test_unweighted_points_are_left_out_of_plot_and_scatter():
    frame, meta = load(SAMPLES / "schottky-prototype.run")
    fit = fit_run(frame, meta, model="diode")
    assert fit.excluded is not None and fit.excluded.any()  # this run starts below the current resolution
    view = residuals(fit, "D2")
    used = ~fit.excluded
    assert len(view.residual_v) == int(used.sum())
    e = np.asarray(fit.residuals_v)[used]
    assert math.isclose(view.u_v, math.sqrt(float(e @ e) / fit.dof), rel_tol=1e-12)
    assert "not shown" in view.label
    # with the unweighted points the scatter would be far larger than the meter's noise
    assert view.u_v < 0.01
