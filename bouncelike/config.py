"""Reading and validating TOML configuration and data files.

One mapping route: file -> dict -> :class:`Table` accessors -> constructors. A :class:`Table`
knows its dotted location in the file and the keys it allows; asking for a value validates type
and range and raises :class:`~bouncelike.errors.InputError` naming the key. Call
:meth:`Table.finish` after reading a table so that unknown keys are rejected with the list of
allowed ones.

Top-level sections of a run configuration (each validated by the module that owns it):

``model``         which forward model produces the spectra (``spectra = ...``)
``power_law``     a power-law primordial spectrum
``slow_roll``     slow-roll prediction of a potential at N_* e-folds
``table``         spectra read from a CSV file (``[model] spectra = "table"``)
``potential``     inflaton potential (name and parameters)
``background``    effective bounce dynamics and initial data
``perturbations`` prescription, initial state and options for the modes
``reheating``     N_* directly, or reheating equation of state and density
``likelihood``    constraint sets to score against
``efolds``        duration-of-inflation distribution settings
``compare``       side-by-side comparison of dynamics
``sampling``      posterior sampling settings
``report``        report settings
"""

from __future__ import annotations

import math
import sys
from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import Any

from .errors import InputError

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

TOP_LEVEL_SECTIONS = (
    "model",
    "power_law",
    "slow_roll",
    "table",
    "potential",
    "background",
    "perturbations",
    "reheating",
    "likelihood",
    "efolds",
    "compare",
    "sampling",
    "report",
)

_REQUIRED = object()


def read_toml(path: str | Path, what: str = "configuration file") -> dict[str, Any]:
    """Parse a TOML file; a missing or malformed file is an :class:`InputError`."""
    p = Path(path)
    if not p.is_file():
        raise InputError(f"{what} '{p}' does not exist (expected a TOML file)")
    try:
        with p.open("rb") as fh:
            return tomllib.load(fh)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{what} '{p}' is not valid TOML: {exc}") from None
    except UnicodeDecodeError:
        raise InputError(f"{what} '{p}' is not UTF-8 text") from None


def _fmt_allowed(allowed: Iterable[str]) -> str:
    return ", ".join(sorted(allowed))


