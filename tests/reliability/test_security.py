"""Security end to end: no SCPI injection from plans, bench files, profiles or the UI; loopback by default; data never run.

The sweep runs as a real `benchlog sweep` process against a simulated bench
served by this test process, so every message the instruments receive is
counted at the sim (each instrument's `execute` is wrapped to record it).
Covered elsewhere and not repeated here: setpoints refused by the roles before
anything is sent (tests/instruments/test_sim_bench.py
`test_injection_attempts_never_reach_the_sim`), number formatting
(tests/scpi/test_numbers.py), the sim's default listener in-process
(tests/sim/test_robustness.py), HTML escaping of a hostile serial in the report
(tests/report/test_html.py, test_report_cli.py); here the serial reaches the
report through a real sweep and run file.
"""

from __future__ import annotations

import ast
import asyncio
import socket
import tempfile
import threading
from pathlib import Path

import pytest

from benchlog.runs import load

from .procs import ROOT, SimProcess, messages, run_benchlog, write_bench_file

PLAN_TEXT = (Path(__file__).parent / "plans" / "pmos-40.toml").read_text(encoding="utf-8")
LOAD_WIRING = {"force": "load", "current_from": "load", "input_v": 12.0}
MARKER = Path(tempfile.gettempdir()) / "benchlog-security-marker"


class Recorder:
    """Every program message each simulated instrument received, in order."""

    def __init__(self, running) -> None:
        self.lock = threading.Lock()
        self.received: list[tuple[str, str]] = []
        for role, device in running.bench.devices().items():
            device.execute = self._wrap(role, device.execute)

    def _wrap(self, role, execute):
        def recorded(message: str):
            with self.lock:
                self.received.append((role, message))
            return execute(message)

        return recorded

    def messages(self) -> list[str]:
        with self.lock:
            return [m for _, m in self.received]

    def power_commands(self) -> list[str]:
        return [m for m in self.messages() if m.upper().replace(":STATE", "").startswith(("OUTP ON", "OUTPUT ON",
                                                                                           "INP ON", "INPUT ON"))]


@pytest.fixture
def recorded_bench(sim_bench, tmp_path):
    running = sim_bench("pmos", seed=31)
    recorder = Recorder(running)
    bench = write_bench_file(tmp_path / "bench.toml", running.resources, **LOAD_WIRING)
    return running, recorder, bench


def _sweep(plan: Path, bench: Path, out: Path):
    return run_benchlog("sweep", str(plan), "--bench", str(bench), "--out", str(out), "--json", timeout_s=60)


# -- values that try to add SCPI: refused before any output is switched on -------------------------------

HOSTILE_PLANS = [
    ("compliance as command text", "compliance_v = 15.0", 'compliance_v = "1;*RST"', "[limits].compliance_v"),
    ("current with a newline", "stop_a = 2.0", 'stop_a = "2\\n*RST"', "[steps].stop_a"),
    ("range with a second command", "range_v = 0.1", 'range_v = "0.1;*RST;OUTP ON"', "[meter].range_v"),
    ("kind with a command", 'kind = "pmos"', 'kind = "pmos;*RST"', "[element].kind"),
    ("nplc as a list", "nplc = 1", 'nplc = ["1", "*RST"]', "[meter].nplc"),
]


@pytest.mark.parametrize("name, old, new, key", HOSTILE_PLANS, ids=[p[0] for p in HOSTILE_PLANS])
def test_plan_values_cannot_inject_scpi(recorded_bench, tmp_path, name, old, new, key):
    running, recorder, bench = recorded_bench
    plan = tmp_path / "hostile.toml"
    plan.write_text(PLAN_TEXT.replace(old, new, 1), encoding="utf-8")
    done = _sweep(plan, bench, tmp_path / "runs")
    told = messages(done.stderr)
    assert done.returncode == 2 and len(told) == 1 and key in told[0] and str(plan) in told[0], done.stderr
    assert "Traceback" not in done.stderr
    assert not any("RST" in m.upper() for m in recorder.messages())
    assert recorder.power_commands() == []
    assert not running.bench.supply.output_on and not running.bench.load.input_on
    assert not (tmp_path / "runs").exists() or not any((tmp_path / "runs").iterdir())  # no run was started


def test_bench_resource_cannot_inject_scpi(recorded_bench, tmp_path):
    running, recorder, bench = recorded_bench
    text = bench.read_text().replace('::SOCKET"', '::SOCKET\\n*RST"', 1)
    hostile = tmp_path / "hostile-bench.toml"
    hostile.write_text(text)
    done = _sweep(Path(__file__).parent / "plans" / "pmos-40.toml", hostile, tmp_path / "runs")
    assert done.returncode == 2 and "[supply].resource" in done.stderr and "Traceback" not in done.stderr
    assert recorder.messages() == [] and not running.bench.supply.output_on


