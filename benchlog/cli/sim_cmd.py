"""`benchlog sim`: serve the simulated bench on loopback sockets until SIGINT or SIGTERM."""

from __future__ import annotations

import argparse
import json
import signal
import sys
import threading
from pathlib import Path

from benchlog.badinput import BadInput


def register(sub) -> None:
    """Add this module's subcommands to the `benchlog` parser."""
    from benchlog.kinds import ELEMENT_KINDS as KINDS
    from benchlog.sim.faults import ROLES

    p = sub.add_parser(
        "sim",
        help="serve a simulated supply, electronic load and meter as SCPI over TCP sockets",
        description=(
            "Serve the simulated bench: one raw SCPI socket per instrument on 127.0.0.1 (another host only "
            "with --host). Prints '<role> <VISA resource>' per instrument, then 'ready', and serves until "
            "Ctrl-C or SIGTERM. Timing is real by default: a reading takes its integration time "
            "(NPLC / line frequency per sample) and setpoints settle; --timing instant (or timing = \"instant\" "
            "in the --config file) turns both off for fast tests."
        ),
    )
    p.add_argument("--element", choices=KINDS, default=None, help="element on the bench (default pmos)")
    p.add_argument("--port", type=int, default=None, metavar="P",
                   help="first port: P, P+1, P+2 [, P+3]; 0 picks free ports (default 0)")
    p.add_argument("--host", default=None, help="address to listen on (default 127.0.0.1, loopback only)")
    p.add_argument("--seed", type=int, default=None, help="seed of the part spread and the noise (default 1)")
    p.add_argument("--truth", type=Path, default=None, metavar="FILE",
                   help="write the element's true parameters as JSON to FILE")
    p.add_argument("--config", type=Path, default=None, metavar="FILE", help="sim settings (TOML)")
    p.add_argument("--latency-s", type=float, default=None, metavar="S", help="delay of every reply")
    p.add_argument("--current-meter", action="store_true", default=None,
                   help="serve a 4th socket: a meter in series with the element")
    p.add_argument("--case-sensor", action="store_true", default=None,
                   help="serve one more socket: a meter whose temperature probe sits on the element's case")
    p.add_argument("--no-measure", action="store_true", default=None,
                   help="the meter has no MEASure subsystem (CONFigure + READ? only)")
    p.add_argument("--timing", choices=("real", "instant"), default=None,
                   help="real (default): each reading takes NPLC/line frequency per sample and setpoints "
                   "settle; instant: neither, for fast tests")
    faults = p.add_argument_group("faults (each fires once, counted in messages per instrument)")
    faults.add_argument("--drop-after", type=int, metavar="N", help="close the connection after N messages")
    faults.add_argument("--extra-latency-s", type=float, metavar="S", help="add S seconds to every reply")
    faults.add_argument("--garbage-after", type=int, metavar="N", help="garble the first reply after N messages")
    faults.add_argument("--hang-after", type=int, metavar="N", help="never answer the first query after N messages")
    faults.add_argument("--queue-error-after", type=int, metavar="N", help="queue a spurious error after N messages")
    faults.add_argument("--trip-after", type=int, metavar="N",
                        help="trip the supply's protection after N supply messages")
    faults.add_argument("--trickle-after", type=int, metavar="N",
                        help="send the first reply after N messages one byte at a time")
    faults.add_argument("--trickle-byte-s", type=float, metavar="S",
                        help="seconds between the bytes of a trickled reply (default 0.5)")
    faults.add_argument("--stuck-on-after", type=int, metavar="N",
                        help="after N supply messages the supply ignores output off")
    faults.add_argument("--fault-role", choices=ROLES, help="limit the faults to one instrument")
    p.set_defaults(handler=run)


def _config(args: argparse.Namespace):
    from benchlog.sim.config import SimConfig, load_sim_config, with_overrides
    from benchlog.sim.faults import FaultPlan

    base = load_sim_config(args.config) if args.config is not None else SimConfig()
    fault_args = {
        "drop_after_commands": args.drop_after, "extra_latency_s": args.extra_latency_s,
        "garbage_after": args.garbage_after, "hang_after": args.hang_after,
        "queue_error_after": args.queue_error_after, "supply_trip_after": args.trip_after, "role": args.fault_role,
        "trickle_after": args.trickle_after, "trickle_byte_s": args.trickle_byte_s,
        "stuck_on_after": args.stuck_on_after,
    }
    for name, value in fault_args.items():
        if name != "role" and value is not None and value < 0:
            flag = {"drop_after_commands": "--drop-after", "supply_trip_after": "--trip-after"}.get(
                name, "--" + name.replace("_", "-"))
            raise BadInput("argument", flag, f"is {value}", "a number >= 0")
    faults = base.faults
    if any(v is not None for v in fault_args.values()):
        merged = {k: getattr(faults, k) for k in fault_args}
        merged.update({k: v for k, v in fault_args.items() if v is not None})
        try:
            faults = FaultPlan(**merged)
        except ValueError as exc:
            raise BadInput("argument", "", str(exc), "fault settings the simulated bench accepts") from None
    changes = {
        "element": args.element, "port": args.port, "host": args.host, "seed": args.seed,
        "latency_s": args.latency_s, "current_meter": args.current_meter, "case_sensor": args.case_sensor,
        "meter_has_measure": False if args.no_measure else None, "faults": faults, "timing": args.timing,
    }
    if args.element is not None and args.element != base.element and base.element_params:
        raise BadInput(args.config, "element_params", f"are for {base.element}, not --element {args.element}",
                       "no --element, or parameters of that element")
    try:
        return with_overrides(base, **changes)
    except ValueError as exc:
        raise BadInput("argument", "", str(exc), "values the simulated bench accepts") from None


def run(args: argparse.Namespace) -> int:
    from benchlog.sim.server import serve_bench

    config = _config(args)
    if args.truth is not None:  # refused before serving: never over the config or a run file, never under /proc
        from benchlog.filecheck import check_output_file

        check_output_file(args.truth, "--truth", inputs=[args.config] if args.config else [])
    try:
        running = serve_bench(config)
    except OSError as exc:
        raise BadInput("argument", "--port/--host", f"cannot listen ({exc.strerror or exc})",
                       "a free port and an address of this machine") from None
    # Warned once listening, so a refused address stays a single line of error.
    if not config.is_loopback:
        sys.stderr.write(
            f"benchlog sim: caution: listening on {config.host}, not loopback; anyone who can reach this "
            "address can drive the simulated bench\n"
        )
    stop = threading.Event()

    def on_signal(signum, frame):  # noqa: ARG001
        stop.set()

    previous = {sig: signal.signal(sig, on_signal) for sig in (signal.SIGINT, signal.SIGTERM)}
    try:
        if args.truth is not None:
            try:
                args.truth.write_text(json.dumps(running.truth(), indent=2) + "\n")
            except OSError as exc:
                raise BadInput(args.truth, "", f"cannot be written ({exc.strerror})", "a writable path") from None
        # on stderr, so stdout stays '<role> <resource>' lines and 'ready' for scripts
        sys.stderr.write(f"benchlog sim: {config.timing} timing"
                         + (" (readings take NPLC/line frequency per sample; setpoints settle)\n"
                            if config.timing == "real" else " (readings and setpoints take no time)\n"))
        sys.stderr.flush()
        for role, resource in running.resources.items():
            sys.stdout.write(f"{role} {resource}\n")
        sys.stdout.write("ready\n")
        sys.stdout.flush()
        while not stop.wait(0.5):
            pass
    finally:
        running.stop()
        for sig, handler in previous.items():
            signal.signal(sig, handler)
    return 0
