"""The cached transfer table: TransferTable, its build from calibration backgrounds, loading,
and the certified ranges (measured accuracy: :mod:`.transfer`)."""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import NumericalFailure
from .prescriptions import euclidean_growth_rate
from .transfer_decomposition import (
    FIELDS,
    X_GRID,
    _theta,
    _tilt,
    _tilt_basis,
    decompose,
)

# calibration backgrounds: phi_B = 1.2 and masses chosen to span D ~ 2.5e3 - 1.4e4
# (the rows of the quadratic family, transfer_backgrounds.FAMILIES)
CALIBRATION_MASSES = tuple(float(m) for m in np.geomspace(0.45e-6, 6.5e-6, 9))
CALIBRATION_PHI_B = 1.2
# further bounce fields at the same masses: fit of the tilt dependence of theta (TILT_BASIS)
TILT_PHI_B = (0.7, 1.8, 2.5)
DATA = Path(__file__).with_name("data")
UV_ANCHOR = 100.0  # deformed algebra: above this x the WKB growth carries T (see _smooth)


@dataclass(frozen=True)
class TransferTable:
    prescription: str
    state: str
    x: np.ndarray
    d_grid: np.ndarray                 # D of the calibration backgrounds (increasing)
    ln_alpha: dict                     # field -> (nD, nx)
    ln_rho: dict                       # field -> (nD, nx)
    theta: dict                        # field -> (nD, nx), unwrapped along x
    growth_per_x: float                # d ln T / dx beyond the grid (deformed algebra); 0 else
    tilt0: dict | None = None          # field -> (nD,) tilt of the calibration rows
    tilt_coef: dict | None = None      # field -> (nbasis, nx): theta correction per basis term
    tilt_range: dict | None = None     # field -> (lo, hi) tilts of the calibration backgrounds
    sign_convention: str = "fixed_slow_roll"  # dressed-metric scalar potential it was built with
    family: str = "quadratic"          # potential of the calibration backgrounds
    fraction_range: tuple | None = None  # (lo, hi) V_B/rho_c of the calibration backgrounds
    x_state_min: float = float(X_GRID[0])  # smallest x where the state is set on every row

    @property
    def d_range(self) -> tuple[float, float]:
        return float(self.d_grid[0]), float(self.d_grid[-1])

    def _weights(self, duration: float | None) -> tuple[int, float]:
        if duration is None:
            duration = math.sqrt(self.d_grid[0] * self.d_grid[-1])
        ld = math.log(min(max(duration, self.d_grid[0]), self.d_grid[-1]))
        lgd = np.log(self.d_grid)
        j = int(np.clip(np.searchsorted(lgd, ld) - 1, 0, len(lgd) - 2))
        return j, float((ld - lgd[j]) / (lgd[j + 1] - lgd[j]))

    def _smooth(self, f: str, lx: np.ndarray, duration: float | None,
                tilt: float | None = None):
        """ln|alpha|, ln rho, theta at ln x, interpolated in ln D, and the growth G of ln T.

        Below the grid the edge values are held. Deformed algebra: above UV_ANCHOR (100 k_LQC)
        the values at the anchor are held and ln T grows by G = growth x (x - UV_ANCHOR), the
        WKB exponent (the same for both fields); G is returned apart so that callers can
        subtract a common cap without losing the tensor/scalar ratio. Dressed metric: rho = 0
        above the grid, G = 0.
        """
        lg = np.log(self.x)
        top = math.log(UV_ANCHOR) if self.growth_per_x else lg[-1]
        lxc = np.clip(lx, lg[0], top)
        j, w = self._weights(duration)

        def row(a):
            return (1 - w) * np.interp(lxc, lg, a[j]) + w * np.interp(lxc, lg, a[j + 1])

        if self.growth_per_x:
            # ln|alpha| ~ growth x / 2 in the ultraviolet: interpolate the rest (linear in ln x
            # would be off by growth x (d ln x)^2 / 8 ~ 1% at 100 k_LQC on X_GRID)
            wkb = 0.5 * self.growth_per_x * self.x
            la = row(self.ln_alpha[f] - wkb) + 0.5 * self.growth_per_x * np.exp(lxc)
        else:
            la = row(self.ln_alpha[f])
        lr, th = row(self.ln_rho[f]), row(self.theta[f])
        if tilt is not None and self.tilt_coef is not None and duration is not None:
            # theta also depends on the tilt at equal D (how the kinetic era turns into
            # inflation): least-squares correction in dt = tilt - tilt0(D), tilt clipped to
            # the calibrated range
            lo, hi = self.tilt_range[f]
            t0 = (1 - w) * self.tilt0[f][j] + w * self.tilt0[f][j + 1]
            dt = min(max(float(np.mean(tilt)), lo), hi) - t0
            ld = math.log(min(max(duration, self.d_grid[0]), self.d_grid[-1]))
            basis = _tilt_basis(np.array(ld), np.array(dt))
            coef = self.tilt_coef[f]
            th = th + np.sum([b * np.interp(lxc, lg, c) for b, c in zip(basis, coef,
                                                                        strict=True)], axis=0)
        growth = np.zeros_like(la)
        above = lx > top
        if self.growth_per_x:
            xe = np.exp(np.minimum(lx, 700.0))
            growth = np.where(above, self.growth_per_x * (xe - UV_ANCHOR), 0.0)
        else:
            lr = np.where(above, -np.inf, lr)
        return la, lr, th, growth

    def ln_transfer(self, x, duration: float, tilt: dict, average_below: float | None = None,
                    split: bool = False) -> dict:
        """ln T per field at x = k/k_LQC for a background of conformal duration D.

        ``tilt``: {"scalar": n_s - 1, "tensor": n_t}. Below the grid the edge values are held
        (uncertified; flagged by the fast model). With ``average_below`` (a spacing in ln x),
        points whose oscillation period pi/(x D) in x is shorter than that many grid spacings
        get the period-averaged T = |alpha|^2 (1 + rho^2) instead of the pointwise value.
        ``split``: return the common growth G apart (key "growth"; fields without it).
        """
        lx = np.log(np.asarray(x, dtype=float))
        xe = np.exp(np.minimum(lx, 700.0))
        out = {}
        for f in FIELDS:
            la, lr, th, growth = self._smooth(f, lx, duration, tilt[f])
            rho = np.exp(lr)
            with np.errstate(invalid="ignore", over="ignore"):
                phi = (np.mod(2 * xe * duration, 2 * math.pi) - math.pi
                       + tilt[f] * math.pi / 2 + th)
            mod = np.abs(1 + rho * np.exp(1j * np.nan_to_num(phi))) ** 2
            if average_below is not None:
                unresolved = math.pi / (xe * duration) < average_below * xe
                mod = np.where(unresolved, 1 + rho**2, mod)
            out[f] = 2 * la + np.log(np.maximum(mod, 1e-300)) + (0.0 if split else growth)
            out["growth"] = growth
        return out

    def ln_mean_transfer(self, x, duration: float | None = None, split: bool = False) -> dict:
        """ln of the period-averaged T = |alpha|^2 (1 + rho^2) (D None: mid-range D)."""
        lx = np.log(np.asarray(x, dtype=float))
        out = {}
        for f in FIELDS:
            la, lr, _, growth = self._smooth(f, lx, duration)
            out[f] = 2 * la + np.log1p(np.exp(2 * lr)) + (0.0 if split else growth)
            out["growth"] = growth
        return out

    @property
    def uv_tensor_scalar_log_ratio(self) -> float:
        """ln(T_t/T_s) of the period-averaged transfers in the ultraviolet (median, 10-50 k_LQC).

        Zero for the dressed metric. For the deformed algebra both fields grow with the same
        exponent exp(2 k int sqrt(-Omega) d eta) (the same Omega k^2 term), so the ratio tends
        to a constant set by the prefactors (measured: 0.11 at 10, 0.04 at 30, 0.005 at 100
        k_LQC; median 0.05).
        """
        sel = (self.x >= 10) & (self.x <= 50)
        m = self.ln_mean_transfer(self.x[sel])
        return float(np.median(m["tensor"] - m["scalar"]))

    def save(self, path: Path) -> None:
        np.savez_compressed(
            path, x=self.x, d_grid=self.d_grid, growth=self.growth_per_x,
            meta=np.array([self.prescription, self.state, self.sign_convention, self.family]),
            x_state_min=self.x_state_min,
            **({} if self.fraction_range is None else
               {"fraction_range": np.asarray(self.fraction_range, dtype=float)}),
            **{f"{q}_{f}": getattr(self, q)[f] for q in ("ln_alpha", "ln_rho", "theta")
               for f in FIELDS},
            **({} if self.tilt_coef is None else {
                f"{q}_{f}": np.asarray(getattr(self, q)[f], dtype=float)
                for q in ("tilt0", "tilt_coef", "tilt_range") for f in FIELDS}))


