"""What every benchmark script shares: machine facts, side-by-side timing, peak memory in a fresh process.

Benchmarks are scripts, not tests: each measures our code and its baseline in
the same run, interleaved (A, B, A, B, ...) so that a busy machine slows both
alike, and prints the ratio with the command that reproduces it. The best of
the repeats is the figure (the least disturbed run); the median is printed
beside it so a noisy machine shows.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import shlex
import statistics
import subprocess
import sys
import time
from pathlib import Path
from typing import Any, Callable

REPO = Path(__file__).resolve().parents[1]
if str(REPO) not in sys.path:
    sys.path.insert(0, str(REPO))  # run from a clone without installing


def effective_timing(asked: str) -> str:
    """The timing the simulator will really have: one without the setting answers at once."""
    import dataclasses

    from benchlog.sim.config import SimConfig

    if "timing" in {f.name for f in dataclasses.fields(SimConfig)}:
        return asked
    return "instant (this simulator has no timing setting)"


def builtin_bench_starter() -> Callable[..., Any]:
    """The simulated bench starter; `timing` is passed on only to a simulator that has the setting."""
    import dataclasses

    try:
        from benchlog.cli.simbench import builtin_bench
    except ImportError:  # before the simulated bench moved to cli/
        from benchlog.sweep.simbench import builtin_bench  # type: ignore[no-redef]
    from benchlog.sim.config import SimConfig

    has_timing = "timing" in {f.name for f in dataclasses.fields(SimConfig)}

    def start(element, seed=1, **options):
        if not has_timing:
            options.pop("timing", None)
        return builtin_bench(element, seed=seed, **options)

    return start


def machine_facts() -> dict[str, Any]:
    """nproc, RAM, Python and the versions of the libraries the figures depend on (no CPU name: no brands)."""
    import numpy
    import pandas
    import scipy

    facts: dict[str, Any] = {
        "nproc": os.cpu_count(),
        "ram_gib": _ram_gib(),
        "python": platform.python_version(),
        "platform": platform.platform(),
        "numpy": numpy.__version__,
        "pandas": pandas.__version__,
        "scipy": scipy.__version__,
    }
    for name in ("pyvisa", "pyvisa_py", "textual"):
        try:
            module = __import__(name)
            facts[name] = getattr(module, "__version__", "?")
        except ImportError:
            facts[name] = None
    return facts


def _ram_gib() -> float | None:
    """Total memory from /proc/meminfo, in GiB (None where there is no /proc)."""
    try:
        for line in Path("/proc/meminfo").read_text().splitlines():
            if line.startswith("MemTotal:"):
                return round(int(line.split()[1]) / 2**20, 1)
    except OSError:
        pass
    return None


def reproduce_command(argv: list[str] | None = None) -> str:
    """The exact command line that ran this script, from the repository root."""
    argv = sys.argv if argv is None else argv
    script = Path(argv[0]).resolve()
    try:
        shown = script.relative_to(REPO)
    except ValueError:
        shown = script
    return "python " + " ".join(shlex.quote(a) for a in [str(shown), *argv[1:]])


def parser(description: str) -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(description=description)
    p.add_argument("--quick", action="store_true",
                   help="tiny sizes, one repeat: checks the script works (seconds); the figures mean nothing")
    p.add_argument("--json", metavar="FILE", help="also write the figures as JSON to FILE")
    return p


def interleaved(fns: dict[str, Callable[[], Any]], repeat: int) -> dict[str, list[float]]:
    """Wall time of each callable, `repeat` times, taking turns so that machine noise hits all alike."""
    times: dict[str, list[float]] = {name: [] for name in fns}
    for _ in range(repeat):
        for name, fn in fns.items():
            t0 = time.perf_counter()
            fn()
            times[name].append(time.perf_counter() - t0)
    return times


def best(times: list[float]) -> float:
    return min(times)


def describe(times: list[float]) -> str:
    if len(times) == 1:
        return f"{times[0] * 1e3:.1f} ms"
    return f"best {min(times) * 1e3:.1f} ms, median {statistics.median(times) * 1e3:.1f} ms of {len(times)}"


_MEMORY_PROBE = r"""
import json, os, resource, sys, time, tracemalloc
sys.path.insert(0, {repo!r})
def _status(key):
    with open("/proc/self/status") as f:
        for line in f:
            if line.startswith(key + ":"):
                return int(line.split()[1]) * 1024
    return None
{setup}
before = _status("VmRSS")
reset = False
try:
    with open("/proc/self/clear_refs", "w") as f:
        f.write("5")  # resets VmHWM to the current RSS (Linux >= 4.0)
    reset = True
except OSError:
    pass
tracemalloc.start()
t0 = time.perf_counter()
{code}
elapsed = time.perf_counter() - t0
traced_peak = tracemalloc.get_traced_memory()[1]
tracemalloc.stop()
peak = _status("VmHWM") if reset else resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
print(json.dumps({{"rss_before_b": before, "peak_rss_b": peak, "peak_increase_b": peak - before,
                  "traced_peak_b": traced_peak, "elapsed_s": elapsed, "hwm_reset": reset}}))
"""


def peak_memory(setup: str, code: str) -> dict[str, Any]:
    """Peak resident memory of `code` in a fresh Python process, above what `setup` left resident.

    The process's high-water mark is reset after `setup` (imports, inputs) so the
    figure is what the measured step itself adds at its peak. Memory that `setup`
    freed but the allocator kept is reused without raising the RSS, so the
    tracemalloc peak of the step (Python and numpy allocations; not all of the
    pandas C parser's) is given beside it.
    """
    import textwrap

    script = _MEMORY_PROBE.format(repo=str(REPO), setup=textwrap.dedent(setup), code=textwrap.dedent(code))
    out = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, check=False)
    if out.returncode != 0:
        raise RuntimeError(f"memory probe failed:\n{out.stderr}")
    return json.loads(out.stdout.strip().splitlines()[-1])


def mib(n_bytes: float) -> str:
    return f"{n_bytes / 2**20:.1f} MiB"


def verdict(met: bool) -> str:
    return "MET" if met else "MISSED"


def finish(name: str, figures: dict[str, Any], args: argparse.Namespace) -> None:
    """Print the machine facts and the reproducing command; write JSON if asked."""
    facts = machine_facts()
    print()
    print("machine: " + ", ".join(f"{k} {v}" for k, v in facts.items()))
    print("reproduce: " + reproduce_command())
    if args.quick:
        print("(--quick: tiny sizes to check the script runs; these figures are not the benchmark)")
    if args.json:
        Path(args.json).write_text(json.dumps({"benchmark": name, "quick": bool(args.quick),
                                               "reproduce": reproduce_command(), "machine": facts,
                                               "figures": figures}, indent=2, default=str) + "\n")
