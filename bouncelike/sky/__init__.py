"""Large-scale CMB temperature from primordial spectra (multipoles 2-29)."""
