"""A meter whose profile has no NPLC command: described, swept, and the run does not claim an NPLC it never set."""

from __future__ import annotations

from pathlib import Path

import pyvisa

from benchlog.cli import main
from benchlog.runs import read_events
from benchlog.runs.events import Note, RunStarted

ROOT = Path(__file__).resolve().parents[2]
PLAN = ROOT / "tests" / "reliability" / "plans" / "pmos-40.toml"


def _meter_profile_without_nplc(folder: Path) -> Path:
    text = (ROOT / "instrument_profiles" / "sim-meter.toml").read_text()
    text = text.replace('name = "sim-meter"', 'name = "sim-meter-fixed-nplc"')
    text = text.replace(";:SENSe:VOLTage:DC:NPLCycles {nplc}", "").replace(";:SENSe:CURRent:DC:NPLCycles {nplc}", "")
    text = text.replace("nplc_min = 0.02\n", "").replace("nplc_max = 100.0\n", "")
    path = folder / "meter-fixed-nplc.toml"
    path.write_text(text)
    return path


def test_sweep_with_a_meter_that_cannot_set_nplc(sim_bench, tmp_path, capsys):
    bench = sim_bench("pmos", seed=4)
    meter = _meter_profile_without_nplc(tmp_path)
    plan = tmp_path / "plan.toml"
    plan.write_text(PLAN.read_text().replace("nplc = 1\n", "nplc = 10\n"))
    bench_file = tmp_path / "bench.toml"
    bench_file.write_text(
        f'[supply]\nresource = "{bench.resources["supply"]}"\nprofile = "sim-supply"\n'
        f'[load]\nresource = "{bench.resources["load"]}"\nprofile = "sim-load"\n'
        f'[meter]\nresource = "{bench.resources["meter"]}"\nprofile = "{meter}"\n'
        '[wiring]\nforce = "load"\ncurrent_from = "load"\ninput_v = 12.0\n')
    rc = main(["sweep", str(plan), "--bench", str(bench_file), "--out", str(tmp_path / "runs"), "--yes"])
    out, err = capsys.readouterr()
    assert rc == 0, err
    run = next((tmp_path / "runs").glob("*.run"))
    events = list(read_events(run))
    header = events[0]
    assert isinstance(header, RunStarted) and header.header.meter.nplc is None
    warnings = [e.message for e in events if isinstance(e, Note) and e.kind == "warning"]
    assert any("no NPLC command" in w and "cannot be set" in w for w in warnings), warnings
    # the meter kept its own integration time: ask it over a fresh link (the sim's power-on default is 1 PLC)
    rm = pyvisa.ResourceManager("@py")
    try:
        link = rm.open_resource(bench.resources["meter"], read_termination="\n", write_termination="\n", timeout=3000)
        assert float(link.query("SENSe:VOLTage:DC:NPLCycles?")) == 1.0
        link.close()
    finally:
        rm.close()
