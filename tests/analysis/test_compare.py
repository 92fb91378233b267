"""Differences between runs: correlated meter terms cancel, independent terms add (GUM 5.2.2)."""

import json
import math
from pathlib import Path

import pytest

from benchlog.analysis.compare import Term, difference
from benchlog.cli import main

ROOT = Path(__file__).resolve().parents[2]
LOT = ROOT / "sample_runs" / "lot-demo-07"
METER = ("drop meter gain", "BENCHLOG,SIM-METER,M1,0", 0.1)


def test_hand_computation_same_meter_cancels():
    # Hand computation with GUM 5.2.2 eq. (16), d = b − a, c_a = −1, c_b = +1, r = 1 for the shared gain:
    #   u²(d) = 3² + 4² + 5² + 4.2² − 2·4·4.2 = 9 + 16 + 25 + 17.64 − 33.6 = 34.04  (µΩ²)
    a = [Term("fit residuals", 3e-6), Term("drop meter gain", 4e-6, METER)]
    b = [Term("fit residuals", 5e-6), Term("drop meter gain", 4.2e-6, METER)]
    d = difference("r_on_ohm", 10.0e-3, a, 10.02e-3, b)
    assert d.d == pytest.approx(20e-6)
    assert d.u_d == pytest.approx(math.sqrt(34.04) * 1e-6, rel=1e-12)
    assert d.cancelled == ("drop meter gain",)
    assert d.expanded_u_d == pytest.approx(2 * math.sqrt(34.04) * 1e-6)
    assert d.significant  # 20 µΩ > 11.67 µΩ


def test_hand_computation_other_meter_adds():
    # Different meter serials: r = 0, u²(d) = 9 + 16 + 25 + 17.64 = 67.64 (µΩ²) (GUM 5.1.2)
    other = ("drop meter gain", "BENCHLOG,SIM-METER,M2,0", 0.1)
    a = [Term("fit residuals", 3e-6), Term("drop meter gain", 4e-6, METER)]
    b = [Term("fit residuals", 5e-6), Term("drop meter gain", 4.2e-6, other)]
    d = difference("r_on_ohm", 10.0e-3, a, 10.01e-3, b)
    assert d.u_d == pytest.approx(math.sqrt(67.64) * 1e-6, rel=1e-12)
    assert d.cancelled == ()
    assert not d.significant  # 10 µΩ < 16.45 µΩ


def test_same_range_needed_and_unknown_instrument_is_independent():
    a = [Term("drop meter gain", 4e-6, METER)]
    b = [Term("drop meter gain", 4e-6, (METER[0], METER[1], 1.0))]  # another range
    assert difference("q", 0.0, a, 0.0, b).u_d == pytest.approx(math.hypot(4e-6, 4e-6))
    c = [Term("drop meter gain", 4e-6, None)]
    assert difference("q", 0.0, c, 0.0, c).u_d == pytest.approx(math.hypot(4e-6, 4e-6))


def _same_bench_copy(src: Path, like: Path, dest: Path) -> Path:
    """`src` with the *IDN? replies of `like`: the same instruments read both runs."""
    first, rest = src.read_text(encoding="utf-8").split("\n", 1)
    header, other = json.loads(first), json.loads(like.read_text(encoding="utf-8").split("\n", 1)[0])
    for role, inst in header["instruments"].items():
        inst["idn"] = other["instruments"][role]["idn"]
    dest.write_text(json.dumps(header, separators=(",", ":")) + "\n" + rest, encoding="utf-8")
    return dest


def test_cli_json_shared_bench_cancels_and_is_smaller(tmp_path, capsys):
    a, b = LOT / "L07-0001.run", LOT / "L07-0002.run"
    assert main(["compare", str(a), str(b), "--json"]) == 0
    apart = json.loads(capsys.readouterr().out)
    same = _same_bench_copy(b, a, tmp_path / "L07-0002-same-bench.run")
    assert main(["compare", str(a), str(same), "--json"]) == 0
    together = json.loads(capsys.readouterr().out)
    d_apart = {d["quantity"]: d for d in apart["against"][0]["differences"]}
    d_same = {d["quantity"]: d for d in together["against"][0]["differences"]}
    for q in ("r_on_ohm", "loss_w"):
        assert d_apart[q]["cancelled"] == []
        assert d_same[q]["cancelled"]  # meter terms named as cancelled
        assert d_same[q][f"difference_{q}"] == pytest.approx(d_apart[q][f"difference_{q}"])
        u_a, u_b = d_apart[q][f"std_u_reference_{q}"], d_apart[q][f"std_u_other_{q}"]
        # independent: u(d)² = u(a)² + u(b)² exactly (GUM 5.1.2); shared: strictly smaller
        assert d_apart[q][f"std_u_difference_{q}"] == pytest.approx(math.hypot(u_a, u_b), rel=1e-9)
        assert d_same[q][f"std_u_difference_{q}"] < d_apart[q][f"std_u_difference_{q}"]
        sig = abs(d_same[q][f"difference_{q}"]) > 2 * d_same[q][f"std_u_difference_{q}"]
        assert d_same[q]["significant"] is sig


def test_cli_table_of_three_and_bad_input(capsys):
    runs = [str(LOT / f"L07-000{i}.run") for i in (1, 2, 3)]
    assert main(["compare", *runs]) == 0
    out = capsys.readouterr().out
    assert out.count("against ") == 2 and "R_on" in out and "k = 2" in out
    assert main(["compare", runs[0], runs[0]]) == 2
    err = capsys.readouterr().err.strip()
    assert "same run" in err and "\n" not in err
    assert main(["compare", runs[0]]) == 2
    assert main(["compare", runs[0], runs[1], "--at", "-1"]) == 2
