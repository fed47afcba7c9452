"""Posterior driver: recovery of known Gaussians, resumption, locks and failure counting."""

from __future__ import annotations

import json
import math
import os
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from sampling_targets import COV, MEAN, SETTINGS, gaussian_posterior, gaussian_prior

from bouncelike.errors import InputError
from bouncelike.reporting.marginals import marginal_statistics
from bouncelike.sampling import chains
from bouncelike.sampling.driver import SamplerSettings, run_sampler
from bouncelike.sampling.failures import load_failures
from bouncelike.sampling.lock import process_start
from bouncelike.sampling.storage import read_state

ROOT = Path(__file__).resolve().parents[1]
TESTS = Path(__file__).resolve().parent


@pytest.fixture(scope="module")
def gaussian_run(tmp_path_factory):
    folder = tmp_path_factory.mktemp("gauss") / "run"
    settings = SamplerSettings(walkers=16, max_steps=4000, min_steps=200, tau_multiple=50,
                               tau_tolerance=0.05, checkpoint_every=100, seed=3)
    result = run_sampler(gaussian_posterior(), settings, folder, show_progress=False)
    return folder, result


def test_known_gaussian_mean_and_covariance(gaussian_run):
    # Reference: the analytic target N(MEAN, COV). Monte Carlo error of a mean is
    # sqrt(var / ESS); of a variance about var * sqrt(2 / ESS) (Gaussian sampling theory).
    folder, result = gaussian_run
    assert result.converged
    samples = pd.read_csv(folder / "samples.csv")
    x = samples[["a", "b"]].to_numpy()
    ess = float(np.min(result.ess))
    err_mean = np.sqrt(np.diag(COV) / ess)
    assert np.all(np.abs(x.mean(axis=0) - MEAN) < 4 * err_mean)
    cov = np.cov(x.T)
    tol = 4 * np.sqrt(2.0 / ess) * np.sqrt(np.outer(np.diag(COV), np.diag(COV)))
    assert np.all(np.abs(cov - COV) < tol)
    # derived parameters are stored with the samples and are functions of them
    np.testing.assert_allclose(samples["s"], samples["a"] + samples["b"], rtol=1e-12)
    assert 0.2 < result.acceptance < 0.9


def test_marginals_agree_with_getdist(gaussian_run):
    # getdist (the reference library) computes its own marginal statistics from an
    # MCSamples built from the same arrays.
    from getdist import MCSamples

    folder, _ = gaussian_run
    samples = pd.read_csv(folder / "samples.csv")
    x = samples[["a", "b"]].to_numpy()
    ours = marginal_statistics(x, ["a", "b"], [-20, -20], [20, 20])
    mc = MCSamples(samples=x, names=["a", "b"], ranges={"a": [-20, 20], "b": [-20, 20]},
                   settings={"ignore_rows": 0})
    np.testing.assert_allclose(mc.getMeans(), [o["mean"] for o in ours], rtol=0, atol=1e-12)
    np.testing.assert_allclose(np.sqrt(np.diag(mc.getCov())), [o["std"] for o in ours],
                               rtol=1e-3)
    stats = mc.getMargeStats()
    for o in ours:
        p = stats.parWithName(o["name"])
        sigma = o["std"]
        assert o["kind"] == "two_sided"
        assert abs(p.limits[0].lower - o["lower68"]) < 0.1 * sigma
        assert abs(p.limits[0].upper - o["upper68"]) < 0.1 * sigma
        assert abs(p.limits[1].lower - o["lower95"]) < 0.15 * sigma
        assert abs(p.limits[1].upper - o["upper95"]) < 0.15 * sigma


def test_manifest_and_chain_file(gaussian_run):
    folder, result = gaussian_run
    m = chains.read_manifest(folder)
    assert m["run"]["status"] == "converged"
    assert m["run"]["steps"] == result.steps
    chain = pd.read_csv(folder / "chain.csv")
    assert len(chain) == result.steps * 16
    assert list(chain.columns) == ["step", "walker", "a", "b", "log_likelihood", "s", "d",
                                   "log_posterior"]
    assert not (folder / ".lock").exists()
    assert len(load_failures(folder)) == 0  # nothing failed: failures.csv holds its header
    assert m["run"]["failure_summary"]["prior_survey"]["draws"] == 200


def _steps(folder):
    return int(read_state(folder)["steps"])


