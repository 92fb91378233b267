"""`benchlog sweep` in a process of its own that also says which points are durable, for the SIGKILL test.

Usage: python -m tests.reliability.acked_sweep SWEEP-ARGUMENTS...
Runs the real command (`benchlog.cli.main(["sweep", ...])`) unchanged, except
that the run writer it opens reports each fsynced batch: a line "ack N" on
stdout means N points were flushed and fsynced to the run file when it was
printed. The `benchlog sweep` command has no such output of its own.
"""

from __future__ import annotations

import sys

from benchlog.runs import writer as writer_module

_RunWriter = writer_module.RunWriter


class AcknowledgingRunWriter(_RunWriter):
    def __init__(self, path, *args, on_durable=None, **kwargs) -> None:
        acknowledged = -1

        def report(records: int) -> None:
            nonlocal acknowledged
            points = self.durable_points  # the writer thread is the only one that changes it
            if points != acknowledged:
                acknowledged = points
                sys.stdout.write(f"ack {points}\n")
                sys.stdout.flush()
            if on_durable is not None:
                on_durable(records)

        super().__init__(path, *args, on_durable=report, **kwargs)


def main() -> int:
    writer_module.RunWriter = AcknowledgingRunWriter  # run_sweep imports it from here when it records
    from benchlog.cli import main as benchlog_main

    return benchlog_main(["sweep", *sys.argv[1:]])


if __name__ == "__main__":
    sys.exit(main())
