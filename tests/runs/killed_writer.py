"""Child process for the SIGKILL test: writes points through RunWriter and prints each acknowledged count.

Usage: python -m tests.runs.killed_writer PATH SEED
A line "ack N" on stdout means N points were on disk (flushed and fsynced)
when it was printed; the parent kills this process at a random moment.
"""

from __future__ import annotations

import random
import sys
import time

from benchlog.runs import Point, RunStarted, RunWriter

from .samples import header


def main() -> None:
    path, seed = sys.argv[1], int(sys.argv[2])
    rng = random.Random(seed)
    acknowledged = 0

    def on_durable(_records: int) -> None:
        nonlocal acknowledged
        points = writer.durable_points
        if points != acknowledged:
            acknowledged = points
            sys.stdout.write(f"ack {points}\n")
            sys.stdout.flush()

    writer = RunWriter(path, on_durable=on_durable)
    writer.write(RunStarted(header()))
    index = 0
    while True:  # until killed
        for _ in range(rng.randint(1, 40)):  # bursts, as a sweep produces them
            writer.write(Point(index=index, t_s=index * 1e-3, setpoint_a=0.5, current_a=0.5 + rng.random() * 1e-3,
                               drop_v=0.6 + rng.random() * 1e-3, supply_v=5.0, supply_mode="CC",
                               settle_reads=2, flags=("unsettled",) if index % 7 == 0 else ()))
            index += 1
        time.sleep(rng.random() * 2e-3)


if __name__ == "__main__":
    main()
