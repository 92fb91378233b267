"""The simulated bench: a supply, an electronic load and a meter served as SCPI over loopback sockets.

The simulator is an instrument on the far side of a socket, exactly like real
hardware: it imports `scpi` only, never `instruments`. Start it in-process with
`serve_bench(SimConfig(...))` or from the shell with `benchlog sim`.
"""
