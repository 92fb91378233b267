"""`benchlog profiles scan`: the listing, the missing-extra lines and the probing of given resources, bounded in time.

TCPIP raw-socket resources cannot be discovered, so the simulated bench's are
passed with --resource; LAN discovery (a broadcast) is never used in tests.
"""

from __future__ import annotations

import importlib.util
import json
import socket
import threading
import time

from benchlog.cli import main
from benchlog.instruments.discovery import list_resources, missing_extras


def test_missing_extras_are_named_with_the_extra_to_install(capsys):
    rc = main(["profiles", "scan", "--json"])
    captured = capsys.readouterr()
    report = json.loads(captured.out)
    for module, extra, package in (("usb", "usb", "pyusb"), ("serial", "serial", "pyserial")):
        installed = importlib.util.find_spec(module) is not None
        line = f"pip install 'benchlog[{extra}]'"
        assert (line in captured.err) is not installed, captured.err
        assert (extra in [m["extra"] for m in report["missing_extras"]]) is not installed
        if not installed:
            notes = [x for x in captured.err.splitlines() if line in x]
            assert len(notes) == 1 and package in notes[0] and notes[0].startswith("benchlog: note:")
    assert [m.extra for m in missing_extras()] == [m["extra"] for m in report["missing_extras"]]
    # what the backend lists is what the scan reports (nothing on this machine's local buses, most likely)
    assert [r["resource"] for r in report["resources"]] == list(list_resources("@py"))
    assert rc == (0 if report["resources"] and all(r["answered"] for r in report["resources"]) else 1)


def test_given_resources_are_probed_and_matched(sim_bench, capsys):
    bench = sim_bench("pmos", seed=1)
    argv = ["profiles", "scan", "--json"]
    for role in ("supply", "load", "meter"):
        argv += ["--resource", bench.resources[role]]
    rc = main(argv)
    report = json.loads(capsys.readouterr().out)
    by_resource = {r["resource"]: r for r in report["resources"]}
    assert rc == 0
    for role, idn_start in (("supply", "BENCHLOG,SIM-SUPPLY,"), ("load", "BENCHLOG,SIM-LOAD,"),
                            ("meter", "BENCHLOG,SIM-METER,")):
        entry = by_resource[bench.resources[role]]
        assert entry["answered"] and entry["idn"].startswith(idn_start) and not entry["listed"]
        assert f"sim-{role}" in [m["name"] for m in entry["matches"]]


def test_unreachable_and_silent_resources_do_not_hang_the_scan(sim_bench, capsys):
    bench = sim_bench("pmos", seed=1)
    silent = socket.socket()
    silent.bind(("127.0.0.1", 0))
    silent.listen(4)
    held: list[socket.socket] = []
    stop = threading.Event()

    def accept_and_say_nothing():
        silent.settimeout(0.2)
        while not stop.is_set():
            try:
                held.append(silent.accept()[0])
            except OSError:
                continue

    threading.Thread(target=accept_and_say_nothing, daemon=True).start()
    closed = socket.socket()
    closed.bind(("127.0.0.1", 0))
    closed_port = closed.getsockname()[1]
    closed.close()  # nothing listens there now: the connection is refused
    try:
        started = time.monotonic()
        rc = main(["profiles", "scan", "--timeout", "0.5",
                   "--resource", f"TCPIP0::127.0.0.1::{silent.getsockname()[1]}::SOCKET",
                   "--resource", f"TCPIP0::127.0.0.1::{closed_port}::SOCKET",
                   "--resource", bench.resources["meter"]])
        elapsed = time.monotonic() - started
    finally:
        stop.set()
        for s in held:
            s.close()
        silent.close()
    out = capsys.readouterr().out
    assert rc == 1
    lines = out.splitlines()
    assert sum("no answer" in line for line in lines) == 2, out
    assert any("BENCHLOG,SIM-METER" in line for line in lines), out
    assert elapsed < 10, f"scan took {elapsed:.1f} s with a 0.5 s timeout"


def test_a_malformed_resource_is_a_wrong_argument(capsys):
    assert main(["profiles", "scan", "--resource", "not a resource"]) == 2
    assert "RESOURCE" in capsys.readouterr().err
