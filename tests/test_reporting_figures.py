"""What the report figures draw, checked against analytic results."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from scipy.stats import chi2, norm

from bouncelike.likelihood.sets import load_constraint_set
from bouncelike.reporting import exclusion, nsr, triangle


def test_published_region_of_a_gaussian_tilt_and_a_half_gaussian_r():
    # Planck 2018 (n_s = 0.9649 +- 0.0042, arXiv:1807.06209 Table 2) with BK18
    # (r_0.05 < 0.036 at 95%, arXiv:2110.00483) as a half-Gaussian of sigma 0.036 / 1.959964:
    # the highest-density region of mass p on r >= 0 is the half-disk of radius
    # sqrt(chi2_2^-1(p)) in units of the two sigmas (scipy.stats.chi2 with 2 dof)
    sets = [load_constraint_set("planck2018_base"), load_constraint_set("bk18")]
    reg = nsr.published_regions(sets)
    assert reg["kind"] == "region" and reg["sets"] == ["planck2018_base", "bk18"]
    sig_r = 0.036 / norm.ppf(0.975)
    for name, p in (("68", 0.68), ("95", 0.95)):
        radius = math.sqrt(chi2.ppf(p, 2))
        e = reg["extents"][name]
        assert e["r_max"] == pytest.approx(radius * sig_r, rel=0.03)
        assert e["n_s_max"] - 0.9649 == pytest.approx(radius * 0.0042, rel=0.03)
        assert 0.9649 - e["n_s_min"] == pytest.approx(radius * 0.0042, rel=0.03)


def test_published_band_without_an_r_constraint():
    # one Gaussian in n_s: the 95% band is +- 1.96 sigma (scipy.stats.norm.ppf(0.975))
    reg = nsr.published_regions([load_constraint_set("planck2018_base")])
    assert reg["kind"] == "n_s band" and reg["extents"]["95"]["r_max"] is None
    half = reg["extents"]["95"]["n_s_max"] - 0.9649
    assert half == pytest.approx(norm.ppf(0.975) * 0.0042, rel=0.03)


def test_reference_marks_are_the_slow_roll_formulas():
    # Encyclopaedia Inflationaris (arXiv:1303.3787): m^2 phi^2 n_s = 1 - 2/(N + 1/2),
    # r = 8/(N + 1/2); Starobinsky n_s = 1 - 2/N, r = 12/N^2
    marks = {(m["model"], m["N_star"]): m for m in nsr.reference_marks()}
    q60 = marks[("slow_roll_quadratic", 60.0)]
    assert q60["n_s"] == pytest.approx(1 - 2 / 60.5) and q60["r"] == pytest.approx(8 / 60.5)
    s50 = marks[("slow_roll_starobinsky", 50.0)]
    assert s50["n_s"] == pytest.approx(1 - 2 / 50) and s50["r"] == pytest.approx(12 / 2500)


def test_refined_map_finds_a_circular_boundary_with_fewer_evaluations():
    # the exact classification of a disk x^2 + y^2 < 0.5 on [-1, 1]^2; the second entry is
    # a signed distance from the circle (a set's chi2 minus its threshold)
    calls = []

    def evaluate(x: float, y: float) -> np.ndarray:
        calls.append((x, y))
        d = x * x + y * y - 0.5
        return np.array([float(d > 0), d])

    m = exclusion.refined_map(evaluate, (-1.0, 1.0), (-1.0, 1.0), grid=9, refine=3, width=2)
    n = 8 * 2**3 + 1
    assert m["status"].shape == (n, n, 2) and len(m["x"]) == n
    xx, yy = np.meshgrid(m["x"], m["y"])
    exact = (xx**2 + yy**2 - 0.5 > 0).astype(float)
    assert np.array_equal(m["status"][:, :, 0], exact)
    assert np.array_equal(np.sign(m["status"][:, :, 1]), np.sign(xx**2 + yy**2 - 0.5))
    assert m["evaluations"] == len(calls) < 0.5 * n * n


def test_triangle_keeps_the_quantities_that_decide_the_verdict():
    rng = np.random.default_rng(0)
    n_star = rng.uniform(50, 60, 500)
    frame = pd.DataFrame({"N_star": n_star, "ln_1e10_As": rng.normal(3.044, 0.014, 500),
                          "n_s": 1 - 2 / (n_star + 0.5), "r": 8 / (n_star + 0.5),
                          "twice_n_s": 2 * (1 - 2 / (n_star + 0.5)),
                          "flag": (n_star > 55).astype(float)})
    names = triangle.triangle_parameters(frame, ["N_star", "ln_1e10_As"],
                                         ["n_s", "r", "twice_n_s", "flag"],
                                         ["ln_1e10_As", "n_s", "r"])
    # r and n_s stay although each is a function of N_star; a linear copy of a shown
    # parameter and an indicator do not
    assert names == ["N_star", "ln_1e10_As", "n_s", "r"]
