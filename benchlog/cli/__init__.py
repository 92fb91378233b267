"""The `benchlog` command: argument parsing, `--json` output and exit codes; the work is done by the packages.

Exit codes: 0 success or `pass`; 1 a measurement or check that ran but did not
succeed (`fail`, limit hit, fault, cancel, an output not confirmed off); 2 bad
input (file, argument or an instrument's nonsense reply), always as one line on
stderr; 3 a `conditional` verdict; 4 an output could not be written part way
through (disk full, I/O error; what was written before is kept and named); 75
an instrument is in use by another session (one sweep per bench; EX_TEMPFAIL of
BSD sysexits: try again later); 130 interrupted by Ctrl-C; 143 SIGTERM.
An output path that would destroy an input or an existing run file, or that
cannot be written at all (read-only, not a folder, under /proc or /sys), is
refused before anything is written: bad input, exit 2.

Each subcommand lives in its own module with a `register(subparsers)` function.
"""

from __future__ import annotations

import argparse
import os
import sys

from benchlog import __version__
from benchlog.badinput import BadInput
from benchlog.filecheck import CannotWrite

from . import (analysis_cmd, archive_cmd, compare_cmd, export_cmd, fit_cmd, profiles_cmd, report_cmd, sim_cmd,
               summary_cmd, sweep_cmd, ui_cmd)

EXIT_OK = 0
EXIT_FAILED = 1
EXIT_BAD_INPUT = 2
EXIT_CONDITIONAL = 3
EXIT_CANNOT_WRITE = 4
EXIT_THERMAL = 5  # estimate / design: a part runs away thermally or exceeds its Tj max
EXIT_IN_USE = 75
EXIT_INTERRUPTED = 130

_COMMAND_MODULES = (ui_cmd, sweep_cmd, fit_cmd, analysis_cmd, compare_cmd, summary_cmd, report_cmd, sim_cmd, profiles_cmd,
                    export_cmd, archive_cmd)

#: The module that registers each command, so that `benchlog lot ...` builds the parser of `lot` alone
#: (all 26 subparsers cost 5-15 ms of a 140 ms command); `--help`, no command or an unknown one builds
#: them all. tests/cli/test_imports.py holds this table to the full parser.
COMMAND_MODULE = {"ui": ui_cmd, "replay": ui_cmd, "sweep": sweep_cmd, "demo": sweep_cmd, "fit": fit_cmd,
                  "estimate": analysis_cmd, "check": analysis_cmd, "lot": analysis_cmd, "design": analysis_cmd,
                  "compare": compare_cmd, "summary": summary_cmd, "report": report_cmd, "sim": sim_cmd,
                  "profiles": profiles_cmd, "export": export_cmd, "archive": archive_cmd}


class OneLineParser(argparse.ArgumentParser):
    """argparse that reports a wrong argument as one line and exit code 2."""

    def error(self, message: str) -> None:  # type: ignore[override]
        sys.stderr.write(f"{self.prog}: {message} (see '{self.prog} --help')\n")
        raise SystemExit(EXIT_BAD_INPUT)


def build_parser(command: str | None = None) -> argparse.ArgumentParser:
    """The whole parser, or with `command` (a name of COMMAND_MODULE) only the subcommands of its module."""
    parser = OneLineParser(
        prog="benchlog",
        description=(
            "Measure the reverse-polarity protection element of a board (rectifier, Schottky, "
            "P-MOSFET in the supply line, N-MOSFET in the return) over SCPI, fit it, predict its loss "
            "from the part spec and give a verdict."
        ),
    )
    parser.add_argument("--version", action="version", version=f"benchlog {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=OneLineParser)
    modules = (COMMAND_MODULE[command],) if command in COMMAND_MODULE else _COMMAND_MODULES
    for module in modules:
        module.register(sub)
    return parser


def main(argv: list[str] | None = None) -> int:
    words = sys.argv[1:] if argv is None else argv
    parser = build_parser(words[0] if words else None)
    args = parser.parse_args(argv)
    handler = getattr(args, "handler", None)
    if handler is None:
        parser.print_help()
        return EXIT_BAD_INPUT if argv or sys.argv[1:] else EXIT_OK
    try:
        return int(handler(args) or 0)
    except BadInput as exc:
        sys.stderr.write(f"benchlog: {exc.line()}\n")
        return EXIT_BAD_INPUT
    except CannotWrite as exc:
        sys.stderr.write(f"benchlog: {exc.line()}\n")
        return EXIT_CANNOT_WRITE
    except BrokenPipeError:
        # The reader of stdout went away (`benchlog fit RUN | head`); a sweep was closed safely by
        # then. Point stdout at /dev/null so Python's own final flush does not print a traceback.
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return EXIT_FAILED
    except KeyboardInterrupt:
        sys.stderr.write("benchlog: interrupted\n")  # a sweep has said what its outputs read back
        return EXIT_INTERRUPTED
    except Exception as exc:
        # An instrument fault outside a sweep (probe, connect): one line, not a traceback.
        # Imported here so that `benchlog --help` does not pay for pyvisa.
        from benchlog.instruments.errors import BenchError, BenchInUse

        if not isinstance(exc, BenchError):
            raise
        sys.stderr.write(f"benchlog: {exc}\n")
        return EXIT_IN_USE if isinstance(exc, BenchInUse) else EXIT_FAILED