def table_path(prescription: str, state: str, family: str = "quadratic") -> Path:
    """data/transfer_<prescription>_<state>[_<family>].npz (no suffix for quadratic)."""
    suffix = "" if family == "quadratic" else f"_{family}"
    return DATA / f"transfer_{prescription}_{state}{suffix}.npz"


def _state_x_min(decs: list) -> float:
    """Smallest grid x above which the state met the remote-past tolerance on every
    calibration row (the rows that carry |alpha|, rho and theta; states set at the bounce
    report NaN: always met). The tilt rows only correct theta and are not counted (on the
    quadratic family the heaviest of them, m = 6.5e-6 with phi_B != 1.2, miss the tolerance
    at 0.01-0.012 k_LQC by a little; the certificate measures what that costs)."""
    from .states import REMOTE_PAST_TOLERANCE

    ad = np.array([np.nan_to_num(d.start_adiabaticity, nan=0.0)
                   if d.start_adiabaticity is not None else np.zeros(len(d.x)) for d in decs])
    bad = np.nonzero(np.any(ad > REMOTE_PAST_TOLERANCE, axis=0))[0]
    if not len(bad):
        return float(X_GRID[0])
    if bad[-1] + 1 >= len(X_GRID):
        raise NumericalFailure("transfer: the state is not set anywhere on the grid")
    return float(X_GRID[bad[-1] + 1])


