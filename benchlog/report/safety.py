"""The safety note every report carries: the usual bench cautions, deferring to the lab and local codes."""

from __future__ import annotations

SAFETY_NOTE = (
    "Safety. This report describes measurements made by switching real power into real hardware. "
    "Before repeating or extending them: keep supply voltage and current limits at or below what the "
    "board, the element and the wiring are rated for; switch outputs off before touching leads or "
    "changing connections; expect the element and its heat sink to be hot after a run (a junction "
    "near its maximum temperature burns skin); a reverse-polarity test deliberately applies a "
    "reversed supply, so use a current limit and never leave it unattended; work below hazardous "
    "voltages unless you are trained and authorised for more. The verdicts here judge a part against "
    "its spec; they do not make a product safe or compliant. Your laboratory's safety rules, the "
    "instruments' own instructions and the applicable standards and local codes take precedence "
    "over anything in this report."
)
