"""Faults the simulated bench injects on demand, so recovery paths are tested against real sockets.

A "command" here is one program message (one line). Counts are per
instrument, over the bench's whole life (reconnects included). Each fault
fires once, on the first message after its count has been served:

- drop_after_commands: the connection is closed instead of answering;
- extra_latency_s: every reply waits this much longer (always on);
- garbage_after: the next query's reply is replaced by text that parses as nothing;
- hang_after: the next query is never answered (the client times out);
- queue_error_after: a spurious device error (-300) is put in the error queue;
- supply_trip_after: the supply trips into protection: output off,
  OUTPut:PROTection:TRIPped? answers 1 until OUTPut:PROTection:CLEar;
- trickle_after: the next query's reply is sent one byte every
  `trickle_byte_s` seconds (a link or instrument that stalls mid-reply);
- stuck_on_after: from then on the supply ignores the command that switches
  its output off (a welded relay, a firmware fault); OUTPut:STATe? tells the truth.

`role` limits every fault to one instrument ("supply", "load", "meter",
"current_meter"); None means each instrument counts and fires on its own.
"""

from __future__ import annotations

from dataclasses import dataclass

ROLES = ("supply", "load", "meter", "current_meter", "sensor")
GARBAGE_REPLY = "~~#GARBLED@@REPLY#~~"
QUEUE_ERROR = (-300, "Device-specific error; injected fault")


@dataclass(frozen=True)
class FaultPlan:
    drop_after_commands: int | None = None
    extra_latency_s: float = 0.0
    garbage_after: int | None = None
    hang_after: int | None = None
    queue_error_after: int | None = None
    supply_trip_after: int | None = None
    trickle_after: int | None = None
    trickle_byte_s: float = 0.5
    stuck_on_after: int | None = None
    role: str | None = None

    def __post_init__(self) -> None:
        for name in ("drop_after_commands", "garbage_after", "hang_after", "queue_error_after", "supply_trip_after",
                     "trickle_after", "stuck_on_after"):
            value = getattr(self, name)
            if value is not None and (isinstance(value, bool) or not isinstance(value, int) or value < 0):
                raise ValueError(f"{name} must be a whole number >= 0 or None, got {value!r}")
        if not (isinstance(self.extra_latency_s, (int, float)) and 0 <= self.extra_latency_s < 3600):
            raise ValueError(f"extra_latency_s must be 0..3600 s, got {self.extra_latency_s!r}")
        if not (isinstance(self.trickle_byte_s, (int, float)) and not isinstance(self.trickle_byte_s, bool)
                and 0 < self.trickle_byte_s <= 60):
            raise ValueError(f"trickle_byte_s must be above 0 and at most 60 s, got {self.trickle_byte_s!r}")
        if self.role is not None and self.role not in ROLES:
            raise ValueError(f"role must be one of {', '.join(ROLES)}, got {self.role!r}")

    def applies_to(self, role: str) -> bool:
        return self.role is None or self.role == role

    @property
    def any(self) -> bool:
        return self != FaultPlan()


class FaultCounter:
    """One instrument's count of messages and the faults still to fire (each fires once)."""

    def __init__(self, plan: FaultPlan, role: str) -> None:
        active = plan.applies_to(role)
        self.role = role
        self.extra_latency_s = float(plan.extra_latency_s) if active else 0.0
        self.trickle_byte_s = float(plan.trickle_byte_s)
        self.count = 0
        self._pending = {
            "drop": plan.drop_after_commands if active else None,
            "garbage": plan.garbage_after if active else None,
            "hang": plan.hang_after if active else None,
            "queue_error": plan.queue_error_after if active else None,
            "trip": plan.supply_trip_after if active and role == "supply" else None,
            "trickle": plan.trickle_after if active else None,
            "stuck_on": plan.stuck_on_after if active and role == "supply" else None,
        }

    def next_message(self, has_query: bool) -> set[str]:
        """Count one message; return the faults that fire on it."""
        fired: set[str] = set()
        for name, after in self._pending.items():
            if after is None or self.count < after:
                continue
            if name in ("garbage", "hang", "trickle") and not has_query:
                continue  # these wait for a message that has a reply to spoil
            fired.add(name)
        for name in fired:
            self._pending[name] = None
        self.count += 1
        return fired