def build_transfer(prescription: str = "dressed_metric", state: str = "remote_past",
                   show_progress: bool = False, family: str = "quadratic") -> TransferTable:
    """Exact decompositions on the calibration backgrounds of ``family`` -> cache."""
    from ..progress import progress
    from .transfer_backgrounds import family as background_family

    fam = background_family(family)
    rows = {f: [] for f in FIELDS}
    extra = {f: [] for f in FIELDS}
    durations = []
    grid = list(fam.calibration)
    if prescription == "dressed_metric":
        grid += list(fam.tilt_rows)
    for p, q in progress(grid, total=len(grid), desc=f"calibration ({family})",
                         enabled=show_progress):
        main_row = (p, q) in fam.calibration
        try:
            tab = fam.background(p, q)
            decs = {f: decompose(tab, X_GRID, f, prescription, state) for f in FIELDS}
        except NumericalFailure:
            if main_row:
                raise
            continue  # the state cannot be set at the default past density there
        for f in FIELDS:
            (rows if main_row else extra)[f].append(decs[f])
        if main_row:
            durations.append(decs["scalar"].duration)
    order = np.argsort(durations)
    d_grid = np.array(durations)[order]
    ln_alpha, ln_rho, theta = {}, {}, {}
    tilt0, tilt_coef, tilt_range = {}, {}, {}
    for f in FIELDS:
        decs = [rows[f][i] for i in order]
        ln_alpha[f] = np.array([d.ln_alpha for d in decs])
        ln_rho[f] = np.log(np.maximum(np.array([d.rho for d in decs]), 1e-300))
        tilts = np.array([_tilt(d.x, d.ln_standard)[0] for d in decs])
        ths = np.array([_theta(d, np.full(len(d.x), t)) for d, t in zip(decs, tilts,
                                                                         strict=True)])
        # unwrap along x, then align every row with the first (same branch)
        ths = np.unwrap(ths, axis=1)
        ths -= 2 * math.pi * np.round((ths - ths[0]) / (2 * math.pi))
        theta[f] = ths
        tilt0[f] = tilts
        if extra[f]:
            base = TransferTable(prescription, state, X_GRID.copy(), d_grid, ln_alpha, ln_rho,
                                 theta, 0.0)
            lg = np.log(X_GRID)
            A, R = [], []
            inside = [d for d in extra[f] if d_grid[0] <= d.duration <= d_grid[-1]]
            for d in inside:
                t = _tilt(d.x, d.ln_standard)[0]
                _, _, th0, _ = base._smooth(f, lg, d.duration)
                j, w = base._weights(d.duration)
                r = _theta(d, np.full(len(d.x), t)) - th0
                R.append(np.angle(np.exp(1j * r)))
                A.append(_tilt_basis(np.array(math.log(d.duration)),
                                     np.array(t - ((1 - w) * tilts[j] + w * tilts[j + 1]))))
            tilt_coef[f] = np.linalg.lstsq(np.array(A), np.array(R), rcond=None)[0]
            alltilts = [*tilts, *(_tilt(d.x, d.ln_standard)[0] for d in inside)]
            tilt_range[f] = (float(min(alltilts)), float(max(alltilts)))
    growth = 0.0
    if prescription == "deformed_algebra":
        tab = fam.background(*fam.calibration[0])
        growth = euclidean_growth_rate(tab) * tab.k_lqc
    from .prescriptions import DEFAULT_SIGN_CONVENTION

    return TransferTable(prescription, state, X_GRID.copy(), d_grid, ln_alpha, ln_rho, theta,
                         growth, *((tilt0, tilt_coef, tilt_range) if tilt_coef else
                                   (None, None, None)),
                         "classical" if prescription == "deformed_algebra"
                         else DEFAULT_SIGN_CONVENTION, family,
                         fam.fraction_range(),
                         _state_x_min([*rows["scalar"], *rows["tensor"]]))


