"""Capped spectra: when the numbers scored are bounds, not values.

A forward model may cap its spectra (the deformed-algebra transfer above e^600, for example:
:mod:`bouncelike.perturbations.transfer`): both powers are then lower bounds sharing one
factor, so the tensor-to-scalar ratio and the tilt keep their values while the amplitude
ln(1e10 A_s) is a lower bound. A score of capped spectra is a bound: its amplitude terms carry
``bound = "lower"``, the total chi-square is a lower bound and the p-value an upper bound, so an
exclusion stands while "allowed" cannot be concluded (the verdict is then ``undetermined``).

A spectra object declares its cap with a ``cap`` attribute naming it; objects without one count
as capped when one of their ``notes`` says the values are capped or a lower bound, and the
cap is named by that note.
"""

from __future__ import annotations

from typing import Any

#: Quantities that are lower bounds when the spectra are capped (a common factor on both
#: powers leaves the tilt and the ratio unchanged).
BOUNDED_QUANTITIES = ("ln_1e10_As",)
_MARKERS = ("capped", "a lower bound")


def spectra_cap(spectra: Any) -> str:
    """What caps ``spectra`` (a short text), or "" when its values are values."""
    cap = getattr(spectra, "cap", None)
    if cap:
        return str(cap)
    for note in getattr(spectra, "notes", ()) or ():
        text = " ".join(str(note).split())
        if any(m in text.lower() for m in _MARKERS):
            return text
    return ""
