"""Transfer cache: certificate against exact integration, fast model."""

from __future__ import annotations

import math

import numpy as np
import pytest

from bouncelike.perturbations.transfer import BounceSpectraModel, certificate, load_transfer


def test_certificate_dressed_metric_within_one_percent():
    # exact mode integration at random backgrounds/window placements vs the cache
    c = certificate(n_points=2, seed=3)
    assert c["x_certified"] < 10.0
    assert c["max_error_certified"] <= 0.01


def test_transfer_universal_in_ultraviolet_only():
    t = load_transfer("dressed_metric", "remote_past")
    assert np.all(t.spread[t.x >= 10] < 1e-3)
    assert t.spread[t.x < 1].max() > 0.1  # features depend on the background: measured


def test_deformed_algebra_growth_rate_is_the_wkb_exponent():
    # growth per unit k/k_LQC = 2 k_LQC int sqrt(-Omega) d eta (physics notes s.4)
    t = load_transfer("deformed_algebra", "remote_past")
    uv = t.x >= 30
    slope = np.polyfit(t.x[uv], t.ln_tt[uv], 1)[0]
    assert slope == pytest.approx(t.growth_per_x, rel=0.05)
    assert math.isinf(t.x_certified)  # the oscillating prefactor is background-dependent


def test_fast_model_reduces_to_power_law_far_above_bounce():
    m = BounceSpectraModel()
    p = {"ln_1e10_As": 3.044, "n_s": 0.965, "r": 0.01, "log10_k_lqc": -7.0}
    s = m.spectra(p)
    assert m.derived(p)["certified"]
    k = np.geomspace(1e-4, 0.2, 9)
    np.testing.assert_allclose(s.scalar(k), math.exp(3.044) * 1e-10 * (k / 0.05) ** -0.035,
                               rtol=2e-3)
    low = {**p, "log10_k_lqc": -3.0}
    assert not m.derived(low)["certified"] and m.spectra(low).notes


def test_transfer_check_command(capsys):
    import json

    from bouncelike import cli

    assert cli.main(["transfer-check", "--points", "1", "--seed", "5", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["max_error_certified"] <= 0.01