@functools.lru_cache(maxsize=8)
def load_transfer(prescription: str = "dressed_metric", state: str = "remote_past",
                  family: str = "quadratic") -> TransferTable:
    """The shipped cache (bouncelike/perturbations/data/), built on the fly when absent."""
    path = table_path(prescription, state, family)
    if path.is_file():
        d = np.load(path)
        if "d_grid" in d:
            # tables written before the sign convention was recorded used "fixed_slow_roll"
            meta = [str(v) for v in d["meta"]]
            tilt = (({f: d[f"tilt0_{f}"] for f in FIELDS},
                     {f: d[f"tilt_coef_{f}"] for f in FIELDS},
                     {f: tuple(d[f"tilt_range_{f}"]) for f in FIELDS})
                    if "tilt_coef_scalar" in d else (None, None, None))
            return TransferTable(prescription, state, d["x"], d["d_grid"],
                                 {f: d[f"ln_alpha_{f}"] for f in FIELDS},
                                 {f: d[f"ln_rho_{f}"] for f in FIELDS},
                                 {f: d[f"theta_{f}"] for f in FIELDS}, float(d["growth"]),
                                 *tilt, meta[2] if len(meta) > 2 else "fixed_slow_roll",
                                 meta[3] if len(meta) > 3 else "quadratic",
                                 tuple(d["fraction_range"]) if "fraction_range" in d else None,
                                 float(d["x_state_min"]) if "x_state_min" in d
                                 else float(X_GRID[0]))
    return build_transfer(prescription, state, family=family)


