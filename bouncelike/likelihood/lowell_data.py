"""Set files of kind "temperature_low_ell": measured large-scale temperature power with citations.

Format (TOML; shipped files live in ``bouncelike/likelihood/data/low_ell/``, users point at their
own file of the same form under ``[likelihood] files``)::

    name = "planck2018_lowell_tt"        # identifier (letters, digits, underscores)
    kind = "temperature_low_ell"
    title, citation, arxiv, table, data_combination   # as for pivot sets (sets.py)
    forecast = false
    overlap = ["planck", "planck_low_ell_tt"]         # data tags
    units = "..."                          # what D_ell means (text)
    interval = "highest_density"           # how the published intervals are read
    interval_probability = 0.6827          # their probability
    approximation = "..."                  # what the projection and anchoring assume (text)
    overlap_treatment = "..."              # how combining with pivot sets is treated (text)
    notes = "..."                          # optional
    columns = ["ell", "D_measured", "minus_68", "plus_68", "D_reference"]
    rows = [[2, 225.895, 132.369, 533.062, 1016.73], ...]   # micro-K^2; one row per multipole

    [reference]                            # the power law whose spectrum D_reference is
    citation, arxiv, table
    ln_1e10_As = 3.044
    n_s = 0.9649
    r = 0.0
    pivot = 0.05

``minus_68`` and ``plus_68`` are the distances from ``D_measured`` down and up to the edges of
the published interval. Multipoles must be integers in 2..29 (the range of the projection),
strictly increasing; every value positive, the lower edge above zero.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from functools import cache
from importlib import resources
from pathlib import Path
from typing import Any

import numpy as np

from ..config import Table, read_toml
from ..errors import InputError
from ..quantities import PIVOT
from .citation import CitedSource, citation_fields

KIND = "temperature_low_ell"
COLUMNS = ("ell", "D_measured", "minus_68", "plus_68", "D_reference")
ELL_RANGE = (2, 29)
SET_KEYS = ("name", "kind", "title", "citation", "arxiv", "table", "data_combination",
            "forecast", "overlap", "units", "interval", "interval_probability", "approximation",
            "overlap_treatment", "notes", "columns", "rows", "reference")
REFERENCE_KEYS = ("citation", "arxiv", "table", "ln_1e10_As", "n_s", "r", "pivot")
_NAME_RE = re.compile(r"^[A-Za-z0-9_]+$")


@dataclass(frozen=True, eq=False)
class LowEllData(CitedSource):
    """A cited table of measured D_ell (micro-K^2) with intervals and a reference spectrum."""

    is_forecast: bool
    overlap_tags: tuple[str, ...]
    units: str
    interval_probability: float
    approximation: str
    overlap_treatment: str
    notes: str
    ells: np.ndarray
    measured: np.ndarray
    minus: np.ndarray
    plus: np.ndarray
    reference_dell: np.ndarray
    reference_model: dict
    reference_citation: str
    path: str = ""

    kind = KIND

    @property
    def lower_edge(self) -> np.ndarray:
        return self.measured - self.minus

    @property
    def upper_edge(self) -> np.ndarray:
        return self.measured + self.plus

    @property
    def quantities(self) -> tuple[str, ...]:
        return tuple(f"D_{ell}" for ell in self.ells)

    def as_dict(self) -> dict[str, Any]:
        return {
            **self.citation_dict(), "kind": KIND,
            "forecast": self.is_forecast, "overlap": list(self.overlap_tags),
            "units": self.units, "interval": "highest_density",
            "interval_probability": self.interval_probability,
            "approximation": self.approximation, "overlap_treatment": self.overlap_treatment,
            "notes": self.notes or None,
            "multipoles": [int(x) for x in self.ells],
            "reference": {**self.reference_model, "citation": self.reference_citation},
        }


def _rows(raw: Any) -> np.ndarray:
    if not isinstance(raw, list) or not raw:
        raise InputError("'rows' must be a non-empty list of rows "
                         f"[{', '.join(COLUMNS)}]")
    out = []
    for i, row in enumerate(raw):
        if (not isinstance(row, list) or len(row) != len(COLUMNS)
                or not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in row)):
            raise InputError(f"'rows[{i}]' must be a list of {len(COLUMNS)} numbers "
                             f"[{', '.join(COLUMNS)}], got {row!r}")
        if not all(math.isfinite(float(v)) for v in row):
            raise InputError(f"'rows[{i}]' must contain finite numbers only")
        ell = row[0]
        if float(ell) != int(ell):
            raise InputError(f"'rows[{i}]': ell = {ell!r} must be an integer")
        lo, hi = ELL_RANGE
        if not lo <= int(ell) <= hi:
            raise InputError(f"'rows[{i}]': ell = {int(ell)} is outside the multipoles the "
                             f"projection covers ({lo}-{hi})")
        d, minus, plus, ref = (float(v) for v in row[1:])
        if not (d > 0 and plus > 0 and ref > 0 and 0 < minus < d):
            raise InputError(f"'rows[{i}]' (ell = {int(ell)}): need D_measured > 0, "
                             "0 < minus_68 < D_measured, plus_68 > 0 and D_reference > 0")
        out.append([float(v) for v in row])
    arr = np.array(out)
    if np.any(np.diff(arr[:, 0]) <= 0):
        raise InputError("'rows' must list each multipole once, in increasing order of ell")
    return arr


def parse_low_ell_set(data: dict[str, Any], path: str = "") -> LowEllData:
    """Validate the contents of a low-ell set file (errors name the key)."""
    top = Table(data, "", SET_KEYS)
    name = top.text("name")
    if not _NAME_RE.match(name):
        raise InputError(f"'name' = '{name}' must use letters, digits and underscores only")
    top.string("kind", choices=(KIND,))
    top.string("interval", "highest_density", choices=("highest_density",))
    prob = top.number("interval_probability", math.erf(1 / math.sqrt(2)), minimum=0.0,
                      maximum=1.0, exclusive_minimum=True, exclusive_maximum=True)
    if tuple(top.strings("columns")) != COLUMNS:
        raise InputError(f"'columns' must be [{', '.join(repr(c) for c in COLUMNS)}]")
    arr = _rows(top.raw("rows"))
    tags = top.strings("overlap")
    if not tags or not all(_NAME_RE.match(tag) for tag in tags):
        raise InputError("'overlap' must be a non-empty list of data tags (e.g. [\"planck\"])")
    ref = top.table("reference", REFERENCE_KEYS, required=True)
    model = {"ln_1e10_As": ref.number("ln_1e10_As"), "n_s": ref.number("n_s"),
             "r": ref.number("r", 0.0, minimum=0.0), "pivot": ref.positive("pivot", PIVOT)}
    ref_cite = f"{ref.text('citation')} (arXiv:{ref.text('arxiv')}), {ref.text('table')}"
    arrays = [np.ascontiguousarray(arr[:, i]) for i in range(len(COLUMNS))]
    arrays[0] = arrays[0].astype(int)
    for a in arrays:
        a.setflags(write=False)
    return LowEllData(
        name=name, **citation_fields(top), is_forecast=top.boolean("forecast"),
        overlap_tags=tuple(tags), units=top.text("units"), interval_probability=prob,
        approximation=top.text("approximation"),
        overlap_treatment=top.text("overlap_treatment"),
        notes=top.text("notes", required=False), ells=arrays[0], measured=arrays[1],
        minus=arrays[2], plus=arrays[3], reference_dell=arrays[4], reference_model=model,
        reference_citation=ref_cite, path=path)


def data_dir() -> Path:
    return Path(str(resources.files("bouncelike.likelihood") / "data" / "low_ell"))


def available_low_ell_sets() -> tuple[str, ...]:
    """Names of the shipped low-ell sets."""
    return tuple(sorted(p.stem for p in data_dir().glob("*.toml")))


def load_low_ell_path(path: str | Path, data: dict[str, Any] | None = None) -> LowEllData:
    """A low-ell set file by path; errors name the file."""
    if data is None:
        data = read_toml(path, what="low-ell set file")
    try:
        return parse_low_ell_set(data, str(path))
    except InputError as exc:
        raise InputError(f"low-ell set file '{path}': {exc}") from None


@cache
def load_shipped_low_ell(name: str) -> LowEllData:
    return load_low_ell_path(data_dir() / f"{name}.toml")
