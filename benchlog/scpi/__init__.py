"""SCPI and IEEE 488.2 without any I/O: headers, program messages, safe numbers, replies, error codes.

Nothing in this package opens a socket or a file; the instrument layer and the
simulated bench do the talking and call in here to build and read the text.
"""
