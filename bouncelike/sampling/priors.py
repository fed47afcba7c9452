"""Prior files for posterior runs: loading, validation, densities and draws.

A prior file is TOML with one ``[prior]`` table and one ``[parameters.<name>]`` table per
parameter of the forward model (see :mod:`bouncelike.models`)::

    [prior]
    model = "power_law"               # forward model this prior belongs to
    title = "Power-law primordial spectra"

    [parameters.n_s]
    role = "sampled"                  # sampled | fixed | derived
    distribution = "uniform"          # uniform | log_uniform | gaussian | efolds_from_phase
    min = 0.85
    max = 1.10
    label = 'n_s'                     # optional: LaTeX without dollar signs (default: the
                                      # model's declaration of the parameter)
    walkers_centre = 0.965            # optional: centre of the ball the walkers start in
    walkers_spread = 0.01             # optional: its standard deviation (reflected at the
                                      # support's bounds); default 1% of the range
    nested_value = 1.0                # optional: value of the nested model (Savage-Dickey)

    [parameters.r]
    role = "fixed"
    value = 0.0

    [parameters.A_s]
    role = "derived"                  # computed by the model, stored with the samples

``gaussian`` takes ``mean`` and ``sigma`` (optional ``min``/``max`` truncate it);
``log_uniform`` needs ``0 < min < max``. ``efolds_from_phase`` is the duration-of-inflation
distribution obtained by evolving a flat prior on the oscillation phase of the contracting
branch through the bounce (physics notes, section 2); it takes ``min``/``max`` and a
``[parameters.<name>.phase]`` sub-table (:mod:`.phase_prior`) handed to
:func:`bouncelike.background.efolds.efolds_distribution` (``potential``, ``mass``,
``dynamics``, ``critical_density``, ``start_density`` and ``start_density_decades`` of the
contracting-branch window where the phase is flat, ``n_samples``, ``seed``). Its density is a
Gaussian kernel density estimate of the computed e-fold samples restricted to ``[min, max]``.

Validated against the model's declared parameters (:class:`bouncelike.config.Parameter`): the
names, the range [min, max] of a sampled parameter and the value of a fixed one must lie in
the declared range (a gaussian prior is truncated to it). Every problem raises
:class:`~bouncelike.errors.InputError` with one line naming the key.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import Any

import numpy as np

from ..config import Parameter, Table, read_toml, tomllib
from ..errors import InputError
from .phase_prior import PHASE_KEYS, RENAMED_PHASE_KEYS, efolds_kde, kde_density

ROLES = ("sampled", "fixed", "derived")
DISTRIBUTIONS = ("uniform", "log_uniform", "gaussian", "efolds_from_phase")
PARAMETER_KEYS = (
    "role", "distribution", "min", "max", "mean", "sigma", "value", "label",
    "walkers_centre", "walkers_spread", "nested_value", "phase",
)
#: Keys of earlier prior files and the keys that replaced them.
RENAMED_KEYS = {"start": "walkers_centre", "start_width": "walkers_spread"}

#: Folder of the prior files shipped with the package (package data, installed with it).
SHIPPED_PRIORS = Path(str(resources.files("bouncelike") / "priors"))


@dataclass(frozen=True)
class ParameterPrior:
    """Prior of one parameter. ``lower``/``upper`` bound the support (may be infinite)."""

    name: str
    role: str
    label: str
    distribution: str | None = None
    lower: float = -math.inf
    upper: float = math.inf
    mean: float | None = None
    sigma: float | None = None
    value: float | None = None
    walkers_centre: float | None = None
    walkers_spread: float | None = None
    nested_value: float | None = None
    kde_points: tuple[float, ...] = ()
    kde_bandwidth: float | None = None
    kde_norm: float | None = None

    # -- densities -----------------------------------------------------------------------
    def log_density(self, x: np.ndarray) -> np.ndarray:
        """Normalised log prior density at ``x`` (-inf outside the support)."""
        x = np.asarray(x, dtype=float)
        inside = (x >= self.lower) & (x <= self.upper)
        out = np.full(x.shape, -np.inf)
        if self.distribution == "uniform":
            out[inside] = -math.log(self.upper - self.lower)
        elif self.distribution == "log_uniform":
            out[inside] = -np.log(x[inside]) - math.log(math.log(self.upper / self.lower))
        elif self.distribution == "gaussian":
            a = (self.lower - self.mean) / self.sigma
            b = (self.upper - self.mean) / self.sigma
            # log of the probability mass inside the truncation
            mass = math.log(max(_ndtr(b) - _ndtr(a), 1e-300))
            z = (x[inside] - self.mean) / self.sigma
            out[inside] = -0.5 * z * z - math.log(self.sigma * math.sqrt(2 * math.pi)) - mass
        elif self.distribution == "efolds_from_phase":
            dens = kde_density(x[inside], self.kde_points, self.kde_bandwidth)
            with np.errstate(divide="ignore"):
                out[inside] = np.log(dens / self.kde_norm)
        return out

    def draw(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """``n`` independent draws from the prior (inside the support)."""
        if self.distribution == "uniform":
            return rng.uniform(self.lower, self.upper, n)
        if self.distribution == "log_uniform":
            return np.exp(rng.uniform(math.log(self.lower), math.log(self.upper), n))
        if self.distribution == "gaussian":
            from scipy.special import ndtri

            a, b = (self.lower - self.mean) / self.sigma, (self.upper - self.mean) / self.sigma
            u = rng.uniform(_ndtr(a), _ndtr(b), n)
            return np.clip(self.mean + self.sigma * ndtri(u), self.lower, self.upper)
        # efolds_from_phase: resample the computed e-folds, smoothed by the kernel
        pts = np.asarray(self.kde_points)
        out = np.empty(n)
        filled = 0
        while filled < n:
            x = rng.choice(pts, n) + self.kde_bandwidth * rng.standard_normal(n)
            x = x[(x >= self.lower) & (x <= self.upper)]
            take = min(n - filled, x.size)
            out[filled:filled + take] = x[:take]
            filled += take
        return out

    def as_dict(self) -> dict[str, Any]:
        d = {
            "name": self.name, "role": self.role, "label": self.label,
            "distribution": self.distribution,
            "min": self.lower if math.isfinite(self.lower) else None,
            "max": self.upper if math.isfinite(self.upper) else None,
            "mean": self.mean, "sigma": self.sigma, "value": self.value,
            "walkers_centre": self.walkers_centre, "walkers_spread": self.walkers_spread,
            "nested_value": self.nested_value,
        }
        return {k: v for k, v in d.items() if v is not None}


def _ndtr(x: float) -> float:
    return 0.5 * math.erfc(-x / math.sqrt(2.0))


@dataclass(frozen=True)
class Prior:
    """The prior of a posterior run: one :class:`ParameterPrior` per parameter."""

    model: str
    title: str
    parameters: tuple[ParameterPrior, ...]
    source: str = ""
    text: str = field(default="", repr=False)

    @property
    def sampled(self) -> tuple[ParameterPrior, ...]:
        return tuple(p for p in self.parameters if p.role == "sampled")

    @property
    def sampled_names(self) -> tuple[str, ...]:
        return tuple(p.name for p in self.sampled)

    @property
    def derived_names(self) -> tuple[str, ...]:
        return tuple(p.name for p in self.parameters if p.role == "derived")

    @property
    def fixed(self) -> dict[str, float]:
        return {p.name: p.value for p in self.parameters if p.role == "fixed"}

    @property
    def ndim(self) -> int:
        return len(self.sampled)

    def get(self, name: str) -> ParameterPrior:
        for p in self.parameters:
            if p.name == name:
                return p
        raise KeyError(name)

    def labels(self) -> dict[str, str]:
        return {p.name: p.label for p in self.parameters}

    def bounds(self) -> np.ndarray:
        return np.array([[p.lower, p.upper] for p in self.sampled])

    def log_prior(self, theta: np.ndarray) -> float:
        """Joint log prior density of one point of the sampled parameters."""
        total = 0.0
        for p, x in zip(self.sampled, theta, strict=False):
            if not (p.lower <= x <= p.upper):
                return -math.inf
            if p.distribution == "uniform":
                total -= math.log(p.upper - p.lower)
            else:
                total += float(p.log_density(np.array([x]))[0])
        return total

    def draw(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """``n`` joint prior draws, shape (n, ndim)."""
        return np.column_stack([p.draw(rng, n) for p in self.sampled]) if self.ndim else (
            np.empty((n, 0)))

    def initial_walkers(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """Starting points inside the support: a ball around ``walkers_centre`` where given,
        else prior draws."""
        cols = []
        for p in self.sampled:
            if p.walkers_centre is None:
                cols.append(p.draw(rng, n))
                continue
            width = p.walkers_spread if p.walkers_spread is not None else (
                0.01 * (p.upper - p.lower) if math.isfinite(p.upper - p.lower) else 1e-3)
            x = p.walkers_centre + width * rng.standard_normal(n)
            # reflect at the bounds (no two walkers piled up on an edge), then clip what a
            # ball wider than the support still leaves outside
            if math.isfinite(p.lower):
                x = np.where(x < p.lower, 2 * p.lower - x, x)
            if math.isfinite(p.upper):
                x = np.where(x > p.upper, 2 * p.upper - x, x)
            cols.append(np.clip(x, p.lower, p.upper))
        return np.column_stack(cols)

    def full_parameters(self, theta: np.ndarray) -> dict[str, float]:
        """Sampled values plus fixed values, as the forward model expects them."""
        params = dict(self.fixed)
        for p, x in zip(self.sampled, theta, strict=False):
            params[p.name] = float(x)
        return params

    def as_dict(self) -> dict[str, Any]:
        return {
            "model": self.model, "title": self.title, "source": self.source,
            "parameters": [p.as_dict() for p in self.parameters],
        }


# -- loading ------------------------------------------------------------------------------

def resolve_prior_path(name: str, base: Path | None = None) -> Path:
    """A prior file given as a path (relative to ``base``) or as a shipped prior's name."""
    candidates = []
    p = Path(name)
    if base is not None and not p.is_absolute():
        candidates.append(base / p)
    candidates.append(p)
    stem = p.name if p.suffix == ".toml" else p.name + ".toml"
    candidates.append(SHIPPED_PRIORS / stem)
    for c in candidates:
        if c.is_file():
            return c
    shipped = ", ".join(sorted(x.stem for x in SHIPPED_PRIORS.glob("*.toml")))
    raise InputError(f"prior file '{name}' not found; give a path or one of: {shipped}")


