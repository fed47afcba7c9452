"""The large-scale temperature term: data file, inverse-gamma fits, calibration, anchoring."""

import csv
import math
from pathlib import Path

import numpy as np
import pytest
from scipy.stats import chi2 as chi2_dist
from scipy.stats import invgamma

from bouncelike.errors import InputError
from bouncelike.likelihood.inverse_gamma import (
    INTERVAL_PROBABILITY,
    fit_inverse_gamma,
    minus_two_ln_ratio,
)
from bouncelike.likelihood.lowell import LowEllTemperature
from bouncelike.likelihood.lowell_calibration import null_distribution, simulate_statistic
from bouncelike.likelihood.lowell_data import LowEllData
from bouncelike.likelihood.sets import load_constraint_set
from bouncelike.spectra import PowerLawSpectra

SHARED = Path("/work/shared/data/planck2018_tt_low_ell.csv")
DATA = load_constraint_set("planck2018_lowell_tt")
TERM = LowEllTemperature(DATA)
ELLS = [int(e) for e in DATA.ells]


def test_interval_probability_is_one_sigma():
    # "68%" = probability of +-1 sigma of a Gaussian (common practice), via scipy
    assert INTERVAL_PROBABILITY == pytest.approx(chi2_dist.cdf(1.0, 1), abs=1e-15)
    assert DATA.interval_probability == pytest.approx(INTERVAL_PROBABILITY, abs=1e-15)


@pytest.mark.skipif(not SHARED.is_file(), reason=f"shared data file {SHARED} is not present")
def test_rows_equal_the_shared_table():
    # the package's data file carries the Planck 2018 table (arXiv:1907.12875 measured power,
    # arXiv:1807.06209 best-fit theory) digit for digit
    with SHARED.open() as fh:
        rows = list(csv.DictReader(fh))
    assert [int(r["ell"]) for r in rows] == ELLS
    for i, r in enumerate(rows):
        assert DATA.measured[i] == float(r["D_measured_uK2"])
        assert DATA.minus[i] == float(r["lower_68_uK2"])
        assert DATA.plus[i] == float(r["upper_68_uK2"])
        assert DATA.reference_dell[i] == float(r["D_lcdm_bestfit_uK2"])


def test_reference_model_and_citations_in_the_file():
    # Planck 2018 VI (arXiv:1807.06209) Table 2: ln(1e10 A_s) = 3.044, n_s = 0.9649, r = 0
    assert DATA.reference_model == {"ln_1e10_As": 3.044, "n_s": 0.9649, "r": 0.0, "pivot": 0.05}
    assert DATA.arxiv == "1907.12875" and "1807.06209" in DATA.reference_citation
    assert "Hamimeche" not in DATA.citation and DATA.approximation


@pytest.mark.parametrize("i", range(len(ELLS)), ids=[f"ell{e}" for e in ELLS])
def test_fitted_inverse_gamma_reproduces_the_published_interval(i):
    # independent check with scipy.stats.invgamma (shape nu/2 - 1, scale nu s/2): equal density
    # at both published edges and the published probability between them
    nu, s = TERM.nu[i], TERM.mode[i]
    dist = invgamma(nu / 2 - 1, scale=nu * s / 2)
    lo, hi = DATA.lower_edge[i], DATA.upper_edge[i]
    assert dist.cdf(hi) - dist.cdf(lo) == pytest.approx(INTERVAL_PROBABILITY, abs=1e-8)
    assert dist.logpdf(hi) == pytest.approx(dist.logpdf(lo), abs=1e-8)
    # its maximum is at D = s (the density of the module docstring); scipy's invgamma is a
    # density in D with one more power of 1/D, so compare the likelihood form directly
    grid = s * np.linspace(0.9, 1.1, 2001)
    assert grid[np.argmax(-minus_two_ln_ratio(grid, nu, s))] == pytest.approx(s, rel=1e-4)


