"""Posterior runs and reports with the large-scale temperature term: every set listed, the
manifest rebuilt, the term stated, the D_ell figure and the k range of each multipole."""

from __future__ import annotations

import json
import math
import os

import numpy as np
import pytest
from scipy import integrate, special
from scipy.stats import chi2

from bouncelike.cli import main
from bouncelike.config import Table
from bouncelike.errors import NotEvaluable
from bouncelike.likelihood.combined import (
    CombinedLikelihood,
    single_set_likelihood,
    statistic_threshold,
)
from bouncelike.likelihood.gaussian import likelihood_from_config
from bouncelike.likelihood.lowell import UNREPRESENTED_SHARE, LowEllTemperature
from bouncelike.likelihood.lowell_calibration import STEP, null_distribution
from bouncelike.provenance import constraint_sets_of
from bouncelike.reporting.lowell import multipole_k_ranges
from bouncelike.sampling import chains
from bouncelike.sampling.setup import rebuild_from_manifest
from bouncelike.sky.cosmology import planck18_late_universe
from bouncelike.spectra import PowerLawSpectra
from bouncelike.spectra.tabulated import TabulatedSpectra

SETS = ["planck2018_base", "bk18", "planck2018_lowell_tt"]
REPORT = ('\n[report]\nexclusion_map = ["n_s", "ln_1e10_As"]\ngrid = 6\nrefine = 1\n'
          'prior_draws = 60\nrescore_samples = 20\nband_samples = 30\nevidence_draws = 300\n')


def _likelihood(sets, **extra):
    return likelihood_from_config(Table({"likelihood": {"sets": sets, **extra}}, "",
                                        ("likelihood",)))


