"""What a lot row states for a part: the value and its U at 95.45 % with the budget's own k_p.

With a spec it is the judgement's (`check` and `lot` state the same, the Tj term included); without
one, the fit's own budget. Never a bare 2·u: on these parts the coverage factor for 95.45 % is not 2
(GUM 6.3; `analysis/coverage.py`).
"""

from pathlib import Path

import pytest

from benchlog.analysis.judging import check_run
from benchlog.runs import load
from benchlog.specfiles import load_spec
from benchlog.tui.findings import study_run
from benchlog.tui.lotview import part_quantity

REPO = Path(__file__).resolve().parents[2]
RUNS = REPO / "sample_runs"
SPECS = REPO / "benchlog" / "demo" / "specs"


@pytest.mark.parametrize("run, spec", [("pmos-prototype.run", "demo-pfet-10m.toml"),
                                       ("rectifier-prototype.run", "demo-rect-3a.toml")])
def test_with_a_spec_the_row_states_the_judgements_value_and_u(run, spec):
    name, unit, value, expanded = part_quantity(study_run(RUNS / run, SPECS / spec))
    frame, meta = load(RUNS / run)
    j = check_run(frame, meta, load_spec(SPECS / spec)).judgement
    assert value == pytest.approx(j.value, rel=1e-12)
    assert expanded == pytest.approx(j.budget.expanded_u, rel=1e-12)
    assert unit == ("Ω" if j.quantity == "r_on_ohm" else "V")


def test_without_a_spec_the_row_states_the_fits_own_u_not_twice_u():
    findings = study_run(RUNS / "resistor-prototype.run")
    name, unit, value, expanded = part_quantity(findings)
    budget = findings.fit.budgets["r_on_ohm"]
    assert (name, unit) == ("R_on", "Ω")
    assert expanded == pytest.approx(budget.expanded_u, rel=1e-12)
    assert abs(expanded / budget.u - 2.0) > 0.05  # one rectangular term dominates: k_p near 1.65
