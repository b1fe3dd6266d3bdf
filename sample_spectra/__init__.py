"""Bundled demo scenario (installed as ``confirm.sample_spectra``)."""
