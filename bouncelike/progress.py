"""Progress bars for long work: tqdm on standard error, silent when asked or without tqdm."""

from __future__ import annotations

import sys
from collections.abc import Iterable
from typing import Any


def progress(iterable: Iterable[Any] | None = None, *, total: int | None = None, desc: str = "",
             enabled: bool = True) -> Any:
    """Wrap ``iterable`` (or a manual counter when None) in a progress bar on stderr."""
    if enabled:
        try:
            from tqdm.auto import tqdm

            return tqdm(iterable, total=total, desc=desc, file=sys.stderr, leave=False,
                        dynamic_ncols=True, mininterval=0.5)
        except ImportError:  # pragma: no cover
            pass
    return _Silent(iterable)


class _Silent:
    def __init__(self, iterable: Iterable[Any] | None):
        self._it = iterable

    def __iter__(self):
        return iter(self._it if self._it is not None else ())

    def update(self, n: int = 1) -> None:
        pass

    def close(self) -> None:
        pass

    def __enter__(self) -> _Silent:
        return self

    def __exit__(self, *exc: object) -> None:
        pass
