"""bouncelike: confront quantum-gravity bounce models of the early universe with the CMB.

Layers (one package each): :mod:`bouncelike.background` (effective bounce dynamics and the
duration of inflation), :mod:`bouncelike.perturbations` (modes through the bounce),
:mod:`bouncelike.spectra` (primordial spectra objects and their summary at a pivot),
:mod:`bouncelike.likelihood` (published constraint sets and the Gaussian likelihood),
:mod:`bouncelike.sampling` (posterior runs and verdicts), :mod:`bouncelike.reporting`
(tables and figures). Internal units are Planck units, G = c = hbar = 1 (see
:mod:`bouncelike.units`).
"""

__version__ = "0.1.0"