# k/k_LQC intervals where the period-averaged transfer met 1% in ``bouncelike transfer-check
# --backgrounds 6 --points 60 --seed 11`` (with --state, --potential and, for the remote-past
# state on Starobinsky bounces, --x-min 0.363; measured errors in transfer.py). Infrared edge
# 0.01 k_LQC on the quadratic family: there every inflaton mass up to 6.5e-6 reaches the
# remote-past tolerance rate/W <= 0.05 in its kinetic contracting era (states.py); the state is
# the adiabatic vacuum of that era, not of any earlier contracting history. The fourth-order
# adiabatic state exists at the bounce only above ~3.8 k_LQC; below, that name gives the
# remote-past state (states.py), certified alike. Where a range starts above the table's first
# x, the cache does not represent the family there and the fast model refuses windows reaching
# below it, with the reason in FLOOR_REASONS.
CERTIFIED_RANGES = {
    ("dressed_metric", "remote_past", "quadratic"): ((0.01, math.inf),),
    ("deformed_algebra", "remote_past", "quadratic"): ((0.01, 100.0),),
    ("dressed_metric", "bounce_adiabatic4", "quadratic"): ((0.01, math.inf),),
    ("dressed_metric", "non_oscillating", "quadratic"): ((0.01, math.inf),),
    ("dressed_metric", "low_energy", "quadratic"): ((0.01, math.inf),),
    ("dressed_metric", "remote_past", "starobinsky"): ((0.363, math.inf),),
    ("dressed_metric", "bounce_adiabatic4", "starobinsky"): ((0.363, math.inf),),
    ("dressed_metric", "non_oscillating", "starobinsky"): ((0.01, math.inf),),
    ("dressed_metric", "low_energy", "starobinsky"): ((0.1, math.inf),),
    ("deformed_algebra", "remote_past", "starobinsky"): ((3.0, 100.0),),
}
_NOT_SET = ("the remote-past state is not set there (the contracting branch of these bounces "
            "leaves the kinetic era within ~1 e-fold and such modes are never adiabatic in it: "
            "rate/W >= 0.06 at best)")
#: why the cache does not represent its family below the first certified x
FLOOR_REASONS = {
    ("dressed_metric", "remote_past", "starobinsky"): _NOT_SET,
    ("dressed_metric", "bounce_adiabatic4", "starobinsky"): _NOT_SET,
    ("deformed_algebra", "remote_past", "starobinsky"): (
        "deformed-algebra scalars grow by up to e^380 at 0.4-1.5 k_LQC on the steepest of these "
        "bounces (V_B ~ 1e-7 rho_c), a dependence on the background the table does not carry"),
    ("dressed_metric", "low_energy", "starobinsky"): (
        "the state of low energy depends there on the steep side of the potential inside the "
        "bounce window (a^2 U up to ~7e-5 against k^2 ~ 1e-3 at 0.01 k_LQC), which the table "
        "does not carry (errors 7% at 0.01-0.03, 1.2% at 0.03-0.1 k_LQC)"),
}


#: the shipped tables: (prescription, state) for every family of transfer_backgrounds
SHIPPED_TABLES = (("dressed_metric", "remote_past"), ("deformed_algebra", "remote_past"),
                  ("dressed_metric", "bounce_adiabatic4"), ("dressed_metric", "non_oscillating"),
                  ("dressed_metric", "low_energy"))


def certified_ranges(prescription: str, state: str, family: str = "quadratic") -> tuple:
    """k/k_LQC intervals of CERTIFIED_RANGES for this table (empty: not certified)."""
    return CERTIFIED_RANGES.get((prescription, state, family), ())


def represented_floor(table: TransferTable) -> tuple[float, str]:
    """(smallest x the table represents for its whole family, why not below): the first
    certified x where that lies above the table's grid, else the grid's start."""
    key = (table.prescription, table.state, table.family)
    ranges = CERTIFIED_RANGES.get(key, ())
    floor = min((a for a, _ in ranges), default=float(table.x[0]))
    floor = max(floor, table.x_state_min)
    if floor <= float(table.x[0]) * (1 + 1e-9):
        return float(table.x[0]), ""
    return floor, FLOOR_REASONS.get(key, f"the '{table.state}' state is not set there")


def main() -> None:  # pragma: no cover - maintenance entry point
    """Rebuild the shipped caches: python3 -m bouncelike.perturbations.transfer."""
    import time

    from .transfer_backgrounds import FAMILIES

    for fam in FAMILIES:
        for presc, st in SHIPPED_TABLES:
            t0 = time.time()
            t = build_transfer(presc, st, show_progress=True, family=fam)
            path = table_path(presc, st, fam)
            t.save(path)
            print(f"wrote {path.name} ({path.stat().st_size / 1e3:.0f} kB, "
                  f"{time.time() - t0:.0f} s; D grid {t.d_range[0]:.0f}-{t.d_range[1]:.0f}, "
                  f"state set above x = {t.x_state_min:.3g})")