@pytest.mark.parametrize("template", ['"OUTPut:STATe ON\\n*RST"', '"OUTPut:STATe ON\\r*RST"', '"OUTPut:STATe\\u0000ON"'])
def test_profile_template_with_a_second_line_is_refused_before_connecting(recorded_bench, tmp_path, template):
    running, recorder, bench = recorded_bench
    profile_text = (ROOT / "instrument_profiles" / "sim-supply.toml").read_text()
    profile = tmp_path / "hostile-supply.toml"
    profile.write_text(profile_text.replace('"OUTPut:STATe ON"', template, 1))
    bench.write_text(bench.read_text().replace('profile = "sim-supply"', f'profile = "{profile}"'))
    done = _sweep(Path(__file__).parent / "plans" / "pmos-40.toml", bench, tmp_path / "runs")
    told = messages(done.stderr)
    assert done.returncode == 2 and len(told) == 1 and "[commands].output_on" in told[0], done.stderr
    assert recorder.messages() == []  # the supply is opened first: nothing was even connected
    assert not running.bench.supply.output_on


# -- free text reaches the run file and the report as text, never the instruments -------------------------

HOSTILE_TEXT = {
    "serial": '<script>alert(1)</script>;*RST\\nOUTP ON',
    "lot": "LOT;*RST",
    "note": "__import__('os').system('touch " + str(MARKER) + "')",
    "label": '"; :SYST:ERR?; *RST',
}


def test_free_text_is_recorded_as_text_and_never_sent(recorded_bench, tmp_path):
    running, recorder, bench = recorded_bench
    MARKER.unlink(missing_ok=True)
    text = PLAN_TEXT.replace('serial = "REL-0001"', f'serial = "{HOSTILE_TEXT["serial"]}"')
    text = text.replace('label = "DEMO-PFET-10M"', f"label = '{HOSTILE_TEXT['label']}'")  # a TOML literal string
    text = text.replace("ambient_c = 25.0", f'ambient_c = 25.0\nlot = "{HOSTILE_TEXT["lot"]}"\n'
                        f'note = "{HOSTILE_TEXT["note"]}"')
    plan = tmp_path / "text.toml"
    plan.write_text(text, encoding="utf-8")
    done = _sweep(plan, bench, tmp_path / "runs")
    assert done.returncode == 0, done.stderr
    sent = recorder.messages()
    assert len(sent) > 100  # a real sweep happened
    assert not any("RST" in m.upper() or "script" in m or "LOT" in m for m in sent)
    assert recorder.power_commands()  # power was applied, by the profile's own command
    assert not running.bench.supply.output_on and not running.bench.load.input_on
    assert not MARKER.exists()  # the note was data, not code
    run_file = next((tmp_path / "runs").glob("*.run"))
    _, meta = load(run_file)
    assert meta.header.element.serial == "<script>alert(1)</script>;*RST\nOUTP ON"
    assert meta.header.element.note == HOSTILE_TEXT["note"]
    assert meta.header.element.label == HOSTILE_TEXT["label"] and meta.header.element.lot == "LOT;*RST"
    # and the report shows the serial as text (escaping itself is checked in tests/report)
    from benchlog.cli import main

    page = tmp_path / "report.html"
    assert main(["report", str(run_file), "-o", str(page)]) == 0
    html = page.read_text(encoding="utf-8")
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in html and "<script>alert(1)" not in html


# -- the UI: what is typed in the set-up form goes through the plan reader --------------------------------


def _setup_form(value: str, field: str):
    """Type `value` into one field of the set-up view of the real app; return (plan text, check box text)."""
    from benchlog.tui.app import BenchApp
    from tests.tui.synthetic import ScriptedSession, screen_text, write_files

    async def run():
        with tempfile.TemporaryDirectory() as tmp:
            runs = Path(tmp) / "runs"
            runs.mkdir()
            plan, spec = write_files(Path(tmp) / "cfg")
            session = ScriptedSession(runs)
            app = BenchApp(session, runs_dir=runs, plans=[plan], specs=[spec])
            async with app.run_test(size=(100, 30)) as pilot:
                await pilot.press("2")
                await pilot.pause(0.1)
                box = app.screen.query_one(field)
                box.focus()
                box.value = value
                await pilot.pause(0.2)
                await pilot.press("escape", "r")  # try to run it
                await pilot.pause(0.2)
                return app.state.plan_text, screen_text(app), session.sweeps

    return asyncio.run(run())


def test_ui_field_with_command_text_is_refused_by_the_plan_check():
    plan_text, screen, sweeps = _setup_form("1;*RST", "#f-limits-compliance_v")
    assert "plan not usable" in screen and "[limits].compliance_v" in screen
    assert sweeps == 0  # never started


