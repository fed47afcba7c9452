"""Time GaussianLikelihood.log_likelihood for a power law against straightforward baselines.

Fast path: analytic re-expansion of the power law at each pivot, precomputed means and inverse
errors, pure floating-point arithmetic. Baselines in the same run: (a) the same likelihood fed
through the documented polynomial-fit summary (sample the spectra, fit a cubic at each pivot);
(b) the full ``score`` (summary objects, pulls, p-value, notes). Target: <= 50 us per call.

Run: python3 benchmarks/likelihood_speed.py
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from bouncelike.likelihood import GaussianLikelihood  # noqa: E402
from bouncelike.spectra import PowerLawSpectra  # noqa: E402


class FittedOnly:
    """Hides the exact re-expansion so the likelihood must use the polynomial-fit summary."""

    def __init__(self, spectra):
        self._s = spectra

    def scalar(self, k):
        return self._s.scalar(k)

    def tensor(self, k):
        return self._s.tensor(k)


def per_call(func, min_time=0.5):
    n, elapsed = 1, 0.0
    while elapsed < min_time:
        n *= 4
        t0 = time.perf_counter()
        for _ in range(n):
            func()
        elapsed = time.perf_counter() - t0
    best = elapsed / n
    for _ in range(2):  # best of three
        t0 = time.perf_counter()
        for _ in range(n):
            func()
        best = min(best, (time.perf_counter() - t0) / n)
    return best


def main() -> None:
    cases = {
        "planck2018_base + bk18 (one pivot)": ["planck2018_base", "bk18"],
        "running_of_running + planck2018_bk15 (two pivots)": [
            "planck2018_running_of_running",
            "planck2018_bk15",
        ],
    }
    p = PowerLawSpectra(3.05, 0.965, running=-0.003, running_of_running=0.002, r=0.02)
    print(f"{'case':52s} {'fast [us]':>10s} {'fit [us]':>10s} {'ratio':>7s} "
          f"{'score [us]':>11s} {'ratio':>7s}")
    for label, names in cases.items():
        like = GaussianLikelihood.from_names(names)
        wrapped = FittedOnly(p)
        fast = per_call(lambda like=like: like.log_likelihood(p))
        fit = per_call(lambda like=like, w=wrapped: like.log_likelihood(w), min_time=0.3)
        full = per_call(lambda like=like: like.score(p), min_time=0.3)
        diff = abs(like.log_likelihood(p) - like.log_likelihood(wrapped))
        print(f"{label:52s} {fast * 1e6:10.2f} {fit * 1e6:10.1f} {fit / fast:7.0f} "
              f"{full * 1e6:11.1f} {full / fast:7.0f}   |dlnL| = {diff:.1e}")
    print("target: fast path <= 50 us per call")


if __name__ == "__main__":
    main()