class Table:
    """A validated view of one TOML table.

    Parameters
    ----------
    data : mapping
        The table's contents.
    where : str
        Dotted location used in messages, e.g. ``"background.contracting"``.
    allowed : iterable of str
        Keys allowed in this table; :meth:`finish` rejects any other key.
    """

    def __init__(self, data: Mapping[str, Any] | None, where: str, allowed: Iterable[str]):
        if data is None:
            data = {}
        if not isinstance(data, Mapping):
            raise InputError(f"{where}: must be a table of keys, got {type(data).__name__}")
        self.data = dict(data)
        self.where = where
        self.allowed = tuple(allowed)
        self.check_keys()

    # -- structure -------------------------------------------------------------------------
    def key(self, key: str) -> str:
        return f"{self.where}.{key}" if self.where else key

    def check_keys(self) -> None:
        unknown = [k for k in self.data if k not in self.allowed]
        if unknown:
            raise InputError(
                f"unknown key '{self.key(unknown[0])}'; allowed keys in "
                f"[{self.where or 'top level'}]: {_fmt_allowed(self.allowed)}"
            )

    def finish(self) -> None:
        """Kept for symmetry: unknown keys were already rejected at construction."""
        self.check_keys()

    def __contains__(self, key: str) -> bool:
        return key in self.data

    def raw(self, key: str, default: Any = None) -> Any:
        return self.data.get(key, default)

    def table(self, key: str, allowed: Iterable[str], required: bool = False) -> Table:
        if key not in self.data:
            if required:
                raise InputError(f"missing table '[{self.key(key)}]'")
            return Table({}, self.key(key), allowed)
        return Table(self.data[key], self.key(key), allowed)

    # -- scalar values -----------------------------------------------------------------------
    def _get(self, key: str, default: Any) -> Any:
        if key not in self.allowed:  # programming error, not user error
            raise KeyError(f"{self.key(key)} is not declared in allowed keys")
        if key in self.data:
            return self.data[key]
        if default is _REQUIRED:
            raise InputError(f"missing key '{self.key(key)}'")
        return default

    def number(
        self,
        key: str,
        default: Any = _REQUIRED,
        *,
        minimum: float | None = None,
        maximum: float | None = None,
        exclusive_minimum: bool = False,
        exclusive_maximum: bool = False,
        what: str = "a number",
    ) -> float:
        """A finite real number within the given bounds."""
        value = self._get(key, default)
        if value is None:
            return value
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise InputError(f"'{self.key(key)}' must be {what}, got {value!r}")
        value = float(value)
        if not math.isfinite(value):
            raise InputError(f"'{self.key(key)}' must be a finite number, got {value!r}")
        lo_bad = minimum is not None and (
            value <= minimum if exclusive_minimum else value < minimum
        )
        hi_bad = maximum is not None and (
            value >= maximum if exclusive_maximum else value > maximum
        )
        if lo_bad or hi_bad:
            raise InputError(
                f"'{self.key(key)}' = {value:g} is out of range; allowed: "
                f"{_range_text(minimum, maximum, exclusive_minimum, exclusive_maximum)}"
            )
        return value

    def positive(self, key: str, default: Any = _REQUIRED, **kw: Any) -> float:
        return self.number(key, default, minimum=0.0, exclusive_minimum=True, **kw)

    def integer(
        self,
        key: str,
        default: Any = _REQUIRED,
        *,
        minimum: int | None = None,
        maximum: int | None = None,
    ) -> int:
        value = self._get(key, default)
        if value is None:
            return value
        if isinstance(value, bool) or not isinstance(value, int):
            raise InputError(f"'{self.key(key)}' must be an integer, got {value!r}")
        if (minimum is not None and value < minimum) or (maximum is not None and value > maximum):
            raise InputError(
                f"'{self.key(key)}' = {value} is out of range; allowed: "
                f"{_range_text(minimum, maximum, False, False)}"
            )
        return int(value)

    def string(
        self, key: str, default: Any = _REQUIRED, choices: Iterable[str] | None = None
    ) -> str:
        value = self._get(key, default)
        if value is None:
            return value
        if not isinstance(value, str):
            raise InputError(f"'{self.key(key)}' must be a string, got {value!r}")
        if choices is not None:
            choices = tuple(choices)
            if value not in choices:
                raise InputError(
                    f"'{self.key(key)}' = '{value}' is not known; allowed: {_fmt_allowed(choices)}"
                )
        return value

    def boolean(self, key: str, default: Any = _REQUIRED) -> bool:
        value = self._get(key, default)
        if not isinstance(value, bool):
            raise InputError(f"'{self.key(key)}' must be true or false, got {value!r}")
        return value

    def strings(self, key: str, default: Any = _REQUIRED) -> list[str]:
        value = self._get(key, default)
        if isinstance(value, str):
            value = [value]
        if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
            raise InputError(f"'{self.key(key)}' must be a list of strings, got {value!r}")
        return list(value)

    def numbers(self, key: str, default: Any = _REQUIRED) -> list[float]:
        value = self._get(key, default)
        if not isinstance(value, list) or not all(
            isinstance(v, (int, float)) and not isinstance(v, bool) for v in value
        ):
            raise InputError(f"'{self.key(key)}' must be a list of numbers, got {value!r}")
        out = [float(v) for v in value]
        if not all(math.isfinite(v) for v in out):
            raise InputError(f"'{self.key(key)}' must contain finite numbers only")
        return out


def _range_text(lo: Any, hi: Any, xlo: bool, xhi: bool) -> str:
    parts = []
    if lo is not None:
        parts.append(f"{'>' if xlo else '>='} {lo:g}")
    if hi is not None:
        parts.append(f"{'<' if xhi else '<='} {hi:g}")
    return " and ".join(parts) if parts else "any value"


RETIRED_SECTIONS = {
    "run": "section [run] is not read by any command (its name was never used); remove it: "
           "outputs go to bouncelike-out/<configuration file stem>/ or to --output DIR, and a "
           "posterior run is named by [sampling] run_name",
}


def load_run_config(path: str | Path) -> Table:
    """Read a run configuration and reject unknown top-level sections (a retired section gets
    a one-line pointer to what replaced it)."""
    data = read_toml(path)
    for name, pointer in RETIRED_SECTIONS.items():
        if name in data:
            raise InputError(f"'{path}': {pointer}")
    return Table(data, "", TOP_LEVEL_SECTIONS)
