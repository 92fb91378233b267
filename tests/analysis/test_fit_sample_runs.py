"""Diode fits of the committed sample runs recover the simulated parts they were recorded from.

The sample runs read the current from the supply's readback on its 10 A range
(±(0.1 % of reading + 0.05 % of range) in the header): at the 2–10 mA end of the
log sweeps that error is as large as the current. The fits must still find the
simulator's ideality — the nominal of the part family (`benchlog.sim.elements.NOMINAL`)
and the seeded part itself (`SimBench.truth()`, the spread drawn from the same
seed as the recording) — within the expanded uncertainty, with u(n)/n below 10 %.
The sweeps use a cool-down between points, so the junction stays close to ambient
(`benchlog.sim.thermal`: a dominant τ of about 25 s against 20 ms of dwell per point).
"""

from pathlib import Path

import pytest

from benchlog import runs
from benchlog.analysis.fits import fit_run
from tools.sample_runs import SAMPLES
from benchlog.sim.bench import SimBench
from benchlog.sim.config import SimConfig
from benchlog.sim.elements import NOMINAL

ROOT = Path(__file__).resolve().parents[2] / "sample_runs"
BY_NAME = {s.name: s for s in SAMPLES}


def seeded_truth(name: str, kind: str) -> dict:
    sample = BY_NAME[name]
    bench = SimBench(SimConfig(element=kind, seed=sample.seed, ambient_c=25.0,
                               element_params=dict(sample.element_params)))
    return bench.truth()


@pytest.mark.parametrize("name, kind", [("schottky-prototype", "schottky"), ("rectifier-prototype", "rectifier")])
def test_prototype_diode_fit_recovers_the_simulated_part(name, kind):
    frame, meta = runs.load(ROOT / f"{name}.run")
    fit = fit_run(frame, meta)
    assert fit.model == "diode"
    n, big_u = fit.params["ideality"], fit.expanded_u["ideality"]
    assert fit.std_u["ideality"] / n < 0.10
    assert abs(n - NOMINAL[kind].ideality) <= big_u
    truth = seeded_truth(name, kind)
    for key in ("ideality", "i_s_a", "r_s_ohm"):
        assert abs(fit.params[key] - truth[key]) <= fit.expanded_u[key], key
    # the low-current points whose readback is not resolved are named, not dropped
    assert fit.points == len(frame)
    assert fit.unresolved is not None and fit.points_used < fit.points
    low = fit.current_a[fit.unresolved]
    assert low.max() < 2 * (0.1e-2 * low.max() + 0.05e-2 * 10.0) / 3**0.5  # |I| <= 2·u(I), GUM 4.3.7
    assert low.max() < fit.current_a[~fit.unresolved].min()  # the bottom of the sweep, nothing else
