"""The terminal UI: connect the bench, set up a sweep, watch it live, read the verdict, inspect a lot, replay the archive.

`BenchApp` takes its bench as a constructor argument (a `BenchSession`), so tests
and the demo hand it a simulated bench and a lab hands it a bench file. Instrument
I/O runs only in thread workers; the UI thread draws what they report.
"""
