"""The element kinds the simulated bench and the sweep know, in one place that costs nothing to import."""

ELEMENT_KINDS = ("rectifier", "schottky", "pmos", "resistor")
DIODE_KINDS = ("rectifier", "schottky")
