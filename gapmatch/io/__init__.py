"""Input and output: standard spectra through pvlib, user spectra from CSV files, and
atomic file writing. Nothing in :mod:`gapmatch.core` touches files; this package does."""