def _mode_param(i):
    if ELLS[i] == 2:
        return pytest.param(i, marks=pytest.mark.xfail(
            strict=True, reason="measured: the mode lands 1.13% below the published maximum "
                                "at ell = 2 (0.14-0.55% at ell >= 3)"))
    return i


@pytest.mark.parametrize("i", [_mode_param(i) for i in range(len(ELLS))],
                         ids=[f"ell{e}" for e in ELLS])
def test_mode_lands_on_the_published_maximum(i):
    # Planck 2018 V (arXiv:1907.12875) quotes the maximum of the low-ell posterior: the fitted
    # inverse gamma, constrained by the interval edges only, must peak there within 1%
    assert TERM.mode[i] == pytest.approx(DATA.measured[i], rel=0.01)


def test_fitted_nu_against_cosmic_variance():
    # full sky: nu = 2 ell + 1 (Hamimeche & Lewis 2008, arXiv:0801.0554); measured: within 2.1%
    # of it at ell <= 5, below it at higher ell (sky cut), 49 of 59 at ell = 29
    full = 2 * np.array(ELLS) + 1
    assert np.all(np.abs(TERM.nu[:4] / full[:4] - 1) < 0.025)
    assert np.all(TERM.nu[8:] < full[8:])
    assert 0.75 < TERM.nu[-1] / full[-1] < 0.9


def test_minus_two_ln_ratio_matches_the_density():
    # -2 ln(L/L_max) from the density p(D) ∝ D^(-nu/2) exp(-nu s/(2D)) (module docstring)
    nu, s = 9.0, 700.0
    d = np.array([200.0, 500.0, 700.0, 1500.0])

    def ln_p(x):
        return -nu / 2 * np.log(x) - nu * s / (2 * x)

    np.testing.assert_allclose(minus_two_ln_ratio(d, nu, s), -2 * (ln_p(d) - ln_p(s)),
                               atol=1e-12)


def test_single_term_tends_to_chi2_one():
    # Wilks: for many modes -2 ln(L/L_max) of one multipole is chi2 with 1 dof (textbook)
    law = null_distribution((5000.0,))
    for t in (0.5, 1.0, 4.0, 9.0):
        assert law.survival(t) == pytest.approx(chi2_dist.sf(t, 1), rel=3e-3)


@pytest.mark.parametrize("gaussian_terms", [0, 3])
def test_null_distribution_against_seeded_simulation(gaussian_terms):
    nus = tuple(TERM.nu)
    law = null_distribution(nus, gaussian_terms)
    sim = simulate_statistic(nus, 400_000, seed=11 + gaussian_terms,
                             gaussian_terms=gaussian_terms)
    assert law.mean == pytest.approx(sim.mean(), rel=2e-3)
    for t in (25.0, 35.0, 45.0, 55.0):
        p_sim = float(np.mean(sim >= t))
        err = math.sqrt(p_sim * (1 - p_sim) / sim.size)
        assert abs(law.survival(t) - p_sim) < 4 * err + 1e-5


def test_statistic_is_not_chi2_with_28_dof():
    # the calibrated tail is heavier than chi2_28 (why the verdict does not use it)
    law = TERM.null()
    assert law.survival(50.0) > 1.1 * chi2_dist.sf(50.0, len(ELLS))
    p, bound = TERM.p_value(500.0)
    assert bound and p == pytest.approx(1e-12)


def test_anchoring_reproduces_the_reference_and_scales_smoothly():
    m = DATA.reference_model
    ref = PowerLawSpectra(m["ln_1e10_As"], m["n_s"])
    np.testing.assert_allclose(TERM.predict(ref), DATA.reference_dell, rtol=1e-12)
    pred = TERM.prediction(ref)
    assert np.max(pred.anchoring_error) < 1e-12
    # an amplitude change scales every D_ell exactly; a tilt change moves low ell the most
    up = TERM.predict(PowerLawSpectra(m["ln_1e10_As"] + 0.1, m["n_s"]))
    np.testing.assert_allclose(up / DATA.reference_dell, math.exp(0.1), rtol=1e-10)
    tilt = TERM.predict(PowerLawSpectra(m["ln_1e10_As"], m["n_s"] + 0.02)) / DATA.reference_dell
    assert np.all(np.diff(tilt) > 0) and tilt[0] < 1


