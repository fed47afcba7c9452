"""Published constraint sets: cited TOML data files and their validation.

A constraint set file (shipped ones live in ``bouncelike/likelihood/data/<name>.toml``; users can
point at their own file in the same format) holds::

    name = "planck2018_base"             # identifier (letters, digits, underscores)
    title = "..."                         # one-line description
    label = "BICEP/Keck 2018"             # optional: short title for figures and tables
    citation = "authors, title, journal"  # the paper
    arxiv = "1807.06209"                  # arXiv number
    table = "Table 2, column ..."         # where in the paper the numbers are
    data_combination = "..."              # which data produced them
    pivot = 0.05                          # pivot wavenumber of the constraints, Mpc^-1
    forecast = false                      # true for forecasts (labelled in every listing)
    overlap = ["planck"]                  # tags of the data used (for the overlap refusal)
    upper_limit_treatment = "..."         # required when a term is an upper limit
    correlation_note = "..."              # optional: how correlations are handled
    notes = "..."                         # optional remarks

    [[term]]                              # one per constrained quantity
    quantity = "n_s"                      # ln_1e10_As, n_s, running, running_of_running, r
    kind = "gaussian"                     # mean and sigma
    mean = 0.9649
    sigma = 0.0042

    [[term]]
    quantity = "r"
    kind = "upper_limit"                  # one-sided limit on r >= 0 (see below)
    limit = 0.036
    confidence = 0.95

    [[correlation]]                       # optional, between two gaussian terms of the set
    quantities = ["n_s", "running"]
    rho = -0.2

A set file may say ``kind = "pivot_summary"`` (the default, this format) or
``kind = "temperature_low_ell"`` (measured large-scale temperature power, a different format:
:mod:`bouncelike.likelihood.lowell_data`); :func:`load_constraint_set` reads both.

Upper limits: a one-sided limit L at confidence c on r >= 0 is treated as a half-Gaussian in
r >= 0 centred on 0 whose c-quantile is L, i.e. sigma = L / Phi^-1((1 + c)/2); for c = 0.95,
sigma = L / 1.959964. Its chi-square contribution is (r / sigma)^2.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from functools import cache
from importlib import resources
from pathlib import Path
from typing import Any

from scipy.stats import norm

from ..config import Parameter, Table, read_toml
from ..errors import InputError
from ..quantities import PIVOT_SCALE, SPECTRAL
from .citation import CitedSource, citation_fields
from .lowell_data import (
    available_low_ell_sets,
    data_dir,
    load_low_ell_path,
    load_shipped_low_ell,
)

#: Quantities a constraint set may constrain (names of :class:`PivotSummary` fields).
QUANTITIES = ("ln_1e10_As", "n_s", "running", "running_of_running", "r")
#: Display names of the quantities.
QUANTITY_LABELS = {
    "ln_1e10_As": "ln(1e10 A_s)",
    "n_s": "n_s",
    "running": "dn_s/dlnk",
    "running_of_running": "d2n_s/dlnk2",
    "r": "r",
}
KINDS = ("gaussian", "upper_limit")
#: declared ranges of the constrained quantities (means and limits must lie inside)
DECLARED = {p.name: p for p in SPECTRAL}
#: the 68 % error of a gaussian term
ERROR = Parameter(
    "sigma", "68 % error of a gaussian term", "", 1e-8, 1e3,
    why="five decades below the most precise forecast error (~1e-3) and above any width the "
    "quantities' ranges allow; a smaller error would make the chi-square overflow")
#: Kinds of set file (the second one is read by lowell_data.py).
SET_FILE_KINDS = ("pivot_summary", "temperature_low_ell")

SET_KEYS = (
    "name",
    "kind",
    "title",
    "label",
    "citation",
    "arxiv",
    "table",
    "data_combination",
    "pivot",
    "forecast",
    "overlap",
    "upper_limit_treatment",
    "correlation_note",
    "notes",
    "term",
    "correlation",
)
TERM_KEYS = ("quantity", "kind", "mean", "sigma", "limit", "confidence")
CORRELATION_KEYS = ("quantities", "rho")
_NAME_RE = re.compile(r"^[A-Za-z0-9_]+$")


def half_gaussian_sigma(limit: float, confidence: float) -> float:
    """sigma of the half-Gaussian in r >= 0 whose ``confidence`` quantile is ``limit``."""
    return limit / float(norm.ppf(0.5 + 0.5 * confidence))


@dataclass(frozen=True)
class ConstraintTerm:
    """One constrained quantity: a Gaussian (mean, sigma) or an upper limit (limit, confidence).

    For an upper limit ``mean`` is 0 and ``sigma`` the half-Gaussian width.
    """

    quantity: str
    kind: str
    mean: float
    sigma: float
    limit: float | None = None
    confidence: float | None = None

    def describe(self) -> str:
        if self.kind == "upper_limit":
            return f"< {self.limit:g} ({100 * self.confidence:g}%)"
        return f"{self.mean:g} +- {self.sigma:g}"


@dataclass(frozen=True)
class ConstraintSet(CitedSource):
    """A cited set of published constraints at one pivot."""

    pivot: float
    is_forecast: bool
    terms: tuple[ConstraintTerm, ...]
    overlap_tags: tuple[str, ...]
    upper_limit_treatment: str = ""
    correlation_note: str = ""
    notes: str = ""
    correlations: tuple[tuple[str, str, float], ...] = field(default=())
    path: str = ""
    label: str = ""

    @property
    def short_title(self) -> str:
        """The short title for figures and tables (``label``, else ``title``)."""
        return self.label or self.title

    @property
    def quantities(self) -> tuple[str, ...]:
        return tuple(t.quantity for t in self.terms)

    def as_dict(self) -> dict[str, Any]:
        return {
            **self.citation_dict(),
            "label": self.short_title,
            "pivot": self.pivot,
            "forecast": self.is_forecast,
            "overlap": list(self.overlap_tags),
            "upper_limit_treatment": self.upper_limit_treatment or None,
            "correlation_note": self.correlation_note or None,
            "notes": self.notes or None,
            "terms": [
                {
                    "quantity": t.quantity,
                    "kind": t.kind,
                    "mean": t.mean if t.kind == "gaussian" else None,
                    "sigma": t.sigma,
                    "limit": t.limit,
                    "confidence": t.confidence,
                }
                for t in self.terms
            ],
            "correlations": [list(c) for c in self.correlations],
        }


def _data_dir() -> Path:
    return Path(str(resources.files("bouncelike.likelihood") / "data"))


def available_sets() -> tuple[str, ...]:
    """Names of the shipped constraint sets."""
    return tuple(sorted(p.stem for p in _data_dir().glob("*.toml")))


def _parse_term(raw: Any, index: int) -> ConstraintTerm:
    where = f"term[{index}]"
    t = Table(raw, where, TERM_KEYS)
    quantity = t.string("quantity", choices=QUANTITIES)
    kind = t.string("kind", choices=KINDS)
    if kind == "gaussian":
        for key in ("limit", "confidence"):
            if key in t:
                raise InputError(f"'{t.key(key)}' applies only to kind = \"upper_limit\"")
        mean = DECLARED[quantity].check(t.number("mean"), t.key("mean"))
        sigma = ERROR.read(t)
        return ConstraintTerm(quantity, kind, mean, sigma)
    for key in ("mean", "sigma"):
        if key in t:
            raise InputError(
                f"'{t.key(key)}' does not apply to kind = \"upper_limit\" "
                "(give 'limit' and 'confidence')"
            )
    if quantity != "r":
        raise InputError(
            f"'{t.key('kind')}' = \"upper_limit\" is allowed only for quantity \"r\" "
            "(a half-Gaussian in r >= 0)"
        )
    limit = DECLARED["r"].check(t.positive("limit"), t.key("limit"))
    confidence = t.number(
        "confidence", minimum=0.0, maximum=1.0, exclusive_minimum=True, exclusive_maximum=True
    )
    return ConstraintTerm(
        quantity, kind, 0.0, half_gaussian_sigma(limit, confidence), limit, confidence
    )


def parse_constraint_set(data: dict[str, Any], path: str = "") -> ConstraintSet:
    """Validate the contents of a set file (errors name the field)."""
    top = Table(data, "", SET_KEYS)
    top.string("kind", "pivot_summary", choices=SET_FILE_KINDS[:1])
    name = top.text("name")
    if not _NAME_RE.match(name):
        raise InputError(f"'name' = '{name}' must use letters, digits and underscores only")
    raw_terms = top.raw("term")
    if raw_terms is None:
        raise InputError("missing '[[term]]' entries (at least one constrained quantity)")
    if not isinstance(raw_terms, list) or not raw_terms:
        raise InputError("'term' must be a list of '[[term]]' tables with at least one entry")
    terms = tuple(_parse_term(raw, i) for i, raw in enumerate(raw_terms))
    seen: set[str] = set()
    for i, term in enumerate(terms):
        if term.quantity in seen:
            raise InputError(f"'term[{i}].quantity' = '{term.quantity}' appears twice in the set")
        seen.add(term.quantity)
    has_limit = any(t.kind == "upper_limit" for t in terms)
    treatment = top.text("upper_limit_treatment", required=has_limit)
    tags = top.strings("overlap")
    if not tags or not all(_NAME_RE.match(tag) for tag in tags):
        raise InputError("'overlap' must be a non-empty list of data tags (e.g. [\"planck\"])")
    correlations = []
    raw_corr = top.raw("correlation", [])
    if not isinstance(raw_corr, list):
        raise InputError("'correlation' must be a list of '[[correlation]]' tables")
    gaussian_q = {t.quantity for t in terms if t.kind == "gaussian"}
    for i, raw in enumerate(raw_corr):
        c = Table(raw, f"correlation[{i}]", CORRELATION_KEYS)
        pair = c.strings("quantities")
        if len(pair) != 2 or pair[0] == pair[1] or not set(pair) <= gaussian_q:
            raise InputError(
                f"'correlation[{i}].quantities' must name two different gaussian terms of the "
                f"set (allowed: {', '.join(sorted(gaussian_q))})"
            )
        rho = c.number("rho", minimum=-1.0, maximum=1.0, exclusive_minimum=True,
                       exclusive_maximum=True)
        correlations.append((pair[0], pair[1], rho))
    return ConstraintSet(
        name=name,
        **citation_fields(top),
        pivot=PIVOT_SCALE.check(top.positive("pivot"), "pivot"),
        is_forecast=top.boolean("forecast"),
        terms=terms,
        overlap_tags=tuple(tags),
        upper_limit_treatment=treatment,
        correlation_note=top.text("correlation_note", required=False),
        notes=top.text("notes", required=False),
        correlations=tuple(correlations),
        path=path,
        label=top.text("label", required=False),
    )


def _load_path(path: str) -> Any:
    data = read_toml(path, what="constraint set file")
    kind = data.get("kind", "pivot_summary")
    if kind not in SET_FILE_KINDS:
        raise InputError(f"constraint set file '{path}': 'kind' = {kind!r} is not known; "
                         f"allowed: {', '.join(SET_FILE_KINDS)}")
    if kind == "temperature_low_ell":
        return load_low_ell_path(path, data)
    try:
        return parse_constraint_set(data, path)
    except InputError as exc:
        raise InputError(f"constraint set file '{path}': {exc}") from None


@cache
def _load_shipped(name: str) -> ConstraintSet:
    return _load_path(str(_data_dir() / f"{name}.toml"))


def load_constraint_set(name_or_path: str | Path) -> Any:
    """A shipped set by name, or a user's set file by path (``.toml``).

    Returns a :class:`ConstraintSet` (pivot summaries) or, for ``kind =
    "temperature_low_ell"``, a :class:`~bouncelike.likelihood.lowell_data.LowEllData`.
    """
    text = str(name_or_path)
    shipped = _data_dir() / f"{text}.toml"
    if _NAME_RE.match(text) and shipped.is_file():
        return _load_shipped(text)
    if _NAME_RE.match(text) and (data_dir() / f"{text}.toml").is_file():
        return load_shipped_low_ell(text)
    if text.endswith(".toml") or Path(text).is_file() or "/" in text:
        return _load_path(str(Path(text)))
    names = (*available_sets(), *available_low_ell_sets())
    raise InputError(
        f"unknown constraint set '{text}'; shipped sets: {', '.join(names)} "
        "(or give the path of a set file ending in .toml)"
    )

