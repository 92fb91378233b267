"""The ambient temperature assumed when a plan, a run or a command gives none (a leaf: any layer may use it).

25 °C is the reference temperature of datasheet ratings (common practice), so an element
whose ambient was not recorded is judged at the conditions its spec was written for; every
place that has to assume an ambient says so in its notes.
"""

DEFAULT_AMBIENT_C = 25.0

#: The ambient next to a bench is known to about ±2 K when nobody measured it (from memory: a room
#: thermostat's swing and the warm air above the instruments); read as rectangular (GUM 4.3.7).
DEFAULT_AMBIENT_HALF_WIDTH_K = 2.0
