"""Duration-of-inflation distribution: published peak, priors, statistics, reproducibility."""

import numpy as np
import pytest
from scipy import stats

from bouncelike.background.efolds import (
    BounceFractionPrior,
    PhasePrior,
    efolds_distribution,
    hubble_to_frequency,
)
from bouncelike.background.initial import IntegrationSettings
from bouncelike.background.isotropic import IsotropicDynamics
from bouncelike.background.potentials import Quadratic, Starobinsky
from bouncelike.errors import InputError
from bouncelike.parallel import make_pool

DYN = IsotropicDynamics()
QUAD = Quadratic(1.21e-6)  # Linsefors & Barrau, Phys. Rev. D 87 (2013) 123509


@pytest.fixture(scope="module")
def quadratic_distribution():
    return efolds_distribution(DYN, QUAD, PhasePrior(), 200, seed=3, convergence_samples=60)


def test_quadratic_peak_matches_literature(quadratic_distribution):
    # Linsefors & Barrau, Phys. Rev. D 87 (2013) 123509: for m = 1.21e-6 and a flat phase prior
    # the distribution of inflationary e-folds peaks around 140-145. The smeared-rho_0 peak sits
    # a few e-folds above the fixed-surface one (physics notes section 2), hence [138, 150].
    d = quadratic_distribution
    assert d.status_counts["inflated"] == 200
    assert 138.0 <= d.mode <= 150.0
    assert 138.0 <= d.median <= 150.0
    # and it is narrow: 16-84 % range of order 20 e-folds, well above the ~60 needed
    assert d.percentiles["84"] - d.percentiles["16"] < 30.0
    assert d.fraction_above(60.0) == 1.0


def test_quadratic_bounce_potential_fraction(quadratic_distribution):
    # Same paper: nearly every phase gives sqrt(V_B / rho_c) of a few 1e-6.
    x = np.sqrt(quadratic_distribution.potential_fractions)
    assert np.mean((x > 1e-6) & (x < 1e-5)) >= 0.95
    assert 2e-6 < np.median(x) < 6e-6


def test_convergence_in_rho0(quadratic_distribution):
    # Moving the rho_0 window two decades lower changes the median by less than 5 e-folds
    # (the fixed-surface wander is about +-5, physics notes section 2; smearing reduces it).
    cv = quadratic_distribution.convergence
    assert cv["n"] == 60 and cv["shift_decades"] == 2.0
    assert cv["shifted_window"][1] == pytest.approx(1e-18)
    assert cv["median_change"] < 5.0
    assert quadratic_distribution.max_constraint_residual < 1e-6


def test_statistics_match_numpy(quadratic_distribution):
    d = quadratic_distribution
    values = d.usable()
    for q, v in d.percentiles.items():
        assert v == np.percentile(values, float(q))
    assert d.median == np.median(values)
    assert d.fraction_above(145.0) == np.mean(values > 145.0)
    assert d.histogram[0].sum() == len(values)
    assert np.min(values) <= d.mode <= np.max(values)
    assert d.hubble_to_frequency == pytest.approx(np.sqrt(8 * np.pi * 1e-16 / 3) / 1.21e-6)
    assert hubble_to_frequency(QUAD, 1e-16) == d.hubble_to_frequency


def test_identical_for_any_number_of_workers():
    runs = []
    for workers in (1, 2, 4):
        with make_pool(workers, use_mpi=False) as pool:
            runs.append(efolds_distribution(DYN, QUAD, PhasePrior(1e-15, 1.0), 24, seed=11,
                                            pool=pool, convergence_samples=4))
    for other in runs[1:]:
        assert np.array_equal(runs[0].samples, other.samples)
        assert np.array_equal(runs[0].potential_fractions, other.potential_fractions)
        assert np.array_equal(runs[0].bounce_to_end, other.bounce_to_end)
        assert runs[0].percentiles == other.percentiles
        assert runs[0].convergence == other.convergence
    assert not np.array_equal(
        runs[0].samples,
        efolds_distribution(DYN, QUAD, PhasePrior(1e-15, 1.0), 24, seed=12,
                            convergence_samples=0).samples,
    )


def test_fixed_surface_and_bounce_fraction_prior():
    fixed = efolds_distribution(DYN, QUAD, PhasePrior(1e-15, 0.0), 10, seed=1,
                                convergence_samples=0)
    assert np.all(fixed.draws["start_density"] == 1e-15)
    assert fixed.prior["prescription"] == "fixed surface"
    prior = BounceFractionPrior(1e-12, 1e-10, "log")
    d = efolds_distribution(DYN, QUAD, prior, 30, seed=2)
    x = d.draws["potential_fraction"]
    assert np.all((x >= 1e-12) & (x <= 1e-10))
    assert d.convergence == {}
    np.testing.assert_allclose(d.potential_fractions, x, rtol=1e-9)
    # more potential energy at the bounce -> the field starts higher -> more e-folds
    # (slow roll N ~ 2 pi phi^2 grows with phi_B ~ sqrt(x); Linsefors & Barrau 2013)
    rho = stats.spearmanr(x, d.samples).statistic
    assert rho > 0.9


def test_plateau_gives_much_longer_inflation():
    # Plateau potentials let the field be thrown far up: much longer inflation for most phases
    # (Linsefors & Barrau 2013, qualitative). Capped runs are a status, not an error.
    settings = IntegrationSettings(max_inflation_efolds=1000.0)
    d = efolds_distribution(DYN, Starobinsky(2.6e-6), PhasePrior(), 24, seed=5,
                            settings=settings, convergence_samples=0)
    assert d.status_counts["efold_cap"] >= 0.7 * 24
    assert d.status_counts["failed"] == 0
    assert d.median >= 1000.0 > 5 * 145.0


def test_bad_prior_values():
    with pytest.raises(InputError, match="efolds.start_density"):
        PhasePrior(-1.0)
    with pytest.raises(InputError, match="efolds.start_density_decades"):
        PhasePrior(1e-16, -1.0)
    with pytest.raises(InputError, match="efolds.fraction_min"):
        BounceFractionPrior(1e-9, 1e-12)
    with pytest.raises(InputError, match="efolds.fraction_scale"):
        BounceFractionPrior(1e-12, 1e-9, "cubic")
    with pytest.raises(InputError, match="efolds.n_samples"):
        efolds_distribution(DYN, QUAD, PhasePrior(), 0, seed=1)


def test_flattened_monomial_window_guard():
    # For p < 2 the oscillation frequency grows as the density falls; a window that would need
    # more than MAX_OSCILLATIONS oscillations before the bounce is refused, not run for hours.
    from bouncelike.background.potentials import Monomial

    pot = Monomial(1e-11, 2 / 3)
    with pytest.raises(InputError, match="efolds.start_density"):
        efolds_distribution(DYN, pot, PhasePrior(1e-16, 2.0), 4, seed=1)
    d = efolds_distribution(DYN, pot, PhasePrior(3e-13, 0.5), 6, seed=1,
                            convergence_samples=0)
    assert d.status_counts["failed"] == 0
    assert d.status_counts["inflated"] + d.status_counts["efold_cap"] == 6
