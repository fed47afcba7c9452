"""Capped spectra are scored as bounds: '> chi2', an upper bound on p, the cap named."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.stats import chi2 as chi2_dist

from bouncelike.commands.score import format_score
from bouncelike.likelihood.bounds import spectra_cap
from bouncelike.likelihood.gaussian import GaussianLikelihood
from bouncelike.spectra.tabulated import TabulatedSpectra

CAP_NOTE = "transfer above e^600 capped by a common factor (a lower bound; P_t/P_s kept)"


def _spectra(ln_1e10_as: float, notes: tuple[str, ...]) -> TabulatedSpectra:
    # a power law with n_s = 0.9649 and r = 0.01 at 0.05 Mpc^-1, tabulated
    k = np.logspace(-5, 0, 200)
    a_s = math.exp(ln_1e10_as) * 1e-10
    ps = a_s * (k / 0.05) ** (0.9649 - 1)
    pt = 0.01 * a_s * (k / 0.05) ** (-0.01 / 8)
    return TabulatedSpectra(k, ps, pt, notes=notes)


def test_capped_spectra_give_a_lower_bound_on_chi2():
    lk = GaussianLikelihood.from_names(["planck2018_base", "bk18"])
    capped = lk.score(_spectra(603.0, (CAP_NOTE,)))
    assert capped.bound and capped.cap == CAP_NOTE
    amp = next(t for t in capped.terms if t.quantity == "ln_1e10_As")
    assert amp.bound == "lower"
    assert all(t.bound == "" for t in capped.terms if t.quantity != "ln_1e10_As")
    # the lower bound already excludes: the exclusion stands (p is an upper bound;
    # scipy.stats.chi2.sf with dof = 3 terms, one configuration)
    assert capped.verdict == "excluded" and capped.excluded_at == 0.997
    assert capped.p_value == pytest.approx(chi2_dist.sf(capped.chi2, 3))
    d = capped.as_dict()
    assert d["bound"] is True and d["cap"] == CAP_NOTE
    text = format_score(capped)
    assert "> 603" in text and "total chi2 >" in text and "p-value <" in text
    assert "capped" in text and "lower bounds" in text


def test_capped_spectra_that_do_not_exclude_are_undetermined():
    # the capped amplitude sits at the published value: the lower bound on chi2 is small, and
    # the true (larger) amplitude could be excluded: no "allowed" verdict can be drawn
    lk = GaussianLikelihood.from_names(["planck2018_base", "bk18"])
    score = lk.score(_spectra(3.044, (CAP_NOTE,)))
    assert score.bound and score.verdict == "undetermined" and score.excluded_at is None
    assert "UNDETERMINED" in format_score(score)
    plain = lk.score(_spectra(3.044, ()))
    assert not plain.bound and plain.verdict == "allowed" and plain.cap == ""


def test_cap_attribute_names_the_cap():
    class Declared:
        cap = "e^600 growth cap"
        notes = ()

    assert spectra_cap(Declared()) == "e^600 growth cap"
    assert spectra_cap(_spectra(3.0, ("bounce scale far below the window",))) == ""
