"""The ambient temperature assumed when a plan, a run or a command gives none (a leaf: any layer may use it).

25 °C is the reference temperature of datasheet ratings (common practice), so an element
whose ambient was not recorded is judged at the conditions its spec was written for; every
place that has to assume an ambient says so in its notes.
"""

DEFAULT_AMBIENT_C = 25.0
