"""Primordial spectra objects and their summary at a pivot.

Every spectra object answers ``.scalar(k)`` and ``.tensor(k)`` for arrays of comoving wavenumbers
in Mpc^-1 (astropy quantities accepted). :func:`summarize` reduces any of them to the numbers
published bounds constrain at a pivot. The forward models that produce them from parameters
live in :mod:`bouncelike.models`.
"""

from .powerlaw import PowerLawSpectra
from .summary import PivotSummary, summarize
from .tabulated import TabulatedSpectra

__all__ = [
    "PivotSummary",
    "PowerLawSpectra",
    "TabulatedSpectra",
    "summarize",
]
