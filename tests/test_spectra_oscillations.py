"""The period-mean protocol: tables that carry their means, tables that zigzag, the view."""

import numpy as np
import pytest

from bouncelike.spectra import PowerLawSpectra, TabulatedSpectra
from bouncelike.spectra.oscillations import (
    PeriodMeanView,
    averaged_power,
    running_mean,
    split_rows,
    zigzag_rows,
)
from bouncelike.spectra.summary import fit_summary

K = np.geomspace(1e-5, 1.0, 600)
BASE = PowerLawSpectra(3.044, 0.9649, r=0.01)


def _oscillating(rows_per_period: float, amplitude: float = 0.5) -> np.ndarray:
    i = np.arange(len(K))
    return BASE.scalar(K) * (1 + amplitude * np.cos(2 * np.pi * i / rows_per_period + 0.3))


def test_zigzag_detection():
    # a smooth spectrum and a resolved oscillation (>= 4 rows per period, Nyquist with margin)
    # are left alone; 2.5 or 3 rows per period zigzag
    assert not zigzag_rows(np.log(BASE.scalar(K))).any()
    assert not zigzag_rows(np.log(_oscillating(8.0))).any()
    assert not zigzag_rows(np.log(_oscillating(5.0))).any()
    assert zigzag_rows(np.log(_oscillating(3.0))).mean() > 0.95
    assert zigzag_rows(np.log(_oscillating(2.5))).mean() > 0.95
    # round-off wiggles below the floor are not oscillation
    wiggle = np.log(BASE.scalar(K)) + 1e-5 * (-1.0) ** np.arange(len(K))
    assert not zigzag_rows(wiggle).any()


def test_running_mean_recovers_the_period_mean():
    # an aliased cosine (2.5 rows per period) averages to the underlying power law: the mean of
    # cos over whole periods vanishes (textbook); the triangle of 8 rows holds 3.2 periods
    p = _oscillating(2.5, amplitude=0.8)
    rows = zigzag_rows(np.log(p))
    smooth = running_mean(np.log(K), p, rows, 8 * np.log(K[1] / K[0]))
    inner = slice(20, -20)
    assert np.max(np.abs(smooth[inner] / BASE.scalar(K)[inner] - 1)) < 0.01
    # rows that do not zigzag are untouched
    q = BASE.scalar(K).copy()
    np.testing.assert_array_equal(running_mean(np.log(K), q, np.zeros(len(K), bool), 1.0), q)


def test_table_with_means_switches_at_the_resolution():
    # period 0.2 in ln k: 10 table rows (spacing 0.019), so the table resolves it
    period = 0.2 * np.ones_like(K)
    pointwise = _oscillating(10.0)
    mean = BASE.scalar(K)
    table = TabulatedSpectra(K, pointwise, BASE.tensor(K), period_mean=(mean, BASE.tensor(K)),
                             oscillation_period=period)
    kq = K[100:110]
    ps_fine, _ = table.averaged_power(kq, 0.1)     # resolved: pointwise
    ps_coarse, _ = table.averaged_power(kq, 0.3)   # unresolved: period mean
    # a period shorter than 4 table rows counts as unresolved whatever the consumer asks
    coarse_table = TabulatedSpectra(K, pointwise, BASE.tensor(K),
                                    period_mean=(mean, BASE.tensor(K)),
                                    oscillation_period=0.05 * np.ones_like(K))
    np.testing.assert_allclose(coarse_table.averaged_power(kq, 0.01)[0], mean[100:110],
                               rtol=1e-12)
    np.testing.assert_allclose(ps_fine, pointwise[100:110], rtol=1e-12)
    np.testing.assert_allclose(ps_coarse, mean[100:110], rtol=1e-12)
    np.testing.assert_allclose(averaged_power(table, kq, None)[0], mean[100:110], rtol=1e-12)
    # objects without the protocol are evaluated pointwise
    np.testing.assert_allclose(averaged_power(BASE, kq, 0.1)[0], BASE.scalar(kq), rtol=1e-14)


def test_period_mean_view_feeds_the_summary():
    # the view of a zigzagging table gives the power law's numbers back at the pivot
    p = _oscillating(2.5, amplitude=0.8)
    table = TabulatedSpectra(K, p, BASE.tensor(K) * p / BASE.scalar(K))
    view = PeriodMeanView(table)
    s = fit_summary(view, 0.002)
    assert s.ln_1e10_As == pytest.approx(BASE.summary_at(0.002).ln_1e10_As, abs=0.02)
    # both fields carry the same oscillation: their ratio is smooth, r exact to the fit
    assert s.rms_ratio < 1e-4 and s.rms_scalar < 0.01
    assert s.r == pytest.approx(BASE.summary_at(0.002).r, rel=0.02)
    assert view.k_min == table.k_min and "unresolved oscillation" in table.oscillation_note()


def test_split_rows_only_for_plain_tables():
    table = TabulatedSpectra(K, BASE.scalar(K), BASE.tensor(K))
    even, odd = split_rows(table)
    assert even.k[0] == odd.k[0] == K[0] and even.k[-1] == odd.k[-1] == K[-1]
    assert len(even.k) + len(odd.k) == len(K) + 2
    with_means = TabulatedSpectra(K, BASE.scalar(K), BASE.tensor(K),
                                  period_mean=(BASE.scalar(K), BASE.tensor(K)))
    assert split_rows(with_means) is None and split_rows(BASE) is None
