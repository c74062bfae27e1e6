"""Closed-form and independently computed reference spectra, used by tests and benchmarks."""
