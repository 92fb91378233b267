"""Opening the simulated instruments through real pyvisa-py, as any client would."""

from __future__ import annotations

import pyvisa

from benchlog.scpi.replies import parse_error_entry


class Clients:
    def __init__(self) -> None:
        self.rm = pyvisa.ResourceManager("@py")
        self.opened = []

    def open(self, resource: str, timeout_ms: int = 2000):
        inst = self.rm.open_resource(resource, read_termination="\n", write_termination="\n", timeout=timeout_ms)
        self.opened.append(inst)
        return inst

    def close(self) -> None:
        for inst in self.opened:
            try:
                inst.close()
            except Exception:  # a connection the test broke on purpose
                pass
        self.rm.close()


def errors(inst) -> list[int]:
    """Drain SYSTem:ERRor? and return the codes."""
    codes = []
    for _ in range(30):
        entry = parse_error_entry(inst.query("SYST:ERR?"))
        if not entry.is_error:
            return codes
        codes.append(entry.code)
    raise AssertionError("error queue did not empty")
