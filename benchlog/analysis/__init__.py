"""Analysis of recorded sweeps: fits with GUM uncertainties, part specs, predictions, verdicts, lots, designs.

Import from the modules (`benchlog.analysis.fits`, `.uncertainty`, ...); this
package file stays empty so that loading one part does not load them all.
"""