def load_prior(path: str | Path, model: Any = None, **kw: Any) -> Prior:
    """Read and validate a prior file (for ``model``, a registered forward model: its
    declared parameters, derived numbers and :meth:`check_prior`; see :func:`parse_prior`)."""
    path = Path(path)
    data = read_toml(path, "prior file")
    return parse_prior(data, str(path), path.read_text(encoding="utf-8"), model, **kw)


def prior_from_text(text: str, source: str = "<text>", model: Any = None, **kw: Any) -> Prior:
    """A prior from the text of a prior file (as stored in a run's manifest; pass
    ``renamed_keys_allowed=True`` to read the keys of earlier prior files)."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"prior file '{source}' is not valid TOML: {exc}") from None
    return parse_prior(data, source, text, model, **kw)


def parse_prior(data: dict[str, Any], source: str, text: str = "", model: Any = None,
                model_parameters: tuple[Parameter | str, ...] | None = None,
                derived_parameters: tuple[Parameter | str, ...] | None = None,
                optional_parameters: tuple[str, ...] = (),
                renamed_keys_allowed: bool = False) -> Prior:
    """Validate the parsed contents of a prior file.

    Parameters
    ----------
    model : a forward model (:class:`bouncelike.models.base.ForwardModel`); gives the three
        lists below and its own ``check_prior``.
    model_parameters : when given, every sampled or fixed parameter must be one of these and
        each of them must appear in the file (declarations also bound the ranges and give the
        default labels).
    derived_parameters : when given, every derived parameter must be one of these.
    optional_parameters : model parameters the file may leave out.
    renamed_keys_allowed : read the keys of earlier prior files under their new names (a
        prior text stored in the manifest of an earlier run).
    """
    if model is not None:
        model_parameters = tuple(model.parameters)
        derived_parameters = tuple(model.derived_parameters)
        optional_parameters = tuple(model.optional_parameter_names)
    declared = {d.name: d for d in (*(model_parameters or ()), *(derived_parameters or ()))
                if isinstance(d, Parameter)}
    model_names = None if model_parameters is None else tuple(
        d.name if isinstance(d, Parameter) else d for d in model_parameters)
    derived_names = None if derived_parameters is None else tuple(
        d.name if isinstance(d, Parameter) else d for d in derived_parameters)
    path = source
    top = Table(data, "", ("prior", "parameters"))
    head = top.table("prior", ("model", "title", "description"), required=True)
    model_name = head.string("model")
    title = head.string("title", "")
    head.string("description", "")
    raw = top.raw("parameters")
    if not isinstance(raw, dict):
        raise InputError(f"prior file '{path}': missing table '[parameters]' (one sub-table per "
                         "parameter)")
    names = list(raw)
    if not names:
        raise InputError(f"prior file '{path}': [parameters] is empty; give one table per "
                         "parameter")
    params_tab = top.table("parameters", names, required=True)
    for n in names:  # names first: a misspelt parameter is named as such
        role = raw[n].get("role") if isinstance(raw[n], dict) else None
        if role in ("sampled", "fixed") and model_names is not None and n not in model_names:
            raise InputError(
                f"'parameters.{n}' is not a parameter of model '{model_name}'; allowed: "
                f"{', '.join(model_names)}")
    params = tuple(_parameter(_renamed(params_tab, n, renamed_keys_allowed), n, declared.get(n))
                   for n in names)
    if not any(p.role == "sampled" for p in params):
        raise InputError(f"prior file '{path}': no parameter has role = 'sampled'")
    if model_names is not None:
        given = {p.name for p in params}
        for n in model_names:
            if n not in given and n not in optional_parameters:
                raise InputError(f"missing table '[parameters.{n}]' (model '{model_name}' needs "
                                 "it: give role = 'sampled' or 'fixed')")
    if derived_names is not None:
        for p in params:
            if p.role == "derived" and p.name not in derived_names:
                raise InputError(
                    f"'parameters.{p.name}.role' = 'derived' but model '{model_name}' derives "
                    f"only: {', '.join(derived_names) or 'nothing'}")
    prior = Prior(model=model_name, title=title, parameters=params, source=str(path), text=text)
    if model is not None:
        check_model_prior(model, prior)
    return prior


def check_model_prior(model: Any, prior: Prior) -> None:
    """The model's own check of the chosen parameters (e.g. one background choice)."""
    check = getattr(model, "check_prior", None)
    if check is not None:
        check(tuple(p.name for p in prior.parameters if p.role != "derived"))


