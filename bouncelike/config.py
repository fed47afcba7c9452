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
``bounce_transfer`` a power law times the cached transfer of the bounce
``bounce_physical`` the bounce in physical parameters (background, mass, rho_c)
``table``         spectra read from a CSV file (``[model] spectra = "table"``)
``potential``     inflaton potential (name and parameters)
``background``    effective bounce dynamics and initial data
``perturbations`` prescription, initial state and options for the modes
``reheating``     N_star directly, or equation_of_state and log10_reheating_density
``likelihood``    constraint sets to score against
``efolds``        duration-of-inflation distribution settings
``compare``       side-by-side comparison of dynamics
``sampling``      posterior sampling settings
``report``        report settings

Declared parameters. Every physical quantity a user can give (a model parameter, a potential
or dynamics parameter, a model option) is declared once as a frozen :class:`Parameter`: name,
unit, allowed range with the physical reason for it, meaning and plot label. Configuration
tables, prior files, allowed-key lists and figure labels all read these declarations
(:func:`read_parameters`, :meth:`Parameter.check`), so that a range is written in one place
and every message names the key the user wrote and the allowed range. A key that was renamed
is refused with a one-line pointer to its new spelling (:data:`RENAMED`).
"""

from __future__ import annotations

import fnmatch
import math
import sys
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
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
    "bounce_transfer",
    "bounce_physical",
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

#: Old spellings of configuration and prior-file keys -> their new spelling. Patterns are
#: matched against the dotted key (``fnmatch``; ``*`` stands for any part). A renamed key is
#: refused with a one-line pointer to the new one: one spelling per quantity.
RENAMED: dict[str, str] = {
    "reheating.n_star": "reheating.N_star",
    "reheating.density": "reheating.log10_reheating_density (log10 of rho_reh, Planck units)",
    "slow_roll.efolds": "slow_roll.N_star",
    "slow_roll.potential": "model.spectra = 'slow_roll_quadratic' or 'slow_roll_starobinsky'",
    "slow_roll.vacuum_energy": "slow_roll.mass (M, with V_0 = (3/4) M^2 M_Pl^2 as in "
                               "[potential])",
    "background.contracting.density": "background.contracting.start_density",
    "efolds.density": "efolds.start_density",
    "efolds.density_decades": "efolds.start_density_decades",
    "compare.density": "compare.start_density",
    "compare.density_decades": "compare.start_density_decades",
    "parameters.*.phase.density": "start_density (in the same table)",
    "parameters.*.phase.density_decades": "start_density_decades (in the same table)",
}


def renamed(key: str) -> str | None:
    """The new spelling of a renamed dotted key, or None."""
    for pattern, new in RENAMED.items():
        if fnmatch.fnmatchcase(key, pattern):
            return new
    return None


def read_toml(path: str | Path, what: str = "configuration file") -> dict[str, Any]:
    """Parse a TOML file; a missing or malformed file is an :class:`InputError`."""
    p = Path(path)
    if not p.is_file():
        state = "is a folder" if p.is_dir() else "does not exist"
        raise InputError(f"{what} '{p}' {state} (expected a TOML file)")
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
            new = renamed(self.key(unknown[0]))
            if new is not None:
                raise InputError(f"'{self.key(unknown[0])}' was renamed '{new}'")
            raise InputError(
                f"unknown key '{self.key(unknown[0])}'; allowed keys in "
                f"[{self.where or 'top level'}]: {_fmt_allowed(self.allowed) or 'none'}"
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

    def integer(self, key: str, default: Any = _REQUIRED, *, minimum: int | None = None,
                maximum: int | None = None) -> int:
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

    def text(self, key: str, required: bool = True) -> str:
        """A string with surrounding blanks removed; ``required``: present and non-empty
        (else an absent key reads as "")."""
        value = self.string(key, _REQUIRED if required else "").strip()
        if required and not value:
            raise InputError(f"'{self.key(key)}' must be a non-empty string")
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


# -- declared parameters -------------------------------------------------------------------


@dataclass(frozen=True)
class Parameter:
    """The declaration of one quantity a user may give (in the spirit of a class-body
    parameter declaration: written once, read by every route).

    Parameters
    ----------
    name : str
        The key, in configuration tables and prior files alike.
    doc : str
        Its physical meaning (one line).
    unit : str
        Its unit ("" for a pure number; Planck units are G = c = hbar = 1, m_Pl = 1).
    lower, upper : float or None
        Allowed range (None: unbounded on that side); ``lower_open``/``upper_open`` exclude
        the end point.
    why : str
        The physical reason for the range, printed with every out-of-range message.
    label : str
        LaTeX label for figures and tables (without dollar signs); default: the name.
    default : float, str, bool or None
        Value when the key is absent; None makes the key required.
    kind : str
        "number", "integer", "string" (with ``choices``) or "boolean".
    choices : tuple of str
        Allowed values of a string option.
    """

    name: str
    doc: str
    unit: str = ""
    lower: float | None = None
    upper: float | None = None
    lower_open: bool = False
    upper_open: bool = False
    why: str = ""
    label: str = ""
    default: Any = None
    kind: str = "number"
    choices: tuple[str, ...] = ()

    @property
    def tex(self) -> str:
        """The figure label (LaTeX without dollar signs)."""
        return self.label or self.name

    def allowed(self) -> str:
        """The declared allowed range (or choices) as text."""
        if self.kind == "string":
            return _fmt_allowed(self.choices)
        if self.kind == "boolean":
            return "true or false"
        text = _range_text(self.lower, self.upper, self.lower_open, self.upper_open)
        if self.unit and (self.lower is not None or self.upper is not None):
            text += f" {self.unit}"
        return text

    def check(self, value: Any, key: str | None = None, *, lower: float | None = None,
              upper: float | None = None, reason: str = "") -> Any:
        """``value`` validated against the declaration; :class:`InputError` names ``key``
        (default: the declared name), the allowed range and why.

        ``lower``/``upper`` are exclusive bounds that depend on other input (e.g. rho_c) and
        tighten the declared range for this check; ``reason`` says why they apply.
        """
        key = key or self.name
        if self.kind == "string":
            if not isinstance(value, str):
                raise InputError(f"'{key}' must be a string, got {value!r}")
            if self.choices and value not in self.choices:
                raise InputError(f"'{key}' = '{value}' is not known; allowed: "
                                 f"{_fmt_allowed(self.choices)}")
            return value
        if self.kind == "boolean":
            if not isinstance(value, bool):
                raise InputError(f"'{key}' must be true or false, got {value!r}")
            return value
        what = "an integer" if self.kind == "integer" else "a number"
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            try:  # numpy scalars
                value = value.item() if hasattr(value, "item") else value
            except (TypeError, ValueError):
                pass
            if isinstance(value, bool) or not isinstance(value, (int, float)):
                raise InputError(f"'{key}' must be {what}, got {value!r}")
        if self.kind == "integer" and not isinstance(value, int):
            raise InputError(f"'{key}' must be an integer, got {value!r}")
        number = float(value)
        if not math.isfinite(number):
            raise InputError(f"'{key}' must be a finite number, got {value!r}")
        lo, lo_open, lo_why = self.lower, self.lower_open, self.why
        if lower is not None and (lo is None or lower >= lo):
            lo, lo_open, lo_why = lower, True, reason or self.why
        hi, hi_open, hi_why = self.upper, self.upper_open, self.why
        if upper is not None and (hi is None or upper <= hi):
            hi, hi_open, hi_why = upper, True, reason or self.why
        bad_lo = lo is not None and (number <= lo if lo_open else number < lo)
        bad_hi = hi is not None and (number >= hi if hi_open else number > hi)
        if bad_lo or bad_hi:
            text = _range_text(lo, hi, lo_open, hi_open)
            if self.unit:
                text += f" {self.unit}"
            because = lo_why if bad_lo else hi_why
            shown = f"{value}" if self.kind == "integer" else f"{number:g}"
            raise InputError(f"'{key}' = {shown} is out of range; allowed: {text}"
                             + (f" ({because})" if because else ""))
        return int(value) if self.kind == "integer" else number

    def read(self, table: Table, default: Any = _REQUIRED, **bounds: Any) -> Any:
        """The value of this parameter in ``table`` (declared default when absent)."""
        if default is _REQUIRED:
            default = self.default
        if self.name not in table.data:
            if default is None:
                raise InputError(f"missing key '{table.key(self.name)}' ({self.doc}; allowed: "
                                 f"{self.allowed()})")
            return default
        return self.check(table.data[self.name], table.key(self.name), **bounds)


def names_of(declarations: Iterable[Parameter]) -> tuple[str, ...]:
    """The keys of a sequence of declarations."""
    return tuple(p.name for p in declarations)


def declared_table(config: Table, section: str, declarations: Iterable[Parameter],
                   required: bool = False) -> Table:
    """The sub-table ``section`` of ``config``, allowing exactly the declared keys."""
    return config.table(section, names_of(declarations), required=required)


def read_parameters(table: Table, declarations: Iterable[Parameter],
                    present_only: bool = False) -> dict[str, Any]:
    """Every declared value of ``table`` (defaults filled in unless ``present_only``)."""
    out = {}
    for p in declarations:
        if present_only and p.name not in table.data:
            continue
        out[p.name] = p.read(table)
    return out


def check_parameters(values: Mapping[str, Any], declarations: Iterable[Parameter],
                     where: str = "") -> None:
    """Check the values present in ``values`` against their declarations (names the key
    as ``where.name``)."""
    for p in declarations:
        if p.name in values and values[p.name] is not None:
            p.check(values[p.name], f"{where}.{p.name}" if where else p.name)
