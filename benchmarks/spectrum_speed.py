"""Speed of the bounce spectrum: 200 wavenumbers (tensor + scalar) vs a per-mode baseline.

Background: quadratic inflaton (m = 1.2e-6) through an effective LQC bounce (rho_c = 0.40937,
phi_B = 1), the scenario of examples/bounce_features_quadratic.toml. Our method: symplectic
numba integration plus WKB jumps (bouncelike.perturbations.modes). Baseline: scipy solve_ivp
(DOP853, rtol 1e-9, atol 1e-14 relative to the mode size, Python right-hand side) per mode, on
the same background splines, from the same initial state to the same freeze-out time, for a
10-mode subset log-spaced over 0.01-10 k_LQC (above that a step-by-step integration through
~1e5-1e6 oscillations per mode takes minutes each). Prints times, the ratio on the subset and the
largest relative difference of the spectra there.

Run: python3 benchmarks/spectrum_speed.py
"""

from __future__ import annotations

import math
import sys
import time
from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp
from scipy.interpolate import CubicSpline

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from bouncelike.background.potentials import Quadratic  # noqa: E402
from bouncelike.perturbations.background import integrate_background  # noqa: E402
from bouncelike.perturbations.modes import ModeSolver  # noqa: E402
from bouncelike.perturbations.prescriptions import mode_system  # noqa: E402
from bouncelike.perturbations.spectra import bounce_spectra  # noqa: E402
from bouncelike.perturbations.states import make_state  # noqa: E402
from bouncelike.units import critical_density  # noqa: E402


def baseline_mode(solver: ModeSolver, k: float) -> float:
    """One mode by solve_ivp with a Python right-hand side (x, pi as 4 real components)."""
    form = solver.system.forms[0]
    t = solver.t
    L = CubicSpline(t, solver.system.table.ln_a)
    PA, PB2, PB0 = (CubicSpline(t, y) for y in (form.PA, form.PB2, form.PB0))
    i0, x0, p0, _ = make_state("remote_past")(solver, k)
    i_end, _ = solver.end_index(k)
    k2 = k * k

    def rhs(tt, y):
        ll = float(L(tt))
        A = math.exp(-3 * ll) * float(PA(tt))
        B = k2 * math.exp(ll) * float(PB2(tt)) + math.exp(3 * ll) * float(PB0(tt))
        return [A * y[2], A * y[3], -B * y[0], -B * y[1]]

    y0 = [x0.real, x0.imag, p0.real, p0.imag]
    scale = np.abs(y0).max()
    sol = solve_ivp(rhs, (t[i0], t[i_end]), y0, method="DOP853", rtol=1e-9,
                    atol=1e-14 * scale)
    x = complex(sol.y[0, -1], sol.y[1, -1])
    return k**3 * form.amp[i_end] * abs(x) ** 2


def main() -> None:
    rc = critical_density()
    pot = Quadratic(mass=1.2e-6)
    t0 = time.perf_counter()
    tab = integrate_background(pot, rc, 1.0, math.sqrt(2 * (rc - float(pot.V(1.0)))),
                               past_density=1e-11)
    t_bg = time.perf_counter() - t0
    ks = np.geomspace(0.01, 100, 200) * tab.k_lqc
    bounce_spectra(tab, ks[:2])  # compile (numba cache) outside the timing
    t0 = time.perf_counter()
    sp = bounce_spectra(tab, ks)
    t_ours = time.perf_counter() - t0
    print(f"background table: {t_bg:.2f} s ({len(tab.t)} nodes)")
    print(f"200-wavenumber tensor+scalar spectrum over 0.01-100 k_LQC: {t_ours:.2f} s "
          f"(target <= 5 s); max Wronskian error {sp.max_wronskian_error:.1e}")

    sub = np.geomspace(0.01, 10, 10) * tab.k_lqc
    solver = ModeSolver(mode_system(tab, "tensor", "dressed_metric"))
    solver.solve(sub[:1], make_state("remote_past"))
    t0 = time.perf_counter()
    ours = solver.solve(sub, make_state("remote_past")).power
    t_sub = time.perf_counter() - t0
    t0 = time.perf_counter()
    base = np.array([baseline_mode(solver, k) for k in sub])
    t_base = time.perf_counter() - t0
    print(f"10-mode tensor subset (0.01-10 k_LQC): ours {t_sub * 1e3:.1f} ms, solve_ivp baseline "
          f"{t_base:.1f} s, ratio {t_base / t_sub:.0f}x (target >= 50x)")
    print(f"largest relative difference ours vs baseline: {np.max(np.abs(ours / base - 1)):.2e}")


if __name__ == "__main__":
    main()
