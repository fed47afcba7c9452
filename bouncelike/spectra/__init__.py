"""Primordial spectra objects and their summary at a pivot.

Every spectra object answers ``.scalar(k)`` and ``.tensor(k)`` for arrays of comoving wavenumbers
in Mpc^-1 (astropy quantities accepted). :func:`summarize` reduces any of them to the numbers
published bounds constrain at a pivot.
"""

from .powerlaw import PowerLawSpectra, power_law_from_config
from .summary import PivotSummary, summarize
from .tabulated import TabulatedSpectra

__all__ = [
    "PivotSummary",
    "PowerLawSpectra",
    "TabulatedSpectra",
    "power_law_from_config",
    "summarize",
]