@pytest.fixture(scope="module")
def lowell_run(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("lowell_run")
    (tmp / "run.toml").write_text(
        f'[likelihood]\nsets = {json.dumps(SETS)}\nlow_ell_range = [2, 29]\n\n[sampling]\n'
        'prior = "power_law"\nwalkers = 12\nmax_steps = 300\nmin_steps = 300\n'
        'tau_multiple = 5\ntau_tolerance = 0.5\ncheckpoint_every = 100\nseed = 5\n'
        'chains_dir = "chains"\nprogress = false\nprior_survey_draws = 40\n' + REPORT)
    here = os.getcwd()
    os.chdir(tmp)
    try:
        assert main(["sample", "run.toml", "--quiet"]) == 0
        assert main(["report", "chains/run", "--quiet"]) == 0
    finally:
        os.chdir(here)
    return tmp / "chains" / "run"


def test_combined_likelihood_lists_every_set_once():
    lk = _likelihood(SETS)
    assert isinstance(lk, CombinedLikelihood)
    assert [s.name for s in lk.sets] == SETS
    assert [s.name for s in lk.pivot_sets] == SETS[:2]
    assert [s.name for s in constraint_sets_of(lk)] == SETS  # no duplicate in provenance


def test_manifest_keeps_the_low_ell_set_and_rebuilds_it(lowell_run):
    manifest = chains.read_manifest(lowell_run, chains.MANIFEST_NEEDS)
    assert [s["name"] for s in manifest["likelihood_sources"]] == SETS
    assert all(s["shipped"] for s in manifest["likelihood_sources"])
    assert [s["name"] for s in manifest["provenance"]["constraint_sets"]] == SETS
    assert manifest["likelihood_settings"]["low_ell_range"] == [2, 29]
    _, _, likelihood, _ = rebuild_from_manifest(manifest)
    assert isinstance(likelihood, CombinedLikelihood)
    assert [s.name for s in likelihood.sets] == SETS
    p = PowerLawSpectra(3.044, 0.9649, r=0.01)
    assert likelihood.log_likelihood(p) == pytest.approx(_likelihood(SETS).log_likelihood(p))


def test_report_states_the_term_and_rescores_it(lowell_run):
    v = json.loads((lowell_run / "report" / "verdicts.json").read_text())
    assert v["constraint_sets"] == SETS
    assert v["large_scale_term"]["used"] and v["large_scale_term"]["multipoles"] == [2, 29]
    assert "p = P(X >= chi2_pivot + T) with X = chi2_m" in v["verdict_rule"]
    rows = {r["set"]: r for r in v["by_set"]}
    low = rows["planck2018_lowell_tt"]
    assert low["kind"] == "temperature_low_ell" and low["best_fit_dof"] == 28
    # the set alone: its calibrated p-value, not chi2 with 28 dof
    term = LowEllTemperature.from_file("planck2018_lowell_tt")
    assert low["best_fit_p_value"] == pytest.approx(term.p_value(low["best_fit_chi2"])[0])
    bf = v["best_fit"]
    assert bf["p_value_rule"] == "best_fit_combined" and bf["low_ell_terms"] == 28
    g = max(bf["n_terms"] - 28 - bf["fitted_parameters"], 0)
    assert bf["p_value"] == pytest.approx(term.p_value(bf["chi2"], g)[0])
    text = (lowell_run / "report" / "verdicts.md").read_text()
    for needle in ("## Large-scale temperature term", "anchored to the published best-fit LCDM",
                   "arXiv:1907.12875", "Hamimeche & Lewis 2008", "Sachs & Wolfe 1967",
                   "best fit combined"):
        assert needle in text, needle


def test_dell_figure_draws_the_data_and_the_predictions(lowell_run):
    out = lowell_run / "report"
    for ext in (".pdf", ".png", ".caption.txt", ".json"):
        assert (out / f"dell{ext}").is_file()
    d = json.loads((out / "dell.json").read_text())
    term = LowEllTemperature.from_file("planck2018_lowell_tt")
    assert d["used_in_likelihood"] and d["multipoles"] == list(range(2, 30))
    assert np.allclose(d["measured"], term.measured)
    assert np.allclose(np.array(d["measured"]) - d["minus"], term.lower_edge)
    assert np.allclose(np.array(d["measured"]) + d["plus"], term.upper_edge)
    assert np.allclose(d["best_fit_lcdm"], term.reference_dell)
    # a power law fitted to Planck 2018 predicts D_ell within a few per cent of the best-fit
    # LCDM spectrum (Planck 2018 VI, arXiv:1807.06209, Table 2: its primordial parameters)
    assert np.allclose(d["model_best_fit"], term.reference_dell, rtol=0.05)
    band = np.array(d["band"])
    assert band.shape == (5, 28) and np.all(np.diff(band, axis=0) >= 0)
    caption = (out / "dell.caption.txt").read_text()
    assert "anchored to the best-fit LCDM" in caption and "arXiv:1907.12875" in caption
    spectra = json.loads((out / "spectra.json").read_text())
    assert spectra["multipole_k_ranges"]["ells"] == list(range(2, 30))
    assert "median k of each multipole" in (out / "spectra.caption.txt").read_text()


def test_sachs_wolfe_k_range_matches_a_direct_quadrature():
    """The k range of a multipole from the projection's nodes, Sachs-Wolfe part alone, for a
    flat spectrum, against the direct integral of j_ell(k chi_*)^2 dk/k (textbook Sachs-Wolfe
    kernel, physics notes section 7; scipy.special.spherical_jn, scipy.integrate.quad)."""
    term = LowEllTemperature.from_file("planck2018_lowell_tt")

    class SachsWolfeOnly:
        reference = PowerLawSpectra(3.044, 1.0)
        projection = term.projection
        ells = term.ells

        def contributions(self, spectra):
            ps, _ = term.projection.power_on_nodes(spectra)
            return term.projection.scalar_sachs_wolfe[term.ells - 2] * ps

    ranges = multipole_k_ranges(SachsWolfeOnly(), mass=0.68)
    chi_star = planck18_late_universe().chi_star
    for i, ell in ((0, 2), (8, 10), (27, 29)):
        def share(x, ell=ell):
            f = lambda u: special.spherical_jn(ell, u) ** 2 / u  # noqa: E731
            return integrate.quad(f, 1e-8, x, limit=400)[0] * 2 * ell * (ell + 1)

        # int_0^inf j_ell^2(x) dx/x = 1/(2 ell (ell + 1)) (Gradshteyn & Ryzhik 6.574.2)
        lo = share(ranges["k_low"][i] * chi_star)
        med = share(ranges["k_median"][i] * chi_star)
        assert lo == pytest.approx(0.16, abs=0.01)
        assert med == pytest.approx(0.5, abs=0.01)


def test_threshold_of_the_calibrated_law():
    # with no multipole the law is chi2_m: its quantile (scipy.stats.chi2) within a grid step
    for m, p in ((3, 0.05), (5, 0.003)):
        assert null_distribution((), m).isf(p) == pytest.approx(chi2.isf(p, m), abs=2 * STEP)
    lk = _likelihood(SETS)
    sc = lk.score(PowerLawSpectra(3.044, 0.9649, r=0.01))
    t95 = statistic_threshold(lk, sc, 0.05)
    assert lk.low_ell.p_value(t95, 3)[0] == pytest.approx(0.05, abs=2e-3)
    single = single_set_likelihood(lk.low_ell.data, lk)
    assert [s.name for s in single.sets] == ["planck2018_lowell_tt"]


def test_unrepresented_modes_make_the_term_refuse():
    term = LowEllTemperature.from_file("planck2018_lowell_tt")
    k = np.geomspace(1e-5, 1.0, 300)
    ps = 2.1e-9 * (k / 0.05) ** -0.035
    plain = TabulatedSpectra(k, ps, 0.01 * ps)
    share = term._reference_share_below[0]
    k_share = float(np.interp(UNREPRESENTED_SHARE, share, term.projection.k))
    inside = TabulatedSpectra(k, ps, 0.01 * ps,
                              unrepresented_below=(0.5 * k_share, "test: no state there"))
    assert term.chi2(term.predict(inside)) == pytest.approx(term.chi2(term.predict(plain)))
    outside = TabulatedSpectra(k, ps, 0.01 * ps,
                               unrepresented_below=(3 * k_share, "test: no state there"))
    with pytest.raises(NotEvaluable, match=r"ell = 2 takes .* \(test: no state there\)"):
        term.predict(outside)
    assert math.isfinite(k_share) and 2e-5 < k_share < 8e-5


def test_starobinsky_remote_past_refused_where_the_state_is_not_set():
    """The remote-past state is not set below 0.363 k_LQC on Starobinsky bounces
    (perturbations/transfer.py, CERTIFIED_RANGES): the term refuses bounces whose ell = 2 would
    read those modes, before the window's lower end reaches them."""
    from bouncelike.perturbations.transfer import BounceSpectraModel

    m = BounceSpectraModel(state="remote_past", potential="starobinsky")
    term = LowEllTemperature.from_file("planck2018_lowell_tt")
    p = {"ln_1e10_As": 3.044, "n_s": 0.9649, "r": 0.01, "log10_conformal_duration": 4.5}
    assert math.isfinite(term.chi2(term.predict(m.spectra({**p, "log10_k_lqc": -4.3}))))
    s = m.spectra({**p, "log10_k_lqc": -3.8})  # window starts at 0.63 k_LQC: evaluable
    with pytest.raises(NotEvaluable, match="remote-past state is not set"):
        term.predict(s)


def test_points_the_term_cannot_score_are_recorded_as_not_evaluable(tmp_path, monkeypatch):
    """The remote-past state is not set below 0.363 k_LQC on Starobinsky bounces: posterior
    points whose low multipoles would read those modes are recorded in failures.csv as not
    evaluable with the term's reason, and their prior fraction is in the manifest."""
    monkeypatch.chdir(tmp_path)
    (tmp_path / "run.toml").write_text(
        f'[likelihood]\nsets = {json.dumps(SETS)}\n\n[sampling]\n'
        'prior = "bounce_dressed_metric_physical_starobinsky"\nwalkers = 12\nmax_steps = 30\n'
        'min_steps = 30\ntau_multiple = 5\ntau_tolerance = 0.5\ncheckpoint_every = 30\n'
        'seed = 2\nprogress = false\nprior_survey_draws = 60\n')
    assert main(["sample", "run.toml", "--quiet"]) == 0
    manifest = json.loads((tmp_path / "chains" / "run" / "manifest.json").read_text())
    rows = manifest["run"]["failure_summary"]["by_reason"]
    term = [r for r in rows if r["reason"].startswith("large-scale temperature term")]
    assert term and all(r["kind"] == "not_evaluable" for r in term)
    assert "remote-past state is not set" in term[0]["reason"]
    assert sum(r["survey_count"] for r in term) > 0  # a prior fraction is measured
    failures = (tmp_path / "chains" / "run" / "failures.csv").read_text()
    assert "large-scale temperature term" in failures
