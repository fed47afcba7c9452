"""Model verdicts that the Planck 2018 inflation paper states (Planck 2018 X, arXiv:1807.06211).

Planck 2018 X concludes that V = m^2 phi^2 / 2 is strongly disfavoured once B-mode data bound r,
while the Starobinsky (R^2) model at N_* ~ 55 sits inside the allowed n_s - r region
(its Sect. 4 and the n_s - r figure there; section from memory).
"""

import pytest

from bouncelike.likelihood import GaussianLikelihood
from bouncelike.models.slowroll import slow_roll_spectra


def test_quadratic_n60_excluded_by_bicep_keck_2018():
    # m^2 phi^2 at N = 60: n_s ~ 0.967, r ~ 0.13 (Encyclopaedia Inflationaris, arXiv:1303.3787)
    # against r_0.05 < 0.036 (BICEP/Keck 2018, arXiv:2110.00483).
    model = slow_roll_spectra("quadratic", 60, ln_1e10_As=3.044)
    score = GaussianLikelihood.from_names(["bk18"]).score(model)
    assert score.verdict == "excluded"
    assert score.excluded_at == 0.997


def test_quadratic_n60_excluded_with_planck_amplitude_and_tilt():
    model = slow_roll_spectra("quadratic", 60, ln_1e10_As=3.044)
    score = GaussianLikelihood.from_names(["planck2018_base", "bk18"]).score(model)
    assert score.verdict == "excluded" and score.excluded_at == 0.997
    # the tilt alone is fine; the exclusion comes from r
    by_q = {t.quantity: t for t in score.terms}
    assert abs(by_q["n_s"].pull) < 1 and by_q["r"].pull > 5


def test_quadratic_excluded_by_planck_bk15_at_its_own_pivot():
    # Planck 2018 + BK15, r_0.002 < 0.056 (arXiv:1807.06211): quadratic excluded at N = 50-60.
    for n in (50, 60):
        model = slow_roll_spectra("quadratic", n, ln_1e10_As=3.044)
        score = GaussianLikelihood.from_names(["planck2018_bk15"]).score(model)
        assert score.verdict == "excluded", n


@pytest.mark.parametrize("r_set", ["pr4_bk18", "bk18"])
def test_starobinsky_n55_allowed(r_set):
    # Starobinsky at N = 55: n_s ~ 0.964, r ~ 0.004, allowed by Planck 2018 + BK18
    # (Planck 2018 X, arXiv:1807.06211, Sect. 4, from memory; PR4+BK18: Tristram et al.,
    # PRD 105 (2022) 083524).
    model = slow_roll_spectra("starobinsky", 55, ln_1e10_As=3.044)
    score = GaussianLikelihood.from_names(["planck2018_base", r_set]).score(model)
    assert score.verdict == "allowed"
    assert score.excluded_at is None
    assert score.p_value > 0.5