def test_tensors_add_power_at_low_ell():
    m = DATA.reference_model
    d = TERM.predict(PowerLawSpectra(m["ln_1e10_As"], m["n_s"], r=0.1)) / DATA.reference_dell
    # tensor ISW: 4.5-6% for r = 0.1 (the tensor part carries the scalar anchoring factor)
    assert np.all((d > 1.03) & (d < 1.08))
    err = TERM.prediction(PowerLawSpectra(m["ln_1e10_As"], m["n_s"], r=0.1)).anchoring_error
    assert np.all(err < 0.05) and err[-1] > 0.01  # that factor is 1.44 at ell = 29


USER = """
name = "my_low_ell"
kind = "temperature_low_ell"
title = "t"
citation = "c"
arxiv = "0"
table = "t"
data_combination = "d"
forecast = false
overlap = ["mine"]
units = "micro-K^2"
approximation = "a"
overlap_treatment = "o"
columns = ["ell", "D_measured", "minus_68", "plus_68", "D_reference"]
rows = [
  [2, 225.895, 132.369, 533.062, 1016.73],
  [3, 936.920, 450.471, 1212.308, 963.727],
  [4, 692.238, 294.111, 666.469, 912.608],
]

[reference]
citation = "c"
arxiv = "1"
table = "t"
ln_1e10_As = 3.044
n_s = 0.9649
"""


def test_user_file_of_the_same_form(tmp_path):
    f = tmp_path / "mine.toml"
    f.write_text(USER)
    term = LowEllTemperature.from_file(str(f))
    assert isinstance(term.data, LowEllData) and list(term.ells) == [2, 3, 4]
    np.testing.assert_allclose(term.nu, TERM.nu[:3], rtol=1e-10)
    assert LowEllTemperature.from_file(str(f), ell_range=(3, 4)).ells.tolist() == [3, 4]


BAD_USER = {
    "ell outside the projection": (USER.replace("[4, 692.238", "[35, 692.238"),
                                   "ell = 35 is outside"),
    "ell one": (USER.replace("[2, 225.895", "[1, 225.895"), "ell = 1 is outside"),
    "not increasing": (USER.replace("[4, 692.238", "[3, 692.238"), "increasing order"),
    "missing column": (USER.replace(', "D_reference"]', "]"), "'columns' must be"),
    "short row": (USER.replace("533.062, 1016.73]", "533.062]"), "rows[0]"),
    "negative interval": (USER.replace("132.369", "300.0"), "0 < minus_68 < D_measured"),
    "interval too wide": (USER.replace("533.062", "1e9"), "cannot be the"),
    "unknown key": (USER.replace('units = "micro-K^2"', 'units = "micro-K^2"\ncolour = 1'),
                    "unknown key 'colour'"),
    "no reference": (USER[: USER.index("[reference]")], "missing table '[reference]'"),
}


@pytest.mark.parametrize("case", sorted(BAD_USER))
def test_bad_user_file_is_one_line(tmp_path, case):
    text, needle = BAD_USER[case]
    f = tmp_path / "bad.toml"
    f.write_text(text)
    with pytest.raises(InputError) as info:
        LowEllTemperature.from_file(str(f))
    msg = str(info.value)
    assert needle in msg and "\n" not in msg and "bad.toml" in msg


def test_ell_range_outside_the_data():
    with pytest.raises(InputError, match="asks for ell = 30"):
        LowEllTemperature(DATA, ell_range=(20, 35))


def test_fit_refuses_impossible_intervals():
    with pytest.raises(InputError, match="lower edge"):
        fit_inverse_gamma(5.0, 2.0, where="x")
    nu, s = fit_inverse_gamma(900.0, 1100.0)
    assert nu > 100 and s == pytest.approx(997, rel=0.01)  # narrow interval: many modes
