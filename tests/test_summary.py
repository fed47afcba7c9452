"""Pivot summary: exact for power laws, fitted for anything else, with a fit-quality verdict."""

import math

import numpy as np
import pytest

from bouncelike.errors import InputError
from bouncelike.likelihood import GaussianLikelihood
from bouncelike.spectra import PowerLawSpectra, TabulatedSpectra, summarize
from bouncelike.spectra.summary import DEFAULT_TOLERANCE, fit_summary

PARAMS = dict(ln_1e10_As=3.05, n_s=0.962, running=-0.008, running_of_running=0.004, r=0.03)


class _NoShortcut:
    """A spectra object without summary_at, so summarize must fit."""

    def __init__(self, spectra, factor=None):
        self._s = spectra
        self._f = factor or (lambda k: 1.0)

    def scalar(self, k):
        return self._s.scalar(k) * self._f(np.asarray(k))

    def tensor(self, k):
        return self._s.tensor(k)


def _check_params(s, params, tol=1e-6):
    for key, value in params.items():
        assert getattr(s, key) == pytest.approx(value, abs=tol), key


def test_power_law_summary_returns_its_parameters():
    # The summary of a pure power law must return its own parameters (to 1e-6): its ln P is a
    # cubic in ln k, which both the exact path and the cubic fit represent exactly.
    p = PowerLawSpectra(**PARAMS)
    exact = summarize(p, 0.05)
    assert exact.method == "exact" and exact.fit_ok
    _check_params(exact, PARAMS, tol=1e-12)
    fitted = summarize(_NoShortcut(p), 0.05)
    assert fitted.method == "fit" and fitted.fit_ok
    assert fitted.fit_rms < 1e-10
    _check_params(fitted, PARAMS)
    assert fitted.n_t == pytest.approx(-0.03 / 8, abs=1e-9)


def test_fit_matches_exact_reexpansion_at_other_pivot():
    p = PowerLawSpectra(**PARAMS)
    exact = summarize(p, 0.002)
    fitted = fit_summary(p, 0.002)
    for key in PARAMS:
        assert getattr(fitted, key) == pytest.approx(getattr(exact, key), abs=1e-6), key


def test_tabulated_power_law_summary():
    p = PowerLawSpectra(3.044, 0.9649, r=0.01)
    grid = np.logspace(-5, 1, 300)
    t = TabulatedSpectra(grid, p.scalar(grid), p.tensor(grid))
    s = summarize(t, 0.05)
    _check_params(s, dict(ln_1e10_As=3.044, n_s=0.9649, running=0.0, running_of_running=0.0,
                          r=0.01))
    assert s.fit_ok and s.window[0] == pytest.approx(0.05 * math.exp(-2))


def test_strong_feature_fails_fit_quality_and_score_says_so():
    # A 10 % oscillation in ln k (frequency 8 per e-fold) cannot be a cubic near the pivot.
    p = PowerLawSpectra(3.044, 0.9649, r=0.01)
    featured = _NoShortcut(p, lambda k: 1.0 + 0.1 * np.sin(8.0 * np.log(k / 0.05)))
    s = summarize(featured, 0.05)
    assert not s.fit_ok
    assert s.fit_rms > DEFAULT_TOLERANCE
    score = GaussianLikelihood.from_names(["planck2018_base"]).score(featured)
    assert not score.fit_ok
    assert any("fit quality failed" in n for n in score.notes)
    assert score.as_dict()["fit_ok"] is False


def test_step_feature_in_table_fails_fit_quality():
    p = PowerLawSpectra(3.044, 0.9649)
    grid = np.logspace(-4, 0, 400)
    step = np.where(grid > 0.06, 1.3, 1.0)
    t = TabulatedSpectra(grid, p.scalar(grid) * step, np.zeros_like(grid))
    s = summarize(t, 0.05)
    assert not s.fit_ok and s.r == 0.0 and math.isnan(s.n_t)


def test_weak_feature_passes():
    p = PowerLawSpectra(3.044, 0.9649)
    featured = _NoShortcut(p, lambda k: 1.0 + 1e-4 * np.sin(8.0 * np.log(k / 0.05)))
    s = summarize(featured, 0.05)
    assert s.fit_ok
    assert s.n_s == pytest.approx(0.9649, abs=1e-3)


def test_pivot_outside_table_is_refused():
    grid = np.logspace(-2, 0, 50)
    t = TabulatedSpectra(grid, np.full(50, 2e-9), np.zeros(50))
    with pytest.raises(InputError, match="outside the spectra table"):
        summarize(t, 0.002)