def _state_arrays(folder):
    with np.load(folder / "state.npz") as z:
        return {k: z[k] for k in z.files}


def _assert_same_run(a, b):
    sa, sb = _state_arrays(a), _state_arrays(b)
    assert sa.keys() == sb.keys()
    for k in sa:
        np.testing.assert_array_equal(sa[k], sb[k], err_msg=k)
    for name in ("chain.csv", "samples.csv", "failures.csv"):
        assert (a / name).read_bytes() == (b / name).read_bytes(), name


@pytest.mark.parametrize("stop", [0, 130])  # right after placing the walkers; mid-chunk
def test_resume_equals_continuous_run(tmp_path, stop):
    cont, part = tmp_path / "continuous", tmp_path / "interrupted"
    r1 = run_sampler(gaussian_posterior(), SETTINGS, cont, show_progress=False)
    run_sampler(gaussian_posterior(), SETTINGS, part, show_progress=False, stop_after=stop)
    assert _steps(part) == stop
    with pytest.raises(InputError, match="--resume"):
        run_sampler(gaussian_posterior(), SETTINGS, part, show_progress=False)
    r2 = run_sampler(gaussian_posterior(), SETTINGS, part, show_progress=False, resume=True)
    assert r1.steps == r2.steps
    _assert_same_run(cont, part)


def test_resume_after_sigkill_equals_continuous_run(tmp_path):
    # a failing region (a > 1.5) so that failures.csv has rows after the last checkpoint too
    cont, killed = tmp_path / "continuous", tmp_path / "killed"
    run_sampler(gaussian_posterior(fail_above=1.5), SETTINGS, cont, show_progress=False)
    code = (f"import sys; sys.path[:0] = [{str(ROOT)!r}, {str(TESTS)!r}]\n"
            f"from sampling_targets import run\n"
            f"run({str(killed)!r}, delay=0.002, fail_above=1.5)\n")
    proc = subprocess.Popen([sys.executable, "-c", code])
    deadline = time.time() + 60
    while time.time() < deadline:
        try:
            if _steps(killed) >= 100:
                break
        except (InputError, FileNotFoundError):  # not written yet
            pass
        time.sleep(0.05)
    assert proc.poll() is None, "the run ended before it could be killed"
    time.sleep(0.13)  # into the next chunk: rows appended after the checkpoint are cut back
    os.kill(proc.pid, signal.SIGKILL)
    proc.wait()
    steps_at_kill = _steps(killed)
    assert steps_at_kill < SETTINGS.max_steps
    assert (killed / ".lock").exists()  # stale lock of the killed process
    run_sampler(gaussian_posterior(fail_above=1.5), SETTINGS, killed, show_progress=False,
                resume=True)
    _assert_same_run(cont, killed)
    assert len(load_failures(killed)) > 0


def test_second_run_on_same_folder_is_refused(tmp_path):
    folder = tmp_path / "busy"
    holder = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(30)"])
    try:
        folder.mkdir()
        lock = {"pid": holder.pid, "host": socket.gethostname(),
                "process_start": process_start(holder.pid), "since": "today"}
        (folder / ".lock").write_text(json.dumps(lock) + "\n")
        with pytest.raises(InputError, match=f"in use by process {holder.pid}.*kill"):
            run_sampler(gaussian_posterior(), SETTINGS, folder, show_progress=False)
        assert sorted(p.name for p in folder.iterdir()) == [".lock"]
    finally:
        holder.kill()
        holder.wait()


