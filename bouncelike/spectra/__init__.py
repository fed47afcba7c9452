"""spectra layer."""