def _renamed(params: Table, name: str, allowed: bool) -> Table:
    """The table of one parameter; keys of earlier prior files are refused with the new name
    (or, reading a stored prior text, taken under it)."""
    raw = params.raw(name)
    if isinstance(raw, dict):
        for old, new in RENAMED_KEYS.items():
            if old in raw and not allowed:
                raise InputError(f"'parameters.{name}.{old}' is no longer a prior key: "
                                 f"write '{new}' instead (keys now: walkers_centre, "
                                 "walkers_spread for the walkers' starting ball)")
        phase = raw.get("phase")
        if allowed and (any(k in raw for k in RENAMED_KEYS) or (
                isinstance(phase, dict) and any(k in phase for k in RENAMED_PHASE_KEYS))):
            data = {RENAMED_KEYS.get(k, k): v for k, v in raw.items()}
            if isinstance(phase, dict):
                data["phase"] = {RENAMED_PHASE_KEYS.get(k, k): v for k, v in phase.items()}
            return Table(data, params.key(name), PARAMETER_KEYS)
    return params.table(name, PARAMETER_KEYS)


def _parameter(t: Table, name: str, declared: Parameter | None = None) -> ParameterPrior:
    role = t.string("role", choices=ROLES)
    label = t.string("label", declared.tex if declared is not None else name)
    if role == "derived":
        for k in t.data:
            if k not in ("role", "label"):
                raise InputError(f"'{t.key(k)}' is not allowed for a derived parameter "
                                 "(allowed: role, label)")
        return ParameterPrior(name=name, role=role, label=label)
    if role == "fixed":
        for k in t.data:
            if k not in ("role", "label", "value"):
                raise InputError(f"'{t.key(k)}' is not allowed for a fixed parameter "
                                 "(allowed: role, label, value)")
        value = t.number("value")
        if declared is not None:
            declared.check(value, t.key("value"))
        return ParameterPrior(name=name, role=role, label=label, value=value)
    dist = t.string("distribution", choices=DISTRIBUTIONS)
    if dist != "gaussian":
        _required(t, "min")
        _required(t, "max")
    lower = t.number("min") if "min" in t else -math.inf
    upper = t.number("max") if "max" in t else math.inf
    if declared is not None:
        for key, bound in (("min", lower), ("max", upper)):
            if key in t:
                declared.check(bound, t.key(key))
        if dist == "gaussian":  # truncated to the declared range
            if declared.lower is not None and "min" not in t:
                lower = declared.lower
            if declared.upper is not None and "max" not in t:
                upper = declared.upper
    if not lower < upper:
        raise InputError(f"'{t.key('max')}' = {upper:g} must be larger than "
                         f"'{t.key('min')}' = {lower:g}")
    if dist == "log_uniform" and lower <= 0:
        raise InputError(f"'{t.key('min')}' = {lower:g} must be > 0 for a log_uniform prior")
    mean = sigma = None
    if dist == "gaussian":
        mean = t.number("mean")
        sigma = t.positive("sigma")
    else:
        for k in ("mean", "sigma"):
            if k in t:
                raise InputError(f"'{t.key(k)}' is only allowed for a gaussian prior")
    centre = t.number("walkers_centre", None)
    if centre is not None and not lower <= centre <= upper:
        raise InputError(f"'{t.key('walkers_centre')}' = {centre:g} lies outside [min, max] = "
                         f"[{lower:g}, {upper:g}]")
    spread = t.positive("walkers_spread", None)
    nested = t.number("nested_value", None)
    if nested is not None and not lower <= nested <= upper:
        raise InputError(f"'{t.key('nested_value')}' = {nested:g} lies outside [min, max]")
    kde: dict[str, Any] = {}
    if dist == "efolds_from_phase":
        kde = efolds_kde(t.table("phase", PHASE_KEYS, required=True), lower, upper)
    elif "phase" in t:
        raise InputError(f"'{t.key('phase')}' is only allowed for an efolds_from_phase prior")
    return ParameterPrior(name=name, role=role, label=label, distribution=dist, lower=lower,
                          upper=upper, mean=mean, sigma=sigma, walkers_centre=centre,
                          walkers_spread=spread, nested_value=nested, **kde)


def _required(t: Table, key: str) -> Any:
    if key not in t:
        raise InputError(f"missing key '{t.key(key)}' (uniform and log_uniform priors need "
                         "min and max)")
    return None
