"""``[model] spectra = "table"``: primordial spectra computed elsewhere, read from a CSV file.

Configuration::

    [model]
    spectra = "table"

    [table]
    file = "my_spectra.csv"      # relative to the configuration file's folder

The file is comma-separated text with a header naming the columns ``k`` (comoving wavenumber in
Mpc^-1, strictly increasing), ``P_s`` (> 0) and ``P_t`` (> 0 everywhere, or 0 everywhere for
no tensors), in any order; lines starting with ``#`` are comments. The spectra are
interpolated linearly in ln P - ln k (:class:`~.tabulated.TabulatedSpectra`), never extrapolated;
oscillations the table does not resolve are treated as :mod:`.oscillations` describes. Any
problem is one line naming the file, the row and the column.
"""

from __future__ import annotations

import csv
import math
from pathlib import Path
from typing import Any

import numpy as np

from ..config import Table
from ..errors import InputError
from .tabulated import TabulatedSpectra

TABLE_KEYS = ("file",)
COLUMNS = ("k", "P_s", "P_t")


def read_spectra_csv(path: str | Path) -> TabulatedSpectra:
    """Read a spectra table (see the module docstring); errors name the file and row."""
    p = Path(path)
    where = f"spectra table '{p}'"
    if not p.is_file():
        state = "is a folder" if p.is_dir() else "does not exist"
        raise InputError(f"{where} {state} (expected a CSV file with columns "
                         f"{', '.join(COLUMNS)})")
    try:
        text = p.read_text(encoding="utf-8")
    except UnicodeDecodeError:
        raise InputError(f"{where} is not UTF-8 text") from None
    lines = [(i + 1, line) for i, line in enumerate(text.splitlines())
             if line.strip() and not line.lstrip().startswith("#")]
    if not lines:
        raise InputError(f"{where} is empty (expected a header {','.join(COLUMNS)} and rows)")
    header_no, header_line = lines[0]
    header = [h.strip() for h in next(csv.reader([header_line]))]
    missing = [c for c in COLUMNS if c not in header]
    extra = [h for h in header if h not in COLUMNS]
    if missing or extra or len(header) != len(set(header)):
        raise InputError(f"{where}, line {header_no}: the header must name the columns "
                         f"{', '.join(COLUMNS)} once each (got {', '.join(header) or 'nothing'})")
    index = {c: header.index(c) for c in COLUMNS}
    values = {c: [] for c in COLUMNS}
    for line_no, line in lines[1:]:
        cells = [c.strip() for c in next(csv.reader([line]))]
        if len(cells) != len(header):
            raise InputError(f"{where}, line {line_no}: expected {len(header)} values, got "
                             f"{len(cells)}")
        for c in COLUMNS:
            try:
                v = float(cells[index[c]])
            except ValueError:
                raise InputError(f"{where}, line {line_no}: '{c}' = {cells[index[c]]!r} is not "
                                 "a number") from None
            if not math.isfinite(v):
                raise InputError(f"{where}, line {line_no}: '{c}' must be finite")
            values[c].append(v)
    if len(values["k"]) < 2:
        raise InputError(f"{where}: needs at least 2 rows")
    try:
        return TabulatedSpectra(np.array(values["k"]), np.array(values["P_s"]),
                                np.array(values["P_t"]), label=f"table {p.name}")
    except InputError as exc:
        raise InputError(f"{where}: {exc}") from None


def table_spectra_from_config(config: Table, base_dir: str | Path | None = None) -> Any:
    """Build the spectra of ``[table] file`` (relative paths: to ``base_dir``)."""
    t = config.table("table", TABLE_KEYS, required=True)
    name = t.string("file")
    path = Path(name)
    if not path.is_absolute() and base_dir is not None:
        path = Path(base_dir) / path
    return read_spectra_csv(path)