def test_failing_forward_model_recorded_and_run_continues(tmp_path):
    post = gaussian_posterior(fail_above=2.5)
    settings = SamplerSettings(walkers=12, max_steps=300, min_steps=100, tau_multiple=10,
                               tau_tolerance=0.5, checkpoint_every=100, seed=5,
                               prior_survey_draws=400)
    result = run_sampler(post, settings, tmp_path / "fail", show_progress=False)
    assert result.steps >= 100
    assert len(result.failures) == 1
    (text, count), = result.failures.items()
    assert text == "integration did not converge at a = #"
    assert count > 0
    chain = pd.read_csv(tmp_path / "fail" / "chain.csv")
    assert chain["a"].max() <= 2.5  # the failing region carries no posterior mass
    m = chains.read_manifest(tmp_path / "fail")
    assert m["run"]["failures"] == {text: count}
    # every failed proposal is in failures.csv with its parameters, though none was accepted
    f = load_failures(tmp_path / "fail")
    run_rows = f[f["stage"] != "prior_survey"]
    assert len(run_rows) == count and (run_rows["a"] > 2.5).all()
    assert set(run_rows["kind"]) == {"numerical_failure"}
    assert run_rows["message"].str.startswith("integration did not converge at a = ").all()
    # the prior survey measures the failing prior fraction: a uniform prior on [-20, 20] puts
    # 17.5 / 40 of its mass above a = 2.5 (measure of an interval); binomial error
    (entry,) = m["run"]["failure_summary"]["by_reason"]
    survey = f[f["stage"] == "prior_survey"]
    assert entry["survey_count"] == len(survey) and (survey["a"] > 2.5).all()
    exact = 17.5 / 40
    assert abs(entry["prior_fraction"] - exact) < 4 * math.sqrt(exact * (1 - exact) / 400)
    assert entry["prior_fraction_error"] > 0


def test_gaussian_prior_draws_match_scipy():
    # Reference: scipy.stats.truncnorm for a Gaussian prior truncated to [min, max].
    from scipy.stats import truncnorm

    from bouncelike.sampling.priors import ParameterPrior

    p = ParameterPrior("x", "sampled", "x", "gaussian", lower=0.0, upper=3.0, mean=1.0,
                       sigma=1.0)
    x = np.linspace(0.1, 2.9, 7)
    ref = truncnorm(-1.0, 2.0, loc=1.0, scale=1.0)
    np.testing.assert_allclose(p.log_density(x), ref.logpdf(x), rtol=1e-10)
    d = p.draw(np.random.default_rng(0), 20000)
    assert abs(d.mean() - ref.mean()) < 4 * ref.std() / np.sqrt(d.size)
    lu = ParameterPrior("y", "sampled", "y", "log_uniform", lower=1e-3, upper=1.0)
    from scipy.stats import loguniform

    np.testing.assert_allclose(lu.log_density(x[:3]), loguniform(1e-3, 1.0).logpdf(x[:3]))
    assert gaussian_prior().log_prior(np.array([30.0, 0.0])) == -np.inf


def test_walkers_start_inside_the_support():
    from bouncelike.sampling.priors import ParameterPrior, Prior

    prior = Prior("t", "t", (
        ParameterPrior("r", "sampled", "r", "uniform", 0.0, 0.3, walkers_centre=0.0,
                       walkers_spread=0.01),
        ParameterPrior("m", "sampled", "m", "log_uniform", 1e-7, 1e-5),
        ParameterPrior("g", "sampled", "g", "gaussian", lower=-1.0, upper=1.0, mean=0.9,
                       sigma=2.0)))
    w = prior.initial_walkers(np.random.default_rng(0), 500)
    assert np.all(np.isfinite([prior.log_prior(t) for t in w]))
    assert np.unique(w[:, 0]).size == 500  # reflected at r = 0, not piled up on the edge


def test_one_sided_upper_limit_against_getdist_and_analytic():
    # A posterior piled against r = 0: half-normal with sigma 0.01. Its 95% upper limit is
    # 1.95996 sigma (scipy.stats.halfnorm.ppf(0.95)); getdist (reference library) reports the
    # same marginal as one-tailed and its own 95% limit.
    from getdist import MCSamples
    from scipy.stats import halfnorm

    rng = np.random.default_rng(4)
    r = np.abs(rng.normal(0.0, 0.01, 40000))
    x = np.column_stack([r, rng.normal(size=r.size)])
    (ours, other) = marginal_statistics(x, ["r", "y"], [0.0, -np.inf], [0.3, np.inf])
    assert ours["kind"] == "upper_limit" and other["kind"] == "two_sided"
    exact = halfnorm.ppf(0.95, scale=0.01)
    assert abs(ours["limit95"] - exact) < 0.02 * exact
    mc = MCSamples(samples=x, names=["r", "y"], ranges={"r": [0.0, 0.3]},
                   settings={"ignore_rows": 0})
    lim = mc.getMargeStats().parWithName("r").limits[1]
    assert lim.onetail_upper and not lim.onetail_lower  # getdist: "an upper limit only"
    assert abs(lim.upper - ours["limit95"]) < 0.03 * exact
