"""Atomic output: nothing half-written is ever left behind.

Commands compute everything first and only then write. Each file is written to a temporary
name in the destination folder and renamed into place (``os.replace`` is atomic on POSIX), so a
reader never sees a partial file, and a failure before the rename leaves no output at all.
"""

from __future__ import annotations

import json
import os
import tempfile
from collections.abc import Callable
from pathlib import Path
from typing import Any


def _current_umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


_UMASK = _current_umask()


def _atomic(path: str | Path, write: Callable[[str], None]) -> Path:
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    os.close(fd)
    try:
        write(tmp)
        os.chmod(tmp, 0o666 & ~_UMASK)  # mkstemp creates 0600; give the usual permissions
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return path


def write_text_atomic(path: str | Path, text: str) -> Path:
    """Write ``text`` to ``path`` atomically (UTF-8)."""

    def write(tmp: str) -> None:
        with open(tmp, "w", encoding="utf-8") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())

    return _atomic(path, write)


def write_bytes_atomic(path: str | Path, data: bytes) -> Path:
    def write(tmp: str) -> None:
        with open(tmp, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())

    return _atomic(path, write)


def write_json_atomic(path: str | Path, obj: Any) -> Path:
    text = json.dumps(obj, indent=2, sort_keys=False, default=_jsonable)
    return write_text_atomic(path, text + "\n")


def write_csv_atomic(path: str | Path, frame: Any, **kwargs: Any) -> Path:
    """Write a pandas DataFrame as CSV atomically."""
    kwargs.setdefault("index", False)
    return write_text_atomic(path, frame.to_csv(**kwargs))


def save_figure_atomic(fig: Any, path: str | Path, **kwargs: Any) -> Path:
    """Save a matplotlib figure atomically; the format follows the file suffix."""
    path = Path(path)
    kwargs.setdefault("format", path.suffix.lstrip(".") or "png")
    return _atomic(path, lambda tmp: fig.savefig(tmp, **kwargs))


def _jsonable(obj: Any) -> Any:
    """Fallback for json.dumps: numpy scalars and arrays, paths."""
    try:
        import numpy as np

        if isinstance(obj, np.generic):
            return obj.item()
        if isinstance(obj, np.ndarray):
            return obj.tolist()
    except ImportError:  # pragma: no cover
        pass
    if isinstance(obj, Path):
        return str(obj)
    raise TypeError(f"cannot serialise {type(obj).__name__} to JSON")


def json_safe(value: Any) -> Any:
    """Turn NaN and infinities into None (JSON has no NaN) recursively."""
    import math

    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {k: json_safe(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_safe(v) for v in value]
    try:
        import numpy as np

        if isinstance(value, np.generic):
            return json_safe(value.item())
        if isinstance(value, np.ndarray):
            return json_safe(value.tolist())
    except ImportError:  # pragma: no cover
        pass
    return value
