"""One module per command; see :mod:`bouncelike.cli` for the protocol."""
