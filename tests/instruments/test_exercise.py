"""`benchlog profiles probe RESOURCE --exercise` against the simulated bench over real pyvisa-py sockets.

A wrong command form must be found with the outputs off: the sim refuses it
with -113 "Undefined header" as a SCPI-99 instrument does (SCPI-99 vol. 2 21.8.9;
common practice), the exercise names the operation, and the supply's output is
off afterwards as the sim itself reports over a fresh connection.
"""

from __future__ import annotations

import json
import threading
import time
from pathlib import Path

import pyvisa

from benchlog.cli import main

ROOT = Path(__file__).resolve().parents[2]
PROFILES = ROOT / "instrument_profiles"


def _copy(name: str, folder: Path, *edits: tuple[str, str]) -> Path:
    text = (PROFILES / f"{name}.toml").read_text()
    for old, new in edits:
        assert old in text, old
        text = text.replace(old, new)
    path = folder / f"{name}-edited.toml"
    path.write_text(text)
    return path


def _ask(resource: str, query: str) -> str:
    rm = pyvisa.ResourceManager("@py")
    try:
        link = rm.open_resource(resource, read_termination="\n", write_termination="\n", timeout=3000)
        try:
            return link.query(query).strip()
        finally:
            link.close()
    finally:
        rm.close()


def _exercise(capsys, resource: str, profile: Path | str) -> tuple[int, dict]:
    rc = main(["profiles", "probe", resource, "--exercise", "--profile", str(profile), "--json"])
    out, err = capsys.readouterr()
    assert "Traceback" not in err
    return rc, json.loads(out)


def test_every_shipped_sim_profile_is_accepted_in_full(sim_bench, capsys):
    bench = sim_bench("pmos", seed=1)
    for role, profile in (("supply", "sim-supply"), ("load", "sim-load"), ("meter", "sim-meter")):
        rc, report = _exercise(capsys, bench.resources[role], profile)
        sent = [op for op in report["operations"] if op["outcome"] != "not sent"]
        assert rc == 0 and report["refused"] == 0 and all(op["outcome"] == "accepted" for op in sent), report
    meter_ops = {op["operation"] for op in report["operations"]}
    # every range with every NPLC end of the profile, the sample count and a read of that many readings
    for r in ("0.1", "1", "10", "100"):
        assert f"configure_voltage range_v {r} nplc 0.02" in meter_ops and f"configure_voltage range_v {r} nplc 100" in meter_ops
    assert "set_samples count 2" in meter_ops and "read" in meter_ops


def test_a_wrong_nplc_form_is_found_with_minus_113(sim_bench, tmp_path, capsys):
    bench = sim_bench("pmos", seed=1)
    wrong = _copy("sim-meter", tmp_path, (":SENSe:VOLTage:DC:NPLCycles {nplc}", ":SENSe:VOLTage:DC:INTegration {nplc}"))
    rc, report = _exercise(capsys, bench.resources["meter"], wrong)
    assert rc == 1
    refused = [op for op in report["operations"] if op["outcome"] == "refused"]
    assert refused and all(op["operation"].startswith("configure_voltage") for op in refused)
    assert all(op["errors"][0]["code"] == -113 for op in refused), refused
    assert report["refused"] == len(refused) == 4 * 3 + 1  # 4 ranges x 3 NPLC values, and the final top range


def test_a_wrong_supply_form_is_found_with_the_output_off(sim_bench, tmp_path, capsys):
    bench = sim_bench("pmos", seed=1)
    wrong = _copy("sim-supply", tmp_path, ('set_current_limit = "SOURce:CURRent {current_a}"',
                                           'set_current_limit = "SOURce:CURRent:LEVel:LIMiter {current_a}"'))
    _ask(bench.resources["supply"], "OUTPut:STATe ON;:OUTPut:STATe?")  # left on by someone before us
    assert bench.bench.supply.output_on
    seen: list[bool] = []
    done = threading.Event()

    def watch():  # the sim's own output state, sampled while the exercise runs
        while not done.is_set():
            seen.append(bench.bench.supply.output_on)
            time.sleep(0.0005)

    watcher = threading.Thread(target=watch)
    watcher.start()
    try:
        rc, report = _exercise(capsys, bench.resources["supply"], wrong)
    finally:
        done.set()
        watcher.join()
    # on until the exercise's first command switched it off, and never on again
    first_off = seen.index(False)
    assert not any(seen[first_off:]), "the output came on during the exercise"
    assert rc == 1
    by_name = {op["operation"]: op for op in report["operations"]}
    assert by_name["set_current_limit current_a 0"]["errors"][0]["code"] == -113
    assert by_name["output_off"]["outcome"] == "accepted"  # switched off before anything else
    assert by_name["output_on"]["outcome"] == "not sent"
    assert by_name["polarity_reversed"]["outcome"] == "not sent"
    assert _ask(bench.resources["supply"], "OUTPut:STATe?") == "0"
    assert float(_ask(bench.resources["supply"], "SOURce:VOLTage?")) == 0.0


def test_a_refused_query_is_reported_with_its_error_not_a_hang(sim_bench, tmp_path, capsys):
    bench = sim_bench("pmos", seed=1)
    wrong = _copy("sim-load", tmp_path, ('measure_voltage = "MEAS:VOLT?"', 'measure_voltage = "MEAS:VOLTS?"'),
                  ("timeout_s = 2.0", "timeout_s = 0.5"))
    rc, report = _exercise(capsys, bench.resources["load"], wrong)
    op = next(op for op in report["operations"] if op["operation"] == "measure_voltage")
    assert rc == 1 and op["outcome"] == "refused" and op["errors"][0]["code"] == -113, op
    assert _ask(bench.resources["load"], "INPut:STATe?") == "0"


def test_exercise_refuses_an_instrument_that_is_not_the_profiles(sim_bench, capsys):
    bench = sim_bench("pmos", seed=1)
    rc = main(["profiles", "probe", bench.resources["meter"], "--exercise", "--profile", "sim-supply"])
    err = capsys.readouterr().err
    assert rc == 2 and len(err.strip().splitlines()) == 1 and "sim-supply" in err


def test_profile_without_exercise_is_a_wrong_argument(capsys):
    rc = main(["profiles", "probe", "TCPIP0::127.0.0.1::5025::SOCKET", "--profile", "sim-meter"])
    assert rc == 2 and "--profile" in capsys.readouterr().err