def test_ui_serial_with_a_newline_stays_one_toml_string():
    import tomllib

    plan_text, _, _ = _setup_form('S1"\nOUTP ON\n[limits]\nmax_current_a = 99', "#f-element-serial")
    doc = tomllib.loads(plan_text)
    assert doc["element"]["serial"] == 'S1"\nOUTP ON\n[limits]\nmax_current_a = 99'
    assert doc["limits"].get("max_current_a") != 99


@pytest.mark.parametrize("value", ["nan", "1e400", "-inf"])
def test_ui_non_finite_number_is_named_not_a_crash(value):
    _, screen, sweeps = _setup_form(value, "#f-limits-compliance_v")
    assert "plan not usable" in screen and "[limits].compliance_v" in screen and sweeps == 0


# -- the simulator listens on loopback unless told otherwise ---------------------------------------------


def _listening_addresses(port: int) -> set[str]:
    """Local addresses in LISTEN state on `port`, from the kernel's socket tables (Linux /proc/net)."""
    found = set()
    for table, width in (("/proc/net/tcp", 8), ("/proc/net/tcp6", 32)):
        try:
            rows = Path(table).read_text().splitlines()[1:]
        except OSError:
            continue
        for row in rows:
            local, state = row.split()[1], row.split()[3]
            address, hex_port = local.split(":")
            if int(hex_port, 16) == port and state == "0A":  # 0A = TCP_LISTEN
                if width == 8:
                    found.add(socket.inet_ntop(socket.AF_INET, bytes.fromhex(address)[::-1]))
                else:
                    raw = b"".join(bytes.fromhex(address[i:i + 8])[::-1] for i in range(0, 32, 8))
                    found.add(socket.inet_ntop(socket.AF_INET6, raw))
    return found


@pytest.mark.skipif(not Path("/proc/net/tcp").exists(), reason="reads the Linux socket table")
def test_sim_process_listens_on_loopback_only():
    with SimProcess("--current-meter") as sim:
        ports = [int(r.split("::")[2]) for r in sim.resources.values()]
        assert len(ports) == 4
        for port in ports:
            assert _listening_addresses(port) == {"127.0.0.1"}, port


# -- profiles and plans are data: nothing in the package can run text as code ---------------------------

FORBIDDEN_MODULES = {"pickle", "cPickle", "marshal", "shelve", "yaml", "dill", "runpy"}
FORBIDDEN_CALLS = {"eval", "exec", "compile", "__import__"}


def _code_execution(tree: ast.AST, name: str) -> list[str]:
    """Imports and calls in `tree` that could run text as code or through a shell."""
    found = []
    for node in ast.walk(tree):
        where = f"{name}:{getattr(node, 'lineno', 0)}"
        if isinstance(node, ast.Import):
            found += [f"{where} import {a.name}" for a in node.names if a.name.split(".")[0] in FORBIDDEN_MODULES]
        elif isinstance(node, ast.ImportFrom) and (node.module or "").split(".")[0] in FORBIDDEN_MODULES:
            found.append(f"{where} from {node.module} import")
        elif isinstance(node, ast.Call):
            func = node.func
            if isinstance(func, ast.Name) and func.id in FORBIDDEN_CALLS:
                found.append(f"{where} {func.id}()")
            if isinstance(func, ast.Attribute) and func.attr in ("system", "popen", "load", "loads") and \
                    isinstance(func.value, ast.Name) and func.value.id in ("os", "yaml", "pickle", "marshal"):
                found.append(f"{where} {func.value.id}.{func.attr}()")
            for kw in node.keywords:
                if kw.arg == "shell" and not (isinstance(kw.value, ast.Constant) and kw.value.value is False):
                    found.append(f"{where} shell=...")
    return found


def test_no_code_execution_paths_in_the_package():
    found = []
    for path in sorted((ROOT / "benchlog").rglob("*.py")):
        found += _code_execution(ast.parse(path.read_text(encoding="utf-8"), str(path)), str(path.relative_to(ROOT)))
    assert found == []


def test_the_scan_flags_each_forbidden_form():
    # the check above is not vacuous: the same scan flags each form in a sample
    sample = ("import pickle\nfrom yaml import safe_load\neval('1')\nexec('x = 1')\nos.system('ls')\n"
              "subprocess.run('ls', shell=True)\nsubprocess.run(['ls'], shell=False)\n")
    flagged = _code_execution(ast.parse(sample), "sample")
    assert [f.split(" ", 1)[1] for f in flagged] == [
        "import pickle", "from yaml import", "eval()", "exec()", "os.system()", "shell=..."]
